/**
 * Eigenvalues and eigenvectors of a symmetric matrix, with cancellation checkpoints.
 *
 * Method: Householder reduction to tridiagonal form, then the implicit QL algorithm with shifts on
 * the tridiagonal matrix, accumulating the transformations (the Handbook procedures tred2 and tql2:
 * Martin, Reinsch & Wilkinson 1968, "Householder's tridiagonalization of a symmetric matrix", and
 * Bowdler, Martin, Reinsch & Wilkinson 1968, "The QR and QL algorithms for symmetric matrices",
 * Numer. Math. 11; Golub & Van Loan, Matrix Computations, §8.3). Cost about 9·size³ flops.
 *
 * It performs the same operations in the same order as the symmetric path of ml-matrix's
 * EigenvalueDecomposition (which the engine used before and which derives from the same
 * procedures), so its results are bit for bit the same (test/engine/eigen.test.ts checks this);
 * what it adds is a cancel signal read once per Householder step and once per QL iteration, each
 * O(size²) work, so a long factorization can be stopped (errors.ts throwIfCancelled). Reading the
 * signal changes no arithmetic.
 *
 * Storage: `vectors` is size × size with eigenvector t in vectors[t·size .. (t + 1)·size), the
 * layout SpectralRidge reads; eigenvalues ascend.
 */
import { hypotenuse } from "./portableMath";
import { CancelSignal, throwIfCancelled } from "./errors";

export interface SymmetricEigen {
  /** Eigenvalues, ascending. */
  values: Float64Array;
  /** Eigenvector t (unit length) in vectors[t·size .. (t + 1)·size). */
  vectors: Float64Array;
}

/**
 * Eigen-decomposition of the symmetric `size` × `size` matrix stored row-major in `matrix`
 * (only symmetric input is meaningful; the matrix is read as ml-matrix reads it, transposed).
 * @example symmetricEigen(Float64Array.of(2, 1, 1, 2), 2).values // [1, 3]
 */
export function symmetricEigen(matrix: Float64Array, size: number, signal?: CancelSignal): SymmetricEigen {
  const n = size;
  if (!(n > 0) || matrix.length !== n * n) throw new RangeError(`symmetricEigen requires a non-empty size × size matrix; got ${matrix.length} entries for size ${size}`);
  // v[r·n + c] holds the transposed working matrix (then the transposed eigenvector matrix):
  // the hot loops run along its rows, stride 1.
  const v = new Float64Array(n * n);
  for (let i = 0; i < n; i++) for (let j = 0; j < n; j++) v[j * n + i] = matrix[i * n + j];
  const d = new Float64Array(n);
  const e = new Float64Array(n);
  tridiagonalize(n, e, d, v, signal);
  diagonalize(n, e, d, v, signal);
  return { values: d, vectors: v };
}

/** Householder reduction of v to tridiagonal form: diagonal d, off-diagonal e, transformations accumulated in v (tred2). */
function tridiagonalize(n: number, e: Float64Array, d: Float64Array, v: Float64Array, signal?: CancelSignal): void {
  let f: number;
  let g: number;
  let h: number;
  let hh: number;
  let scale: number;
  for (let j = 0; j < n; j++) d[j] = v[j * n + n - 1];
  for (let i = n - 1; i > 0; i--) {
    throwIfCancelled(signal);
    scale = 0;
    h = 0;
    for (let k = 0; k < i; k++) scale = scale + Math.abs(d[k]);
    if (scale === 0) {
      e[i] = d[i - 1];
      for (let j = 0; j < i; j++) {
        d[j] = v[j * n + i - 1];
        v[j * n + i] = 0;
        v[i * n + j] = 0;
      }
    } else {
      for (let k = 0; k < i; k++) {
        d[k] /= scale;
        h += d[k] * d[k];
      }
      f = d[i - 1];
      g = Math.sqrt(h);
      if (f > 0) g = -g;
      e[i] = scale * g;
      h = h - f * g;
      d[i - 1] = f - g;
      for (let j = 0; j < i; j++) e[j] = 0;
      for (let j = 0; j < i; j++) {
        f = d[j];
        v[i * n + j] = f;
        g = e[j] + v[j * n + j] * f;
        const row = j * n;
        for (let k = j + 1; k <= i - 1; k++) {
          g += v[row + k] * d[k];
          e[k] += v[row + k] * f;
        }
        e[j] = g;
      }
      f = 0;
      for (let j = 0; j < i; j++) {
        e[j] /= h;
        f += e[j] * d[j];
      }
      hh = f / (h + h);
      for (let j = 0; j < i; j++) e[j] -= hh * d[j];
      for (let j = 0; j < i; j++) {
        f = d[j];
        g = e[j];
        const row = j * n;
        for (let k = j; k <= i - 1; k++) v[row + k] = v[row + k] - (f * e[k] + g * d[k]);
        d[j] = v[row + i - 1];
        v[row + i] = 0;
      }
    }
    d[i] = h;
  }
  accumulateTransformations(n, e, d, v, signal);
}

