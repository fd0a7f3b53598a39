/**
 * The report sheet's "how sure is it" sections (taskpane/report/report.ts: honestRows,
 * intervalRows, keptRows) from real fits on the demo data.
 *
 * Sources: "engine result" (FitResult.cv.repeats, keptShare, honest, stability), Barber, Candès,
 * Ramdas & Tibshirani 2021 (CV+ intervals, through engine/conformal.ts predictionIntervals called
 * here directly: a second route to the half-widths), Meinshausen & Bühlmann 2010, Theorem 1 (the
 * bound q²/((2π − 1)·p)), "common practice" (nearest-rank percentile).
 */
import { predictionIntervals } from "../../../engine/conformal";
import { fromRows } from "../../../engine/matrix";
import type { FitResult } from "../../../engine/fit";
import { prepare } from "../../../functions/api";
import type { Dataset } from "../../../functions/dataset";
import { InProcessRunner } from "../../../functions/inProcessRunner";
import { roasteryColumns, roasteryRows } from "../../../addin/demo/roasteryData";
import { qualityColumns, qualityRows } from "../../../addin/demo/qualityData";
import { ASSURANCE_CAUTION, blockArea, buildReport, honestRows, intervalRows, keptRows } from "../../../taskpane/report/report";
import type { CellValue, ReportBlock, ReportSheet } from "../../../taskpane/host/sheetHost";

function grids(columns: readonly string[], rows: readonly (readonly unknown[])[]): { target: unknown[][]; predictors: unknown[][] } {
  const last = columns.length - 1;
  return {
    target: [[columns[last]], ...rows.map((row) => [row[last]])],
    predictors: [columns.slice(1, last), ...rows.map((row) => row.slice(1, last))],
  };
}

let result: FitResult;
let dataset: Dataset;
let twoClass: FitResult;
let twoClassData: Dataset;
/** The same demo fit with two deals of the folds and the honest error (engine options set directly). */
let sure: FitResult;
/** The demo fit with stability selection (5 pairs of half-samples, π 0.8). */
let stableFit: FitResult;

beforeAll(async () => {
  const runner = new InProcessRunner();
  const demo = grids(roasteryColumns, roasteryRows);
  const prepared = prepare(demo.target, demo.predictors, null, "folds=5; seed=3; grid size=40");
  dataset = prepared.dataset;
  result = await runner.fit(prepared.request);
  sure = await runner.fit({ ...prepared.request, options: { ...prepared.request.options, repeats: 2, honestError: true } });
  // The default grid (101 strengths): a 40-strength grid jumps past q = 3 selected terms after its first strengths.
  const gridded = prepare(demo.target, demo.predictors, null, "folds=5");
  stableFit = await runner.fit({ ...gridded.request, options: { ...gridded.request.options, stability: { draws: 5, threshold: 0.8 } } });
  const quality = grids(qualityColumns, qualityRows);
  const two = prepare(quality.target, quality.predictors, "1", "folds=5; grid size=30");
  twoClassData = two.dataset;
  twoClass = await runner.fit(two.request);
});

function report(fit: FitResult, data: Dataset, interval: number | null): ReportSheet {
  return buildReport({ result: fit, dataset: data, settings: [], ranges: [], timestamp: "2026-12-03 14:05", interval });
}

function blockStarting(sheet: ReportSheet, first: CellValue): ReportBlock | undefined {
  return sheet.blocks.find((b) => b.rows[0]?.[0] === first);
}

function value(rows: CellValue[][], label: string): CellValue {
  const row = rows.find((r) => r[0] === label);
  if (!row) throw new Error(`no row '${label}'`);
  return row[1];
}


test("intervals: the level, and the median and 90th-percentile half-widths over the training rows agree with engine/conformal.ts called directly", () => {
  const sheet = report(result, dataset, 0.9);
  const block = blockStarting(sheet, "prediction intervals (CV+)")!;
  expect(value(block.rows, "level")).toBe(0.9);
  const rows = result.heldOut!.row;
  const { low, high } = predictionIntervals(result, fromRows(rows.map((i) => dataset.predictors[i])), 0.9);
  const halves = Array.from(low)
    .map((lo, t) => (high[t] - lo) / 2)
    .sort((a, b) => a - b);
  expect(value(block.rows, "median half-width")).toBe(halves[Math.ceil(0.5 * halves.length) - 1]);
  expect(value(block.rows, "90th percentile half-width")).toBe(halves[Math.ceil(0.9 * halves.length) - 1]);
  expect(value(block.rows, "training rows measured")).toBe(rows.length);
  const inside = value(block.rows, "share of training rows inside their own interval (rough check)") as number;
  expect(inside).toBeGreaterThanOrEqual(0.8); // CV+: at least 1 − 2α in theory (Barber et al. 2021)
  expect(inside).toBeLessThanOrEqual(1);
  expect(blockStarting(report(result, dataset, null), "prediction intervals (CV+)")).toBeUndefined();
});

