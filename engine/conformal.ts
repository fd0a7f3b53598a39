/**
 * Prediction intervals for a number target: the K-fold CV+ interval of Barber, Candès, Ramdas &
 * Tibshirani (2021), "Predictive inference with the jackknife+", Annals of Statistics 49(1).
 *
 * Each training row i held out by fold k(i) has the held-out residual R_i = |y_i − μ̂₋ₖ₍ᵢ₎(x_i)|,
 * where μ̂₋ₖ is the model fitted without fold k (at the chosen mix and strength). For a new row x,
 * with n such rows and α = 1 − level (the miscoverage, not the mix):
 *   low  = the ⌊α(n+1)⌋-th smallest of μ̂₋ₖ₍ᵢ₎(x) − R_i,
 *   high = the ⌈(1−α)(n+1)⌉-th smallest of μ̂₋ₖ₍ᵢ₎(x) + R_i.
 * Since ⌈(1−α)(n+1)⌉ = n + 1 − ⌊α(n+1)⌋, high is the ⌊α(n+1)⌋-th largest. When ⌊α(n+1)⌋ < 1 (too
 * few rows for the level) both ends are unbounded: low = −Infinity, high = +Infinity.
 *
 * The guarantee (the paper's K-fold CV+ theorem) is for a fixed fitting procedure and
 * exchangeable rows: coverage ≥ 1 − 2α − a small term in K and n. Weights: the caller passes only
 * the rows that carry weight (weight-0 rows take no part in the fit, so none here); positive
 * weights do not enter the quantiles, every row counts once.
 *
 * Cost: O(m·(K·p + n)) for m new rows: each end is found by selection (quickselect, expected
 * linear), not by sorting.
 */

import { CancelSignal, InputError, throwIfCancelled } from "./errors";
import type { ColumnMatrix } from "./matrix";

/** One fold's model in the data's units: prediction = intercept + Σ coefficients[j]·x_j. */
export interface FoldModel {
  intercept: number;
  coefficients: number[];
}

/**
 * The rank ⌊α(n+1)⌋ of the lower end, α = 1 − level. α(n+1) is formed as (n+1) − level·(n+1)
 * and a relative tolerance of 1e-9 absorbs the rounding of decimal levels: 1 − 0.9 is
 * 0.09999999999999998 in doubles, and with n + 1 = 10 the rank must be 1, not 0.
 */
export function lowerRank(n: number, level: number): number {
  const alphaN = (1 - level) * (n + 1);
  return Math.floor(alphaN + 1e-9 * Math.max(1, alphaN));
}

/** Checks a coverage level: a number strictly between 0 and 1. */
export function checkLevel(level: number): void {
  if (typeof level !== "number" || !Number.isFinite(level) || level <= 0 || level >= 1) {
    throw new InputError("setting", `the interval level must be strictly between 0 and 1 (e.g. 0.9 or 90%); got ${String(level)}`);
  }
}

/**
 * The k-th smallest (1-based) of values[0..n), by quickselect; reorders `values`. Deterministic
 * (median-of-three pivots, no randomness).
 */
export function kthSmallest(values: Float64Array, n: number, k: number): number {
  let lo = 0;
  let hi = n - 1;
  const target = k - 1;
  while (hi > lo) {
    const mid = lo + ((hi - lo) >> 1);
    // Median of three as the pivot.
    const a = values[lo];
    const b = values[mid];
    const c = values[hi];
    const pivot = a < b ? (b < c ? b : a < c ? c : a) : a < c ? a : b < c ? c : b;
    let i = lo;
    let j = hi;
    while (i <= j) {
      while (values[i] < pivot) i++;
      while (values[j] > pivot) j--;
      if (i <= j) {
        const t = values[i];
        values[i] = values[j];
        values[j] = t;
        i++;
        j--;
      }
    }
    if (target <= j) hi = j;
    else if (target >= i) lo = i;
    else return values[target];
  }
  return values[target];
}

/**
 * CV+ intervals for the rows of `newRows` (columns in the fold models' order).
 * `rowFold[i]` is the fold (index into foldModels) that held out training row i, `residuals[i]`
 * its held-out residual y_i − μ̂₋ₖ₍ᵢ₎(x_i) (its sign is ignored). Throws InputError for a level
 * outside (0, 1) or inputs that don't match.
 */