/**
 * tred2's second part: the Householder transformations accumulated into v, d and e finished.
 * Its own function (the same statements, in the same order): while tridiagonalize held both parts,
 * V8 compiled its first loop on the stack and then threw that code away on reaching this part,
 * which it had not run yet, once per decomposition (--trace-deopt: "insufficient type feedback"),
 * so this part ran unoptimized in a process's first fits.
 */
function accumulateTransformations(n: number, e: Float64Array, d: Float64Array, v: Float64Array, signal?: CancelSignal): void {
  let g: number;
  let h: number;
  for (let i = 0; i < n - 1; i++) {
    throwIfCancelled(signal);
    v[i * n + n - 1] = v[i * n + i];
    v[i * n + i] = 1;
    h = d[i + 1];
    const next = (i + 1) * n;
    if (h !== 0) {
      for (let k = 0; k <= i; k++) d[k] = v[next + k] / h;
      for (let j = 0; j <= i; j++) {
        g = 0;
        const row = j * n;
        for (let k = 0; k <= i; k++) g += v[next + k] * v[row + k];
        for (let k = 0; k <= i; k++) v[row + k] = v[row + k] - g * d[k];
      }
    }
    for (let k = 0; k <= i; k++) v[next + k] = 0;
  }
  for (let j = 0; j < n; j++) {
    d[j] = v[j * n + n - 1];
    v[j * n + n - 1] = 0;
  }
  v[(n - 1) * n + n - 1] = 1;
  e[0] = 0;
}

/** Implicit QL iterations on the tridiagonal (d, e), rotations accumulated in v; eigenvalues sorted ascending (tql2). */
function diagonalize(n: number, e: Float64Array, d: Float64Array, v: Float64Array, signal?: CancelSignal): void {
  for (let i = 1; i < n; i++) e[i - 1] = e[i];
  e[n - 1] = 0;
  let f = 0;
  let tst1 = 0;
  const eps = Number.EPSILON;
  for (let l = 0; l < n; l++) {
    tst1 = Math.max(tst1, Math.abs(d[l]) + Math.abs(e[l]));
    let m = l;
    while (m < n) {
      if (Math.abs(e[m]) <= eps * tst1) break;
      m++;
    }
    if (m > l) {
      do {
        throwIfCancelled(signal);
        let g = d[l];
        let p = (d[l + 1] - g) / (2 * e[l]);
        let r = hypotenuse(p, 1);
        if (p < 0) r = -r;
        d[l] = e[l] / (p + r);
        d[l + 1] = e[l] * (p + r);
        const dl1 = d[l + 1];
        let h = g - d[l];
        for (let i = l + 2; i < n; i++) d[i] -= h;
        f = f + h;
        p = d[m];
        let c = 1;
        let c2 = c;
        let c3 = c;
        const el1 = e[l + 1];
        let s = 0;
        let s2 = 0;
        for (let i = m - 1; i >= l; i--) {
          c3 = c2;
          c2 = c;
          s2 = s;
          g = c * e[i];
          h = c * p;
          r = hypotenuse(p, e[i]);
          e[i + 1] = s * r;
          s = e[i] / r;
          c = p / r;
          p = c * d[i] - s * g;
          d[i + 1] = h + s * (c * g + s * d[i]);
          const upper = (i + 1) * n;
          const lower = i * n;
          for (let k = 0; k < n; k++) {
            h = v[upper + k];
            v[upper + k] = s * v[lower + k] + c * h;
            v[lower + k] = c * v[lower + k] - s * h;
          }
        }
        p = (-s * s2 * c3 * el1 * e[l]) / dl1;
        e[l] = s * p;
        d[l] = c * p;
      } while (Math.abs(e[l]) > eps * tst1);
    }
    d[l] = d[l] + f;
    e[l] = 0;
  }
  sortAscending(n, d, v);
}

/**
 * tql2's last part: eigenvalues sorted ascending (selection sort), eigenvectors swapped with them.
 * Its own function for the reason given at accumulateTransformations (same statements, same order).
 */
function sortAscending(n: number, d: Float64Array, v: Float64Array): void {
  for (let i = 0; i < n - 1; i++) {
    let k = i;
    let p = d[i];
    for (let j = i + 1; j < n; j++) {
      if (d[j] < p) {
        k = j;
        p = d[j];
      }
    }
    if (k !== i) {
      d[k] = d[i];
      d[i] = p;
      for (let j = 0; j < n; j++) {
        p = v[i * n + j];
        v[i * n + j] = v[k * n + j];
        v[k * n + j] = p;
      }
    }
  }
}
