/**
 * The "how sure is it" views (taskpane/charts/assuranceData.ts, assuranceCharts.ts) from real
 * fits on the demo data: held-out predictions against a second route through the fold models,
 * CV+ intervals against the engine's own interval routine, thinning, the kept-share bars and the
 * stability marks, the text alternatives, and SVG rendering without a DOM.
 *
 * Sources: "engine result" (FitResult.heldOut, foldModels, keptShare, stability), "definition"
 * (FitResult.heldOut: residual = y − that fold model's prediction, engine/fit.ts), Barber, Candès,
 * Ramdas & Tibshirani 2021 (CV+, via engine/conformal.ts), Meinshausen & Bühlmann 2010 and
 * Shah & Samworth 2013 (the bound, engine/assurance.ts), "common practice" (Pearson correlation;
 * nearest-rank percentile).
 *
 * echarts' ES-module subpaths map to its CommonJS full build, as in charts.test.ts.
 */
jest.mock("echarts/core", () => jest.requireActual("echarts"));
jest.mock("echarts/charts", () => ({ LineChart: () => undefined, BarChart: () => undefined, ScatterChart: () => undefined, CustomChart: () => undefined }));
jest.mock("echarts/components", () => ({
  GridComponent: () => undefined,
  LegendComponent: () => undefined,
  MarkAreaComponent: () => undefined,
  MarkLineComponent: () => undefined,
  MarkPointComponent: () => undefined,
  TitleComponent: () => undefined,
  TooltipComponent: () => undefined,
}));
jest.mock("echarts/features", () => ({ LabelLayout: () => undefined }));
jest.mock("echarts/renderers", () => ({ SVGRenderer: () => undefined, CanvasRenderer: () => undefined }));

import { Matrix } from "ml-matrix";
import { predictionIntervals } from "../../../engine/conformal";
import { fromRows } from "../../../engine/matrix";
import type { FitResult } from "../../../engine/fit";
import { prepare } from "../../../functions/api";
import type { Dataset } from "../../../functions/dataset";
import { InProcessRunner } from "../../../functions/inProcessRunner";
import { roasteryColumns, roasteryRows } from "../../../addin/demo/roasteryData";
import { qualityColumns, qualityRows } from "../../../addin/demo/qualityData";
import { correlation, heldOutPoints, keptEntries, nearestRank, thinEvenly, type HeldOutPoints } from "../../../taskpane/charts/assuranceData";
import {
  assuranceHeight,
  describeAssuranceChart,
  heldOutChartOptions,
  keptShareOptions,
  renderAssuranceSvg,
  sharedExtent,
  type AssuranceOption,
} from "../../../taskpane/charts/assuranceCharts";
import { COMPACT_WIDTH, formatNumber, PALETTES } from "../../../taskpane/charts/charts";

type AnyRecord = Record<string, unknown>;

function grids(columns: readonly string[], rows: readonly (readonly unknown[])[]): { target: unknown[][]; predictors: unknown[][] } {
  const last = columns.length - 1;
  return {
    target: [[columns[last]], ...rows.map((row) => [row[last]])],
    predictors: [columns.slice(1, last), ...rows.map((row) => row.slice(1, last))],
  };
}

let numberFit: FitResult;
let numberData: Dataset;
let twoClassFit: FitResult;
let fixedFit: FitResult;
let points: HeldOutPoints;
/** The demo fit with stability selection (5 pairs of half-samples, π 0.75 by default). */
let stableFit: FitResult;

beforeAll(async () => {
  const runner = new InProcessRunner();
  const demo = grids(roasteryColumns, roasteryRows);
  const prepared = prepare(demo.target, demo.predictors, null, "folds=5; seed=3; grid size=40");
  numberData = prepared.dataset;
  numberFit = await runner.fit(prepared.request);
  // The default grid (101 strengths): a 40-strength grid jumps past q = 3 selected terms after its first strengths.
  const gridded = prepare(demo.target, demo.predictors, null, "folds=5");
  stableFit = await runner.fit({ ...gridded.request, options: { ...gridded.request.options, stability: { draws: 5 } } });
  const fixed = prepare(demo.target, demo.predictors, "0.5", "strength=0.05");
  fixedFit = await runner.fit(fixed.request);
  const quality = grids(qualityColumns, qualityRows);
  const twoClass = prepare(quality.target, quality.predictors, "1", "folds=5; grid size=30");
  twoClassFit = await runner.fit(twoClass.request);
  points = heldOutPoints(numberFit, numberData.target, numberData.predictors, 0.9) as HeldOutPoints;
});


