/**
 * The task pane's charts (taskpane/charts/charts.ts) built from real engine fits on the demo data
 * (addin/demo/roasteryData.ts): the echarts options against the engine's result, the two
 * palettes' contrast and colour-vision separation, the narrow-width layout, rendering to SVG
 * without a DOM (echarts server-side rendering), and, where Chromium is installed, the DOM half
 * (mountChart) in a real page from a webpack production bundle.
 *
 * Sources: "engine result" (the FitResult the chart is built from), "common practice" (the
 * WCAG 2.x relative-luminance contrast formula; population SD; CIE 1976 L*a*b* colour
 * difference), "from memory" (colour-vision simulation matrices).
 *
 * echarts' subpath entries (echarts/core, /charts, /components, /features, /renderers) are ES
 * modules, which jest's CommonJS runtime does not load untransformed. Here they map to echarts'
 * CommonJS full build (every chart and component already registered, so the installers are
 * no-ops). The real tree-shaken imports are exercised twice below: in a child process run by
 * tsx (which loads ES modules), and in the webpack bundle run in Chromium.
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

import { spawnSync } from "child_process";
import { mkdtempSync, readFileSync, rmSync, writeFileSync } from "fs";
import { tmpdir } from "os";
import { join, resolve } from "path";
import webpack from "webpack";
import * as echarts from "echarts";
import { fit, type FitResult } from "../../../engine/fit";
import { roasteryRows } from "../../../addin/demo/roasteryData";
import {
  barEntries,
  coefficientBarOptions,
  COMPACT_WIDTH,
  CV_AXES,
  cvChartOptions,
  DEFAULT_CV_AXIS,
  describeChart,
  escapeHtml,
  formatNumber,
  gridTops,
  LINE_PATTERNS,
  MIX_TITLE,
  PALETTES,
  pathChartOptions,
  pathMarks,
  renderChartSvg,
  seriesChartOptions,
  spreadsMatch,
  STANDARDIZED_TITLE,
  suggestedHeight,
  termSpreads,
  type ChartKind,
  type ChartOption,
  type ChartTheme,
  type Palette,
} from "../../../taskpane/charts/charts";
import { CHROMIUM, chromiumNeed, suiteGate } from "../../helpers/requirements";

const ROOT = resolve(__dirname, "..", "..", "..");
const THEMES: ChartTheme[] = ["light", "dark"];
const KINDS: ChartKind[] = ["path", "cv", "bars"];
const NAMES = [
  "temp_2min",
  "temp_4min",
  "temp_6min",
  "temp_8min",
  "temp_10min",
  "moisture",
  "density",
  "batch_kg",
  "roast_min",
  "humidity",
  "origin: Highland",
  "origin: Valley",
];

/** Demo data, complete rows, origin as Highland/Valley indicators against Coastal. */
function demo(): { x: number[][]; y: number[] } {
  const x: number[][] = [];
  const y: number[] = [];
  for (const row of roasteryRows) {
    if (row.some((cell) => cell === null)) continue;
    x.push([...(row.slice(1, 11) as number[]), row[11] === "Highland" ? 1 : 0, row[11] === "Valley" ? 1 : 0]);
    y.push(row[12] as number);
  }
  return { x, y };
}

const { x, y } = demo();
/** Population SD of each column (common practice; the engine's stated scale for standardized coefficients). */
const SPREADS = NAMES.map((_, j) => {
  const column = x.map((row) => row[j]);
  const mean = column.reduce((a, b) => a + b, 0) / column.length;
  return Math.sqrt(column.reduce((a, b) => a + (b - mean) ** 2, 0) / column.length);
});

let lowestRule: FitResult; // default mixes, lowest-error rule: mix 1 wins, several terms 0 at the choice
let onese: FitResult;
let ridge: FitResult; // mix 0 only: every term nonzero
let mae: FitResult;
let fixed: FitResult;
let leastSquares: FitResult;

beforeAll(() => {
  lowestRule = fit(x, y, { names: NAMES });
  onese = fit(x, y, { names: NAMES, rule: "one-se" });
  ridge = fit(x, y, { names: NAMES, mixes: [0] });
  mae = fit(x, y, { names: NAMES, mixes: [0.5, 1], measure: "mae", folds: 5 });
  fixed = fit(x, y, { names: NAMES, mixes: [0.5], strength: 0.05 });
  leastSquares = fit(x, y, { names: NAMES, mixes: [1], strength: 0 });
});

// ------------------------------------------------------------------------------------------
// Helpers

type AnyRecord = Record<string, unknown>;

function seriesOf(option: ChartOption): AnyRecord[] {
  return (option.series ?? []) as AnyRecord[];
}

function withIdPrefix(option: ChartOption, prefix: string): AnyRecord[] {
  return seriesOf(option).filter((s) => typeof s.id === "string" && s.id.startsWith(prefix));
}

function axis(option: ChartOption, which: "xAxis" | "yAxis"): AnyRecord {
  return option[which] as AnyRecord;
}

function relative(actual: number, expected: number): number {
  return Math.abs(actual - expected) / Math.abs(expected);
}

/** WCAG 2.x relative luminance of an sRGB colour "#rrggbb" (common practice). */
function luminance(hex: string): number {
  const channel = (k: number): number => {
    const c = parseInt(hex.slice(1 + 2 * k, 3 + 2 * k), 16) / 255;
    return c <= 0.04045 ? c / 12.92 : ((c + 0.055) / 1.055) ** 2.4;
  };
  return 0.2126 * channel(0) + 0.7152 * channel(1) + 0.0722 * channel(2);
}

/** WCAG 2.x contrast ratio (L1 + 0.05) / (L2 + 0.05), lighter over darker (common practice). */
function contrast(a: string, b: string): number {
  const [hi, lo] = [luminance(a), luminance(b)].sort((p, q) => q - p);
  return (hi + 0.05) / (lo + 0.05);
}

/**
 * Colour-vision deficiency simulation on linear RGB: Machado, Oliveira & Fernandes (2009)
 * matrices at full severity (from memory), then CIE L*a*b* (D65) for a colour difference.
 */
const SIMULATIONS: Record<string, number[][]> = {
  typical: [
    [1, 0, 0],
    [0, 1, 0],
    [0, 0, 1],
  ],
  protan: [
    [0.152286, 1.052583, -0.204868],
    [0.114503, 0.786281, 0.099216],
    [-0.003882, -0.048116, 1.051998],
  ],
  deutan: [
    [0.367322, 0.860646, -0.227968],
    [0.280085, 0.672501, 0.047413],
    [-0.01182, 0.04294, 0.968881],
  ],
  tritan: [
    [1.255528, -0.076749, -0.178779],
    [-0.078411, 0.930809, 0.147602],
    [0.004733, 0.691367, 0.3039],
  ],
};

function simulatedLab(hex: string, matrix: number[][]): number[] {
  const linear = [0, 1, 2].map((k) => {
    const c = parseInt(hex.slice(1 + 2 * k, 3 + 2 * k), 16) / 255;
    return c <= 0.04045 ? c / 12.92 : ((c + 0.055) / 1.055) ** 2.4;
  });
  const [r, g, b] = matrix.map((row) => Math.min(1, Math.max(0, row[0] * linear[0] + row[1] * linear[1] + row[2] * linear[2])));
  // sRGB (D65) to XYZ, then L*a*b* (common practice).
  const X = (0.4124 * r + 0.3576 * g + 0.1805 * b) / 0.95047;
  const Y = 0.2126 * r + 0.7152 * g + 0.0722 * b;
  const Z = (0.0193 * r + 0.1192 * g + 0.9505 * b) / 1.08883;
  const f = (t: number): number => (t > 216 / 24389 ? Math.cbrt(t) : (24389 / 27) * t / 116 + 16 / 116);
  return [116 * f(Y) - 16, 500 * (f(X) - f(Y)), 200 * (f(Y) - f(Z))];
}

