/**
 * The report sheet, as plain data: `buildReport` turns a finished fit (the engine's FitResult),
 * the encoded data it was fitted on (functions/dataset.ts), the settings and the ranges into a
 * `ReportSheet` (sheetHost.ts) that either sheet host writes out. Pure: no Office, no DOM.
 *
 * Layout (columns A to E hold the summary stack, the large tables sit to the right under the chart):
 *
 *   A1   title, when it was made, and the caution about shrunk coefficients
 *   A…   inputs (range addresses), settings, data summary (rows used and skipped, mean and SD of
 *        every column as fitted), text columns with their reference level, notes,
 *        the chosen point beside the other rule's point, the coefficient table
 *   G3   the chart of the coefficient path (log strength axis; coefficients in data units, as in
 *        the path table it plots, unlike the pane's path chart, which is per SD)
 *   G25  the cross-validation table (mix, strength, CV error, ± SE, terms kept)
 *   M25  the path table (strength, one column per term): the chart's data
 *
 * Numbers are written at full precision; number formats only change how they look.
 *
 * A yes/no (two-class) fit adds, in the same stack: two more cautions under the title (the
 * probabilities reflect the data's balance and coverage; the cutoff is a business decision), the
 * outcome and its classes in the data summary (the target's mean is the share of events), the CV
 * summary in its measure, in-sample log loss, Brier score and AUC in place of R² and RMSE, the
 * coefficients as log-odds with their odds ratios, and the table at the cutoff in words (events
 * caught, events missed, false alarms, correct all-clear) with accuracy, sensitivity and
 * specificity.
 */
import type { FitResult } from "../../engine/fit";
import type { TwoClassScore } from "../../engine/classMetrics";
import { INTERCEPT_LABEL, MIX_LABEL, RULE_WORDS } from "../../engine/words";
import type { Dataset } from "../../functions/dataset";
import { bestPointLabel, measureName, measureWithDirection, oddsRatio, type ClassCounts } from "../outcomeWords";
import { cellName, parseAddress, RangeAddress, spillArea } from "../host/address";
import type { CellValue, ReportBlock, ReportChart, ReportSheet } from "../host/sheetHost";
import { heldOutPoints, keptEntries, type HeldOutPoints } from "../charts/assuranceData";

export interface ReportInput {
  result: FitResult;
  /** The dataset the fit was made from (buildDataset / api.prepare). */
  dataset: Dataset;
  /** The settings as the pane shows them, name and value. */
  settings: readonly { name: string; value: CellValue }[];
  /** The ranges used, e.g. { label: "target", address: "'Roast log'!M1:M121" }. */
  ranges: readonly { label: string; address: string }[];
  /** When the report was made, as the pane writes it (e.g. "2026-12-03 14:05"). */
  timestamp: string;
  /** Wanted sheet name; default "Shrinkwise report". */
  name?: string;
  /** The `interval` setting (a level strictly between 0 and 1), or null/absent for none: the CV+ section measures intervals at it. */
  interval?: number | null;
  /** Held-out points already computed by the pane at `interval` (assuranceData.ts), to save computing them again. */
  heldOut?: HeldOutPoints | null;
}

export const REPORT_TITLE = "Shrinkwise report";
export const CAUTION =
  "Caution: penalized coefficients are shrunk toward zero on purpose. They are for prediction, not causal claims: a coefficient of zero does not mean a column has no effect, and a large one does not prove it causes anything.";

/** The cautions a yes/no fit adds under CAUTION: what its probabilities and its cutoff can and can't say. */
export const TWO_CLASS_CAUTIONS: readonly string[] = [
  "Caution: the probabilities are only as good as the data's balance and coverage. They carry the share of events in these rows, and they are trustworthy only for cases like the ones here: where the real share of events differs, or a case lies outside the range these rows cover, they will be off.",
  "Caution: the cutoff is a business decision, not a statistical one. Choose it by weighing what a missed event costs against what a false alarm costs; 0.5 is only a default.",
];