test("intervals on a yes/no target: one line saying they are for number targets", () => {
  const rows = intervalRows(twoClass, null, 0.9)!;
  expect(String(value(rows, "note"))).toContain("number targets");
  const sheet = report(twoClass, twoClassData, 0.9);
  expect(blockStarting(sheet, "prediction intervals (CV+)")).toBeDefined();
});

test("repeats and honest error: the repeats the fit used; the honest error and its SE beside the optimistic one", () => {
  const plain = honestRows(result)!;
  expect(value(plain, "cross-validation repeats (deals of the folds)")).toBe(result.cv!.repeats);
  expect(String(value(plain, "honest CV error (whole procedure)"))).toContain("not run");
  const rows = honestRows(sure)!;
  expect(value(rows, "cross-validation repeats (deals of the folds)")).toBe(2);
  expect(sure.cv!.repeats).toBe(2);
  const honest = sure.honest!;
  expect(value(rows, "honest CV MSE (whole procedure, nested)")).toBe(honest.error);
  expect(value(rows, "± SE (honest, over the outer folds)")).toBe(honest.se);
  expect(value(rows, "optimistic CV MSE (it chose the model)")).toBe(honest.optimistic);
  expect(value(rows, "outer folds")).toBe(honest.folds);
  // The optimistic error is the chosen point's (engine/assurance.ts HonestError.optimistic).
  expect(honest.optimistic).toBe((sure.rule === "one-se" ? sure.choices!.oneSe : sure.choices!.lowest).error);
  const sheet = buildReport({ result: sure, dataset, settings: [], ranges: [], timestamp: "t" });
  expect(sheet.blocks.some((b) => b.rows[0]?.[0] === ASSURANCE_CAUTION)).toBe(true);
  expect(ASSURANCE_CAUTION).toContain("not causes");
});

test("kept shares: one row per term, largest first, the engine's shares; with stability, its share, stable yes/no and the bound", () => {
  const plain = keptRows(result)!;
  expect(plain[0]).toEqual(["term", "kept in folds", "same sign"]);
  expect(plain.length - 1).toBe(result.terms.length);
  for (let k = 2; k < plain.length; k++) expect(plain[k - 1][1] as number).toBeGreaterThanOrEqual(plain[k][1] as number);
  for (const row of plain.slice(1)) {
    const share = result.keptShare!.find((s) => s.term === row[0])!;
    expect(row.slice(1)).toEqual([share.kept, share.sameSign]);
  }
  const fit = stableFit;
  const s = fit.stability!;
  const rows = keptRows(fit)!;
  expect(rows[0]).toEqual(["term", "kept in folds", "same sign", "stable share", "stable"]);
  const termRows = rows.slice(1, 1 + fit.terms.length);
  for (const row of termRows) {
    const j = fit.terms.indexOf(row[0] as string);
    expect(row[3]).toBe(s.share[j]);
    expect(row[4]).toBe(s.stable[j] ? "yes" : "no");
  }
  const boundRow = rows.find((r) => String(r[0]).startsWith("bound on the expected number"))!;
  // q²/((2π − 1)·p), Meinshausen & Bühlmann 2010, Theorem 1.
  const expected = (s.expectedTerms * s.expectedTerms) / ((2 * s.threshold - 1) * s.candidates);
  expect(Math.abs((boundRow[1] as number) - expected)).toBeLessThan(1e-12);
  expect(String(rows[rows.length - 1][0])).toContain("assumes");
});

test("the new blocks don't overlap any other block", () => {
  const sheet = buildReport({ result: { ...sure, stability: stableFit.stability }, dataset, settings: [], ranges: [], timestamp: "t", interval: 0.9 });
  const areas = sheet.blocks.map(blockArea);
  for (let a = 0; a < areas.length; a++) {
    for (let b = a + 1; b < areas.length; b++) {
      const p = areas[a];
      const q = areas[b];
      const apart = p.bottom < q.top || q.bottom < p.top || p.right < q.left || q.right < p.left;
      expect(apart).toBe(true);
    }
  }
});
