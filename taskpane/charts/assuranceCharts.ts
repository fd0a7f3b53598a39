/**
 * "How sure is it" charts for the task pane, in the look of charts.ts (same palettes, light and
 * dark; same fonts, compact layout below COMPACT_WIDTH; no animation; SVG on screen, PNG and SVG
 * export; a text alternative as the element's aria-label):
 *
 * - "heldOut": held-out predictions against the actual target (number targets). Each row's
 *   prediction comes from the fold model that did not see it (assuranceData.ts). Points as circles,
 *   the 45° line "prediction = actual" dashed, and with an interval level each plotted row's
 *   CV+ interval as a vertical whisker (engine/conformal.ts). Both axes share one range, so the
 *   45° line runs corner to corner. A yes/no fit has no held-out list (FitResult.heldOut is for
 *   number targets): the pane shows a note in place of this chart, and the builder returns an
 *   empty chart whose title says why.
 * - "kept": one horizontal bar per term, the share of the fold models that keep it (kept in
 *   folds, FitResult.keptShare), largest first. When stability selection ran
 *   (FitResult.stability) a second bar per term gives its stable share (the highest selection
 *   share over the counted strengths), a dashed line marks the threshold π on that scale, and
 *   each stable term gets a diamond marker (its own legend entry: the marking is a shape, not a
 *   colour alone). The bound on the expected number of falsely selected terms,
 *   q²/((2π − 1)·p) (Meinshausen & Bühlmann 2010, JRSS-B 72(4), Theorem 1; complementary pairs:
 *   Shah & Samworth 2013, JRSS-B 75(1)), is in the note under the title and in the text.
 *
 * Pure option builders (`heldOutChartOptions`, `keptShareOptions`, `describeAssuranceChart`,
 * `assuranceHeight`) run in Node; `mountAssuranceChart` needs a DOM; `renderAssuranceSvg` uses
 * echarts' server-side SVG rendering.
 *
 * The scatter and custom (whisker) series are registered here; the components come from
 * charts.ts' registration. In jest map echarts/* as test/taskpane/charts/assuranceCharts.test.ts does.
 */
import * as echarts from "echarts/core";
import { CustomChart, ScatterChart } from "echarts/charts";
import type { BarSeriesOption, CustomSeriesOption, LineSeriesOption, ScatterSeriesOption } from "echarts/charts";
import type { GridComponentOption, LegendComponentOption, MarkLineComponentOption, TitleComponentOption, TooltipComponentOption } from "echarts/components";
import type { ComposeOption } from "echarts/core";
import type { FitResult } from "../../engine/fit";
import {
  baseOption,
  escapeHtml,
  formatNumber,
  layoutFor,
  MAX_BARS,
  PALETTES,
  titleHeight,
  titleOption,
  tooltipBase,
  truncate,
  valueAxisStyle,
  valueLabelWidth,
  type ChartTheme,
} from "./charts";
import { keptEntries, type HeldOutPoints } from "./assuranceData";

export { keptEntries, type KeptEntry } from "./assuranceData";

echarts.use([ScatterChart, CustomChart]);

export type AssuranceKind = "heldOut" | "kept";

export type AssuranceOption = ComposeOption<
  | LineSeriesOption
  | BarSeriesOption
  | ScatterSeriesOption
  | CustomSeriesOption
  | GridComponentOption
  | LegendComponentOption
  | MarkLineComponentOption
  | TitleComponentOption
  | TooltipComponentOption
>;

/** What the two charts draw: the fit, and its held-out points (null for yes/no fits or without cross-validation). */
export interface AssuranceView {
  result: FitResult;
  heldOut: HeldOutPoints | null;
}

export interface AssuranceSettings {
  theme: ChartTheme;
  width: number;
}

/** "90%" for 0.9 (to 3 significant digits). */
export function percent(share: number): string {
  return `${formatNumber(share * 100)}%`;
}

/** Opacity of the interval whiskers: enough to read one, light enough that 2000 overlapping ones don't hide the points. */
export const WHISKER_OPACITY = 0.45;

// ---------------------------------------------------------------------------------------------
// Held-out predictions vs actual

