/**
 * Exact unpenalized least squares (the λ = 0 baseline of the engine).
 *
 * Every penalized fit is compared against this one, so it is written for accuracy first.
 *
 * Method (Householder QR; Golub & Van Loan, Matrix Computations, §5.2 for Householder QR and
 * the least-squares solve, §5.4.1 for QR with column pivoting and rank detection):
 * 1. Rows with weight 0 are set aside; the others are multiplied by √wᵢ, so minimising
 *    Σ wᵢ rᵢ² becomes an ordinary least-squares problem.
 * 2. With an intercept, y and every column are centred about their weighted means, taken
 *    stably (about one of the values first, then corrected once: a large offset such as a date
 *    serial number or a timestamp costs no digits). Centred columns are orthogonal to √w, so the
 *    intercept separates from the slopes exactly and never needs a column of ones (the
 *    ill-conditioning that a far-from-zero mean would add is gone).
 * 3. Each centred column is scaled to unit Euclidean length (undone at the end), so the rank
 *    test and the conditioning do not depend on the units a user typed.
 * 4. Householder QR, A = Q R, with column pivoting restricted to deficient columns: columns are
 *    taken in the user's order, and a column whose length left after the reflections so far is
 *    at most `rankTolerance` times its own length is moved to the end (aliased). Because all
 *    columns have unit length this is the test |R_kk| ≤ rankTolerance·|R_11|; because it keeps
 *    the user's order, the column reported as aliased is always a combination of columns to
 *    its left (a duplicated column: the second copy), which is what a spreadsheet user expects.
 *    A column that is constant on the rows used (with an intercept: its weighted SD about its
 *    mean is 0 or at most 2^-52 of its largest |value|, so its values differ by rounding only;
 *    the rule of problem.ts) is aliased with the intercept. A large offset is not a constant:
 *    1e15 + z keeps its slope. At most (rows with weight > 0) − (intercept ? 1 : 0) columns can
 *    be kept; any later ones are aliased.
 * 5. Solve R c = Qᵀ z by back substitution, then one step of iterative refinement: the residual
 *    is recomputed from the original, uncentred data in double-double arithmetic, and the
 *    correction is solved with the same factorisation (this also removes the small error that
 *    rounding in the means leaves). On NIST's Longley data the refinement lifts the worst
 *    coefficient from about 13.8 to about 14.7 correct digits.
 * 6. Standard errors: Cov(b) = σ² (RᵀR)⁻¹ = σ² R⁻¹R⁻ᵀ (unscaled), through the triangular R⁻¹;
 *    σ² = RSS / df. Var(b0) = σ²/Σw + x̄ᵀ Cov(b) x̄, exact because the weighted-centred columns
 *    are orthogonal to the constant in the W inner product.
 * No normal equations are formed and XᵀX is never inverted.
 *
 * Cost: O(n·p²) for the factorisation (n rows with positive weight, p columns), O(n·p) for the
 * solve and refinement, O(p³) for the standard errors. Memory: one n×p working copy.
 *
 * Throws a plain `Error` only on internal misuse (mismatched lengths); the caller validates user
 * input (finite values, weights ≥ 0 and not all 0) and keeps magnitudes where products can't
 * overflow (fit.ts passes a copy scaled by powers of two). An optional cancel signal is read
 * before each column's reflection (errors.ts).
 *
 * Example: x = [[1], [2], [3]], y = [1, 3, 5] gives intercept −1, coefficients [2], residual
 * standard deviation 0 and r2 = 1.
 */
import { hypotenuse } from "./portableMath";
import { CancelSignal, throwIfCancelled } from "./errors";
import { ColumnMatrix } from "./matrix";
import { BlockSums, CONSTANT_SPREAD_RATIO, SUMS_CANCELLATION_RATIO } from "./problem";

export interface LeastSquaresOptions {
  /** Fit an intercept (default true). The intercept is never aliased. */
  intercept?: boolean;
  /** Observation weights ≥ 0 (default all 1): minimise Σ wᵢ rᵢ². Rows with weight 0 are ignored by the fit. */
  weights?: ArrayLike<number>;
  /** Relative tolerance on |R_kk| for rank detection, after column scaling (default 1e-10). */
  rankTolerance?: number;
  /** Read before each column's reflection; when `aborted`, CancelledError. */
  signal?: CancelSignal;
}