function seriesOf(option: AssuranceOption): AnyRecord[] {
  return (option.series ?? []) as AnyRecord[];
}

function byId(option: AssuranceOption, id: string): AnyRecord | undefined {
  return seriesOf(option).find((s) => s.id === id);
}

// ------------------------------------------------------------------------------------------
// Held-out points

test("held-out prediction = y − residual agrees with each row's fold model applied to its x (definition, two routes)", () => {
  const held = numberFit.heldOut!;
  const models = numberFit.foldModels!;
  expect(points.total).toBe(held.row.length);
  expect(points.thinned).toBe(false);
  for (let t = 0; t < points.rows.length; t++) {
    const i = points.rows[t];
    const model = models[held.fold[t]];
    const x = numberData.predictors[i];
    const direct = model.intercept + model.coefficients.reduce((sum, b, j) => sum + b * x[j], 0);
    expect(points.actual[t]).toBe(numberData.target[i]);
    expect(Math.abs(points.predicted[t] - direct)).toBeLessThanOrEqual(1e-9 * Math.max(1, Math.abs(direct)));
  }
});

test("correlation: the Pearson formula here agrees with ml-matrix's covariance route (common practice)", () => {
  const a = points.actual;
  const b = points.predicted;
  const m = new Matrix(a.map((v, i) => [v, b[i]]));
  const centred = m.clone().subRowVector(m.mean("column"));
  const cov = centred.transpose().mmul(centred);
  const expected = cov.get(0, 1) / Math.sqrt(cov.get(0, 0) * cov.get(1, 1));
  expect(Math.abs(correlation(a, b) - expected)).toBeLessThan(1e-12);
  expect(points.correlation).toBeGreaterThan(0.5); // the demo's model predicts: held-out predictions follow the actual scores
  expect(Number.isNaN(correlation([1, 1, 1], [1, 2, 3]))).toBe(true);
});

test("CV+ intervals at the training rows are engine/conformal.ts's at those x; median and 90th percentile half-widths by nearest rank", () => {
  const { low, high } = predictionIntervals(numberFit, fromRows(points.rows.map((i) => numberData.predictors[i])), 0.9);
  expect(points.low).toEqual(Array.from(low));
  expect(points.high).toEqual(Array.from(high));
  const halves = Array.from(low).map((lo, t) => (high[t] - lo) / 2);
  const sorted = [...halves].sort((p, q) => p - q);
  expect(points.medianHalfWidth).toBe(sorted[Math.ceil(0.5 * sorted.length) - 1]);
  expect(points.p90HalfWidth).toBe(sorted[Math.ceil(0.9 * sorted.length) - 1]);
  let inside = 0;
  points.actual.forEach((y, t) => (inside += y >= low[t] && y <= high[t] ? 1 : 0));
  expect(points.inside).toBe(inside / points.actual.length);
  // Barber et al. 2021: CV+ covers at least 1 − 2α (here 0.8) in theory; a training row's own residual is among those its interval uses.
  expect(points.inside as number).toBeGreaterThanOrEqual(0.8);
});

test("thinning keeps at most the cap, evenly spread, and the intervals at the kept rows don't change", () => {
  expect(thinEvenly(10, 4)).toEqual([0, 2, 5, 7]);
  expect(thinEvenly(3, 4)).toEqual([0, 1, 2]);
  const thin = heldOutPoints(numberFit, numberData.target, numberData.predictors, 0.9, { maxRows: 25 }) as HeldOutPoints;
  expect(thin.rows.length).toBe(25);
  expect(thin.thinned).toBe(true);
  expect(thin.total).toBe(points.total);
  expect(thin.correlation).toBe(points.correlation); // over every held-out row, not the plotted ones
  thin.rows.forEach((row, t) => {
    const k = points.rows.indexOf(row);
    expect(k).toBeGreaterThanOrEqual(0);
    expect(thin.low![t]).toBe(points.low![k]);
    expect(thin.high![t]).toBe(points.high![k]);
  });
  expect(describeAssuranceChart("heldOut", { result: numberFit, heldOut: thin })).toContain("25 plotted, evenly spread");
});

test("nearestRank: the ⌈p·n⌉-th smallest (common practice)", () => {
  expect(nearestRank([5, 1, 4, 2, 3], 0.5)).toBe(3);
  expect(nearestRank([5, 1, 4, 2, 3], 0.9)).toBe(5);
  expect(nearestRank([], 0.5)).toBeNull();
});