/** A round tick step (1, 2 or 5 × 10^k) giving about five ticks over `span`. */
export function niceStep(span: number): number {
  const raw = span / 5;
  const power = 10 ** Math.floor(Math.log10(raw));
  const unit = raw / power;
  return (unit <= 1 ? 1 : unit <= 2 ? 2 : unit <= 5 ? 5 : 10) * power;
}

/**
 * The one value range both axes share: every actual, prediction and finite interval end, padded
 * 4% and widened to whole tick steps (round end labels, so the label widths estimated for the
 * margins hold, and the axis name is not pushed out of the chart), with that step.
 */
export function sharedExtent(points: HeldOutPoints): { min: number; max: number; step: number } {
  const raw = paddedExtent(points);
  const step = niceStep(raw.max - raw.min);
  return { min: Math.floor(raw.min / step) * step, max: Math.ceil(raw.max / step) * step, step };
}

function paddedExtent(points: HeldOutPoints): { min: number; max: number } {
  let min = Infinity;
  let max = -Infinity;
  const take = (v: number): void => {
    if (!Number.isFinite(v)) return;
    if (v < min) min = v;
    if (v > max) max = v;
  };
  points.actual.forEach(take);
  points.predicted.forEach(take);
  points.low?.forEach(take);
  points.high?.forEach(take);
  if (!(max > min)) {
    const centre = Number.isFinite(min) ? min : 0;
    return { min: centre - 1, max: centre + 1 };
  }
  const pad = (max - min) * 0.04;
  return { min: min - pad, max: max + pad };
}

/** Intervals that can be drawn: computed, and bounded (too few rows for the level gives unbounded ends). */
function drawableIntervals(points: HeldOutPoints): boolean {
  return points.low !== null && points.high !== null && points.low.some((v) => Number.isFinite(v));
}

/** The note under the held-out chart's title. */
export function heldOutNote(points: HeldOutPoints): string {
  const notes = ["Each row predicted by the fold model that did not see it. Dashed: prediction = actual."];
  if (points.level !== null) {
    if (points.intervalNote) notes.push(`No intervals: ${points.intervalNote}`);
    else if (!drawableIntervals(points)) notes.push(`No ${percent(points.level)} intervals: too few rows for that level (the ends are unbounded).`);
    else notes.push(`Whiskers: each row's ${percent(points.level)} CV+ prediction interval.`);
  }
  if (points.thinned) notes.push(`Showing ${points.rows.length} of ${points.total} rows, evenly spread.`);
  return notes.join("\n");
}