export function cvPlusIntervals(
  foldModels: readonly FoldModel[],
  rowFold: ArrayLike<number>,
  residuals: ArrayLike<number>,
  newRows: ColumnMatrix,
  level: number,
  signal?: CancelSignal,
): { low: Float64Array; high: Float64Array } {
  checkLevel(level);
  const n = rowFold.length;
  const K = foldModels.length;
  if (residuals.length !== n) throw new Error(`${n} fold numbers but ${residuals.length} residuals`);
  if (n === 0 || K === 0) throw new InputError("too-few-rows", "prediction intervals need held-out rows from cross-validation, and there are none");
  const p = newRows.columns;
  for (const model of foldModels) {
    if (model.coefficients.length !== p) throw new InputError("shape", `new rows have ${p} columns but the fold models have ${model.coefficients.length} terms`);
  }
  const size = new Float64Array(n);
  for (let i = 0; i < n; i++) {
    const k = rowFold[i];
    if (!(Number.isInteger(k) && k >= 0 && k < K)) throw new Error(`row ${i} has fold ${k}, outside 0..${K - 1}`);
    const r = Math.abs(residuals[i]);
    if (!Number.isFinite(r)) throw new InputError("not-finite", `the held-out residual of training row ${i + 1} is not a finite number`);
    size[i] = r;
  }
  const m = newRows.rows;
  const low = new Float64Array(m);
  const high = new Float64Array(m);
  const rank = lowerRank(n, level);
  if (rank < 1) {
    low.fill(-Infinity);
    high.fill(Infinity);
    return { low, high };
  }
  // Each fold model's prediction for every new row: K × m.
  const predictions = new Float64Array(K * m);
  for (let k = 0; k < K; k++) {
    const model = foldModels[k];
    const out = predictions.subarray(k * m, (k + 1) * m);
    out.fill(model.intercept);
    for (let j = 0; j < p; j++) {
      const b = model.coefficients[j];
      if (b === 0) continue;
      const off = j * m;
      for (let t = 0; t < m; t++) out[t] += b * newRows.data[off + t];
    }
    for (let t = 0; t < m; t++) {
      if (Number.isNaN(out[t])) throw new InputError("not-finite", `new row ${t + 1} gives a fold model no prediction (its values are too large): check it for typing errors`);
    }
  }
  const lows = new Float64Array(n);
  const highs = new Float64Array(n);
  for (let t = 0; t < m; t++) {
    if (t % 64 === 0) throwIfCancelled(signal);
    for (let i = 0; i < n; i++) {
      const mu = predictions[rowFold[i] * m + t];
      lows[i] = mu - size[i];
      // The rank-th largest of μ + R is the rank-th smallest of −(μ + R), negated.
      highs[i] = -(mu + size[i]);
    }
    low[t] = kthSmallest(lows, n, rank);
    high[t] = -kthSmallest(highs, n, rank);
  }
  return { low, high };
}

/** What predictionIntervals reads from a fit (FitResult has these keys). */
export interface IntervalSource {
  outcome: "number" | "two-class";
  cv: { scheme: "random" | "labels" | "time" } | null;
  foldModels?: FoldModel[] | null;
  heldOut?: { fold: number[]; residual: number[] } | null;
}

/**
 * CV+ intervals from a fit: refuses, with a message saying what to change, a yes/no model, a fit
 * without cross-validation and one with time-ordered folds (whose held-out rows are not
 * exchangeable with new ones, so the guarantee does not hold).
 */
export function predictionIntervals(result: IntervalSource, newRows: ColumnMatrix, level: number, signal?: CancelSignal): { low: Float64Array; high: Float64Array } {
  checkLevel(level);
  if (result.outcome === "two-class") {
    throw new InputError("setting", "prediction intervals are for number targets; a yes/no model gives probabilities: remove the interval setting");
  }
  if (result.cv === null) {
    throw new InputError("setting", "prediction intervals are built from the cross-validation's held-out rows, and a fixed strength skips cross-validation: remove the strength setting, or the interval setting");
  }
  if (result.cv.scheme === "time") {
    throw new InputError(
      "setting",
      "prediction intervals need folds dealt at random (or by label): with time-ordered folds the held-out errors of earlier rows don't stand for those of new rows; remove the time-ordered setting, or the interval setting",
    );
  }
  if (!result.foldModels || !result.heldOut) throw new Error("the fit kept no fold models");
  return cvPlusIntervals(result.foldModels, result.heldOut.fold, result.heldOut.residual, newRows, level, signal);
}
