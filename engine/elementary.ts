/**
 * exp, log and the hypotenuse from basic arithmetic only (+, −, ×, ÷, √ and exact scaling by
 * powers of two), so every JavaScript engine computes the same bits.
 *
 * Math.exp, Math.log and Math.hypot are not required to be correctly rounded, and engines differ
 * in the last bit (V8 in Chromium and V8 in Node 20 give different Math.exp for some arguments),
 * so a strength grid built with them, and every fit down it, could differ in the last digits
 * between the add-in's Web Worker and the command line. The four basic operations and the square
 * root are correctly rounded everywhere (IEEE 754), so these versions are the same everywhere.
 * Accuracy: within about one unit in the last place.
 *
 * Method (the classic argument reductions; Cody & Waite, Software Manual for the Elementary
 * Functions, 1980; Muller, Elementary Functions: Algorithms and Implementation, ch. 11):
 * - log x: x = m·2^e with m in [√½, √2); with f = m − 1 (exact) and s = f/(2 + f),
 *   log(1 + f) = 2 atanh(s) = f − s·(f − R), R = Σ_k 2 s^(2k)/(2k + 1), and
 *   log x = e·ln2_hi + (log(1 + f) + e·ln2_lo), ln2 split so that e·ln2_hi is exact.
 * - exp x: x = k·ln2 + r with k = round(x/ln2) and |r| <= ln2/2 (r from the split ln2, exact in its
 *   first step); exp r by its Taylor series in Horner form; exp x = exp(r)·2^k, scaled exactly.
 */
import { binaryExponent, scaleByPowerOfTwo } from "./scale";

/** ln 2 in two parts: the high part has its low 32 bits zero, so e·LN2_HIGH is exact for |e| < 2^20. */
const LN2_HIGH = 6.93147180369123816490e-1;
const LN2_LOW = 1.90821492927058770002e-10;
const SQRT_HALF = Math.SQRT1_2;

/** 2/(2k + 1) for k = 1..12: the atanh series' coefficients (each a correctly rounded division). */
const LOG_COEFFICIENTS = Array.from({ length: 12 }, (_, i) => 2 / (2 * (i + 1) + 1));

/**
 * Natural logarithm, the same bits in every JavaScript engine. NaN for x < 0 or NaN, −Infinity
 * for 0, Infinity for Infinity.
 * @example portableLog(1) // 0
 */
export function portableLog(x: number): number {
  if (!(x > 0)) return x === 0 ? -Infinity : NaN;
  if (x === Infinity) return Infinity;
  let e = binaryExponent(x);
  let m = scaleByPowerOfTwo(x, -e);
  if (m >= 2 * SQRT_HALF) {
    m *= 0.5;
    e += 1;
  }
  const f = m - 1;
  const s = f / (2 + f);
  const z = s * s;
  let series = 0;
  for (let i = LOG_COEFFICIENTS.length - 1; i >= 0; i--) series = z * (LOG_COEFFICIENTS[i] + series);
  const log1p = f - s * (f - series);
  return e * LN2_HIGH + (log1p + e * LN2_LOW);
}

/** 1/i for i = 1..18: the exponential series' factors (each a correctly rounded division). */
const INVERSES = Array.from({ length: 18 }, (_, i) => 1 / (i + 1));

/**
 * Exponential, the same bits in every JavaScript engine. Infinity above about 709.78, 0 below
 * about −745.13.
 * @example portableExp(0) // 1
 */
export function portableExp(x: number): number {
  if (Number.isNaN(x)) return NaN;
  if (x > 709.8) return Infinity;
  if (x < -745.2) return 0;
  const k = Math.round(x / (LN2_HIGH + LN2_LOW));
  const r = x - k * LN2_HIGH - k * LN2_LOW;
  // exp r = 1 + r(1 + r/2(1 + r/3(…))): |r| <= 0.347, so 18 terms leave under 1e-20.
  let sum = 1;
  for (let i = INVERSES.length - 1; i >= 0; i--) sum = 1 + r * INVERSES[i] * sum;
  return scaleByPowerOfTwo(sum, k);
}

/** √(a² + b²) without overflow, the same bits everywhere (Math.hypot may differ between engines). */
export function hypotenuse(a: number, b: number): number {
  if (Math.abs(a) > Math.abs(b)) {
    const r = b / a;
    return Math.abs(a) * Math.sqrt(1 + r * r);
  }
  if (b !== 0) {
    const r = a / b;
    return Math.abs(b) * Math.sqrt(1 + r * r);
  }
  return 0;
}