export function heldOutChartOptions(view: AssuranceView, settings: AssuranceSettings): AssuranceOption {
  const palette = PALETTES[settings.theme];
  const layout = layoutFor(settings.width);
  const points = view.heldOut;
  const title = "Held-out predictions vs actual";
  if (!points) {
    const why =
      view.result.outcome === "two-class"
        ? "Not drawn for a yes/no target: held-out predictions vs actual are for number targets."
        : "Not drawn: no cross-validation ran (the strength was fixed), so no row was held out.";
    return { ...baseOption(palette, layout), title: titleOption(title, why, palette, layout, settings.width), series: [] };
  }
  const note = heldOutNote(points);
  const extent = sharedExtent(points);
  const pointColor = palette.lines[0];
  const whiskerColor = palette.lines[1];
  const intervals = drawableIntervals(points) && points.level !== null;
  const intervalName = intervals ? `${percent(points.level as number)} CV+ interval` : "";
  const series: (ScatterSeriesOption | LineSeriesOption | CustomSeriesOption)[] = [];
  if (intervals) {
    const low = points.low as number[];
    const high = points.high as number[];
    series.push({
      type: "custom",
      id: "intervals",
      name: intervalName,
      silent: true,
      z: 1,
      color: whiskerColor,
      data: points.actual.map((y, t) => [y, Math.max(low[t], extent.min), Math.min(high[t], extent.max)]),
      encode: { x: 0, y: [1, 2] },
      renderItem: (_params, api) => {
        const x = Number(api.value(0));
        const from = api.coord([x, Number(api.value(1))]);
        const to = api.coord([x, Number(api.value(2))]);
        return {
          type: "line",
          shape: { x1: from[0], y1: from[1], x2: to[0], y2: to[1] },
          style: { stroke: whiskerColor, lineWidth: 1, opacity: WHISKER_OPACITY },
        };
      },
    });
  }
  series.push({
    type: "line",
    id: "diagonal",
    name: "prediction = actual",
    data: [
      [extent.min, extent.min],
      [extent.max, extent.max],
    ],
    showSymbol: false,
    silent: true,
    color: palette.muted,
    lineStyle: { color: palette.muted, type: "dashed", width: 1.2 },
    tooltip: { show: false },
    z: 2,
  });
  series.push({
    type: "scatter",
    id: "points",
    name: "held-out prediction",
    data: points.actual.map((y, t) => [y, points.predicted[t], points.rows[t]]),
    encode: { x: 0, y: 1 },
    symbol: "circle",
    symbolSize: layout.compact ? 4 : 5,
    color: pointColor,
    itemStyle: { color: pointColor, opacity: 0.8 },
    z: 3,
  });
  const yName = "held-out prediction";
  // Tick labels are multiples of the step: the widest is one of the ends or its neighbours.
  const yNameGap = Math.ceil(Math.max(valueLabelWidth(extent.min, extent.max, layout.font), ...[extent.min, extent.max, extent.min + extent.step, extent.max - extent.step].map((v) => formatNumber(v, 3).length * layout.font * 0.6))) + 12;
  const axis = (name: string) => ({
    type: "value" as const,
    min: extent.min,
    max: extent.max,
    interval: extent.step,
    ...valueAxisStyle(name, palette, layout),
    axisLabel: { color: palette.text, fontSize: layout.font, hideOverlap: true, formatter: (value: number) => formatNumber(value, 3) },
  });
  const legendRow = 26;
  return {
    ...baseOption(palette, layout),
    title: titleOption(title, note, palette, layout, settings.width),
    grid: {
      left: yNameGap + layout.font + 6,
      right: 14,
      top: titleHeight(note, layout, settings.width) + 6,
      bottom: layout.font + 12 + (layout.font + 3) + 4 + legendRow,
      outerBoundsMode: "none",
    },
    xAxis: { ...axis("actual"), nameGap: layout.font + 10 },
    yAxis: { ...axis(yName), nameGap: yNameGap },
    tooltip: {
      ...tooltipBase(palette, layout),
      trigger: "item",
      formatter: (params: unknown) => {
        const p = params as { seriesId?: string; dataIndex?: number };
        if (p.seriesId !== "points" || typeof p.dataIndex !== "number") return "";
        const t = p.dataIndex;
        const lines = [`<b>row ${points.rows[t] + 1} of the data</b>`, `actual: ${formatNumber(points.actual[t])}`, `held-out prediction: ${formatNumber(points.predicted[t])}`];
        if (intervals) lines.push(`${escapeHtml(intervalName)}: ${formatNumber((points.low as number[])[t])} to ${formatNumber((points.high as number[])[t])}`);
        return lines.join("<br/>");
      },
    },
    legend: {
      show: true,
      bottom: 0,
      left: 4,
      right: 4,
      data: [
        { name: "held-out prediction", icon: "circle" },
        { name: "prediction = actual" },
        ...(intervals ? [{ name: intervalName, icon: "rect" }] : []),
      ],
      itemWidth: 14,
      itemHeight: 8,
      itemGap: 8,
      textStyle: { color: palette.text, fontSize: layout.font - 1 },
    },
    series,
  };
}

// ---------------------------------------------------------------------------------------------
// Kept share

/** The bound in words: "at most 0.47 of the stable terms expected to be false selections (q 3, π 0.75, 15 candidate terms)". */
export function boundSentence(result: FitResult): string | null {
  const s = result.stability;
  if (!s) return null;
  return (
    `Expected number of falsely selected terms at most ${formatNumber(s.falseSelectionBound)} ` +
    `(q ${s.expectedTerms}, π ${formatNumber(s.threshold)}, ${s.candidates} candidate terms, ${s.draws} pairs of half-samples)`
  );
}