/** Term line paths in echarts' SVG output: polylines (bevel joins) in one of the palette's hues. */
function termLinePaths(svg: string, palette: Palette): number {
  const paths = svg.match(/<path [^>]*stroke-linejoin="bevel"[^>]*>/g) ?? [];
  return paths.filter((p) => palette.lines.some((c) => p.includes(`stroke="${c}"`)) && !p.includes('stroke-opacity="0"')).length;
}

// ------------------------------------------------------------------------------------------
// Coefficient path

describe("coefficient path", () => {
  test("one line series per term against strength on an inverted log axis; values are coefficient × SD (ridge: every term nonzero)", () => {
    const option = pathChartOptions(ridge, { theme: "light", width: 450 });
    const lines = withIdPrefix(option, "term-");
    expect(lines).toHaveLength(NAMES.length);
    expect(lines.map((s) => s.name).sort()).toEqual([...NAMES].sort());
    const xAxis = axis(option, "xAxis");
    expect(xAxis.type).toBe("log");
    expect(xAxis.inverse).toBe(true);
    expect(String(xAxis.name)).toContain("penalty strength λ (log scale)");
    expect(axis(option, "yAxis").name).toBe("standardized coefficient (per SD)");
    const chosen = ridge.path.strengths.indexOf(ridge.strength);
    expect(chosen).toBeGreaterThanOrEqual(0);
    for (const line of lines) {
      const j = NAMES.indexOf(String(line.name));
      const data = line.data as number[][];
      // x: the path's strengths, in order (engine result).
      expect(data.map((p) => p[0])).toEqual(ridge.path.strengths);
      // At the chosen strength the value is the engine's standardized coefficient (engine result).
      expect(relative(data[chosen][1], ridge.standardizedCoefficients[j])).toBeLessThan(1e-12);
    }
  });

  test("the SD recovered from the result is each column's population SD (common practice)", () => {
    const recovered = termSpreads(lowestRule);
    NAMES.forEach((_, j) => {
      if (lowestRule.coefficients[j] !== 0) expect([NAMES[j], relative(recovered[j] as number, SPREADS[j]) < 1e-9]).toEqual([NAMES[j], true]);
    });
  });

  test("a light band 'within 1 SE' from the one-SE rule's strength to the lowest error's, one solid line 'chosen' at the rule's pick (engine result)", () => {
    for (const result of [lowestRule, onese]) {
      const option = pathChartOptions(result, { theme: "light", width: 360 });
      const choices = result.choices as NonNullable<FitResult["choices"]>;
      expect(choices.oneSe.strength).toBeGreaterThan(choices.lowest.strength);
      const band = withIdPrefix(option, "choice-band")[0];
      const area = band.markArea as { data: [{ xAxis: number; name: string }, { xAxis: number }][]; itemStyle: { color: string; opacity: number }; label: { show: boolean } };
      expect(area.data).toHaveLength(1);
      expect([area.data[0][0].xAxis, area.data[0][1].xAxis]).toEqual([choices.oneSe.strength, choices.lowest.strength]);
      expect(area.data[0][0].name).toBe("within 1 SE");
      expect(area.label.show).toBe(true);
      expect(area.itemStyle.opacity).toBeLessThanOrEqual(0.2); // light: the lines show through
      expect(band.z).toBeLessThan(withIdPrefix(option, "term-")[0].z as number); // behind the lines
      const line = withIdPrefix(option, "choices");
      expect(line).toHaveLength(1);
      const data = (line[0].markLine as { data: { xAxis: number; name: string; lineStyle: { type: string }; label: { formatter: string } }[] }).data;
      expect(data).toHaveLength(1);
      expect(data[0].xAxis).toBe(result.strength);
      expect(data[0].xAxis).toBe(result.rule === "lowest" ? choices.lowest.strength : choices.oneSe.strength);
      expect(data[0].lineStyle.type).toBe("solid");
      expect(data[0].label.formatter).toBe("chosen");
      expect(pathMarks(result)).toEqual({ band: [choices.oneSe.strength, choices.lowest.strength], line: { strength: result.strength, label: "chosen" } });
      const note = String((option.title as AnyRecord).subtext);
      expect(note).toContain("within 1 SE");
      expect(note).toContain(`chosen (${result.rule === "lowest" ? "lowest error" : "one-SE rule"})`);
    }
  });

  test("when both rules pick the same strength there is no band, just the line", () => {
    const choices = lowestRule.choices as NonNullable<FitResult["choices"]>;
    const same: FitResult = { ...lowestRule, choices: { lowest: choices.lowest, oneSe: { ...choices.lowest } } };
    const option = pathChartOptions(same, { theme: "light", width: 360 });
    expect(withIdPrefix(option, "choice-band")).toHaveLength(0);
    const data = (withIdPrefix(option, "choices")[0].markLine as { data: { xAxis: number; label: { formatter: string } }[] }).data;
    expect(data.map((d) => [d.xAxis, d.label.formatter])).toEqual([[same.strength, "chosen"]]);
    expect(String((option.title as AnyRecord).subtext)).not.toContain("within 1 SE");
    const text = describeChart("path", same);
    expect(text).not.toContain("band");
    expect(text).toContain(`chosen λ ${formatNumber(same.strength)} (both rules pick it)`);
  });

  test("the band and the line are drawn at their exact strengths (echarts would round a mark line's value to 2 decimals)", () => {
    for (const result of [lowestRule, onese]) {
      const chart = echarts.init(null, null, { renderer: "svg", ssr: true, width: 360, height: 400 });
      try {
        chart.setOption(pathChartOptions(result, { theme: "light", width: 360 }));
        const choices = result.choices as NonNullable<FitResult["choices"]>;
        const pixel = (strength: number): number => chart.convertToPixel({ xAxisIndex: 0 }, strength) as unknown as number;
        const svg = chart.renderToSVGString();
        // The line: a vertical path in the text colour, 1.5 px wide (echarts snaps it to the pixel grid).
        const line = new RegExp(`<path d="M([\\d.]+) [\\d.]+L([\\d.]+) [\\d.]+"[^>]*stroke="${PALETTES.light.text}" stroke-width="1.5"`).exec(svg);
        expect(line).not.toBeNull();
        expect(Math.abs(Number(line?.[1]) - pixel(result.strength))).toBeLessThanOrEqual(1);
        // The band: a polygon in the band colour, its left and right edges at the two strengths.
        const band = new RegExp(`<polygon points="([^"]+)" fill="${PALETTES.light.band}"`).exec(svg);
        const xs = (band?.[1] ?? "").split(" ").filter((_, k) => k % 2 === 0).map(Number);
        expect(Math.abs(Math.min(...xs) - pixel(choices.oneSe.strength))).toBeLessThanOrEqual(0.5);
        expect(Math.abs(Math.max(...xs) - pixel(choices.lowest.strength))).toBeLessThanOrEqual(0.5);
      } finally {
        chart.dispose();
      }
    }
  });

  test("a fixed-strength fit gets one line at its strength and no band; least squares (λ 0) has no path and says so", () => {
    const option = pathChartOptions(fixed, { theme: "light", width: 360 });
    const data = (withIdPrefix(option, "choices")[0].markLine as { data: { xAxis: number; label: { formatter: string } }[] }).data;
    expect(data.map((d) => [d.xAxis, d.label.formatter])).toEqual([[0.05, "fitted"]]);
    expect(withIdPrefix(option, "choice-band")).toHaveLength(0);
    const ls = pathChartOptions(leastSquares, { theme: "light", width: 360 });
    for (const line of withIdPrefix(ls, "term-")) expect(line.data).toEqual([]);
    expect(withIdPrefix(ls, "choices")).toHaveLength(0);
    expect(withIdPrefix(ls, "choice-band")).toHaveLength(0);
    expect(String((ls.title as AnyRecord).subtext)).toContain("no path");
    expect(describeChart("path", leastSquares)).toContain("not available");
  });

  test("terms 0 at the choice but not along the path are left out and named; matching SDs bring them back", () => {
    const hidden = NAMES.filter((_, j) => lowestRule.coefficients[j] === 0 && lowestRule.path.coefficients.some((row) => row[j] !== 0));
    expect(hidden.length).toBeGreaterThan(0); // the demo's lasso choice drops some terms (engine result)
    const option = pathChartOptions(lowestRule, { theme: "light", width: 450 });
    const drawn = withIdPrefix(option, "term-").map((s) => String(s.name));
    expect(drawn.sort()).toEqual(NAMES.filter((n) => !hidden.includes(n)).sort());
    const note = String((option.title as AnyRecord).subtext);
    for (const name of hidden) expect(note).toContain(name);

    const complete = pathChartOptions(lowestRule, { theme: "light", width: 450, spreads: SPREADS });
    const lines = withIdPrefix(complete, "term-");
    expect(lines).toHaveLength(NAMES.length);
    expect(String((complete.title as AnyRecord).subtext)).not.toContain("Not drawn");
    const chosen = lowestRule.path.strengths.indexOf(lowestRule.strength);
    for (const line of lines) {
      const j = NAMES.indexOf(String(line.name));
      const value = (line.data as number[][])[chosen][1];
      if (lowestRule.standardizedCoefficients[j] === 0) expect(value).toBe(0);
      else expect(relative(value, lowestRule.standardizedCoefficients[j])).toBeLessThan(1e-9);
    }
  });

  test("SDs that don't match the fit (another data set, or the wrong length) are ignored whole", () => {
    expect(spreadsMatch(lowestRule, SPREADS)).toBe(true);
    const stale = SPREADS.map((s) => s * 1.5);
    expect(spreadsMatch(lowestRule, stale)).toBe(false);
    expect(spreadsMatch(lowestRule, SPREADS.slice(1))).toBe(false);
    const option = pathChartOptions(lowestRule, { theme: "light", width: 450, spreads: stale });
    expect(withIdPrefix(option, "term-").length).toBeLessThan(NAMES.length);
  });

  test("the largest terms by |coefficient × SD| at the choice carry end labels: 3 when narrow, 5 when wide", () => {
    const ranked = NAMES.map((name, j) => ({ name, size: Math.abs(lowestRule.standardizedCoefficients[j]) }))
      .filter((t) => t.size > 0)
      .sort((a, b) => b.size - a.size)
      .map((t) => t.name);
    for (const [width, count] of [
      [320, 3],
      [450, 5],
    ]) {
      const option = pathChartOptions(lowestRule, { theme: "light", width });
      const labelled = withIdPrefix(option, "term-")
        .filter((s) => (s.endLabel as { show: boolean }).show)
        .map((s) => String(s.name));
      expect(labelled.sort()).toEqual(ranked.slice(0, count).sort());
    }
  });

  test("hue and pattern per rank: six hues, then dashed, then dotted", () => {
    const option = pathChartOptions(ridge, { theme: "light", width: 450 });
    withIdPrefix(option, "term-").forEach((line, rank) => {
      const style = line.lineStyle as { color: string; type: string };
      expect(style.color).toBe(PALETTES.light.lines[rank % 6]);
      expect(style.type).toBe(LINE_PATTERNS[Math.floor(rank / 6) % 3]);
    });
  });

  test("the hover text lists terms by size and escapes names taken from the sheet", () => {
    const rows: number[][] = [];
    const target: number[] = [];
    for (let i = 0; i < 40; i++) {
      const a = Math.sin(i);
      const b = Math.cos(1.3 * i);
      rows.push([a, b]);
      target.push(2 * a - 0.5 * b + 0.05 * Math.sin(7 * i));
    }
    const names = ['<img src=x onerror="alert(1)">', "a & b"];
    const result = fit(rows, target, { names, mixes: [1], folds: 4, strengthCount: 20 });
    const option = pathChartOptions(result, { theme: "light", width: 360 });
    const formatter = (option.tooltip as { formatter: (p: unknown) => string }).formatter;
    const params = withIdPrefix(option, "term-").map((s) => {
      const data = s.data as number[][];
      return { seriesId: s.id, seriesName: s.name, value: data[data.length - 1], marker: "" };
    });
    const html = formatter(params);
    expect(html).not.toContain("<img");
    expect(html).toContain(escapeHtml(names[0]));
    expect(html).toContain("a &amp; b");
    // Larger |value| first.
    const first = Math.abs((params[0].value as number[])[1]) >= Math.abs((params[1].value as number[])[1]) ? params[0] : params[1];
    expect(html.indexOf(escapeHtml(String(first.seriesName)))).toBeLessThan(html.indexOf(escapeHtml(String(params.find((p) => p !== first)?.seriesName))));
  });
});

