/**
 * DuckDB compiled to WebAssembly, in its own Web Worker, for "Fit from a file": the pane's only
 * door to the duckdb-wasm package. This module is loaded by a dynamic import (fileSums.ts), so
 * webpack puts it and the package's JavaScript in a separate chunk (`duckdb-session.js`) that
 * the page fetches only when the user fits from a file.
 *
 * Everything comes from the add-in's own origin: the worker scripts and the .wasm files are
 * copied into dist/duckdb/ by the build (addin/webpack.config.js) and found next to the page
 * (`duckdbBase()`); nothing is fetched from a CDN. The user's file is read in place by the
 * worker (registerFileHandle with the browser's file reader): it never leaves the machine and is
 * never copied whole into memory.
 *
 * Bundle choice: the package's own `selectBundle` picks the build with WebAssembly exceptions
 * ("eh") where the browser has them, else the baseline build ("mvp"). The cross-origin-isolated
 * threaded build is not shipped (an add-in page can't count on cross-origin isolation).
 */
import * as duckdb from "@duckdb/duckdb-wasm";

/** One cell of a query result as the pane uses it. */
export type SqlValue = number | string | boolean | null | SqlValue[];
export type SqlRow = Record<string, SqlValue>;

/** The files copied into dist/duckdb/ (the build test checks each is there). */
export const DUCKDB_FILES = {
  mvpModule: "duckdb-mvp.wasm",
  mvpWorker: "duckdb-browser-mvp.worker.js",
  ehModule: "duckdb-eh.wasm",
  ehWorker: "duckdb-browser-eh.worker.js",
} as const;

/** An open DuckDB in its worker. */
export interface DuckdbSession {
  /** Version of the engine, e.g. "v1.3.2". */
  readonly version: string;
  /** Makes `file` readable by SQL under `name` (read in place, through the browser's file reader). */
  registerFile(name: string, file: File): Promise<void>;
  /** Forgets a registered file. */
  dropFile(name: string): Promise<void>;
  /** Runs one statement; rows as plain objects, column name → value. */
  query(sql: string): Promise<SqlRow[]>;
  /** Stops the worker at once (a running query included). The session can't be used afterwards. */
  terminate(): Promise<void>;
}

/**
 * A JavaScript value from an Arrow result as the pane keeps it: 64-bit integers (bigint) become
 * numbers when they are exact as doubles, else text (so nothing is rounded silently); lists (an
 * Arrow vector, a typed array or an array: e.g. the time blocks' quantiles) become arrays of such
 * values; other Arrow types (dates, decimals) become their text.
 */
export function plainValue(value: unknown): SqlValue {
  if (value === null || value === undefined) return null;
  if (typeof value === "number" || typeof value === "string" || typeof value === "boolean") return value;
  if (typeof value === "bigint") {
    return value <= BigInt(Number.MAX_SAFE_INTEGER) && value >= BigInt(-Number.MAX_SAFE_INTEGER) ? Number(value) : value.toString();
  }
  if (value instanceof Date) return value.toISOString();
  if (Array.isArray(value) || ArrayBuffer.isView(value)) return Array.from(value as ArrayLike<unknown>, plainValue);
  if (typeof value === "object" && typeof (value as { toArray?: unknown }).toArray === "function") {
    return Array.from((value as { toArray(): ArrayLike<unknown> }).toArray(), plainValue);
  }
  return String(value);
}

/** Rows of an Arrow table (what duckdb-wasm returns) as plain objects. */
function rowsOf(table: { schema: { fields: { name: string }[] }; toArray(): unknown[] }): SqlRow[] {
  const names = table.schema.fields.map((field) => field.name);
  return table.toArray().map((row) => {
    const record = row as Record<string, unknown>;
    const out: SqlRow = {};
    for (const name of names) out[name] = plainValue(record[name]);
    return out;
  });
}

/**
 * Longest wait for DuckDB's worker to compile and open its WebAssembly module (it takes a few
 * seconds: the module is about 35 MB). Some failures inside the worker never come back as a
 * rejection (duckdb-wasm drops the pending request), so this bounds the wait.
 */
const START_SECONDS = 120;

