/**
 * Training problems: a set of rows turned into the standardized form the solvers work on.
 *
 * Conventions (the contract documented in the README's method section):
 * - Observation weights w_i >= 0 are normalised to ω_i = w_i / Σw.
 * - With an intercept, each predictor is centred at its weighted mean and divided by its
 *   weighted population standard deviation sqrt(Σ ω_i (x_ij − x̄_j)²) (divisor Σw, not Σw − 1).
 * - The target is standardized too: ỹ = (y − ȳ) / s_y, s_y its weighted population standard
 *   deviation, so the penalty strength λ is unit-free: the same model whatever units the target
 *   is recorded in. Coefficients go back to the data's units as b_j = s_y · b̃_j / scale_j.
 * - Without an intercept nothing is centred; each predictor and the target are divided by their
 *   weighted root mean square sqrt(Σ ω_i v_i²), their spread about the model's origin.
 * - With standardization off the predictors' divisor is their unit (`columnUnits`, default 1:
 *   columns are only centred); the target is still divided by s_y, so λ stays unit-free.
 * - Centring is numerically stable: a centre is held in two parts, an anchor (one of the values,
 *   the one nearest the mean) and an offset (the weighted mean of the values less the anchor,
 *   corrected by one more pass), and values are centred as (x − anchor) − offset. The first
 *   difference is exact for values near the anchor, so a column of equal values centres to exact
 *   zeros and a large offset (dates as serial numbers, millisecond timestamps, 1e15 + z) costs no
 *   digits of the spread, though the centre itself, rounded to one double, would.
 * - A column is "frozen" (coefficient held at zero) when it is constant on these rows: its
 *   weighted SD about its centre is 0 or at most CONSTANT_SPREAD_RATIO (2^-52, one unit in the
 *   last place) times its largest |value| on rows with positive weight, i.e. its values differ
 *   by no more than rounding. In gram form, where spreads come from subtracting sums, a column
 *   whose variance is at most SUMS_CANCELLATION_RATIO times its mean square about the sums'
 *   shift is frozen too: that much is what the subtraction leaves from rounding (on the full data
 *   the shift is the column's own mean, so this only bites inside a fold). On the full data a
 *   frozen column is reported as constant; inside a cross-validation fold it sits that fold out.
 *   A target constant on a fold's training rows gives ỹ = 0 there (s_y taken as 1).
 * - Values are expected near 1 in magnitude: the caller (fit.ts) scales every column, the target
 *   and the weights by powers of two first (scale.ts), so no square overflows or underflows.
 *   Rows with weight 0 take no part; their standardized values are stored as 0.
 *
 * Two storage forms, chosen by the caller:
 * - "gram" (covariance updates): G̃ = X̃ᵀΩX̃ (p × p) and c̃ = X̃ᵀΩỹ. Built from block sums, so
 *   every cross-validation fold's problem costs O(p²) once the one pass over the data is done.
 * - "naive" (residual updates): the standardized rows X̃ (column-major), ω and ỹ.
 *
 * Long loops take an optional cancel signal and check it between columns (errors.ts).
 */
import { CancelSignal, throwIfCancelled } from "./errors";
import { ColumnMatrix, zeroMatrix } from "./matrix";

/**
 * A column (or target) is constant when its weighted SD about its centre is at most this times
 * its largest |value|: 2^-52, the spacing of doubles at 1, so its values differ by rounding only.
 */
export const CONSTANT_SPREAD_RATIO = 2 ** -52;

/**
 * Gram form: a variance from subtracted sums at most this times the mean square about the sums'
 * shift is rounding left by the subtraction, and the column (or target) counts as constant.
 */
export const SUMS_CANCELLATION_RATIO = 1e-12;

export interface Standardization {
  /** Centre of each predictor, in the units of the values given (0 without an intercept), rounded: xAnchor + xOffset. */
  xCentre: Float64Array;
  /** The centre in two parts (see the module comment): an anchor (one of the values, or the sums' shift) … */
  xAnchor: Float64Array;
  /** … and the weighted mean less the anchor, at full precision. Centred value: (x − xAnchor) − xOffset. */
  xOffset: Float64Array;
  /** Divisor of each predictor (its unit when not standardizing; 1 for frozen columns). */
  xScale: Float64Array;
  /** Weighted population standard deviation of each predictor on these rows (0 if frozen). */
  xSpread: Float64Array;
  /** Centre of the target (0 without an intercept), rounded: yAnchor + yOffset. */
  yCentre: number;
  /** The target's centre in two parts, as for the predictors. */
  yAnchor: number;
  yOffset: number;
  /** Divisor of the target, s_y: its weighted population SD (root mean square without an intercept); 1 when constant on these rows. */
  yScale: number;
  /** 1 where the column is constant on these rows: coefficient held at 0. */
  frozen: Uint8Array;
  /** Σw over these rows. */
  totalWeight: number;
  /** Σ ω ỹ²: the standardized target's mean square, 1 up to rounding (0 when the target is constant on these rows). */
  yVariance: number;
}

export interface TrainingProblem {
  kind: "gram" | "naive";
  /** Number of predictors. */
  p: number;
  /** Number of rows (naive form) or 0 (gram form). */
  n: number;
  std: Standardization;
  /** d_j = Σ ω x̃_j²: 1 for standardized columns, 0 for frozen ones. */
  curvature: Float64Array;
  /** c̃_j = Σ ω x̃_j ỹ (unit-free). */
  cross: Float64Array;
  /** G̃, p × p symmetric (gram form only). */
  gram: Float64Array | null;
  /** X̃, n × p column-major (naive form only). */
  xs: ColumnMatrix | null;
  /** ω (naive form only). */
  omega: Float64Array | null;
  /** ỹ (naive form only). */
  yc: Float64Array | null;
}

export interface ProblemOptions {
  intercept: boolean;
  standardize: boolean;
  /**
   * Each column's unit in the values given, the divisor used when `standardize` is off (default
   * 1). fit.ts passes the powers of two it scaled the columns by, so without standardization the
   * columns are penalized in the data's own units.
   */
  columnUnits?: Float64Array;
}

