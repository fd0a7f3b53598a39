/**
 * The report sheet (taskpane/report/report.ts) built from a real fit on the demo data: every block's
 * content against the engine's result, the demo data themselves, or a hand computation.
 *
 * Sources: "engine result" (the FitResult the report is built from), "demo data"
 * (addin/demo/roasteryData.ts, README), "common practice" (arithmetic mean; sample SD with n − 1).
 */
import type { FitResult } from "../../../engine/fit";
import { prepare } from "../../../functions/api";
import type { Dataset } from "../../../functions/dataset";
import { InProcessRunner } from "../../../functions/inProcessRunner";
import { roasteryColumns, roasteryRows, roasteryTruth } from "../../../addin/demo/roasteryData";
import { parseAddress, rangeSize } from "../../../taskpane/host/address";
import { blockArea, buildReport, CAUTION, meanAndSd, REPORT_TITLE } from "../../../taskpane/report/report";
import type { CellValue, ReportBlock, ReportSheet } from "../../../taskpane/host/sheetHost";

const SETTINGS_TEXT = "folds=5; seed=3; grid size=40";

let result: FitResult;
let dataset: Dataset;
let report: ReportSheet;

function grids(): { target: unknown[][]; predictors: unknown[][] } {
  const last = roasteryColumns.length - 1;
  return {
    target: [[roasteryColumns[last]], ...roasteryRows.map((row) => [row[last]])],
    predictors: [roasteryColumns.slice(1, last), ...roasteryRows.map((row) => row.slice(1, last))],
  };
}

beforeAll(async () => {
  const { target, predictors } = grids();
  const prepared = prepare(target, predictors, null, SETTINGS_TEXT);
  dataset = prepared.dataset;
  result = await new InProcessRunner().fit(prepared.request);
  report = buildReport({
    result,
    dataset,
    settings: [
      { name: "folds", value: 5 },
      { name: "seed", value: 3 },
      { name: "grid size", value: 40 },
    ],
    ranges: [
      { label: "target", address: "'Roast log'!M1:M121" },
      { label: "predictors", address: "'Roast log'!B1:L121" },
    ],
    timestamp: "2026-12-03 14:05",
  });
});

/** The block whose header row starts with `first` (its first cell). */
function blockStarting(first: CellValue): ReportBlock {
  const block = report.blocks.find((b) => b.rows[0]?.[0] === first);
  if (!block) throw new Error(`no block starts with ${String(first)}`);
  return block;
}

/** label → row of a label | value… block. */
function rowsByLabel(block: ReportBlock): Map<CellValue, CellValue[]> {
  return new Map(block.rows.slice(1).map((row) => [row[0], row.slice(1)]));
}

/** Relative error check with an explicit tolerance. */
function expectRelative(actual: CellValue | undefined, expected: number, tolerance: number): void {
  expect(typeof actual).toBe("number");
  const scale = Math.max(Math.abs(expected), 1e-300);
  expect(Math.abs((actual as number) - expected) / scale).toBeLessThanOrEqual(tolerance);
}

test("the sheet is named, blocks don't overlap, every row of a block is within its area", () => {
  expect(report.name).toBe(REPORT_TITLE);
  const areas = report.blocks.map(blockArea);
  for (let a = 0; a < areas.length; a++) {
    for (let b = a + 1; b < areas.length; b++) {
      const A = areas[a];
      const B = areas[b];
      const overlap = A.top <= B.bottom && B.top <= A.bottom && A.left <= B.right && B.left <= A.right;
      expect(overlap).toBe(false);
    }
  }
  for (const block of report.blocks) {
    if (block.formats) expect(block.formats.length).toBeLessThanOrEqual(Math.max(...block.rows.map((r) => r.length)));
  }
});

test("title block: title, time stamp and the caution about shrunk coefficients", () => {
  const title = report.blocks[0];
  expect(title.at).toBe("A1");
  expect(title.rows.map((r) => r[0])).toEqual([REPORT_TITLE, "Made 2026-12-03 14:05", CAUTION]);
  expect(CAUTION).toMatch(/shrunk toward zero on purpose/);
  expect(CAUTION).toMatch(/for prediction, not causal claims/);
});

