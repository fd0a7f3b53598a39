/**
 * "Fit from a file": the sums table of a local CSV or Parquet file, computed in the browser. A
 * CSV file is read by DuckDB compiled to WebAssembly (duckdbSession.ts, loaded on first use as
 * its own chunk), in place by DuckDB's worker. A Parquet file is read by the pane's Parquet
 * reader (parquetSums.ts, its own chunk: hyparquet, one row group at a time), because DuckDB's
 * WebAssembly build reads Parquet only through an extension fetched from the internet. Either
 * way the file never leaves the machine.
 *
 * `FileSumsReader` keeps one DuckDB session open between uses (reading the header, then the
 * sums), reports progress as queries done of queries to run, and cancels by terminating the
 * worker: a running query stops at once, and the next use opens a new session (restartable).
 *
 * Errors are one line that says what to fix (`fileProblem`): a file that is not CSV or Parquet
 * (by its name), one DuckDB can't read, a column that is not there, text in a number column.
 */
import { CancelledError, InputError } from "../../engine/errors";
import type { DuckdbSession, SqlRow } from "./duckdbSession";

/** The two kinds of file the pane reads. */
export type FileKind = "csv" | "parquet";

/** A column of the file as DESCRIBE reports it. */
export interface FileColumn {
  name: string;
  /** DuckDB's type name: DOUBLE, BIGINT, VARCHAR, TIMESTAMP, … */
  type: string;
  /** True for types the fit can use as numbers as they are. */
  numeric: boolean;
}

/** Opens a DuckDB session (the default loads the duckdb-session chunk and the wasm from our origin). */
export type SessionOpener = () => Promise<DuckdbSession>;

/** The kind of a file from its name (extension), or an InputError that says what to pick. */
export function fileKindOf(name: string): FileKind {
  const lower = name.trim().toLowerCase();
  if (/\.(csv|tsv|txt)(\.gz)?$/.test(lower)) return "csv";
  if (/\.(parquet|pq)$/.test(lower)) return "parquet";
  throw new InputError("empty", `'${name}' is neither a CSV nor a Parquet file: choose a file ending in .csv or .parquet`);
}

/** A SQL string literal (single quotes doubled). */
export function sqlText(text: string): string {
  return `'${text.replace(/'/g, "''")}'`;
}

/** A SQL identifier for DuckDB (double quotes doubled). */
export function sqlName(name: string): string {
  return `"${name.replace(/"/g, '""')}"`;
}

/** The table function that reads a registered file: read_csv('…', header = true) or read_parquet('…'), as the SQL generator reads it. */
export function readerOf(registered: string, kind: FileKind): string {
  return kind === "parquet" ? `read_parquet(${sqlText(registered)})` : `read_csv(${sqlText(registered)}, header = true)`;
}

/** The name a picked file is registered under in DuckDB (its kind's extension, so readers and messages agree). */
export function registeredName(kind: FileKind): string {
  return kind === "parquet" ? "shrinkwise-source.parquet" : "shrinkwise-source.csv";
}

const NUMERIC_TYPES = /^(DOUBLE|FLOAT|REAL|DECIMAL(\(.*\))?|TINYINT|SMALLINT|INTEGER|BIGINT|HUGEINT|UTINYINT|USMALLINT|UINTEGER|UBIGINT|UHUGEINT|BOOLEAN)$/i;

/** A column with its DuckDB type name. */
export function fileColumn(name: string, type: string): FileColumn {
  return { name, type, numeric: NUMERIC_TYPES.test(type) };
}

/** The columns from DESCRIBE's rows (column_name, column_type). */
export function columnsOf(rows: readonly SqlRow[]): FileColumn[] {
  return rows.map((row) => fileColumn(String(row.column_name ?? ""), String(row.column_type ?? "")));
}

function messageOf(error: unknown): string {
  if (error && typeof error === "object" && typeof (error as { message?: unknown }).message === "string") return (error as { message: string }).message;
  return String(error);
}

/**
 * DuckDB's message for a failed query as one line that says what to fix, naming the file. Input
 * errors (the generator's own checks) pass through as they are.
 */
export function fileProblem(error: unknown, fileName: string): Error {
  if (error instanceof InputError || error instanceof CancelledError) return error;
  const text = messageOf(error).replace(/\s+/g, " ").trim();
  const quoted = `'${fileName}'`;
  let match: RegExpMatchArray | null;
  if ((match = text.match(/Referenced column "?([^"]+?)"? not found/i))) {
    return new InputError("shape", `${quoted} has no column '${match[1]}': check the column names (the first row of a CSV file)`);
  }
  if ((match = text.match(/Could not convert string '([^']*)' to '?([A-Z0-9_]+)'?/i))) {
    const column = text.match(/column "?([^"\s]+)"?/i)?.[1];
    return new InputError(
      "not-finite",
      `${quoted} has text '${match[1]}' where numbers are expected${column ? ` (column '${column}')` : ""}: fix or blank that cell, or leave the column out`,
    );
  }
  if (/No files found|Cannot open file|could not open/i.test(text)) {
    return new InputError("empty", `${quoted} can't be opened: choose the file again (it may have moved or be open in another program)`);
  }
  if (/CSV Error|sniff|Error when sniffing|Invalid unicode|Could not read/i.test(text)) {
    return new InputError("empty", `${quoted} can't be read as CSV (${text.slice(0, 160)}): check that it is a comma-separated text file with a header row`);
  }
  return new Error(`${quoted}: ${text.slice(0, 240)}`);
}