// ------------------------------------------------------------------------------------------
// Cross-validation curve

describe("cross-validation curve", () => {
  test("one line per mix in the engine's table, each with a ± SE band drawn by stacking", () => {
    const option = cvChartOptions(lowestRule, { theme: "light", width: 360, cvAxis: "strength" });
    const table = (lowestRule.cv as NonNullable<FitResult["cv"]>).table;
    const mixes = [...new Set(table.map((r) => r.mix))];
    expect(mixes).toEqual([0, 0.25, 0.5, 0.75, 1]); // engine default mixes (engine result)
    const lines = withIdPrefix(option, "cv-mix-");
    expect(lines).toHaveLength(mixes.length);
    lines.forEach((line, i) => {
      const rows = table.filter((r) => r.mix === mixes[i]);
      expect(line.data).toEqual(rows.map((r) => [r.strength, r.error, r.se, r.termsKept]));
      const low = withIdPrefix(option, `cv-band-low-${i}`)[0];
      const band = withIdPrefix(option, `cv-band-${i}`)[0];
      expect(low.stack).toBe(band.stack);
      expect(low.data).toEqual(rows.map((r) => [r.strength, r.error - r.se]));
      expect(band.data).toEqual(rows.map((r) => [r.strength, 2 * r.se]));
      expect(band.areaStyle).toBeDefined();
      expect(low.areaStyle).toBeUndefined();
    });
    expect(axis(option, "xAxis").type).toBe("log");
  });

  test("the lowest-error and one-SE points are marked on the winning mix at the engine's choices", () => {
    for (const result of [lowestRule, onese]) {
      const option = cvChartOptions(result, { theme: "light", width: 450, cvAxis: "strength" });
      const choices = result.choices as NonNullable<FitResult["choices"]>;
      const mixes = [...new Set((result.cv as NonNullable<FitResult["cv"]>).table.map((r) => r.mix))];
      const best = withIdPrefix(option, `cv-mix-${mixes.indexOf(choices.lowest.mix)}`)[0];
      const points = (best.markPoint as { data: { coord: number[]; name: string; label: { formatter: string } }[] }).data;
      expect(points.map((p) => p.name)).toEqual(["lowest error", "one-SE rule"]);
      expect(points.map((p) => p.coord)).toEqual([
        [choices.lowest.strength, choices.lowest.error],
        [choices.oneSe.strength, choices.oneSe.error],
      ]);
      expect(points.map((p) => p.label.formatter.includes("chosen"))).toEqual(result.rule === "lowest" ? [true, false] : [false, true]);
      const threshold = (best.markLine as { data: { yAxis: number }[] }).data[0].yAxis;
      expect(threshold).toBe(choices.lowest.error + choices.lowest.se);
      // Only the winning mix carries markers.
      expect(withIdPrefix(option, "cv-mix-").filter((s) => s.markPoint)).toHaveLength(1);
    }
  });

  test("the hover text lists each mix whose grid covers the pointer, at its nearest strength (engine result)", () => {
    const option = cvChartOptions(lowestRule, { theme: "light", width: 360, cvAxis: "strength" });
    const formatter = (option.tooltip as { formatter: (p: unknown) => string }).formatter;
    const choices = lowestRule.choices as NonNullable<FitResult["choices"]>;
    const table = (lowestRule.cv as NonNullable<FitResult["cv"]>).table;
    const at = choices.lowest.strength;
    const html = formatter([{ seriesId: "cv-mix-4", axisValue: at, value: [at, choices.lowest.error, choices.lowest.se, choices.lowest.termsKept] }]);
    expect(html).toContain(`α = 1 (lasso): ${formatNumber(choices.lowest.error)} ± ${formatNumber(choices.lowest.se)}, ${choices.lowest.termsKept} terms kept`);
    for (const mix of [0.25, 0.5, 0.75]) {
      const rows = table.filter((r) => r.mix === mix);
      const near = rows.reduce((a, b) => (Math.abs(Math.log(b.strength / at)) < Math.abs(Math.log(a.strength / at)) ? b : a));
      expect(html).toContain(`α = ${mix}: ${formatNumber(near.error)} ± ${formatNumber(near.se)}`);
    }
    // At the lasso grid's weakest strength the elastic-net grids have ended: their tops are
    // λ_max/α, 4, 2 and 4/3 times the lasso's (Friedman et al. 2010 §2.5), with the same low end,
    // so their bottoms lie more than 15% above it (engine result): not listed.
    const lasso = table.filter((r) => r.mix === 1);
    const bottom = lasso[lasso.length - 1].strength;
    const below = formatter([{ seriesId: "cv-mix-4", axisValue: bottom, value: [bottom, lasso[lasso.length - 1].error, 0, 0] }]);
    expect(below).toContain("α = 1 (lasso)");
    for (const mix of [0.25, 0.5, 0.75]) {
      expect(Math.min(...table.filter((r) => r.mix === mix).map((r) => r.strength))).toBeGreaterThan(1.15 * bottom);
      expect(below).not.toContain(`α = ${mix}:`);
    }
  });

  test("each mix's grid top is the first strength of its rows; the engine's own figures agree (path.top, strengthFraction)", () => {
    const table = (lowestRule.cv as NonNullable<FitResult["cv"]>).table;
    const tops = gridTops(lowestRule);
    expect([...tops.keys()]).toEqual([0, 0.25, 0.5, 0.75, 1]);
    for (const [mix, top] of tops) {
      const rows = table.filter((r) => r.mix === mix);
      expect(top).toBe(rows[0].strength);
      expect(Math.max(...rows.map((r) => r.strength))).toBe(top); // the grid runs down from its top
    }
    // Engine result: the chosen mix's path starts at its grid top, and the choices' strengthFraction is strength ÷ that top.
    const choices = lowestRule.choices as NonNullable<FitResult["choices"]>;
    expect(lowestRule.path.mix).toBe(choices.lowest.mix);
    expect(tops.get(lowestRule.path.mix)).toBe(lowestRule.path.top);
    for (const point of [choices.lowest, choices.oneSe]) expect(relative(point.strength / (tops.get(point.mix) as number), point.strengthFraction)).toBeLessThan(1e-15);
    // Ridge's top sits far above the others' (the reason for the second axis).
    expect(tops.get(0) as number).toBeGreaterThan(50 * (tops.get(1) as number));
    expect(gridTops(fixed).size).toBe(0);
  });

  test.each(CV_AXES)("x axis '%s': x = strength (or strength ÷ that mix's top) for every line, band and marked point; log axis, inverted, titled", (cvAxis) => {
    const option = cvChartOptions(lowestRule, { theme: "light", width: 450, cvAxis });
    const table = (lowestRule.cv as NonNullable<FitResult["cv"]>).table;
    const tops = gridTops(lowestRule);
    const mixes = [...tops.keys()];
    const x = (mix: number, strength: number): number => (cvAxis === "fraction" ? strength / (tops.get(mix) as number) : strength);
    mixes.forEach((mix, i) => {
      const rows = table.filter((r) => r.mix === mix);
      const expected = rows.map((r) => x(mix, r.strength));
      expect((withIdPrefix(option, `cv-mix-${i}`)[0].data as number[][]).map((p) => p[0])).toEqual(expected);
      expect((withIdPrefix(option, `cv-band-low-${i}`)[0].data as number[][]).map((p) => p[0])).toEqual(expected);
      expect((withIdPrefix(option, `cv-band-${i}`)[0].data as number[][]).map((p) => p[0])).toEqual(expected);
      if (cvAxis === "fraction") expect(expected[0]).toBe(1); // every mix starts at its own top
    });
    const choices = lowestRule.choices as NonNullable<FitResult["choices"]>;
    const best = withIdPrefix(option, `cv-mix-${mixes.indexOf(choices.lowest.mix)}`)[0];
    const coords = (best.markPoint as { data: { coord: number[] }[] }).data.map((p) => p.coord[0]);
    // Engine result: on the fraction axis the marks sit at the choices' own strengthFraction.
    const wanted = cvAxis === "fraction" ? [choices.lowest.strengthFraction, choices.oneSe.strengthFraction] : [choices.lowest.strength, choices.oneSe.strength];
    coords.forEach((c, k) => expect(relative(c, wanted[k])).toBeLessThan(1e-15));
    const xAxis = axis(option, "xAxis");
    expect(xAxis.type).toBe("log");
    expect(xAxis.inverse).toBe(true);
    const all = table.map((r) => x(r.mix, r.strength));
    expect([xAxis.min, xAxis.max]).toEqual([Math.min(...all), Math.max(...all)]);
    const title = cvAxis === "fraction" ? "strength ÷ top of grid (log scale)" : "strength λ (log scale)";
    expect(String(xAxis.name)).toContain(title);
    expect(String(xAxis.name)).toContain("weaker");
    const compact = cvChartOptions(lowestRule, { theme: "light", width: 320, cvAxis });
    expect(String(axis(compact, "xAxis").name).split("\n")[0]).toBe(title);
    expect(describeChart("cv", lowestRule, null, cvAxis)).toContain(cvAxis === "fraction" ? "against strength ÷ top of grid" : "against λ");
  });

  test("the default x axis is λ itself (it reads better on the demo data; see DEFAULT_CV_AXIS)", () => {
    expect(DEFAULT_CV_AXIS).toBe("strength");
    // (The options hold formatter functions, new each time: compare their data.)
    expect(JSON.stringify(cvChartOptions(lowestRule, { theme: "light", width: 360 }))).toBe(JSON.stringify(cvChartOptions(lowestRule, { theme: "light", width: 360, cvAxis: "strength" })));
    expect(String((cvChartOptions(lowestRule, { theme: "light", width: 360, cvAxis: "fraction" }).title as AnyRecord).subtext)).toContain("divided by the top of its own grid");
  });

  test("on the fraction axis the hover text finds each mix's nearest point by its own fraction, and gives its λ", () => {
    const option = cvChartOptions(lowestRule, { theme: "light", width: 360, cvAxis: "fraction" });
    const formatter = (option.tooltip as { formatter: (p: unknown) => string }).formatter;
    const table = (lowestRule.cv as NonNullable<FitResult["cv"]>).table;
    const tops = gridTops(lowestRule);
    const at = 0.05;
    const html = formatter([{ seriesId: "cv-mix-0", axisValue: at }]);
    expect(html).toContain("strength ÷ top of grid ≈ 0.05");
    for (const [mix, top] of tops) {
      const rows = table.filter((r) => r.mix === mix);
      const near = rows.reduce((a, b) => (Math.abs(Math.log(b.strength / top / at)) < Math.abs(Math.log(a.strength / top / at)) ? b : a));
      expect(html).toContain(`${mix === 0 ? "α = 0 (ridge)" : mix === 1 ? "α = 1 (lasso)" : `α = ${mix}`}: ${formatNumber(near.error)} ± ${formatNumber(near.se)} at λ ${formatNumber(near.strength)}`);
    }
  });

  test("the y axis names the error measure", () => {
    expect(String(axis(cvChartOptions(lowestRule, { theme: "light", width: 360 }), "yAxis").name)).toContain("MSE");
    const option = cvChartOptions(mae, { theme: "dark", width: 360 });
    expect(String(axis(option, "yAxis").name)).toContain("MAE");
    expect(withIdPrefix(option, "cv-mix-")).toHaveLength(2);
  });

  test("a fixed-strength fit has no curve, and says why", () => {
    const option = cvChartOptions(fixed, { theme: "light", width: 360 });
    expect(seriesOf(option)).toEqual([]);
    expect(String((option.title as AnyRecord).subtext)).toContain("No cross-validation");
    expect(describeChart("cv", fixed)).toContain("No cross-validation");
  });
});