export interface LeastSquaresResult {
  /** 0 when the intercept is off. */
  intercept: number;
  /** null when the intercept is off, or when there are no residual degrees of freedom. */
  interceptStandardError: number | null;
  /** Length p, original units; aliased columns get exactly 0. */
  coefficients: number[];
  /** null for aliased columns, and for every column when there are no residual degrees of freedom. */
  standardErrors: (number | null)[];
  /** Original indices, sorted, of columns that are (numerically) combinations of the columns to their left (and the intercept). */
  aliased: number[];
  /** Rank of the predictor block (excluding the intercept). */
  rank: number;
  /** (rows with weight > 0) − rank − (intercept ? 1 : 0). */
  degreesOfFreedom: number;
  /** Σ wᵢ rᵢ². */
  residualSumOfSquares: number;
  /** √(RSS / df); 0 when df = 0. */
  residualStandardDeviation: number;
  /** 1 − RSS/TSS, TSS about the weighted mean (about 0 without an intercept); 0 when TSS = 0 or rank = 0. */
  r2: number;
  /** Fitted values for every row, including rows with weight 0. */
  fitted: Float64Array;
}

const DEFAULT_RANK_TOLERANCE = 1e-10;

/**
 * Weighted least squares with an optional intercept, by Householder QR (see the file comment).
 * `x` is n×p column-major, `y` has length n.
 */
