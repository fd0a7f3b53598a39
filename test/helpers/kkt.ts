/**
 * An independent optimality (KKT) checker for elastic-net fits. It works from the raw data and
 * a result's original-units intercept and coefficients only: it standardizes the columns and the
 * target itself and never calls engine code.
 *
 * Objective (the engine's contract, engine/fit.ts), unit-free:
 *   (1/(2Σw)) Σ_i w_i (ỹ_i − x̃_i·b̃)²  +  λ Σ_j m_j [ α|b̃_j| + (1−α)/2 · b̃_j² ],
 *   ỹ = (y − ȳ)/s_y,  b̃_j = b_j · s_j / s_y,  l_j <= b_j <= u_j,
 * with s_j the weighted population SD of column j (divisor Σw) when standardizing (weighted root
 * mean square without an intercept), 1 otherwise, and s_y the target's (always).
 *
 * The check is made in the target's units, an independent formulation of the same problem:
 * multiplying the objective by s_y² and writing β_j = s_y·b̃_j = b_j·s_j gives
 *   (1/(2Σw)) Σ_i w_i (y_i − b0 − x_i·b)²  +  λ1 Σ_j m_j |β_j|  +  (λ2/2) Σ_j m_j β_j²,
 *   λ1 = λ·α·s_y (the lasso part scales with y),  λ2 = λ·(1−α) (the ridge part does not: it and
 *   the loss both scale as y²).
 * Optimality conditions (Friedman, Hastie & Tibshirani 2010, J. Stat. Software 33(1) §2.1, plus the
 * normal cone of the box for bounded coordinates, standard convex optimality):
 *   r = y − b0 − X b,   g_j = (1/Σw) Σ_i w_i x̃_ij r_i,   h_j = g_j − λ2 m_j β_j
 *   h_j ∈ λ1 m_j ∂|β_j|  +  N_[l_j s_j, u_j s_j](β_j)
 *   and, with an intercept, the weighted mean of r is 0.
 * The violation of a coordinate is the distance of h_j from that set, reported relative to λ·s_y
 * (so it is unit-free: the same number as the unit-free conditions relative to λ).
 */

export interface KktInput {
  /** Raw predictor rows x[i][j]. */
  x: readonly (readonly number[])[];
  y: readonly number[];
  weights?: readonly number[] | null;
  intercept: number;
  coefficients: readonly number[];
  /** The engine's unit-free strength λ. */
  lambda: number;
  alpha: number;
  multipliers?: readonly number[] | null;
  lower?: readonly number[] | null;
  upper?: readonly number[] | null;
  withIntercept?: boolean;
  standardize?: boolean;
}

export interface KktReport {
  /** Largest of every violation below, relative to λ·s_y (unit-free). */
  max: number;
  /** Largest coordinate (stationarity) violation relative to λ·s_y. */
  coordinate: number;
  /** Predictor with the largest coordinate violation (−1 if none). */
  worstPredictor: number;
  /** |weighted mean of r| / (λ·s_y) (0 without an intercept). */
  interceptViolation: number;
  /** Largest bound excess on the standardized scale (β = b·s_j), / (λ·s_y) (feasibility). */
  feasibility: number;
  /** Per-predictor violations relative to λ·s_y. */
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

/**
 * Weighted mean taken about the first positively weighted value, then corrected once (so equal
 * values give that value exactly; common practice for a stable mean).
 */
export function stableWeightedMean(values: readonly number[], weights: readonly number[] | null | undefined): number {
  let W = 0;
  let first = -1;
  for (let i = 0; i < values.length; i++) {
    const w = weights ? weights[i] : 1;
    W += w;
    if (first < 0 && w > 0) first = i;
  }
  const anchor = values[first];
  let s = 0;
  for (let i = 0; i < values.length; i++) s += (weights ? weights[i] : 1) * (values[i] - anchor);
  const mean = anchor + s / W;
  let c = 0;
  for (let i = 0; i < values.length; i++) c += (weights ? weights[i] : 1) * (values[i] - mean);
  return mean + c / W;
}

/**
 * Weighted population SD about the (stable) mean, or the weighted root mean square without an
 * intercept, of a column or the target; 0 for a constant one (SD at most 2^-52 of the largest
 * |value|: the engine's documented rule, engine/problem.ts).
 */
export function spreadOf(values: readonly number[], weights: readonly number[] | null | undefined, withIntercept: boolean): { centre: number; spread: number } {
  const centre = withIntercept ? stableWeightedMean(values, weights) : 0;
  let W = 0;
  let variance = 0;
  let largest = 0;
  for (let i = 0; i < values.length; i++) {
    const w = weights ? weights[i] : 1;
    W += w;
    variance += w * (values[i] - centre) * (values[i] - centre);
    if (w > 0) largest = Math.max(largest, Math.abs(values[i]));
  }
  const spread = Math.sqrt(variance / W);
  return { centre, spread: spread > 2 ** -52 * largest ? spread : 0 };
}

/** s_y: the target's weighted population SD (root mean square without an intercept). */
export function targetSpread(y: readonly number[], weights: readonly number[] | null | undefined, withIntercept = true): number {
  return spreadOf(y, weights, withIntercept).spread;
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
    const { centre: mean, spread } = spreadOf(
      x.map((row) => row[j]),
      weights,
      withIntercept,
    );
    centre.push(mean);
    constant.push(spread === 0);
    scale.push(spread === 0 || !standardize ? 1 : spread);
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
  const sy = targetSpread(y, weights, withIntercept);
  if (!(sy > 0)) throw new Error("checkKkt needs a target that is not constant");
  // The y-units problem: lasso weight λ·α·s_y, ridge weight λ·(1−α); violations relative to λ·s_y.
  const lasso = lambda * alpha * sy;
  const ridge = lambda * (1 - alpha);
  const unit = lambda * sy;
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
    interceptViolation = Math.abs(s / W) / unit;
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
    const beta = b * s;
    const h = g - ridge * m * beta;
    const t = lasso * m;
    // subdifferential of t|β| at β
    let low = b > 0 ? t : -t;
    let high = b < 0 ? -t : t;
    // normal cone of the box: a coordinate at (or, by rounding, a hair past) a bound may push outward
    const slack = 1e-12 * Math.max(Math.abs(lo === -Infinity ? 0 : lo), Math.abs(hi === Infinity ? 0 : hi));
    if (b >= hi - slack) high = Infinity;
    if (b <= lo + slack) low = -Infinity;
    const v = (h < low ? low - h : h > high ? h - high : 0) / unit;
    perPredictor.push(v);
    if (v > coordinate) {
      coordinate = v;
      worstPredictor = j;
    }
    const excess = Math.max(0, (b - hi) * s - slack * s, (lo - b) * s - slack * s);
    feasibility = Math.max(feasibility, excess / unit);
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