/**
 * Weighted sums of one block of rows, about fixed shifts (the full data's centre anchors: values
 * nearest the means), which keeps the cancellation in "centred = raw − mean²" small and makes
 * each shifted value exact. Sums of blocks add up exactly in the algebra, so a fold's training
 * sums are total minus the fold's own.
 */
export interface BlockSums {
  p: number;
  weight: number;
  rows: number;
  sumX: Float64Array;
  sumY: number;
  /** p × p, full symmetric. */
  xx: Float64Array;
  xy: Float64Array;
  yy: number;
  /** Largest |x_ij| of each column over the block's rows with positive weight (not shifted). */
  largest: Float64Array;
  /** Largest |y_i| over the block's rows with positive weight (not shifted). */
  largestY: number;
}

export function emptySums(p: number): BlockSums {
  return {
    p,
    weight: 0,
    rows: 0,
    sumX: new Float64Array(p),
    sumY: 0,
    xx: new Float64Array(p * p),
    xy: new Float64Array(p),
    yy: 0,
    largest: new Float64Array(p),
    largestY: 0,
  };
}

/**
 * `into += sign × from`, elementwise. Cost O(p²). The largest magnitudes combine only when
 * adding (a maximum can't be subtracted): after a subtraction set them with `takeLargest`.
 */
export function accumulateSums(into: BlockSums, from: BlockSums, sign: 1 | -1): void {
  if (sign === 1) takeLargest(into, from);
  into.weight += sign * from.weight;
  into.rows += sign * from.rows;
  into.sumY += sign * from.sumY;
  into.yy += sign * from.yy;
  for (let j = 0; j < into.p; j++) {
    into.sumX[j] += sign * from.sumX[j];
    into.xy[j] += sign * from.xy[j];
  }
  const xx = into.xx;
  const src = from.xx;
  for (let t = 0; t < xx.length; t++) xx[t] += sign * src[t];
}

/** `into`'s largest magnitudes become at least `from`'s. Cost O(p). */
export function takeLargest(into: BlockSums, from: BlockSums): void {
  for (let j = 0; j < into.p; j++) if (from.largest[j] > into.largest[j]) into.largest[j] = from.largest[j];
  if (from.largestY > into.largestY) into.largestY = from.largestY;
}

/**
 * Dot product of a[aStart..aStart+length) and b[bStart..): four accumulators break the
 * floating-point dependency chain so the loop pipelines (the order is fixed: results are
 * bit-identical from run to run).
 */
export function dotRange(
  a: Float64Array,
  aStart: number,
  b: Float64Array,
  bStart: number,
  length: number,
): number {
  let s0 = 0;
  let s1 = 0;
  let s2 = 0;
  let s3 = 0;
  let i = 0;
  const end4 = length - (length % 4);
  for (; i < end4; i += 4) {
    s0 += a[aStart + i] * b[bStart + i];
    s1 += a[aStart + i + 1] * b[bStart + i + 1];
    s2 += a[aStart + i + 2] * b[bStart + i + 2];
    s3 += a[aStart + i + 3] * b[bStart + i + 3];
  }
  for (; i < length; i++) s0 += a[aStart + i] * b[bStart + i];
  return s0 + s1 + (s2 + s3);
}

/**
 * Sums of the listed rows about the shifts (`blockSumsOf` with one block). Cost O(rows·p²/2).
 * Values must be finite; rows with weight 0 add nothing.
 */
export function blockSums(
  x: ColumnMatrix,
  y: ArrayLike<number>,
  weights: ArrayLike<number> | null,
  rows: ArrayLike<number>,
  shiftX: Float64Array,
  shiftY: number,
  signal?: CancelSignal,
  factors: Float64Array | null = null,
): BlockSums {
  return blockSumsOf(x, y, weights, [rows], shiftX, shiftY, signal, factors)[0];
}

/** Columns per panel of the cross-product kernel: tiles of 4 × 4 products, 16 accumulators. */
const PANEL = 4;

/**
 * Values (rows × padded columns) gathered per window of the data: 2^15 doubles, 256 KB, so a
 * window's panels (twice that with weights) stay in the core's cache while its tiles are formed.
 */
const WINDOW_VALUES = 2 ** 15;

/**
 * The sums of several blocks of rows (the folds' blocks) in one pass over the data.
 * Every sum is an entry of AᵀΩA, A = [x − shiftX, y − shiftY, 1] (p + 2 columns; the column of
 * ones gives Σw, Σwx' and Σwy'), so one kernel forms them all:
 *
 * - The data are read in windows of consecutive rows (WINDOW_VALUES / padded columns of them).
 *   Each window's rows are gathered block by block into panels of four columns, row-interleaved
 *   (panel g holds columns 4g … 4g+3, row t's four values side by side), with the weighted copy
 *   ΩA beside it. Reading the data in row order touches each cache line once, where gathering a
 *   block's rows straight from a long column touches most lines of it for every block.
 * - For each block, its rows of the window are one segment of the panels; every pair of panels
 *   g ≤ h gives a tile of products (panelProducts: 4 × 4 on the diagonal, 10 by symmetry; 2 × 4
 *   off it) summed over the segment in register accumulators, then added to the block's totals
 *   (Goto & van de Geijn, "Anatomy of high-performance matrix multiplication", ACM TOMS 34(3),
 *   2008: packed panels, register tiles).
 * - The order of reading (gatherOrder: each window's rows block by block) is worked out once,
 *   not per column, and four columns are gathered at a time (packPanel), one read of a row's
 *   index serving the four values.
 *
 * Summation order: each block's rows in increasing row order, summed within a window's segment
 * and the segments added in window order. It depends only on the shape of the data and the
 * blocks, never on timing, so results are bit-identical from run to run; the partial sums over
 * short segments keep the rounding of long blocks small. Cost O(rows·p²/2); a cancel checkpoint
 * per window.
 *
 * `factors` (optional): column j's values are read as x_j × factors[j], each product formed as
 * the value is gathered (fit.ts reads the caller's data in place with its powers of two this
 * way: the same products a scaled copy would hold, so the same sums). Null: as stored.
 */
