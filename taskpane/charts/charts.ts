/**
 * Charts of a fit for the task pane, drawn with echarts (tree-shaken imports: only the line and
 * bar charts, the components below and the two renderers reach the bundle).
 *
 * Three charts:
 * - "path": every term's coefficient along the strengths tried for the chosen mix, in
 *   standardized units (coefficient × the term's population SD, so terms compare), with a
 *   light band "within 1 SE" spanning the strengths from the one-SE rule's to the lowest
 *   error's, and one solid line "chosen" at the strength the rule picked (no band when both
 *   rules pick the same strength);
 * - "cv": cross-validated error (mean ± 1 SE as a shaded band) against strength, one line per
 *   mix, the lowest-error and one-SE points marked. Its x axis is either the strength λ or
 *   "strength ÷ top of grid" (settings.cvAxis, see CvAxis);
 * - "bars": the chosen model's standardized coefficients as horizontal bars, largest first.
 *
 * A yes/no (two-class) fit draws the same three charts: coefficients are log-odds of the event,
 * so the path and the bars are in log-odds per SD (their axis titles say so), and the CV chart
 * is in the chosen measure. For the AUC, where higher is better, the title and the y axis say
 * "higher is better", the "lowest" rule's point is labelled "highest AUC", and the one-SE line
 * sits one SE below it (engine/fit.ts higherIsBetter).
 *
 * Two halves:
 * - pure option builders (`pathChartOptions`, `cvChartOptions`, `coefficientBarOptions`,
 *   `describeChart`, `suggestedHeight`): plain objects, no DOM, testable in Node;
 * - `mountChart` (DOM) and `renderChartSvg` (no DOM: echarts' server-side SVG rendering).
 *
 * Design choices:
 * - Strength runs on a log axis, strongest at the LEFT and weaker to the right (axis inverted):
 *   read left to right, the model grows from "everything shrunk to 0" to "barely penalized".
 *   The path and error charts share that direction.
 * - Error band: echarts' native stacking. Per mix, an invisible line at mean − SE and a
 *   second, stacked series of height 2·SE whose area is filled: the fill spans mean ± SE.
 *   (Non-category axes stack by data index; both series share the mix's strengths, in order.)
 * - Colours: two palettes of our own (light and dark Office themes), the same six hues in the
 *   same order in both. The first is the pane's teal accent. The other five were searched for
 *   (widest smallest CIE L*a*b* difference to the rest, under typical and simulated colour
 *   vision, hues ≥ 35° apart) and put in order on the light palette: each next one the farthest
 *   from those before it, so the largest terms get the most distinct lines. Text and lines
 *   ≥ 4.5:1 against the background, axes ≥ 3:1; every pair of line hues ≥ 20 ΔE*ab apart
 *   under simulated protan, deutan and tritan colour vision (checked in
 *   test/taskpane/charts.test.ts). Past six terms the hues repeat with dashed, then dotted
 *   lines; the largest terms get the solid lines.
 * - Text: 11 px below 400 px wide, 12 px above; names truncated with "…" (tooltips show them
 *   whole, HTML-escaped: names come from the sheet). Below 400 px the path chart drops its
 *   legend (the largest terms are labelled at the line ends) and the λ axis name takes 2 lines.
 * - Margins are computed here, not by echarts' automatic label containment (see lineGrid).
 * - No animation: charts appear complete at once (nothing moves for users who dislike motion,
 *   and exports never catch a half-drawn frame).
 *
 * Export: the on-screen chart uses the SVG renderer (crisp at any zoom, like the export).
 * `exportSvg` renders the current options afresh in an SSR instance (no DOM; no hover state in
 * the file). `exportPng` needs pixels synchronously, so it draws the same options with the
 * canvas renderer on a detached element and reads its data URL (2× pixel ratio).
 *
 * Standardized units need each term's SD, which FitResult does not carry. It is recovered as
 * standardizedCoefficients[j] / coefficients[j] where the chosen coefficient is nonzero. A term
 * that is 0 at the chosen point but nonzero elsewhere on the path has no recoverable SD: unless
 * the caller passes `spreads` (the predictors' population SDs, e.g. computed from the range it
 * read), such a term is left out of the path chart and named in a note under the title.
 * Given SDs are checked against every SD the result reveals and ignored whole if they disagree
 * (stale SDs from another data set must not mix scales). Terms that are 0 all along the path
 * (constant columns included) are drawn as flat lines at 0.
 *
 * In jest (CommonJS) the echarts/* subpath modules, which are ES modules, need mapping: see
 * test/taskpane/charts/charts.test.ts for a jest.mock set-up, or mock this module.
 */
import * as echarts from "echarts/core";
import { BarChart, LineChart } from "echarts/charts";
import type { BarSeriesOption, LineSeriesOption } from "echarts/charts";
import {
  GridComponent,
  LegendComponent,
  MarkAreaComponent,
  MarkLineComponent,
  MarkPointComponent,
  TitleComponent,
  TooltipComponent,
} from "echarts/components";
import type {
  GridComponentOption,
  LegendComponentOption,
  MarkAreaComponentOption,
  MarkLineComponentOption,
  MarkPointComponentOption,
  TitleComponentOption,
  TooltipComponentOption,
} from "echarts/components";
import { LabelLayout } from "echarts/features";
import { CanvasRenderer, SVGRenderer } from "echarts/renderers";
import type { ComposeOption } from "echarts/core";
import { CV_AXIS_NAMES, DEFAULT_CV_AXIS, type CvAxis } from "./chartNames";
import { higherIsBetter, type FitResult } from "../../engine/fit";
import { bestPointLabel, measureName as measureWords, measureWithDirection, oddsRatio, oneSeLineLabel, standardizedTitle } from "../outcomeWords";

echarts.use([
  LineChart,
  BarChart,
  GridComponent,
  LegendComponent,
  MarkAreaComponent,
  MarkLineComponent,
  MarkPointComponent,
  TitleComponent,
  TooltipComponent,
  LabelLayout,
  SVGRenderer,
  CanvasRenderer,
]);

export type ChartKind = "path" | "cv" | "bars";
export type ChartTheme = "light" | "dark";

// The CV chart's x axis choice lives in chartNames.ts (no echarts there: the pane's first script
// imports it while this module waits in the on-demand chart chunk).
export { CV_AXES, CV_AXIS_NAMES, DEFAULT_CV_AXIS, type CvAxis } from "./chartNames";
/** An echarts option object as built here. */
export type ChartOption = ComposeOption<
  | LineSeriesOption
  | BarSeriesOption
  | GridComponentOption
  | LegendComponentOption
  | MarkAreaComponentOption
  | MarkLineComponentOption
  | MarkPointComponentOption
  | TitleComponentOption
  | TooltipComponentOption
>;

export interface ChartSettings {
  theme: ChartTheme;
  /** Chart width in CSS pixels (the pane is 320–450 px wide). */
  width: number;
  /**
   * Optional population SD of each predictor (term order; null or non-positive = unknown).
   * Only the path chart needs it, for terms whose SD can't be recovered from the result;
   * ignored whole when it disagrees with the result (see spreadsMatch).
   */
  spreads?: ArrayLike<number | null> | null;
  /** The CV chart's x axis (default DEFAULT_CV_AXIS); the other charts ignore it. */
  cvAxis?: CvAxis;
}

export interface MountSettings {
  theme: ChartTheme;
  spreads?: ArrayLike<number | null> | null;
  cvAxis?: CvAxis;
}

