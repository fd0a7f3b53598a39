/**
 * Input checks for the engine, in one place. Every failure is an InputError whose message
 * a spreadsheet user can act on; the checks run before any numerical work.
 * Message shape: what is wrong, in the user's terms, then what to do about it.
 */
import { InputError } from "./errors";
import { ColumnMatrix, fromRows, isColumnMatrix } from "./matrix";

export function describeColumn(names: readonly string[] | undefined, j: number): string {
  return names && names[j] !== undefined ? `'${names[j]}'` : `${j + 1}`;
}

/** Turns rows (or an existing column-major matrix) into a checked column-major matrix. */
export function checkPredictors(
  predictors: ArrayLike<ArrayLike<number>> | ColumnMatrix,
  names: readonly string[] | undefined,
): ColumnMatrix {
  return checkedPredictors(predictors, names).matrix;
}

/**
 * checkPredictors, and each column's largest magnitude over all rows, found in the same pass as
 * the finiteness check (fit.ts scales by it: one pass over the data fewer than a separate scan).
 */
export function checkedPredictors(
  predictors: ArrayLike<ArrayLike<number>> | ColumnMatrix,
  names: readonly string[] | undefined,
): { matrix: ColumnMatrix; largest: Float64Array } {
  let matrix: ColumnMatrix;
  if (isColumnMatrix(predictors)) {
    matrix = predictors;
    if (matrix.data.length !== matrix.rows * matrix.columns) {
      throw new InputError("shape", "predictors storage does not match its stated size");
    }
  } else {
    const rows = predictors;
    if (!rows || rows.length === 0) throw new InputError("empty", "predictors is empty: select at least one column of numbers");
    const width = rows[0]?.length ?? 0;
    for (let i = 0; i < rows.length; i++) {
      const row = rows[i];
      if (!row || row.length !== width) {
        throw new InputError(
          "shape",
          `predictors row ${i + 1} has ${row ? row.length : 0} values but row 1 has ${width}: every row needs the same columns`,
        );
      }
    }
    matrix = fromRows(rows);
  }
  if (matrix.rows === 0) throw new InputError("empty", "predictors is empty: select at least one column of numbers");
  if (matrix.columns === 0) throw new InputError("no-predictors", "predictors has no columns: select at least one predictor column");
  if (names && names.length !== matrix.columns) {
    throw new InputError("shape", `${names.length} predictor names were given for ${matrix.columns} predictor columns`);
  }
  const n = matrix.rows;
  const largest = new Float64Array(matrix.columns);
  for (let j = 0; j < matrix.columns; j++) {
    largest[j] = largestFinite(matrix.data, j * n, n);
    const i = Number.isNaN(largest[j]) ? firstNotFinite(matrix.data, j * n, n) : -1;
    if (i >= 0) {
      const v = matrix.data[j * n + i];
      throw new InputError(
        "not-finite",
        `predictors row ${i + 1}, column ${describeColumn(names, j)} is ${describeValue(v)}: every predictor value must be a finite number`,
      );
    }
  }
  return { matrix, largest };
}

/**
 * The largest |value| of data[offset … offset + n), or NaN as soon as a value is not a finite
 * number. A function of its own, called per column, so it is optimized as a whole after its first
 * calls (inside checkPredictors, run once per fit, the scan ran unoptimized in a process's first fit).
 */
function largestFinite(data: Float64Array, offset: number, n: number): number {
  let largest = 0;
  for (let i = 0; i < n; i++) {
    const magnitude = Math.abs(data[offset + i]);
    // One comparison for the usual value; NaN fails both, ±Infinity is caught after the loop.
    if (!(magnitude <= largest)) {
      if (magnitude > largest) largest = magnitude;
      else return NaN;
    }
  }
  return largest === Infinity ? NaN : largest;
}

/**
 * Index of the first value of data[offset … offset + n) that is not a finite number, or −1
 * (for the message, once largestFinite has found one).
 */
function firstNotFinite(data: Float64Array, offset: number, n: number): number {
  for (let i = 0; i < n; i++) if (!Number.isFinite(data[offset + i])) return i;
  return -1;
}

function describeValue(v: number): string {
  if (Number.isNaN(v)) return "not a number";
  return v > 0 ? "infinite" : "minus infinity";
}

/** Checks a per-row vector: length and finiteness. */
export function checkRowVector(values: ArrayLike<number>, rows: number, label: string): Float64Array {
  if (!values || values.length === 0) throw new InputError("empty", `${label} is empty`);
  if (values.length !== rows) {
    throw new InputError("shape", `predictors has ${rows} rows but ${label} has ${values.length}`);
  }
  const out = new Float64Array(rows);
  for (let i = 0; i < rows; i++) {
    const v = Number(values[i]);
    if (typeof values[i] !== "number" || !Number.isFinite(v)) {
      throw new InputError("not-finite", `${label} row ${i + 1} is ${typeof values[i] === "number" ? describeValue(v) : "not a number"}: every value must be a finite number`);
    }
    out[i] = v;
  }
  return out;
}

export function checkWeights(values: ArrayLike<number>, rows: number): Float64Array {
  const weights = checkRowVector(values, rows, "weights");
  let total = 0;
  for (let i = 0; i < rows; i++) {
    if (weights[i] < 0) throw new InputError("weights", `weights row ${i + 1} is negative (${weights[i]}): weights must be zero or more`);
    total += weights[i];
  }
  if (!(total > 0)) throw new InputError("weights", "every weight is zero: at least one row needs a positive weight");
  return weights;
}

/** One value per predictor: length, finiteness and a lower limit. */
export function checkPerPredictor(
  values: ArrayLike<number>,
  columns: number,
  label: string,
  code: "multipliers" | "bounds",
  allowInfinite: boolean,
): Float64Array {
  if (values.length !== columns) {
    throw new InputError(code, `${label} has ${values.length} values but there are ${columns} predictors: give one per predictor`);
  }
  const out = new Float64Array(columns);
  for (let j = 0; j < columns; j++) {
    const v = values[j];
    if (typeof v !== "number" || Number.isNaN(v) || (!allowInfinite && !Number.isFinite(v))) {
      throw new InputError(code, `${label} value ${j + 1} is not a number`);
    }
    out[j] = v;
  }
  return out;
}

export function checkMixes(mixes: readonly number[]): number[] {
  if (mixes.length === 0) throw new InputError("mix", "no mix given: give at least one value between 0 (ridge) and 1 (lasso)");
  for (const mix of mixes) {
    if (typeof mix !== "number" || !Number.isFinite(mix) || mix < 0 || mix > 1) {
      throw new InputError("mix", `mix ${String(mix)} is outside 0 to 1: use 0 for ridge, 1 for lasso, or a value between`);
    }
  }
  const seen = new Set<number>();
  for (const mix of mixes) {
    if (seen.has(mix)) throw new InputError("mix", `mix ${mix} is listed twice: list each mix once`);
    seen.add(mix);
  }
  return mixes.slice();
}

export function checkInteger(value: number, label: string, min: number, max: number, code: "folds" | "setting"): number {
  if (typeof value !== "number" || !Number.isInteger(value) || value < min || value > max) {
    throw new InputError(code, `${label} must be a whole number from ${min} to ${max}; got ${String(value)}`);
  }
  return value;
}
