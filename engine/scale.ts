/**
 * Exact rescaling by powers of two, so that data of any finite size can be summed and squared.
 *
 * Multiplying by 2^k changes only a double's exponent: it is exact (unless the result overflows
 * or falls below the normal range), and every later sum, product and quotient rounds exactly as
 * it would have on the unscaled values. So the engine brings each column, the target and the
 * weights to a largest magnitude in [0.5, 1) before any arithmetic, and moves results back by
 * the same powers at the end: values near 1e200 or 1e-200 fit as values near 1 do, and data
 * scaled by a power of two give bit-identical standardized problems.
 */

const BITS = new DataView(new ArrayBuffer(8));

/** Largest and smallest k for which 2^k is a normal double. */
const MAX_EXPONENT = 1023;
const MIN_EXPONENT = -1022;

/** 2^k, exactly, for -1022 ≤ k ≤ 1023 (built from its bits: Math.pow promises no exactness). */
export function powerOfTwo(k: number): number {
  if (!(Number.isInteger(k) && k >= MIN_EXPONENT && k <= MAX_EXPONENT)) {
    throw new RangeError(`powerOfTwo requires a whole exponent from ${MIN_EXPONENT} to ${MAX_EXPONENT}; got ${k}`);
  }
  BITS.setUint32(0, (k + 1023) * 2 ** 20);
  BITS.setUint32(4, 0);
  return BITS.getFloat64(0);
}

/**
 * The exponent e with 2^e <= |value| < 2^(e+1), for a finite nonzero value (subnormals
 * included). Read from the bits, so it is exact where Math.log2 may round.
 * @example binaryExponent(0.75) // -1
 */
export function binaryExponent(value: number): number {
  const magnitude = Math.abs(value);
  if (!(magnitude > 0 && Number.isFinite(magnitude))) {
    throw new RangeError(`binaryExponent requires a finite nonzero value; got ${value}`);
  }
  if (magnitude < 2 ** -1022) return binaryExponent(magnitude * 2 ** 64) - 64;
  BITS.setFloat64(0, magnitude);
  return ((BITS.getUint32(0) >>> 20) & 0x7ff) - 1023;
}

/**
 * The exponent k such that `largest` × 2^k lies in [0.5, 1): the scaling that brings a set of
 * values whose largest magnitude is `largest` next to 1. 0 when `largest` is 0 (nothing to
 * scale). Kept within the normal range of 2^k, so for `largest` above 2^1021 or below 2^-1022
 * the scaled largest lands a little outside [0.5, 1) (still far from overflow or underflow).
 * @example unitExponent(1e200) // -665: 1e200 × 2^-665 ≈ 0.78
 */
export function unitExponent(largest: number): number {
  if (!(largest > 0)) return 0;
  return Math.min(MAX_EXPONENT, Math.max(MIN_EXPONENT, -(binaryExponent(largest) + 1)));
}

/**
 * value × 2^k for any whole k, in steps that stay within the normal powers of two. Exact unless
 * the result overflows (±Infinity) or falls below the normal range (rounded, or 0).
 * @example scaleByPowerOfTwo(3, -2) // 0.75
 */
export function scaleByPowerOfTwo(value: number, k: number): number {
  let out = value;
  let rest = k;
  while (rest > MAX_EXPONENT) {
    out *= powerOfTwo(MAX_EXPONENT);
    rest -= MAX_EXPONENT;
  }
  while (rest < MIN_EXPONENT) {
    out *= powerOfTwo(MIN_EXPONENT);
    rest -= MIN_EXPONENT;
  }
  return out * powerOfTwo(rest);
}

/** Smallest positive normal double, 2^-1022: below it a result has lost digits. */
export const SMALLEST_NORMAL = 2 ** -1022;