export function leastSquares(
  x: ColumnMatrix,
  y: ArrayLike<number>,
  options: LeastSquaresOptions = {},
): LeastSquaresResult {
  const n = x.rows;
  const p = x.columns;
  const withIntercept = options.intercept ?? true;
  const rankTolerance = options.rankTolerance ?? DEFAULT_RANK_TOLERANCE;
  if (x.data.length !== n * p) throw new Error("leastSquares requires x.data of length rows × columns");
  if (y.length !== n) throw new Error("leastSquares requires y with one value per row of x");
  if (options.weights !== undefined && options.weights.length !== n) {
    throw new Error("leastSquares requires one weight per row of x");
  }
  if (!(rankTolerance >= 0)) throw new Error("leastSquares requires rankTolerance >= 0");

  // Rows that take part in the fit (weight > 0) and their √w.
  const weightOf = (i: number): number => (options.weights === undefined ? 1 : options.weights[i]);
  let usedRows = 0;
  for (let i = 0; i < n; i++) if (weightOf(i) > 0) usedRows++;
  if (usedRows === 0) throw new Error("leastSquares requires at least one positive weight");
  const rowIndex = new Int32Array(usedRows);
  const rowWeight = new Float64Array(usedRows);
  const rootWeight = new Float64Array(usedRows);
  for (let i = 0, t = 0; i < n; i++) {
    const w = weightOf(i);
    if (w > 0) {
      rowIndex[t] = i;
      rowWeight[t] = w;
      rootWeight[t] = Math.sqrt(w);
      t++;
    }
  }
  const m = usedRows;
  let weightTotal = 0;
  for (let t = 0; t < m; t++) weightTotal += rowWeight[t];

  // Weighted means (zero without an intercept).
  // Each mean in two parts, anchor (one of the values) + offset: centred values are
  // (v − anchor) − offset, exact in the first step (see weightedCentre).
  const columnMean = new Float64Array(p);
  const columnAnchor = new Float64Array(p);
  const columnOffset = new Float64Array(p);
  const response = withIntercept ? weightedCentre(y, 0, rowIndex, rowWeight, weightTotal) : { anchor: 0, offset: 0 };
  if (withIntercept) {
    for (let j = 0; j < p; j++) {
      const centre = weightedCentre(x.data, j * n, rowIndex, rowWeight, weightTotal);
      columnAnchor[j] = centre.anchor;
      columnOffset[j] = centre.offset;
      columnMean[j] = centre.anchor + centre.offset;
    }
  }

  // Working matrix A (m×p, column-major): √w·(x − x̄), then each column scaled to unit length.
  const work = new Float64Array(m * p);
  const columnLength = new Float64Array(p); // length of √w·(x − x̄): the unit-length scale factor
  const aliasThreshold = new Float64Array(p); // aliased when the remaining length is at most this
  const rootTotal = Math.sqrt(weightTotal);
  for (let j = 0; j < p; j++) {
    const source = j * n;
    const target = j * m;
    let largest = 0;
    for (let t = 0; t < m; t++) {
      const v = x.data[source + rowIndex[t]];
      largest = Math.max(largest, Math.abs(v));
      work[target + t] = rootWeight[t] * (v - columnAnchor[j] - columnOffset[j]);
    }
    const centredLength = euclideanLength(work, target, m);
    columnLength[j] = centredLength;
    // centredLength / √Σw is the column's weighted SD about its centre (its RMS without an intercept).
    if (centredLength > 0 && centredLength / rootTotal > CONSTANT_SPREAD_RATIO * largest) {
      const inverse = 1 / centredLength;
      for (let t = 0; t < m; t++) work[target + t] *= inverse;
      aliasThreshold[j] = rankTolerance;
    } else {
      // Zero, or constant up to rounding: aliased with the intercept (or simply zero).
      aliasThreshold[j] = Infinity;
    }
  }

  // Householder QR in the user's column order; deficient columns are set aside.
  const maxRank = Math.max(0, m - (withIntercept ? 1 : 0));
  const kept: number[] = []; // original column index of each factor position
  const aliased: number[] = [];
  const tau = new Float64Array(Math.min(m, p));
  for (let j = 0; j < p; j++) {
    throwIfCancelled(options.signal);
    const k = kept.length;
    if (k >= maxRank || aliasThreshold[j] === Infinity) {
      aliased.push(j);
      continue;
    }
    const columnStart = j * m;
    const diagonal = work[columnStart + k];
    const belowLength = euclideanLength(work, columnStart + k + 1, m - k - 1);
    const remaining = hypotenuse(diagonal, belowLength);
    if (remaining <= aliasThreshold[j]) {
      aliased.push(j);
      continue;
    }
    // Reflector H = I − τ v vᵀ with v = [1; v₂..], H·column = [β; 0..] (β = R_kk).
    const beta = diagonal >= 0 ? -remaining : remaining;
    tau[k] = (beta - diagonal) / beta;
    const vScale = 1 / (diagonal - beta);
    for (let t = columnStart + k + 1; t < columnStart + m; t++) work[t] *= vScale;
    work[columnStart + k] = beta;
    // Apply H to the columns not yet processed (to their rows k..m-1 only); columns already
    // known to be aliased are skipped, since nothing reads them again.
    for (let later = j + 1; later < p; later++) {
      if (aliasThreshold[later] === Infinity) continue;
      applyReflector(work, columnStart, k, m, tau[k], work, later * m);
    }
    kept.push(j);
  }
  const rank = kept.length;
  // Diagonal and above-diagonal entries of R: R[s][t] = work[kept[t]·m + s] for s ≤ t.
  const rStart = new Int32Array(rank);
  for (let t = 0; t < rank; t++) rStart[t] = kept[t] * m;

  // Solve, in the scaled space: c = R⁻¹ (Qᵀz)[0..rank), then b_j = c_k / length_j.
  const coefficients = new Float64Array(p);
  const scratch = new Float64Array(m);
  for (let t = 0; t < m; t++) scratch[t] = rootWeight[t] * (y[rowIndex[t]] - response.anchor - response.offset);
  solveWithFactor(work, rStart, tau, m, rank, scratch);
  for (let k = 0; k < rank; k++) coefficients[kept[k]] = scratch[k] / columnLength[kept[k]];
  // The intercept ȳ − Σ b_j x̄_j in double-double (see interceptPair): rounded to one double it
  // would carry an error of its own size × 1e-16, which a column far from 0 (1e15 + z) makes
  // larger than the residuals themselves.
  let intercept = withIntercept ? interceptPair(response, columnAnchor, columnOffset, coefficients) : { high: 0, low: 0 };

  // One step of iterative refinement: the residual is recomputed from the original, uncentred
  // data (compensated, see fitWithCompensation) and the correction solved with the same factors.
  const fitted = new Float64Array(n);
  const fittedLow = new Float64Array(n); // low-order parts of the compensated fitted values
  fitWithCompensation(x, coefficients, intercept, fitted, fittedLow);
  for (let t = 0; t < m; t++) {
    const i = rowIndex[t];
    scratch[t] = rootWeight[t] * (y[i] - fitted[i] - fittedLow[i]);
  }
  let residualMean = 0;
  if (withIntercept) {
    for (let t = 0; t < m; t++) residualMean += rootWeight[t] * scratch[t];
    residualMean /= weightTotal;
  }
  solveWithFactor(work, rStart, tau, m, rank, scratch);
  const correction = new Float64Array(p);
  for (let k = 0; k < rank; k++) correction[kept[k]] = scratch[k] / columnLength[kept[k]];
  for (let j = 0; j < p; j++) coefficients[j] += correction[j];
  // The intercept follows the corrected slopes (ȳ − Σ b_j x̄_j again) and takes up what the
  // residual's weighted mean says the means' rounding left.
  if (withIntercept) {
    intercept = interceptPair(response, columnAnchor, columnOffset, coefficients);
    const [high, low] = twoSum(intercept.high, residualMean);
    intercept = { high, low: low + intercept.low };
  }
  fitWithCompensation(x, coefficients, intercept, fitted, fittedLow);

  // Fit statistics over the rows with positive weight. y − fitted uses the compensated fit, so
  // residuals keep their digits even when the fitted values are large sums that nearly cancel.
  let residualSumOfSquares = 0;
  let totalSumOfSquares = 0;
  for (let t = 0; t < m; t++) {
    const i = rowIndex[t];
    const residual = y[i] - fitted[i] - fittedLow[i];
    const deviation = y[i] - response.anchor - response.offset;
    residualSumOfSquares += rowWeight[t] * residual * residual;
    totalSumOfSquares += rowWeight[t] * deviation * deviation;
  }
  // The reported fitted values are the compensated sums rounded once.
  for (let i = 0; i < n; i++) fitted[i] += fittedLow[i];
  const degreesOfFreedom = m - rank - (withIntercept ? 1 : 0);
  const residualStandardDeviation = degreesOfFreedom > 0 ? Math.sqrt(residualSumOfSquares / degreesOfFreedom) : 0;
  // With no predictor kept the model is the (weighted) mean, or 0: R² is 0 by definition, not
  // a rounding-level ±1e-16.
  const r2 = rank > 0 && totalSumOfSquares > 0 ? 1 - residualSumOfSquares / totalSumOfSquares : 0;

  // Standard errors through R⁻¹ (upper triangular, rank×rank, column-major).
  const standardErrors: (number | null)[] = new Array<number | null>(p).fill(null);
  let interceptStandardError: number | null = null;
  if (degreesOfFreedom > 0) {
    const rInverse = invertUpperTriangular(work, rStart, rank);
    // Diagonal of R⁻¹R⁻ᵀ = squared row lengths of R⁻¹, accumulated column by column (stride-1).
    const rowSquares = new Float64Array(rank);
    for (let c = 0; c < rank; c++) {
      const column = c * rank;
      for (let s = 0; s <= c; s++) rowSquares[s] += rInverse[column + s] * rInverse[column + s];
    }
    for (let k = 0; k < rank; k++) {
      standardErrors[kept[k]] = (residualStandardDeviation * Math.sqrt(rowSquares[k])) / columnLength[kept[k]];
    }
    if (withIntercept) {
      // x̄ᵀ Cov(b) x̄ = σ² ‖R⁻ᵀ u‖² with u = x̄ in the scaled, factor-ordered coordinates.
      const scaledMean = new Float64Array(rank);
      for (let k = 0; k < rank; k++) scaledMean[k] = columnMean[kept[k]] / columnLength[kept[k]];
      let quadratic = 0;
      for (let c = 0; c < rank; c++) {
        const column = c * rank;
        let projected = 0;
        for (let s = 0; s <= c; s++) projected += rInverse[column + s] * scaledMean[s];
        quadratic += projected * projected;
      }
      const variance = residualStandardDeviation * residualStandardDeviation * (1 / weightTotal + quadratic);
      interceptStandardError = Math.sqrt(variance);
    }
  }

  // Aliased coefficients were never written, so they are exactly 0; `aliased` was filled in
  // increasing column order, so it is already sorted.
  return {
    intercept: intercept.high + intercept.low,
    interceptStandardError,
    coefficients: Array.from(coefficients),
    standardErrors,
    aliased,
    rank,
    degreesOfFreedom,
    residualSumOfSquares,
    residualStandardDeviation,
    r2,
    fitted,
  };
}

