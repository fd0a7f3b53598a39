/**
 * ClickHouse over its HTTP interface: POST one SQL statement, get its rows back as plain objects.
 * The route by which the sums table is computed where the data live, on one server or, through a
 * Distributed table, on every shard of a cluster (the server merges the shards' partial sums).
 *
 * Node only (the `http`/`https` modules). Talks only to the URL the user names.
 *
 * - Credentials: user and password from SHRINKWISE_CLICKHOUSE_USER / SHRINKWISE_CLICKHOUSE_PASSWORD
 *   (or the options), sent as HTTP Basic authorization, which ClickHouse 18.16 and current releases
 *   both accept. A URL carrying `user:password@` is refused (it would end up in shell history and
 *   messages). The password never appears in any message this module makes: every message is
 *   scrubbed of it (as typed, URL-encoded and inside the Basic header's base64) before it leaves.
 * - Results: `FORMAT JSON` (appended by the runner; the statement must not carry its own FORMAT),
 *   with `output_format_json_quote_64bit_integers=1` (64-bit integers arrive as strings and are
 *   parsed exactly: a number when |value| ≤ 2^53 − 1, else a bigint), and
 *   `output_format_json_quote_denormals=1` (NaN and ±∞ arrive as "nan", "-nan", "inf", "-inf").
 *   `wait_end_of_query=1`: the server buffers the answer, so an error part-way through a query
 *   comes back as an HTTP error, never as a truncated 200.
 * - Threads: one per server by default (`threads`), for bit-identical sums from run to run.
 * - Failures: a refused connection, an unknown host, a timeout, an HTTP error, a SQL error, a
 *   wrong password: each an InputError with a one-line message naming the server (URL without
 *   credentials) and what to do. Cancel: an AbortSignal aborts the request (CancelledError) and
 *   asks the server, best effort, to stop the query (`KILL QUERY` by its query id).
 */
import * as http from "http";
import * as https from "https";
import { randomUUID } from "crypto";
import { CancelledError, InputError, type CancelSignal } from "../errors";
import { computeSums, describeSql, prepareSums, type PreparedSums, type RunQuery, type SumsRequest, type SumsSource, type SumsStep } from "../sumsSql";
import type { SumsTable } from "../sumsTable";

/** A value of a result cell: numbers for numeric types, bigint for 64-bit integers beyond 2^53, text otherwise. */
export type SqlValue = number | bigint | string | boolean | null | SqlValue[];
/** One result row, by column name, in the order the query names them. */
export type SqlRow = Record<string, SqlValue>;

/** Runs one SQL statement and resolves to its rows. The shape every query route shares. */
export type SqlRunner = (sql: string, signal?: AbortSignal) => Promise<SqlRow[]>;

export const CLICKHOUSE_USER_ENV = "SHRINKWISE_CLICKHOUSE_USER";
export const CLICKHOUSE_PASSWORD_ENV = "SHRINKWISE_CLICKHOUSE_PASSWORD";
export const CLICKHOUSE_URL_ENV = "SHRINKWISE_CLICKHOUSE_URL";
/** Default time allowed for one query, connection to last byte: 10 minutes. */
export const CLICKHOUSE_DEFAULT_TIMEOUT_MS = 600_000;

export interface ClickHouseOptions {
  /** The server's HTTP interface, e.g. http://127.0.0.1:8123 (https for TLS). */
  url: string;
  /** User name; default SHRINKWISE_CLICKHOUSE_USER, else the server's default user. */
  user?: string;
  /** Password; default SHRINKWISE_CLICKHOUSE_PASSWORD, else none. */
  password?: string;
  /** Database that unqualified table names refer to; default the server's. */
  database?: string;
  /** Milliseconds one query may take, from connecting to the last byte; default 600,000. */
  timeoutMs?: number;
  /**
   * Threads each server uses for one query (ClickHouse's max_threads; it travels with the query
   * to every shard). Default 1: a parallel sum of doubles adds its partial sums in the order the
   * threads finish, and the same table must give the same sums bit for bit (as the DuckDB route,
   * which runs one thread for the same reason). Shards still work in parallel with each other;
   * with two shards the merge is one addition, which does not depend on their order (with three
   * or more, the order in which their answers arrive can move the last bits). 0: the server's
   * own default (all its cores).
   */
  threads?: number;
  /** The environment to read user and password from; default process.env (tests pass their own). */
  env?: Record<string, string | undefined>;
}

