/**
 * An independent optimality (KKT) checker for elastic-net fits. It works from the raw data and
 * a result's original-units intercept and coefficients only: it standardizes the columns itself
 * and never calls engine code.
 *
 * Objective (the engine's contract, engine/fit.ts):
 *   (1/(2Σw)) Σ_i w_i (y_i − b0 − x_i·b)²  +  λ Σ_j m_j [ α|b̃_j| + (1−α)/2 · b̃_j² ],
 *   b̃_j = b_j · s_j,  l_j <= b_j <= u_j,
 * with s_j the weighted population SD of column j (divisor Σw) when standardizing (weighted root
 * mean square without an intercept), 1 otherwise.
 *
 * Optimality conditions (Friedman, Hastie & Tibshirani 2010, J. Stat. Software 33(1) §2.1, plus the
 * normal cone of the box for bounded coordinates, standard convex optimality):
 *   r = y − b0 − X b,   g_j = (1/Σw) Σ_i w_i x̃_ij r_i,   h_j = g_j − λ(1−α) m_j b̃_j
 *   h_j ∈ λ α m_j ∂|b̃_j|  +  N_[l̃_j, ũ_j](b̃_j)
 *   and, with an intercept, the weighted mean of r is 0.
 * The violation of a coordinate is the distance of h_j from that set; everything is reported
 * relative to λ (g and λ are both in y's units because y is not scaled).
 */

export interface KktInput {
  /** Raw predictor rows x[i][j]. */
  x: readonly (readonly number[])[];
  y: readonly number[];
  weights?: readonly number[] | null;
  intercept: number;
  coefficients: readonly number[];
  lambda: number;
  alpha: number;
  multipliers?: readonly number[] | null;
  lower?: readonly number[] | null;
  upper?: readonly number[] | null;
  withIntercept?: boolean;
  standardize?: boolean;
}

export interface KktReport {
  /** Largest of every violation below, relative to λ. */
  max: number;
  /** Largest coordinate (stationarity) violation relative to λ. */
  coordinate: number;
  /** Predictor with the largest coordinate violation (−1 if none). */
  worstPredictor: number;
  /** |weighted mean of r| / λ (0 without an intercept). */
  interceptViolation: number;
  /** Largest bound excess on the standardized scale, / λ (feasibility). */
  feasibility: number;
  /** Per-predictor violations relative to λ. */
  perPredictor: number[];
}

/** Standardized-scale statistics computed here, from the raw data (not the engine's). */
export interface ColumnScales {
  totalWeight: number;
  centre: number[];
  scale: number[];
  /** True where the column is constant on the positively weighted rows. */
  constant: boolean[];
}

export function columnScales(
  x: readonly (readonly number[])[],
  weights: readonly number[] | null | undefined,
  withIntercept: boolean,
  standardize: boolean,
): ColumnScales {
  const n = x.length;
  const p = n > 0 ? x[0].length : 0;
  let W = 0;
  for (let i = 0; i < n; i++) W += weights ? weights[i] : 1;
  const centre: number[] = [];
  const scale: number[] = [];
  const constant: boolean[] = [];
  for (let j = 0; j < p; j++) {
    let mean = 0;
    if (withIntercept) {
      for (let i = 0; i < n; i++) mean += (weights ? weights[i] : 1) * x[i][j];
      mean /= W;
    }
    let variance = 0;
    let second = 0;
    for (let i = 0; i < n; i++) {
      const w = weights ? weights[i] : 1;
      variance += w * (x[i][j] - mean) * (x[i][j] - mean);
      second += w * x[i][j] * x[i][j];
    }
    variance /= W;
    second /= W;
    // population SD, divisor Σw (engine/problem.ts convention); "constant" at a relative spread of 1e-12
    const isConstant = !(variance > 1e-12 * second);
    centre.push(mean);
    constant.push(isConstant);
    scale.push(isConstant || !standardize ? 1 : Math.sqrt(variance));
  }
  return { totalWeight: W, centre, scale, constant };
}

export function checkKkt(input: KktInput): KktReport {
  const { x, y, lambda, alpha } = input;
  const weights = input.weights ?? null;
  const withIntercept = input.withIntercept ?? true;
  const standardize = input.standardize ?? true;
  const n = x.length;
  const p = input.coefficients.length;
  if (!(lambda > 0)) throw new Error(`checkKkt needs λ > 0, got ${lambda}`);
  const { totalWeight: W, centre, scale, constant } = columnScales(x, weights, withIntercept, standardize);
  const r = new Array<number>(n);
  for (let i = 0; i < n; i++) {
    let fitted = input.intercept;
    for (let j = 0; j < p; j++) fitted += x[i][j] * input.coefficients[j];
    r[i] = y[i] - fitted;
  }
  let interceptViolation = 0;
  if (withIntercept) {
    let s = 0;
    for (let i = 0; i < n; i++) s += (weights ? weights[i] : 1) * r[i];
    interceptViolation = Math.abs(s / W) / lambda;
  }
  const perPredictor: number[] = [];
  let coordinate = 0;
  let worstPredictor = -1;
  let feasibility = 0;
  for (let j = 0; j < p; j++) {
    const b = input.coefficients[j];
    if (constant[j]) {
      // a constant column has no defined standardized coefficient: the engine must report 0
      const v = b === 0 ? 0 : Infinity;
      perPredictor.push(v);
      if (v > coordinate) {
        coordinate = v;
        worstPredictor = j;
      }
      continue;
    }
    const s = scale[j];
    let g = 0;
    for (let i = 0; i < n; i++) g += (weights ? weights[i] : 1) * ((x[i][j] - centre[j]) / s) * r[i];
    g /= W;
    const m = input.multipliers ? input.multipliers[j] : 1;
    const lo = input.lower ? input.lower[j] : -Infinity;
    const hi = input.upper ? input.upper[j] : Infinity;
    const bt = b * s;
    const h = g - lambda * (1 - alpha) * m * bt;
    const t = lambda * alpha * m;
    // subdifferential of t|b̃| at b̃
    let low = b > 0 ? t : -t;
    let high = b < 0 ? -t : t;
    // normal cone of the box: a coordinate at (or, by rounding, a hair past) a bound may push outward
    const slack = 1e-12 * Math.max(Math.abs(lo === -Infinity ? 0 : lo), Math.abs(hi === Infinity ? 0 : hi));
    if (b >= hi - slack) high = Infinity;
    if (b <= lo + slack) low = -Infinity;
    const v = (h < low ? low - h : h > high ? h - high : 0) / lambda;
    perPredictor.push(v);
    if (v > coordinate) {
      coordinate = v;
      worstPredictor = j;
    }
    const excess = Math.max(0, (b - hi) * s - slack * s, (lo - b) * s - slack * s);
    feasibility = Math.max(feasibility, excess / lambda);
  }
  return {
    max: Math.max(coordinate, interceptViolation, feasibility),
    coordinate,
    worstPredictor,
    interceptViolation,
    feasibility,
    perPredictor,
  };
}