/**
 * Weighted mean of `values[offset + rowIndex[t]]` in two parts: the anchor is the first value,
 * the offset the weighted mean of the differences from it with one correction pass (offset +
 * weighted mean of what is left). Equal values give that value and offset 0 exactly, and a large
 * offset costs no digits of the differences, which are exact for values near the anchor.
 */
function weightedCentre(
  values: ArrayLike<number>,
  offset: number,
  rowIndex: Int32Array,
  rowWeight: Float64Array,
  weightTotal: number,
): { anchor: number; offset: number } {
  const anchor = values[offset + rowIndex[0]];
  let sum = 0;
  for (let t = 0; t < rowIndex.length; t++) sum += rowWeight[t] * (values[offset + rowIndex[t]] - anchor);
  const shift = sum / weightTotal;
  let deviation = 0;
  for (let t = 0; t < rowIndex.length; t++) deviation += rowWeight[t] * (values[offset + rowIndex[t]] - anchor - shift);
  return { anchor, offset: shift + deviation / weightTotal };
}

/** Euclidean length of `data[start .. start+length)`, scaled by the largest entry so that squares cannot overflow. */
export function euclideanLength(data: Float64Array, start: number, length: number): number {
  let largest = 0;
  for (let t = start; t < start + length; t++) largest = Math.max(largest, Math.abs(data[t]));
  if (largest === 0 || !Number.isFinite(largest)) return largest;
  const inverse = 1 / largest;
  let sum = 0;
  for (let t = start; t < start + length; t++) {
    const scaled = data[t] * inverse;
    sum += scaled * scaled;
  }
  return largest * Math.sqrt(sum);
}