/** What the runner needs from the URL: where to connect, and how to name the server in messages. */
interface Endpoint {
  url: URL;
  /** The URL as shown in messages: scheme, host, port and path; never credentials or query. */
  shown: string;
}

function parseEndpoint(text: string): Endpoint {
  const trimmed = text.trim();
  let url: URL;
  try {
    url = new URL(trimmed);
  } catch {
    throw new InputError("setting", `ClickHouse URL '${shownUrlText(trimmed)}' is not a URL: write it as http://host:8123`);
  }
  if (url.protocol !== "http:" && url.protocol !== "https:") {
    throw new InputError("setting", `ClickHouse URL must start with http:// or https:// (its HTTP interface), not ${url.protocol}//`);
  }
  if (url.username !== "" || url.password !== "") {
    throw new InputError(
      "setting",
      `ClickHouse URL ${url.protocol}//${url.host} carries a user or password: remove it and set ${CLICKHOUSE_USER_ENV} and ${CLICKHOUSE_PASSWORD_ENV} instead`,
    );
  }
  if (url.search !== "" || url.hash !== "") {
    throw new InputError("setting", `ClickHouse URL ${url.protocol}//${url.host}${url.pathname} must not carry a query or fragment (${url.search}${url.hash}): give the server's address only`);
  }
  const path = url.pathname === "/" ? "" : url.pathname;
  return { url, shown: `${url.protocol}//${url.host}${path}` };
}

/** Text that failed to parse as a URL, shown without anything that looks like credentials. */
function shownUrlText(text: string): string {
  return text.replace(/\/\/[^/@]*@/, "//").slice(0, 200);
}

/** Removes `secret` (as typed, URL-encoded, and inside a Basic authorization) from `message`. */
function scrub(message: string, user: string | undefined, secret: string | undefined): string {
  if (!secret) return message;
  const forms = new Set<string>([secret, encodeURIComponent(secret), Buffer.from(`${user ?? "default"}:${secret}`).toString("base64")]);
  let out = message;
  for (const form of forms) {
    if (form.length > 0) out = out.split(form).join("***");
  }
  return out;
}