/** The note under the kept-share chart's title: short lines (the pane is narrow). */
export function keptNote(result: FitResult, shown: number, all: number): string {
  const folds = result.foldModels?.length ?? result.cv?.folds ?? 0;
  const notes = [`Kept in folds: share of the ${folds > 0 ? `${folds} ` : ""}fold models keeping the term.`];
  const s = result.stability;
  if (s) {
    notes.push(`Stable share: stability selection at ${s.mix === 0 ? "ridge" : `α ${formatNumber(s.mix)}`}, ${s.draws} pairs of half-samples.`);
    notes.push(`◆ stable: share ≥ π ${formatNumber(s.threshold)}. Expected false selections ≤ ${formatNumber(s.falseSelectionBound)} (q ${s.expectedTerms}, ${s.candidates} terms).`);
  }
  if (all > shown) notes.push(`${all - shown} terms with the smallest shares not drawn.`);
  return notes.join("\n");
}

export function keptShareOptions(view: AssuranceView, settings: AssuranceSettings): AssuranceOption {
  const result = view.result;
  const palette = PALETTES[settings.theme];
  const layout = layoutFor(settings.width);
  const all = keptEntries(result);
  const title = "Kept share of each term";
  if (all.length === 0) {
    return {
      ...baseOption(palette, layout),
      title: titleOption(title, "Not drawn: no cross-validation ran (the strength was fixed), so there are no fold models to count.", palette, layout, settings.width),
      series: [],
    };
  }
  const shown = all.slice(0, MAX_BARS);
  const stability = result.stability ?? null;
  const note = keptNote(result, shown.length, all.length);
  const names = shown.map((e) => e.name);
  const labelWidth = layout.barLabelWidth;
  const series: (BarSeriesOption | ScatterSeriesOption)[] = [
    {
      type: "bar",
      id: "kept",
      name: "kept in folds",
      color: palette.positive,
      barMaxWidth: 12,
      barGap: "15%",
      barCategoryGap: "30%",
      data: shown.map((e) => e.kept),
      label: { show: !stability, position: "right", color: palette.text, fontSize: layout.font - 1, formatter: (p: { value?: unknown }) => percent(Number(p.value)) },
    },
  ];
  if (stability) {
    series.push({
      type: "bar",
      id: "stable-share",
      name: "stable share",
      color: palette.lines[1],
      barMaxWidth: 12,
      data: shown.map((e) => e.stableShare ?? 0),
      markLine: {
        silent: true,
        symbol: ["none", "none"],
        animation: false,
        precision: -1,
        data: [
          {
            xAxis: stability.threshold,
            name: "π",
            lineStyle: { color: palette.text, type: "dashed", width: 1 },
            // At the top of the line (above the plot), clear of the axis's tick labels.
            label: { show: true, formatter: `π ${formatNumber(stability.threshold)}`, position: "start", distance: 4, color: palette.text, fontSize: layout.font - 1 },
          },
        ],
      },
    });
    series.push({
      type: "scatter",
      id: "stable-marks",
      name: "stable (share ≥ π)",
      symbol: "diamond",
      symbolSize: layout.compact ? 9 : 10,
      color: palette.text,
      itemStyle: { color: palette.text, borderColor: palette.background, borderWidth: 1 },
      z: 4,
      // Just right of the longer of the term's two bars.
      data: shown.filter((e) => e.stable).map((e) => [Math.max(e.kept, e.stableShare ?? 0) + 0.05, e.name]),
    });
  }
  const legendRow = stability ? 26 : 0;
  const barRow = stability ? (layout.compact ? 26 : 28) : layout.compact ? 22 : 24;
  return {
    ...baseOption(palette, layout),
    title: titleOption(title, note, palette, layout, settings.width),
    grid: {
      left: labelWidth + 12,
      right: 18,
      top: titleHeight(note, layout, settings.width) + (stability ? layout.font + 10 : 4),
      bottom: layout.font + 12 + (layout.font + 3) + 6 + legendRow,
      outerBoundsMode: "none",
      // Recorded for assuranceHeight (echarts ignores unknown keys).
      ...({ barRow } as object),
    },
    xAxis: {
      type: "value",
      min: 0,
      max: 1.12,
      ...valueAxisStyle("share of fits that keep the term", palette, layout),
      nameGap: layout.font + 12,
      interval: 0.25,
      axisLabel: { color: palette.text, fontSize: layout.font, hideOverlap: true, formatter: (value: number) => (value <= 1 ? percent(value) : "") },
    },
    yAxis: {
      type: "category",
      inverse: true,
      data: names,
      axisLine: { show: true, lineStyle: { color: palette.axis } },
      axisTick: { show: false },
      axisLabel: { color: palette.text, fontSize: layout.font, width: labelWidth, overflow: "truncate", ellipsis: "…", interval: 0 },
    },
    tooltip: {
      ...tooltipBase(palette, layout),
      trigger: "axis",
      axisPointer: { type: "shadow" },
      formatter: (params: unknown) => {
        const first = (Array.isArray(params) ? params[0] : params) as { dataIndex?: number; axisValue?: unknown } | undefined;
        const entry = shown.find((e) => e.name === first?.axisValue) ?? (typeof first?.dataIndex === "number" ? shown[first.dataIndex] : undefined);
        if (!entry) return "";
        const lines = [`<b>${escapeHtml(entry.name)}</b>`, `kept in folds: ${percent(entry.kept)}`, `same sign as the full fit: ${percent(entry.sameSign)}`];
        if (entry.stableShare !== null) lines.push(`stable share: ${percent(entry.stableShare)}${entry.stable ? " (stable)" : ""}`);
        return lines.join("<br/>");
      },
    },
    legend: {
      show: stability !== null,
      bottom: 0,
      left: 4,
      right: 4,
      data: [{ name: "kept in folds" }, { name: "stable share" }, { name: "stable (share ≥ π)", icon: "diamond" }],
      itemWidth: 14,
      itemHeight: 8,
      itemGap: 8,
      textStyle: { color: palette.text, fontSize: layout.font - 1 },
    },
    series,
  };
}

