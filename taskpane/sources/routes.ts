/**
 * The engine behind the pane's fits from sums (sumsPane.ts SumsRoutes), loaded with the panel
 * on the first switch away from worksheet ranges:
 * - a local CSV file → engine/sumsSql.ts computeSums, its queries run by DuckDB in this browser
 *   (fileSums.ts FileSumsReader: the file is read in place by DuckDB's worker);
 * - a local Parquet file → parquetSums.ts (its own chunk): hyparquet reads it row group by row
 *   group and engine/sumsScan.ts evaluates the same plan (same checks, terms and blocks);
 * - a sums table in its long form on the sheet → engine/sums.ts sumsFromLong (checked);
 * - the fit → engine/fitSums.ts fitFromSumsAsync, in the pane's own thread: it costs
 *   O(blocks·p²) per strength, independent of the rows, and yields to the page between units of
 *   work, so progress shows and Cancel gets through.
 */
import type { FitResult } from "../../engine/fit";
import { fitFromSumsAsync } from "../../engine/fitSums";
import { sumsFromLong } from "../../engine/sums";
import { computeSums, type SumsStep } from "../../engine/sumsSql";
import type { SumsTable } from "../../engine/sumsTable";
import type { CellValue } from "../host/sheetHost";
import { fileKindOf, type FileProgress, type FileSumsReader } from "./fileSums";
import type { FileSpec, SumsFitSettings } from "./sumsInputs";
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

/** The routes the pane uses. */
export const sumsRoutes: SumsRoutes = {
  fileSums: sumsOfFile,
  sumsFromLong: sumsOfRange,
  fitFromSums: fitWithSettings,
};