/**
 * Browsers compile a streamed WebAssembly module only when it is served as application/wasm; a
 * server that sends another type makes DuckDB's worker fail without an answer. A HEAD request to
 * our own origin tells at once, with a message for whoever runs the server.
 */
async function checkWasmServed(url: string): Promise<void> {
  let type: string | null = null;
  try {
    const response = await fetch(url, { method: "HEAD", cache: "no-store" });
    if (!response.ok) throw new Error(`DuckDB's WebAssembly file is missing from the add-in's server (${response.status} for ${new URL(url).pathname}): rebuild the add-in (npm run build)`);
    type = response.headers.get("content-type");
  } catch (error) {
    if (error instanceof Error && error.message.startsWith("DuckDB")) throw error;
    return; // no answer to HEAD: let the worker try (it says what went wrong, or the start times out)
  }
  if (type !== null && !/^application\/wasm\b/i.test(type.trim())) {
    throw new Error(`the add-in's server sends DuckDB's WebAssembly as '${type}', and browsers need 'application/wasm': serve .wasm files with that type`);
  }
}

/**
 * Opens DuckDB in a new worker, with its files under `base` (a URL ending in "/", on the page's
 * own origin). Rejects when the worker or the WebAssembly module can't be loaded.
 */
export async function openDuckdbSession(base: string): Promise<DuckdbSession> {
  const bundles: duckdb.DuckDBBundles = {
    mvp: { mainModule: new URL(DUCKDB_FILES.mvpModule, base).href, mainWorker: new URL(DUCKDB_FILES.mvpWorker, base).href },
    eh: { mainModule: new URL(DUCKDB_FILES.ehModule, base).href, mainWorker: new URL(DUCKDB_FILES.ehWorker, base).href },
  };
  const bundle = await duckdb.selectBundle(bundles);
  if (!bundle.mainWorker) throw new Error("DuckDB has no worker script for this browser");
  await checkWasmServed(bundle.mainModule);
  const worker = new Worker(bundle.mainWorker);
  const db = new duckdb.AsyncDuckDB(new duckdb.VoidLogger(), worker);
  let connection: duckdb.AsyncDuckDBConnection | null = null;
  // A failure inside the worker while it starts (e.g. the .wasm served with the wrong type) is
  // reported as the worker's error event, not as a rejection: without this the open would wait forever.
  let failed: (error: Error) => void = () => undefined;
  const workerFailed = new Promise<never>((_, reject) => (failed = reject));
  workerFailed.catch(() => undefined);
  const onError = (event: ErrorEvent): void => failed(new Error(`DuckDB could not start in this browser: ${event.message || "its worker failed"}`));
  worker.addEventListener("error", onError);
  const timer = setTimeout(() => failed(new Error(`DuckDB did not start within ${START_SECONDS} s: reload the pane and try again`)), START_SECONDS * 1000);
  try {
    await Promise.race([db.instantiate(bundle.mainModule, bundle.pthreadWorker), workerFailed]);
    // Decimals arrive as doubles; 64-bit integers stay exact (plainValue).
    await db.open({ query: { castDecimalToDouble: true }, allowUnsignedExtensions: false });
    connection = await db.connect();
    // No network: DuckDB must never try to fetch an extension (the CSV and Parquet readers are
    // built into the WebAssembly module). A query that would need one fails with DuckDB's message.
    await connection.query("SET autoinstall_known_extensions = false");
    await connection.query("SET autoload_known_extensions = false");
  } catch (error) {
    worker.terminate();
    throw error;
  } finally {
    clearTimeout(timer);
    worker.removeEventListener("error", onError);
  }
  const version = await db.getVersion().catch(() => "");
  const conn = connection;
  let terminated = false;
  return {
    version,
    async registerFile(name, file) {
      await db.registerFileHandle(name, file, duckdb.DuckDBDataProtocol.BROWSER_FILEREADER, true);
    },
    async dropFile(name) {
      if (!terminated) await db.dropFile(name);
    },
    async query(sql) {
      if (terminated) throw new Error("the DuckDB session was stopped");
      return rowsOf(await conn.query(sql));
    },
    async terminate() {
      if (terminated) return;
      terminated = true;
      await db.terminate();
    },
  };
}