export function blockSumsOf(
  x: ColumnMatrix,
  y: ArrayLike<number>,
  weights: ArrayLike<number> | null,
  blocks: readonly ArrayLike<number>[],
  shiftX: Float64Array,
  shiftY: number,
  signal?: CancelSignal,
  factors: Float64Array | null = null,
): BlockSums[] {
  const p = x.columns;
  const n = x.rows;
  const data = x.data;
  const K = blocks.length;
  const q = p + 2;
  const panels = Math.ceil(q / PANEL);
  const Q = panels * PANEL;
  const window = Math.max(PANEL, Math.floor(WINDOW_VALUES / Q));
  const stride = PANEL * window;
  const a = new Float64Array(panels * stride);
  const b = weights ? new Float64Array(panels * stride) : a;
  // The column of ones (j = p + 1) is the same in every window: written once.
  const ones = Math.floor((p + 1) / PANEL) * stride + ((p + 1) % PANEL);
  for (let t = 0; t < window; t++) a[ones + PANEL * t] = 1;
  const { order, segments, weightOf } = gatherOrder(blocks, n, window, weights);
  const totals = blocks.map(() => new Float64Array(Q * Q));
  const outs = blocks.map((rows) => {
    const out = emptySums(p);
    out.rows = rows.length;
    return out;
  });
  const largest = new Float64Array(K * PANEL);
  const windows = Math.ceil(n / window);
  for (let v = 0; v < windows; v++) {
    throwIfCancelled(signal);
    const seg = v * (K + 1);
    const first = segments[seg];
    const count = segments[seg + K] - first;
    if (count === 0) continue;
    for (let g = 0; g < panels; g++) {
      const j0 = PANEL * g;
      if (j0 + PANEL <= p) {
        // Four predictor columns: one read of each row's index serves all four.
        packPanel(data, n, j0, factors, shiftX, order, segments, seg, K, weightOf, a, g * stride, largest);
        for (let k = 0; k < K; k++) {
          const out = outs[k];
          for (let c = 0; c < PANEL; c++) if (largest[PANEL * k + c] > out.largest[j0 + c]) out.largest[j0 + c] = largest[PANEL * k + c];
        }
        continue;
      }
      for (let j = j0; j < j0 + PANEL && j <= p; j++) {
        const base = g * stride + (j % PANEL);
        const values = j < p ? data : y;
        const src = j < p ? j * n : 0;
        const shift = j < p ? shiftX[j] : shiftY;
        // × 1 leaves every value as it is (finite values, -0 included).
        const factor = j < p && factors ? factors[j] : 1;
        packColumn(values, src, factor, shift, order, segments, seg, K, weightOf, a, base, largest);
        for (let k = 0; k < K; k++) {
          const out = outs[k];
          if (j < p) {
            if (largest[k] > out.largest[j]) out.largest[j] = largest[k];
          } else if (largest[k] > out.largestY) out.largestY = largest[k];
        }
      }
    }
    if (weightOf) {
      for (let g = 0; g < panels; g++) {
        const off = g * stride;
        for (let t = 0; t < count; t++) {
          const wt = weightOf[first + t];
          const o = off + PANEL * t;
          b[o] = wt * a[o];
          b[o + 1] = wt * a[o + 1];
          b[o + 2] = wt * a[o + 2];
          b[o + 3] = wt * a[o + 3];
        }
      }
    }
    for (let k = 0; k < K; k++) {
      const t0 = segments[seg + k] - first;
      const t1 = segments[seg + k + 1] - first;
      if (t1 <= t0) continue;
      panelProducts(a, b, stride, panels, q - PANEL * (panels - 1), t0, t1, totals[k]);
    }
  }
  for (let k = 0; k < K; k++) {
    const out = outs[k];
    const total = totals[k];
    for (let j = 0; j < p; j++) {
      for (let c = j; c < p; c++) {
        const v = total[j * Q + c];
        out.xx[j * p + c] = v;
        out.xx[c * p + j] = v;
      }
      out.xy[j] = total[j * Q + p];
      out.sumX[j] = total[j * Q + p + 1];
    }
    out.yy = total[p * Q + p];
    out.sumY = total[p * Q + p + 1];
    out.weight = total[(p + 1) * Q + p + 1];
  }
  return outs;
}

/**
 * blockSumsOf's order of reading, worked out once for every column: window by window
 * (`window` consecutive rows), each block's rows of the window in increasing order, block after
 * block. `order` lists the rows so; window v's block k occupies order[segments[v(K+1) + k] …
 * segments[v(K+1) + k + 1]); `weightOf` holds each listed row's weight (null without weights:
 * every row counts).
 */
function gatherOrder(
  blocks: readonly ArrayLike<number>[],
  n: number,
  window: number,
  weights: ArrayLike<number> | null,
): { order: Int32Array; segments: Int32Array; weightOf: Float64Array | null } {
  const K = blocks.length;
  // The folds' blocks come in increasing row order (folds.ts groupRows): checked in one pass,
  // sorted only if not (a sort of sorted lists took ~0.6 ms for 100,000 rows).
  const sorted = blocks.map((rows) => ascending(Int32Array.from(rows)));
  let total = 0;
  for (const list of sorted) total += list.length;
  const order = new Int32Array(total);
  const weightOf = weights ? new Float64Array(total) : null;
  const windows = Math.ceil(n / window);
  const segments = new Int32Array(windows * (K + 1) + 1);
  const cursor = new Int32Array(K);
  let count = 0;
  for (let v = 0; v < windows; v++) {
    const i0 = v * window;
    const i1 = Math.min(n, i0 + window);
    for (let k = 0; k < K; k++) {
      segments[v * (K + 1) + k] = count;
      const list = sorted[k];
      const from = count;
      count = listRows(list, cursor[k], i0, i1, order, count);
      cursor[k] += count - from;
    }
    segments[v * (K + 1) + K] = count;
  }
  for (let k = 0; k < K; k++) {
    const list = sorted[k];
    if (cursor[k] !== list.length) throw new Error(`blockSumsOf: row ${list[cursor[k]]} is out of range`);
  }
  if (weights && weightOf) for (let t = 0; t < count; t++) weightOf[t] = weights[order[t]];
  return { order, segments, weightOf };
}

/** The list itself, sorted in increasing order unless it already is. */
function ascending(list: Int32Array): Int32Array {
  for (let t = 1; t < list.length; t++) if (list[t] < list[t - 1]) return list.sort();
  return list;
}

