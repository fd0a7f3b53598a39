/**
 * Sums tables as the command line reads and writes them (`--sums`, `--sums-out`): the file's
 * text both ways (JSON, or the long form in a delimited file) and the sums of a data file's rows
 * with the folds the in-memory fit uses. Imports nothing from cli/fit.ts, so every route of the
 * command (the in-memory one, the DuckDB and ClickHouse ones) can use it.
 */
import Papa from "papaparse";
import { randomFolds } from "../random";
import { parseSumsJSON, sumsFromLong, sumsOfRows, sumsToJSON, sumsToLong } from "../sums";
import type { SumsTable } from "../sumsTable";
import { CommandError, type CommandOptions } from "./args";
import { parseDelimited, type FitTable } from "./table";

/**
 * `--sums-out`: the sums table of the rows the fit used, one block per fold label it used: the
 * --fold-column's values, the time blocks of --time-ordered (K + 1 blocks in row order, as
 * engine/folds.ts cuts them), or the random folds' numbers 1 … K (engine/random.ts randomFolds
 * with the fit's seed), so fitting the table (`--sums`) gives the model fitting the file did.
 */
export function sumsOfTable(table: FitTable, options: CommandOptions): SumsTable {
  if (table.outcome !== "number") {
    throw new CommandError(`--sums-out saves sums for a number target, and '${table.target}' was read as yes/no: leave --sums-out out (a yes/no fit needs the rows)`);
  }
  const n = table.targetValues.length;
  const K = options.folds ?? 10;
  // Fold numbers as numbers, so the blocks sort 1, 2, …, 10 (the fit's own fold order), not as text.
  let labels: (string | number)[];
  let blocking: string;
  if (table.foldLabels) {
    labels = table.foldLabels;
    blocking = `one block per value of column '${options.foldColumn as string}'`;
  } else if (options.timeOrdered) {
    labels = new Array<number>(n);
    for (let b = 0; b <= K; b++) {
      for (let i = Math.floor((b * n) / (K + 1)); i < Math.floor(((b + 1) * n) / (K + 1)); i++) labels[i] = b + 1;
    }
    blocking = `${K + 1} time blocks in row order`;
  } else {
    const seed = options.seed ?? 1;
    labels = Array.from(randomFolds(n, K, seed), (k) => k + 1);
    blocking = `${K} random folds (seed ${seed})`;
  }
  return sumsOfRows(table.predictors, table.targetValues, table.weights, labels, table.predictorNames, table.target, {
    weightsName: options.weightsColumn ?? undefined,
    blocking,
    skippedRows: table.rowsSkipped,
    source: `shrinkwise in memory from ${options.file === "-" ? "standard input" : options.file}`,
    timeOrdered: options.timeOrdered && !table.foldLabels,
  });
}

/** A sums table as file text: the long form as CSV for a name ending in .csv, else JSON. */
export function sumsFileText(file: string, sums: SumsTable): string {
  if (/\.csv$/i.test(file)) return Papa.unparse(sumsToLong(sums), { newline: "\n" }) + "\n";
  return sumsToJSON(sums);
}

/** A sums table from file text: JSON (starting with '{'), else the long form in a delimited file. */
export function readSumsText(text: string): SumsTable {
  const body = text.charCodeAt(0) === 0xfeff ? text.slice(1) : text;
  if (body.trimStart().startsWith("{")) return parseSumsJSON(body);
  const cells = parseDelimited(body);
  return sumsFromLong([cells.columns, ...cells.rows]);
}
