/**
 * Training problems: a set of rows turned into the standardized form the solvers work on.
 *
 * Conventions (the contract documented in the README's method section):
 * - Observation weights w_i >= 0 are normalised to ω_i = w_i / Σw.
 * - With an intercept, each predictor is centred at its weighted mean and divided by its
 *   weighted population standard deviation sqrt(Σ ω_i (x_ij − x̄_j)²) (divisor Σw, not Σw − 1);
 *   y is centred but not scaled, so the penalty strength λ is in y's units.
 * - Without an intercept nothing is centred; each predictor is divided by its weighted root
 *   mean square sqrt(Σ ω_i x_ij²), its spread about the model's origin.
 * - With standardization off the divisor is 1 (columns are only centred).
 * - A column whose spread on these rows is negligible (variance <= 1e-12 × its second moment)
 *   is "frozen": its coefficient is held at zero. On the full data it is reported as constant;
 *   inside a cross-validation fold it simply sits that fold out.
 *
 * Two storage forms, chosen by the caller:
 * - "gram" (covariance updates): G̃ = X̃ᵀΩX̃ (p × p) and c̃ = X̃ᵀΩỹ. Built from block sums, so
 *   every cross-validation fold's problem costs O(p²) once the one pass over the data is done.
 * - "naive" (residual updates): the standardized rows X̃ (column-major), ω and ỹ.
 */
import { ColumnMatrix, zeroMatrix } from "./matrix";

/** Relative spread below which a column counts as constant (see module comment). */
export const CONSTANT_COLUMN_RATIO = 1e-12;

export interface Standardization {
  /** Centre of each predictor, original units (0 without an intercept). */
  xCentre: Float64Array;
  /** Divisor of each predictor (1 when not standardizing, and for frozen columns). */
  xScale: Float64Array;
  /** Weighted population standard deviation of each predictor on these rows (0 if frozen). */
  xSpread: Float64Array;
  /** Centre of the target (0 without an intercept). */
  yCentre: number;
  /** 1 where the column is constant on these rows: coefficient held at 0. */
  frozen: Uint8Array;
  /** Σw over these rows. */
  totalWeight: number;
  /** Σ ω (y − ȳ)²: the weighted variance of the target about its centre. */
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
  /** c̃_j = Σ ω x̃_j ỹ. */
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
}

/**
 * Weighted sums of one block of rows, about fixed shifts (the full-data centres), which keeps
 * the cancellation in "centred = raw − mean²" small. Sums of blocks add up exactly in the
 * algebra, so a fold's training sums are total minus the fold's own.
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
  };
}

/** `into += sign × from`, elementwise. Cost O(p²). */
export function accumulateSums(into: BlockSums, from: BlockSums, sign: 1 | -1): void {
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
 * Sums of the listed rows about the shifts. One gather into a contiguous buffer (so the
 * p²/2 dot products are stride-1), then the products. Cost O(rows·p²/2).
 */
export function blockSums(
  x: ColumnMatrix,
  y: ArrayLike<number>,
  weights: ArrayLike<number> | null,
  rows: ArrayLike<number>,
  shiftX: Float64Array,
  shiftY: number,
): BlockSums {
  const p = x.columns;
  const n = x.rows;
  const m = rows.length;
  const out = emptySums(p);
  out.rows = m;
  const shifted = new Float64Array(m * p);
  const weighted = weights ? new Float64Array(m * p) : shifted;
  const ys = new Float64Array(m);
  const ws = new Float64Array(m);
  for (let t = 0; t < m; t++) {
    const i = rows[t];
    ws[t] = weights ? weights[i] : 1;
    ys[t] = y[i] - shiftY;
  }
  for (let j = 0; j < p; j++) {
    const src = j * n;
    const dst = j * m;
    for (let t = 0; t < m; t++) shifted[dst + t] = x.data[src + rows[t]] - shiftX[j];
    if (weights) for (let t = 0; t < m; t++) weighted[dst + t] = ws[t] * shifted[dst + t];
  }
  let weight = 0;
  let sumY = 0;
  let yy = 0;
  for (let t = 0; t < m; t++) {
    weight += ws[t];
    sumY += ws[t] * ys[t];
    yy += ws[t] * ys[t] * ys[t];
  }
  out.weight = weight;
  out.sumY = sumY;
  out.yy = yy;
  const wy = weights ? new Float64Array(m) : ys;
  if (weights) for (let t = 0; t < m; t++) wy[t] = ws[t] * ys[t];
  for (let j = 0; j < p; j++) {
    let sx = 0;
    const off = j * m;
    for (let t = 0; t < m; t++) sx += weighted[off + t];
    out.sumX[j] = sx;
    out.xy[j] = dotRange(shifted, off, wy, 0, m);
    for (let k = j; k < p; k++) {
      const v = dotRange(weighted, off, shifted, k * m, m);
      out.xx[j * p + k] = v;
      out.xx[k * p + j] = v;
    }
  }
  return out;
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
    const frozen = !(variance > CONSTANT_COLUMN_RATIO * second) || !(variance > 0);
    std.frozen[j] = frozen ? 1 : 0;
    std.xCentre[j] = options.intercept ? sums.sumX[j] / W + shiftX[j] : 0;
    std.xSpread[j] = frozen ? 0 : Math.sqrt(variance);
    scale[j] = frozen || !options.standardize ? 1 : Math.sqrt(variance);
  }
  std.yCentre = options.intercept ? sums.sumY / W + shiftY : 0;
  std.yVariance = Math.max(yv / W, 0);
  const gram = new Float64Array(p * p);
  const cross = new Float64Array(p);
  const curvature = new Float64Array(p);
  for (let j = 0; j < p; j++) {
    if (std.frozen[j]) continue;
    for (let k = 0; k < p; k++) {
      if (std.frozen[k]) continue;
      gram[j * p + k] = centred[j * p + k] / (W * scale[j] * scale[k]);
    }
    cross[j] = cy[j] / (W * scale[j]);
    curvature[j] = gram[j * p + j];
  }
  return { kind: "gram", p, n: 0, std, curvature, cross, gram, xs: null, omega: null, yc: null };
}

