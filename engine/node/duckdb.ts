/**
 * The sums table of a local CSV or Parquet file (or any DuckDB table expression), computed by
 * DuckDB embedded in this process (`@duckdb/node-api`): the queries of engine/sumsSql.ts, run on
 * an in-memory database, answered as plain rows. Memory does not grow with the file's rows: the
 * queries aggregate as they scan.
 *
 * Determinism: DuckDB runs on one thread by default here (`threads: 1`), because a parallel sum
 * of doubles adds its partial sums in whatever order the threads finish, and the same file must
 * give the same sums table bit for bit. More threads are faster and differ only in the last bits.
 *
 * Errors a user can fix (a missing file, a file DuckDB cannot read as CSV or Parquet, a value
 * that does not read as the column's type) become one-line InputErrors naming the file; a raised
 * cancel signal interrupts the running query and throws CancelledError.
 */
import { DuckDBInstance, type DuckDBConnection } from "@duckdb/node-api";
import { statSync } from "fs";
import { CancelledError, InputError, type CancelSignal } from "../errors";
import { computeSums, describeSql, prepareSums, type PreparedSums, type SqlRow, type SumsRequest, type SumsSource, type SumsStep } from "../sumsSql";
import type { SumsTable } from "../sumsTable";

/** Reads a file by its extension: `.parquet` (or `.parq`) as Parquet, anything else as CSV (DuckDB detects the delimiter). */
export function fileSource(path: string): SumsSource {
  return /\.parq(uet)?$/i.test(path) ? { kind: "parquet", path } : { kind: "csv", path };
}

export interface DuckDBSumsOptions {
  signal?: CancelSignal;
  /** DuckDB's worker threads (default 1: bit-identical sums from run to run). */
  threads?: number;
  /** Sees every query before it runs. */
  onQuery?: (step: SumsStep, sql: string) => void;
}

/** DuckDB's first message line, without its "Error:" prefixes and the noise after it. */
function firstLine(error: unknown): string {
  const text = error instanceof Error ? error.message : String(error);
  return text.split("\n")[0].trim();
}

/** A DuckDB failure as the user's one line, or null for one that is not about the input. */
export function inputProblem(error: unknown, file: string | null): InputError | null {
  const line = firstLine(error);
  const where = file ?? "the source";
  let match: RegExpExecArray | null;
  if (/No files found that match the pattern|No such file or directory|Cannot open file/i.test(line)) {
    return new InputError("setting", `can't read ${where}: no such file`);
  }
  if (/is not a parquet file|Invalid Input Error: .*parquet|too small to be a Parquet file|No magic bytes found/i.test(line)) {
    return new InputError("setting", `can't read ${where} as Parquet: ${line.replace(/^[A-Za-z ]*Error: /, "")}`);
  }
  if ((match = /Could not convert string "([^"]*)" to '([A-Z0-9]+)'/.exec(text(error)))) {
    const column = /column\s+"?([^"\s,]+)"?/i.exec(text(error))?.[1];
    const lineNo = /Line:\s*(\d+)/.exec(text(error))?.[1];
    return new InputError(
      "not-finite",
      `${where}${lineNo ? ` line ${lineNo}` : ""}${column ? `, column '${column}'` : ""}: '${match[1]}' is not a ${match[2] === "VARCHAR" ? "text" : "number"} like the rest of the column: fix or clear the cell`,
    );
  }
  if (/^(Conversion|Invalid Input|IO) Error/i.test(line)) return new InputError("setting", `can't read ${where}: ${line.replace(/^[A-Za-z ]*Error: /, "")}`);
  return null;
}

function text(error: unknown): string {
  return error instanceof Error ? error.message : String(error);
}

/** The file a source reads, or null. */
function fileOf(source: SumsSource): string | null {
  return source.kind === "csv" || source.kind === "parquet" ? source.path : null;
}