/**
 * Applies H = I − τ v vᵀ to rows k..m-1 of the vector at `target[targetStart ..]`, where v is
 * stored below the diagonal of the reflector column (`reflector[reflectorStart + k + 1 ..]`, with
 * an implicit 1 at row k). Both loops are stride-1.
 */
export function applyReflector(
  reflector: Float64Array,
  reflectorStart: number,
  k: number,
  m: number,
  tau: number,
  target: Float64Array,
  targetStart: number,
): void {
  if (tau === 0) return;
  let projection = target[targetStart + k];
  for (let t = k + 1; t < m; t++) projection += reflector[reflectorStart + t] * target[targetStart + t];
  projection *= tau;
  target[targetStart + k] -= projection;
  for (let t = k + 1; t < m; t++) target[targetStart + t] -= projection * reflector[reflectorStart + t];
}

/**
 * Overwrites `rhs` (length m) with Qᵀ·rhs and then its first `rank` entries with R⁻¹·(Qᵀ rhs)[0..rank)
 * (back substitution by columns, so the inner loop runs down a column of R: stride-1).
 */
function solveWithFactor(work: Float64Array, rStart: Int32Array, tau: Float64Array, m: number, rank: number, rhs: Float64Array): void {
  for (let k = 0; k < rank; k++) applyReflector(work, rStart[k], k, m, tau[k], rhs, 0);
  for (let k = rank - 1; k >= 0; k--) {
    const column = rStart[k];
    const value = rhs[k] / work[column + k];
    rhs[k] = value;
    for (let s = 0; s < k; s++) rhs[s] -= value * work[column + s];
  }
}

/**
 * R⁻¹ for the rank×rank upper triangle of R (column-major result). Column c solves R·x = e_c by
 * column-oriented back substitution, so every inner loop is stride-1. Cost O(rank³/3).
 */
function invertUpperTriangular(work: Float64Array, rStart: Int32Array, rank: number): Float64Array {
  const inverse = new Float64Array(rank * rank);
  for (let c = 0; c < rank; c++) {
    const out = c * rank;
    inverse[out + c] = 1;
    for (let k = c; k >= 0; k--) {
      const column = rStart[k];
      const value = inverse[out + k] / work[column + k];
      inverse[out + k] = value;
      for (let s = 0; s < k; s++) inverse[out + s] -= value * work[column + s];
    }
  }
  return inverse;
}

/**
 * Splitting factor 2^27 + 1 for exact products without a fused multiply-add (Dekker, "A
 * floating-point technique for extending the available precision", Numer. Math. 18, 1971).
 */
const SPLITTER = 134217729;

/**
 * fitted_i = intercept + Σ_j x_ij b_j for every row (the intercept itself a double-double pair),
 * accumulated in double-double arithmetic
 * (error-free TwoSum and Dekker's TwoProduct; Ogita, Rump & Oishi, "Accurate sum and dot
 * product", SIAM J. Sci. Comput. 26(6), 2005): `high[i] + low[i]` carries about twice the
 * working precision, so y − high − low is accurate even when the terms nearly cancel (a large
 * intercept against large slopes, as in data far from the origin). Column by column: stride-1.
 * Cost O(n·p), about 20 flops per entry. Entries above ~1e300 would overflow the split.
 */
function fitWithCompensation(
  x: ColumnMatrix,
  coefficients: Float64Array,
  intercept: { high: number; low: number },
  high: Float64Array,
  low: Float64Array,
): void {
  const n = x.rows;
  high.fill(intercept.high);
  low.fill(intercept.low);
  for (let j = 0; j < x.columns; j++) {
    const b = coefficients[j];
    if (b === 0) continue;
    // Split b once per column rather than once per entry.
    const bSplit = SPLITTER * b;
    const bHigh = bSplit - (bSplit - b);
    const bLow = b - bHigh;
    const start = j * n;
    for (let i = 0; i < n; i++) {
      const a = x.data[start + i];
      // TwoProduct: a·b = product + productError exactly.
      const product = a * b;
      const aSplit = SPLITTER * a;
      const aHigh = aSplit - (aSplit - a);
      const aLow = a - aHigh;
      const productError = aLow * bLow - (((product - aHigh * bHigh) - aLow * bHigh) - aHigh * bLow);
      // TwoSum: high + product = sum + sumError exactly.
      const sum = high[i] + product;
      const virtual = sum - high[i];
      const sumError = (high[i] - (sum - virtual)) + (product - virtual);
      high[i] = sum;
      low[i] += sumError + productError;
    }
  }
}

