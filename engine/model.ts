/**
 * A fitted linear model as plain serialisable data, and its pure predict function.
 * The task pane saves and restores it; SHRINK.APPLY-style use needs nothing else.
 *
 * `link` says what the linear score η = b0 + Σ b_j x_j means: "identity" (the default, and what
 * a saved model without the field means) predicts η itself; "logistic" is a two-class model whose
 * coefficients are log-odds of the event, and predicts the event's probability 1 / (1 + e^−η).
 */
import { InputError } from "./errors";
import { isColumnMatrix, type ColumnMatrix } from "./matrix";
import { tableExp } from "./portableMath";

export type ModelLink = "identity" | "logistic";

export interface LinearModel {
  kind: "shrinkwise-linear-model";
  terms: string[];
  intercept: number;
  /** Original units, one per term (log-odds per unit for a logistic model). */
  coefficients: number[];
  /** Absent means "identity". */
  link?: ModelLink;
}

export function linearModel(terms: string[], intercept: number, coefficients: number[], link: ModelLink = "identity"): LinearModel {
  const model: LinearModel = { kind: "shrinkwise-linear-model", terms: terms.slice(), intercept, coefficients: coefficients.slice() };
  if (link !== "identity") model.link = link;
  return model;
}

/**
 * The logistic function 1 / (1 + e^−η), evaluated without overflow on either side and with the
 * portable table-driven exponential (portableMath.ts tableExp: bit-identical in every JavaScript
 * engine, and fast enough for the two-class solver's inner loop).
 */
export function logistic(eta: number): number {
  return logisticFrom(eta, tableExp(eta > 0 ? -eta : eta));
}

/** logistic(η) given e = tableExp(−|η|) (see classMetrics.ts softplusFrom): 1/(1 + e) for η >= 0, else e/(1 + e). Identical to logistic(η). */
export function logisticFrom(eta: number, e: number): number {
  return eta >= 0 ? 1 / (1 + e) : e / (1 + e);
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
  const link = model.link ?? "identity";
  if (link !== "identity" && link !== "logistic") {
    throw new InputError("shape", `this saved Shrinkwise model has an unknown link '${String(link)}' (expected identity or logistic)`);
  }
  return linearModel(model.terms as string[], model.intercept, model.coefficients as number[], link);
}

/**
 * Predictions for each row: the linear score b0 + Σ b_j x_ij, passed through the model's link
 * (a logistic model gives the event's probability). Rows are arrays in term order, or a
 * column-major matrix. Cost O(rows·terms).
 */
export function predict(model: LinearModel, rows: ArrayLike<ArrayLike<number>> | ColumnMatrix): Float64Array {
  const out = linearScore(model, rows);
  if (model.link === "logistic") for (let i = 0; i < out.length; i++) out[i] = logistic(out[i]);
  return out;
}

/** The linear score b0 + Σ b_j x_ij for each row (log-odds for a logistic model), before the link. */
export function linearScore(model: LinearModel, rows: ArrayLike<ArrayLike<number>> | ColumnMatrix): Float64Array {
  const p = model.coefficients.length;
  if (isColumnMatrix(rows)) {
    const matrix = rows as ColumnMatrix;
    if (matrix.columns !== p) {
      throw new InputError("shape", `new rows have ${matrix.columns} columns but the model has ${p} terms`);
    }
    const n = matrix.rows;
    const out = new Float64Array(n).fill(model.intercept);
    // The terms of nonzero coefficients, added in column order, up to four columns a pass over
    // the rows (addTerms: each row's sum takes the same terms in the same order).
    const used: number[] = [];
    for (let j = 0; j < p; j++) if (model.coefficients[j] !== 0) used.push(j);
    for (let u = 0; u < used.length; u += 4) {
      const count = Math.min(4, used.length - u);
      const j0 = used[u];
      const j1 = used[u + Math.min(1, count - 1)];
      const j2 = used[u + Math.min(2, count - 1)];
      const j3 = used[u + Math.min(3, count - 1)];
      const b = model.coefficients;
      addTerms(out, matrix.data, n, count, j0 * n, b[j0], j1 * n, count > 1 ? b[j1] : 0, j2 * n, count > 2 ? b[j2] : 0, j3 * n, count > 3 ? b[j3] : 0);
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

/**
 * linearScore's pass over the rows for up to four columns (`count`): out_i += b0·x_i0, then
 * + b1·x_i1, … in that order, as one column a pass would add them. A function of its own with
 * one loop, so V8 optimizes it whole.
 */
function addTerms(
  out: Float64Array,
  data: Float64Array,
  n: number,
  count: number,
  o0: number,
  b0: number,
  o1: number,
  b1: number,
  o2: number,
  b2: number,
  o3: number,
  b3: number,
): void {
  if (count === 4) {
    for (let i = 0; i < n; i++) out[i] = out[i] + b0 * data[o0 + i] + b1 * data[o1 + i] + b2 * data[o2 + i] + b3 * data[o3 + i];
  } else if (count === 3) {
    for (let i = 0; i < n; i++) out[i] = out[i] + b0 * data[o0 + i] + b1 * data[o1 + i] + b2 * data[o2 + i];
  } else if (count === 2) {
    for (let i = 0; i < n; i++) out[i] = out[i] + b0 * data[o0 + i] + b1 * data[o1 + i];
  } else {
    for (let i = 0; i < n; i++) out[i] += b0 * data[o0 + i];
  }
}