test("no level: points without intervals; a yes/no fit and a fixed strength: no points", () => {
  const plain = heldOutPoints(numberFit, numberData.target, numberData.predictors, null) as HeldOutPoints;
  expect(plain.low).toBeNull();
  expect(plain.inside).toBeNull();
  expect(heldOutPoints(twoClassFit, [], [], 0.9)).toBeNull();
  expect(heldOutPoints(fixedFit, numberData.target, numberData.predictors, 0.9)).toBeNull();
});

test("a level too high for the rows gives unbounded ends: no whiskers, and the note and text say why", () => {
  const n = points.total;
  const level = 1 - 0.5 / (n + 1); // ⌊α(n+1)⌋ = 0 (engine/conformal.ts lowerRank)
  const wide = heldOutPoints(numberFit, numberData.target, numberData.predictors, level) as HeldOutPoints;
  expect(wide.low!.every((v) => v === -Infinity)).toBe(true);
  const option = heldOutChartOptions({ result: numberFit, heldOut: wide }, { theme: "light", width: 420 });
  expect(byId(option, "intervals")).toBeUndefined();
  expect(String((option.title as AnyRecord).subtext)).toContain("too few rows");
  expect(describeAssuranceChart("heldOut", { result: numberFit, heldOut: wide })).toContain("unbounded");
});

// ------------------------------------------------------------------------------------------
// Held-out chart options

test("held-out chart: one point per plotted row at (actual, prediction), whiskers at each row's interval, 45° line over the shared range", () => {
  for (const theme of ["light", "dark"] as const) {
    const option = heldOutChartOptions({ result: numberFit, heldOut: points }, { theme, width: 420 });
    const scatter = byId(option, "points")!;
    const data = scatter.data as number[][];
    expect(data.length).toBe(points.rows.length);
    data.forEach((d, t) => expect([d[0], d[1]]).toEqual([points.actual[t], points.predicted[t]]));
    expect(scatter.color).toBe(PALETTES[theme].lines[0]);
    const whiskers = byId(option, "intervals")!;
    expect(whiskers.type).toBe("custom");
    const extent = sharedExtent(points);
    (whiskers.data as number[][]).forEach((d, t) => {
      expect(d[0]).toBe(points.actual[t]);
      expect(d[1]).toBe(Math.max(points.low![t], extent.min));
      expect(d[2]).toBe(Math.min(points.high![t], extent.max));
    });
    expect(byId(option, "diagonal")!.data).toEqual([
      [extent.min, extent.min],
      [extent.max, extent.max],
    ]);
    const x = option.xAxis as AnyRecord;
    const y = option.yAxis as AnyRecord;
    expect([x.min, x.max]).toEqual([y.min, y.max]);
    const legend = option.legend as AnyRecord;
    expect((legend.data as AnyRecord[]).map((d) => d.name)).toEqual(["held-out prediction", "prediction = actual", "90% CV+ interval"]);
  }
  const plain = heldOutPoints(numberFit, numberData.target, numberData.predictors, null) as HeldOutPoints;
  const without = heldOutChartOptions({ result: numberFit, heldOut: plain }, { theme: "light", width: 420 });
  expect(byId(without, "intervals")).toBeUndefined();
});

test("held-out chart for a yes/no fit or a fixed strength: no series, the title's note says why", () => {
  const two = heldOutChartOptions({ result: twoClassFit, heldOut: null }, { theme: "light", width: 360 });
  expect(seriesOf(two)).toHaveLength(0);
  expect(String((two.title as AnyRecord).subtext)).toContain("number targets");
  const fixed = heldOutChartOptions({ result: fixedFit, heldOut: null }, { theme: "light", width: 360 });
  expect(String((fixed.title as AnyRecord).subtext)).toContain("no cross-validation");
  expect(describeAssuranceChart("heldOut", { result: twoClassFit, heldOut: null })).toContain("yes/no");
});

test("held-out text alternative: correlation, share inside, median and 90th percentile half-width", () => {
  const text = describeAssuranceChart("heldOut", { result: numberFit, heldOut: points });
  expect(text).toContain(`for ${points.total} rows`);
  expect(text).toMatch(/correlation 0\.\d+/);
  expect(text).toContain("rows lie inside their own interval");
  expect(text).toContain("median half-width");
  expect(text).toContain("90th percentile");
});

// ------------------------------------------------------------------------------------------
// Kept share