function newStandardization(p: number, totalWeight: number): Standardization {
  return {
    xCentre: new Float64Array(p),
    xScale: new Float64Array(p).fill(1),
    xSpread: new Float64Array(p),
    yCentre: 0,
    frozen: new Uint8Array(p),
    totalWeight,
    yVariance: 0,
  };
}

/**
 * Naive-form problem over the listed rows (all rows when `rows` is null): standardized copy
 * of those rows, column-major. Means and spreads by two passes (accurate). Cost O(rows·p).
 */
export function problemFromRows(
  x: ColumnMatrix,
  y: ArrayLike<number>,
  weights: ArrayLike<number> | null,
  rows: ArrayLike<number> | null,
  options: ProblemOptions,
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
  let yMean = 0;
  if (options.intercept) for (let t = 0; t < m; t++) yMean += omega[t] * y[index(t)];
  const yc = new Float64Array(m);
  let yVariance = 0;
  for (let t = 0; t < m; t++) {
    yc[t] = y[index(t)] - yMean;
    yVariance += omega[t] * yc[t] * yc[t];
  }
  std.yCentre = yMean;
  std.yVariance = yVariance;
  const xs = zeroMatrix(m, p);
  const cross = new Float64Array(p);
  const curvature = new Float64Array(p);
  for (let j = 0; j < p; j++) {
    const src = j * n;
    const col = xs.data.subarray(j * m, (j + 1) * m);
    for (let t = 0; t < m; t++) col[t] = x.data[src + index(t)];
    let mean = 0;
    if (options.intercept) for (let t = 0; t < m; t++) mean += omega[t] * col[t];
    let variance = 0;
    let second = 0;
    for (let t = 0; t < m; t++) {
      const v = col[t] - mean;
      variance += omega[t] * v * v;
      second += omega[t] * col[t] * col[t];
    }
    const frozen = !(variance > CONSTANT_COLUMN_RATIO * second) || !(variance > 0);
    std.frozen[j] = frozen ? 1 : 0;
    std.xCentre[j] = mean;
    std.xSpread[j] = frozen ? 0 : Math.sqrt(variance);
    const scale = frozen || !options.standardize ? 1 : Math.sqrt(variance);
    std.xScale[j] = scale;
    if (frozen) {
      col.fill(0);
      continue;
    }
    let c = 0;
    let d = 0;
    for (let t = 0; t < m; t++) {
      const v = (col[t] - mean) / scale;
      col[t] = v;
      c += omega[t] * v * yc[t];
      d += omega[t] * v * v;
    }
    cross[j] = c;
    curvature[j] = d;
  }
  return { kind: "naive", p, n: m, std, curvature, cross, gram: null, xs, omega, yc };
}
