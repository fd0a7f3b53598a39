/**
 * The pane's charts for a yes/no (two-class) fit, built from real engine fits of the quality-check
 * demo data (addin/demo/qualityData.ts) through the cells' request builder (functions/api.ts
 * prepare): log-odds per SD on the path and the bars, the CV chart in the chosen measure, and
 * for the AUC (higher is better) the title, the axis, the best point and the one-SE line below it.
 *
 * Sources: "engine result" (the FitResult drawn), "engine rule" (engine/fit.ts: for the AUC the
 * lowest-error rule takes the highest value and the one-SE rule looks one SE below it).
 * echarts' ES-module subpaths are mapped to its CommonJS build as in charts.test.ts.
 */
jest.mock("echarts/core", () => jest.requireActual("echarts"));
jest.mock("echarts/charts", () => ({ LineChart: () => undefined, BarChart: () => undefined }));
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

import type { FitResult } from "../../../engine/fit";
import { prepare } from "../../../functions/api";
import { InProcessRunner } from "../../../functions/inProcessRunner";
import { qualityColumns, qualityRows } from "../../../addin/demo/qualityData";
import {
  coefficientBarOptions,
  cvChartOptions,
  describeChart,
  pathChartOptions,
  renderChartSvg,
  STANDARDIZED_TITLE,
  type ChartOption,
} from "../../../taskpane/charts/charts";

type AnyRecord = Record<string, unknown>;

function grids(): { target: unknown[][]; predictors: unknown[][] } {
  const last = qualityColumns.length - 1;
  return {
    target: [[qualityColumns[last]], ...qualityRows.map((row) => [row[last]])],
    predictors: [qualityColumns.slice(1, last), ...qualityRows.map((row) => row.slice(1, last))],
  };
}

async function fitQuality(mixes: string, settings: string): Promise<FitResult> {
  const { target, predictors } = grids();
  return new InProcessRunner().fit(prepare(target, predictors, mixes, settings).request);
}

let deviance: FitResult;
let auc: FitResult;
let aucOneSe: FitResult;

beforeAll(async () => {
  deviance = await fitQuality("0.5, 1", "folds=5; grid size=40");
  auc = await fitQuality("0.5, 1", "folds=5; grid size=40; error=auc");
  aucOneSe = await fitQuality("0.5, 1", "folds=5; grid size=40; error=auc; rule=one-se");
});

function series(option: ChartOption, prefix: string): AnyRecord[] {
  return ((option.series ?? []) as AnyRecord[]).filter((s) => typeof s.id === "string" && s.id.startsWith(prefix));
}

function titleText(option: ChartOption): string {
  return String((option.title as AnyRecord).text);
}

