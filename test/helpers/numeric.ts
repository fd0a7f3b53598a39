/**
 * Explicit relative-error helpers for the engine tests. Every helper names the quantity it
 * compares in its failure message, so a failing check says which value went wrong and by how much.
 */

import { appendFileSync } from "fs";

/** |actual − expected| / |expected|; `expected` must be nonzero. */
export function relativeError(actual: number, expected: number): number {
  if (expected === 0) throw new Error("relativeError needs a nonzero expected value; use vectorRelativeError or an absolute check");
  return Math.abs(actual - expected) / Math.abs(expected);
}

/**
 * Norm-wise relative difference of two vectors: max_i |a_i − b_i| / max_i |b_i|.
 * Used for coefficient vectors and fitted values, where single components may sit near 0 and a
 * component-wise relative error would measure rounding noise instead of agreement.
 */
export function vectorRelativeError(actual: ArrayLike<number>, expected: ArrayLike<number>): number {
  if (actual.length !== expected.length) throw new Error(`length ${actual.length} vs expected ${expected.length}`);
  let scale = 0;
  let worst = 0;
  for (let i = 0; i < expected.length; i++) {
    scale = Math.max(scale, Math.abs(expected[i]));
    const d = Math.abs(actual[i] - expected[i]);
    if (!(d <= worst)) worst = d; // NaN propagates as a failure
  }
  if (scale === 0) return worst;
  return worst / scale;
}

/**
 * When ACCURACY_REPORT names a file, every checked error is appended to it ("tolerance<TAB>error<TAB>what"),
 * so the margins actually achieved can be read off a test run.
 */
function report(what: string, error: number, tolerance: number): void {
  const file = process.env.ACCURACY_REPORT;
  if (file) appendFileSync(file, `${tolerance}\t${error}\t${expect.getState().currentTestName ?? ""} :: ${what}\n`);
}

/** Throws (naming `what`) unless actual agrees with expected to `tolerance` relative error. */
export function expectRelative(actual: number, expected: number, tolerance: number, what: string): void {
  const error = relativeError(actual, expected);
  report(what, error, tolerance);
  if (!(error <= tolerance)) {
    throw new Error(`${what}: got ${actual}, expected ${expected}, relative error ${error} > ${tolerance}`);
  }
}

/** Throws (naming `what`) unless the vectors agree norm-wise (see vectorRelativeError). */
export function expectVectorRelative(actual: ArrayLike<number>, expected: ArrayLike<number>, tolerance: number, what: string): void {
  const error = vectorRelativeError(actual, expected);
  report(what, error, tolerance);
  if (!(error <= tolerance)) {
    throw new Error(
      `${what}: norm-wise relative error ${error} > ${tolerance}\n  got      ${Array.from(actual).join(", ")}\n  expected ${Array.from(expected).join(", ")}`,
    );
  }
}

/** Weighted mean Σ w v / Σ w (all weights 1 when `weights` is null). */
export function weightedMean(values: ArrayLike<number>, weights: ArrayLike<number> | null): number {
  let s = 0;
  let total = 0;
  for (let i = 0; i < values.length; i++) {
    const w = weights ? weights[i] : 1;
    s += w * values[i];
    total += w;
  }
  return s / total;
}

/** Predictions b0 + x·b for each row, computed directly (not with the engine's predict). */
export function predictRows(rows: readonly (readonly number[])[], intercept: number, coefficients: ArrayLike<number>): number[] {
  return rows.map((row) => {
    let s = intercept;
    for (let j = 0; j < row.length; j++) s += row[j] * coefficients[j];
    return s;
  });
}