export interface ChartHandle {
  /**
   * Redraws with a new fit. `spreads` replaces the SDs given at mount (optional: SDs that no
   * longer match the fit are ignored anyway, see spreadsMatch).
   */
  update(result: FitResult, spreads?: ArrayLike<number | null> | null): void;
  setTheme(theme: ChartTheme): void;
  /** Switches the CV chart's x axis (stored, and ignored, by the other charts). */
  setCvAxis(axis: CvAxis): void;
  /** Call after the element's size changed: layout (fonts, legend, truncation) follows width. */
  resize(): void;
  dispose(): void;
  /** PNG data URL ("data:image/png;base64,…") at twice the on-screen pixel density. */
  exportPng(): string;
  /** The chart as SVG text ("<svg …>…</svg>"). */
  exportSvg(): string;
  /** A short text alternative (also set as the element's aria-label). */
  describe(): string;
}

export interface Palette {
  background: string;
  /** Titles, labels, tooltips: ≥ 4.5:1 against the background. */
  text: string;
  /** Axis names, notes: ≥ 4.5:1 against the background. */
  muted: string;
  /** Axis lines and markers: ≥ 3:1. */
  axis: string;
  /** Decorative grid lines. */
  gridLine: string;
  /** Fill of the path chart's "within 1 SE" band, drawn at BAND_OPACITY over the grid. */
  band: string;
  /** Line hues in order of use, the pane's accent first: ≥ 4.5:1 each, apart under colour-vision simulation. */
  lines: readonly string[];
  /** Bars: positive and negative coefficients (sign is also in the label and direction). */
  positive: string;
  negative: string;
}

export const PALETTES: Readonly<Record<ChartTheme, Palette>> = {
  light: {
    background: "#ffffff",
    text: "#1f1f1f",
    muted: "#595959",
    axis: "#767676",
    gridLine: "#e3e3e3",
    band: "#5c5c5c",
    // teal (the pane's accent, --accent in taskpane.html), violet, olive, raspberry, azure, copper
    lines: ["#145a52", "#8020d8", "#807810", "#d03880", "#0878c8", "#885030"],
    positive: "#145a52",
    negative: "#885030",
  },
  dark: {
    background: "#1f1f1f",
    text: "#f2f2f2",
    muted: "#b5b5b5",
    axis: "#8f8f8f",
    gridLine: "#3a3a3a",
    band: "#c8c8c8",
    // The same six hues, lighter: mint teal (the dark theme's --accent), violet, citron, rose, periwinkle, apricot
    lines: ["#7fd8c8", "#d058f8", "#d8c808", "#f85080", "#98a8e0", "#e08840"],
    positive: "#7fd8c8",
    negative: "#e08840",
  },
};

/** Opacity of the "within 1 SE" band: light enough that the grid and every line show through. */
export const BAND_OPACITY = 0.13;

/** Line patterns cycled once the hues run out (rank k by size: hue k mod 6, pattern ⌊k/6⌋ mod 3). */
export const LINE_PATTERNS: readonly ("solid" | "dashed" | "dotted")[] = ["solid", "dashed", "dotted"];

export const FONT_FAMILY = '"Segoe UI", system-ui, -apple-system, "Helvetica Neue", Arial, sans-serif';
/** Below this width the compact layout applies (smaller text, no legend, fewer end labels). */
export const COMPACT_WIDTH = 400;
/** Most bars drawn; smaller nonzero terms beyond this are counted in a note. */
export const MAX_BARS = 40;

export interface Layout {
  compact: boolean;
  font: number;
  titleFont: number;
  /** Characters kept in end labels and notes' names. */
  nameChars: number;
  /** Terms labelled at the line ends. */
  endLabels: number;
  /** Category label width on the bar chart (px). */
  barLabelWidth: number;
  /** Tooltip rows listed before "+N more". */
  tooltipRows: number;
}

export function layoutFor(width: number): Layout {
  const compact = width < COMPACT_WIDTH;
  return {
    compact,
    font: compact ? 11 : 12,
    titleFont: compact ? 12 : 13,
    nameChars: compact ? 10 : 16,
    endLabels: compact ? 3 : 5,
    barLabelWidth: compact ? 84 : 130,
    tooltipRows: compact ? 8 : 12,
  };
}

// ---------------------------------------------------------------------------------------------
// Formatting

/** 3 significant digits; exponent form below 0.001 or from 100000; true minus sign. */
export function formatNumber(value: number, digits = 3): string {
  if (!Number.isFinite(value)) return String(value);
  if (value === 0) return "0";
  const size = Math.abs(value);
  const text =
    size >= 1e5 || size < 1e-3
      ? value.toExponential(digits - 1).replace(/\.?0+e/, "e").replace("e+", "e")
      : String(Number(value.toPrecision(digits)));
  return text.replace("-", "\u2212");
}

export function signed(value: number): string {
  return value > 0 ? `+${formatNumber(value)}` : formatNumber(value);
}

export function truncate(text: string, chars: number): string {
  return text.length > chars ? `${text.slice(0, Math.max(1, chars - 1))}…` : text;
}

