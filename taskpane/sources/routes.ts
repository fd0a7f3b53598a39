/**
 * The engine behind the pane's fits from sums (sumsPane.ts SumsRoutes), loaded with the panel
 * on the first switch away from worksheet ranges:
 * - a sums table in its long form on the sheet → engine/sums.ts sumsFromLong (checked);
 * - the fit → engine/fitSums.ts fitFromSumsAsync, in the pane's own thread: it costs
 *   O(blocks·p²) per strength, independent of the rows, and yields to the page between units of
 *   work, so progress shows and Cancel gets through.
 */
import type { FitResult } from "../../engine/fit";
import { fitFromSumsAsync } from "../../engine/fitSums";
import { sumsFromLong } from "../../engine/sums";
import type { SumsTable } from "../../engine/sumsTable";
import type { CellValue } from "../host/sheetHost";
import type { SumsFitSettings } from "./sumsInputs";
import type { RouteSignal, SumsRoutes } from "./sumsPane";

/** The fit from sums with the pane's settings (engine option names). */
export function fitWithSettings(sums: SumsTable, settings: SumsFitSettings, onProgress: (done: number, total: number) => void, signal: RouteSignal): Promise<FitResult> {
  return fitFromSumsAsync(sums, {
    ...(settings.mixes ? { mixes: settings.mixes } : {}),
    ...(settings.folds !== undefined ? { folds: settings.folds } : {}),
    rule: settings.rule,
    standardize: settings.standardize,
    intercept: settings.intercept,
    onProgress,
    signal,
  });
}

/** A long sums table from a worksheet range (blank cells arrive as ""; the reader skips blank rows). */
export function sumsOfRange(rows: CellValue[][]): SumsTable {
  return sumsFromLong(rows.map((row) => row.map((cell) => (cell === "" ? null : cell))));
}

/** The routes the pane uses. */
export const sumsRoutes: SumsRoutes = {
  sumsFromLong: sumsOfRange,
  fitFromSums: fitWithSettings,
};