// ------------------------------------------------------------------------------------------
// Coefficient bars

describe("coefficient bars", () => {
  test("nonzero terms sorted by |coefficient × SD| descending, zero terms named in the note, no intercept", () => {
    const option = coefficientBarOptions(lowestRule, { theme: "light", width: 450 });
    const categories = axis(option, "yAxis").data as string[];
    const bars = seriesOf(option)[0].data as { value: number; name: string; itemStyle: { color: string } }[];
    const nonzero = NAMES.filter((_, j) => lowestRule.standardizedCoefficients[j] !== 0);
    expect(categories.slice().sort()).toEqual(nonzero.slice().sort());
    expect(categories).not.toContain("intercept");
    bars.forEach((bar, k) => {
      // Values: the engine's standardized coefficients (engine result).
      expect(bar.value).toBe(lowestRule.standardizedCoefficients[NAMES.indexOf(bar.name)]);
      expect(bar.name).toBe(categories[k]);
      if (k > 0) expect(Math.abs(bar.value)).toBeLessThanOrEqual(Math.abs(bars[k - 1].value));
      expect(bar.itemStyle.color).toBe(bar.value > 0 ? PALETTES.light.positive : PALETTES.light.negative);
    });
    const note = String((option.title as AnyRecord).subtext);
    for (const name of NAMES.filter((n) => !nonzero.includes(n))) expect(note).toContain(name);
    expect(note).toContain("intercept not shown");
    // The largest bar on top: the category axis runs top-down.
    expect(axis(option, "yAxis").inverse).toBe(true);
  });

  test("ridge: every term drawn, no zero note; barEntries agrees", () => {
    const option = coefficientBarOptions(ridge, { theme: "dark", width: 320 });
    expect((axis(option, "yAxis").data as string[]).length).toBe(NAMES.length);
    expect(String((option.title as AnyRecord).subtext)).not.toContain("Zero");
    expect(barEntries(ridge).zero).toEqual([]);
  });
});

