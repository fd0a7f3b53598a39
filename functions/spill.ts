/**
 * Engine results → the 2-D arrays the cell functions spill. Every array is rectangular; a
 * blank-looking cell is "" (never null, which Excel shows as 0); a number that can't be shown
 * (NaN, ±Infinity) becomes a #NUM! cell. Numbers are returned at full precision: formatting is
 * the workbook's business.
 */
import type { FitResult } from "../engine/fit";
import type { Score } from "../engine/metrics";
import { INTERCEPT_LABEL } from "../engine/words";
import type { Dataset, EncodedRow } from "./dataset";
import { cellError } from "./errors";

export type SpillCell = number | string | boolean | CustomFunctions.Error;
export type Spill = SpillCell[][];

/** A number for a cell: finite numbers as they are, anything else #NUM!. */
export function numberCell(value: number): SpillCell {
  return Number.isFinite(value) ? value : cellError("invalidNumber");
}

const INTERCEPT = INTERCEPT_LABEL;
const REFERENCE = " (reference)";

/**
 * SHRINK.COEFS: header, then term | coefficient. "intercept" first, then every term in the
 * order of the predictors' columns; a text column's reference level is listed before its
 * indicators as `Column: level (reference)` with coefficient 0, so the table shows it and
 * SHRINK.APPLY knows every level.
 * Example: [["term", "coefficient"], ["intercept", 1.5], ["Size", 0.2], ["Region: East (reference)", 0], ["Region: North", -0.7]]
 */
export function coefficientSpill(result: FitResult, dataset: Dataset): Spill {
  const rows: Spill = [["term", "coefficient"], [INTERCEPT, numberCell(result.intercept)]];
  let t = 0;
  for (const column of dataset.encoder.columns) {
    if (column.kind === "number") {
      rows.push([result.terms[t], numberCell(result.coefficients[t])]);
      t++;
      continue;
    }
    if (column.reference !== null) rows.push([`${column.name}: ${column.reference}${REFERENCE}`, 0]);
    for (let k = 0; k < column.levels.length; k++) {
      rows.push([result.terms[t], numberCell(result.coefficients[t])]);
      t++;
    }
  }
  return rows;
}

function ruleName(rule: FitResult["rule"]): string {
  if (rule === "lowest") return "lowest error";
  if (rule === "one-se") return "one-SE rule";
  return "fixed strength (no cross-validation)";
}

function foldMethod(result: FitResult, dataset: Dataset): string {
  if (!result.cv) return "none";
  if (result.cv.scheme === "labels") return `by fold column '${dataset.foldColumn ?? ""}'`;
  if (result.cv.scheme === "time") return "time order";
  return "random";
}

/**
 * SHRINK.CHOICE: label | value rows describing the chosen model. Without cross-validation
 * (a fixed strength) the cross-validation rows say "none".
 * Example (abridged): [["label", "value"], ["strength", 0.031], ["strength ÷ top of grid", 0.012], ["mix", 1], …]
 */
export function choiceSpill(result: FitResult, dataset: Dataset): Spill {
  const cv = result.cv;
  const choices = result.choices;
  const chosen = choices ? (result.rule === "one-se" ? choices.oneSe : choices.lowest) : null;
  const other = choices ? (result.rule === "one-se" ? choices.lowest : choices.oneSe) : null;
  // The other rule, named: "one-SE rule's strength" beside a lowest-error choice and back.
  const otherLabel = result.rule === "one-se" ? "lowest-error strength" : "one-SE rule's strength";
  const measure = cv ? cv.measure.toUpperCase() : null;
  const termsKept = result.coefficients.filter((b) => b !== 0).length;
  const notes = [...dataset.notes, ...result.warnings.map((w) => w.message)];
  return [
    ["label", "value"],
    ["strength", numberCell(result.strength)],
    ["strength ÷ top of grid", numberCell(result.strengthFraction)],
    ["mix", numberCell(result.mix)],
    [measure ? `CV ${measure}` : "CV error", chosen ? numberCell(chosen.error) : "none"],
    ["± SE", chosen ? numberCell(chosen.se) : "none"],
    ["rule", ruleName(result.rule)],
    [otherLabel, other ? numberCell(other.strength) : "none"],
    ["terms kept", termsKept],
    ["rows used", result.rowsUsed],
    ["rows skipped", dataset.rowsSkipped],
    ["folds", cv ? cv.folds : "none"],
    ["fold method", foldMethod(result, dataset)],
    ["seed", cv ? (cv.seed === null ? "not used" : cv.seed) : "none"],
    ["reference levels", dataset.referenceLevels.length > 0 ? dataset.referenceLevels.map((r) => `${r.column}: ${r.level}`).join("; ") : "none"],
    ["notes", notes.length > 0 ? notes.join("; ") : "none"],
  ];
}

/**
 * SHRINK.PATH: header (strength, terms kept, intercept, terms…), then one row per strength of
 * the chosen mix's path, strongest first.
 * Example: [["strength", "terms kept", "intercept", "x1"], [2.5, 0, 3.1, 0], [2.2, 1, 3.0, 0.04], …]
 */