/** a + b = sum + error exactly (Knuth's TwoSum; Ogita, Rump & Oishi 2005, Algorithm 3.1). */
export function twoSum(a: number, b: number): [number, number] {
  const sum = a + b;
  const virtual = sum - a;
  return [sum, a - (sum - virtual) + (b - virtual)];
}

/** a·b = product + error exactly (Dekker's TwoProduct with Veltkamp's split; same paper, Algorithm 3.3). */
export function twoProduct(a: number, b: number): [number, number] {
  const product = a * b;
  // Beyond about 1e300 the split itself would overflow: keep the plain product there.
  if (Math.abs(a) > 1e290 || Math.abs(b) > 1e290) return [product, 0];
  const aSplit = SPLITTER * a;
  const aHigh = aSplit - (aSplit - a);
  const aLow = a - aHigh;
  const bSplit = SPLITTER * b;
  const bHigh = bSplit - (bSplit - b);
  const bLow = b - bHigh;
  return [product, aLow * bLow - (product - aHigh * bHigh - aLow * bHigh - aHigh * bLow)];
}

/**
 * b0 = ȳ − Σ_j b_j x̄_j as a double-double pair (high + low), with each mean in its two parts
 * (anchor + offset, see weightedCentre): every product and sum is taken exactly and only their
 * rounding errors are summed, so the pair carries about twice the working precision. Cost O(p).
 */
function interceptPair(
  response: { anchor: number; offset: number },
  anchors: Float64Array,
  offsets: Float64Array,
  coefficients: Float64Array,
): { high: number; low: number } {
  let [high, low] = twoSum(response.anchor, response.offset);
  for (let j = 0; j < coefficients.length; j++) {
    const b = coefficients[j];
    if (b === 0) continue;
    for (const part of [anchors[j], offsets[j]]) {
      const [product, productError] = twoProduct(b, part);
      const [sum, sumError] = twoSum(high, -product);
      high = sum;
      low += sumError - productError;
    }
  }
  const [renormalized, rest] = twoSum(high, low);
  return { high: renormalized, low: rest };
}

// ---------------------------------------------------------------------------------------------
// Least squares from sums (no rows): the weighted normal equations on the centred cross-products

/** What leastSquaresOfSums reads: a data set's sums (problem.ts BlockSums, about the shifts given with them). */
export type LeastSquaresSums = Pick<BlockSums, "p" | "weight" | "rows" | "sumX" | "sumY" | "xx" | "xy" | "yy" | "largest">;

export interface LeastSquaresOfSumsOptions {
  /** Fit an intercept (default true). The sums must then be about the shifts given (any point near the means). */
  intercept?: boolean;
  /**
   * Rows with positive weight, for the degrees of freedom (default the sums' own `rows`). A sums
   * table counts rows of weight 0 in its blocks' rows; fitSums.ts leaves out whole blocks of weight 0.
   */
  rows?: number;
  /** Aliasing threshold on a column's share of spread left by the columns before it (default PIVOT_TOLERANCE). */
  pivotTolerance?: number;
  /** Read before each column; when `aborted`, CancelledError. */
  signal?: CancelSignal;
}

/** As LeastSquaresResult, without fitted values (there are no rows). */
export type LeastSquaresOfSumsResult = Omit<LeastSquaresResult, "fitted">;

/**
 * The smallest share of a column's (weighted, centred) spread, left over once the columns before
 * it have explained what they can, for the column to be kept. Cross-products summed by a query
 * engine carry relative errors up to about n·2^-53 (sums.ts VARIANCE_ROUNDING allows 1e-9), and a
 * coefficient solved from a share δ carries about (that error)/δ: below 1e-10 the digits left are
 * rounding, and the column is reported aliased. (The QR route on rows, which never squares the
 * data, keeps columns down to a share of 1e-20; the two disagree only where the predictors'
 * correlation matrix has a condition number beyond about 1e10.)
 */
export const PIVOT_TOLERANCE = 1e-10;