// ---------------------------------------------------------------------------------------------
// Dispatch, sizes, text alternatives

export function assuranceOptions(kind: AssuranceKind, view: AssuranceView, settings: AssuranceSettings): AssuranceOption {
  return kind === "heldOut" ? heldOutChartOptions(view, settings) : keptShareOptions(view, settings);
}

/** A height (px) for the chart at this width: the held-out chart's plot is about square (180–320 px); bars 22–28 px each. */
export function assuranceHeight(kind: AssuranceKind, view: AssuranceView, width: number): number {
  const options = assuranceOptions(kind, view, { theme: "light", width });
  const grid = options.grid as (GridComponentOption & { barRow?: number }) | undefined;
  if (!grid || (Array.isArray(options.series) && options.series.length === 0)) return 120;
  const margins = Number(grid.top ?? 0) + Number(grid.bottom ?? 0);
  if (kind === "kept") return Math.round(margins + Math.min(MAX_BARS, keptEntries(view.result).length) * (grid.barRow ?? 24));
  const plotWidth = width - Number(grid.left ?? 0) - Number(grid.right ?? 0);
  return Math.round(margins + Math.max(180, Math.min(320, plotWidth)));
}

/** Short text alternative for screen readers (and the caption under the chart). */
export function describeAssuranceChart(kind: AssuranceKind, view: AssuranceView): string {
  const result = view.result;
  if (kind === "heldOut") {
    const p = view.heldOut;
    if (!p) {
      return result.outcome === "two-class"
        ? "Held-out predictions vs actual: not drawn for a yes/no target (it is for number targets)."
        : "Held-out predictions vs actual: not drawn, no cross-validation ran.";
    }
    let text =
      `Held-out predictions vs actual for ${p.total} rows${p.thinned ? ` (${p.rows.length} plotted, evenly spread)` : ""}: ` +
      `correlation ${Number.isFinite(p.correlation) ? formatNumber(p.correlation) : "not defined (a constant side)"}.`;
    if (p.level !== null) {
      if (p.intervalNote) text += ` No intervals: ${p.intervalNote}`;
      else if (p.inside !== null && p.medianHalfWidth !== null && Number.isFinite(p.medianHalfWidth)) {
        text +=
          ` ${percent(p.level)} CV+ intervals: ${percent(p.inside)} of the ${p.thinned ? "plotted " : ""}rows lie inside their own interval ` +
          `(a rough check; the guarantee is for new rows); median half-width ${formatNumber(p.medianHalfWidth)}` +
          (p.p90HalfWidth !== null ? `, 90th percentile ${formatNumber(p.p90HalfWidth)}.` : ".");
      } else text += ` ${percent(p.level)} intervals are unbounded: too few rows for that level.`;
    }
    return text;
  }
  const entries = keptEntries(result);
  if (entries.length === 0) return "Kept share: not drawn, no cross-validation ran.";
  const always = entries.filter((e) => e.kept === 1).length;
  const never = entries.filter((e) => e.kept === 0).length;
  const top = entries
    .slice(0, 3)
    .map((e) => `${truncate(e.name, 24)} ${percent(e.kept)}`)
    .join(", ");
  let text = `Kept share of ${entries.length} terms over the fold models, largest first: ${top}. ${always} kept in every fold, ${never} in none.`;
  const s = result.stability;
  if (s) {
    const stable = entries.filter((e) => e.stable).map((e) => e.name);
    text +=
      ` Stability selection: ${stable.length} stable term${stable.length === 1 ? "" : "s"} (share ≥ π ${formatNumber(s.threshold)})` +
      (stable.length > 0 ? `: ${stable.slice(0, 5).join(", ")}${stable.length > 5 ? ` and ${stable.length - 5} more` : ""}` : "") +
      `. ${boundSentence(result)}.`;
  }
  return text;
}