export function pathSpill(result: FitResult): Spill {
  const rows: Spill = [["strength", "terms kept", INTERCEPT, ...result.terms]];
  const path = result.path;
  for (let k = 0; k < path.strengths.length; k++) {
    rows.push([numberCell(path.strengths[k]), path.termsKept[k], numberCell(path.intercepts[k]), ...path.coefficients[k].map(numberCell)]);
  }
  return rows;
}

/**
 * SHRINK.CVCURVE: header, then mix | strength | mean CV error | its SE | terms kept for every
 * mix and strength tried. The caller checks that cross-validation ran.
 * Example: [["mix", "strength", "CV MSE", "± SE", "terms kept"], [0, 250, 10.2, 1.1, 3], …]
 */
export function cvCurveSpill(result: FitResult): Spill {
  const cv = result.cv;
  if (!cv) throw new Error("cvCurveSpill requires a cross-validated result");
  const rows: Spill = [["mix", "strength", `CV ${cv.measure.toUpperCase()}`, "± SE", "terms kept"]];
  for (const row of cv.table) rows.push([row.mix, numberCell(row.strength), numberCell(row.error), numberCell(row.se), row.termsKept]);
  return rows;
}

/**
 * SHRINK.SCORE: label | value. R² of actual values that are all equal is #DIV/0!.
 * Example: [["label", "value"], ["MAE", 0.5], ["RMSE", 0.61], ["R²", 0.93], ["mean error (predicted − actual)", 0.1], ["pairs used", 4], ["pairs skipped", 0]]
 */
export function scoreSpill(score: Score, skipped: number): Spill {
  return [
    ["label", "value"],
    ["MAE", numberCell(score.mae)],
    ["RMSE", numberCell(score.rmse)],
    ["R²", Number.isFinite(score.r2) ? score.r2 : cellError("divisionByZero")],
    ["mean error (predicted − actual)", numberCell(score.bias)],
    ["pairs used", score.count],
    ["pairs skipped", skipped],
  ];
}

/**
 * SHRINK.BASELINE: term | coefficient | standard error (reference levels listed as in
 * SHRINK.COEFS), then a blank row and summary rows (residual SD, residual degrees of freedom,
 * R², rows used); SHRINK.APPLY reads the table up to the blank row. An aliased term shows coefficient 0
 * and "aliased" as its standard error; with no residual degrees of freedom the standard errors
 * read "none (no spare rows)".
 * Example: [["term", "coefficient", "standard error"], ["intercept", -3482258.6, 890420.4], …, ["", "", ""], ["residual SD", 304.85, ""], …]
 */
export function baselineSpill(result: FitResult, dataset: Dataset): Spill {
  const baseline = result.baseline;
  if (!baseline) throw new Error("baselineSpill requires a least-squares result");
  const aliased = new Set(baseline.aliased);
  const noSpare = "none (no spare rows)";
  const rows: Spill = [
    ["term", "coefficient", "standard error"],
    [INTERCEPT, numberCell(result.intercept), baseline.interceptStandardError === null ? noSpare : numberCell(baseline.interceptStandardError)],
  ];
  const termRow = (j: number): SpillCell[] => {
    const term = result.terms[j];
    const se = baseline.standardErrors[j];
    const seCell: SpillCell = aliased.has(term) ? "aliased (a combination of other terms)" : se === null ? noSpare : numberCell(se);
    return [term, numberCell(result.coefficients[j]), seCell];
  };
  let t = 0;
  for (const column of dataset.encoder.columns) {
    if (column.kind === "text" && column.reference !== null) rows.push([`${column.name}: ${column.reference}${REFERENCE}`, 0, ""]);
    const count = column.kind === "number" ? 1 : column.levels.length;
    for (let k = 0; k < count; k++) rows.push(termRow(t++));
  }
  rows.push(["", "", ""]);
  rows.push(["residual SD", numberCell(baseline.residualStandardDeviation), ""]);
  rows.push(["residual degrees of freedom", baseline.degreesOfFreedom, ""]);
  rows.push(["R²", numberCell(baseline.r2), ""]);
  rows.push(["rows used", result.rowsUsed, ""]);
  return rows;
}

/**
 * SHRINK.PREDICT / SHRINK.APPLY: one prediction per new row, as a column. A header row in
 * new_rows gives a "prediction" header cell (rows stay aligned); a blank row gives ""; a row
 * missing a value gives a #N/A cell saying which.
 * Example: [["prediction"], [12.5], [""], [#N/A]]
 */
export function predictionSpill(header: boolean, rows: readonly EncodedRow[], predictions: ArrayLike<number>): Spill {
  const out: Spill = header ? [["prediction"]] : [];
  let k = 0;
  for (const row of rows) {
    if (row.kind === "blank") out.push([""]);
    else if (row.kind === "missing") out.push([cellError("notAvailable", row.reason)]);
    else out.push([numberCell(predictions[k++])]);
  }
  return out;
}