/** Number formats used on the report. */
export const FORMATS = {
  strength: "0.000E+00",
  mix: "0.00",
  count: "0",
  decimal: "0.0000",
} as const;


/** Where the right-hand zone starts (chart, then the large tables below it). */
const CHART_AT = "G3";
const TABLES_ROW = 25;
const CV_COLUMN = 7; // G
const GAP_COLUMNS = 1;

/** Mean and sample SD (n − 1) of a column of numbers; SD is "" with fewer than 2 values. */
export function meanAndSd(values: readonly number[]): { mean: number; sd: number | "" } {
  const n = values.length;
  if (n === 0) return { mean: NaN, sd: "" };
  let mean = 0;
  for (const v of values) mean += v;
  mean /= n;
  if (n < 2) return { mean, sd: "" };
  let sum = 0;
  for (const v of values) sum += (v - mean) * (v - mean);
  return { mean, sd: Math.sqrt(sum / (n - 1)) };
}

function ruleText(rule: FitResult["rule"], result?: FitResult): string {
  if (rule === "lowest" && result?.cv) return bestPointLabel(result.cv.measure);
  return rule === "fixed" ? "fixed strength (no cross-validation)" : RULE_WORDS[rule];
}

/** The two classes of a yes/no target as the data layer read them (functions/dataset.ts), or null (a number target). */
export function classesOf(dataset: Dataset): ClassCounts | null {
  return dataset.outcome === "two-class" ? dataset.classes : null;
}

/** A finite number, or "" for a value that can't be shown (NaN, ±Infinity). */
function num(value: number): CellValue {
  return Number.isFinite(value) ? value : "";
}

/** Stacks blocks down a column, one blank row between them. */
class Stack {
  readonly blocks: ReportBlock[] = [];
  constructor(
    private readonly column: number,
    private row: number,
  ) {}
  add(rows: CellValue[][], header: boolean, formats?: (string | null)[]): ReportBlock {
    const block: ReportBlock = { at: cellName(this.row, this.column), rows, header };
    if (formats) block.formats = formats;
    this.blocks.push(block);
    this.row += rows.length + 1;
    return block;
  }
}

/** Coefficient table rows: intercept, then terms in column order with reference levels shown. */
function coefficientRows(result: FitResult, dataset: Dataset): CellValue[][] {
  const twoClass = result.outcome === "two-class";
  const event = classesOf(dataset)?.event;
  const rows: CellValue[][] = twoClass
    ? [
        ["term", event === undefined ? "log-odds of the event" : `log-odds of '${event}'`, "odds ratio", "log-odds per SD"],
        [INTERCEPT_LABEL, num(result.intercept), "", ""],
      ]
    : [
        ["term", "coefficient", "standardized (per SD)"],
        [INTERCEPT_LABEL, num(result.intercept), ""],
      ];
  const termRow = (t: number): CellValue[] =>
    twoClass
      ? [result.terms[t], num(result.coefficients[t]), num(oddsRatio(result.coefficients[t])), num(result.standardizedCoefficients[t])]
      : [result.terms[t], num(result.coefficients[t]), num(result.standardizedCoefficients[t])];
  const encoded = dataset.encoder.columns.reduce((count, c) => count + (c.kind === "number" ? 1 : c.levels.length), 0);
  if (encoded !== result.terms.length) {
    // The dataset doesn't describe these terms: list the terms as they are.
    for (let t = 0; t < result.terms.length; t++) rows.push(termRow(t));
    return rows;
  }
  let t = 0;
  for (const column of dataset.encoder.columns) {
    if (column.kind === "number") {
      rows.push(termRow(t++));
      continue;
    }
    if (column.reference !== null) rows.push(twoClass ? [`${column.name}: ${column.reference} (reference)`, 0, 1, 0] : [`${column.name}: ${column.reference} (reference)`, 0, 0]);
    for (let k = 0; k < column.levels.length; k++) rows.push(termRow(t++));
  }
  return rows;
}

