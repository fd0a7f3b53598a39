/**
 * The command line's DuckDB route: `npm run fit -- big.parquet --target y` sums the file where it
 * lies with DuckDB (engine/node/duckdb.ts, the queries of engine/sumsSql.ts) and fits from the
 * sums (engine/fitSums.ts), so memory does not grow with the file's rows. The report and --json
 * are the in-memory route's (format.ts), from the sums instead of the rows.
 *
 * When: `--via duckdb`, or (without --via) a Parquet file or a file larger than
 * DUCKDB_FILE_BYTES (200 MB); `--via memory` keeps the in-memory route for any CSV/TSV.
 *
 * Folds (the sums table's blocks): `--fold-column c` (one block per value), `--fold-key id` (a
 * hash of a whole-number column into --folds blocks, default 10), `--time-column t` (--folds + 1
 * blocks in the order of t, each fold scored on one block by a fit on the blocks before it), or
 * by default a hash of the row's position in the file into --folds blocks (Parquet: DuckDB's
 * file_row_number; CSV: the row's number as read, in file order on one DuckDB thread). The
 * in-memory route's random folds need the rows, so --seed is refused here, as are the options
 * that need the rows (--predict, --repeats, --honest, --stability, --time-ordered: fitFromSums
 * and this file say which). `--sums-out` saves the sums DuckDB computed (cli/sumsFile.ts), for
 * `--sums` to fit again without the file.
 */
import { statSync } from "fs";
import type { FitResult } from "../fit";
import { fitFromSums } from "../fitSums";
import { quoteString, type FoldRule, type SumsSource } from "../sumsSql";
import type { SumsTable } from "../sumsTable";
import { CommandError, toFitOptions, type CommandOptions } from "./args";
import { jsonText, textReport } from "./format";
import { sumsFileText } from "./sumsFile";
import type { FitTable } from "./table";

/** Files larger than this go through DuckDB without --via (200 MB). */
export const DUCKDB_FILE_BYTES = 200 * 1024 * 1024;

/** The default fold key column (the row's position in the file, from 0). */
export const ROW_POSITION_COLUMN = "shrinkwise_row";

/**
 * Which route a command takes: `--via` when given; the DuckDB-only flags imply DuckDB; else a
 * Parquet file or one over DUCKDB_FILE_BYTES goes through DuckDB. `size` reads a file's bytes
 * (null when it can't be read: the in-memory route then says so).
 */
export function chooseRoute(options: CommandOptions, size: (file: string) => number | null = fileBytes): "duckdb" | "memory" {
  if (options.via) return options.via;
  if (options.foldKey || options.timeColumn || options.printSql) return "duckdb";
  if (options.file === "-") return "memory";
  if (/\.parq(uet)?$/i.test(options.file)) return "duckdb";
  const bytes = size(options.file);
  return bytes !== null && bytes > DUCKDB_FILE_BYTES ? "duckdb" : "memory";
}

function fileBytes(file: string): number | null {
  try {
    return statSync(file).size;
  } catch {
    return null;
  }
}

/** Options the DuckDB route can't honour, refused before any work with what to do instead. */
function refuseRowOptions(options: CommandOptions): void {
  if (options.file === "-") throw new CommandError("the DuckDB route reads a file, not standard input: give the file's path (or --via memory)");
  const needRows: [boolean, string][] = [
    [options.predict !== null, "--predict"],
    [options.repeats !== null && options.repeats > 1, `--repeats ${options.repeats}`],
    [options.honest, "--honest"],
    [options.stability, "--stability"],
  ];
  const flags = needRows.filter(([given]) => given).map(([, flag]) => flag);
  if (flags.length > 0) {
    throw new CommandError(`${flags.join(" and ")} ${flags.length === 1 ? "needs" : "need"} the rows in memory, and the DuckDB route fits from sums: leave ${flags.length === 1 ? "it" : "them"} out, or use --via memory`);
  }
  if (options.timeOrdered) throw new CommandError("--time-ordered needs rows in memory; on the DuckDB route give --time-column <column> to cut time blocks by a column");
  if (options.seed !== null) throw new CommandError("--seed deals random folds in memory; the DuckDB route deals rows by a hash (of --fold-key, or of the row's position): leave --seed out");
  if (options.outcome === "two-class") throw new CommandError("a yes/no target needs passes over the rows: fit it with --via memory");
  if (options.measure === "mae") throw new CommandError("--error mae needs the rows' absolute errors: fit from sums with --error mse, or use --via memory");
}

/** The source DuckDB reads: the file, with the row's position as a column when the folds hash it. */
function sourceFor(options: CommandOptions, needPosition: boolean): SumsSource {
  const plain: SumsSource = /\.parq(uet)?$/i.test(options.file) ? { kind: "parquet", path: options.file } : { kind: "csv", path: options.file };
  if (!needPosition) return plain;
  const path = quoteString(options.file, "duckdb");
  const column = `"${ROW_POSITION_COLUMN}"`;
  return plain.kind === "parquet"
    ? { kind: "query", sql: `SELECT * EXCLUDE (file_row_number), file_row_number AS ${column} FROM read_parquet(${path}, file_row_number = true)`, countWithoutScan: true }
    : { kind: "query", sql: `SELECT *, row_number() OVER () - 1 AS ${column} FROM read_csv(${path}, header = true)` };
}

