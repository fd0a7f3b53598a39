/**
 * A fitted linear model as plain serialisable data, and its pure predict function.
 * The task pane saves and restores it; SHRINK.APPLY-style use needs nothing else.
 */
import { InputError } from "./errors";
import type { ColumnMatrix } from "./matrix";

export interface LinearModel {
  kind: "shrinkwise-linear-model";
  terms: string[];
  intercept: number;
  /** Original units, one per term. */
  coefficients: number[];
}

export function linearModel(terms: string[], intercept: number, coefficients: number[]): LinearModel {
  return { kind: "shrinkwise-linear-model", terms: terms.slice(), intercept, coefficients: coefficients.slice() };
}

/** Reads a model back from JSON text or a parsed object, checking its shape. */
export function modelFromJSON(source: string | unknown): LinearModel {
  const value = typeof source === "string" ? JSON.parse(source) : source;
  const model = value as Partial<LinearModel>;
  if (
    !model ||
    model.kind !== "shrinkwise-linear-model" ||
    !Array.isArray(model.terms) ||
    !Array.isArray(model.coefficients) ||
    model.terms.length !== model.coefficients.length ||
    typeof model.intercept !== "number"
  ) {
    throw new InputError("shape", "this is not a saved Shrinkwise model (expected terms, coefficients and an intercept)");
  }
  return linearModel(model.terms as string[], model.intercept, model.coefficients as number[]);
}

/**
 * Predictions b0 + Σ b_j x_ij for each row. Rows are arrays in term order, or a column-major
 * matrix. Cost O(rows·terms).
 */
export function predict(model: LinearModel, rows: ArrayLike<ArrayLike<number>> | ColumnMatrix): Float64Array {
  const p = model.coefficients.length;
  if ("data" in rows && (rows as ColumnMatrix).data instanceof Float64Array) {
    const matrix = rows as ColumnMatrix;
    if (matrix.columns !== p) {
      throw new InputError("shape", `new rows have ${matrix.columns} columns but the model has ${p} terms`);
    }
    const out = new Float64Array(matrix.rows).fill(model.intercept);
    for (let j = 0; j < p; j++) {
      const b = model.coefficients[j];
      if (b === 0) continue;
      const off = j * matrix.rows;
      for (let i = 0; i < matrix.rows; i++) out[i] += b * matrix.data[off + i];
    }
    return out;
  }
  const list = rows as ArrayLike<ArrayLike<number>>;
  const out = new Float64Array(list.length);
  for (let i = 0; i < list.length; i++) {
    const row = list[i];
    if (row.length !== p) {
      throw new InputError("shape", `new row ${i + 1} has ${row.length} values but the model has ${p} terms`);
    }
    let s = model.intercept;
    for (let j = 0; j < p; j++) s += model.coefficients[j] * row[j];
    out[i] = s;
  }
  return out;
}