/** Data summary: counts, then mean and SD of the target and every term, as fitted. */
function dataRows(result: FitResult, dataset: Dataset): { facts: CellValue[][]; columns: CellValue[][] } {
  const facts: CellValue[][] = [
    ["data", "value"],
    ["rows used", dataset.rowsUsed],
    ["rows skipped (a blank or error cell)", dataset.rowsSkipped],
    ["header row", dataset.hasHeader ? "yes" : "no"],
    ["target", dataset.targetName],
    ["terms", dataset.names.length],
  ];
  const classes = result.outcome === "two-class" ? classesOf(dataset) : null;
  if (classes) {
    facts.push(
      ["outcome", "yes/no (two classes)"],
      ["event (the class whose probability is given)", classes.event],
      ["other class", classes.other],
      [`rows that are '${classes.event}'`, classes.eventCount],
      [`rows that are '${classes.other}'`, classes.otherCount],
    );
  }
  if (dataset.weightsColumn !== null) facts.push(["weights column", dataset.weightsColumn]);
  if (dataset.foldColumn !== null) facts.push(["fold column", dataset.foldColumn]);
  if (result.constantColumns.length > 0) facts.push(["constant (left out)", result.constantColumns.join(", ")]);
  const columns: CellValue[][] = [["column", "mean", "SD (n − 1)"]];
  const target = meanAndSd(dataset.target);
  if (classes) {
    // The target is 1 for the event, 0 otherwise: its mean is the share of events; an SD says nothing more.
    columns.push([`${dataset.targetName} (target: share that is '${classes.event}')`, num(target.mean), ""]);
  } else {
    columns.push([`${dataset.targetName} (target)`, num(target.mean), target.sd === "" ? "" : num(target.sd)]);
  }
  for (let j = 0; j < dataset.names.length; j++) {
    const values = dataset.predictors.map((row) => row[j]);
    const stats = meanAndSd(values);
    columns.push([dataset.names[j], num(stats.mean), stats.sd === "" ? "" : num(stats.sd)]);
  }
  return { facts, columns };
}

/** Text columns: reference level and the other levels (each a 0/1 term). */
function levelRows(dataset: Dataset): CellValue[][] | null {
  if (dataset.referenceLevels.length === 0) return null;
  const rows: CellValue[][] = [["text column", "reference level", "levels with a term"]];
  for (const reference of dataset.referenceLevels) {
    const column = dataset.encoder.columns.find((c) => c.kind === "text" && c.name === reference.column);
    rows.push([reference.column, reference.level, column && column.levels.length > 0 ? column.levels.join("; ") : "none (one level only)"]);
  }
  return rows;
}

