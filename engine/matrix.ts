/**
 * Column-major dense matrix storage shared by the whole engine.
 *
 * Column j occupies `data[j * rows .. (j + 1) * rows)`, so `columnView(m, j)` is a
 * stride-1 view: coordinate descent sweeps columns, and stride-1 inner loops are what
 * make it fast in JavaScript.
 */
export interface ColumnMatrix {
  readonly rows: number;
  readonly columns: number;
  readonly data: Float64Array;
}

/**
 * True for a column-major matrix (rather than rows of numbers). The storage is recognized by its
 * tag as well as by `instanceof`, so a matrix made in another realm (a structured clone from a
 * worker's port, or a test harness's own globals) still counts.
 */
export function isColumnMatrix(value: unknown): value is ColumnMatrix {
  if (typeof value !== "object" || value === null) return false;
  const data = (value as ColumnMatrix).data;
  return data instanceof Float64Array || Object.prototype.toString.call(data) === "[object Float64Array]";
}

/** A zero-filled `rows × columns` matrix. Cost O(rows·columns). */
export function zeroMatrix(rows: number, columns: number): ColumnMatrix {
  return { rows, columns, data: new Float64Array(rows * columns) };
}

/** Stride-1 view of column `j` (no copy). */
export function columnView(matrix: ColumnMatrix, j: number): Float64Array {
  return matrix.data.subarray(j * matrix.rows, (j + 1) * matrix.rows);
}

/**
 * Builds a column-major matrix from rows (`rows[i][j]` is observation i, predictor j).
 * Every row must have the same length; the caller validates values.
 */
export function fromRows(rows: ArrayLike<ArrayLike<number>>): ColumnMatrix {
  const n = rows.length;
  const p = n === 0 ? 0 : rows[0].length;
  const out = zeroMatrix(n, p);
  for (let i = 0; i < n; i++) {
    const row = rows[i];
    for (let j = 0; j < p; j++) out.data[j * n + i] = row[j];
  }
  return out;
}

/** Row i of a column-major matrix as a new array (for messages and small jobs only). */
export function rowOf(matrix: ColumnMatrix, i: number): number[] {
  const out = new Array<number>(matrix.columns);
  for (let j = 0; j < matrix.columns; j++) out[j] = matrix.data[j * matrix.rows + i];
  return out;
}

/** Keeps the listed rows, in the given order. Cost O(kept·columns). */
export function selectRows(matrix: ColumnMatrix, keep: ArrayLike<number>): ColumnMatrix {
  const m = keep.length;
  const out = zeroMatrix(m, matrix.columns);
  for (let j = 0; j < matrix.columns; j++) {
    const src = j * matrix.rows;
    const dst = j * m;
    for (let t = 0; t < m; t++) out.data[dst + t] = matrix.data[src + keep[t]];
  }
  return out;
}

/** Dot product of two equally long vectors. */
export function dot(a: ArrayLike<number>, b: ArrayLike<number>): number {
  let s = 0;
  for (let i = 0; i < a.length; i++) s += a[i] * b[i];
  return s;
}
