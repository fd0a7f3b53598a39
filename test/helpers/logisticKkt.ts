/**
 * An independent optimality (KKT) checker for penalized logistic fits. It works from the raw data
 * and a result's intercept and coefficients in the data's units only: it standardizes the columns
 * itself (test/helpers/kkt.ts columnScales) and never calls engine code. Probabilities come from
 * Math.exp, not the engine's portable exponential.
 *
 * Objective (the engine's two-class contract, engine/logistic.ts), y in {0, 1}:
 *   −(1/Σw) Σ_i w_i [ y_i η_i − log(1 + e^{η_i}) ]  +  λ Σ_j m_j [ α|b̃_j| + (1−α)/2 · b̃_j² ],
 *   η_i = b0 + Σ_j b_j x_ij,  b̃_j = b_j · s_j,  l_j <= b_j <= u_j,
 * with s_j the weighted population SD of column j (divisor Σw) when standardizing (weighted root
 * mean square without an intercept), 1 otherwise. The target is not standardized.
 *
 * Optimality conditions (Friedman, Hastie & Tibshirani 2010, J. Stat. Software 33(1) §3: the
 * conditions of §2.1 with the residual replaced by y − p; bounds: the normal cone of the box,
 * standard convex optimality):
 *   g_j = (1/Σw) Σ_i w_i x̃_ij (y_i − p_i),  x̃_ij = (x_ij − x̄_j)/s_j,  h_j = g_j − λ(1−α) m_j b̃_j,
 *   h_j ∈ λ α m_j ∂|b̃_j| + N_[l_j s_j, u_j s_j](b̃_j),
 *   and, with an intercept, Σ_i w_i (y_i − p_i) = 0.
 * Violations are reported relative to λ (the log-likelihood has no units).
 */
import { columnScales } from "./kkt";

export interface LogisticKktInput {
  x: readonly (readonly number[])[];
  /** 0/1 outcomes. */
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

export interface LogisticKktReport {
  /** Largest of the violations below, relative to λ. */
  max: number;
  coordinate: number;
  worstPredictor: number;
  /** |Σ w (y − p)| / Σw / λ (0 without an intercept). */
  interceptViolation: number;
  perPredictor: number[];
}

/** The logistic function from Math.exp, written to avoid overflow on either side. */
export function sigmoid(eta: number): number {
  if (eta >= 0) return 1 / (1 + Math.exp(-eta));
  const e = Math.exp(eta);
  return e / (1 + e);
}

export function checkLogisticKkt(input: LogisticKktInput): LogisticKktReport {
  const { x, y, lambda, alpha } = input;
  const weights = input.weights ?? null;
  const withIntercept = input.withIntercept ?? true;
  const standardize = input.standardize ?? true;
  const n = x.length;
  const p = input.coefficients.length;
  if (!(lambda > 0)) throw new Error(`checkLogisticKkt needs λ > 0, got ${lambda}`);
  const { totalWeight: W, centre, scale, constant } = columnScales(x, weights, withIntercept, standardize);
  const residual = new Array<number>(n);
  for (let i = 0; i < n; i++) {
    let eta = input.intercept;
    for (let j = 0; j < p; j++) eta += x[i][j] * input.coefficients[j];
    residual[i] = y[i] - sigmoid(eta);
  }
  let interceptViolation = 0;
  if (withIntercept) {
    let s = 0;
    for (let i = 0; i < n; i++) s += (weights ? weights[i] : 1) * residual[i];
    interceptViolation = Math.abs(s / W) / lambda;
  }
  const perPredictor: number[] = [];
  let coordinate = 0;
  let worstPredictor = -1;
  for (let j = 0; j < p; j++) {
    const b = input.coefficients[j];
    if (constant[j]) {
      const v = b === 0 ? 0 : Infinity;
      perPredictor.push(v);
      if (v > coordinate) {
        coordinate = v;
        worstPredictor = j;
      }
      continue;
    }
    let g = 0;
    for (let i = 0; i < n; i++) g += (weights ? weights[i] : 1) * ((x[i][j] - centre[j]) / scale[j]) * residual[i];
    g /= W;
    const m = input.multipliers ? input.multipliers[j] : 1;
    const lo = input.lower ? input.lower[j] : -Infinity;
    const hi = input.upper ? input.upper[j] : Infinity;
    const standardized = b * scale[j];
    const h = g - lambda * (1 - alpha) * m * standardized;
    const t = lambda * alpha * m;
    let low = b > 0 ? t : -t;
    let high = b < 0 ? -t : t;
    // A coefficient at (or, by rounding, a hair past) a bound may push outward.
    const slack = 1e-12 * Math.max(Math.abs(lo === -Infinity ? 0 : lo), Math.abs(hi === Infinity ? 0 : hi));
    if (b >= hi - slack) high = Infinity;
    if (b <= lo + slack) low = -Infinity;
    const v = (h < low ? low - h : h > high ? h - high : 0) / lambda;
    perPredictor.push(v);
    if (v > coordinate) {
      coordinate = v;
      worstPredictor = j;
    }
  }
  return { max: Math.max(coordinate, interceptViolation), coordinate, worstPredictor, interceptViolation, perPredictor };
}

/** The penalized objective above at given data-units coefficients (Math.exp/Math.log1p). */
export function logisticObjective(input: Omit<LogisticKktInput, "lower" | "upper">): number {
  const { x, y, lambda, alpha } = input;
  const weights = input.weights ?? null;
  const withIntercept = input.withIntercept ?? true;
  const { totalWeight: W, scale, constant } = columnScales(x, weights, withIntercept, input.standardize ?? true);
  let loss = 0;
  for (let i = 0; i < x.length; i++) {
    let eta = input.intercept;
    for (let j = 0; j < input.coefficients.length; j++) eta += x[i][j] * input.coefficients[j];
    // log(1 + e^η) − yη, written for both signs without overflow.
    const softplus = eta > 0 ? eta + Math.log1p(Math.exp(-eta)) : Math.log1p(Math.exp(eta));
    loss += (weights ? weights[i] : 1) * (softplus - y[i] * eta);
  }
  let penalty = 0;
  for (let j = 0; j < input.coefficients.length; j++) {
    if (constant[j]) continue;
    const m = input.multipliers ? input.multipliers[j] : 1;
    const b = input.coefficients[j] * scale[j];
    penalty += m * (alpha * Math.abs(b) + ((1 - alpha) / 2) * b * b);
  }
  return loss / W + lambda * penalty;
}