/** The chosen point beside the other rule's point. */
function choiceRows(result: FitResult): CellValue[][] {
  const termsKept = result.coefficients.filter((b) => b !== 0).length;
  const choices = result.choices;
  const measure = result.cv ? measureWithDirection(result.cv.measure) : "";
  const classFit = result.outcome === "two-class" ? result.classFit : null;
  // In-sample accuracy: R² and RMSE for numbers; log loss, Brier score and AUC of the probabilities for yes/no.
  const inSample = (blank: CellValue[]): CellValue[][] =>
    classFit
      ? [
          ["in-sample log loss", num(classFit.logLoss), ...blank],
          ["in-sample Brier score", num(classFit.brier), ...blank],
          ["in-sample AUC", num(classFit.auc), ...blank],
        ]
      : [
          ["in-sample R²", num(result.fit.r2), ...blank],
          ["in-sample RMSE", num(result.fit.rmse), ...blank],
        ];
  if (!choices) {
    return [
      ["point", "chosen"],
      ["rule", ruleText(result.rule)],
      [MIX_LABEL, num(result.mix)],
      ["strength", num(result.strength)],
      ["strength ÷ top of grid", num(result.strengthFraction)],
      ["terms kept", termsKept],
      ...inSample([]),
    ];
  }
  const oneSeChosen = result.rule === "one-se";
  const chosen = oneSeChosen ? choices.oneSe : choices.lowest;
  const alternative = oneSeChosen ? choices.lowest : choices.oneSe;
  const best = result.cv ? bestPointLabel(result.cv.measure) : "lowest error";
  return [
    ["point", "chosen", oneSeChosen ? (best === "lowest error" ? "lowest-error point" : `${best} point`) : "one-SE rule's point"],
    ["rule", ruleText(result.rule, result), ruleText(oneSeChosen ? "lowest" : "one-se", result)],
    [MIX_LABEL, num(chosen.mix), num(alternative.mix)],
    ["strength", num(chosen.strength), num(alternative.strength)],
    ["strength ÷ top of grid", num(chosen.strengthFraction), num(alternative.strengthFraction)],
    [`CV ${measure}`, num(chosen.error), num(alternative.error)],
    ["± SE", num(chosen.se), num(alternative.se)],
    ["terms kept", chosen.termsKept, alternative.termsKept],
    ...inSample([""]),
  ];
}

/**
 * The in-sample table at the cutoff, in words (rows, or sums of weights when weights are given):
 * events caught, events missed, false alarms, correct all-clear, then accuracy, sensitivity and
 * specificity (engine/classMetrics.ts scoreTwoClass).
 */
export function cutoffRows(score: TwoClassScore, classes: ClassCounts | null): CellValue[][] {
  const event = classes ? `'${classes.event}'` : "the event";
  const other = classes ? `'${classes.other}'` : "the other class";
  return [
    [`at cutoff ${score.cutoff}`, "rows"],
    [`flagged when the probability of ${event} is at least`, num(score.cutoff)],
    [`events caught (${event}, flagged)`, num(score.eventsCaught)],
    [`events missed (${event}, not flagged)`, num(score.eventsMissed)],
    [`false alarms (${other}, flagged)`, num(score.falseAlarms)],
    [`correct all-clear (${other}, not flagged)`, num(score.correctAllClear)],
    ["accuracy (share on the right side of the cutoff)", num(score.accuracy)],
    ["sensitivity (share of events caught)", num(score.sensitivity)],
    [`specificity (share of ${other} cleared)`, num(score.specificity)],
  ];
}

/** The caution under the "how sure" sections: what chose the model, and what kept terms are. */
export const ASSURANCE_CAUTION =
  "Caution: the cross-validated error of the chosen point is optimistic, because that same error chose the model; the honest error re-runs the whole choice inside each outer fold. Kept and stable terms are predictive associations in these data, not causes.";

/** Repeats and the honest (nested cross-validation) error beside the optimistic one; null without cross-validation. */
export function honestRows(result: FitResult): CellValue[][] | null {
  const cv = result.cv;
  if (!cv) return null;
  const measure = measureWithDirection(cv.measure);
  const rows: CellValue[][] = [
    ["how sure: the error", "value"],
    ["cross-validation repeats (deals of the folds)", cv.repeats],
  ];
  const chosen = result.choices ? (result.rule === "one-se" ? result.choices.oneSe : result.choices.lowest) : null;
  const honest = result.honest ?? null;
  if (chosen) {
    rows.push([`optimistic CV ${measure} (it chose the model)`, num(honest ? honest.optimistic : chosen.error)], ["± SE (optimistic)", num(chosen.se)]);
  }
  if (honest) {
    rows.push(
      [`honest CV ${measure} (whole procedure, nested)`, num(honest.error)],
      ["± SE (honest, over the outer folds)", num(honest.se)],
      ["outer folds", honest.folds],
    );
  } else {
    rows.push(["honest CV error (whole procedure)", "not run (setting honest error=yes)"]);
  }
  return rows;
}