// ------------------------------------------------------------------------------------------
// Palettes

describe("palettes", () => {
  test("the contrast formula gives the known values: 21:1 black on white, 4.54:1 for #767676 (common practice)", () => {
    expect(contrast("#000000", "#ffffff")).toBeCloseTo(21, 6);
    expect(Math.abs(contrast("#767676", "#ffffff") - 4.54)).toBeLessThan(0.01);
  });

  test.each(THEMES)("%s: text, lines and bars ≥ 4.5:1, axes ≥ 3:1 against the background (WCAG 2.x, common practice)", (theme) => {
    const p = PALETTES[theme];
    // Lines and bars are held to the text level (4.5:1), above WCAG's 3:1 for graphics.
    for (const [what, colour] of [["text", p.text], ["muted", p.muted], ["positive", p.positive], ["negative", p.negative], ...p.lines.map((c, k) => [`line ${k}`, c])]) {
      expect([what, contrast(colour, p.background) >= 4.5]).toEqual([what, true]);
    }
    expect(["axis", contrast(p.axis, p.background) >= 3]).toEqual(["axis", true]);
  });

  test.each(THEMES)("%s: the first line hue and the positive bars are the pane's own accent (taskpane.html --accent)", (theme) => {
    const html = readFileSync(join(ROOT, "taskpane", "taskpane.html"), "utf8");
    const block = theme === "light" ? /:root\s*\{([^}]*)\}/.exec(html) : /:root\[data-theme="dark"\]\s*\{([^}]*)\}/.exec(html);
    const accent = /--accent:\s*(#[0-9a-f]{6})/i.exec(block?.[1] ?? "")?.[1];
    expect(accent).toBeDefined();
    expect(PALETTES[theme].lines[0]).toBe(accent);
    expect(PALETTES[theme].positive).toBe(accent);
  });

  test.each(THEMES)("%s: the six line hues, and the two bar colours, stay apart (ΔE*ab ≥ 20) under typical and simulated protan, deutan and tritan vision", (theme) => {
    const { lines, positive, negative } = PALETTES[theme];
    expect(lines).toHaveLength(6);
    expect(new Set(lines).size).toBe(6);
    const pairs: [string, string][] = [[positive, negative]];
    for (let a = 0; a < lines.length; a++) for (let b = a + 1; b < lines.length; b++) pairs.push([lines[a], lines[b]]);
    for (const [vision, matrix] of Object.entries(SIMULATIONS)) {
      for (const [a, b] of pairs) {
        const [p, q] = [simulatedLab(a, matrix), simulatedLab(b, matrix)];
        const difference = Math.hypot(p[0] - q[0], p[1] - q[1], p[2] - q[2]);
        expect([vision, a, b, difference >= 20]).toEqual([vision, a, b, true]);
      }
    }
  });

  test.each(THEMES)("%s: every text in the options uses the palette's text or muted colour", (theme) => {
    const p = PALETTES[theme];
    const allowed = new Set([p.text, p.muted]);
    for (const build of [pathChartOptions, cvChartOptions, coefficientBarOptions]) {
      const option = build(lowestRule, { theme, width: 450 });
      expect(option.backgroundColor).toBe(p.background);
      const colours: string[] = [];
      const walk = (node: unknown, key: string): void => {
        if (Array.isArray(node)) node.forEach((n) => walk(n, key));
        else if (node && typeof node === "object") {
          for (const [k, v] of Object.entries(node)) {
            // Text style blocks: textStyle, nameTextStyle, axisLabel, label, endLabel, subtextStyle.
            if (/(text|label|subtext)/i.test(k) && v && typeof v === "object" && "color" in v) colours.push(String((v as AnyRecord).color));
            walk(v, k);
          }
        }
      };
      walk(option, "");
      expect(colours.length).toBeGreaterThan(3);
      for (const colour of colours) expect([build.name, colour, allowed.has(colour)]).toEqual([build.name, colour, true]);
    }
  });
});