/** gatherOrder: a block's rows in [i0, i1) from list[r0] on, into order from `count`; returns the new count. */
function listRows(list: Int32Array, r0: number, i0: number, i1: number, order: Int32Array, count: number): number {
  for (let r = r0; r < list.length && list[r] < i1; r++) {
    const i = list[r];
    if (i < i0) throw new Error(`blockSumsOf: row ${i} is out of range`);
    order[count++] = i;
  }
  return count;
}

/**
 * blockSumsOf's gather of one column's rows of one window into its panel slot: for each block k,
 * the rows order[segments[seg + k]] … read as value × factor, stored less the shift;
 * largest[k] gets the largest magnitude among the block's rows of positive weight. A function of
 * its own, called per column and window, so it is optimized as a whole after its first calls
 * (inside blockSumsOf, which runs once per fit, this loop ran unoptimized, boxing each value,
 * during most of a process's first fit).
 */
function packColumn(
  values: ArrayLike<number>,
  src: number,
  factor: number,
  shift: number,
  order: Int32Array,
  segments: Int32Array,
  seg: number,
  K: number,
  weightOf: Float64Array | null,
  a: Float64Array,
  base: number,
  largest: Float64Array,
): void {
  const first = segments[seg];
  for (let k = 0; k < K; k++) {
    let top = 0;
    const end = segments[seg + k + 1];
    for (let s = segments[seg + k]; s < end; s++) {
      const v = values[src + order[s]] * factor;
      a[base + PANEL * (s - first)] = v - shift;
      if ((weightOf === null || weightOf[s] > 0) && Math.abs(v) > top) top = Math.abs(v);
    }
    largest[k] = top;
  }
}

/**
 * packColumn for four predictor columns j0 … j0 + 3 filling panel `base` whole: each row's
 * index read once for the four values. largest[4k + c]: block k's largest magnitude in column
 * j0 + c. The same value, product and difference per entry as packColumn.
 */
function packPanel(
  data: Float64Array,
  n: number,
  j0: number,
  factors: Float64Array | null,
  shiftX: Float64Array,
  order: Int32Array,
  segments: Int32Array,
  seg: number,
  K: number,
  weightOf: Float64Array | null,
  a: Float64Array,
  base: number,
  largest: Float64Array,
): void {
  const s0 = j0 * n;
  const s1 = s0 + n;
  const s2 = s1 + n;
  const s3 = s2 + n;
  const f0 = factors ? factors[j0] : 1;
  const f1 = factors ? factors[j0 + 1] : 1;
  const f2 = factors ? factors[j0 + 2] : 1;
  const f3 = factors ? factors[j0 + 3] : 1;
  const h0 = shiftX[j0];
  const h1 = shiftX[j0 + 1];
  const h2 = shiftX[j0 + 2];
  const h3 = shiftX[j0 + 3];
  const first = segments[seg];
  for (let k = 0; k < K; k++) {
    let m0 = 0;
    let m1 = 0;
    let m2 = 0;
    let m3 = 0;
    const end = segments[seg + k + 1];
    for (let s = segments[seg + k]; s < end; s++) {
      const i = order[s];
      const v0 = data[s0 + i] * f0;
      const v1 = data[s1 + i] * f1;
      const v2 = data[s2 + i] * f2;
      const v3 = data[s3 + i] * f3;
      const o = base + PANEL * (s - first);
      a[o] = v0 - h0;
      a[o + 1] = v1 - h1;
      a[o + 2] = v2 - h2;
      a[o + 3] = v3 - h3;
      if (weightOf === null || weightOf[s] > 0) {
        if (Math.abs(v0) > m0) m0 = Math.abs(v0);
        if (Math.abs(v1) > m1) m1 = Math.abs(v1);
        if (Math.abs(v2) > m2) m2 = Math.abs(v2);
        if (Math.abs(v3) > m3) m3 = Math.abs(v3);
      }
    }
    largest[PANEL * k] = m0;
    largest[PANEL * k + 1] = m1;
    largest[PANEL * k + 2] = m2;
    largest[PANEL * k + 3] = m3;
  }
}

/**
 * `total[r·Q + s] += Σ_t b_r(t) a_s(t)` over the segment t ∈ [t0, t1), for every r ≤ s
 * (Q = 4·panels): the upper triangle of BᵀA (see blockSumsOf). Panels are row-interleaved:
 * column 4g + c at row t is at g·stride + 4t + c. Each entry is summed in one accumulator over t
 * in increasing order, then added to its total, whatever the tile, so the tiling changes no bit.
 * Tiles: 4 × 4 on the diagonal (10 products by symmetry); 2 × 4 off it, eight accumulators
 * (measured on V8, x64: a 4 × 4 tile's sixteen accumulators and its loaded values overflow the
 * sixteen double registers and were spilled to the stack every step, and each load carries an
 * array check, so fewer live values ran faster although they load more per product); a last
 * panel of one or two columns (the rest padding) takes 4 × 2 tiles (edgeProducts) instead of
 * multiplying the padding. Indices as `| 0` sums: no overflow check per load.
 */