/**
 * The interval level and the measured CV+ half-widths over the training rows (assuranceData.ts):
 * median and 90th percentile, and the share of training rows inside their own interval (a rough
 * check). Null when no interval level is set. For a yes/no target, one line saying intervals are
 * for number targets.
 */
export function intervalRows(result: FitResult, points: HeldOutPoints | null, level: number | null): CellValue[][] | null {
  if (level === null) return null;
  const rows: CellValue[][] = [
    ["prediction intervals (CV+)", "value"],
    ["level", level],
  ];
  if (result.outcome === "two-class") {
    rows.push(["note", "prediction intervals are for number targets; a yes/no model gives probabilities"]);
    return rows;
  }
  if (!points) {
    rows.push(["note", "no cross-validation ran (fixed strength), so there are no held-out rows to build intervals from"]);
    return rows;
  }
  if (points.intervalNote) {
    rows.push(["note", points.intervalNote]);
    return rows;
  }
  rows.push([points.thinned ? "training rows measured (evenly spread)" : "training rows measured", points.rows.length]);
  rows.push(["held-out rows the intervals are built from", points.total]);
  rows.push(["median half-width", points.medianHalfWidth === null ? "" : Number.isFinite(points.medianHalfWidth) ? points.medianHalfWidth : "unbounded (too few rows for the level)"]);
  rows.push(["90th percentile half-width", points.p90HalfWidth === null ? "" : Number.isFinite(points.p90HalfWidth) ? points.p90HalfWidth : "unbounded (too few rows for the level)"]);
  rows.push(["share of training rows inside their own interval (rough check)", num(points.inside ?? NaN)]);
  rows.push([
    "note",
    "CV+ (Barber, Candès, Ramdas & Tibshirani 2021): for new rows like these, coverage is at least 1 − 2·(1 − level) in theory, and close to the level in practice; a training row's own residual helps build its interval, so the share above is only a rough check.",
  ]);
  return rows;
}

/** Kept shares (and stability selection) per term, largest kept share first, with the bound; null without cross-validation. */
export function keptRows(result: FitResult): CellValue[][] | null {
  const entries = keptEntries(result);
  if (entries.length === 0) return null;
  const s = result.stability ?? null;
  const rows: CellValue[][] = [s ? ["term", "kept in folds", "same sign", "stable share", "stable"] : ["term", "kept in folds", "same sign"]];
  for (const e of entries) {
    rows.push(s ? [e.name, num(e.kept), num(e.sameSign), num(e.stableShare ?? NaN), e.stable ? "yes" : "no"] : [e.name, num(e.kept), num(e.sameSign)]);
  }
  if (s) {
    rows.push([
      "bound on the expected number of falsely selected terms, q²/((2π − 1)·p)",
      num(s.falseSelectionBound),
    ]);
    rows.push([
      `stability selection at mix ${s.mix}: ${s.draws} pairs of complementary half-samples, q ${s.expectedTerms}, π ${s.threshold}, p ${s.candidates} candidate terms. ` +
        "The bound (Meinshausen & Bühlmann 2010; Shah & Samworth 2013) assumes the noise terms are selected no more often than chance and the selection does no worse than random guessing.",
    ]);
  }
  return rows;
}

/**
 * Builds the report sheet for a fit (layout in the file comment). The chart's block is the path
 * block itself (the same object, also in `blocks`).
 */