/** For tooltip HTML: term names come from sheet headers. */
export function escapeHtml(text: string): string {
  return text.replace(/[&<>"']/g, (c) => ({ "&": "&amp;", "<": "&lt;", ">": "&gt;", '"': "&quot;", "'": "&#39;" })[c] as string);
}

/** The name of the mix wherever a title, note or text alternative names it. */
export const MIX_TITLE = "Mix α (lasso share)";

/** Short form for legend entries and hover rows, where space is tight: "α = 0.25", "α = 0 (ridge)". */
export function mixLabel(mix: number): string {
  if (mix === 0) return "α = 0 (ridge)";
  if (mix === 1) return "α = 1 (lasso)";
  return `α = ${formatNumber(mix)}`;
}

/** Long form for titles, notes and text alternatives: "Mix α (lasso share) = 0.25". */
export function mixTitle(mix: number): string {
  return `${MIX_TITLE} = ${mixLabel(mix).slice("α = ".length)}`;
}

/** The y axis of the path chart and the x axis of the bars: coefficient × the term's population SD. */
export const STANDARDIZED_TITLE = standardizedTitle("number");

/** The path and bar axes' title for this fit: per SD, or log-odds per SD for a yes/no fit. */
function standardizedAxis(result: FitResult): string {
  return standardizedTitle(result.outcome ?? "number");
}

/** The CV measure's name (MSE, MAE, deviance, misclassified share, AUC). */
function measureName(result: FitResult): string {
  return measureWords(result.cv?.measure ?? "mse");
}

/** The "lowest" rule's point in words: "lowest error", or "highest AUC". */
function bestLabel(result: FitResult): string {
  return bestPointLabel(result.cv?.measure ?? "mse");
}

/** The strength-0 fit by name: least squares, or (yes/no) the unpenalized logistic fit. */
function unpenalizedName(result: FitResult, capital: boolean): string {
  const name = result.outcome === "two-class" ? "unpenalized logistic fit" : "least squares";
  if (!capital) return name;
  return result.outcome === "two-class" ? "Unpenalized logistic fit" : "Least-squares fit";
}

function ruleText(result: FitResult): string {
  if (result.rule === "lowest") return bestLabel(result);
  if (result.rule === "one-se") return "one-SE rule";
  return "fixed strength";
}

/** "a, b, c +2 more" with names truncated. */
export function nameList(names: readonly string[], keep: number, chars: number): string {
  const shown = names.slice(0, keep).map((n) => truncate(n, chars));
  return names.length > keep ? `${shown.join(", ")} +${names.length - keep} more` : shown.join(", ");
}

// ---------------------------------------------------------------------------------------------
// Shared option pieces

export function baseOption(palette: Palette, layout: Layout): ChartOption {
  return {
    backgroundColor: palette.background,
    animation: false,
    textStyle: { fontFamily: FONT_FAMILY, fontSize: layout.font, color: palette.text },
  };
}

export function titleOption(text: string, note: string, palette: Palette, layout: Layout, width: number): TitleComponentOption {
  return {
    text,
    subtext: note,
    left: 4,
    top: 2,
    itemGap: 4,
    textStyle: { fontSize: layout.titleFont, fontWeight: 600, color: palette.text, fontFamily: FONT_FAMILY, width: width - 12, overflow: "truncate" },
    subtextStyle: { fontSize: layout.font, color: palette.muted, fontFamily: FONT_FAMILY, width: width - 12, overflow: "break", lineHeight: layout.font + 3 },
  };
}

/** Lines a note wraps to (rough: average glyph ≈ 0.6 em, on the generous side). */
function noteLines(note: string, width: number, font: number): number {
  if (!note) return 0;
  const perLine = Math.max(10, Math.floor((width - 12) / (font * 0.6)));
  return note.split("\n").reduce((sum, line) => sum + Math.max(1, Math.ceil(line.length / perLine)), 0);
}

export function titleHeight(note: string, layout: Layout, width: number): number {
  return 8 + layout.titleFont + 6 + noteLines(note, width, layout.font) * (layout.font + 3);
}

export function tooltipBase(palette: Palette, layout: Layout): TooltipComponentOption {
  return {
    confine: true,
    backgroundColor: palette.background,
    borderColor: palette.axis,
    textStyle: { color: palette.text, fontSize: layout.font, fontFamily: FONT_FAMILY },
    extraCssText: "max-width: 280px; white-space: normal;",
  };
}

interface StrengthAxisInput {
  min: number;
  max: number;
}

/** The x axis's title: what it measures, then "(log scale)" and the direction. */
function strengthAxisName(quantity: string, layout: Layout): string {
  // Two lines when compact: one line would not fit under a ~200 px plot.
  return layout.compact ? `${quantity} (log scale)\nweaker to the right →` : `${quantity} (log scale), weaker →`;
}

function strengthAxis(extent: StrengthAxisInput, palette: Palette, layout: Layout, quantity = "penalty strength λ") {
  let { min, max } = extent;
  if (!(max > min)) {
    // One strength (or none): a decade either side so the log axis has a range.
    const centre = min > 0 ? min : 1;
    min = centre / Math.sqrt(10);
    max = centre * Math.sqrt(10);
  }
  return {
    type: "log" as const,
    logBase: 10,
    inverse: true,
    min,
    max,
    name: strengthAxisName(quantity, layout),
    nameLocation: "middle" as const,
    nameGap: layout.font + 10,
    // An explicit line height: browsers otherwise space the two lines by the font's own metrics.
    nameTextStyle: { color: palette.muted, fontSize: layout.font, lineHeight: layout.font + 3 },
    axisLine: { show: true, lineStyle: { color: palette.axis } },
    axisTick: { lineStyle: { color: palette.axis } },
    axisLabel: { color: palette.text, fontSize: layout.font, hideOverlap: true, formatter: (value: number) => formatNumber(value, 2) },
    splitLine: { show: true, lineStyle: { color: palette.gridLine } },
    minorSplitLine: { show: false },
  };
}

export function valueAxisStyle(name: string, palette: Palette, layout: Layout) {
  return {
    name,
    nameLocation: "middle" as const,
    nameGap: 40,
    nameTextStyle: { color: palette.muted, fontSize: layout.font },
    axisLine: { show: true, lineStyle: { color: palette.axis } },
    axisTick: { show: true, lineStyle: { color: palette.axis } },
    axisLabel: { color: palette.text, fontSize: layout.font, hideOverlap: true, formatter: (value: number) => formatNumber(value, 3) },
    splitLine: { show: true, lineStyle: { color: palette.gridLine } },
  };
}

/**
 * Margins are set by hand (grid.outerBoundsMode "none"): echarts 6's automatic containment
 * measures the inverted log axis's end labels against the wrong end and squeezes the plot to
 * its 25 % clamp. Text widths are estimated at 0.6 em a glyph (digits, signs, Latin letters).
 */
export function textWidth(text: string, font: number): number {
  return text.length * font * 0.6;
}

/** Widest tick label expected on a value axis spanning [low, high] (ticks are round numbers). */
export function valueLabelWidth(low: number, high: number, font: number): number {
  if (!Number.isFinite(low) || !Number.isFinite(high)) return textWidth("0.00", font);
  const span = Math.abs(high - low) || Math.abs(high) || 1;
  const step = 10 ** Math.floor(Math.log10(span / 5));
  const samples = [low, high, low + step, high - step, (low + high) / 2].map((v) => formatNumber(Math.round(v / step) * step, 3));
  return Math.max(...samples.map((t) => textWidth(t, font)));
}

interface LineGrid {
  grid: GridComponentOption;
  yNameGap: number;
}

/** Grid for the two line charts: y labels and name on the left, λ labels and name below. */
function lineGrid(top: number, right: number, yLow: number, yHigh: number, legend: boolean, layout: Layout): LineGrid {
  const yNameGap = Math.ceil(valueLabelWidth(yLow, yHigh, layout.font)) + 10;
  const nameLines = layout.compact ? 2 : 1;
  return {
    yNameGap,
    grid: {
      left: yNameGap + layout.font + 6,
      right,
      top,
      bottom: layout.font + 12 + nameLines * (layout.font + 3) + 4 + (legend ? 26 : 0),
      outerBoundsMode: "none",
    },
  };
}

// ---------------------------------------------------------------------------------------------
// Path chart

export interface PathTerm {
  /** Index into result.terms. */
  index: number;
  name: string;
  /** SD used for scaling, or null when unknown (term not drawn). */
  spread: number | null;
  /** Standardized coefficient at the chosen point (0 when unknown). */
  chosen: number;
}

/** SD recoverable from the result: |standardized / coefficient| where the chosen coefficient is nonzero. */
function derivedSpread(result: FitResult, j: number): number | null {
  const b = result.coefficients[j];
  const s = result.standardizedCoefficients[j];
  if (b === 0 || !Number.isFinite(b) || !Number.isFinite(s)) return null;
  const ratio = Math.abs(s / b);
  return Number.isFinite(ratio) ? ratio : null;
}

/** Relative disagreement above which given SDs are taken to belong to other data. */
export const SPREAD_MISMATCH = 1e-6;

/**
 * Whether the caller's SDs belong to this fit: one per term, and equal (to SPREAD_MISMATCH,
 * relative) to every SD the result itself reveals. SDs left over from an earlier fit on other
 * data are refused whole rather than mixing scales.
 */
export function spreadsMatch(result: FitResult, spreads?: ArrayLike<number | null> | null): boolean {
  if (!spreads || spreads.length !== result.terms.length) return false;
  for (let j = 0; j < result.terms.length; j++) {
    const derived = derivedSpread(result, j);
    const given = spreads[j];
    if (derived === null || typeof given !== "number" || !(given > 0)) continue;
    if (!(Math.abs(given - derived) <= SPREAD_MISMATCH * derived)) return false;
  }
  return true;
}

/**
 * Each term's SD for standardized units: the SD recoverable from the result; else the caller's
 * `spreads[j]` (finite, > 0) when those match the fit (see spreadsMatch); else 0 for terms that
 * are 0 everywhere on the path (any SD gives a flat line at 0); else null (unknown: not drawn).
 */
export function termSpreads(result: FitResult, spreads?: ArrayLike<number | null> | null): (number | null)[] {
  const usable = spreadsMatch(result, spreads) ? spreads : null;
  return result.terms.map((term, j) => {
    const derived = derivedSpread(result, j);
    if (derived !== null) return derived;
    const given = usable ? usable[j] : null;
    if (typeof given === "number" && Number.isFinite(given) && given > 0) return given;
    if (result.constantColumns.includes(term)) return 0;
    if (result.path.coefficients.every((row) => row[j] === 0)) return 0;
    return null;
  });
}

/** Terms ranked by |standardized coefficient| at the chosen point (largest first, ties by order). */
function rankedTerms(result: FitResult, spreads?: ArrayLike<number | null> | null): PathTerm[] {
  const sd = termSpreads(result, spreads);
  const terms = result.terms.map((name, index) => ({
    index,
    name,
    spread: sd[index],
    chosen: sd[index] === null ? 0 : result.coefficients[index] * (sd[index] as number),
  }));
  return terms.sort((a, b) => Math.abs(b.chosen) - Math.abs(a.chosen) || a.index - b.index);
}

/**
 * What the path chart marks: a band over the strengths within 1 SE (from the one-SE rule's
 * strength to the lowest error's; both on the chosen mix, the path's), and one line at the
 * strength the rule picked. A fixed-strength fit has only its line; least squares neither.
 */
export interface PathMarks {
  /** [one-SE rule's strength, lowest error's strength], or null when they are the same (or no CV ran). */
  band: [number, number] | null;
  line: { strength: number; label: "chosen" | "fitted" } | null;
}

export function pathMarks(result: FitResult): PathMarks {
  if (result.choices) {
    const { lowest: min, oneSe: onese } = result.choices;
    return {
      band: onese.strength !== min.strength ? [onese.strength, min.strength] : null,
      line: { strength: result.strength, label: "chosen" },
    };
  }
  return { band: null, line: result.strength > 0 ? { strength: result.strength, label: "fitted" } : null };
}

/** What the band and the line mean, for the note under the title. */
function marksNote(result: FitResult): string {
  const marks = pathMarks(result);
  if (!marks.line) return "";
  if (!result.choices) return "Line: the fixed strength fitted.";
  const rule = ruleText(result);
  if (!marks.band) return `Line: chosen (${rule}; both rules pick this λ).`;
  return `Shaded: within 1 SE, from the one-SE rule's λ to the ${bestLabel(result)}'s. Line: chosen (${rule}).`;
}

type AxisParam = { seriesId?: string; seriesName?: string; value?: unknown; marker?: unknown; color?: unknown };

function asParams(params: unknown): AxisParam[] {
  return (Array.isArray(params) ? params : [params]) as AxisParam[];
}

export function pathChartOptions(result: FitResult, settings: ChartSettings): ChartOption {
  const palette = PALETTES[settings.theme];
  const layout = layoutFor(settings.width);
  const ranked = rankedTerms(result, settings.spreads);
  const drawn = ranked.filter((t) => t.spread !== null);
  const missing = ranked.filter((t) => t.spread === null).sort((a, b) => a.index - b.index);
  const keep: number[] = [];
  result.path.strengths.forEach((s, k) => {
    if (s > 0 && Number.isFinite(s)) keep.push(k);
  });
  const notes: string[] = [];
  if (result.choices || result.strength > 0) notes.push(`${mixTitle(result.path.mix)}.`);
  const markerText = keep.length > 0 ? marksNote(result) : "";
  if (markerText) notes.push(markerText);
  if (missing.length > 0) {
    notes.push(
      `Not drawn (0 at the chosen λ, so their SD isn't known): ${nameList(missing.map((t) => t.name), layout.compact ? 3 : 6, layout.nameChars)}`,
    );
  }
  if (keep.length < result.path.strengths.length) {
    notes.push(keep.length === 0 ? `${unpenalizedName(result, true)} (λ = 0): there is no path to draw.` : "λ = 0 can't be shown on a log scale; that point is left out.");
  }
  const note = notes.join("\n");
  const labelled = new Set(drawn.filter((t) => t.chosen !== 0).slice(0, layout.endLabels).map((t) => t.index));
  const strengths = keep.map((k) => result.path.strengths[k]);
  const extent = { min: strengths.length ? Math.min(...strengths) : 0, max: strengths.length ? Math.max(...strengths) : 0 };
  const series: LineSeriesOption[] = drawn.map((term, rank) => {
    const color = palette.lines[rank % palette.lines.length];
    const pattern = LINE_PATTERNS[Math.floor(rank / palette.lines.length) % LINE_PATTERNS.length];
    const spread = term.spread as number;
    return {
      type: "line",
      id: `term-${term.index}`,
      name: term.name,
      data: keep.map((k) => [result.path.strengths[k], result.path.coefficients[k][term.index] * spread]),
      showSymbol: false,
      symbolSize: 5,
      color,
      lineStyle: { width: rank < layout.endLabels ? 2 : 1.5, type: pattern, color },
      emphasis: { focus: "series" },
      z: 2,
      endLabel: {
        show: labelled.has(term.index),
        // echarts right-aligns end labels on an inverted axis (it expects the end on the left);
        // our lines end on the right, so the text starts just right of the last point.
        align: "left",
        offset: [4, 0],
        color: palette.text,
        fontSize: layout.font,
        formatter: () => truncate(term.name, layout.nameChars),
      },
      labelLayout: { moveOverlap: "shiftY" },
    };
  });
  const marks = keep.length > 0 ? pathMarks(result) : { band: null, line: null };
  const labelFont = layout.font - 1;
  if (marks.band) {
    // Behind the term lines (z 1), full plot height; its label sits above the plot, one row
    // higher than the line's label so the two never collide.
    series.push({
      type: "line",
      id: "choice-band",
      name: "within 1 SE",
      data: [],
      silent: true,
      z: 1,
      lineStyle: { opacity: 0 },
      markArea: {
        silent: true,
        animation: false,
        itemStyle: { color: palette.band, opacity: BAND_OPACITY, borderColor: palette.band, borderWidth: 0 },
        label: { show: true, position: "top", distance: labelFont + 7, color: palette.muted, fontSize: labelFont },
        data: [[{ xAxis: marks.band[0], name: "within 1 SE" }, { xAxis: marks.band[1] }]],
      },
    });
  }
  if (marks.line) {
    series.push({
      type: "line",
      id: "choices",
      name: marks.line.label,
      data: [],
      silent: true,
      color: palette.text,
      lineStyle: { opacity: 0 },
      markLine: {
        silent: true,
        symbol: ["none", "none"],
        animation: false,
        // echarts rounds a mark line's value to `precision` decimals (default 2) before placing
        // it: 0.022 would be drawn at 0.02. A negative precision keeps the value as it is.
        precision: -1,
        data: [
          {
            xAxis: marks.line.strength,
            name: marks.line.label,
            lineStyle: { color: palette.text, type: "solid", width: 1.5 },
            label: { show: true, formatter: marks.line.label, position: "end", distance: 3, color: palette.text, fontSize: labelFont, fontWeight: 600 },
          },
        ],
      },
    });
  }
  const legendShown = !layout.compact && drawn.length > 1;
  // The line's label sits above the plot, the band's a row higher.
  const labelRows = (marks.line ? 1 : 0) + (marks.band ? 1 : 0);
  const top = titleHeight(note, layout, settings.width) + (labelRows > 0 ? labelRows * (labelFont + 7) + 2 : 6);
  const endLabelWidth = Math.max(0, ...drawn.filter((t) => labelled.has(t.index)).map((t) => textWidth(truncate(t.name, layout.nameChars), layout.font)));
  const title = "Coefficient path";
  let yLow = 0;
  let yHigh = 0;
  for (const s of series) {
    for (const point of (s.data ?? []) as number[][]) {
      yLow = Math.min(yLow, point[1]);
      yHigh = Math.max(yHigh, point[1]);
    }
  }
  const right = Math.round(Math.max(18, Math.min(settings.width * 0.3, endLabelWidth + 12)));
  const { grid, yNameGap } = lineGrid(top, right, yLow, yHigh, legendShown, layout);
  const option: ChartOption = {
    ...baseOption(palette, layout),
    title: titleOption(title, note, palette, layout, settings.width),
    grid,
    xAxis: strengthAxis(extent, palette, layout),
    yAxis: { type: "value", ...valueAxisStyle(standardizedAxis(result), palette, layout), nameGap: yNameGap },
    tooltip: {
      ...tooltipBase(palette, layout),
      trigger: "axis",
      axisPointer: { type: "line", lineStyle: { color: palette.muted } },
      formatter: (params: unknown) => {
        const rows = asParams(params).filter((p) => typeof p.seriesId === "string" && p.seriesId.startsWith("term-"));
        if (rows.length === 0) return "";
        const strength = (rows[0].value as number[])[0];
        rows.sort((a, b) => Math.abs((b.value as number[])[1]) - Math.abs((a.value as number[])[1]));
        const lines = rows
          .slice(0, layout.tooltipRows)
          .map((p) => `${typeof p.marker === "string" ? p.marker : ""}${escapeHtml(String(p.seriesName))}: ${formatNumber((p.value as number[])[1])}`);
        if (rows.length > layout.tooltipRows) lines.push(`+${rows.length - layout.tooltipRows} more`);
        return [`λ ${formatNumber(strength)} (${standardizedAxis(result)})`, ...lines].join("<br/>");
      },
    },
    legend: {
      show: legendShown,
      type: "scroll",
      bottom: 0,
      left: 4,
      right: 4,
      data: drawn.map((t) => t.name),
      itemWidth: 14,
      itemHeight: 8,
      itemGap: 8,
      textStyle: { color: palette.text, fontSize: layout.font - 1, width: 90, overflow: "truncate" },
      pageTextStyle: { color: palette.text },
      pageIconColor: palette.text,
      pageIconInactiveColor: palette.axis,
    },
    series,
  };
  return option;
}

// ---------------------------------------------------------------------------------------------
// Cross-validation chart

/**
 * The top of each mix's grid: the first strength of that mix's rows in the CV table (the grid
 * runs from its top down; FitResult's path.top covers the chosen mix only). Mixes whose first
 * strength isn't positive are left out (no ratio to take).
 */
export function gridTops(result: FitResult): Map<number, number> {
  const tops = new Map<number, number>();
  for (const row of result.cv?.table ?? []) {
    if (!tops.has(row.mix)) tops.set(row.mix, row.strength);
  }
  for (const [mix, top] of tops) if (!(top > 0 && Number.isFinite(top))) tops.delete(mix);
  return tops;
}

export function cvChartOptions(result: FitResult, settings: ChartSettings): ChartOption {
  const axisKind = settings.cvAxis ?? DEFAULT_CV_AXIS;
  const palette = PALETTES[settings.theme];
  const layout = layoutFor(settings.width);
  const measure = measureName(result);
  const higher = result.cv ? higherIsBetter(result.cv.measure) : false;
  const measureTitle = result.cv ? measureWithDirection(result.cv.measure) : measure;
  const seLabel = oneSeLineLabel(result.cv?.measure ?? "mse");
  if (!result.cv || result.cv.table.length === 0) {
    return {
      ...baseOption(palette, layout),
      title: titleOption(
        "Cross-validated error",
        `No cross-validation: this model was fitted at a fixed strength (λ ${formatNumber(result.strength)}).`,
        palette,
        layout,
        settings.width,
      ),
      series: [],
    };
  }
  const table = result.cv.table;
  const mixes: number[] = [];
  for (const row of table) if (!mixes.includes(row.mix)) mixes.push(row.mix);
  const best = result.choices?.lowest.mix ?? result.mix;
  const tops = gridTops(result);
  const fraction = axisKind === "fraction";
  /** Where a strength of `mix` sits on the x axis (NaN when the mix has no grid top). */
  const xOf = (mix: number, strength: number): number => (fraction ? strength / (tops.get(mix) ?? NaN) : strength);
  const rowsOf = (mix: number) => table.filter((r) => r.mix === mix && r.strength > 0 && xOf(mix, r.strength) > 0);
  const series: LineSeriesOption[] = [];
  let lo = Infinity;
  let hi = 0;
  for (const mix of mixes) {
    for (const r of rowsOf(mix)) {
      lo = Math.min(lo, xOf(mix, r.strength));
      hi = Math.max(hi, xOf(mix, r.strength));
    }
  }
  /** Share of the plot's width from its left edge (the axis is log and inverted: strong at the left). */
  const across = (x: number): number => (hi > lo ? Math.log(hi / x) / Math.log(hi / lo) : 0.5);
  mixes.forEach((mix, i) => {
    const rows = rowsOf(mix);
    const color = palette.lines[i % palette.lines.length];
    const pattern = LINE_PATTERNS[Math.floor(i / palette.lines.length) % LINE_PATTERNS.length];
    const isBest = mix === best;
    const name = mixLabel(mix);
    const line: LineSeriesOption = {
      type: "line",
      id: `cv-mix-${i}`,
      name,
      data: rows.map((r) => [xOf(mix, r.strength), r.error, r.se, r.termsKept]),
      encode: { x: 0, y: 1 },
      showSymbol: false,
      symbolSize: 5,
      color,
      lineStyle: { color, width: isBest ? 2.5 : 1.5, type: pattern },
      emphasis: { focus: "series" },
      z: 3,
    };
    if (isBest && result.choices) {
      const { lowest: min, oneSe: onese } = result.choices;
      const points = [
        { label: bestLabel(result), point: min, chosen: result.rule === "lowest", symbol: "circle", position: "top" as const },
        { label: "one-SE rule", point: onese, chosen: result.rule === "one-se", symbol: "diamond", position: "bottom" as const },
      ];
      line.markPoint = {
        animation: false,
        data: points.map((p) => ({
          name: p.label,
          coord: [xOf(mix, p.point.strength), p.point.error],
          value: p.point.error,
          symbol: p.symbol,
          symbolSize: p.chosen ? 12 : 9,
          itemStyle: { color, borderColor: palette.background, borderWidth: 1.5 },
          label: {
            show: true,
            position: p.position,
            distance: 6,
            formatter: p.chosen ? `${p.label} (chosen)` : p.label,
            color: palette.text,
            fontSize: layout.font - 1,
            fontWeight: p.chosen ? 600 : 400,
          },
        })),
      };
      // The "± 1 SE" label goes to the side of the plot away from the marked points. On the
      // inverted axis the line's end is its left end. For the AUC the one-SE rule's threshold is
      // one SE below the highest value (engine/fit.ts higherIsBetter), and its label sits under the line.
      const pointsLeft = across(xOf(mix, Math.sqrt(min.strength * onese.strength))) < 0.5;
      const seLabelPosition = higher ? (pointsLeft ? "insideStartBottom" : "insideEndBottom") : pointsLeft ? "insideStartTop" : "insideEndTop";
      line.markLine = {
        silent: true,
        symbol: ["none", "none"],
        animation: false,
        precision: -1, // place the line at the exact value (see the path chart's line)
        data: [
          {
            yAxis: higher ? min.error - min.se : min.error + min.se,
            name: seLabel,
            lineStyle: { color: palette.muted, type: "dashed", width: 1 },
            label: { show: true, formatter: seLabel, position: seLabelPosition, color: palette.muted, fontSize: layout.font - 1 },
          },
        ],
      };
    }
    series.push(line);
    // The ± SE band: invisible lower edge, then a stacked 2·SE layer with its area filled.
    series.push({
      type: "line",
      id: `cv-band-low-${i}`,
      name,
      stack: `band-${i}`,
      data: rows.map((r) => [xOf(mix, r.strength), r.error - r.se]),
      symbol: "none",
      silent: true,
      lineStyle: { opacity: 0 },
      tooltip: { show: false },
      z: 1,
    });
    series.push({
      type: "line",
      id: `cv-band-${i}`,
      name,
      stack: `band-${i}`,
      data: rows.map((r) => [xOf(mix, r.strength), 2 * r.se]),
      symbol: "none",
      silent: true,
      lineStyle: { opacity: 0 },
      areaStyle: { color, opacity: isBest ? 0.22 : 0.09 },
      tooltip: { show: false },
      z: 1,
    });
  });
  const legendShown = mixes.length > 1;
  // The note is the legend's title: it names the mix in full, the legend entries say "α = …".
  const note =
    `${legendShown ? `Lines: ${MIX_TITLE}.` : `${mixTitle(mixes[0])}.`} Shaded: ± 1 SE over ${result.cv.folds} folds.` +
    (fraction ? " Each mix's λ is divided by the top of its own grid." : "");
  const title = `Cross-validated ${measureTitle}`;
  let yLow = Infinity;
  let yHigh = -Infinity;
  for (const r of table) {
    yLow = Math.min(yLow, r.error - r.se);
    yHigh = Math.max(yHigh, r.error + r.se);
  }
  const { grid, yNameGap } = lineGrid(titleHeight(note, layout, settings.width) + 6, 18, yLow, yHigh, legendShown, layout);
  return {
    ...baseOption(palette, layout),
    title: titleOption(title, note, palette, layout, settings.width),
    grid,
    xAxis: strengthAxis({ min: lo, max: hi }, palette, layout, CV_AXIS_NAMES[axisKind]),
    yAxis: { type: "value", scale: true, ...valueAxisStyle(`cross-validated ${measureTitle}`, palette, layout), nameGap: yNameGap },
    tooltip: {
      ...tooltipBase(palette, layout),
      trigger: "axis",
      axisPointer: { type: "line", lineStyle: { color: palette.muted } },
      // The mixes have grids of their own, so echarts' axis tooltip finds only the mix with a
      // point nearest the pointer. List every mix's point nearest (on the log scale) instead.
      formatter: (params: unknown) => {
        const first = asParams(params)[0] as (AxisParam & { axisValue?: unknown }) | undefined;
        const at = typeof first?.axisValue === "number" ? first.axisValue : Array.isArray(first?.value) ? Number(first.value[0]) : NaN;
        if (!(at > 0)) return "";
        const lines: string[] = [];
        mixes.forEach((mix, i) => {
          const rows = rowsOf(mix);
          if (rows.length === 0) return;
          const x = (r: (typeof rows)[number]): number => xOf(mix, r.strength);
          const top = x(rows[0]);
          const bottom = x(rows[rows.length - 1]);
          if (at > top * 1.15 || at < bottom / 1.15) return; // outside this mix's grid
          let near = rows[0];
          for (const r of rows) if (Math.abs(Math.log(x(r) / at)) < Math.abs(Math.log(x(near) / at))) near = r;
          const swatch = `<span style="display:inline-block;width:9px;height:9px;border-radius:50%;margin-right:5px;background:${palette.lines[i % palette.lines.length]}"></span>`;
          const where = fraction ? ` at λ ${formatNumber(near.strength)}` : "";
          lines.push(`${swatch}${escapeHtml(mixLabel(mix))}: ${formatNumber(near.error)} ± ${formatNumber(near.se)}${where}, ${near.termsKept} terms kept`);
        });
        if (lines.length === 0) return "";
        return [`cross-validated ${measure} ± 1 SE at ${fraction ? "strength ÷ top of grid" : "λ"} ≈ ${formatNumber(at)}`, ...lines].join("<br/>");
      },
    },
    legend: {
      show: legendShown,
      type: "scroll",
      bottom: 0,
      left: 4,
      right: 4,
      data: mixes.map(mixLabel),
      // Compact: "0 (ridge)", "0.25", … (the note names the mix in full).
      formatter: layout.compact ? (name: string) => name.replace(/^α = /, "") : undefined,
      itemWidth: 14,
      itemHeight: 8,
      itemGap: 8,
      textStyle: { color: palette.text, fontSize: layout.font - 1 },
      pageTextStyle: { color: palette.text },
      pageIconColor: palette.text,
      pageIconInactiveColor: palette.axis,
    },
    series,
  };
}

// ---------------------------------------------------------------------------------------------
// Coefficient bars

interface BarEntry {
  index: number;
  name: string;
  value: number;
}

/** Nonzero terms by |standardized coefficient|, largest first (ties in term order), and the zero terms. */
export function barEntries(result: FitResult): { nonzero: BarEntry[]; zero: string[] } {
  const nonzero: BarEntry[] = [];
  const zero: string[] = [];
  result.terms.forEach((name, index) => {
    const value = result.standardizedCoefficients[index];
    if (value !== 0 && Number.isFinite(value)) nonzero.push({ index, name, value });
    else zero.push(name);
  });
  nonzero.sort((a, b) => Math.abs(b.value) - Math.abs(a.value) || a.index - b.index);
  return { nonzero, zero };
}

function choiceTitle(result: FitResult): string {
  if (result.rule === "fixed" && result.strength === 0) return `${unpenalizedName(result, false)} (λ 0)`;
  return `λ ${formatNumber(result.strength)}`;
}

function leastSquares(result: FitResult): boolean {
  return result.rule === "fixed" && result.strength === 0;
}

export function coefficientBarOptions(result: FitResult, settings: ChartSettings): ChartOption {
  const palette = PALETTES[settings.theme];
  const layout = layoutFor(settings.width);
  const { nonzero, zero } = barEntries(result);
  const shown = nonzero.slice(0, MAX_BARS);
  const twoClass = result.outcome === "two-class";
  const notes = leastSquares(result) ? [] : [`${mixTitle(result.mix)}.`];
  notes.push(twoClass ? "Log-odds of the event per SD of each term; intercept not shown." : "Per SD of each term; intercept not shown.");
  if (nonzero.length > shown.length) notes.push(`${nonzero.length - shown.length} smaller terms kept but not drawn.`);
  if (zero.length > 0) notes.push(`Zero, not drawn: ${nameList(zero, layout.compact ? 4 : 8, layout.nameChars)}`);
  if (nonzero.length === 0) {
    notes.push(twoClass ? "Every coefficient is 0: the model gives every row the overall share of events." : "Every coefficient is 0: the model predicts the average.");
  }
  const note = notes.join("\n");
  const base: ChartOption = {
    ...baseOption(palette, layout),
    title: titleOption(`Coefficients at ${choiceTitle(result)}`, note, palette, layout, settings.width),
  };
  if (shown.length === 0) return { ...base, series: [] };
  const values = shown.map((e) => e.value);
  const low = Math.min(0, ...values);
  const high = Math.max(0, ...values);
  const span = high - low;
  // Room beyond the longest bars for their value labels.
  const pad = span * (layout.compact ? 0.42 : 0.32);
  const byIndex = new Map(shown.map((e) => [e.index, e]));
  return {
    ...base,
    grid: {
      left: layout.barLabelWidth + 12,
      right: 14,
      top: titleHeight(note, layout, settings.width) + 4,
      bottom: layout.font + 12 + (layout.font + 3) + 6,
      outerBoundsMode: "none",
    },
    xAxis: {
      type: "value",
      min: low < 0 ? low - pad : 0,
      max: high > 0 ? high + pad : 0,
      ...valueAxisStyle(standardizedAxis(result), palette, layout),
      nameGap: layout.font + 12,
      axisLabel: {
        color: palette.text,
        fontSize: layout.font,
        hideOverlap: true,
        showMinLabel: low >= 0,
        showMaxLabel: high <= 0,
        formatter: (value: number) => formatNumber(value, 2),
      },
    },
    yAxis: {
      type: "category",
      inverse: true,
      data: shown.map((e) => e.name),
      axisLine: { show: true, onZero: true, lineStyle: { color: palette.axis } },
      axisTick: { show: false },
      axisLabel: { color: palette.text, fontSize: layout.font, width: layout.barLabelWidth, overflow: "truncate", ellipsis: "…", interval: 0 },
    },
    tooltip: {
      ...tooltipBase(palette, layout),
      trigger: "item",
      formatter: (params: unknown) => {
        const p = asParams(params)[0] as AxisParam & { dataIndex?: number };
        const entry = typeof p.dataIndex === "number" ? shown[p.dataIndex] : undefined;
        if (!entry) return "";
        if (twoClass) {
          return [
            `<b>${escapeHtml(entry.name)}</b>`,
            `log-odds per SD of term: ${signed(entry.value)}`,
            `log-odds per unit of term: ${signed(result.coefficients[entry.index])}`,
            `odds ratio per unit: ${formatNumber(oddsRatio(result.coefficients[entry.index]))}`,
          ].join("<br/>");
        }
        return [
          `<b>${escapeHtml(entry.name)}</b>`,
          `per SD of term: ${signed(entry.value)}`,
          `per unit of term: ${signed(result.coefficients[entry.index])}`,
        ].join("<br/>");
      },
    },
    series: [
      {
        type: "bar",
        id: "bars",
        name: standardizedAxis(result),
        barMaxWidth: 18,
        barCategoryGap: "35%",
        data: shown.map((e) => ({
          value: e.value,
          name: e.name,
          itemStyle: { color: e.value > 0 ? palette.positive : palette.negative },
          label: { position: e.value > 0 ? "right" : "left" },
        })),
        label: {
          show: true,
          color: palette.text,
          fontSize: layout.font,
          formatter: (p: { dataIndex: number }) => {
            const entry = byIndex.get(shown[p.dataIndex]?.index ?? -1);
            return entry ? signed(entry.value) : "";
          },
        },
      },
    ],
  };
}

// ---------------------------------------------------------------------------------------------
// Kind dispatch, sizes, text alternatives

export function chartOptions(kind: ChartKind, result: FitResult, settings: ChartSettings): ChartOption {
  if (kind === "path") return pathChartOptions(result, settings);
  if (kind === "cv") return cvChartOptions(result, settings);
  return coefficientBarOptions(result, settings);
}

/**
 * A height (px) that fits the chart at this width: the title and notes, axes and legend, plus a
 * plot area of about 0.55 × width (170–280 px) for the line charts, or 22–24 px a bar.
 */
export function suggestedHeight(kind: ChartKind, result: FitResult, width: number, spreads?: ArrayLike<number | null> | null, cvAxis?: CvAxis): number {
  const options = chartOptions(kind, result, { theme: "light", width, spreads, cvAxis });
  const grid = options.grid as GridComponentOption | undefined;
  if (!grid || (Array.isArray(options.series) && options.series.length === 0)) return 120;
  const margins = Number(grid.top ?? 0) + Number(grid.bottom ?? 0);
  if (kind === "bars") {
    const bars = Math.min(MAX_BARS, barEntries(result).nonzero.length);
    return Math.round(margins + bars * (layoutFor(width).compact ? 22 : 24));
  }
  return Math.round(margins + Math.max(170, Math.min(280, width * 0.55)));
}

/** Short text alternative for screen readers. */
export function describeChart(kind: ChartKind, result: FitResult, spreads?: ArrayLike<number | null> | null, cvAxis: CvAxis = DEFAULT_CV_AXIS): string {
  const largest = (entries: { name: string; value: number }[]): string =>
    entries
      .slice(0, 3)
      .map((e) => `${e.name} ${signed(e.value)}`)
      .join(", ");
  if (kind === "path") {
    const strengths = result.path.strengths.filter((s) => s > 0);
    if (strengths.length === 0) return `Coefficient path: not available for ${result.outcome === "two-class" ? "an unpenalized logistic" : "a least-squares"} fit (strength 0).`;
    const ranked = rankedTerms(result, spreads);
    const drawn = ranked.filter((t) => t.spread !== null);
    const missing = ranked.length - drawn.length;
    const nonzero = result.coefficients.filter((b) => b !== 0).length;
    const top = drawn.filter((t) => t.chosen !== 0).map((t) => ({ name: t.name, value: t.chosen }));
    const marks = pathMarks(result);
    let marked = "";
    if (marks.band && result.choices) {
      marked =
        `A shaded band marks the strengths within 1 SE, from λ ${formatNumber(result.choices.oneSe.strength)} (one-SE rule) ` +
        `to λ ${formatNumber(result.choices.lowest.strength)} (${bestLabel(result)}). `;
    }
    if (marks.line) {
      const why = !result.choices ? "the fixed strength" : marks.band ? ruleText(result) : "both rules pick it";
      marked += `A solid line marks the ${marks.line.label} λ ${formatNumber(marks.line.strength)} (${why}), with ${nonzero} terms kept`;
    } else {
      marked += `At λ ${formatNumber(result.strength)}, ${nonzero} terms kept`;
    }
    return (
      `Coefficient path for ${mixTitle(result.path.mix)}: ${drawn.length} of ${result.terms.length} terms, ` +
      `λ from ${formatNumber(Math.max(...strengths))} down to ${formatNumber(Math.min(...strengths))} (log scale). ` +
      marked +
      (top.length ? `; largest ${result.outcome === "two-class" ? "log-odds " : ""}per SD: ${largest(top)}.` : ".") +
      (missing ? ` ${missing} terms not drawn (their SD is unknown).` : "")
    );
  }
  if (kind === "cv") {
    if (!result.cv || !result.choices) return `No cross-validation: fitted at a fixed strength λ ${formatNumber(result.strength)}.`;
    const measure = measureWithDirection(result.cv.measure);
    const mixes = [...new Set(result.cv.table.map((r) => r.mix))];
    const { lowest: min, oneSe: onese } = result.choices;
    return (
      `Cross-validated ${measure} against ${cvAxis === "fraction" ? "strength ÷ top of grid (each mix's λ over the top of its own grid)" : "λ"} ` +
      `for ${mixes.length === 1 ? mixTitle(mixes[0]) : `${mixes.length} values of ${MIX_TITLE}`}, with ± 1 SE bands (log scale). ` +
      `Marked: ${bestLabel(result)} ${formatNumber(min.error)} ± ${formatNumber(min.se)} at ${mixTitle(min.mix)}, λ ${formatNumber(min.strength)}, ${min.termsKept} terms kept; ` +
      `one-SE rule at λ ${formatNumber(onese.strength)}, ${onese.termsKept} terms kept. Chosen: ${ruleText(result)}.`
    );
  }
  const { nonzero, zero } = barEntries(result);
  return (
    `${result.outcome === "two-class" ? "Log-odds of the event" : "Coefficients"} per SD of each term at ${choiceTitle(result)}${leastSquares(result) ? "" : `, ${mixTitle(result.mix)}`}: ` +
    (nonzero.length ? `${largest(nonzero)}${nonzero.length > 3 ? `, and ${nonzero.length - 3} more` : ""}. ` : "all zero. ") +
    (zero.length ? `${zero.length} terms are zero.` : "No term is zero.")
  );
}

// ---------------------------------------------------------------------------------------------
// Rendering

/** The chart as SVG text, rendered without a DOM (echarts server-side rendering). */
export function renderChartSvg(kind: ChartKind, result: FitResult, settings: ChartSettings & { height?: number }): string {
  const height = settings.height ?? suggestedHeight(kind, result, settings.width, settings.spreads, settings.cvAxis);
  const chart = echarts.init(null, null, { renderer: "svg", ssr: true, width: settings.width, height });
  try {
    chart.setOption(chartOptions(kind, result, settings));
    return chart.renderToSVGString();
  } finally {
    chart.dispose();
  }
}

function widthOf(el: HTMLElement): number {
  return el.clientWidth || Math.round(el.getBoundingClientRect().width) || 360;
}

/**
 * Draws a chart into `el` (SVG renderer). When `el` has no height of its own, it gets
 * `suggestedHeight` (and keeps following it on update and resize).
 */
export function mountChart(el: HTMLElement, kind: ChartKind, result: FitResult, settings: MountSettings): ChartHandle {
  let current = result;
  let theme = settings.theme;
  let spreads = settings.spreads ?? null;
  let cvAxis = settings.cvAxis ?? DEFAULT_CV_AXIS;
  const ownHeight = el.clientHeight === 0;
  const fitHeight = (): void => {
    if (ownHeight) el.style.height = `${suggestedHeight(kind, current, widthOf(el), spreads, cvAxis)}px`;
  };
  fitHeight();
  const chart = echarts.init(el, null, { renderer: "svg" });
  let disposed = false;
  const draw = (): void => {
    chart.setOption(chartOptions(kind, current, { theme, width: widthOf(el), spreads, cvAxis }), { notMerge: true });
    el.setAttribute("role", "img");
    el.setAttribute("aria-label", describeChart(kind, current, spreads, cvAxis));
  };
  const live = (): void => {
    if (disposed) throw new Error("this chart was disposed");
  };
  draw();
  return {
    update(next: FitResult, nextSpreads?: ArrayLike<number | null> | null): void {
      live();
      current = next;
      if (nextSpreads !== undefined) spreads = nextSpreads;
      fitHeight();
      chart.resize();
      draw();
    },
    setTheme(next: ChartTheme): void {
      live();
      theme = next;
      draw();
    },
    setCvAxis(next: CvAxis): void {
      live();
      if (next === cvAxis) return;
      cvAxis = next;
      if (kind !== "cv") return;
      fitHeight();
      chart.resize();
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
        offscreen.setOption(chartOptions(kind, current, { theme, width, spreads, cvAxis }));
        return offscreen.getDataURL({ type: "png", pixelRatio: 2, backgroundColor: PALETTES[theme].background });
      } finally {
        offscreen.dispose();
      }
    },
    exportSvg(): string {
      live();
      return renderChartSvg(kind, current, { theme, width: chart.getWidth(), height: chart.getHeight(), spreads, cvAxis });
    },
    describe(): string {
      return describeChart(kind, current, spreads, cvAxis);
    },
  };
}

// ---------------------------------------------------------------------------------------------
// Plain line charts from cell data (the stand-in workbook's copy of a report sheet's native chart)

export interface SeriesChartSpec {
  title: string;
  xTitle: string;
  yTitle: string;
  /** Logarithmic x axis (x values must then be positive). */
  logX: boolean;
  series: { name: string; points: [number, number][] }[];
}

/** echarts options for lines of y against x, in the pane's palettes. Pure. */
export function seriesChartOptions(spec: SeriesChartSpec, settings: { theme: ChartTheme; width: number }): ChartOption {
  const palette = PALETTES[settings.theme];
  const layout = layoutFor(settings.width);
  return {
    ...baseOption(palette, layout),
    title: titleOption(spec.title, "", palette, layout, settings.width),
    tooltip: { trigger: "item", backgroundColor: palette.background, borderColor: palette.axis, textStyle: { color: palette.text, fontSize: layout.font } },
    legend: layout.compact ? { show: false } : { type: "scroll", bottom: 0, textStyle: { color: palette.text, fontSize: layout.font - 1 } },
    grid: { left: 56, right: 16, top: 36, bottom: layout.compact ? 40 : 64 },
    xAxis: {
      type: spec.logX ? "log" : "value",
      name: spec.logX ? `${spec.xTitle} (log scale)` : spec.xTitle,
      nameLocation: "middle",
      nameGap: 26,
      axisLine: { lineStyle: { color: palette.axis } },
      axisLabel: { color: palette.text, formatter: (v: number) => formatNumber(v) },
      splitLine: { lineStyle: { color: palette.gridLine } },
    },
    yAxis: {
      type: "value",
      name: spec.yTitle,
      nameLocation: "middle",
      nameGap: 42,
      axisLine: { lineStyle: { color: palette.axis } },
      axisLabel: { color: palette.text, formatter: (v: number) => formatNumber(v) },
      splitLine: { lineStyle: { color: palette.gridLine } },
    },
    series: spec.series.map((s, k) => ({
      type: "line",
      name: s.name,
      data: s.points,
      showSymbol: false,
      lineStyle: { width: 1.6, color: palette.lines[k % palette.lines.length], type: LINE_PATTERNS[Math.floor(k / palette.lines.length) % LINE_PATTERNS.length] },
      itemStyle: { color: palette.lines[k % palette.lines.length] },
    })),
  } as ChartOption;
}

/** Draws a SeriesChartSpec into `el` (SVG renderer); returns a function that disposes it. */
export function mountSeriesChart(el: HTMLElement, spec: SeriesChartSpec, theme: ChartTheme, width = 560, height = 300): () => void {
  el.style.width = `${width}px`;
  el.style.maxWidth = "100%";
  el.style.height = `${height}px`;
  const chart = echarts.init(el, null, { renderer: "svg" });
  chart.setOption(seriesChartOptions(spec, { theme, width }));
  return () => chart.dispose();
}