/** The first line of a ClickHouse error body, without the C++ class decoration: "Table x doesn't exist (code 60)". */
export function clickhouseErrorText(body: string): string {
  const firstLine = body.trim().split(/\r?\n/)[0] ?? "";
  // 18.16: "Code: 60, e.displayText() = DB::Exception: Table default.x doesn't exist., e.what() = DB::Exception"
  // current: "Code: 60. DB::Exception: Table default.x does not exist. (UNKNOWN_TABLE) (version 24.3.1.1)"
  const code = /^Code:\s*(\d+)/.exec(firstLine)?.[1];
  let text = firstLine
    .replace(/^Code:\s*\d+[.,]\s*/, "")
    .replace(/^e\.displayText\(\)\s*=\s*/, "")
    .replace(/,\s*e\.what\(\)\s*=\s*[\w:]+\s*$/, "")
    .replace(/^(DB::)?Exception:\s*/, "")
    .replace(/\s*\(version .*$/, "")
    .trim();
  if (text.length > 300) text = `${text.slice(0, 300)}…`;
  if (text === "") text = "an empty error message";
  return code ? `${text.replace(/\.$/, "")} (code ${code})` : text.replace(/\.$/, "");
}

/** ClickHouse's codes for a user or password it does not accept (18.16 and current releases). */
const AUTH_CODES = new Set(["192", "193", "194", "516"]);

const INTEGER_TYPE = /^U?Int(8|16|32|64|128|256)$/;
const FLOAT_TYPE = /^(Float32|Float64|Decimal.*)$/;

/** The type with Nullable(...) and LowCardinality(...) taken off. */
function baseType(type: string): string {
  let inner = type.trim();
  for (;;) {
    const wrapped = /^(Nullable|LowCardinality)\((.*)\)$/.exec(inner);
    if (!wrapped) return inner;
    inner = wrapped[2].trim();
  }
}

/** An integer that ClickHouse sent as text: exact, as a number when it fits, else a bigint. */
export function parseIntegerText(text: string, column: string): number | bigint {
  if (!/^-?\d+$/.test(text)) throw new Error(`ClickHouse sent '${text}' for integer column '${column}'`);
  const big = BigInt(text);
  if (big <= BigInt(Number.MAX_SAFE_INTEGER) && big >= BigInt(Number.MIN_SAFE_INTEGER)) return Number(big);
  return big;
}

/** A floating-point value: a JSON number, or the text ClickHouse uses for NaN and the infinities. */
export function parseFloatValue(value: unknown, column: string): number {
  if (typeof value === "number") return value;
  if (typeof value === "string") {
    const text = value.trim().toLowerCase();
    if (text === "nan" || text === "-nan" || text === "+nan") return Number.NaN;
    if (text === "inf" || text === "+inf" || text === "infinity") return Number.POSITIVE_INFINITY;
    if (text === "-inf" || text === "-infinity") return Number.NEGATIVE_INFINITY;
    const parsed = Number(text);
    if (text !== "" && Number.isFinite(parsed)) return parsed;
  }
  throw new Error(`ClickHouse sent ${JSON.stringify(value)} for floating-point column '${column}'`);
}

function convertValue(value: unknown, type: string, column: string): SqlValue {
  if (value === null || value === undefined) return null;
  const base = baseType(type);
  if (INTEGER_TYPE.test(base)) {
    if (typeof value === "number") return value;
    if (typeof value === "string") return parseIntegerText(value, column);
  } else if (FLOAT_TYPE.test(base)) {
    return parseFloatValue(value, column);
  }
  if (typeof value === "boolean" || typeof value === "number" || typeof value === "string") return value;
  if (Array.isArray(value)) {
    const element = /^Array\((.*)\)$/.exec(base)?.[1] ?? "String";
    return value.map((item) => convertValue(item, element, column));
  }
  return JSON.stringify(value);
}

interface JsonAnswer {
  meta: { name: string; type: string }[];
  data: Record<string, unknown>[];
}

/** Reads a FORMAT JSON answer into rows, with every value converted by its column's type. */
export function rowsOfJsonAnswer(text: string): SqlRow[] {
  const answer = JSON.parse(text) as JsonAnswer;
  if (!answer || !Array.isArray(answer.meta) || !Array.isArray(answer.data)) {
    throw new Error("ClickHouse's answer has no 'meta' and 'data' (not FORMAT JSON)");
  }
  return answer.data.map((raw) => {
    const row: SqlRow = {};
    for (const { name, type } of answer.meta) row[name] = convertValue(raw[name], type, name);
    return row;
  });
}

/** The statement without trailing semicolons and white space; refuses one that names its own format. */
function prepareStatement(sql: string): string {
  const statement = sql.trim().replace(/;\s*$/, "").trim();
  if (statement === "") throw new InputError("setting", "the SQL statement for ClickHouse is empty");
  if (/\bFORMAT\s+\w+\s*$/i.test(statement)) {
    throw new Error("the runner adds FORMAT JSON itself; the statement must not end with its own FORMAT clause");
  }
  return statement;
}

interface RawAnswer {
  status: number;
  body: string;
}

/**
 * Creates the runner for one server. Checks the URL and reads user and password once, now; each
 * call then POSTs one statement. Calls are independent (one connection each, no keep-alive), so a
 * runner can be shared and left without anything to close.
 */
export function clickhouseRunner(options: ClickHouseOptions): SqlRunner {
  const endpoint = parseEndpoint(options.url);
  const env = options.env ?? process.env;
  const user = options.user ?? (env[CLICKHOUSE_USER_ENV] || undefined);
  const password = options.password ?? (env[CLICKHOUSE_PASSWORD_ENV] || undefined);
  const timeoutMs = options.timeoutMs ?? CLICKHOUSE_DEFAULT_TIMEOUT_MS;
  if (!(Number.isFinite(timeoutMs) && timeoutMs > 0)) {
    throw new InputError("setting", `the ClickHouse timeout must be a positive number of milliseconds, not ${timeoutMs}`);
  }
  const threads = options.threads ?? 1;
  if (!(Number.isInteger(threads) && threads >= 0)) {
    throw new InputError("setting", `the ClickHouse threads must be a whole number from 0 (0: the server's default), not ${threads}`);
  }
  const server = endpoint.shown;
  const clean = (message: string) => scrub(message, user, password);
  const authorization =
    user !== undefined || password !== undefined ? `Basic ${Buffer.from(`${user ?? "default"}:${password ?? ""}`).toString("base64")}` : undefined;

  /** POSTs `body` with the given URL parameters; resolves to status and text, rejects with a Node error or CancelledError. */
  function post(parameters: Record<string, string>, body: string, signal: AbortSignal | undefined, limitMs: number): Promise<RawAnswer> {
    const target = new URL(endpoint.url.href);
    for (const [key, value] of Object.entries(parameters)) target.searchParams.set(key, value);
    const transport = target.protocol === "https:" ? https : http;
    const headers: http.OutgoingHttpHeaders = {
      "Content-Type": "text/plain; charset=UTF-8",
      "Content-Length": Buffer.byteLength(body),
    };
    if (authorization) headers.Authorization = authorization;
    return new Promise<RawAnswer>((resolve, reject) => {
      if (signal?.aborted) {
        reject(new CancelledError());
        return;
      }
      let settled = false;
      const finish = (action: () => void) => {
        if (settled) return;
        settled = true;
        clearTimeout(timer);
        signal?.removeEventListener("abort", onAbort);
        action();
      };
      const request = transport.request(target, { method: "POST", headers, agent: false }, (response) => {
        const chunks: Buffer[] = [];
        response.on("data", (chunk: Buffer) => chunks.push(chunk));
        response.on("end", () => finish(() => resolve({ status: response.statusCode ?? 0, body: Buffer.concat(chunks).toString("utf8") })));
        response.on("error", (error) => finish(() => reject(error)));
      });
      const timer = setTimeout(() => {
        finish(() => reject(Object.assign(new Error("timeout"), { code: "SHRINKWISE_TIMEOUT" })));
        request.destroy();
      }, limitMs);
      const onAbort = () => {
        finish(() => reject(new CancelledError()));
        request.destroy();
      };
      signal?.addEventListener("abort", onAbort, { once: true });
      request.on("error", (error) => finish(() => reject(error)));
      request.end(body);
    });
  }

  /** Asks the server to stop a query the runner gave up on; errors are ignored (best effort). */
  function killQuery(queryId: string): void {
    post({}, `KILL QUERY WHERE query_id = '${queryId}' ASYNC`, undefined, 5_000).catch(() => undefined);
  }

  function networkMessage(error: NodeJS.ErrnoException): string {
    switch (error.code) {
      case "SHRINKWISE_TIMEOUT":
        return `ClickHouse at ${server} did not answer within ${formatSeconds(timeoutMs)}: the query was stopped; allow more time or check the server's load`;
      case "ECONNREFUSED":
        return `ClickHouse at ${server} refused the connection: is the server running, and is that its HTTP port (often 8123)?`;
      case "ENOTFOUND":
      case "EAI_AGAIN":
        return `ClickHouse at ${server}: the host name is not known; check the URL`;
      case "ECONNRESET":
      case "EPIPE":
        return `ClickHouse at ${server} closed the connection mid-query; check the server's log, or that the URL is its HTTP port (not the native 9000)`;
      case "EHOSTUNREACH":
      case "ENETUNREACH":
      case "ETIMEDOUT":
        return `ClickHouse at ${server} cannot be reached (${error.code}); check the URL and the network`;
      default:
        return `ClickHouse at ${server} could not be queried: ${error.code ?? error.message}`;
    }
  }

  return async function runClickHouse(sql: string, signal?: AbortSignal): Promise<SqlRow[]> {
    const statement = prepareStatement(sql);
    const queryId = `shrinkwise-${randomUUID()}`;
    const parameters: Record<string, string> = {
      query_id: queryId,
      wait_end_of_query: "1",
      output_format_json_quote_64bit_integers: "1",
      output_format_json_quote_denormals: "1",
      output_format_write_statistics: "0",
    };
    if (options.database) parameters.database = options.database;
    if (threads > 0) parameters.max_threads = String(threads);
    let answer: RawAnswer;
    try {
      answer = await post(parameters, `${statement}\nFORMAT JSON`, signal, timeoutMs);
    } catch (error) {
      if (error instanceof CancelledError) {
        killQuery(queryId);
        throw error;
      }
      const nodeError = error as NodeJS.ErrnoException;
      if (nodeError.code === "SHRINKWISE_TIMEOUT") killQuery(queryId);
      throw new InputError("setting", clean(networkMessage(nodeError)));
    }
    if (answer.status !== 200) {
      const text = clickhouseErrorText(answer.body);
      const code = /^Code:\s*(\d+)/.exec(answer.body.trim())?.[1];
      if (code !== undefined && AUTH_CODES.has(code)) {
        throw new InputError(
          "setting",
          clean(`ClickHouse at ${server} did not accept the user or password: ${text}; check ${CLICKHOUSE_USER_ENV} and ${CLICKHOUSE_PASSWORD_ENV}`),
        );
      }
      if (code === undefined) {
        throw new InputError("setting", clean(`ClickHouse at ${server} answered HTTP ${answer.status}: ${text}; is that the server's HTTP interface?`));
      }
      throw new InputError("setting", clean(`ClickHouse at ${server} refused the query: ${text}`));
    }
    try {
      return rowsOfJsonAnswer(answer.body);
    } catch (error) {
      const reason = error instanceof Error ? error.message : String(error);
      throw new InputError("setting", clean(`ClickHouse at ${server} sent an answer that is not its JSON format (${reason}); is that the server's HTTP interface?`));
    }
  };
}

function formatSeconds(ms: number): string {
  return ms < 1000 ? `${ms} ms` : `${Number((ms / 1000).toPrecision(3))} s`;
}

export interface ClickHouseSumsOptions extends ClickHouseOptions {
  /** A cancel flag (engine/errors.ts) or an AbortSignal: raised, the running query is aborted (CancelledError). */
  signal?: CancelSignal | AbortSignal;
  /** Sees every query before it runs (--print-sql, progress). */
  onQuery?: (step: SumsStep, sql: string) => void;
}

/** True for an AbortSignal (it can tell the runner at once), false for a plain cancel flag (polled). */
function isAbortSignal(signal: CancelSignal | AbortSignal): signal is AbortSignal {
  return typeof (signal as AbortSignal).addEventListener === "function";
}

/**
 * Runs `body` with a runner bound to the server and the caller's signal: an AbortSignal aborts
 * the running request at once; a plain cancel flag is looked at every 50 ms while a query runs.
 */
async function withClickhouse<T>(options: ClickHouseSumsOptions, body: (run: RunQuery, signal: CancelSignal) => Promise<T>): Promise<T> {
  const run = clickhouseRunner(options);
  const controller = new AbortController();
  const signal = options.signal;
  let watch: ReturnType<typeof setInterval> | null = null;
  const forward = () => controller.abort();
  if (signal) {
    if (isAbortSignal(signal)) {
      if (signal.aborted) controller.abort();
      else signal.addEventListener("abort", forward, { once: true });
    } else {
      if (signal.aborted) controller.abort();
      watch = setInterval(() => {
        if (signal.aborted) controller.abort();
      }, 50);
    }
  }
  try {
    return await body((sql) => run(sql, controller.signal), controller.signal);
  } finally {
    if (watch !== null) clearInterval(watch);
    if (signal && isAbortSignal(signal)) signal.removeEventListener("abort", forward);
  }
}

function refuseFiles(source: SumsSource): void {
  if (source.kind === "csv" || source.kind === "parquet") {
    throw new InputError("setting", `${source.path} is a file: ClickHouse sums a table on the server (--table db.table); a local file goes through DuckDB`);
  }
}

/**
 * The sums table of `request` (its source a table or view on the server, `db.table`; a
 * Distributed table sums on every shard and the server merges the partial sums) computed by the
 * ClickHouse server at `options.url`: the queries of engine/sumsSql.ts in its ClickHouse dialect,
 * POSTed one by one. Throws InputError for bad input or a server that can't be queried,
 * CancelledError when the signal is raised.
 */
export async function clickhouseSums(request: Omit<SumsRequest, "dialect">, options: ClickHouseSumsOptions): Promise<SumsTable> {
  refuseFiles(request.source);
  return withClickhouse(options, async (run, signal) => {
    const version = (await run("SELECT version() AS version"))[0]?.version;
    const where = request.source.kind === "table" ? request.source.name : "a query";
    return computeSums({ ...request, dialect: "clickhouse" }, run, {
      signal,
      onQuery: options.onQuery,
      source: `clickhouse ${String(version ?? "")} at ${parseEndpoint(options.url).shown} on ${where}`.replace(/\s+/g, " "),
    });
  });
}

/** The describe, first-pass and levels queries run on the server, and the second pass's queries built (not run): for --print-sql. */
export async function clickhousePrepare(request: Omit<SumsRequest, "dialect">, options: ClickHouseSumsOptions): Promise<PreparedSums> {
  refuseFiles(request.source);
  return withClickhouse(options, (run, signal) => prepareSums({ ...request, dialect: "clickhouse" }, run, { signal, onQuery: options.onQuery }));
}

/** The source's column names, in order (ClickHouse's DESCRIBE TABLE). */
export async function clickhouseColumns(source: SumsSource, options: ClickHouseSumsOptions): Promise<string[]> {
  refuseFiles(source);
  return withClickhouse(options, async (run) => (await run(describeSql(source, "clickhouse"))).map((row) => String(row.name)));
}
