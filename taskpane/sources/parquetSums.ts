/**
 * "Fit from a file" for a Parquet file: its columns and its sums, read in the page by hyparquet
 * (parquetRows.ts) and summed by the engine's scan (engine/sumsScan.ts), one row group at a time.
 * DuckDB is not involved (its WebAssembly build reads Parquet only through a downloaded
 * extension), so nothing but the user's file is read, and nothing is fetched.
 *
 * Loaded by a dynamic import (fileSums.ts, routes.ts): webpack puts this module and hyparquet in
 * their own chunk (`parquet-reader.js`), fetched from the add-in's origin when a Parquet file is
 * first picked.
 */
import type { CancelSignal } from "../../engine/errors";
import { sumsOfScan } from "../../engine/sumsScan";
import type { SumsTable } from "../../engine/sumsTable";
import { bufferOfBlob, openParquet, type ParquetRows } from "./parquetRows";

/** One opening per picked file (its footer is read once). */
const opened = new WeakMap<Blob, Promise<ParquetRows>>();

/** The opened file (footer read, columns known); a failed opening is tried again next time. */
export function parquetOf(file: File): Promise<ParquetRows> {
  let rows = opened.get(file);
  if (!rows) {
    const opening = openParquet(bufferOfBlob(file), file.name);
    opened.set(file, opening);
    opening.catch(() => opened.delete(file));
    rows = opening;
  }
  return rows;
}

/** What the pane asks of a Parquet file (the checked file choice, sumsInputs.ts FileSpec). */
export interface ParquetSpec {
  target: string;
  predictors: string[];
  weights: string | null;
  fold: { kind: "column"; column: string } | { kind: "hash"; key: string; folds: number } | { kind: "time"; column: string; folds: number };
}

/**
 * The sums table of a picked Parquet file: two scans over its row groups. Progress per row group
 * read (`done` of `total`, both scans); the signal is read between row groups (CancelledError).
 */
export async function sumsOfParquet(file: File, spec: ParquetSpec, onProgress: (done: number, total: number, scan: "first" | "second") => void, signal: CancelSignal): Promise<SumsTable> {
  const rows = await parquetOf(file);
  return sumsOfScan({ target: spec.target, predictors: spec.predictors, weights: spec.weights, fold: spec.fold }, rows, {
    signal,
    onProgress,
    source: `${file.name}, read by the pane's Parquet reader in this browser`,
  });
}