function panelProducts(a: Float64Array, b: Float64Array, stride: number, panels: number, width: number, t0: number, t1: number, total: Float64Array): void {
  if (a === b) {
    panelSquares(a, stride, panels, width, t0, t1, total);
    return;
  }
  const Q = panels * 4;
  // A last panel of at most two columns (the rest padding) takes narrower tiles: edgeProducts.
  const full = width <= 2 ? panels - 1 : panels;
  for (let g = 0; g < panels; g++) {
    const bg = g * stride;
    let s00 = 0;
    let s01 = 0;
    let s02 = 0;
    let s03 = 0;
    let s11 = 0;
    let s12 = 0;
    let s13 = 0;
    let s22 = 0;
    let s23 = 0;
    let s33 = 0;
    for (let t = t0; t < t1; t++) {
      const o = bg + 4 * t;
      const a0 = a[o];
      const a1 = a[o + 1];
      const a2 = a[o + 2];
      const a3 = a[o + 3];
      const b0 = b[o];
      const b1 = b[o + 1];
      const b2 = b[o + 2];
      const b3 = b[o + 3];
      s00 += b0 * a0;
      s01 += b0 * a1;
      s02 += b0 * a2;
      s03 += b0 * a3;
      s11 += b1 * a1;
      s12 += b1 * a2;
      s13 += b1 * a3;
      s22 += b2 * a2;
      s23 += b2 * a3;
      s33 += b3 * a3;
    }
    const d = 4 * g * (Q + 1);
    total[d] += s00;
    total[d + 1] += s01;
    total[d + 2] += s02;
    total[d + 3] += s03;
    total[d + Q + 1] += s11;
    total[d + Q + 2] += s12;
    total[d + Q + 3] += s13;
    total[d + 2 * Q + 2] += s22;
    total[d + 2 * Q + 3] += s23;
    total[d + 3 * Q + 3] += s33;
    for (let h = g + 1; h < full; h++) {
      const ah = h * stride;
      const e = 4 * (g * Q + h);
      for (let r = 0; r < 4; r += 2) {
        let t00 = 0;
        let t01 = 0;
        let t02 = 0;
        let t03 = 0;
        let t10 = 0;
        let t11 = 0;
        let t12 = 0;
        let t13 = 0;
        const u1 = (ah + 4 * t1) | 0;
        for (let u = (ah + 4 * t0) | 0, o = (bg + 4 * t0 + r) | 0; u < u1; u = (u + 4) | 0, o = (o + 4) | 0) {
          const a0 = a[u];
          const a1 = a[(u + 1) | 0];
          const a2 = a[(u + 2) | 0];
          const a3 = a[(u + 3) | 0];
          const b0 = b[o];
          const b1 = b[(o + 1) | 0];
          t00 += b0 * a0;
          t01 += b0 * a1;
          t02 += b0 * a2;
          t03 += b0 * a3;
          t10 += b1 * a0;
          t11 += b1 * a1;
          t12 += b1 * a2;
          t13 += b1 * a3;
        }
        const f = e + r * Q;
        total[f] += t00;
        total[f + 1] += t01;
        total[f + 2] += t02;
        total[f + 3] += t03;
        total[f + Q] += t10;
        total[f + Q + 1] += t11;
        total[f + Q + 2] += t12;
        total[f + Q + 3] += t13;
      }
    }
    if (full < panels && g < full) edgeProducts(a, b, bg, full * stride, t0, t1, total, 4 * (g * Q + full), Q);
  }
}

/**
 * panelProducts when b is a (no weights): one array to check and address per load, and the
 * off-diagonal tiles take two rows a step (each product still added in row order), which halves
 * the loop's per-step checks (measured: about 5% of the whole pass at p = 20 and 100).
 */
function panelSquares(a: Float64Array, stride: number, panels: number, width: number, t0: number, t1: number, total: Float64Array): void {
  const Q = panels * 4;
  // A last panel of at most two columns (the rest padding) takes narrower tiles: edgeProducts.
  const full = width <= 2 ? panels - 1 : panels;
  for (let g = 0; g < panels; g++) {
    const bg = g * stride;
    let s00 = 0;
    let s01 = 0;
    let s02 = 0;
    let s03 = 0;
    let s11 = 0;
    let s12 = 0;
    let s13 = 0;
    let s22 = 0;
    let s23 = 0;
    let s33 = 0;
    const end = (bg + 4 * t1) | 0;
    for (let o = (bg + 4 * t0) | 0; o < end; o = (o + 4) | 0) {
      const a0 = a[o];
      const a1 = a[(o + 1) | 0];
      const a2 = a[(o + 2) | 0];
      const a3 = a[(o + 3) | 0];
      s00 += a0 * a0;
      s01 += a0 * a1;
      s02 += a0 * a2;
      s03 += a0 * a3;
      s11 += a1 * a1;
      s12 += a1 * a2;
      s13 += a1 * a3;
      s22 += a2 * a2;
      s23 += a2 * a3;
      s33 += a3 * a3;
    }
    const d = 4 * g * (Q + 1);
    total[d] += s00;
    total[d + 1] += s01;
    total[d + 2] += s02;
    total[d + 3] += s03;
    total[d + Q + 1] += s11;
    total[d + Q + 2] += s12;
    total[d + Q + 3] += s13;
    total[d + 2 * Q + 2] += s22;
    total[d + 2 * Q + 3] += s23;
    total[d + 3 * Q + 3] += s33;
    for (let h = g + 1; h < full; h++) {
      const ah = h * stride;
      const e = 4 * (g * Q + h);
      for (let r = 0; r < 4; r += 2) {
        let t00 = 0;
        let t01 = 0;
        let t02 = 0;
        let t03 = 0;
        let t10 = 0;
        let t11 = 0;
        let t12 = 0;
        let t13 = 0;
        const u1 = (ah + 4 * t1) | 0;
        const u2 = (u1 - 4) | 0;
        let u = (ah + 4 * t0) | 0;
        let o = (bg + 4 * t0 + r) | 0;
        // Two rows a step, each product added in row order (the same sums as one row a step).
        for (; u < u2; u = (u + 8) | 0, o = (o + 8) | 0) {
          let a0 = a[u];
          let a1 = a[(u + 1) | 0];
          let a2 = a[(u + 2) | 0];
          let a3 = a[(u + 3) | 0];
          let b0 = a[o];
          let b1 = a[(o + 1) | 0];
          t00 += b0 * a0;
          t01 += b0 * a1;
          t02 += b0 * a2;
          t03 += b0 * a3;
          t10 += b1 * a0;
          t11 += b1 * a1;
          t12 += b1 * a2;
          t13 += b1 * a3;
          a0 = a[(u + 4) | 0];
          a1 = a[(u + 5) | 0];
          a2 = a[(u + 6) | 0];
          a3 = a[(u + 7) | 0];
          b0 = a[(o + 4) | 0];
          b1 = a[(o + 5) | 0];
          t00 += b0 * a0;
          t01 += b0 * a1;
          t02 += b0 * a2;
          t03 += b0 * a3;
          t10 += b1 * a0;
          t11 += b1 * a1;
          t12 += b1 * a2;
          t13 += b1 * a3;
        }
        if (u < u1) {
          const a0 = a[u];
          const a1 = a[(u + 1) | 0];
          const a2 = a[(u + 2) | 0];
          const a3 = a[(u + 3) | 0];
          const b0 = a[o];
          const b1 = a[(o + 1) | 0];
          t00 += b0 * a0;
          t01 += b0 * a1;
          t02 += b0 * a2;
          t03 += b0 * a3;
          t10 += b1 * a0;
          t11 += b1 * a1;
          t12 += b1 * a2;
          t13 += b1 * a3;
        }
        const f = e + r * Q;
        total[f] += t00;
        total[f + 1] += t01;
        total[f + 2] += t02;
        total[f + 3] += t03;
        total[f + Q] += t10;
        total[f + Q + 1] += t11;
        total[f + Q + 2] += t12;
        total[f + Q + 3] += t13;
      }
    }
    if (full < panels && g < full) edgeProducts(a, a, bg, full * stride, t0, t1, total, 4 * (g * Q + full), Q);
  }
}

