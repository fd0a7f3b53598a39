/**
 * Engine results → the 2-D arrays the cell functions spill. Every array is rectangular; a
 * blank-looking cell is "" (never null, which Excel shows as 0); a number that can't be shown
 * (NaN, ±Infinity) becomes a #NUM! cell. Numbers are returned at full precision: formatting is
 * the workbook's business.
 */
import type { TwoClassScore } from "../engine/classMetrics";
import type { StabilityResult } from "../engine/assurance";
import type { ErrorMeasure, FitResult } from "../engine/fit";
import type { Score } from "../engine/metrics";
import type { OutcomeReading } from "../engine/outcome";
import { portableExp } from "../engine/portableMath";
import {
  CANNOT_BE_SELECTED,
  cvMeasureLabel,
  FALSE_SELECTION_LABEL,
  HONEST_LABEL,
  honestNote,
  INTERCEPT_LABEL,
  NEVER_PENALIZED,
  repeatsNote,
  stabilityBasisWords,
} from "../engine/words";
import type { Dataset, EncodedRow, TargetClasses } from "./dataset";
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
 * What a yes/no model's coefficients are, as every two-class header says it: `log-odds of 'fail'`.
 * SHRINK.APPLY reads "log-odds" in a coefficient header as the logistic link (dataset.ts).
 */
export function logOddsOf(classes: TargetClasses): string {
  return `log-odds of '${classes.event}'`;
}

/**
 * A cross-validation measure as a column header or CHOICE label: CV MSE, CV MAE, CV deviance
 * (binomial deviance per row), CV misclassified share, CV AUC (higher is better).
 */
export function measureLabel(measure: ErrorMeasure): string {
  return cvMeasureLabel(measure);
}

/** e^b for the odds-ratio column: #NUM! when it overflows (b above about 709). */
function oddsRatio(b: number): SpillCell {
  return numberCell(portableExp(b));
}

/**
 * SHRINK.COEFS: header, then term | coefficient. "intercept" first, then every term in the
 * order of the predictors' columns; a text column's reference level is listed before its
 * indicators as `Column: level (reference)` with coefficient 0, so the table shows it and
 * SHRINK.APPLY knows every level.
 * Example: [["term", "coefficient"], ["intercept", 1.5], ["Size", 0.2], ["Region: East (reference)", 0], ["Region: North", -0.7]]
 */
