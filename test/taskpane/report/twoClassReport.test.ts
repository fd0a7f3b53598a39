/**
 * The report sheet (taskpane/report/report.ts) of a yes/no fit, built from a real fit of the
 * quality-check demo data (addin/demo/qualityData.ts) through the cells' request builder.
 *
 * Sources: "engine result" (the FitResult the report is built from), "demo data" (qualityTruth:
 * 296 complete rows, 73 of them fail), "definition" (odds ratio = e^log-odds; the share of
 * events is the mean of the 0/1 target), "common practice" (accuracy, sensitivity, specificity
 * from the four counts).
 */
import type { FitResult } from "../../../engine/fit";
import { prepare } from "../../../functions/api";
import type { Dataset } from "../../../functions/dataset";
import { InProcessRunner } from "../../../functions/inProcessRunner";
import { qualityColumns, qualityRows, qualityTruth } from "../../../addin/demo/qualityData";
import { blockArea, buildReport, CAUTION, TWO_CLASS_CAUTIONS } from "../../../taskpane/report/report";
import type { CellValue, ReportBlock, ReportSheet } from "../../../taskpane/host/sheetHost";

let result: FitResult;
let dataset: Dataset;
let report: ReportSheet;

function grids(): { target: unknown[][]; predictors: unknown[][] } {
  const last = qualityColumns.length - 1;
  return {
    target: [[qualityColumns[last]], ...qualityRows.map((row) => [row[last]])],
    predictors: [qualityColumns.slice(1, last), ...qualityRows.map((row) => row.slice(1, last))],
  };
}

beforeAll(async () => {
  const { target, predictors } = grids();
  const prepared = prepare(target, predictors, "0.5, 1", "folds=5; grid size=40; cutoff=0.3");
  dataset = prepared.dataset;
  result = await new InProcessRunner().fit(prepared.request);
  report = buildReport({
    result,
    dataset,
    settings: [
      { name: "mixes", value: "0.5, 1" },
      { name: "folds", value: 5 },
      { name: "grid size", value: 40 },
      { name: "cutoff", value: 0.3 },
    ],
    ranges: [
      { label: "target", address: "'Quality check'!N1:N301" },
      { label: "predictors", address: "'Quality check'!B1:M301" },
    ],
    timestamp: "2026-12-03 14:05",
  });
});

function blockStarting(first: CellValue): ReportBlock {
  const block = report.blocks.find((b) => b.rows[0]?.[0] === first);
  if (!block) throw new Error(`no block starts with ${String(first)}`);
  return block;
}

function rowsByLabel(block: ReportBlock): Map<CellValue, CellValue[]> {
  return new Map(block.rows.slice(1).map((row) => [row[0], row.slice(1)]));
}

test("the fit is a yes/no fit with the event 'fail' (demo data)", () => {
  expect(result.outcome).toBe("two-class");
  expect(dataset.classes).toMatchObject({ event: "fail", other: "pass", eventCount: qualityTruth.fails, otherCount: qualityTruth.completeRows - qualityTruth.fails });
});