// ---------------------------------------------------------------------------------------------
// Rendering

/** The chart as SVG text, without a DOM. */
export function renderAssuranceSvg(kind: AssuranceKind, view: AssuranceView, settings: AssuranceSettings & { height?: number }): string {
  const height = settings.height ?? assuranceHeight(kind, view, settings.width);
  const chart = echarts.init(null, null, { renderer: "svg", ssr: true, width: settings.width, height });
  try {
    chart.setOption(assuranceOptions(kind, view, settings));
    return chart.renderToSVGString();
  } finally {
    chart.dispose();
  }
}

export interface AssuranceChartHandle {
  update(view: AssuranceView): void;
  setTheme(theme: ChartTheme): void;
  resize(): void;
  dispose(): void;
  exportPng(): string;
  exportSvg(): string;
  describe(): string;
}

function widthOf(el: HTMLElement): number {
  return el.clientWidth || Math.round(el.getBoundingClientRect().width) || 360;
}

/** Draws a chart into `el` (SVG renderer), its height following its width (assuranceHeight). */
export function mountAssuranceChart(el: HTMLElement, kind: AssuranceKind, view: AssuranceView, theme: ChartTheme): AssuranceChartHandle {
  let current = view;
  let currentTheme = theme;
  const fitHeight = (): void => {
    el.style.height = `${assuranceHeight(kind, current, widthOf(el))}px`;
  };
  fitHeight();
  const chart = echarts.init(el, null, { renderer: "svg" });
  let disposed = false;
  const draw = (): void => {
    chart.setOption(assuranceOptions(kind, current, { theme: currentTheme, width: widthOf(el) }), { notMerge: true });
    el.setAttribute("role", "img");
    el.setAttribute("aria-label", describeAssuranceChart(kind, current));
  };
  const live = (): void => {
    if (disposed) throw new Error("this chart was disposed");
  };
  draw();
  return {
    update(next: AssuranceView): void {
      live();
      current = next;
      fitHeight();
      chart.resize();
      draw();
    },
    setTheme(next: ChartTheme): void {
      live();
      currentTheme = next;
      draw();
    },
    resize(): void {
      live();
      fitHeight();
      chart.resize();
      draw();
    },
    dispose(): void {
      if (disposed) return;
      disposed = true;
      chart.dispose();
      el.removeAttribute("role");
      el.removeAttribute("aria-label");
    },
    exportPng(): string {
      live();
      const width = chart.getWidth();
      const height = chart.getHeight();
      const holder = document.createElement("div");
      const offscreen = echarts.init(holder, null, { renderer: "canvas", width, height });
      try {
        offscreen.setOption(assuranceOptions(kind, current, { theme: currentTheme, width }));
        return offscreen.getDataURL({ type: "png", pixelRatio: 2, backgroundColor: PALETTES[currentTheme].background });
      } finally {
        offscreen.dispose();
      }
    },
    exportSvg(): string {
      live();
      return renderAssuranceSvg(kind, current, { theme: currentTheme, width: chart.getWidth(), height: chart.getHeight() });
    },
    describe(): string {
      return describeAssuranceChart(kind, current);
    },
  };
}