export function coefficientSpill(result: FitResult, dataset: Dataset): Spill {
  if (dataset.classes) return twoClassCoefficientSpill(result, dataset, dataset.classes);
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

/**
 * SHRINK.COEFS for a yes/no target: term | coefficient (log-odds of 'fail') | odds ratio. The odds
 * ratio is e^coefficient, the factor by which the odds of the event multiply per unit of the
 * predictor (for a level: against the reference level, whose row reads 1). The intercept's cell is
 * blank: e^intercept is no ratio but the odds where every predictor is 0, which moves with each
 * predictor's origin (a temperature in °C or °F) and is rarely a point in the data.
 * Example: [["term", "coefficient (log-odds of 'fail')", "odds ratio"], ["intercept", -2.1, ""], ["Size", 0.4, 1.49], …]
 */
function twoClassCoefficientSpill(result: FitResult, dataset: Dataset, classes: TargetClasses): Spill {
  const rows: Spill = [["term", `coefficient (${logOddsOf(classes)})`, "odds ratio"], [INTERCEPT, numberCell(result.intercept), ""]];
  let t = 0;
  const termRow = (): void => {
    const b = result.coefficients[t];
    rows.push([result.terms[t], numberCell(b), oddsRatio(b)]);
    t++;
  };
  for (const column of dataset.encoder.columns) {
    if (column.kind === "number") {
      termRow();
      continue;
    }
    if (column.reference !== null) rows.push([`${column.name}: ${column.reference}${REFERENCE}`, 0, 1]);
    for (let k = 0; k < column.levels.length; k++) termRow();
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
  const termsKept = result.coefficients.filter((b) => b !== 0).length;
  const notes = [...dataset.notes, ...result.warnings.map((w) => w.message)];
  // A yes/no target: what the model gives the probability of, before everything else.
  const classes = dataset.classes;
  const outcomeRows: Spill = classes
    ? [
        ["outcome", "yes/no (two-class)"],
        ["event", `'${classes.event}' (${classes.eventCount} of ${classes.eventCount + classes.otherCount} rows used; the other class is '${classes.other}')`],
        ["cutoff", numberCell(result.classFit ? result.classFit.cutoff : NaN)],
      ]
    : [];
  return [
    ["label", "value"],
    ...outcomeRows,
    ["strength", numberCell(result.strength)],
    ["strength ÷ top of grid", numberCell(result.strengthFraction)],
    ["mix", numberCell(result.mix)],
    [cv ? measureLabel(cv.measure) : "CV error", chosen ? numberCell(chosen.error) : "none"],
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
    ...assuranceRows(result),
  ];
}

/**
 * CHOICE's rows after `notes`: the repeats of the fold deal, and with honest error its estimate,
 * its SE and a note that the cross-validated error above (the one that chose) is optimistic.
 */
function assuranceRows(result: FitResult): Spill {
  const cv = result.cv;
  const repeats = cv ? cv.repeats : null;
  const rows: Spill = [["repeats", repeats === null ? "none" : repeats]];
  if (cv && repeats !== null && repeats > 1) rows.push(["repeats note", repeatsNote(repeats, cv.seed)]);
  const honest = result.honest;
  if (honest) {
    rows.push(
      [HONEST_LABEL, numberCell(honest.error)],
      ["honest ± SE", numberCell(honest.se)],
      ["honest error note", honestNote(measureLabel(honest.measure), honest.folds)],
    );
  }
  return rows;
}

/**
 * SHRINK.PATH: header (strength, terms kept, intercept, terms…), then one row per strength of
 * the chosen mix's path, strongest first.
 * For a yes/no target the intercept's header reads `intercept (log-odds of 'fail')`: every
 * coefficient of the table is in log-odds of the event.
 * Example: [["strength", "terms kept", "intercept", "x1"], [2.5, 0, 3.1, 0], [2.2, 1, 3.0, 0.04], …]
 */
export function pathSpill(result: FitResult, dataset?: Dataset): Spill {
  // A yes/no model's path is in log-odds: the intercept's header says so for every column.
  const interceptHeader = dataset?.classes ? `${INTERCEPT} (${logOddsOf(dataset.classes)})` : INTERCEPT;
  const rows: Spill = [["strength", "terms kept", interceptHeader, ...result.terms]];
  const path = result.path;
  for (let k = 0; k < path.strengths.length; k++) {
    rows.push([numberCell(path.strengths[k]), path.termsKept[k], numberCell(path.intercepts[k]), ...path.coefficients[k].map(numberCell)]);
  }
  return rows;
}

/**
 * SHRINK.CVCURVE: header, then mix | strength | mean CV error | its SE | terms kept for every
 * mix and strength tried (the error's header from measureLabel: CV MSE, CV MAE, CV deviance, CV
 * misclassified share, CV AUC (higher is better)). The caller checks that cross-validation ran.
 * Example: [["mix", "strength", "CV MSE", "± SE", "terms kept"], [0, 250, 10.2, 1.1, 3], …]
 */
export function cvCurveSpill(result: FitResult): Spill {
  const cv = result.cv;
  if (!cv) throw new Error("cvCurveSpill requires a cross-validated result");
  const rows: Spill = [["mix", "strength", measureLabel(cv.measure), "± SE", "terms kept"]];
  for (const row of cv.table) rows.push([row.mix, numberCell(row.strength), numberCell(row.error), numberCell(row.se), row.termsKept]);
  return rows;
}

/**
 * SHRINK.KEPT: header, then term | coefficient | kept in folds | same sign, one row per term
 * (the intercept, never penalized, is not listed), largest kept share first, ties in the order of
 * the predictors' columns. The shares are over the cross-validation fold models at the chosen
 * point (engine/keptShare.ts). A yes/no target's coefficient header says log-odds, as COEFS does.
 * Example: [["term", "coefficient", "kept in folds", "same sign"], ["Size", 0.2, 1, 1], ["Noise", 0, 0.2, 0.8]]
 *
 * When stability selection ran (setting `stability=yes`): two more columns, `stable share` (the
 * term's selection probability over the half-samples, engine/stability.ts) and `stable` (TRUE when
 * that share is at or above π: booleans, so the column filters), ties in kept share broken by the
 * larger stable share (a term that can't be selected, stableShareCell, shows why instead of a
 * share, and FALSE); then one footer row: `expected false selections at most` | the bound
 * q²/((2π − 1)·p) | q, π, p and the pairs in words | "" | "" | "".
 */
export function keptSpill(result: FitResult, dataset: Dataset): Spill {
  const shares = result.keptShare;
  if (!shares) throw new Error("keptSpill requires a cross-validated result");
  const coefficient = dataset.classes ? `coefficient (${logOddsOf(dataset.classes)})` : "coefficient";
  const stability = result.stability ?? null;
  const order = shares.map((_, j) => j);
  // A stable sort keeps the columns' order among equal shares.
  if (stability) order.sort((a, b) => shares[b].kept - shares[a].kept || stability.share[b] - stability.share[a]);
  else order.sort((a, b) => shares[b].kept - shares[a].kept);
  if (!stability) {
    const rows: Spill = [["term", coefficient, "kept in folds", "same sign"]];
    for (const j of order) rows.push([shares[j].term, numberCell(result.coefficients[j]), shares[j].kept, shares[j].sameSign]);
    return rows;
  }
  const rows: Spill = [["term", coefficient, "kept in folds", "same sign", "stable share", "stable"]];
  for (const j of order) {
    rows.push([shares[j].term, numberCell(result.coefficients[j]), shares[j].kept, shares[j].sameSign, stableShareCell(stability, j), stability.stable[j]]);
  }
  rows.push([FALSE_SELECTION_LABEL, numberCell(stability.falseSelectionBound), stabilityBasisWords(stability), "", "", ""]);
  return rows;
}

/**
 * A term's stable share, or for a term stability selection can't select (engine/stability.ts
 * `candidate`) why: a never-penalized term is in every model by the user's choice (the engine's
 * share 1), a constant or bound-held term in none (share 0). Either way `stable` is FALSE.
 */
export function stableShareCell(stability: StabilityResult, j: number): SpillCell {
  if (stability.candidate && !stability.candidate[j]) {
    return stability.share[j] > 0 ? NEVER_PENALIZED : CANNOT_BE_SELECTED;
  }
  return numberCell(stability.share[j]);
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
 * new_rows gives a "prediction" header cell (rows stay aligned; `output.header` instead for a
 * yes/no model: `probability of 'fail'`, `predicted class (cutoff 0.5)`); a blank row gives "";
 * a row missing a value gives a #N/A cell saying which.
 * Example: [["prediction"], [12.5], [""], [#N/A]]
 */
export function predictionSpill(header: boolean, rows: readonly EncodedRow[], predictions: ArrayLike<number>, output?: PredictionOutput): Spill {
  const out: Spill = header ? [[output ? output.header : "prediction"]] : [];
  const cell = output?.cell ?? numberCell;
  let k = 0;
  for (const row of rows) {
    if (row.kind === "blank") out.push([""]);
    else if (row.kind === "missing") out.push([cellError("notAvailable", row.reason)]);
    else out.push([cell(predictions[k++])]);
  }
  return out;
}

/** A level as the interval headers show it: 0.9 → "90%", 0.975 → "97.5%". */
export function levelText(level: number): string {
  return `${Number((level * 100).toPrecision(12))}%`;
}

/**
 * PREDICT with `interval`: prediction | low (90%) | high (90%) per row. An end that is unbounded
 * (too few rows for the level: CV+ needs ⌊(1 − level)(n + 1)⌋ ≥ 1) is an error value saying so.
 */
export function intervalSpill(
  header: boolean,
  rows: readonly EncodedRow[],
  predictions: ArrayLike<number>,
  low: ArrayLike<number>,
  high: ArrayLike<number>,
  level: number,
): Spill {
  const shown = levelText(level);
  const out: Spill = header ? [["prediction", `low (${shown})`, `high (${shown})`]] : [];
  const end = (value: number): SpillCell =>
    Number.isFinite(value)
      ? value
      : cellError(
          "notAvailable",
          `unbounded: a ${shown} interval needs at least ${Math.ceil(1 / (1 - level) - 1 - 1e-9)} rows with a held-out error; lower the interval level or add rows`,
        );
  let k = 0;
  for (const row of rows) {
    if (row.kind === "blank") out.push(["", "", ""]);
    else if (row.kind === "missing") out.push([cellError("notAvailable", row.reason), cellError("notAvailable", row.reason), cellError("notAvailable", row.reason)]);
    else {
      out.push([numberCell(predictions[k]), end(low[k]), end(high[k])]);
      k++;
    }
  }
  return out;
}

/** How predictions other than plain numbers are shown: a header cell, and a cell per prediction (default: the number). */
export interface PredictionOutput {
  /** The header cell, e.g. `probability of 'fail'` or `predicted class (cutoff 0.5)`. */
  header: string;
  cell?: (prediction: number) => SpillCell;
}

/** SCORE's log loss: an infinite one says why instead of showing #NUM!. */
function logLossCell(value: number): SpillCell {
  if (value === Infinity) return "infinite: an event was given probability 0, or a non-event probability 1";
  return numberCell(value);
}

/**
 * SHRINK.SCORE for a yes/no actual column: label | value. The event and its count, log loss
 * (mean negative log-likelihood, natural log), Brier score, AUC (Mann–Whitney; Hanley & McNeil
 * 1982), the cutoff and, at it, accuracy, sensitivity, specificity and the 2×2 table in words,
 * then pairs used and skipped and notes (the tie-break that picked the event).
 * Example (abridged): [["label", "value"], ["event", "'fail' (3 of 8 pairs)"], ["log loss", 0.41], …, ["events caught", 2], …]
 */
export function twoClassScoreSpill(score: TwoClassScore, reading: OutcomeReading & { kind: "two-class" }, skipped: number): Spill {
  return [
    ["label", "value"],
    ["event", `'${reading.event}' (${reading.eventCount} of ${reading.eventCount + reading.otherCount} pairs; the other class is '${reading.other}')`],
    ["log loss", logLossCell(score.logLoss)],
    ["Brier score", numberCell(score.brier)],
    ["AUC", numberCell(score.auc)],
    ["cutoff", score.cutoff],
    ["accuracy", numberCell(score.accuracy)],
    ["sensitivity", numberCell(score.sensitivity)],
    ["specificity", numberCell(score.specificity)],
    ["events caught", score.eventsCaught],
    ["events missed", score.eventsMissed],
    ["false alarms", score.falseAlarms],
    ["correct all-clear", score.correctAllClear],
    ["pairs used", score.count],
    ["pairs skipped", skipped],
    ["notes", reading.note ?? "none"],
  ];
}

/** The first cell of BASELINE's row that reports separation (SHRINK.APPLY refuses such a table). */
export const SEPARATION_LABEL = "separation";

/**
 * SHRINK.BASELINE for a yes/no target: the unpenalized logistic fit (maximum likelihood, the
 * engine's strength 0). Columns term | coefficient (log-odds of 'fail') | standard error | z |
 * p-value (z = coefficient ÷ SE, two-sided normal p-value: Wald tests, common practice); reference
 * levels listed as in SHRINK.COEFS; then a blank row and residual deviance, residual degrees of
 * freedom, null deviance, null degrees of freedom, the share of the null deviance explained, rows
 * used. SHRINK.APPLY reads the table down to the blank row (its header says log-odds).
 *
 * When the classes are separated (some combination of the predictors splits them perfectly or
 * nearly so), the estimates don't exist: the row above the header is `separation | message`, and
 * every standard error reads "none (separation: see row 1)" with z and p-value blank, rather than
 * numbers that would look meaningful.
 * Example: [["term", "coefficient (log-odds of 'fail')", "standard error", "z", "p-value"], ["intercept", -1.2, 0.4, -3, 0.0027], …]
 */
export function twoClassBaselineSpill(result: FitResult, dataset: Dataset): Spill {
  const baseline = result.baseline;
  const classes = dataset.classes;
  if (!baseline || !classes) throw new Error("twoClassBaselineSpill requires an unpenalized two-class result");
  const separation = baseline.separation ?? null;
  const aliased = new Set(baseline.aliased);
  const rows: Spill = [];
  if (separation) rows.push([SEPARATION_LABEL, separation.message, "", "", ""]);
  rows.push(["term", `coefficient (${logOddsOf(classes)})`, "standard error", "z", "p-value"]);
  const statistics = (se: number | null, z: number | null | undefined, p: number | null | undefined, isAliased: boolean): SpillCell[] => {
    if (separation) return ["none (separation: see row 1)", "", ""];
    if (isAliased) return ["aliased (a combination of other terms)", "", ""];
    if (se === null) return ["none (no spare rows)", "", ""];
    return [numberCell(se), z === null || z === undefined ? "" : numberCell(z), p === null || p === undefined ? "" : numberCell(p)];
  };
  rows.push([INTERCEPT, numberCell(result.intercept), ...statistics(baseline.interceptStandardError, baseline.interceptZ, baseline.interceptP, false)]);
  let t = 0;
  for (const column of dataset.encoder.columns) {
    if (column.kind === "text" && column.reference !== null) rows.push([`${column.name}: ${column.reference}${REFERENCE}`, 0, "", "", ""]);
    const count = column.kind === "number" ? 1 : column.levels.length;
    for (let k = 0; k < count; k++, t++) {
      const term = result.terms[t];
      rows.push([term, numberCell(result.coefficients[t]), ...statistics(baseline.standardErrors[t], baseline.zValues?.[t], baseline.pValues?.[t], aliased.has(term))]);
    }
  }
  const summary = (label: string, value: SpillCell): void => {
    rows.push([label, value, "", "", ""]);
  };
  rows.push(["", "", "", "", ""]);
  summary("residual deviance", numberCell(baseline.deviance ?? NaN));
  summary("residual degrees of freedom", baseline.degreesOfFreedom);
  summary("null deviance", numberCell(baseline.nullDeviance ?? NaN));
  summary("null degrees of freedom", numberCell(baseline.nullDegreesOfFreedom ?? NaN));
  summary("share of null deviance explained", numberCell(baseline.r2));
  summary("rows used", result.rowsUsed);
  return rows;
}