test("the title block carries the shrinkage caution and the two yes/no cautions in plain words", () => {
  expect(report.blocks[0].rows.map((r) => r[0])).toEqual(["Shrinkwise report", "Made 2026-12-03 14:05", CAUTION, ...TWO_CLASS_CAUTIONS]);
  expect(TWO_CLASS_CAUTIONS[0]).toMatch(/only as good as the data's balance and coverage/);
  expect(TWO_CLASS_CAUTIONS[1]).toMatch(/business decision, not a statistical one/);
  expect(TWO_CLASS_CAUTIONS[1]).toMatch(/missed event costs against what a false alarm costs/);
});

test("data summary: the outcome, its classes and rows (demo data); the target's mean is the share of 'fail'", () => {
  const facts = rowsByLabel(blockStarting("data"));
  expect(facts.get("outcome")).toEqual(["yes/no (two classes)"]);
  expect(facts.get("event (the class whose probability is given)")).toEqual(["fail"]);
  expect(facts.get("other class")).toEqual(["pass"]);
  expect(facts.get("rows that are 'fail'")).toEqual([qualityTruth.fails]);
  expect(facts.get("rows that are 'pass'")).toEqual([qualityTruth.completeRows - qualityTruth.fails]);
  const target = rowsByLabel(blockStarting("column")).get("check (target: share that is 'fail')") as CellValue[];
  // 1e-15: a mean of 296 zeros and ones against the exact fraction.
  expect(Math.abs((target[0] as number) - qualityTruth.fails / qualityTruth.completeRows)).toBeLessThanOrEqual(1e-15);
  expect(target[1]).toBe("");
});

test("chosen point: the CV measure by name, in-sample log loss, Brier score and AUC in place of R² and RMSE (engine result)", () => {
  const rows = rowsByLabel(blockStarting("point"));
  const choices = result.choices as NonNullable<FitResult["choices"]>;
  expect(rows.get("CV deviance")).toEqual([choices.lowest.error, choices.oneSe.error]);
  const fit = result.classFit as NonNullable<FitResult["classFit"]>;
  expect(rows.get("in-sample log loss")).toEqual([fit.logLoss, ""]);
  expect(rows.get("in-sample Brier score")).toEqual([fit.brier, ""]);
  expect(rows.get("in-sample AUC")).toEqual([fit.auc, ""]);
  expect(rows.has("in-sample R²")).toBe(false);
});

test("the table at the cutoff in words: the engine's counts, adding up to the classes; rates from the counts", () => {
  const block = blockStarting("at cutoff 0.3");
  const rows = rowsByLabel(block);
  const fit = result.classFit as NonNullable<FitResult["classFit"]>;
  expect(fit.cutoff).toBe(0.3);
  expect(rows.get("flagged when the probability of 'fail' is at least")).toEqual([0.3]);
  expect(rows.get("events caught ('fail', flagged)")).toEqual([fit.eventsCaught]);
  expect(rows.get("events missed ('fail', not flagged)")).toEqual([fit.eventsMissed]);
  expect(rows.get("false alarms ('pass', flagged)")).toEqual([fit.falseAlarms]);
  expect(rows.get("correct all-clear ('pass', not flagged)")).toEqual([fit.correctAllClear]);
  expect(fit.eventsCaught + fit.eventsMissed).toBe(qualityTruth.fails);
  expect(fit.falseAlarms + fit.correctAllClear).toBe(qualityTruth.completeRows - qualityTruth.fails);
  const rate = (label: string): number => (rows.get(label) as number[])[0];
  // Common practice: accuracy, sensitivity and specificity from the four counts; 1e-15 for the division.
  expect(Math.abs(rate("accuracy (share on the right side of the cutoff)") - (fit.eventsCaught + fit.correctAllClear) / qualityTruth.completeRows)).toBeLessThanOrEqual(1e-15);
  expect(Math.abs(rate("sensitivity (share of events caught)") - fit.eventsCaught / qualityTruth.fails)).toBeLessThanOrEqual(1e-15);
  expect(Math.abs(rate("specificity (share of 'pass' cleared)") - fit.correctAllClear / (qualityTruth.completeRows - qualityTruth.fails))).toBeLessThanOrEqual(1e-15);
});

test("coefficients: log-odds of 'fail' with odds ratios e^b (definition), the reference shift at odds ratio 1", () => {
  const block = blockStarting("term");
  expect(block.rows[0]).toEqual(["term", "log-odds of 'fail'", "odds ratio", "log-odds per SD"]);
  expect(block.rows[1]).toEqual(["intercept", result.intercept, "", ""]);
  const byTerm = rowsByLabel(block);
  result.terms.forEach((term, j) => {
    const row = byTerm.get(term) as number[];
    expect(row[0]).toBe(result.coefficients[j]);
    expect(Math.abs(row[1] / Math.exp(result.coefficients[j]) - 1)).toBeLessThanOrEqual(1e-15);
    expect(row[2]).toBe(result.standardizedCoefficients[j]);
  });
  expect(byTerm.get(`shift: ${qualityTruth.referenceShift} (reference)`)).toEqual([0, 1, 0]);
});

test("CV table in the measure, the path chart in log-odds, blocks apart", () => {
  expect(blockStarting("mix").rows[0]).toEqual(["mix", "strength", "CV deviance", "± SE", "terms kept"]);
  expect(report.charts[0].yTitle).toBe("coefficient (log-odds per data unit)");
  const areas = report.blocks.map(blockArea);
  for (let a = 0; a < areas.length; a++) {
    for (let b = a + 1; b < areas.length; b++) {
      const A = areas[a];
      const B = areas[b];
      expect(A.top <= B.bottom && B.top <= A.bottom && A.left <= B.right && B.left <= A.right).toBe(false);
    }
  }
});

test("AUC: the CV rows say higher is better, the best point is the highest AUC", async () => {
  const { target, predictors } = grids();
  const prepared = prepare(target, predictors, "1", "folds=5; grid size=30; error=auc; rule=one-se");
  const fitted = await new InProcessRunner().fit(prepared.request);
  const sheet = buildReport({ result: fitted, dataset: prepared.dataset, settings: [], ranges: [], timestamp: "t" });
  const point = sheet.blocks.find((b) => b.rows[0]?.[0] === "point") as ReportBlock;
  expect(point.rows[0]).toEqual(["point", "chosen", "highest AUC point"]);
  expect(point.rows[1]).toEqual(["rule", "one-SE rule", "highest AUC"]);
  expect(point.rows.some((r) => r[0] === "CV AUC (higher is better)")).toBe(true);
  expect(sheet.blocks.find((b) => b.rows[0]?.[0] === "mix")?.rows[0][2]).toBe("CV AUC");
});
