/**
 * The engine behind the pane's fits from sums (sumsPane.ts SumsRoutes), loaded with the panel
 * on the first switch away from worksheet ranges:
 * - a local CSV file → engine/sumsSql.ts computeSums, its queries run by DuckDB in this browser
 *   (fileSums.ts FileSumsReader: the file is read in place by DuckDB's worker);
 * - a local Parquet file → parquetSums.ts (its own chunk): hyparquet reads it row group by row
 *   group and engine/sumsScan.ts evaluates the same plan (same checks, terms and blocks);
 * - a sums table in its long form on the sheet → engine/sums.ts sumsFromLong (checked);
 * - the fit → engine/fitSums.ts fitFromSums, in the fit worker (the runner's `fitSums`,
 *   functions/workerRunner.ts), so the pane's thread stays free while it runs; progress and Cancel
 *   as for a worksheet fit. Where the runner has no fitSums (tests, a host without workers) it
 *   runs here with fitFromSumsAsync, which yields to the page between units of work. The result
 *   is the same bit for bit either way.
 */
import type { FitResult } from "../../engine/fit";
import { fitFromSumsAsync } from "../../engine/fitSums";
import { sumsFromLong } from "../../engine/sums";
import { computeSums, type SumsStep } from "../../engine/sumsSql";
import type { SumsTable } from "../../engine/sumsTable";
import type { CellValue } from "../host/sheetHost";
import type { FitRunner, SumsFitRequest } from "../../functions/runner";
import { fileKindOf, type FileProgress, type FileSumsReader } from "./fileSums";
import type { FileSpec, SumsFitSettings } from "./sumsInputs";
import type { RouteSignal, SumsRoutes } from "./sumsPane";

/** The engine's options for the pane's settings (engine option names). */
export function sumsOptionsOf(settings: SumsFitSettings): SumsFitRequest["options"] {
  return {
    ...(settings.mixes ? { mixes: settings.mixes } : {}),
    ...(settings.folds !== undefined ? { folds: settings.folds } : {}),
    rule: settings.rule,
    standardize: settings.standardize,
    intercept: settings.intercept,
  };
}

/** The fit from sums with the pane's settings, in this thread. */
export function fitWithSettings(sums: SumsTable, settings: SumsFitSettings, onProgress: (done: number, total: number) => void, signal: RouteSignal): Promise<FitResult> {
  return fitFromSumsAsync(sums, { ...sumsOptionsOf(settings), onProgress, signal });
}

/**
 * The fit from sums through `runner`'s fitSums (the fit worker), the pane's signal as its cancel
 * token; in this thread (fitWithSettings) when the runner has none.
 */
export function fitThrough(runner: FitRunner | undefined): SumsRoutes["fitFromSums"] {
  const fitSums = runner?.fitSums?.bind(runner);
  if (!fitSums) return fitWithSettings;
  return (sums, settings, onProgress, signal) =>
    fitSums(
      { sums, options: sumsOptionsOf(settings) },
      {
        get cancelled() {
          return signal.aborted;
        },
        onCancel: (callback) => signal.onAbort(callback),
      },
      (progress) => onProgress(progress.done, progress.total),
    );
}

/** A long sums table from a worksheet range (blank cells arrive as ""; the reader skips blank rows). */
export function sumsOfRange(rows: CellValue[][]): SumsTable {
  return sumsFromLong(rows.map((row) => row.map((cell) => (cell === "" ? null : cell))));
}

/** What each of the generator's queries does, for the progress line. */
const STEP_WORDS: Readonly<Record<SumsStep, string>> = {
  describe: "reading the columns",
  firstPass: "first pass over the rows (counts and centre)",
  levels: "listing a text column's levels",
  secondPass: "second pass over the rows (sums per block)",
};

/**
 * The sums table of a picked file: the generator's queries (describe, first pass, levels of each
 * text predictor, the second pass in chunks of at most 1000 aggregates), run by DuckDB. Progress
 * counts queries; the total is known once the first pass has told how many text predictors there
 * are (before that: at least describe, first and second pass).
 */
export async function sumsOfFile(reader: FileSumsReader, file: File, spec: FileSpec, onProgress: (progress: FileProgress) => void, signal: RouteSignal): Promise<SumsTable> {
  if (fileKindOf(file.name) === "parquet") {
    const { sumsOfParquet } = await import(/* webpackChunkName: "parquet-reader" */ "./parquetSums");
    return sumsOfParquet(
      file,
      spec,
      (done, total, scan) => onProgress({ done, total, step: scan === "first" ? "first pass over the row groups (counts and centre)" : "second pass over the row groups (sums per block)", unit: "row groups read" }),
      signal,
    );
  }
  return reader.run(file, signal, (query, registered) => {
    let done = 0;
    let total = 3;
    const run = async (sql: string) => {
      const rows = await query(sql);
      done++;
      return rows;
    };
    return computeSums(
      {
        source: { kind: registered.kind, path: registered.name },
        dialect: "duckdb",
        target: spec.target,
        predictors: spec.predictors,
        weights: spec.weights,
        fold: spec.fold,
      },
      run,
      {
        signal,
        onQuery: (step) => {
          if (step === "levels" && done + 2 > total) total = done + 2;
          if (step === "secondPass" && done + 1 > total) total = done + 1;
          onProgress({ done, total, step: STEP_WORDS[step] });
        },
        source: `${file.name}, DuckDB ${registered.version || "(WebAssembly)"} in this browser`,
      },
    );
  });
}

/** The routes with the fit in this thread (tests, and hosts without a fit worker). */
export const sumsRoutes: SumsRoutes = {
  fileSums: sumsOfFile,
  sumsFromLong: sumsOfRange,
  fitFromSums: fitWithSettings,
};

/** The routes the pane uses: the fit from sums through `runner` (its fit worker), see fitThrough. */
export function routesFor(runner: FitRunner | undefined): SumsRoutes {
  return { ...sumsRoutes, fitFromSums: fitThrough(runner) };
}
