/**
 * exp and log built from + − × ÷ alone (and the hypotenuse from them and √), so their results are
 * the same bit for bit in every JavaScript engine. ECMAScript leaves Math.exp and Math.log "implementation-approximated":
 * Node 20's V8 and a current Chromium's differ in the last bit for some arguments (27 of 367
 * strengths of a few test grids), which moved grid strengths, and with them whole fits, between
 * the Web Worker in the browser and Node. The four basic operations are correctly rounded
 * everywhere (IEEE 754, which ECMAScript requires, without fused multiply-add), so these are not.
 *
 * Method (Muller, Elementary Functions, 3rd ed., §11; the constants as in Sun's fdlibm e_exp.c
 * and e_log.c, a general-purpose reference): argument reduction by powers of two with ln 2 split
 * into a head with trailing zero bits and a tail, then a short series on the reduced argument.
 * Within about one unit in the last place of Math.exp and Math.log (tested against them).
 */

/** ln 2 split: the head has 32 trailing zero bits, so k × LN2_HI is exact for |k| < 2^20. */
const LN2_HI = 6.93147180369123816490e-1;
const LN2_LO = 1.90821492927058770002e-10;

const buffer = new DataView(new ArrayBuffer(8));

/** 2^k for an integer k in [−1022, 1023], built from its bits (exact). */
function twoTo(k: number): number {
  buffer.setUint32(0, (k + 1023) << 20);
  buffer.setUint32(4, 0);
  return buffer.getFloat64(0);
}

/** e^x. */
export function portableExp(x: number): number {
  if (Number.isNaN(x)) return NaN;
  if (x > 709.782712893384) return Infinity;
  if (x < -745.1332191019412) return 0;
  // x = k ln 2 + r with |r| <= ln 2 / 2 (Math.round is exact; so is k × LN2_HI).
  const k = Math.round(x / Math.LN2);
  const r = x - k * LN2_HI - k * LN2_LO;
  // e^r = 1 + r(1 + r/2(1 + r/3(…))): 17 terms leave a truncation below 1e-19 for |r| <= 0.35.
  let sum = 1;
  for (let n = 17; n >= 1; n--) sum = 1 + (r * sum) / n;
  // Scale by 2^k in two exact steps, so neither factor over- or underflows on its own.
  const half = Math.trunc(k / 2);
  return sum * twoTo(half) * twoTo(k - half);
}

/** Natural logarithm of x (NaN below 0, −Infinity at 0). */
export function portableLog(x: number): number {
  if (Number.isNaN(x) || x < 0) return NaN;
  if (x === 0) return -Infinity;
  if (x === Infinity) return Infinity;
  let e = 0;
  let m = x;
  // Subnormals: scale into the normal range first (exact).
  if (m < 2.2250738585072014e-308) {
    m *= 18014398509481984; // 2^54
    e -= 54;
  }
  buffer.setFloat64(0, m);
  const high = buffer.getUint32(0);
  e += ((high >>> 20) & 0x7ff) - 1023;
  // The mantissa in [1, 2), then moved into [√½, √2) so the series argument stays small.
  buffer.setUint32(0, (high & 0x000fffff) | 0x3ff00000);
  m = buffer.getFloat64(0);
  if (m > Math.SQRT2) {
    m /= 2;
    e += 1;
  }
  // log m = 2 atanh(s) = 2(s + s³/3 + s⁵/5 + …), s = (m − 1)/(m + 1), |s| <= 0.172: 13 terms
  // leave a truncation below 1e-19.
  const s = (m - 1) / (m + 1);
  const s2 = s * s;
  let sum = 0;
  for (let n = 25; n >= 1; n -= 2) sum = 1 / n + s2 * sum;
  return e * LN2_HI + (e * LN2_LO + 2 * s * sum);
}

/**
 * √(a² + b²) without overflow, from × ÷ and √ (correctly rounded everywhere): Math.hypot may
 * differ between engines. The order of operations is ml-matrix's, which engine/eigen.ts keeps
 * bit for bit. @example hypotenuse(3, 4) // 5
 */
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