/**
 * The tile of panel g (rows of b at bg) against a last panel of two columns (at ah; its other two
 * columns padding): `total[e + r·Q + c] += Σ_t b_r(t) a_c(t)` for r < 4, c < 2, each summed in
 * one accumulator in increasing t as in the full tiles.
 */
function edgeProducts(a: Float64Array, b: Float64Array, bg: number, ah: number, t0: number, t1: number, total: Float64Array, e: number, Q: number): void {
  let t00 = 0;
  let t01 = 0;
  let t10 = 0;
  let t11 = 0;
  let t20 = 0;
  let t21 = 0;
  let t30 = 0;
  let t31 = 0;
  const u1 = (ah + 4 * t1) | 0;
  for (let u = (ah + 4 * t0) | 0, o = (bg + 4 * t0) | 0; u < u1; u = (u + 4) | 0, o = (o + 4) | 0) {
    const a0 = a[u];
    const a1 = a[(u + 1) | 0];
    const b0 = b[o];
    const b1 = b[(o + 1) | 0];
    const b2 = b[(o + 2) | 0];
    const b3 = b[(o + 3) | 0];
    t00 += b0 * a0;
    t01 += b0 * a1;
    t10 += b1 * a0;
    t11 += b1 * a1;
    t20 += b2 * a0;
    t21 += b2 * a1;
    t30 += b3 * a0;
    t31 += b3 * a1;
  }
  total[e] += t00;
  total[e + 1] += t01;
  total[e + Q] += t10;
  total[e + Q + 1] += t11;
  total[e + 2 * Q] += t20;
  total[e + 2 * Q + 1] += t21;
  total[e + 3 * Q] += t30;
  total[e + 3 * Q + 1] += t31;
}

/**
 * Gram-form problem from the sums of its rows. Cost O(p²).
 * `shiftX`/`shiftY` are the shifts the sums were taken about (must be 0 without an intercept).
 */
export function problemFromSums(
  sums: BlockSums,
  shiftX: Float64Array,
  shiftY: number,
  options: ProblemOptions,
): TrainingProblem {
  const p = sums.p;
  const W = sums.weight;
  const centred = new Float64Array(p * p);
  const cy = new Float64Array(p);
  let yv: number;
  if (options.intercept) {
    for (let j = 0; j < p; j++) {
      for (let k = 0; k < p; k++) {
        centred[j * p + k] = sums.xx[j * p + k] - (sums.sumX[j] * sums.sumX[k]) / W;
      }
      cy[j] = sums.xy[j] - (sums.sumX[j] * sums.sumY) / W;
    }
    yv = sums.yy - (sums.sumY * sums.sumY) / W;
  } else {
    centred.set(sums.xx);
    cy.set(sums.xy);
    yv = sums.yy;
  }
  const std = newStandardization(p, W);
  const scale = std.xScale;
  for (let j = 0; j < p; j++) {
    const variance = centred[j * p + j] / W;
    const second = sums.xx[j * p + j] / W;
    const frozen = !(variance > SUMS_CANCELLATION_RATIO * second) || !(Math.sqrt(variance) > CONSTANT_SPREAD_RATIO * sums.largest[j]);
    std.frozen[j] = frozen ? 1 : 0;
    std.xAnchor[j] = options.intercept ? shiftX[j] : 0;
    std.xOffset[j] = options.intercept ? sums.sumX[j] / W : 0;
    std.xCentre[j] = std.xOffset[j] + std.xAnchor[j];
    std.xSpread[j] = frozen ? 0 : Math.sqrt(variance);
    scale[j] = frozen ? 1 : options.standardize ? Math.sqrt(variance) : (options.columnUnits?.[j] ?? 1);
  }
  std.yAnchor = options.intercept ? shiftY : 0;
  std.yOffset = options.intercept ? sums.sumY / W : 0;
  std.yCentre = std.yOffset + std.yAnchor;
  const yMeanSquare = yv / W;
  const yConstant = !(yMeanSquare > SUMS_CANCELLATION_RATIO * (sums.yy / W)) || !(Math.sqrt(yMeanSquare) > CONSTANT_SPREAD_RATIO * sums.largestY);
  std.yScale = yConstant ? 1 : Math.sqrt(yMeanSquare);
  std.yVariance = yConstant ? 0 : yMeanSquare / (std.yScale * std.yScale);
  const gram = new Float64Array(p * p);
  const cross = new Float64Array(p);
  const curvature = new Float64Array(p);
  for (let j = 0; j < p; j++) {
    if (std.frozen[j]) continue;
    for (let k = 0; k < p; k++) {
      if (std.frozen[k]) continue;
      gram[j * p + k] = centred[j * p + k] / (W * scale[j] * scale[k]);
    }
    cross[j] = yConstant ? 0 : cy[j] / (W * scale[j] * std.yScale);
    curvature[j] = gram[j * p + j];
  }
  return { kind: "gram", p, n: 0, std, curvature, cross, gram, xs: null, omega: null, yc: null };
}

function newStandardization(p: number, totalWeight: number): Standardization {
  return {
    xCentre: new Float64Array(p),
    xAnchor: new Float64Array(p),
    xOffset: new Float64Array(p),
    xScale: new Float64Array(p).fill(1),
    xSpread: new Float64Array(p),
    yCentre: 0,
    yAnchor: 0,
    yOffset: 0,
    yScale: 1,
    frozen: new Uint8Array(p),
    totalWeight,
    yVariance: 0,
  };
}