// ------------------------------------------------------------------------------------------
// Narrow widths

describe("narrow widths", () => {
  test("320 px: smaller text, no path legend, fewer end labels, two-line axis name, shorter bar labels", () => {
    expect(COMPACT_WIDTH).toBeGreaterThan(320);
    expect(COMPACT_WIDTH).toBeLessThanOrEqual(450);
    const narrow = pathChartOptions(lowestRule, { theme: "light", width: 320 });
    const wide = pathChartOptions(lowestRule, { theme: "light", width: 450 });
    expect((narrow.textStyle as AnyRecord).fontSize).toBe(11);
    expect((wide.textStyle as AnyRecord).fontSize).toBe(12);
    expect((narrow.legend as AnyRecord).show).toBe(false);
    expect((wide.legend as AnyRecord).show).toBe(true);
    expect(String(axis(narrow, "xAxis").name)).toContain("\n");
    expect(String(axis(wide, "xAxis").name)).not.toContain("\n");
    const ends = (o: ChartOption): number => withIdPrefix(o, "term-").filter((s) => (s.endLabel as { show: boolean }).show).length;
    expect(ends(narrow)).toBeLessThan(ends(wide));
    // Same data either way.
    expect(withIdPrefix(narrow, "term-").length).toBe(withIdPrefix(wide, "term-").length);
    const barsNarrow = coefficientBarOptions(lowestRule, { theme: "light", width: 320 });
    const barsWide = coefficientBarOptions(lowestRule, { theme: "light", width: 450 });
    const labelWidth = (o: ChartOption): number => (axis(o, "yAxis").axisLabel as { width: number }).width;
    expect(labelWidth(barsNarrow)).toBeLessThan(labelWidth(barsWide));
    expect((axis(barsNarrow, "yAxis").axisLabel as AnyRecord).overflow).toBe("truncate");
    // The CV legend stays (mixes are few) but drops the word "mix" when narrow.
    const legendFormatter = (cvChartOptions(lowestRule, { theme: "light", width: 320 }).legend as { formatter: (n: string) => string }).formatter;
    expect(legendFormatter("α = 0 (ridge)")).toBe("0 (ridge)");
  });

  test("plot margins leave the plot most of the width, and the suggested height grows with the notes and bars", () => {
    for (const width of [320, 450]) {
      for (const kind of KINDS) {
        const option = (kind === "path" ? pathChartOptions : kind === "cv" ? cvChartOptions : coefficientBarOptions)(lowestRule, { theme: "light", width });
        const grid = option.grid as { left: number; right: number };
        expect([kind, width, width - grid.left - grid.right >= width * 0.45]).toEqual([kind, width, true]);
      }
    }
    expect(suggestedHeight("bars", ridge, 360)).toBeGreaterThan(suggestedHeight("bars", lowestRule, 360));
    expect(suggestedHeight("path", lowestRule, 320)).toBeGreaterThan(suggestedHeight("path", lowestRule, 320, SPREADS));
  });
});

// ------------------------------------------------------------------------------------------
// Wording

/** Every text a reader sees in an option: titles, notes, axis names, legend entries, series names, mark labels. */
function shownTexts(option: ChartOption): string[] {
  const texts: string[] = [];
  const walk = (node: unknown, key: string): void => {
    if (typeof node === "string") {
      if (["text", "subtext", "name", "formatter", "legend"].includes(key)) texts.push(node);
    } else if (Array.isArray(node)) node.forEach((n) => walk(n, key));
    else if (node && typeof node === "object") for (const [k, v] of Object.entries(node)) walk(v, k === "data" && key === "legend" ? "legend" : k);
  };
  walk(option, "");
  return texts;
}

describe("wording", () => {
  test("rule names are 'lowest error' and 'one-SE rule', counts say 'terms kept', the mix is 'Mix α (lasso share)' (legend entries 'α = …')", () => {
    const seen = new Set<string>();
    for (const result of [lowestRule, onese, ridge, mae, fixed, leastSquares]) {
      for (const width of [320, 450]) {
        for (const kind of KINDS) {
          const option = (kind === "path" ? pathChartOptions : kind === "cv" ? cvChartOptions : coefficientBarOptions)(result, { theme: "light", width });
          for (const text of [...shownTexts(option), describeChart(kind, result)]) {
            seen.add(text);
            expect([text, /\bmin\b|\bnonzero\b|\blowest(?! error)|one-SE(?! rule)|(?<!(within|±|\+) )1 SE/i.test(text)]).toEqual([text, false]);
            // "mix" only inside the full name; the short form "α = …" is fine.
            expect([text, /mix/i.test(text.split(MIX_TITLE).join(""))]).toEqual([text, false]);
          }
        }
      }
    }
    const all = [...seen].join("\n");
    for (const wanted of ["lowest error", "one-SE rule", "terms kept", "within 1 SE", "chosen", MIX_TITLE, "α = 0.25"]) expect([wanted, all.includes(wanted)]).toEqual([wanted, true]);
  });

  test("the CV chart's legend says 'α = …'; its note, the legend's title, names the mix in full", () => {
    const option = cvChartOptions(lowestRule, { theme: "light", width: 450 });
    expect((option.legend as { data: string[] }).data).toEqual(["α = 0 (ridge)", "α = 0.25", "α = 0.5", "α = 0.75", "α = 1 (lasso)"]);
    expect(String((option.title as AnyRecord).subtext)).toContain(`Lines: ${MIX_TITLE}.`);
    const single = cvChartOptions(ridge, { theme: "light", width: 450 });
    expect(String((single.title as AnyRecord).subtext)).toContain(`${MIX_TITLE} = 0 (ridge).`);
  });

  test("axis titles: per SD on the pane's path and bars (the report sheet's chart says data units, see report.test.ts)", () => {
    expect(STANDARDIZED_TITLE).toBe("standardized coefficient (per SD)");
    expect(axis(pathChartOptions(lowestRule, { theme: "light", width: 360 }), "yAxis").name).toBe(STANDARDIZED_TITLE);
    expect(axis(coefficientBarOptions(lowestRule, { theme: "light", width: 360 }), "xAxis").name).toBe(STANDARDIZED_TITLE);
  });
});

