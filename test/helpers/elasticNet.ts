/**
 * A small independent elastic-net solver posed in the target's units, for reference values.
 * It shares no code with the engine: it standardizes the columns itself (test/helpers/kkt.ts
 * columnScales) and never scales the target.
 *
 * Problem (the engine's unit-free objective multiplied by s_y², with β_j = b_j · s_j):
 *   minimize over b0, β   (1/(2Σw)) Σ_i w_i (y_i − b0 − x̃_i·β)²  +  λ1 Σ_j m_j |β_j|  +  (λ2/2) Σ_j m_j β_j²
 *   subject to l_j s_j <= β_j <= u_j s_j,
 * where the engine's strength λ and mix α give λ1 = λ·α·s_y and λ2 = λ·(1−α).
 *
 * Method: plain cyclic coordinate descent on centred data (Friedman, Hastie & Tibshirani 2010,
 * J. Stat. Software 33(1), eq. 5, with the box clip; no screening, no warm starts, no
 * acceleration), swept until no coordinate moves by more than 1e-15 of the largest |β| (or a
 * large sweep cap), so its answer is exact to about the conditioning times 1e-15.
 */
import { columnScales, stableWeightedMean, targetSpread } from "./kkt";

export interface ReferenceInput {
  x: readonly (readonly number[])[];
  y: readonly number[];
  weights?: readonly number[] | null;
  /** The engine's unit-free strength and mix. */
  lambda: number;
  alpha: number;
  multipliers?: readonly number[] | null;
  lower?: readonly number[] | null;
  upper?: readonly number[] | null;
  withIntercept?: boolean;
  standardize?: boolean;
  /**
   * Weights of the two penalty parts in the target's units, when given instead of deriving
   * them from λ and α (used to show that another pairing gives another answer).
   */
  penaltyWeights?: { lasso: number; ridge: number };
}

export interface ReferenceFit {
  intercept: number;
  coefficients: number[];
  /** The y-units penalty weights used. */
  lasso: number;
  ridge: number;
  sweeps: number;
}

export function referenceElasticNet(input: ReferenceInput): ReferenceFit {
  const { x, y, lambda, alpha } = input;
  const weights = input.weights ?? null;
  const withIntercept = input.withIntercept ?? true;
  const standardize = input.standardize ?? true;
  const n = x.length;
  const p = x[0].length;
  const { totalWeight: W, centre, scale, constant } = columnScales(x, weights, withIntercept, standardize);
  const sy = targetSpread(y, weights, withIntercept);
  const lasso = input.penaltyWeights ? input.penaltyWeights.lasso : lambda * alpha * sy;
  const ridge = input.penaltyWeights ? input.penaltyWeights.ridge : lambda * (1 - alpha);
  const ybar = withIntercept ? stableWeightedMean(y, weights) : 0;
  const w = (i: number): number => (weights ? weights[i] : 1);
  // Standardized columns (column-major) and their curvatures.
  const xs: number[][] = [];
  const curvature: number[] = [];
  for (let j = 0; j < p; j++) {
    const column = x.map((row) => (constant[j] ? 0 : (row[j] - centre[j]) / scale[j]));
    xs.push(column);
    let d = 0;
    for (let i = 0; i < n; i++) d += w(i) * column[i] * column[i];
    curvature.push(d / W);
  }
  const r = y.map((v) => v - ybar);
  const beta = new Array<number>(p).fill(0);
  const lo = Array.from({ length: p }, (_, j) => (input.lower ? input.lower[j] * scale[j] : -Infinity));
  const hi = Array.from({ length: p }, (_, j) => (input.upper ? input.upper[j] * scale[j] : Infinity));
  let sweeps = 0;
  for (; sweeps < 500000; sweeps++) {
    let largestMove = 0;
    let largestBeta = 0;
    for (let j = 0; j < p; j++) {
      if (constant[j]) continue;
      const m = input.multipliers ? input.multipliers[j] : 1;
      let g = 0;
      for (let i = 0; i < n; i++) g += w(i) * xs[j][i] * r[i];
      const z = g / W + curvature[j] * beta[j];
      const soft = Math.sign(z) * Math.max(Math.abs(z) - lasso * m, 0);
      const value = Math.min(hi[j], Math.max(lo[j], soft / (curvature[j] + ridge * m)));
      const delta = value - beta[j];
      if (delta !== 0) {
        for (let i = 0; i < n; i++) r[i] -= delta * xs[j][i];
        beta[j] = value;
      }
      largestMove = Math.max(largestMove, Math.abs(delta));
      largestBeta = Math.max(largestBeta, Math.abs(value));
    }
    if (largestMove <= 1e-15 * largestBeta) break;
  }
  const coefficients = beta.map((b, j) => (constant[j] ? 0 : b / scale[j]));
  let intercept = ybar;
  if (withIntercept) for (let j = 0; j < p; j++) intercept -= coefficients[j] * centre[j];
  else intercept = 0;
  return { intercept, coefficients, lasso, ridge, sweeps };
}