test("kept-share bars: one per term, largest kept share first, values from FitResult.keptShare (engine result)", () => {
  const entries = keptEntries(numberFit);
  expect(entries).toHaveLength(numberFit.terms.length);
  for (let k = 1; k < entries.length; k++) expect(entries[k - 1].kept).toBeGreaterThanOrEqual(entries[k].kept);
  const option = keptShareOptions({ result: numberFit, heldOut: null }, { theme: "light", width: 420 });
  const bars = byId(option, "kept")!;
  expect(bars.data).toEqual(entries.map((e) => e.kept));
  expect((option.yAxis as AnyRecord).data).toEqual(entries.map((e) => e.name));
  entries.forEach((e) => expect(e.kept).toBe(numberFit.keptShare![e.index].kept));
  expect(byId(option, "stable-share")).toBeUndefined();
  expect((option.legend as AnyRecord).show).toBe(false);
});

test("with stability selection: a stable-share bar per term, π as a dashed line, a diamond per stable term with its own legend entry, the bound in the note", () => {
  const result = stableFit;
  const s = result.stability!;
  expect(s.draws).toBe(5);
  // The demo's strongest terms (true coefficients far from 0, addin/demo) are selected in most halves.
  expect(s.stable.filter(Boolean).length).toBeGreaterThan(0);
  const option = keptShareOptions({ result, heldOut: null }, { theme: "dark", width: 420 });
  const entries = keptEntries(result);
  expect(byId(option, "stable-share")!.data).toEqual(entries.map((e) => e.stableShare));
  const marks = byId(option, "stable-marks")!;
  expect(marks.symbol).toBe("diamond");
  expect((marks.data as unknown[][]).map((d) => d[1])).toEqual(entries.filter((e) => e.stable).map((e) => e.name));
  const line = (byId(option, "stable-share")!.markLine as AnyRecord).data as AnyRecord[];
  expect(line[0].xAxis).toBe(s.threshold);
  const legend = option.legend as AnyRecord;
  expect(legend.show).toBe(true);
  expect((legend.data as AnyRecord[]).find((d) => d.name === "stable (share ≥ π)")!.icon).toBe("diamond");
  const note = String((option.title as AnyRecord).subtext);
  expect(note).toContain(`Expected false selections ≤ ${formatNumber(s.falseSelectionBound)}`);
  // q²/((2π − 1)·p): Meinshausen & Bühlmann 2010, Theorem 1.
  const bound = (s.expectedTerms * s.expectedTerms) / ((2 * s.threshold - 1) * s.candidates);
  expect(Math.abs(s.falseSelectionBound - bound)).toBeLessThan(1e-12);
  const text = describeAssuranceChart("kept", { result, heldOut: null });
  expect(text).toContain(`${entries.filter((e) => e.stable).length} stable term`);
  expect(text).toContain("falsely selected");
});

test("kept share without cross-validation: empty chart saying why", () => {
  const option = keptShareOptions({ result: fixedFit, heldOut: null }, { theme: "light", width: 360 });
  expect(seriesOf(option)).toHaveLength(0);
  expect(describeAssuranceChart("kept", { result: fixedFit, heldOut: null })).toContain("no cross-validation");
});

test("compact layout below COMPACT_WIDTH: smaller text; heights grow with the terms and the plot", () => {
  const narrow = keptShareOptions({ result: numberFit, heldOut: null }, { theme: "light", width: COMPACT_WIDTH - 40 });
  const wide = keptShareOptions({ result: numberFit, heldOut: null }, { theme: "light", width: COMPACT_WIDTH + 40 });
  expect(((narrow.textStyle as AnyRecord).fontSize as number) < ((wide.textStyle as AnyRecord).fontSize as number)).toBe(true);
  const view = { result: stableFit, heldOut: points };
  expect(assuranceHeight("kept", view, 360)).toBeGreaterThan(assuranceHeight("kept", { result: numberFit, heldOut: points }, 360));
  expect(assuranceHeight("heldOut", view, 440)).toBeGreaterThan(assuranceHeight("heldOut", view, 320));
});

test("both charts render to SVG without a DOM, in both themes", () => {
  for (const theme of ["light", "dark"] as const) {
    const held = renderAssuranceSvg("heldOut", { result: numberFit, heldOut: points }, { theme, width: 380 });
    expect(held.startsWith("<svg")).toBe(true);
    expect(held).toContain("Held-out predictions vs actual");
    const kept = renderAssuranceSvg("kept", { result: stableFit, heldOut: null }, { theme, width: 380 });
    expect(kept).toContain("Kept share of each term");
    expect(kept).toContain(PALETTES[theme].background);
  }
});
