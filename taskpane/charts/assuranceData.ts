/**
 * The data behind the pane's "how sure is it" views and the report's sections: held-out
 * predictions with CV+ intervals, and kept shares with stability selection.
 *
 * Held-out predictions of a fit, as the pane's "held-out predictions vs actual" chart and the
 * report sheet use them. Pure: no DOM, no echarts.
 *
 * Cross-validation predicts every training row i from the fold model that did not see it:
 * prediction_i = y_i − residual_i, with FitResult.heldOut listing (row, fold, residual). With an
 * interval level the CV+ interval (Barber, Candès, Ramdas & Tibshirani 2021, "Predictive
 * inference with the jackknife+", Annals of Statistics 49(1); engine/conformal.ts) is computed at
 * each plotted row's own x, exactly as SHRINK.PREDICT would give it for a new row with those
 * values. That costs O(m·(K·p + n)) for m plotted rows and n held-out rows, so at most
 * MAX_INTERVAL_ROWS rows are plotted: beyond that the rows are thinned evenly (every
 * (n/m)-th held-out row, in row order) and the summary says so.
 *
 * The share of training rows inside their own interval is a rough check only: each training
 * row's own held-out residual is one of the n residuals its interval is built from, so it is not
 * the coverage a new row would get (the guarantee is for new rows, exchangeable with these).
 *
 * Yes/no fits carry no held-out list (FitResult.heldOut is for number targets): heldOutPoints
 * returns null for them, and the pane shows a note instead of the chart.
 */
import type { FitResult } from "../../engine/fit";
import { predictionIntervals } from "../../engine/conformal";
import { CancelledError, type CancelSignal } from "../../engine/errors";
import { fromRows } from "../../engine/matrix";

/** Most rows the chart plots (and the report measures intervals on); more are thinned evenly. */
export const MAX_INTERVAL_ROWS = 2000;

export interface HeldOutPoints {
  /** Held-out rows in the fit (FitResult.heldOut.row.length). */
  total: number;
  /** Plotted rows: 0-based indexes into the rows the fit used, in row order. */
  rows: number[];
  /** True when `rows` is an even thinning of the held-out rows (total > the cap). */
  thinned: boolean;
  actual: number[];
  predicted: number[];
  /** Pearson correlation of held-out prediction and actual over every held-out row (NaN when either is constant). */
  correlation: number;
  /** The interval level asked for, or null. */
  level: number | null;
  /** CV+ ends at each plotted row (±Infinity when there are too few rows for the level); null without a level or when refused (see intervalNote). */
  low: number[] | null;
  high: number[] | null;
  /** Why no intervals were computed though a level was set (time-ordered folds, …), or null. */
  intervalNote: string | null;
  /** Share of plotted rows whose actual value lies in its interval (a rough check: see the module comment). */
  inside: number | null;
  /** Median and 90th-percentile half-width (high − low)/2 over the plotted rows (nearest rank). */
  medianHalfWidth: number | null;
  p90HalfWidth: number | null;
}

/** Evenly spread positions 0 … total−1, at most `cap` of them: ⌊k·total/cap⌋. */
export function thinEvenly(total: number, cap: number): number[] {
  if (total <= cap) return Array.from({ length: total }, (_, k) => k);
  const out: number[] = [];
  for (let k = 0; k < cap; k++) out.push(Math.floor((k * total) / cap));
  return out;
}

/** The p-quantile by nearest rank (common practice): the ⌈p·n⌉-th smallest; null for no values. */
export function nearestRank(values: readonly number[], p: number): number | null {
  if (values.length === 0) return null;
  const sorted = [...values].sort((a, b) => a - b);
  const rank = Math.min(sorted.length, Math.max(1, Math.ceil(p * sorted.length)));
  return sorted[rank - 1];
}

/** Pearson correlation (common practice); NaN when either side is constant or there are fewer than 2 values. */
export function correlation(x: readonly number[], y: readonly number[]): number {
  const n = x.length;
  if (n < 2 || y.length !== n) return NaN;
  let mx = 0;
  let my = 0;
  for (let i = 0; i < n; i++) {
    mx += x[i];
    my += y[i];
  }
  mx /= n;
  my /= n;
  let sxy = 0;
  let sxx = 0;
  let syy = 0;
  for (let i = 0; i < n; i++) {
    const dx = x[i] - mx;
    const dy = y[i] - my;
    sxy += dx * dy;
    sxx += dx * dx;
    syy += dy * dy;
  }
  return sxx > 0 && syy > 0 ? sxy / Math.sqrt(sxx * syy) : NaN;
}

