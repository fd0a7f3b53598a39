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
function powerFromBits(k: number): number {
  buffer.setUint32(0, (k + 1023) << 20);
  buffer.setUint32(4, 0);
  return buffer.getFloat64(0);
}

/** Every 2^k for k in [−1022, 1023], built once from their bits (exact): a lookup is faster than the bits each time. */
const POWERS = Float64Array.from({ length: 2046 }, (_, t) => powerFromBits(t - 1022));

/** 2^k for an integer k in [−1022, 1023] (exact). */
function twoTo(k: number): number {
  return POWERS[k + 1022];
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

/**
 * Table-driven e^x and log(1 + x), for the two-class solver's inner loops (model.ts logistic and
 * classMetrics.ts softplus run once per row at every step). Built, like the functions above, from
 * + − × ÷ only, with constants written as decimal literals (which every engine reads as the same
 * double), so they too give the same bits in every JavaScript engine; they are not the same
 * function as portableExp/portableLog (which keep their bits: the strength grid depends on them),
 * only as accurate (within a few units in the last place; tested against Math.exp and Math.log1p)
 * and several times faster: a short polynomial after a finer argument reduction instead of a
 * chain of 17 divisions. Method: Tang 1989, "Table-driven implementation of the exponential
 * function in IEEE floating-point arithmetic", ACM TOMS 15(2), with a 32-entry table.
 */

/** 2^(j/32), j = 0..31, and log(1 + j/32), j = 0..32: computed to 60 digits (Python's decimal module) and rounded to the nearest double. */
const EXP_TABLE = [
  1.0, 1.0218971486541166, 1.0442737824274138, 1.0671404006768237, 1.0905077326652577, 1.1143867425958924, 1.1387886347566916,
  1.1637248587775775, 1.189207115002721, 1.215247359980469, 1.241857812073484, 1.2690509571917332, 1.2968395546510096,
  1.3252366431597413, 1.3542555469368927, 1.383909881963832, 1.4142135623730951, 1.4451808069770467, 1.4768261459394993,
  1.5091644275934228, 1.5422108254079407, 1.5759808451078865, 1.6104903319492543, 1.645755478153965, 1.681792830507429,
  1.718619298122478, 1.7562521603732995, 1.7947090750031072, 1.8340080864093424, 1.8741676341103, 1.9152065613971474,
  1.9571441241754002,
];
const LOG_TABLE = [
  0.0, 0.030771658666753687, 0.06062462181643484, 0.08961215868968714, 0.11778303565638346, 0.1451820098444979,
  0.17185025692665923, 0.19782574332991987, 0.22314355131420976, 0.24783616390458127, 0.27193371548364176,
  0.2954642128938359, 0.3184537311185346, 0.3409265869705932, 0.3629054936893685, 0.38441169891033206, 0.4054651081081644,
  0.4260843953109001, 0.44628710262841953, 0.46608972992459924, 0.4855078157817008, 0.5045560107523953, 0.5232481437645479,
  0.5415972824327444, 0.5596157879354227, 0.5773153650348236, 0.5947071077466928, 0.6118015411059929, 0.6286086594223741,
  0.6451379613735847, 0.661398482245365, 0.6773988235918061, 0.6931471805599453,
];
/** 32 / ln 2, and ln 2 / 32 split as LN2_HI and LN2_LO are (k × head exact for |k| < 2^20). */
const THIRTY_TWO_OVER_LN2 = 46.16624130844683;
const STEP_HI = LN2_HI / 32;
const STEP_LO = LN2_LO / 32;

/**
 * e^x by table: x = (32m + j) ln2/32 + r with |r| <= ln2/64, e^x = 2^m · 2^(j/32) · e^r, e^r
 * from its Taylor polynomial of degree 6 (truncation below 4e-18). Same range rules as portableExp.
 * @example tableExp(1) // 2.718281828459045
 */
export function tableExp(x: number): number {
  if (x !== x) return NaN;
  if (x > 709.782712893384) return Infinity;
  if (x < -745.1332191019412) return 0;
  // k = round(x·32/ln2), halves up (Math.round's rule), from integer operations: |k| < 2^16 and
  // t = v + 0.5 is exact there. (Calls such as Math.round cost far more inside a test runner's
  // sandbox than in a browser; this loop runs once per row at every solver step.)
  const t = x * THIRTY_TWO_OVER_LN2 + 0.5;
  let k = t | 0;
  if (k > t) k -= 1;
  const r = x - k * STEP_HI - k * STEP_LO;
  const j = k & 31;
  const m = (k - j) / 32;
  const poly = 1 + r * (1 + r * (0.5 + r * (1 / 6 + r * (1 / 24 + r * (1 / 120 + r * (1 / 720))))));
  const half = (m / 2) | 0;
  return EXP_TABLE[j] * poly * POWERS[half + 1022] * POWERS[m - half + 1022];
}

/** log(1 + t) for 0 <= t < 1/32 by its series to t^11 (truncation below 3e-18 relative). */
function log1pSeries(t: number): number {
  return (
    t *
    (1 +
      t *
        (-1 / 2 +
          t * (1 / 3 + t * (-1 / 4 + t * (1 / 5 + t * (-1 / 6 + t * (1 / 7 + t * (-1 / 8 + t * (1 / 9 + t * (-1 / 10 + t / 11))))))))))
  );
}

/**
 * log(1 + x) for 0 <= x <= 1 by table: below 1/32 the series; else x = j/32 + d (exact, Sterbenz)
 * and log(1 + x) = log(1 + j/32) + log(1 + d/(1 + j/32)). Other x: portableLog(1 + x).
 * @example tableLog1p(1) // 0.6931471805599453
 */
export function tableLog1p(x: number): number {
  if (!(x >= 0 && x <= 1)) return portableLog(1 + x);
  if (x < 1 / 32) return log1pSeries(x);
  const j = (x * 32) | 0;
  return LOG_TABLE[j] + log1pSeries((x - j / 32) / (1 + j / 32));
}