/** The fold rule of the command (see the file comment). */
export function foldRuleFor(options: CommandOptions): FoldRule {
  const folds = options.folds ?? 10;
  if (options.foldColumn) return { kind: "column", column: options.foldColumn };
  if (options.foldKey) return { kind: "hash", key: options.foldKey, folds };
  if (options.timeColumn) return { kind: "time", column: options.timeColumn, folds };
  return { kind: "hash", key: ROW_POSITION_COLUMN, folds };
}

/** The predictors: --predictors, else every column but the target, weights, fold column and --exclude. */
function predictorsFor(options: CommandOptions, columns: readonly string[], rule: FoldRule): string[] {
  if (options.predictors !== null) return options.predictors;
  const roles = new Set([options.target, options.weightsColumn, rule.kind === "hash" ? rule.key : rule.column, ROW_POSITION_COLUMN]);
  const exclude = new Set(options.exclude ?? []);
  for (const name of exclude) {
    if (!columns.includes(name)) throw new CommandError(`--exclude names '${name}', which is not a column of ${options.file}`);
  }
  return columns.filter((name) => !roles.has(name) && !exclude.has(name));
}

/** The report's view of a fit from sums: the rows' numbers are not here, their counts are. */
export function tableOfSums(sums: SumsTable): FitTable {
  const rowsUsed = sums.blocks.reduce((total, block) => total + block.rows, 0);
  return {
    target: sums.target,
    predictorNames: [...sums.terms],
    predictors: [],
    targetValues: [],
    outcome: "number",
    classes: null,
    weights: sums.weights === null ? null : [],
    foldLabels: null,
    rowsUsed,
    rowsSkipped: sums.skippedRows,
    skippedRows: [],
    blanksByColumn: {},
  };
}

export interface DuckdbOutcome {
  stdout: string;
  /** The sums the fit came from (null for --print-sql). */
  sums: SumsTable | null;
  result: FitResult | null;
}

/**
 * Runs the DuckDB route of a parsed command: the sums, then the fit and its report (or, with
 * --print-sql, the queries). Throws CommandError / InputError for bad input, as the in-memory
 * route does; the caller turns them into exit code 2.
 */
export async function runViaDuckdb(options: CommandOptions, write: (file: string, text: string) => void): Promise<DuckdbOutcome> {
  refuseRowOptions(options);
  // DuckDB's native module loads only on this route: the in-memory route starts as fast as before.
  // A require, not import(): `npm run fit` runs the sources under tsx's require hook alone (see
  // package.json), which compiles modules on require but has no hook for import() of a .ts file.
  // eslint-disable-next-line @typescript-eslint/no-require-imports
  const { duckdbColumns, duckdbPrepare, duckdbSums } = require("../node/duckdb") as typeof import("../node/duckdb");
  const rule = foldRuleFor(options);
  const source = sourceFor(options, rule.kind === "hash" && rule.key === ROW_POSITION_COLUMN);
  const columns = await duckdbColumns(source, options.file);
  const predictors = predictorsFor(options, columns, rule);
  if (predictors.length === 0) throw new CommandError(`no predictor columns left in ${options.file}: every column is the target, weights, fold column or excluded`);
  const request = { source, target: options.target, predictors, weights: options.weightsColumn, fold: rule };
  if (options.printSql) {
    const printed: string[] = [];
    const prepared = await duckdbPrepare(request, { onQuery: (step, sql) => printed.push(`-- ${step}\n${sql};`) });
    prepared.second.queries.forEach((query, i) => printed.push(`-- secondPass ${i + 1} of ${prepared.second.queries.length}\n${query.sql};`));
    return { stdout: printed.join("\n\n") + "\n", sums: null, result: null };
  }
  const sums = await duckdbSums(request);
  return fitQueriedSums(options, sums, rule, write);
}

/**
 * The fit of a sums table a query engine returned (the DuckDB and ClickHouse routes): checks
 * --folds against a fold column's blocks, fits from the sums, saves them with --sums-out (after
 * the fit succeeds, as the in-memory route saves its sums) and formats the report or JSON.
 */
export function fitQueriedSums(options: CommandOptions, sums: SumsTable, rule: FoldRule, write: (file: string, text: string) => void): DuckdbOutcome {
  if (options.folds !== null && rule.kind === "column" && options.folds !== sums.blocks.length) {
    const shown = sums.blocks.slice(0, 6).map((b) => `'${b.label}'`).join(", ") + (sums.blocks.length > 6 ? ", …" : "");
    throw new CommandError(
      `--folds ${options.folds} can't apply with --fold-column ${rule.column}: that column makes one fold per distinct value, and it has ${sums.blocks.length} (${shown}); leave --folds out`,
    );
  }
  // The blocks are the folds: --folds has already made them (hash and time rules).
  const fitOptions = toFitOptions({ ...options, folds: null }, { names: sums.terms, weights: null, foldLabels: null, outcome: "number" });
  delete fitOptions.timeOrdered;
  const result = fitFromSums(sums, fitOptions);
  const table = tableOfSums(sums);
  // Saved after the fit succeeds, as the in-memory route saves its sums.
  if (options.sumsOut) write(options.sumsOut, sumsFileText(options.sumsOut, sums));
  const context = { table, foldColumn: options.foldColumn, sums: { file: options.file, blocking: sums.blocking, blocks: sums.blocks.length, source: sums.source ?? null }, intercept: options.intercept };
  return { stdout: options.json ? jsonText(result, context) : textReport(result, context), sums, result };
}