function messageOf(error: unknown): string {
  return error instanceof Error ? error.message : String(error);
}

/**
 * The held-out points of a number fit with cross-validation, with CV+ intervals at `level`
 * (null: none). `target` and `predictors` are the rows the fit was given (Dataset.target and
 * Dataset.predictors: heldOut.row indexes them). Returns null when the fit kept no held-out rows
 * (a yes/no target, a fixed strength).
 */
export function heldOutPoints(
  result: FitResult,
  target: ArrayLike<number>,
  predictors: readonly (readonly number[])[],
  level: number | null,
  options: { maxRows?: number; signal?: CancelSignal } = {},
): HeldOutPoints | null {
  const held = result.heldOut;
  if (result.outcome !== "number" || !held || held.row.length === 0) return null;
  const total = held.row.length;
  const cap = Math.max(1, Math.floor(options.maxRows ?? MAX_INTERVAL_ROWS));
  const allActual: number[] = [];
  const allPredicted: number[] = [];
  for (let k = 0; k < total; k++) {
    const y = target[held.row[k]];
    allActual.push(y);
    allPredicted.push(y - held.residual[k]);
  }
  const picked = thinEvenly(total, cap);
  const points: HeldOutPoints = {
    total,
    rows: picked.map((k) => held.row[k]),
    thinned: picked.length < total,
    actual: picked.map((k) => allActual[k]),
    predicted: picked.map((k) => allPredicted[k]),
    correlation: correlation(allActual, allPredicted),
    level,
    low: null,
    high: null,
    intervalNote: null,
    inside: null,
    medianHalfWidth: null,
    p90HalfWidth: null,
  };
  if (level === null) return points;
  const width = result.terms.length;
  const rowsX = points.rows.map((i) => predictors[i]);
  if (rowsX.some((row) => !row || row.length !== width)) {
    points.intervalNote = "the rows given don't match the fit's terms, so no intervals were computed";
    return points;
  }
  try {
    const { low, high } = predictionIntervals(result, fromRows(rowsX), level, options.signal);
    points.low = Array.from(low);
    points.high = Array.from(high);
  } catch (error) {
    if (error instanceof CancelledError) throw error;
    points.intervalNote = messageOf(error);
    return points;
  }
  let inside = 0;
  const halfWidths: number[] = [];
  for (let t = 0; t < points.rows.length; t++) {
    const lo = points.low[t];
    const hi = points.high[t];
    if (points.actual[t] >= lo && points.actual[t] <= hi) inside++;
    halfWidths.push((hi - lo) / 2);
  }
  points.inside = inside / points.rows.length;
  points.medianHalfWidth = nearestRank(halfWidths, 0.5);
  points.p90HalfWidth = nearestRank(halfWidths, 0.9);
  return points;
}

// ---------------------------------------------------------------------------------------------
// Kept share and stability selection

export interface KeptEntry {
  /** Index into result.terms. */
  index: number;
  name: string;
  kept: number;
  sameSign: number;
  /** Stability selection's share, or null when it did not run. */
  stableShare: number | null;
  stable: boolean;
}

/**
 * Terms by kept share, largest first; ties by stable share (when it ran), then term order.
 * Empty without kept shares (no cross-validation).
 */
export function keptEntries(result: FitResult): KeptEntry[] {
  const kept = result.keptShare ?? [];
  const stability = result.stability ?? null;
  const entries = kept.map((k, index) => ({
    index,
    name: k.term,
    kept: k.kept,
    sameSign: k.sameSign,
    stableShare: stability ? (stability.share[index] ?? null) : null,
    stable: stability ? stability.stable[index] === true : false,
  }));
  return entries.sort((a, b) => b.kept - a.kept || (b.stableShare ?? 0) - (a.stableShare ?? 0) || a.index - b.index);
}