// ------------------------------------------------------------------------------------------
// Text alternatives and numbers

describe("text alternatives", () => {
  test("each chart's description states what it shows from the engine result", () => {
    const path = describeChart("path", lowestRule);
    expect(path).toContain("Mix α (lasso share) = 1 (lasso)");
    expect(path).toContain(`${NAMES.length - NAMES.filter((_, j) => lowestRule.coefficients[j] === 0 && lowestRule.path.coefficients.some((r) => r[j] !== 0)).length} of ${NAMES.length} terms`);
    const top = NAMES[lowestRule.standardizedCoefficients.map(Math.abs).indexOf(Math.max(...lowestRule.standardizedCoefficients.map(Math.abs)))];
    expect(path).toContain(top);
    const choices = lowestRule.choices as NonNullable<FitResult["choices"]>;
    // The band and the line, in words (engine result: the two rules' strengths, the rule's pick).
    expect(path).toContain(
      `A shaded band marks the strengths within 1 SE, from λ ${formatNumber(choices.oneSe.strength)} (one-SE rule) to λ ${formatNumber(choices.lowest.strength)} (lowest error).`,
    );
    expect(path).toContain(`A solid line marks the chosen λ ${formatNumber(lowestRule.strength)} (lowest error), with ${lowestRule.coefficients.filter((b) => b !== 0).length} terms kept`);
    expect(describeChart("path", onese)).toContain(`A solid line marks the chosen λ ${formatNumber(onese.strength)} (one-SE rule)`);
    const cv = describeChart("cv", lowestRule);
    expect(cv).toContain("5 values of Mix α (lasso share)");
    expect(cv).toContain(formatNumber(choices.lowest.error));
    expect(cv).toContain(formatNumber(choices.oneSe.strength));
    const bars = describeChart("bars", lowestRule);
    expect(bars).toContain(top);
    expect(bars).toContain(`${barEntries(lowestRule).zero.length} terms are zero`);
  });

  test("numbers: three significant digits, exponent form for tiny and huge, a true minus sign", () => {
    expect(formatNumber(0.022011900322270232)).toBe("0.022");
    expect(formatNumber(-0.52881)).toBe("\u22120.529");
    expect(formatNumber(0.00077288)).toBe("7.73e\u22124");
    expect(formatNumber(688.029)).toBe("688");
    expect(formatNumber(123456)).toBe("1.23e5");
    expect(formatNumber(0)).toBe("0");
  });
});

// ------------------------------------------------------------------------------------------
// Rendering without a DOM (echarts SSR)

describe("SVG rendering (echarts server-side rendering)", () => {
  test.each(THEMES)("%s: every chart renders at 320 and 450 px, with one line path per drawn term", (theme) => {
    for (const width of [320, 450]) {
      for (const kind of KINDS) {
        const svg = renderChartSvg(kind, ridge, { theme, width });
        expect(svg.startsWith("<svg")).toBe(true);
        expect(svg).toContain(`width="${width}"`);
        expect(svg).toContain(`fill="${PALETTES[theme].background}"`);
        if (kind === "path") expect(termLinePaths(svg, PALETTES[theme])).toBe(NAMES.length);
      }
    }
    const lassoPath = renderChartSvg("path", lowestRule, { theme, width: 360 });
    expect(termLinePaths(lassoPath, PALETTES[theme])).toBe(withIdPrefix(pathChartOptions(lowestRule, { theme, width: 360 }), "term-").length);
    expect(lassoPath).toContain(">chosen<");
    expect(lassoPath).toContain(">within 1 SE<");
    expect(lassoPath).not.toMatch(/>(min|1 SE)</);
    const bars = renderChartSvg("bars", lowestRule, { theme, width: 360 });
    for (const entry of barEntries(lowestRule).nonzero.slice(0, 3)) expect(bars).toContain(`>${entry.name}<`);
  });

  test("fits without a path or a curve still render", () => {
    for (const result of [fixed, leastSquares]) for (const kind of KINDS) expect(renderChartSvg(kind, result, { theme: "light", width: 360 })).toMatch(/^<svg/);
  });

  test("with the real tree-shaken echarts modules (tsx child process), the SVG matches the full build's", () => {
    const tsx = join(ROOT, "node_modules", ".bin", "tsx");
    const script = [
      'import { readFileSync } from "fs";',
      'import { renderChartSvg } from "./taskpane/charts/charts";',
      "const result = JSON.parse(readFileSync(0, \"utf8\"));",
      "const out: Record<string, string> = {};",
      'for (const kind of ["path", "cv", "bars"] as const) out[kind] = renderChartSvg(kind, result, { theme: "light", width: 360 });',
      "process.stdout.write(JSON.stringify(out));",
    ].join("\n");
    const child = spawnSync(tsx, ["-e", script], { cwd: ROOT, input: JSON.stringify(lowestRule), encoding: "utf8", timeout: 60_000 });
    expect(child.stderr).toBe("");
    expect(child.status).toBe(0);
    const treeShaken = JSON.parse(child.stdout) as Record<ChartKind, string>;
    // Expected differences only: zrender numbers instances, style classes and clip paths
    // (zr3-cls-12, zr3-c0) by what ran before in the process, and elements of equal z come in
    // component registration order. So: the same elements, ids normalised, in any order.
    const normalise = (svg: string): string[] =>
      svg
        .replace(/zr\d+-cls-\d+/g, "zr-cls")
        .replace(/zr\d+-c(\d+)/g, "zr-c$1")
        .split(/(?=<)/)
        .sort();
    for (const kind of KINDS) {
      const full = renderChartSvg(kind, lowestRule, { theme: "light", width: 360 });
      expect([kind, JSON.stringify(normalise(treeShaken[kind])) === JSON.stringify(normalise(full))]).toEqual([kind, true]);
    }
  }, 90_000);
});

// ------------------------------------------------------------------------------------------
// DOM half in Chromium, from a production webpack bundle