test("inputs and settings blocks list what was given", () => {
  expect(blockStarting("input").rows).toEqual([
    ["input", "range"],
    ["target", "'Roast log'!M1:M121"],
    ["predictors", "'Roast log'!B1:L121"],
  ]);
  expect(blockStarting("setting").rows.slice(1)).toEqual([
    ["folds", 5],
    ["seed", 3],
    ["grid size", 40],
  ]);
});

test("data summary: rows used and skipped (demo data: 4 blank cells on 4 rows), mean and SD by hand", () => {
  const facts = rowsByLabel(blockStarting("data"));
  expect(facts.get("rows used")).toEqual([116]);
  expect(facts.get("rows skipped (a blank or error cell)")).toEqual([4]);
  expect(facts.get("target")).toEqual(["score"]);
  expect(facts.get("terms")).toEqual([12]);

  // Common practice: arithmetic mean and sample SD (n − 1) over the complete rows.
  const complete = roasteryRows.filter((row) => row.every((v) => v !== null));
  const score = complete.map((row) => row[12] as number);
  const mean = score.reduce((s, v) => s + v, 0) / score.length;
  const sd = Math.sqrt(score.reduce((s, v) => s + (v - mean) ** 2, 0) / (score.length - 1));
  const columns = rowsByLabel(blockStarting("column"));
  const scoreRow = columns.get("score (target)") as CellValue[];
  expectRelative(scoreRow[0], mean, 1e-12);
  expectRelative(scoreRow[1], sd, 1e-12);
  // An indicator's mean is the share of complete rows at that level.
  const highland = complete.filter((row) => row[11] === "Highland").length / complete.length;
  expectRelative((columns.get("origin: Highland") as CellValue[])[0], highland, 1e-12);
  const moisture = meanAndSd(complete.map((row) => row[6] as number));
  expectRelative((columns.get("moisture") as CellValue[])[0], moisture.mean, 1e-12);
  expect(columns.size).toBe(13);
});

test("text columns: origin with its reference level (demo data: Coastal) and the other levels", () => {
  const levels = blockStarting("text column").rows;
  expect(levels[1][0]).toBe("origin");
  expect(levels[1][1]).toBe(roasteryTruth.referenceOrigin);
  expect(String(levels[1][2]).split("; ").sort()).toEqual(["Highland", "Valley"]);
});

test("chosen point: strength, mix and CV error are the engine's; the other rule's point beside it", () => {
  const block = blockStarting("point");
  expect(block.rows[0]).toEqual(["point", "chosen", "one-SE rule's point"]);
  const rows = rowsByLabel(block);
  const choices = result.choices;
  expect(choices).not.toBeNull();
  // Source: engine result.
  expect(rows.get("strength")?.[0]).toBe(result.strength);
  expect(rows.get("strength")?.[1]).toBe(choices?.oneSe.strength);
  expect(rows.get("Mix α (lasso share)")?.[0]).toBe(result.mix);
  expect(rows.get("rule")).toEqual(["lowest error", "one-SE rule"]);
  expect(rows.get("CV MSE")).toEqual([choices?.lowest.error, choices?.oneSe.error]);
  expect(rows.get("± SE")).toEqual([choices?.lowest.se, choices?.oneSe.se]);
  expect(rows.get("terms kept")?.[0]).toBe(result.coefficients.filter((b) => b !== 0).length);
  // Common practice: the one-SE point has the larger (or equal) penalty.
  expect(rows.get("strength")?.[1] as number).toBeGreaterThanOrEqual(rows.get("strength")?.[0] as number);
});

test("coefficient table: intercept first, terms in column order, reference level listed with 0 (engine result)", () => {
  const block = blockStarting("term");
  expect(block.rows[0]).toEqual(["term", "coefficient", "standardized (per SD)"]);
  expect(block.rows[1]).toEqual(["intercept", result.intercept, ""]);
  const byTerm = rowsByLabel(block);
  result.terms.forEach((term, j) => {
    expect(byTerm.get(term)).toEqual([result.coefficients[j], result.standardizedCoefficients[j]]);
  });
  expect(byTerm.get("origin: Coastal (reference)")).toEqual([0, 0]);
  expect(block.rows).toHaveLength(2 + result.terms.length + 1);
  // Order: the predictors' columns as in the data (demo data), origin's levels last.
  expect(block.rows.slice(2, 12).map((r) => r[0])).toEqual(roasteryColumns.slice(1, 11));
});