/**
 * Weighted least squares from sums: the normal equations S b = s, with S = Σw(x − x̄)(x − x̄)ᵀ
 * and s = Σw(x − x̄)(y − ȳ) the weighted centred cross-products (about 0 without an intercept),
 * which is all squared error needs (common practice; e.g. Golub & Van Loan, Matrix
 * Computations, §5.3.1, the method of normal equations). Solved stably:
 * 1. Correlation scaling: C = D⁻¹ S D⁻¹, D = diag(√S_jj), so the unit-diagonal C's pivots are
 *    shares of spread and the tests below do not depend on the units.
 * 2. Cholesky C = L Lᵀ in the user's column order (Golub & Van Loan §4.2.8, Algorithm 4.2.2 by
 *    rows) with deficient columns set aside as leastSquares does: a column whose pivot (its share
 *    of spread not explained by the kept columns to its left) is at most `pivotTolerance`, or that
 *    is constant (the rule of problem.ts problemFromSums: its variance is rounding), is aliased
 *    (coefficient exactly 0), and at most rows − (intercept ? 1 : 0) columns are kept.
 * 3. One step of iterative refinement (Golub & Van Loan §3.5.3): s − S b in double-double
 *    (twoProduct, twoSum), the correction solved with the same factor; this leaves only the error
 *    of the sums themselves.
 * 4. RSS = t − 2bᵀs + bᵀSb (t = Σw(y − ȳ)²) in double-double; σ² = RSS / df with
 *    df = rows − rank − (intercept ? 1 : 0), the convention of leastSquares (weighted residuals,
 *    the rows of positive weight); Cov(b) = σ² S⁻¹ through L⁻¹; Var(b0) = σ²(1/Σw + x̄ᵀ S⁻¹ x̄).
 *    The intercept ȳ − Σ b_j x̄_j in double-double, each mean in its two parts (shift + offset).
 * Cost O(p³), independent of the rows. Sums should be of moderate size (fitSums.ts scales them
 * by powers of two first).
 */