suiteGate("mountChart in Chromium (test/taskpane/charts.test.ts)", [chromiumNeed()]).describe("mountChart in Chromium (webpack production bundle)", () => {
  let out = "";
  let bundle = "";

  beforeAll(async () => {
    out = mkdtempSync(join(tmpdir(), "shrinkwise-charts-"));
    writeFileSync(
      join(out, "entry.js"),
      `import { mountChart } from ${JSON.stringify(join(ROOT, "taskpane", "charts", "charts.ts"))};\nwindow.__charts = { mountChart };\n`,
    );
    const config: webpack.Configuration = {
      mode: "production",
      context: ROOT,
      target: "web",
      entry: { charts: join(out, "entry.js") },
      output: { path: out, filename: "[name].js" },
      resolve: { extensions: [".ts", ".js"], modules: [join(ROOT, "node_modules")] },
      resolveLoader: { modules: [join(ROOT, "node_modules")] },
      module: {
        rules: [
          {
            test: /\.ts$/,
            exclude: /node_modules/,
            use: { loader: "ts-loader", options: { configFile: join(ROOT, "addin", "tsconfig.webpack.json"), transpileOnly: true } },
          },
        ],
      },
      performance: { hints: false },
      devtool: false,
    };
    const stats = await new Promise<webpack.Stats>((done, fail) => webpack(config, (error, s) => (error || !s ? fail(error ?? new Error("no stats")) : done(s))));
    expect(stats.toJson({ all: false, errors: true }).errors ?? []).toEqual([]);
    bundle = readFileSync(join(out, "charts.js"), "utf8");
  }, 120_000);

  afterAll(() => {
    if (out) rmSync(out, { recursive: true, force: true });
  });

  test("the tree-shaken bundle stays far below echarts' full build and holds no eval or new Function", () => {
    const full = readFileSync(join(ROOT, "node_modules", "echarts", "dist", "echarts.min.js"), "utf8").length;
    expect(bundle.length).toBeLessThan(700 * 1024);
    expect(bundle.length).toBeLessThan(0.65 * full);
    expect(bundle).not.toMatch(/\beval\(/);
    expect(bundle).not.toMatch(/new Function\b/);
  });

  test("mount, export PNG and SVG, theme, resize, update and dispose on a real page", async () => {
    const { chromium } = await import("playwright-core");
    const browser = await chromium.launch({ executablePath: CHROMIUM, args: ["--no-sandbox", "--disable-gpu"] });
    try {
      const page = await browser.newPage();
      const errors: string[] = [];
      page.on("pageerror", (error) => errors.push(String(error)));
      await page.setContent("<!doctype html><html><body style='margin:0'><div id='c' style='width:360px'></div></body></html>");
      await page.addScriptTag({ content: bundle });
      const report = await page.evaluate(
        ({ first, second }) => {
          type Handle = {
            update(r: unknown): void;
            setTheme(t: string): void;
            setCvAxis(a: string): void;
            resize(): void;
            dispose(): void;
            exportPng(): string;
            exportSvg(): string;
            describe(): string;
          };
          const api = (window as unknown as { __charts: { mountChart(el: HTMLElement, kind: string, r: unknown, s: unknown): Handle } }).__charts;
          const el = document.getElementById("c") as HTMLElement;
          const results: Record<string, unknown> = {};
          for (const kind of ["path", "cv", "bars"]) {
            const handle = api.mountChart(el, kind, first, { theme: "light" });
            const png = handle.exportPng();
            const bytes = atob(png.slice(png.indexOf(",") + 1, png.indexOf(",") + 45));
            const u32 = (at: number): number => ((bytes.charCodeAt(at) << 24) | (bytes.charCodeAt(at + 1) << 16) | (bytes.charCodeAt(at + 2) << 8) | bytes.charCodeAt(at + 3)) >>> 0;
            const light = {
              height: el.style.height,
              svgCount: el.querySelectorAll("svg").length,
              canvasCount: el.querySelectorAll("canvas").length,
              role: el.getAttribute("role"),
              label: el.getAttribute("aria-label"),
              describe: handle.describe(),
              pngPrefix: png.slice(0, 22),
              pngSize: [u32(16), u32(20)],
              svg: handle.exportSvg().slice(0, 120),
            };
            // The CV chart's x axis switches in place (the other charts keep theirs).
            const svgText = (): string => el.querySelector("svg")?.textContent ?? "";
            handle.setCvAxis("fraction");
            const fraction = { text: svgText(), label: el.getAttribute("aria-label") ?? "" };
            handle.setCvAxis("strength");
            const strength = { text: svgText(), label: el.getAttribute("aria-label") ?? "" };
            handle.setTheme("dark");
            const darkShown = el.innerHTML.includes("#1f1f1f");
            el.style.width = "450px";
            handle.resize();
            const resizedSvg = handle.exportSvg().slice(0, 120);
            handle.update(second);
            const updatedLabel = el.getAttribute("aria-label");
            handle.dispose();
            let afterDispose = "";
            try {
              handle.exportSvg();
            } catch (error) {
              afterDispose = String(error);
            }
            results[kind] = { light, fraction, strength, darkShown, resizedSvg, updatedLabel, emptied: el.querySelector("svg") === null && el.getAttribute("aria-label") === null, afterDispose };
            el.style.width = "360px";
            el.style.height = "";
          }
          return results;
        },
        { first: JSON.parse(JSON.stringify(lowestRule)), second: JSON.parse(JSON.stringify(ridge)) },
      );
      expect(errors).toEqual([]);
      for (const kind of KINDS) {
        const r = report[kind] as {
          light: { height: string; svgCount: number; canvasCount: number; role: string; label: string; describe: string; pngPrefix: string; pngSize: number[]; svg: string };
          fraction: { text: string; label: string };
          strength: { text: string; label: string };
          darkShown: boolean;
          resizedSvg: string;
          updatedLabel: string;
          emptied: boolean;
          afterDispose: string;
        };
        expect(r.light.height).toBe(`${suggestedHeight(kind, lowestRule, 360)}px`);
        expect(r.light.svgCount).toBeGreaterThan(0); // on screen: the SVG renderer
        expect(r.light.canvasCount).toBe(0);
        expect(r.light.role).toBe("img");
        expect(r.light.label).toBe(describeChart(kind, lowestRule));
        expect(r.light.describe).toBe(describeChart(kind, lowestRule));
        expect(r.light.pngPrefix).toBe("data:image/png;base64,");
        expect(r.light.pngSize).toEqual([720, 2 * suggestedHeight(kind, lowestRule, 360)]); // 2× pixel ratio
        expect(r.light.svg).toMatch(/^<svg width="360"/);
        if (kind === "cv") {
          expect(r.fraction.text).toContain("strength ÷ top of grid (log scale)");
          expect(r.fraction.label).toBe(describeChart("cv", lowestRule, null, "fraction"));
          expect(r.strength.text).not.toContain("top of grid");
          expect(r.strength.text).toContain("strength λ (log scale)");
          expect(r.strength.label).toBe(describeChart("cv", lowestRule, null, "strength"));
        } else {
          expect(r.fraction.text).toBe(r.strength.text);
        }
        expect(r.darkShown).toBe(true);
        expect(r.resizedSvg).toMatch(/^<svg width="450"/);
        expect(r.updatedLabel).toBe(describeChart(kind, ridge));
        expect(r.emptied).toBe(true);
        expect(r.afterDispose).toContain("disposed");
      }
    } finally {
      await browser.close();
    }
  }, 90_000);
});

describe("plain line charts from cell data (the stand-in's copy of a report chart)", () => {
  test("one line series per data column, a log x axis when asked, the pane's palette", () => {
    const spec = {
      title: "Coefficient path",
      xTitle: "penalty strength",
      yTitle: "coefficient",
      logX: true,
      series: [
        { name: "a", points: [[1, 0], [0.1, 0.5], [0.01, 0.7]] as [number, number][] },
        { name: "b", points: [[1, 0], [0.1, -0.2], [0.01, -0.3]] as [number, number][] },
      ],
    };
    const options = seriesChartOptions(spec, { theme: "dark", width: 560 }) as Record<string, unknown>;
    const series = options.series as { type: string; name: string; data: unknown[]; lineStyle: { color: string } }[];
    expect(series.map((s) => s.name)).toEqual(["a", "b"]); // one per column, in column order
    expect(series.every((s) => s.type === "line" && s.data.length === 3)).toBe(true);
    expect((options.xAxis as { type: string }).type).toBe("log");
    expect(series[0].lineStyle.color).toBe(PALETTES.dark.lines[0]);
    const linear = seriesChartOptions({ ...spec, logX: false }, { theme: "light", width: 560 }) as Record<string, unknown>;
    expect((linear.xAxis as { type: string }).type).toBe("value");
  });
});