/** Where the DuckDB files are served: dist/duckdb/ beside the page. */
export function duckdbBase(): string {
  return new URL("duckdb/", document.baseURI).href;
}

/** The default opener: the duckdb-session chunk (loaded on first use), the wasm from our own origin. */
export async function openFromOrigin(): Promise<DuckdbSession> {
  const { openDuckdbSession } = await import(/* webpackChunkName: "duckdb-session" */ "./duckdbSession");
  return openDuckdbSession(duckdbBase());
}

/** A picked file as DuckDB knows it. */
export interface RegisteredFile {
  /** The name SQL reads it by (registeredName). */
  name: string;
  kind: FileKind;
  /** DuckDB's version, for the report of where the sums were computed. */
  version: string;
}

/** Progress of the file's reading: `done` of `total` steps done (queries, or row groups read), and what runs now. */
export interface FileProgress {
  done: number;
  total: number;
  step: string;
  /** What a step is, for the progress line (default "queries done"). */
  unit?: string;
}

/**
 * Runs SQL on one picked file. One instance per pane; one job at a time (a new job cancels the
 * one running).
 */
export class FileSumsReader {
  private session: Promise<DuckdbSession> | null = null;
  private registered: { file: File; name: string } | null = null;
  private job = 0;

  constructor(private readonly open: SessionOpener = openFromOrigin) {}

  /** The open session, opening one when there is none (after a cancel: a new worker). */
  private sessionNow(): Promise<DuckdbSession> {
    if (!this.session) {
      const opening = this.open();
      this.session = opening;
      opening.catch(() => {
        if (this.session === opening) this.session = null;
      });
    }
    return this.session;
  }

  /** Registers `file` (once per file); returns the name SQL reads it by, and its kind. */
  private async source(session: DuckdbSession, file: File): Promise<RegisteredFile> {
    const kind = fileKindOf(file.name);
    const name = registeredName(kind);
    if (this.registered?.file !== file) {
      if (this.registered) await session.dropFile(this.registered.name).catch(() => undefined);
      this.registered = null;
      await session.registerFile(name, file);
      this.registered = { file, name };
    }
    return { name, kind, version: session.version };
  }

  /**
   * Runs `work` with a query function on the session and the registered file; cancelling
   * `signal` terminates the worker (the session is opened again next time) and rejects with
   * CancelledError. DuckDB's errors come out as `fileProblem` one-liners.
   */
  async run<T>(file: File, signal: { readonly aborted: boolean; onAbort(callback: () => void): void }, work: (query: (sql: string) => Promise<SqlRow[]>, registered: RegisteredFile) => Promise<T>): Promise<T> {
    const mine = ++this.job;
    let stopped = false;
    const stop = new Promise<never>((_, reject) => {
      signal.onAbort(() => {
        stopped = true;
        void this.reset();
        reject(new CancelledError());
      });
    });
    stop.catch(() => undefined);
    const go = async (): Promise<T> => {
      if (signal.aborted) throw new CancelledError();
      const session = await this.sessionNow();
      if (stopped || mine !== this.job) throw new CancelledError();
      let registered: RegisteredFile;
      try {
        registered = await this.source(session, file);
      } catch (error) {
        throw fileProblem(error, file.name);
      }
      const query = async (sql: string): Promise<SqlRow[]> => {
        if (stopped) throw new CancelledError();
        try {
          return await session.query(sql);
        } catch (error) {
          if (stopped) throw new CancelledError();
          throw fileProblem(error, file.name);
        }
      };
      return work(query, registered);
    };
    return Promise.race([go(), stop]);
  }

  /** The file's columns: DESCRIBE of DuckDB's CSV reader, or a Parquet file's footer (no DuckDB). */
  async columns(file: File, signal: { readonly aborted: boolean; onAbort(callback: () => void): void } = NEVER): Promise<FileColumn[]> {
    if (fileKindOf(file.name) === "parquet") {
      const { parquetOf } = await import(/* webpackChunkName: "parquet-reader" */ "./parquetSums");
      return (await parquetOf(file)).columns.map((c) => fileColumn(c.name, c.type));
    }
    return this.run(file, signal, async (query, registered) => {
      const columns = columnsOf(await query(`DESCRIBE SELECT * FROM ${readerOf(registered.name, registered.kind)}`));
      if (columns.length === 0) throw new InputError("empty", `'${file.name}' has no columns`);
      return columns;
    });
  }

  /** Terminates the worker (a running query with it); the next use opens a new session. */
  async reset(): Promise<void> {
    const session = this.session;
    this.session = null;
    this.registered = null;
    if (session) await session.then((s) => s.terminate()).catch(() => undefined);
  }
}

/** A signal that never fires. */
export const NEVER = { aborted: false, onAbort: () => undefined } as const;