export function leastSquaresOfSums(
  sums: LeastSquaresSums,
  shiftX: ArrayLike<number>,
  shiftY: number,
  options: LeastSquaresOfSumsOptions = {},
): LeastSquaresOfSumsResult {
  const p = sums.p;
  const W = sums.weight;
  const withIntercept = options.intercept ?? true;
  const rows = options.rows ?? sums.rows;
  const tolerance = options.pivotTolerance ?? PIVOT_TOLERANCE;
  if (!(W > 0)) throw new Error("leastSquaresOfSums requires a positive total weight");
  if (!(tolerance >= 0)) throw new Error("leastSquaresOfSums requires pivotTolerance >= 0");
  // Centred sums (about the weighted means; about 0 without an intercept).
  const S = new Float64Array(p * p);
  const s = new Float64Array(p);
  const offsetX = new Float64Array(p);
  const offsetY = withIntercept ? sums.sumY / W : 0;
  for (let j = 0; j < p; j++) {
    if (withIntercept) offsetX[j] = sums.sumX[j] / W;
    for (let k = 0; k < p; k++) S[j * p + k] = withIntercept ? sums.xx[j * p + k] - (sums.sumX[j] * sums.sumX[k]) / W : sums.xx[j * p + k];
    s[j] = withIntercept ? sums.xy[j] - (sums.sumX[j] * sums.sumY) / W : sums.xy[j];
  }
  const t = withIntercept ? sums.yy - (sums.sumY * sums.sumY) / W : sums.yy;
  // Scales and constant columns (problem.ts problemFromSums's rule).
  const scale = new Float64Array(p);
  const constant = new Uint8Array(p);
  for (let j = 0; j < p; j++) {
    const variance = S[j * p + j] / W;
    const second = sums.xx[j * p + j] / W;
    constant[j] = !(variance > SUMS_CANCELLATION_RATIO * second) || !(Math.sqrt(variance) > CONSTANT_SPREAD_RATIO * sums.largest[j]) ? 1 : 0;
    scale[j] = constant[j] ? 1 : Math.sqrt(S[j * p + j]);
  }
  // Cholesky of C by rows, in the user's order (row q of L holds the kept column kept[q]).
  const maxRank = Math.max(0, rows - (withIntercept ? 1 : 0));
  const kept: number[] = [];
  const aliased: number[] = [];
  const L = new Float64Array(p * p);
  const row = new Float64Array(p);
  for (let j = 0; j < p; j++) {
    throwIfCancelled(options.signal);
    const q = kept.length;
    if (constant[j] || q >= maxRank) {
      aliased.push(j);
      continue;
    }
    let pivot = 1; // C_jj
    for (let a = 0; a < q; a++) {
      const k = kept[a];
      let v = S[j * p + k] / (scale[j] * scale[k]);
      for (let r = 0; r < a; r++) v -= row[r] * L[a * p + r];
      v /= L[a * p + a];
      row[a] = v;
      pivot -= v * v;
    }
    if (!(pivot > tolerance)) {
      aliased.push(j);
      continue;
    }
    for (let a = 0; a < q; a++) L[q * p + a] = row[a];
    L[q * p + q] = Math.sqrt(pivot);
    kept.push(j);
  }
  const rank = kept.length;
  // Solve L Lᵀ z = rhs in place (scaled, factor order).
  const solve = (rhs: Float64Array): void => {
    for (let a = 0; a < rank; a++) {
      let v = rhs[a];
      for (let r = 0; r < a; r++) v -= L[a * p + r] * rhs[r];
      rhs[a] = v / L[a * p + a];
    }
    for (let a = rank - 1; a >= 0; a--) {
      let v = rhs[a];
      for (let r = a + 1; r < rank; r++) v -= L[r * p + a] * rhs[r];
      rhs[a] = v / L[a * p + a];
    }
  };
  const coefficients = new Float64Array(p);
  const z = new Float64Array(rank);
  for (let a = 0; a < rank; a++) z[a] = s[kept[a]] / scale[kept[a]];
  solve(z);
  for (let a = 0; a < rank; a++) coefficients[kept[a]] = z[a] / scale[kept[a]];
  // Iterative refinement: s − S b over the kept columns, in double-double.
  for (let a = 0; a < rank; a++) {
    const j = kept[a];
    let high = s[j];
    let low = 0;
    for (let c = 0; c < rank; c++) {
      const k = kept[c];
      const [product, productError] = twoProduct(S[j * p + k], coefficients[k]);
      const [sum, sumError] = twoSum(high, -product);
      high = sum;
      low += sumError - productError;
    }
    z[a] = (high + low) / scale[j];
  }
  solve(z);
  for (let a = 0; a < rank; a++) coefficients[kept[a]] += z[a] / scale[kept[a]];
  // RSS = t − 2 bᵀs + bᵀ S b, in double-double.
  let rssHigh = t;
  let rssLow = 0;
  const add = (x: number, y: number): void => {
    const [product, productError] = twoProduct(x, y);
    const [sum, sumError] = twoSum(rssHigh, product);
    rssHigh = sum;
    rssLow += sumError + productError;
  };
  for (let a = 0; a < rank; a++) {
    const j = kept[a];
    add(-2 * coefficients[j], s[j]);
    for (let c = 0; c < rank; c++) add(coefficients[j] * coefficients[kept[c]], S[j * p + kept[c]]);
  }
  const residualSumOfSquares = Math.max(0, rssHigh + rssLow);
  const intercept = withIntercept ? interceptPair({ anchor: shiftY, offset: offsetY }, Float64Array.from(shiftX), offsetX, coefficients) : { high: 0, low: 0 };
  const degreesOfFreedom = rows - rank - (withIntercept ? 1 : 0);
  const residualStandardDeviation = degreesOfFreedom > 0 ? Math.sqrt(residualSumOfSquares / degreesOfFreedom) : 0;
  const r2 = rank > 0 && t > 0 ? 1 - residualSumOfSquares / t : 0;
  // Standard errors: C⁻¹ = L⁻ᵀ L⁻¹, so (C⁻¹)_aa is the squared length of column a of L⁻¹.
  const standardErrors: (number | null)[] = new Array<number | null>(p).fill(null);
  let interceptStandardError: number | null = null;
  if (degreesOfFreedom > 0) {
    // L⁻¹ (lower triangular, row-major in `inverse`), column by column: L x = e_c.
    const inverse = new Float64Array(rank * rank);
    for (let c = 0; c < rank; c++) {
      for (let a = c; a < rank; a++) {
        let v = a === c ? 1 : 0;
        for (let r = c; r < a; r++) v -= L[a * p + r] * inverse[r * rank + c];
        inverse[a * rank + c] = v / L[a * p + a];
      }
    }
    for (let c = 0; c < rank; c++) {
      let square = 0;
      for (let a = c; a < rank; a++) square += inverse[a * rank + c] * inverse[a * rank + c];
      standardErrors[kept[c]] = (residualStandardDeviation * Math.sqrt(square)) / scale[kept[c]];
    }
    if (withIntercept) {
      // x̄ᵀ S⁻¹ x̄ = ‖L⁻¹ u‖², u the means in the scaled, factor-ordered coordinates.
      let quadratic = 0;
      for (let a = 0; a < rank; a++) {
        let projected = 0;
        for (let c = 0; c <= a; c++) projected += inverse[a * rank + c] * ((shiftX[kept[c]] + offsetX[kept[c]]) / scale[kept[c]]);
        quadratic += projected * projected;
      }
      interceptStandardError = residualStandardDeviation * Math.sqrt(1 / W + quadratic);
    }
  }
  return {
    intercept: intercept.high + intercept.low,
    interceptStandardError,
    coefficients: Array.from(coefficients),
    standardErrors,
    aliased,
    rank,
    degreesOfFreedom,
    residualSumOfSquares,
    residualStandardDeviation,
    r2,
  };
}