describe("charts of a yes/no fit", () => {
  test("the fits are yes/no fits (engine result)", () => {
    for (const result of [deviance, auc, aucOneSe]) expect(result.outcome).toBe("two-class");
    expect(deviance.cv?.measure).toBe("deviance");
    expect(auc.cv?.measure).toBe("auc");
  });

  test("path and bars are in log-odds per SD, and say so; the path's values are coefficient × SD at the chosen strength (engine result)", () => {
    const path = pathChartOptions(deviance, { theme: "light", width: 450 });
    expect((path.yAxis as AnyRecord).name).toBe("standardized coefficient (log-odds per SD)");
    expect(STANDARDIZED_TITLE).toBe("standardized coefficient (per SD)"); // numbers keep theirs
    const chosen = deviance.path.strengths.indexOf(deviance.strength);
    for (const line of series(path, "term-")) {
      const j = deviance.terms.indexOf(String(line.name));
      if (deviance.coefficients[j] === 0) continue;
      const value = (line.data as number[][])[chosen][1];
      // 1e-12 relative: the same product, computed by way of the SD recovered from the result.
      expect(Math.abs(value - deviance.standardizedCoefficients[j])).toBeLessThanOrEqual(1e-12 * Math.abs(deviance.standardizedCoefficients[j]));
    }
    const bars = coefficientBarOptions(deviance, { theme: "light", width: 450 });
    expect((bars.xAxis as AnyRecord).name).toBe("standardized coefficient (log-odds per SD)");
    expect(String((bars.title as AnyRecord).subtext ?? "") + JSON.stringify(bars.title)).toContain("Log-odds of the event per SD");
    expect(describeChart("bars", deviance)).toMatch(/^Log-odds of the event per SD of each term/);
  });

  test("deviance: the CV chart is titled in its measure; the lowest point and the one-SE line above it as for errors", () => {
    const option = cvChartOptions(deviance, { theme: "light", width: 450 });
    expect(titleText(option)).toBe("Cross-validated deviance");
    expect((option.yAxis as AnyRecord).name).toBe("cross-validated deviance");
    const choices = deviance.choices as NonNullable<FitResult["choices"]>;
    const marked = series(option, "cv-mix-").find((s) => s.markPoint) as AnyRecord;
    const points = (marked.markPoint as { data: { name: string; coord: number[] }[] }).data;
    expect(points.map((p) => p.name)).toEqual(["lowest error", "one-SE rule"]);
    expect((marked.markLine as { data: { yAxis: number; name: string }[] }).data[0]).toMatchObject({ yAxis: choices.lowest.error + choices.lowest.se, name: "lowest error + 1 SE" });
  });

  test("AUC: 'higher is better' in the title and axis, the highest point marked, the one-SE line one SE below it (engine rule)", () => {
    for (const result of [auc, aucOneSe]) {
      const option = cvChartOptions(result, { theme: "light", width: 450 });
      expect(titleText(option)).toBe("Cross-validated AUC (higher is better)");
      expect((option.yAxis as AnyRecord).name).toBe("cross-validated AUC (higher is better)");
      const choices = result.choices as NonNullable<FitResult["choices"]>;
      // The best point is the highest CV AUC of its mix's curve (engine result).
      const table = (result.cv as NonNullable<FitResult["cv"]>).table;
      const best = Math.max(...table.map((r) => r.error));
      expect(choices.lowest.error).toBe(best);
      // The one-SE point lies within one SE below the best (engine rule), at a penalty at least as strong.
      expect(choices.oneSe.error).toBeGreaterThanOrEqual(choices.lowest.error - choices.lowest.se);
      expect(choices.oneSe.strength).toBeGreaterThanOrEqual(choices.lowest.strength);
      const marked = series(option, "cv-mix-").find((s) => s.markPoint) as AnyRecord;
      const points = (marked.markPoint as { data: { name: string; coord: number[]; label: { formatter: string } }[] }).data;
      expect(points.map((p) => p.name)).toEqual(["highest AUC", "one-SE rule"]);
      expect(points.map((p) => p.coord)).toEqual([
        [choices.lowest.strength, choices.lowest.error],
        [choices.oneSe.strength, choices.oneSe.error],
      ]);
      expect(points.map((p) => p.label.formatter.includes("(chosen)"))).toEqual(result.rule === "lowest" ? [true, false] : [false, true]);
      expect((marked.markLine as { data: { yAxis: number; name: string }[] }).data[0]).toMatchObject({ yAxis: choices.lowest.error - choices.lowest.se, name: "highest AUC − 1 SE" });
      const text = describeChart("cv", result);
      expect(text).toContain("Cross-validated AUC (higher is better) against λ");
      expect(text).toContain(`Marked: highest AUC `);
      expect(text).toContain(`Chosen: ${result.rule === "lowest" ? "highest AUC" : "one-SE rule"}.`);
    }
    // The path chart's band runs from the one-SE rule's λ to the highest AUC's, and says so.
    const path = pathChartOptions(aucOneSe, { theme: "light", width: 450 });
    expect(JSON.stringify(path.title)).toContain("to the highest AUC's");
  });

  test("renders to SVG without a DOM, titles included", () => {
    const svg = renderChartSvg("cv", auc, { theme: "dark", width: 400 });
    expect(svg.startsWith("<svg")).toBe(true);
    expect(svg).toContain("higher is better");
    expect(renderChartSvg("path", deviance, { theme: "light", width: 400 })).toContain("log-odds per SD");
  });
});

test("strength 0 of a yes/no fit is named the unpenalized logistic fit, not least squares", async () => {
  const baseline = await fitQuality("1", "strength=0");
  expect(baseline.strength).toBe(0);
  expect(JSON.stringify(pathChartOptions(baseline, { theme: "light", width: 400 }).title)).toContain("Unpenalized logistic fit (λ = 0): there is no path to draw.");
  expect(describeChart("path", baseline)).toBe("Coefficient path: not available for an unpenalized logistic fit (strength 0).");
  expect(String((coefficientBarOptions(baseline, { theme: "light", width: 400 }).title as AnyRecord).text)).toBe("Coefficients at unpenalized logistic fit (λ 0)");
});