export function buildReport(input: ReportInput): ReportSheet {
  const { result, dataset } = input;
  const left = new Stack(1, 1);
  const twoClass = result.outcome === "two-class";
  left.add([[REPORT_TITLE], [`Made ${input.timestamp}`], [CAUTION], ...(twoClass ? TWO_CLASS_CAUTIONS.map((text): CellValue[] => [text]) : [])], true);
  if (input.ranges.length > 0) left.add([["input", "range"], ...input.ranges.map((r): CellValue[] => [r.label, r.address])], true);
  left.add([["setting", "value"], ...(input.settings.length > 0 ? input.settings.map((s): CellValue[] => [s.name, s.value]) : [["(all defaults)", ""]])], true);
  const data = dataRows(result, dataset);
  left.add(data.facts, true);
  left.add(data.columns, true, [null, FORMATS.decimal, FORMATS.decimal]);
  const levels = levelRows(dataset);
  if (levels) left.add(levels, true);
  const notes = [...dataset.notes, ...result.warnings.map((w) => w.message)];
  if (notes.length > 0) left.add([["notes"], ...notes.map((note): CellValue[] => [note])], true);
  left.add(choiceRows(result), true);
  if (twoClass && result.classFit) left.add(cutoffRows(result.classFit, classesOf(dataset)), true);
  left.add(coefficientRows(result, dataset), true);
  // How sure: repeats and honest error, intervals, kept shares and stability.
  const honest = honestRows(result);
  if (honest) left.add(honest, true);
  const level = input.interval ?? null;
  const points = level === null ? null : input.heldOut !== undefined && input.heldOut?.level === level ? input.heldOut : heldOutPoints(result, dataset.target, dataset.predictors, level);
  const intervals = intervalRows(result, points, level);
  if (intervals) left.add(intervals, true);
  const kept = keptRows(result);
  if (kept) left.add(kept, true, kept[0].length === 5 ? [null, FORMATS.decimal, FORMATS.decimal, FORMATS.decimal, null] : [null, FORMATS.decimal, FORMATS.decimal]);
  if (honest || kept) left.add([[ASSURANCE_CAUTION]], false);

  const blocks = [...left.blocks];
  let nextColumn = CV_COLUMN;
  const cv = result.cv;
  if (cv) {
    const rows: CellValue[][] = [["mix", "strength", `CV ${measureName(cv.measure)}`, "± SE", "terms kept"]];
    for (const row of cv.table) rows.push([num(row.mix), num(row.strength), num(row.error), num(row.se), row.termsKept]);
    blocks.push({ at: cellName(TABLES_ROW, nextColumn), rows, header: true, formats: [FORMATS.mix, FORMATS.strength, null, null, FORMATS.count] });
    nextColumn += rows[0].length + GAP_COLUMNS;
  }
  const path = result.path;
  const pathRows: CellValue[][] = [["strength", ...result.terms]];
  for (let k = 0; k < path.strengths.length; k++) pathRows.push([num(path.strengths[k]), ...path.coefficients[k].map(num)]);
  const pathBlock: ReportBlock = {
    at: cellName(TABLES_ROW, nextColumn),
    rows: pathRows,
    header: true,
    formats: [FORMATS.strength, ...result.terms.map(() => null)],
  };
  blocks.push(pathBlock);
  const chart: ReportChart = {
    title: `Coefficient path, Mix α (lasso share) = ${result.path.mix}`,
    block: pathBlock,
    // A log axis needs positive strengths (a least-squares fit has strength 0 only).
    logX: path.strengths.length > 0 && path.strengths.every((s) => s > 0),
    xTitle: "penalty strength λ",
    // The path table holds the coefficients as fitted, in each column's own units.
    yTitle: twoClass ? "coefficient (log-odds per data unit)" : "coefficient (data units)",
    at: CHART_AT,
  };
  return { name: input.name ?? REPORT_TITLE, blocks, charts: [chart] };
}

/** A block's rows padded with "" to a rectangle, and its width. */
export function blockRows(block: ReportBlock): { rows: CellValue[][]; width: number } {
  const width = Math.max(1, ...block.rows.map((row) => row.length));
  return { rows: block.rows.map((row) => (row.length === width ? row.slice() : [...row, ...new Array<CellValue>(width - row.length).fill("")])), width };
}

/** The cells a block covers on its sheet (sheet null). */
export function blockArea(block: ReportBlock): RangeAddress {
  const { rows, width } = blockRows(block);
  return spillArea(parseAddress(block.at), Math.max(1, rows.length), width);
}