/** Refuses a missing file or a folder before DuckDB sees it. */
function checkFile(file: string | null): void {
  if (file === null) return;
  let isFile: boolean;
  try {
    isFile = statSync(file).isFile();
  } catch {
    throw new InputError("setting", `can't read ${file}: no such file`);
  }
  if (!isFile) throw new InputError("setting", `can't read ${file}: it is a folder`);
}

/**
 * Opens an in-memory DuckDB, hands `body` a runner whose failures read as the user's one-liners
 * (naming `file`), and closes it whatever happens. A raised signal interrupts the running query.
 */
async function withDuckdb<T>(file: string | null, options: DuckDBSumsOptions, body: (run: (sql: string) => Promise<SqlRow[]>, version: string) => Promise<T>): Promise<T> {
  checkFile(file);
  const instance = await DuckDBInstance.create(":memory:", { threads: String(options.threads ?? 1) });
  let connection: DuckDBConnection | null = null;
  let watch: ReturnType<typeof setInterval> | null = null;
  try {
    connection = await instance.connect();
    const open = connection;
    const version = String((await open.runAndReadAll("SELECT version() AS v")).getRowObjectsJS()[0]?.v ?? "");
    if (options.signal) {
      const signal = options.signal;
      // The signal is a flag, not an event: look at it while a query runs and interrupt DuckDB.
      watch = setInterval(() => {
        if (signal.aborted) open.interrupt();
      }, 50);
    }
    const run = async (sql: string): Promise<SqlRow[]> => {
      try {
        const reader = await open.runAndReadAll(sql);
        return reader.getRowObjectsJS() as SqlRow[];
      } catch (error) {
        if (options.signal?.aborted) throw new CancelledError();
        const problem = inputProblem(error, file);
        if (problem) throw problem;
        throw error;
      }
    };
    return await body(run, version);
  } finally {
    if (watch !== null) clearInterval(watch);
    connection?.closeSync();
    instance.closeSync();
  }
}

/**
 * The sums table of `request` (its source a file, table or query DuckDB can read) by DuckDB.
 * Throws InputError for bad input, CancelledError when the signal is raised.
 */
export async function duckdbSums(request: Omit<SumsRequest, "dialect">, options: DuckDBSumsOptions = {}): Promise<SumsTable> {
  const file = fileOf(request.source);
  return withDuckdb(file, options, (run, version) => {
    const where = file ?? (request.source.kind === "table" ? request.source.name : "a query");
    return computeSums({ ...request, dialect: "duckdb" }, run, { signal: options.signal, onQuery: options.onQuery, source: `duckdb ${version} on ${where}` });
  });
}

/** The describe, first-pass and levels queries run by DuckDB, and the second pass's queries built (not run): for --print-sql. */
export async function duckdbPrepare(request: Omit<SumsRequest, "dialect">, options: DuckDBSumsOptions = {}): Promise<PreparedSums> {
  return withDuckdb(fileOf(request.source), options, (run) => prepareSums({ ...request, dialect: "duckdb" }, run, { signal: options.signal, onQuery: options.onQuery }));
}

/** The source's column names, in order (DuckDB's DESCRIBE). */
export async function duckdbColumns(source: SumsSource, file: string | null = fileOf(source)): Promise<string[]> {
  return withDuckdb(file, {}, async (run) => (await run(describeSql(source, "duckdb"))).map((row) => String(row.column_name)));
}

/** Runs one query on a fresh in-memory DuckDB (tests and the bench write files with it). */
export async function duckdbRun(sql: string, threads = 1): Promise<SqlRow[]> {
  const instance = await DuckDBInstance.create(":memory:", { threads: String(threads) });
  try {
    const connection = await instance.connect();
    try {
      return (await connection.runAndReadAll(sql)).getRowObjectsJS() as SqlRow[];
    } finally {
      connection.closeSync();
    }
  } finally {
    instance.closeSync();
  }
}
