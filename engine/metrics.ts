/**
 * Accuracy of predictions against actual values. Optional weights make each measure the
 * weighted version (Σ w·loss / Σ w). Pairs where either value is not finite are skipped;
 * `count` reports how many were used.
 */
import { binaryExponent, powerOfTwo } from "./scale";

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

/** Values (and weights) whose largest magnitude lies in [2^-500, 2^500] are used as they are: no square or sum of them can overflow or underflow. */
const SAFE_LOW = 2 ** -500;
const SAFE_HIGH = 2 ** 500;

/**
 * A power of two that brings `largest` near 1, or 1 when `largest` is already in the safe range
 * (so ordinary data give bit-for-bit the sums they always gave). Multiplying by a power of two is
 * exact, so the scaled measures differ from the exact ones only by the rounding of the sums.
 */
function scaleFor(largest: number): number {
  if (!(largest > 0) || (largest >= SAFE_LOW && largest <= SAFE_HIGH)) return 1;
  const exponent = Math.min(1000, Math.max(-1000, binaryExponent(largest)));
  return powerOfTwo(-exponent);
}

/**
 * All four measures in one pass (two for R²). Cost O(n).
 * Scale-safe: values are first multiplied by a power of two chosen from the largest |actual| or
 * |predicted| (and weights by one chosen from the largest weight), so squares neither overflow
 * (values near 1e200) nor underflow (values near 1e-200); the measures are then scaled back
 * (MAE, RMSE and bias in the data's units; R² is unit-free).
 */
export function score(actual: ArrayLike<number>, predicted: ArrayLike<number>, weights?: ArrayLike<number> | null): Score {
  if (actual.length !== predicted.length) {
    throw new RangeError(`score requires equally long inputs; got ${actual.length} actual and ${predicted.length} predicted`);
  }
  // The first pass also forms the sums unscaled; they are the sums when no scaling is needed
  // (sv = sw = 1: × 1 changes no finite value), the usual case, and errorSums' pass is skipped.
  const first = largestAndSums(actual, predicted, weights);
  const sv = scaleFor(first.largest);
  const sw = weights ? scaleFor(first.heaviest) : 1;
  const { total, count, sumActual, absolute, squared, signed } = sv === 1 && sw === 1 ? first : errorSums(actual, predicted, weights, sv, sw);
  if (count === 0) return { mae: NaN, rmse: NaN, r2: NaN, bias: NaN, count: 0 };
  const mean = sumActual / total;
  const spread = spreadOf(actual, predicted, weights, sv, sw, mean);
  return {
    mae: absolute / total / sv,
    rmse: Math.sqrt(squared / total) / sv,
    r2: spread > 0 ? 1 - squared / spread : NaN,
    bias: signed / total / sv,
    count,
  };
}

/** Whether score uses pair i: both values finite and the weight (if any) positive. A module function, not a closure made per call (V8 deoptimized score on each new closure). */
function isUsed(actual: ArrayLike<number>, predicted: ArrayLike<number>, weights: ArrayLike<number> | null | undefined, i: number): boolean {
  return Number.isFinite(actual[i]) && Number.isFinite(predicted[i]) && (weights ? weights[i] > 0 : true);
}

/**
 * score's first pass: the largest |actual| or |predicted| and the heaviest weight over the pairs
 * it uses (both finite, weight positive), with plain comparisons (the same maxima as Math.max
 * over these finite, non-negative values); and in the same pass errorSums' sums with sv = sw = 1,
 * the same operations in the same order (a value × 1 is the value itself).
 */
function largestAndSums(
  actual: ArrayLike<number>,
  predicted: ArrayLike<number>,
  weights: ArrayLike<number> | null | undefined,
): { largest: number; heaviest: number; total: number; count: number; sumActual: number; absolute: number; squared: number; signed: number } {
  let largest = 0;
  let heaviest = 0;
  let total = 0;
  let count = 0;
  let sumActual = 0;
  let absolute = 0;
  let squared = 0;
  let signed = 0;
  for (let i = 0; i < actual.length; i++) {
    const a = actual[i];
    const p = predicted[i];
    if (!Number.isFinite(a) || !Number.isFinite(p)) continue;
    if (weights && !(weights[i] > 0)) continue;
    const magnitude = Math.abs(a) > Math.abs(p) ? Math.abs(a) : Math.abs(p);
    if (magnitude > largest) largest = magnitude;
    if (weights && weights[i] > heaviest) heaviest = weights[i];
    const w = weights ? weights[i] : 1;
    const e = p - a;
    total += w;
    count++;
    sumActual += w * a;
    absolute += w * Math.abs(e);
    squared += w * e * e;
    signed += w * e;
  }
  return { largest, heaviest, total, count, sumActual, absolute, squared, signed };
}

/** score's second pass: Σw, the count, Σw·a, Σw|e|, Σw·e², Σw·e over the pairs it uses (values × sv, weights × sw, e = predicted − actual). */
function errorSums(
  actual: ArrayLike<number>,
  predicted: ArrayLike<number>,
  weights: ArrayLike<number> | null | undefined,
  sv: number,
  sw: number,
): { total: number; count: number; sumActual: number; absolute: number; squared: number; signed: number } {
  let total = 0;
  let count = 0;
  let sumActual = 0;
  let absolute = 0;
  let squared = 0;
  let signed = 0;
  for (let i = 0; i < actual.length; i++) {
    if (!isUsed(actual, predicted, weights, i)) continue;
    const a = actual[i] * sv;
    const w = (weights ? weights[i] : 1) * sw;
    const e = predicted[i] * sv - a;
    total += w;
    count++;
    sumActual += w * a;
    absolute += w * Math.abs(e);
    squared += w * e * e;
    signed += w * e;
  }
  return { total, count, sumActual, absolute, squared, signed };
}

/** score's third pass: Σw·(a − mean)² over the pairs it uses. */
function spreadOf(actual: ArrayLike<number>, predicted: ArrayLike<number>, weights: ArrayLike<number> | null | undefined, sv: number, sw: number, mean: number): number {
  let spread = 0;
  for (let i = 0; i < actual.length; i++) {
    if (!isUsed(actual, predicted, weights, i)) continue;
    const a = actual[i] * sv;
    const w = (weights ? weights[i] : 1) * sw;
    spread += w * (a - mean) * (a - mean);
  }
  return spread;
}