/** A centre in two parts: `anchor` (one of the values) + `offset` (small, at full precision). */
export interface Centre {
  anchor: number;
  offset: number;
}

/**
 * Weighted mean Σ ω v of `values[0..m)` (ω summing to 1), computed stably and kept in two parts:
 * the anchor is the positively weighted value nearest a first rough mean, the offset the
 * weighted mean of (v − anchor), corrected by the weighted mean of what is left. Equal values
 * give that value and offset 0 exactly; differences v − anchor are exact for values near the
 * anchor, so an offset far larger than the spread costs no digits. Values must be finite and of
 * moderate size (fit.ts scales them near 1). Cost O(m).
 * @example stableCentre(Float64Array.of(1e15 + 1, 1e15 + 3), Float64Array.of(0.5, 0.5), 2) // { anchor: 1e15 + 1, offset: 1 }
 */
export function stableCentre(values: ArrayLike<number>, omega: ArrayLike<number>, m: number): Centre {
  const anchor = stableAnchor(values, omega, m);
  if (Number.isNaN(anchor)) return { anchor: 0, offset: 0 };
  let sum = 0;
  for (let t = 0; t < m; t++) sum += omega[t] * (values[t] - anchor);
  let correction = 0;
  for (let t = 0; t < m; t++) correction += omega[t] * (values[t] - anchor - sum);
  return { anchor, offset: sum + correction };
}

/**
 * The anchor of `stableCentre` alone (its first two passes; NaN when no weight is positive):
 * the positively weighted value nearest the rough mean Σ ω v. For callers that need only a
 * value near the centre, such as the shifts of the Gram pass (fit.ts fullShift), at half the
 * passes of the full centre.
 */
export function stableAnchor(values: ArrayLike<number>, omega: ArrayLike<number>, m: number, factor = 1): number {
  // Each value read as values[t] × factor (1: as stored, exactly), so a caller holding data and
  // a power of two gets the anchor of the scaled values without a scaled copy (fit.ts fullShift).
  let rough = 0;
  for (let t = 0; t < m; t++) rough += omega[t] * (values[t] * factor);
  let anchor = NaN;
  let nearest = Infinity;
  for (let t = 0; t < m; t++) {
    if (!(omega[t] > 0)) continue;
    const v = values[t] * factor;
    const distance = Math.abs(v - rough);
    if (distance < nearest) {
      nearest = distance;
      anchor = v;
    }
  }
  return anchor;
}

/**
 * stableAnchor of every column of x (column j read as x_j × factors[j]; factors null: as
 * stored) into `out` (NaN for a column when no weight is positive): the same two passes per
 * column, the same operations in the same order per column, so the same anchors bit for bit,
 * but four columns a pass. The rough mean's sum is a chain of dependent additions (each waits
 * for the last); four columns' chains side by side keep the core busy instead of waiting.
 * `everyPositive`: the caller knows every ω is positive (no weights), and the test is skipped.
 * Cost O(n·p).
 */
export function stableAnchors(x: ColumnMatrix, omega: ArrayLike<number>, factors: Float64Array | null, out: Float64Array, everyPositive = false): void {
  const n = x.rows;
  const p = x.columns;
  const data = x.data;
  // state: the four running sums, then the four nearest distances and values (a double stored in
  // a Float64Array and read back is the same double, so chunking changes no result).
  const state = new Float64Array(12);
  const f = new Float64Array(4);
  let j = 0;
  for (; j + 4 <= p; j += 4) {
    const s = j * n;
    for (let c = 0; c < 4; c++) f[c] = factors ? factors[j + c] : 1;
    state.fill(0);
    for (let t = 0; t < n; t += ANCHOR_CHUNK) roughOfFour(data, s, n, f, omega, state, t, Math.min(n, t + ANCHOR_CHUNK));
    state.fill(Infinity, 4, 8);
    state.fill(NaN, 8, 12);
    const positive = everyPositive ? null : omega;
    for (let t = 0; t < n; t += ANCHOR_CHUNK) nearestOfFour(data, s, n, f, positive, state, t, Math.min(n, t + ANCHOR_CHUNK));
    for (let c = 0; c < 4; c++) out[j + c] = state[8 + c];
  }
  for (; j < p; j++) out[j] = stableAnchor(data.subarray(j * n, (j + 1) * n), omega, n, factors ? factors[j] : 1);
}

/**
 * Rows per call of stableAnchors' passes. A function called a handful of times per fit, each call
 * one long loop, was compiled by V8 before it had type feedback for its entry and exit (its
 * feedback is allocated only after several calls) and then ran deoptimized: in about half of the
 * processes the four-column passes took twice the time of the column-by-column ones. Called per
 * chunk of rows, they are called often enough to be optimized with full feedback.
 */
const ANCHOR_CHUNK = 1024;

/**
 * stableAnchors' first pass over rows [t0, t1) for the four columns at data[s], data[s + n], …
 * (scaled by f[c]): the running sums Σ ω v in state[0 … 3], carried from chunk to chunk.
 */
function roughOfFour(data: Float64Array, s: number, n: number, f: Float64Array, omega: ArrayLike<number>, state: Float64Array, t0: number, t1: number): void {
  const s0 = s;
  const s1 = s0 + n;
  const s2 = s1 + n;
  const s3 = s2 + n;
  const f0 = f[0];
  const f1 = f[1];
  const f2 = f[2];
  const f3 = f[3];
  let r0 = state[0];
  let r1 = state[1];
  let r2 = state[2];
  let r3 = state[3];
  for (let t = t0; t < t1; t++) {
    const w = omega[t];
    r0 += w * (data[s0 + t] * f0);
    r1 += w * (data[s1 + t] * f1);
    r2 += w * (data[s2 + t] * f2);
    r3 += w * (data[s3 + t] * f3);
  }
  state[0] = r0;
  state[1] = r1;
  state[2] = r2;
  state[3] = r3;
}

/**
 * stableAnchors' second pass over rows [t0, t1): for each of the four columns, the positively
 * weighted value nearest its rough mean (state[c]), the distance so far in state[4 + c] and the
 * value in state[8 + c] (NaN while none); a later value replaces it only when strictly nearer,
 * as in stableAnchor. omega null: every weight is positive.
 */