test("CV table: one row per mix and strength tried (engine result)", () => {
  const block = blockStarting("mix");
  const cv = result.cv;
  expect(cv).not.toBeNull();
  expect(block.rows[0]).toEqual(["mix", "strength", "CV MSE", "± SE", "terms kept"]);
  expect(block.rows).toHaveLength((cv?.table.length ?? 0) + 1);
  const k = 7;
  expect(block.rows[k + 1]).toEqual([cv?.table[k].mix, cv?.table[k].strength, cv?.table[k].error, cv?.table[k].se, cv?.table[k].termsKept]);
  expect(new Set(block.rows.slice(1).map((r) => r[0]))).toEqual(new Set([0, 0.25, 0.5, 0.75, 1]));
});

test("path table and its chart: strength then one column per term; log strength axis (engine result)", () => {
  const block = blockStarting("strength");
  expect(block.rows[0]).toEqual(["strength", ...result.terms]);
  expect(block.rows).toHaveLength(result.path.strengths.length + 1);
  expect(block.rows[1]).toEqual([result.path.strengths[0], ...result.path.coefficients[0]]);
  const lastRow = block.rows[block.rows.length - 1];
  expect(lastRow[0]).toBe(result.path.strengths[result.path.strengths.length - 1]);
  // The chosen strength is on the path.
  expect(block.rows.slice(1).some((r) => r[0] === result.strength)).toBe(true);
  expect(report.charts).toHaveLength(1);
  const chart = report.charts[0];
  expect(chart.block).toBe(block);
  expect(chart.logX).toBe(true);
  expect(chart.title).toBe(`Coefficient path, Mix α (lasso share) = ${result.path.mix}`);
  // It plots the path table, whose coefficients are as fitted (data units), not per SD: the axis says so.
  expect(chart.yTitle).toBe("coefficient (data units)");
  expect(chart.xTitle).toBe("penalty strength λ");
  // The chart sits clear of the tables below it.
  expect(parseAddress(chart.at).top).toBeLessThan(parseAddress(block.at).top);
  expect(rangeSize(blockArea(block)).columns).toBe(1 + result.terms.length);
});

test("a fixed strength of 0 (least squares): one point, no CV table, linear axis", async () => {
  const { target, predictors } = grids();
  const prepared = prepare(target, predictors, 1, "strength=0", [1]);
  const fixed = await new InProcessRunner().fit(prepared.request);
  const sheet = buildReport({ result: fixed, dataset: prepared.dataset, settings: [], ranges: [], timestamp: "t", name: "Baseline" });
  expect(sheet.name).toBe("Baseline");
  expect(sheet.blocks.some((b) => b.rows[0]?.[0] === "mix")).toBe(false);
  expect(sheet.charts[0].logX).toBe(false);
  const point = sheet.blocks.find((b) => b.rows[0]?.[0] === "point") as ReportBlock;
  expect(point.rows[0]).toEqual(["point", "chosen"]);
  expect(rowsByLabel(point).get("strength")).toEqual([0]);
  expect(sheet.blocks.find((b) => b.rows[0]?.[0] === "setting")?.rows[1]).toEqual(["(all defaults)", ""]);
  expect(sheet.blocks.some((b) => b.rows[0]?.[0] === "input")).toBe(false); // no ranges given: no inputs block
});

test("meanAndSd: one value has no SD; hand values (common practice)", () => {
  expect(meanAndSd([4])).toEqual({ mean: 4, sd: "" });
  const stats = meanAndSd([2, 4, 4, 4, 5, 5, 7, 9]);
  expect(stats.mean).toBe(5);
  expectRelative(stats.sd as number, Math.sqrt(32 / 7), 1e-15);
});
