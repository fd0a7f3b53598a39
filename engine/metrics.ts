/**
 * Accuracy of predictions against actual values. Optional weights make each measure the
 * weighted version (Σ w·loss / Σ w). Pairs where either value is not finite are skipped;
 * `count` reports how many were used.
 */
export interface Score {
  /** Mean absolute error. */
  mae: number;
  /** Root mean squared error. */
  rmse: number;
  /** 1 − Σw(y − ŷ)² / Σw(y − ȳ)² (NaN when the actual values are all equal). */
  r2: number;
  /** Mean of (predicted − actual): positive when predictions run high. */
  bias: number;
  count: number;
}

export function meanAbsoluteError(actual: ArrayLike<number>, predicted: ArrayLike<number>): number {
  return score(actual, predicted).mae;
}

export function rootMeanSquaredError(actual: ArrayLike<number>, predicted: ArrayLike<number>): number {
  return score(actual, predicted).rmse;
}

export function rSquared(actual: ArrayLike<number>, predicted: ArrayLike<number>): number {
  return score(actual, predicted).r2;
}

export function meanError(actual: ArrayLike<number>, predicted: ArrayLike<number>): number {
  return score(actual, predicted).bias;
}

/** All four measures in one pass (two for R²). Cost O(n). */
export function score(actual: ArrayLike<number>, predicted: ArrayLike<number>, weights?: ArrayLike<number> | null): Score {
  if (actual.length !== predicted.length) {
    throw new RangeError(`score requires equally long inputs; got ${actual.length} actual and ${predicted.length} predicted`);
  }
  let total = 0;
  let count = 0;
  let sumActual = 0;
  let absolute = 0;
  let squared = 0;
  let signed = 0;
  for (let i = 0; i < actual.length; i++) {
    const a = actual[i];
    const f = predicted[i];
    const w = weights ? weights[i] : 1;
    if (!Number.isFinite(a) || !Number.isFinite(f) || !(w > 0)) continue;
    const e = f - a;
    total += w;
    count++;
    sumActual += w * a;
    absolute += w * Math.abs(e);
    squared += w * e * e;
    signed += w * e;
  }
  if (count === 0) return { mae: NaN, rmse: NaN, r2: NaN, bias: NaN, count: 0 };
  const mean = sumActual / total;
  let spread = 0;
  for (let i = 0; i < actual.length; i++) {
    const a = actual[i];
    const w = weights ? weights[i] : 1;
    if (!Number.isFinite(a) || !Number.isFinite(predicted[i]) || !(w > 0)) continue;
    spread += w * (a - mean) * (a - mean);
  }
  return {
    mae: absolute / total,
    rmse: Math.sqrt(squared / total),
    r2: spread > 0 ? 1 - squared / spread : NaN,
    bias: signed / total,
    count,
  };
}