function nearestOfFour(data: Float64Array, s: number, n: number, f: Float64Array, omega: ArrayLike<number> | null, state: Float64Array, t0: number, t1: number): void {
  const s0 = s;
  const s1 = s0 + n;
  const s2 = s1 + n;
  const s3 = s2 + n;
  const f0 = f[0];
  const f1 = f[1];
  const f2 = f[2];
  const f3 = f[3];
  const r0 = state[0];
  const r1 = state[1];
  const r2 = state[2];
  const r3 = state[3];
  let d0 = state[4];
  let d1 = state[5];
  let d2 = state[6];
  let d3 = state[7];
  let c0 = state[8];
  let c1 = state[9];
  let c2 = state[10];
  let c3 = state[11];
  for (let t = t0; t < t1; t++) {
    if (omega !== null && !(omega[t] > 0)) continue;
    const v0 = data[s0 + t] * f0;
    const v1 = data[s1 + t] * f1;
    const v2 = data[s2 + t] * f2;
    const v3 = data[s3 + t] * f3;
    const e0 = Math.abs(v0 - r0);
    const e1 = Math.abs(v1 - r1);
    const e2 = Math.abs(v2 - r2);
    const e3 = Math.abs(v3 - r3);
    if (e0 < d0) {
      d0 = e0;
      c0 = v0;
    }
    if (e1 < d1) {
      d1 = e1;
      c1 = v1;
    }
    if (e2 < d2) {
      d2 = e2;
      c2 = v2;
    }
    if (e3 < d3) {
      d3 = e3;
      c3 = v3;
    }
  }
  state[4] = d0;
  state[5] = d1;
  state[6] = d2;
  state[7] = d3;
  state[8] = c0;
  state[9] = c1;
  state[10] = c2;
  state[11] = c3;
}

/** The centre of `stableCentre` rounded to one double. */
export function stableMean(values: ArrayLike<number>, omega: ArrayLike<number>, m: number): number {
  const { anchor, offset } = stableCentre(values, omega, m);
  return anchor + offset;
}

/**
 * Naive-form problem over the listed rows (all rows when `rows` is null): standardized copy
 * of those rows, column-major. Centres by `stableCentre`, spreads by a second pass about them.
 * Cost O(rows·p). `factors` (optional): column j read as x_j × factors[j], as blockSumsOf reads it.
 */
export function problemFromRows(
  x: ColumnMatrix,
  y: ArrayLike<number>,
  weights: ArrayLike<number> | null,
  rows: ArrayLike<number> | null,
  options: ProblemOptions,
  signal?: CancelSignal,
  factors: Float64Array | null = null,
): TrainingProblem {
  const n = x.rows;
  const p = x.columns;
  const m = rows ? rows.length : n;
  const index = (t: number): number => (rows ? rows[t] : t);
  let W = 0;
  const omega = new Float64Array(m);
  for (let t = 0; t < m; t++) {
    omega[t] = weights ? weights[index(t)] : 1;
    W += omega[t];
  }
  for (let t = 0; t < m; t++) omega[t] /= W;
  const std = newStandardization(p, W);
  const yc = new Float64Array(m);
  let largestY = 0;
  for (let t = 0; t < m; t++) {
    yc[t] = y[index(t)];
    if (omega[t] > 0 && Math.abs(yc[t]) > largestY) largestY = Math.abs(yc[t]);
  }
  const yCentre = options.intercept ? stableCentre(yc, omega, m) : { anchor: 0, offset: 0 };
  let yMeanSquare = 0;
  for (let t = 0; t < m; t++) {
    yc[t] = omega[t] > 0 ? yc[t] - yCentre.anchor - yCentre.offset : 0;
    yMeanSquare += omega[t] * yc[t] * yc[t];
  }
  const yConstant = !(yMeanSquare > 0) || !(Math.sqrt(yMeanSquare) > CONSTANT_SPREAD_RATIO * largestY);
  const yScale = yConstant ? 1 : Math.sqrt(yMeanSquare);
  let yVariance = 0;
  for (let t = 0; t < m; t++) {
    yc[t] = yConstant ? 0 : yc[t] / yScale;
    yVariance += omega[t] * yc[t] * yc[t];
  }
  std.yAnchor = yCentre.anchor;
  std.yOffset = yCentre.offset;
  std.yCentre = yCentre.anchor + yCentre.offset;
  std.yScale = yScale;
  std.yVariance = yVariance;
  const xs = zeroMatrix(m, p);
  const cross = new Float64Array(p);
  const curvature = new Float64Array(p);
  for (let j = 0; j < p; j++) {
    throwIfCancelled(signal);
    const src = j * n;
    const col = xs.data.subarray(j * m, (j + 1) * m);
    const factor = factors ? factors[j] : 1;
    let largest = 0;
    for (let t = 0; t < m; t++) {
      col[t] = x.data[src + index(t)] * factor;
      if (omega[t] > 0 && Math.abs(col[t]) > largest) largest = Math.abs(col[t]);
    }
    const { anchor, offset } = options.intercept ? stableCentre(col, omega, m) : { anchor: 0, offset: 0 };
    let variance = 0;
    for (let t = 0; t < m; t++) {
      col[t] = col[t] - anchor - offset;
      variance += omega[t] * col[t] * col[t];
    }
    const frozen = !(variance > 0) || !(Math.sqrt(variance) > CONSTANT_SPREAD_RATIO * largest);
    std.frozen[j] = frozen ? 1 : 0;
    std.xAnchor[j] = anchor;
    std.xOffset[j] = offset;
    std.xCentre[j] = anchor + offset;
    std.xSpread[j] = frozen ? 0 : Math.sqrt(variance);
    const scale = frozen ? 1 : options.standardize ? Math.sqrt(variance) : (options.columnUnits?.[j] ?? 1);
    std.xScale[j] = scale;
    if (frozen) {
      col.fill(0);
      continue;
    }
    let c = 0;
    let d = 0;
    for (let t = 0; t < m; t++) {
      const v = omega[t] > 0 ? col[t] / scale : 0;
      col[t] = v;
      c += omega[t] * v * yc[t];
      d += omega[t] * v * v;
    }
    cross[j] = c;
    curvature[j] = d;
  }
  return { kind: "naive", p, n: m, std, curvature, cross, gram: null, xs, omega, yc };
}
