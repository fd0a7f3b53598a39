/**
 * SQL that computes the sums table (engine/sumsTable.ts) where the data live: a generator of the
 * queries for DuckDB and ClickHouse, and the assembly of their answers into a SumsTable. Pure
 * TypeScript (no Node, no driver): a runner (engine/node/duckdb.ts, a ClickHouse client, or a
 * user's own database client via --print-sql) executes the text and hands back rows.
 *
 * The queries, in order (computeSums drives them through any `RunQuery`):
 * 0. Describe: the source's column names and types (DuckDB `DESCRIBE SELECT * FROM …`,
 *    ClickHouse `DESCRIBE TABLE …`). A missing column, a date/time column where numbers are
 *    expected or a key column that is not whole numbers is refused here, before any scan.
 * 1. First pass (one row, one scan): rows in the source, rows used (no NULL in any used column;
 *    the rest are skipped and counted, as the cells skip rows with a blank), Σw, Σw·x of every
 *    number column (the global centre c = Σw·x/Σw; a non-finite sum means a NaN or ±∞ in the
 *    column, refused), negative weights (refused),
 *    for text columns the count of distinct values in the used rows (the level cap) and how many
 *    values read as numbers (a mostly-number text column is a typo: refused naming a sample value;
 *    an all-number text column is read as numbers), and for time blocks the cut points. DuckDB on
 *    Parquet without text columns picks the used rows once by WHERE and counts all rows from the
 *    file's footer (firstPassSql), rather than repeating the condition on every aggregate.
 * 1b. Levels: one small GROUP BY per text predictor (within the cap): each level, its rows and
 *    its weight (an indicator's centre is its level's weighted share).
 * 2. Second pass: per block, Σw, rows, Σw(x_a − c_a), Σw(x_a − c_a)(x_b − c_b) for a ≤ b,
 *    Σw(x_a − c_a)(y − c_y), Σw(y − c_y)² and max|x| over rows with w > 0, the centre inlined as
 *    exact literals (DuckDB with weights forms w·(x_a − c_a) once a row: the same (w·a)·b). The aggregates are dealt into queries of at most `maxAggregates` each
 *    (default 1000 DuckDB, 400 ClickHouse, whose default max_query_size is 256 KiB), so a wide
 *    model never sends one unbounded query; each query returns one row per block.
 *
 * Terms. A number column is one term under its own name. A text column becomes indicator terms
 * `column: level` (1 when the row's value is that level, else 0), one per level except the
 * reference level, the most frequent level in the used rows (ties: the first in code-point
 * order; the cells break ties by first appearance, which a query cannot see). Levels are
 * compared exactly as stored (the cells also fold case and spacing), listed in code-point order.
 *
 * Blocks (the fold rule):
 * - `column`: one block per distinct value of a fold-label column (numbers written as JavaScript
 *   writes them, so 3.0 and 3 are one label "3"); blocks in number order for a column of
 *   numbers, else in text order (UTF-16 units), as engine/sums.ts orders labels.
 * - `hash`: a whole-number key column dealt into K blocks "1".."K" by `foldOfKey` below, the
 *   same on every engine and in TypeScript; blocks in number order.
 * - `time`: an ordering column (numbers, dates or times) cut into K + 1 blocks of near-equal row
 *   counts, "1".."K+1" in time order, so that K forward folds can each be scored on one later
 *   block (as engine/folds.ts's time plan cuts rows). Cut points: the engine's exact discrete
 *   quantiles of the ordering column at j/(K+1), j = 1..K (DuckDB quantile_disc, ClickHouse
 *   quantilesExact), over the used rows; a row goes to block 1 + #{cuts ≤ its value}. The table
 *   is marked `timeOrdered`, so fitFromSums trains each fold on the blocks before it. Tied
 *   values stay in one block, so blocks are near-equal, not equal, in size; the two engines'
 *   quantile rules may pick different cut points, so `cuts` can be given to fix them.
 *
 * Precision. Every sum is about the global centre c from the first pass, inlined as an exact
 * literal (`exactLiteral`: the double's integer mantissa scaled by powers of two, e.g.
 * `CAST(6755399441055744 AS DOUBLE) / 4096`), so the engine subtracts exactly the double the
 * sums table reports, whatever its decimal parser does; large offsets (timestamps, IDs near
 * 1e12) cancel once, row by row. The centre need not equal the mean: the table's offsets carry
 * the difference, computed in the same pass.
 */
import { InputError, throwIfCancelled, type CancelSignal } from "./errors";
import { SUMS_FORMAT, SUMS_VERSION, upperIndex, upperSize, type SumsBlock, type SumsTable } from "./sumsTable";

export type SqlDialect = "duckdb" | "clickhouse";

/** Where the rows are: a table or view (`db.table` allowed), a CSV or Parquet file (DuckDB), or a query's rows. */
export type SumsSource =
  | { kind: "table"; name: string }
  | { kind: "csv"; path: string }
  | { kind: "parquet"; path: string }
  /** `countWithoutScan`: count(*) of the query is answered without reading its rows (e.g. a query over read_parquet, whose footer holds the row count). */
  | { kind: "query"; sql: string; countWithoutScan?: boolean };

/** How rows are dealt into blocks (see the file comment). */
export type FoldRule =
  | { kind: "column"; column: string }
  | { kind: "hash"; key: string; folds: number }
  | { kind: "time"; column: string; folds: number; cuts?: readonly number[] };

export interface SumsRequest {
  source: SumsSource;
  dialect: SqlDialect;
  target: string;
  predictors: readonly string[];
  /** Observation weights column; null or absent: every row weighs 1. */
  weights?: string | null;
  fold: FoldRule;
  /** Most levels a text predictor may have (default 50). */
  levelCap?: number;
  /** Most aggregates in one second-pass query (default 1000 DuckDB, 400 ClickHouse). */
  maxAggregates?: number;
}

/** One row of a query's answer, by column alias. Numbers may arrive as number, bigint or text (ClickHouse's 64-bit integers). */
export type SqlRow = Record<string, unknown>;
/** Runs one query and returns its rows. */
export type RunQuery = (sql: string) => Promise<SqlRow[]>;

/** Default level cap of a text predictor. */
export const DEFAULT_LEVEL_CAP = 50;

/** How a column's type reads for the sums. */
export type ColumnKind = "integer" | "number" | "boolean" | "text" | "time" | "other";

// ---------------------------------------------------------------------------------------------
// The portable fold hash.

const TWO_32 = 4294967296;
/** Knuth's multiplicative hashing constant, ⌊2^32/φ⌋ (Knuth, TAOCP vol. 3, §6.4). */
const GOLDEN = 2654435761;

/**
 * The fold (0..K−1) of an integer key: m = key mod 2^32 (made non-negative), h = m·2654435761
 * mod 2^32, fold = h mod K. The product is split at 16 bits, m = mₕ·2^16 + mₗ, so that
 * h = (mₗ·G + ((mₕ·G) mod 2^16)·2^16) mod 2^32 and no intermediate reaches 2^49: exact in
 * doubles, in DuckDB's BIGINT (which refuses to overflow) and ClickHouse's Int64 (which wraps).
 * `foldHashSql` writes the same arithmetic in either dialect. Throws RangeError for a key that is
 * not a whole number or K < 1.
 * Example: foldOfKey(1, 10) = 2654435761 mod 10 = 1; foldOfKey(-1, 10) = (2^32 − 1)·G mod 2^32 mod 10.
 */
export function foldOfKey(key: bigint | number, folds: number): number {
  if (!Number.isInteger(folds) || folds < 1) throw new RangeError(`foldOfKey requires a whole number of folds from 1, got ${folds}`);
  let m: number;
  if (typeof key === "bigint") {
    const r = ((key % 4294967296n) + 4294967296n) % 4294967296n;
    m = Number(r);
  } else {
    if (!Number.isInteger(key)) throw new RangeError(`foldOfKey requires a whole-number key, got ${key}`);
    // % on doubles is exact (fmod), so keys beyond 2^53 that are doubles reduce exactly too.
    m = ((key % TWO_32) + TWO_32) % TWO_32;
  }
  const low = m % 65536;
  const high = (m - low) / 65536;
  const h = (low * GOLDEN + ((high * GOLDEN) % 65536) * 65536) % TWO_32;
  return h % folds;
}

/** The SQL of foldOfKey(key, K) + 1 (labels 1..K) for an integer expression. */
export function foldHashSql(keyExpression: string, folds: number, dialect: SqlDialect): string {
  if (dialect === "duckdb") {
    // The remainder first, in the key's own type (|key % 2^32| < 2^32 fits BIGINT whatever the
    // type, UBIGINT above 2^63 included); HUGEINT arithmetic on every row would cost a scan's worth.
    const m = `((CAST(${keyExpression} % ${TWO_32} AS BIGINT) + ${TWO_32}) % ${TWO_32})`;
    return `(((((${m}) % 65536) * ${GOLDEN} + (((${m}) // 65536) * ${GOLDEN} % 65536) * 65536) % ${TWO_32}) % ${folds} + 1)`;
  }
  // toInt64 of a UInt64 key above 2^63 wraps by 2^64, which leaves key mod 2^32 unchanged.
  const m = `((toInt64(${keyExpression}) % toInt64(${TWO_32}) + toInt64(${TWO_32})) % toInt64(${TWO_32}))`;
  return `((((${m} % 65536) * ${GOLDEN} + ((intDiv(${m}, 65536) * ${GOLDEN}) % 65536) * 65536) % ${TWO_32}) % ${folds} + 1)`;
}

// ---------------------------------------------------------------------------------------------
// Quoting and literals.

/** An identifier: DuckDB "x" (quotes doubled), ClickHouse `x` (backslash escapes). */
export function quoteIdentifier(name: string, dialect: SqlDialect): string {
  if (dialect === "duckdb") return `"${name.replace(/"/g, '""')}"`;
  return "`" + name.replace(/\\/g, "\\\\").replace(/`/g, "\\`") + "`";
}

/** A string literal: DuckDB doubles quotes (no backslash escapes); ClickHouse escapes backslash and quote. */
export function quoteString(text: string, dialect: SqlDialect): string {
  if (dialect === "duckdb") return `'${text.replace(/'/g, "''")}'`;
  return `'${text.replace(/\\/g, "\\\\").replace(/'/g, "\\'")}'`;
}

/** A table name, each dot-separated part quoted (`db.table` → `db`.`table`). */
function quoteTableName(name: string, dialect: SqlDialect): string {
  return name
    .split(".")
    .map((part) => quoteIdentifier(part, dialect))
    .join(".");
}

/** The FROM item of a source. */
export function sourceSql(source: SumsSource, dialect: SqlDialect): string {
  switch (source.kind) {
    case "table":
      return quoteTableName(source.name, dialect);
    case "query":
      return `(${source.sql}) AS source_rows`;
    case "csv":
    case "parquet":
      if (dialect !== "duckdb") throw new InputError("setting", `a ${source.kind === "csv" ? "CSV" : "Parquet"} file is read through DuckDB; give a table name for ClickHouse`);
      return source.kind === "csv" ? `read_csv(${quoteString(source.path, dialect)}, header = true)` : `read_parquet(${quoteString(source.path, dialect)})`;
  }
}

const POWER_62 = "4611686018427387904";

/**
 * A double as an exact SQL expression, independent of the engine's decimal parsing: the value is
 * k·2^e with k a whole number below 2^53, written as CAST(k AS DOUBLE) (or toFloat64(k)) times or
 * divided by powers of two (whole-number literals up to 2^62), each step exact in IEEE doubles.
 * Example: 0.75 → `(CAST(3 AS DOUBLE) / 4)`. Throws RangeError for NaN or ±∞.
 */
export function exactLiteral(value: number, dialect: SqlDialect): string {
  if (!Number.isFinite(value)) throw new RangeError(`exactLiteral requires a finite number, got ${value}`);
  const cast = (k: number): string => (dialect === "duckdb" ? `CAST(${k} AS DOUBLE)` : `toFloat64(${k})`);
  if (value === 0) return cast(0);
  let k = value;
  let e = 0;
  while (!Number.isInteger(k)) {
    k *= 2; // exact: only the exponent changes
    e -= 1;
  }
  while (Math.abs(k) > 2 ** 53) {
    k /= 2; // exact: k is an even whole number this large
    e += 1;
  }
  if (e === 0) return cast(k);
  let text = cast(k);
  const op = e < 0 ? "/" : "*";
  let left = Math.abs(e);
  while (left > 0) {
    const step = Math.min(62, left);
    text += ` ${op} ${step === 62 ? POWER_62 : String(2 ** step)}`;
    left -= step;
  }
  return `(${text})`;
}

// ---------------------------------------------------------------------------------------------
// Column types.

/** Reads an engine's type name (DuckDB or ClickHouse, Nullable/LowCardinality unwrapped). */
export function columnKind(typeName: string): ColumnKind {
  let t = typeName.trim();
  for (;;) {
    const wrapped = /^(Nullable|LowCardinality)\((.*)\)$/.exec(t);
    if (!wrapped) break;
    t = wrapped[2];
  }
  const upper = t.toUpperCase();
  if (/^U?(TINYINT|SMALLINT|INTEGER|INT|BIGINT|HUGEINT)$/.test(upper) || /^U?INT(8|16|32|64|128|256)$/.test(upper)) return "integer";
  if (/^(FLOAT|DOUBLE|REAL|FLOAT32|FLOAT64)$/.test(upper) || upper.startsWith("DECIMAL")) return "number";
  if (upper === "BOOLEAN" || upper === "BOOL") return "boolean";
  if (upper === "VARCHAR" || upper === "STRING" || upper === "TEXT" || upper.startsWith("FIXEDSTRING") || upper.startsWith("ENUM")) return "text";
  if (upper === "DATE" || upper === "DATE32" || upper.startsWith("DATETIME") || upper.startsWith("TIMESTAMP") || upper === "TIME") return "time";
  return "other";
}

/** The query listing the source's columns and types. */
export function describeSql(source: SumsSource, dialect: SqlDialect): string {
  if (dialect === "duckdb") return `DESCRIBE SELECT * FROM ${sourceSql(source, dialect)}`;
  if (source.kind === "table") return `DESCRIBE TABLE ${quoteTableName(source.name, dialect)}`;
  return `DESCRIBE TABLE (SELECT * FROM ${sourceSql(source, dialect)})`;
}

/** The column name → type name map from describeSql's rows (DuckDB column_name/column_type, ClickHouse name/type). */
export function readDescribe(rows: readonly SqlRow[]): Map<string, string> {
  const out = new Map<string, string>();
  for (const row of rows) {
    const name = row.column_name ?? row.name;
    const type = row.column_type ?? row.type;
    if (typeof name === "string" && typeof type === "string") out.set(name, type);
  }
  return out;
}

// ---------------------------------------------------------------------------------------------
// The plan: what each used column is, once its type is known.

/** A used column and how it enters the sums. */
interface PlannedColumn {
  name: string;
  kind: ColumnKind;
  /** A text column whose values are checked (and, when all are numbers, read) as numbers. */
  textAsNumber: boolean;
}

export interface SumsPlan {
  request: SumsRequest;
  dialect: SqlDialect;
  levelCap: number;
  maxAggregates: number;
  target: PlannedColumn;
  weights: PlannedColumn | null;
  /** Predictors in the given order. */
  predictors: PlannedColumn[];
  /** The fold rule's column (label, key or ordering column). */
  foldColumn: PlannedColumn;
  /** Every used column, once. */
  used: string[];
  /** Columns of the source (for messages). */
  sourceColumns: string[];
}

function describeSource(source: SumsSource): string {
  switch (source.kind) {
    case "table":
      return `table ${source.name}`;
    case "query":
      return "the query";
    default:
      return source.path;
  }
}

function listSome(names: readonly string[], most = 8): string {
  const shown = names.slice(0, most).map((n) => `'${n}'`);
  return shown.join(", ") + (names.length > most ? `, … (${names.length} in all)` : "");
}

/**
 * Checks the request against the source's columns (from describeSql) and fixes how each column
 * enters the sums. Throws InputError for a missing column, a column used twice, a date/time
 * column where numbers are expected, a fold key that is not whole numbers, bad K or caps.
 */
export function planSums(request: SumsRequest, types: ReadonlyMap<string, string>): SumsPlan {
  const dialect = request.dialect;
  const levelCap = request.levelCap ?? DEFAULT_LEVEL_CAP;
  const maxAggregates = request.maxAggregates ?? (dialect === "duckdb" ? 1000 : 400);
  if (!Number.isInteger(levelCap) || levelCap < 2) throw new InputError("setting", `the level cap must be a whole number from 2, got ${levelCap}`);
  if (!Number.isInteger(maxAggregates) || maxAggregates < 10) throw new InputError("setting", `the aggregates per query must be a whole number from 10, got ${maxAggregates}`);
  const where = describeSource(request.source);
  const sourceColumns = [...types.keys()];
  const column = (name: string, role: string): PlannedColumn => {
    const type = types.get(name);
    if (type === undefined) throw new InputError("setting", `${role} column '${name}' is not in ${where} (columns: ${listSome(sourceColumns)}): check the name`);
    const kind = columnKind(type);
    return { name, kind, textAsNumber: false };
  };
  const numeric = (c: PlannedColumn, role: string): PlannedColumn => {
    if (c.kind === "time") throw new InputError("not-finite", `${role} column '${c.name}' holds dates or times (${types.get(c.name) as string}): use a column of numbers`);
    if (c.kind === "other") throw new InputError("not-finite", `${role} column '${c.name}' has type ${types.get(c.name) as string}, not numbers: use a column of numbers`);
    if (c.kind === "text") c.textAsNumber = true;
    return c;
  };
  const target = numeric(column(request.target, "the target"), "the target");
  if (target.kind === "boolean") {
    throw new InputError("setting", `the target '${target.name}' is yes/no: fitting from sums takes number targets only (a yes/no target needs passes over the rows); fit it in memory`);
  }
  const weights = request.weights ? numeric(column(request.weights, "the weights"), "the weights") : null;
  if (request.predictors.length === 0) throw new InputError("no-predictors", "no predictors given: name at least one predictor column");
  const fold = request.fold;
  if (fold.kind !== "column" && !(Number.isInteger(fold.folds) && fold.folds >= 2 && fold.folds <= 1000)) {
    throw new InputError("folds", `the number of folds must be a whole number from 2 to 1000, got ${fold.folds}`);
  }
  const foldName = fold.kind === "hash" ? fold.key : fold.column;
  const foldColumn = column(foldName, fold.kind === "hash" ? "the fold key" : fold.kind === "time" ? "the time" : "the fold");
  if (fold.kind === "hash" && foldColumn.kind !== "integer") {
    throw new InputError("fold-labels", `the fold key '${foldName}' must hold whole numbers (an integer type), not ${types.get(foldName) as string}: use an integer ID column`);
  }
  if (fold.kind === "time") {
    if (foldColumn.kind !== "time" && foldColumn.kind !== "integer" && foldColumn.kind !== "number") {
      throw new InputError("fold-labels", `the time column '${foldName}' must hold numbers, dates or times, not ${types.get(foldName) as string}`);
    }
    if (fold.cuts !== undefined) {
      if (fold.cuts.length !== fold.folds || fold.cuts.some((c, i) => !Number.isFinite(c) || (i > 0 && c < fold.cuts![i - 1]))) {
        throw new InputError("fold-labels", `time cut points must be ${fold.folds} finite numbers in rising order`);
      }
    }
  }
  const predictors = request.predictors.map((name) => column(name, "predictors"));
  for (const p of predictors) {
    if (p.kind === "time") throw new InputError("not-finite", `predictors column '${p.name}' holds dates or times: leave it out of predictors (it can order time blocks)`);
    if (p.kind === "other") throw new InputError("not-finite", `predictors column '${p.name}' has type ${types.get(p.name) as string}: use numbers or text`);
  }
  const roles = new Map<string, string>();
  const claim = (name: string, role: string): void => {
    const other = roles.get(name);
    if (other !== undefined) throw new InputError("setting", `column '${name}' is both ${other} and ${role}: use it once`);
    roles.set(name, role);
  };
  claim(target.name, "the target");
  if (weights) claim(weights.name, "the weights");
  claim(foldColumn.name, fold.kind === "hash" ? "the fold key" : fold.kind === "time" ? "the time column" : "the fold column");
  for (const p of predictors) claim(p.name, "a predictor");
  return {
    request,
    dialect,
    levelCap,
    maxAggregates,
    target,
    weights,
    predictors,
    foldColumn,
    used: [...roles.keys()],
    sourceColumns,
  };
}

// ---------------------------------------------------------------------------------------------
// Expressions.

function q(plan: SumsPlan, name: string): string {
  return quoteIdentifier(name, plan.dialect);
}

/** A column read as a double. */
function numberSql(plan: SumsPlan, c: PlannedColumn): string {
  const id = q(plan, c.name);
  if (plan.dialect === "duckdb") {
    if (c.kind === "text") return `TRY_CAST(${id} AS DOUBLE)`;
    if (c.kind === "boolean") return `CAST(CAST(${id} AS INTEGER) AS DOUBLE)`;
    return `CAST(${id} AS DOUBLE)`;
  }
  if (c.kind === "text") return `toFloat64OrNull(${id})`;
  return `toFloat64(${id})`;
}

/** The weight of a row as a double, or null for unit weights. */
function weightSql(plan: SumsPlan): string | null {
  return plan.weights ? numberSql(plan, plan.weights) : null;
}

function notNull(plan: SumsPlan, expression: string): string {
  return plan.dialect === "duckdb" ? `${expression} IS NOT NULL` : `isNotNull(${expression})`;
}

/** The used-rows condition: no NULL in any used column. */
function usedSql(plan: SumsPlan): string {
  return plan.used.map((name) => notNull(plan, q(plan, name))).join(" AND ");
}

/** The time column as a number (only compared with its own quantiles, so its unit does not matter). */
function timeSql(plan: SumsPlan): string {
  const c = plan.foldColumn;
  if (plan.dialect === "duckdb") return c.kind === "time" ? `epoch(${q(plan, c.name)})` : `CAST(${q(plan, c.name)} AS DOUBLE)`;
  return `toFloat64(${q(plan, c.name)})`;
}

/** An aggregate over rows meeting `condition` (DuckDB FILTER, ClickHouse -If). */
function conditional(plan: SumsPlan, fn: "sum" | "min" | "max", expression: string, condition: string): string {
  if (plan.dialect === "duckdb") return `${fn}(${expression}) FILTER (WHERE ${condition})`;
  return `${fn}If(${expression}, ${condition})`;
}

function countWhere(plan: SumsPlan, condition: string): string {
  return plan.dialect === "duckdb" ? `count(*) FILTER (WHERE ${condition})` : `countIf(${condition})`;
}

function distinctWhere(plan: SumsPlan, expression: string, condition: string): string {
  return plan.dialect === "duckdb" ? `count(DISTINCT ${expression}) FILTER (WHERE ${condition})` : `uniqExactIf(${expression}, ${condition})`;
}

/** A list of aggregates with aliases a0, a1, …: add returns the alias. */
class AggregateList {
  readonly items: string[] = [];
  add(sql: string): string {
    this.items.push(sql);
    return `a${this.items.length - 1}`;
  }
  select(): string {
    return this.items.map((sql, i) => `${sql} AS a${i}`).join(",\n  ");
  }
}

// ---------------------------------------------------------------------------------------------
// First pass.

/** The first pass's query and where each answer is found (aliases). */
export interface FirstPass {
  sql: string;
  total: string;
  used: string;
  weight: string;
  negativeWeights: string | null;
  /** Per number column (target, weights, number-typed and text predictors): Σw·x over used rows. */
  weightedSum: Map<string, string>;
  /** Per text column: non-NULL values (all rows), those that read as numbers, the smallest that does not. */
  textCheck: Map<string, { present: string; numbers: string; sample: string }>;
  /** Per text predictor: distinct values in used rows. */
  distinct: Map<string, string>;
  /** Time rule without given cuts: the quantiles' alias. */
  cuts: string | null;
}

/** Whether count(*) of a DuckDB source costs no scan: a Parquet file (its footer holds the row count) or a query said to be one. */
function countWithoutScan(source: SumsSource): boolean {
  return source.kind === "parquet" || (source.kind === "query" && source.countWithoutScan === true);
}

/**
 * The first pass (see the file comment). Its aggregates are over the used rows, as FILTER (WHERE
 * used) (ClickHouse -If) beside the count of all rows. For DuckDB, when no column is text (no
 * check over all rows) and counting the source's rows costs no scan (Parquet), the used rows are
 * chosen once instead, by WHERE, with the count of all rows from a scalar subquery: the same
 * aggregates over the same rows in the same order, without evaluating the condition (one NOT NULL
 * test per used column) again for every aggregate; measured at about 0.6 of the FILTER form's
 * time on 1,000,000 × 20 Parquet (bench/sumsDuckdb.ts). A CSV keeps the FILTER form, since its
 * count would read the file a second time.
 */
export function firstPassSql(plan: SumsPlan): FirstPass {
  const list = new AggregateList();
  const numberColumns = [plan.target, ...(plan.weights ? [plan.weights] : []), ...plan.predictors];
  const byWhere = plan.dialect === "duckdb" && countWithoutScan(plan.request.source) && !numberColumns.some((c) => c.kind === "text");
  const used = usedSql(plan);
  const w = weightSql(plan);
  const from = sourceSql(plan.request.source, plan.dialect);
  // An aggregate over the used rows: filtered here, or by the WHERE clause.
  const overUsed = (fn: "sum" | "count", expression: string, extra: string | null = null): string => {
    if (byWhere) {
      if (fn === "sum") return `sum(${expression})`;
      return extra === null ? "count(*)" : countWhere(plan, extra);
    }
    if (fn === "sum") return conditional(plan, "sum", expression, used);
    return countWhere(plan, extra === null ? used : `${used} AND ${extra}`);
  };
  const out: FirstPass = {
    sql: "",
    total: list.add(byWhere ? `(SELECT count(*) FROM ${from})` : plan.dialect === "duckdb" ? "count(*)" : "count()"),
    used: list.add(overUsed("count", "")),
    weight: list.add(w === null ? overUsed("count", "") : overUsed("sum", w)),
    negativeWeights: w === null ? null : list.add(overUsed("count", "", `${w} < 0`)),
    weightedSum: new Map(),
    textCheck: new Map(),
    distinct: new Map(),
    cuts: null,
  };
  for (const c of numberColumns) {
    if (c.kind === "text") {
      const id = q(plan, c.name);
      const asNumber = numberSql(plan, c);
      out.textCheck.set(c.name, {
        present: list.add(countWhere(plan, notNull(plan, id))),
        numbers: list.add(countWhere(plan, notNull(plan, asNumber))),
        sample: list.add(conditional(plan, "min", id, `${notNull(plan, id)} AND ${plan.dialect === "duckdb" ? `${asNumber} IS NULL` : `isNull(${asNumber})`}`)),
      });
      if (plan.predictors.includes(c)) out.distinct.set(c.name, list.add(distinctWhere(plan, id, used)));
    }
    const x = numberSql(plan, c);
    // A text column that turns out to hold levels adds these two harmlessly (NULL reads skipped).
    // A NaN or ±∞ in the column (or values too large to add) makes this sum non-finite: the check
    // costs no aggregate of its own.
    out.weightedSum.set(c.name, list.add(overUsed("sum", w === null ? x : `${w} * ${x}`)));
  }
  const fold = plan.request.fold;
  if (fold.kind === "time" && fold.cuts === undefined) {
    const levels = Array.from({ length: fold.folds }, (_, j) => String((j + 1) / (fold.folds + 1)));
    const t = timeSql(plan);
    out.cuts = list.add(
      byWhere
        ? `quantile_disc(${t}, [${levels.join(", ")}])`
        : plan.dialect === "duckdb"
          ? `quantile_disc(${t}, [${levels.join(", ")}]) FILTER (WHERE ${used})`
          : `quantilesExactIf(${levels.join(", ")})(${t}, ${used})`,
    );
  }
  out.sql = `SELECT\n  ${list.select()}\nFROM ${from}${byWhere ? `\nWHERE ${used}` : ""}`;
  return out;
}

/** The numbers the first pass found, and the terms they fix. */
export interface FirstPassFacts {
  totalRows: number;
  usedRows: number;
  weight: number;
  /** Centre of the target and of every number column, by name. */
  centre: Map<string, number>;
  /** Text predictors to list levels of (within the cap). */
  textPredictors: string[];
  /** Time cut points (K of them), rising. */
  cuts: number[] | null;
}

/** A number from a query's answer: number, bigint or numeric text (ClickHouse's 64-bit integers); NULL → null. */
export function toNumber(value: unknown): number | null {
  if (value === null || value === undefined) return null;
  if (typeof value === "number") return value;
  if (typeof value === "bigint") return Number(value);
  if (typeof value === "string" && value.trim() !== "") {
    const n = Number(value);
    if (!Number.isNaN(n)) return n;
    // ClickHouse writes non-finite floats as nan, -nan, inf, -inf.
    const word = value.trim().toLowerCase();
    if (word === "nan" || word === "-nan") return NaN;
    if (word === "inf" || word === "+inf") return Infinity;
    if (word === "-inf") return -Infinity;
  }
  throw new Error(`expected a number from the query, got ${String(value)}`);
}

function needNumber(row: SqlRow, alias: string): number {
  const n = toNumber(row[alias]);
  return n === null ? 0 : n; // DuckDB's sum over no rows is NULL; ClickHouse's sumIf is 0
}

/**
 * Reads the first pass's row: checks (text where numbers are expected, non-finite values,
 * negative or all-zero weights, no used rows, too many levels) and the centre. Mutates the
 * plan's text columns that hold numbers only, so that they are read as numbers from here on.
 */
export function readFirstPass(plan: SumsPlan, pass: FirstPass, row: SqlRow): FirstPassFacts {
  const totalRows = needNumber(row, pass.total);
  const usedRows = needNumber(row, pass.used);
  const textPredictors: string[] = [];
  for (const [name, check] of pass.textCheck) {
    const present = needNumber(row, check.present);
    const numbers = needNumber(row, check.numbers);
    const sample = row[check.sample];
    const c = [plan.target, plan.weights, ...plan.predictors].find((x) => x?.name === name) as PlannedColumn;
    const isPredictor = plan.predictors.includes(c);
    // Numbers stored as text are read as numbers; an all-blank column leaves no used rows (below).
    if (numbers === present) continue;
    if (!isPredictor || numbers * 2 >= present) {
      const role = c === plan.target ? "the target" : c === plan.weights ? "the weights" : "predictors";
      throw new InputError("not-finite", `${role} column '${name}' has text where numbers are expected (e.g. '${String(sample)}'): fix or clear those cells`);
    }
    c.textAsNumber = false;
    const distinct = needNumber(row, pass.distinct.get(name) as string);
    if (distinct > plan.levelCap) {
      throw new InputError(
        "setting",
        `predictors column '${name}' has ${distinct} different texts: a text column becomes one 0/1 term per level (at most ${plan.levelCap}), so this looks like a name or an identifier; leave it out of predictors`,
      );
    }
    textPredictors.push(name);
  }
  if (usedRows === 0) {
    throw new InputError("empty", totalRows === 0 ? `${describeSource(plan.request.source)} has no rows` : `every one of the ${totalRows} rows has a blank (NULL) in a used column: nothing to fit`);
  }
  if (pass.negativeWeights !== null && needNumber(row, pass.negativeWeights) > 0) {
    throw new InputError("weights", `the weights column '${plan.weights?.name}' has negative values: weights must be 0 or more`);
  }
  const weight = needNumber(row, pass.weight);
  if (!(weight > 0)) throw new InputError("weights", `the weights column '${plan.weights?.name}' adds up to 0 over the used rows: at least one row must weigh more than 0`);
  if (!Number.isFinite(weight)) throw new InputError("not-finite", `the weights column '${plan.weights?.name}' has values that are not finite (NaN or infinity) or too large to add up: fix them or clear the cells`);
  const centre = new Map<string, number>();
  for (const [name, alias] of pass.weightedSum) {
    if (textPredictors.includes(name)) continue;
    const sum = needNumber(row, alias);
    if (!Number.isFinite(sum)) {
      throw new InputError("not-finite", `column '${name}' has values that are not finite (NaN or infinity) or too large to add up: fix them, clear the cells, or record the column in other units`);
    }
    centre.set(name, sum / weight);
  }
  let cuts: number[] | null = null;
  const fold = plan.request.fold;
  if (fold.kind === "time") {
    if (fold.cuts !== undefined) cuts = [...fold.cuts];
    else {
      const raw = row[pass.cuts as string];
      const list = Array.isArray(raw) ? raw : typeof raw === "string" ? (JSON.parse(raw) as unknown[]) : [];
      cuts = list.map((v) => toNumber(v) as number);
      if (cuts.length !== fold.folds || cuts.some((c) => !Number.isFinite(c))) throw new Error(`the time quantiles came back as ${JSON.stringify(raw)}`);
    }
  }
  return { totalRows, usedRows, weight, centre, textPredictors, cuts };
}

// ---------------------------------------------------------------------------------------------
// Levels.

/** The query listing a text predictor's levels with their rows (n) and weight (w) in the used rows. */
export function levelsSql(plan: SumsPlan, column: string): string {
  const id = q(plan, column);
  const count = plan.dialect === "duckdb" ? "count(*)" : "count()";
  const w = weightSql(plan);
  return `SELECT ${id} AS level, ${count} AS n, ${w === null ? count : `sum(${w})`} AS w FROM ${sourceSql(plan.request.source, plan.dialect)} WHERE ${usedSql(plan)} GROUP BY ${id}`;
}

/** Compares texts by code point (not UTF-16 unit), the order UTF-8 bytes sort in. */
export function compareCodePoints(a: string, b: string): number {
  const x = Array.from(a);
  const y = Array.from(b);
  for (let i = 0; i < Math.min(x.length, y.length); i++) {
    const d = (x[i].codePointAt(0) as number) - (y[i].codePointAt(0) as number);
    if (d !== 0) return d;
  }
  return x.length - y.length;
}

/** A text predictor's levels (code-point order), each level's weight, and the reference level. */
export interface LevelList {
  levels: string[];
  /** Σw of each level's used rows, in the order of `levels`. */
  weights: number[];
  /** Most rows; ties: the first in code-point order. */
  reference: string;
}

/** Reads levelsSql's rows. */
export function readLevels(rows: readonly SqlRow[]): LevelList {
  const counted = rows.map((row) => ({ level: String(row.level), n: toNumber(row.n) as number, w: toNumber(row.w) ?? 0 }));
  counted.sort((a, b) => compareCodePoints(a.level, b.level));
  let reference = counted[0];
  for (const c of counted) if (c.n > reference.n) reference = c;
  return { levels: counted.map((c) => c.level), weights: counted.map((c) => c.w), reference: reference.level };
}

// ---------------------------------------------------------------------------------------------
// Second pass.

/** One term of the model: a number column or a level's indicator. */
export interface SumsTerm {
  name: string;
  column: string;
  /** The level for an indicator term, null for a number column. */
  level: string | null;
  /** An indicator's centre: the level's weighted share of the used rows (Σw of its rows / Σw). */
  share?: number;
}

/** What one second-pass answer cell is. */
type Slot =
  | { kind: "weight" }
  | { kind: "rows" }
  | { kind: "offset"; a: number }
  | { kind: "offsetY" }
  | { kind: "cross"; a: number; b: number }
  | { kind: "crossY"; a: number }
  | { kind: "yy" }
  | { kind: "largest"; a: number }
  | { kind: "largestY" };

export interface SecondPass {
  terms: SumsTerm[];
  /** Term centres and the target's, as inlined. */
  centre: { terms: number[]; target: number };
  queries: { sql: string; slots: Slot[] }[];
}

/** The terms, in order: predictors as given, a text column's levels (reference left out) in code-point order. */
export function termsOf(plan: SumsPlan, levels: ReadonlyMap<string, LevelList>, weight: number): SumsTerm[] {
  const terms: SumsTerm[] = [];
  for (const p of plan.predictors) {
    const found = levels.get(p.name);
    if (found === undefined) {
      terms.push({ name: p.name, column: p.name, level: null });
      continue;
    }
    found.levels.forEach((level, i) => {
      if (level !== found.reference) terms.push({ name: `${p.name}: ${level}`, column: p.name, level, share: found.weights[i] / weight });
    });
  }
  return terms;
}

/** The block label expression. */
function blockSql(plan: SumsPlan, cuts: readonly number[] | null): string {
  const fold = plan.request.fold;
  const c = plan.foldColumn;
  if (fold.kind === "hash") return foldHashSql(q(plan, c.name), fold.folds, plan.dialect);
  if (fold.kind === "time") {
    const t = timeSql(plan);
    const steps = (cuts as number[]).map((cut) =>
      plan.dialect === "duckdb" ? `(CASE WHEN ${t} >= ${exactLiteral(cut, "duckdb")} THEN 1 ELSE 0 END)` : `toInt64(${t} >= ${exactLiteral(cut, "clickhouse")})`,
    );
    return `(1 + ${steps.join(" + ")})`;
  }
  const id = q(plan, c.name);
  if (c.kind === "integer" || c.kind === "number") return id;
  return plan.dialect === "duckdb" ? `CAST(${id} AS VARCHAR)` : `toString(${id})`;
}

/**
 * The second pass: per block, the sums about the centre, dealt into queries of at most
 * `plan.maxAggregates` aggregates. DuckDB computes the centred values once in a subquery;
 * ClickHouse names them in a WITH clause (a subquery over a Distributed table would send every
 * row to the initiator; WITH aliases keep the aggregation on each shard).
 */
export function secondPassSql(plan: SumsPlan, facts: FirstPassFacts, terms: readonly SumsTerm[]): SecondPass {
  const d = plan.dialect;
  const p = terms.length;
  const termCentre = terms.map((t) => (t.level === null ? (facts.centre.get(t.column) as number) : (t.share ?? 0)));
  const targetCentre = facts.centre.get(plan.target.name) as number;
  const raw = (t: SumsTerm): string => {
    if (t.level === null) return numberSql(plan, plan.predictors.find((c) => c.name === t.column) as PlannedColumn);
    const id = q(plan, t.column);
    return d === "duckdb" ? `(CASE WHEN ${id} = ${quoteString(t.level, d)} THEN 1.0::DOUBLE ELSE 0.0::DOUBLE END)` : `toFloat64(${id} = ${quoteString(t.level, d)})`;
  };
  const centred = (x: string, c: number): string => (c === 0 ? x : `(${x} - ${exactLiteral(c, d)})`);
  const w = weightSql(plan);
  const slots: Slot[] = [{ kind: "weight" }, { kind: "rows" }, { kind: "offsetY" }, { kind: "yy" }, { kind: "largestY" }];
  for (let a = 0; a < p; a++) slots.push({ kind: "offset", a }, { kind: "crossY", a }, { kind: "largest", a });
  for (let a = 0; a < p; a++) for (let b = a; b < p; b++) slots.push({ kind: "cross", a, b });

  // Names the aggregates use: w (weight), y (centred target), t<a> (centred term), x<a> (term as read), yr (target as read).
  const names = {
    weight: "sw_w",
    y: "sw_y",
    yRaw: "sw_yr",
    term: (a: number) => `sw_t${a}`,
    termRaw: (a: number) => `sw_x${a}`,
  };
  // DuckDB with weights: the row's weight times its first factor is formed once per row in the
  // subquery (sw_wy, sw_wt<a>) and each aggregate multiplies it by the second factor. That is the
  // expression sum(sw_w * a * b) computed before, (w·a)·b, so the sums are the same bit for bit,
  // with one multiply per aggregate and row instead of two. Without weights no weight enters.
  const preWeighted = d === "duckdb" && w !== null;
  const weightedName = (factor: string): string => factor.replace(/^sw_/, "sw_w");
  const sum = (...factors: string[]): string => {
    if (preWeighted && factors.length > 0) return `sum(${[weightedName(factors[0]), ...factors.slice(1)].join(" * ")})`;
    const all = w === null ? factors : [names.weight, ...factors];
    return all.length === 0 ? (d === "duckdb" ? "count(*)" : "count()") : `sum(${all.join(" * ")})`;
  };
  const positive = w === null ? null : `${names.weight} > 0`;
  // DuckDB: CASE rather than FILTER (WHERE sw_w > 0): the same maximum (max skips the NULLs of
  // the other rows), but FILTER slices every column of the chunk once per aggregate, which cost
  // more than all the cross-products together (1,000,000 × 20 Parquet with weights: 2.2 s → 1.2 s).
  const largest = (x: string): string =>
    positive === null ? `max(abs(${x}))` : d === "duckdb" ? `max(CASE WHEN ${positive} THEN abs(${x}) END)` : conditional(plan, "max", `abs(${x})`, positive);
  const slotSql = (s: Slot): string => {
    switch (s.kind) {
      case "weight":
        return w === null ? (d === "duckdb" ? "count(*)" : "count()") : `sum(${names.weight})`;
      case "rows":
        return d === "duckdb" ? "count(*)" : "count()";
      case "offsetY":
        return sum(names.y);
      case "yy":
        return sum(names.y, names.y);
      case "largestY":
        return largest(names.yRaw);
      case "offset":
        return sum(names.term(s.a));
      case "crossY":
        return sum(names.term(s.a), names.y);
      case "largest":
        return largest(names.termRaw(s.a));
      case "cross":
        return sum(names.term(s.a), names.term(s.b));
    }
  };
  const cuts = facts.cuts;
  const block = blockSql(plan, cuts);
  const targetRaw = numberSql(plan, plan.target);
  const from = sourceSql(plan.request.source, d);
  const used = usedSql(plan);
  const queries: { sql: string; slots: Slot[] }[] = [];
  for (let start = 0; start < slots.length; start += plan.maxAggregates) {
    const chunk = slots.slice(start, start + plan.maxAggregates);
    // Only the values this chunk reads.
    const needTerm = new Set<number>();
    const needRaw = new Set<number>();
    let needY = false;
    let needYRaw = false;
    for (const s of chunk) {
      if (s.kind === "offset" || s.kind === "crossY") needTerm.add(s.a);
      if (s.kind === "cross") needTerm.add(s.a).add(s.b);
      if (s.kind === "largest") needRaw.add(s.a);
      if (s.kind === "offsetY" || s.kind === "yy" || s.kind === "crossY") needY = true;
      if (s.kind === "largestY") needYRaw = true;
    }
    const defs: [string, string][] = [];
    if (w !== null) defs.push([names.weight, w]);
    if (needY) defs.push([names.y, centred(targetRaw, targetCentre)]);
    if (needY && preWeighted) defs.push([weightedName(names.y), `${w} * ${centred(targetRaw, targetCentre)}`]);
    if (needYRaw) defs.push([names.yRaw, targetRaw]);
    for (const a of [...needTerm].sort((x, y) => x - y)) {
      defs.push([names.term(a), centred(raw(terms[a]), termCentre[a])]);
      if (preWeighted) defs.push([weightedName(names.term(a)), `${w} * ${centred(raw(terms[a]), termCentre[a])}`]);
    }
    for (const a of [...needRaw].sort((x, y) => x - y)) defs.push([names.termRaw(a), raw(terms[a])]);
    const aggregates = chunk.map((s, i) => `${slotSql(s)} AS s${i}`).join(",\n  ");
    let sql: string;
    if (d === "duckdb") {
      const inner = [`${block} AS sw_block`, ...defs.map(([name, expression]) => `${expression} AS ${name}`)].join(",\n    ");
      sql = `SELECT sw_block,\n  ${aggregates}\nFROM (\n  SELECT\n    ${inner}\n  FROM ${from}\n  WHERE ${used}\n) AS centred_rows\nGROUP BY sw_block`;
    } else {
      const withs = defs.map(([name, expression]) => `${expression} AS ${name}`);
      sql = `${withs.length > 0 ? `WITH\n  ${withs.join(",\n  ")}\n` : ""}SELECT ${block} AS sw_block,\n  ${aggregates}\nFROM ${from}\nWHERE ${used}\nGROUP BY sw_block`;
    }
    queries.push({ sql, slots: chunk });
  }
  return { terms: [...terms], centre: { terms: termCentre, target: targetCentre }, queries };
}

/** A block label as text: numbers as JavaScript writes them (3.0 → "3"), texts as they are. */
export function labelText(value: unknown): string {
  if (typeof value === "bigint") return value.toString();
  if (typeof value === "number") return String(value);
  if (typeof value === "string") return value;
  return String(value);
}

/** The words of SumsTable.blocking for the plan's fold rule. */
function blockingWords(plan: SumsPlan, cuts: readonly number[] | null): string {
  const fold = plan.request.fold;
  if (fold.kind === "column") return `column '${fold.column}'`;
  if (fold.kind === "hash") return `hash of '${fold.key}' into ${fold.folds}`;
  return `time blocks by '${fold.column}' (${fold.folds + 1} blocks, cut at ${(cuts as number[]).map((c) => String(c)).join(", ")})`;
}

/**
 * The second pass's answers (one row list per query, in order) as a SumsTable. Throws when the
 * queries disagree on the blocks (a source that changed between queries).
 */
export function assembleSums(
  plan: SumsPlan,
  facts: FirstPassFacts,
  second: SecondPass,
  answers: readonly (readonly SqlRow[])[],
  source?: string,
): SumsTable {
  const p = second.terms.length;
  const blocks = new Map<string, SumsBlock>();
  const fresh = (label: string): SumsBlock => ({
    label,
    weight: 0,
    rows: 0,
    mean: new Array<number>(p).fill(0),
    offset: new Array<number>(p).fill(0),
    meanY: 0,
    offsetY: 0,
    cross: new Array<number>(upperSize(p)).fill(0),
    crossY: new Array<number>(p).fill(0),
    yy: 0,
    largest: new Array<number>(p).fill(0),
    largestY: 0,
  });
  const offsetSums = new Map<string, { terms: number[]; target: number }>();
  answers.forEach((rows, qi) => {
    const query = second.queries[qi];
    if (qi > 0 && rows.length !== blocks.size) throw new Error(`second-pass query ${qi + 1} returned ${rows.length} blocks, the first ${blocks.size}: did the source change?`);
    for (const row of rows) {
      const label = labelText(row.sw_block);
      let block = blocks.get(label);
      if (block === undefined) {
        if (qi > 0) throw new Error(`second-pass query ${qi + 1} returned block '${label}' that the first did not`);
        block = fresh(label);
        blocks.set(label, block);
        offsetSums.set(label, { terms: new Array<number>(p).fill(0), target: 0 });
      }
      const sums = offsetSums.get(label) as { terms: number[]; target: number };
      query.slots.forEach((slot, i) => {
        const value = needNumber(row, `s${i}`);
        switch (slot.kind) {
          case "weight":
            block.weight = value;
            break;
          case "rows":
            block.rows = value;
            break;
          case "offsetY":
            sums.target = value;
            break;
          case "yy":
            block.yy = value;
            break;
          case "largestY":
            block.largestY = value;
            break;
          case "offset":
            sums.terms[slot.a] = value;
            break;
          case "crossY":
            block.crossY[slot.a] = value;
            break;
          case "largest":
            (block.largest as number[])[slot.a] = value;
            break;
          case "cross":
            block.cross[upperIndex(p, slot.a, slot.b)] = value;
            break;
        }
      });
    }
  });
  for (const [label, block] of blocks) {
    const sums = offsetSums.get(label) as { terms: number[]; target: number };
    const share = block.weight > 0 ? 1 / block.weight : 0;
    for (let a = 0; a < p; a++) {
      block.offset[a] = block.weight > 0 ? sums.terms[a] / block.weight : 0;
      block.mean[a] = second.centre.terms[a] + block.offset[a];
    }
    block.offsetY = sums.target * share;
    block.meanY = second.centre.target + block.offsetY;
  }
  const fold = plan.request.fold;
  const ordered = [...blocks.values()];
  // The order engine/sums.ts gives labels: numerically when every label is a number, else as text.
  const byText = (a: SumsBlock, b: SumsBlock): number => (a.label < b.label ? -1 : a.label > b.label ? 1 : 0);
  const numbers = fold.kind !== "column" || plan.foldColumn.kind === "integer" || plan.foldColumn.kind === "number";
  ordered.sort(numbers ? (a, b) => Number(a.label) - Number(b.label) || byText(a, b) : byText);
  return {
    format: SUMS_FORMAT,
    version: SUMS_VERSION,
    terms: second.terms.map((t) => t.name),
    target: plan.target.name,
    weights: plan.weights ? plan.weights.name : null,
    centre: { terms: [...second.centre.terms], target: second.centre.target },
    skippedRows: facts.totalRows - facts.usedRows,
    blocking: blockingWords(plan, facts.cuts),
    blocks: ordered,
    ...(source !== undefined ? { source } : {}),
    ...(fold.kind === "time" ? { timeOrdered: true } : {}),
  };
}

// ---------------------------------------------------------------------------------------------
// The whole run.

/** The steps of one run, as onQuery names them. */
export type SumsStep = "describe" | "firstPass" | "levels" | "secondPass";

export interface SumsRunOptions {
  /** Read before each query; a raised signal throws CancelledError. */
  signal?: CancelSignal;
  /** Sees each query's text before it runs (progress, --print-sql). */
  onQuery?: (step: SumsStep, sql: string) => void;
  /** SumsTable.source. */
  source?: string;
}

/** Everything up to the second pass: the plan, the first pass's facts and the second pass's queries. */
export interface PreparedSums {
  plan: SumsPlan;
  facts: FirstPassFacts;
  second: SecondPass;
}

/**
 * Runs the describe, first-pass and levels queries of a request through `run` and builds the
 * second pass's queries (not run): what --print-sql prints, and the first half of computeSums.
 */
export async function prepareSums(request: SumsRequest, run: RunQuery, options: SumsRunOptions = {}): Promise<PreparedSums> {
  const step = async (name: SumsStep, sql: string): Promise<SqlRow[]> => {
    throwIfCancelled(options.signal);
    options.onQuery?.(name, sql);
    return run(sql);
  };
  const types = readDescribe(await step("describe", describeSql(request.source, request.dialect)));
  const plan = planSums(request, types);
  const first = firstPassSql(plan);
  const firstRows = await step("firstPass", first.sql);
  const facts = readFirstPass(plan, first, firstRows[0] ?? {});
  const levels = new Map<string, LevelList>();
  for (const column of facts.textPredictors) levels.set(column, readLevels(await step("levels", levelsSql(plan, column))));
  const terms = termsOf(plan, levels, facts.weight);
  if (terms.length === 0) throw new InputError("no-predictors", "no predictor is left to fit: every text predictor has one level in the used rows");
  return { plan, facts, second: secondPassSql(plan, facts, terms) };
}

/**
 * Runs every query of a request through `run` (one at a time, in order) and returns the sums
 * table. Throws InputError for bad input (see planSums, readFirstPass), CancelledError when the
 * signal is raised between queries (a runner may also stop a running query).
 */
export async function computeSums(request: SumsRequest, run: RunQuery, options: SumsRunOptions = {}): Promise<SumsTable> {
  const { plan, facts, second } = await prepareSums(request, run, options);
  const answers: SqlRow[][] = [];
  for (const query of second.queries) {
    throwIfCancelled(options.signal);
    options.onQuery?.("secondPass", query.sql);
    answers.push(await run(query.sql));
  }
  return assembleSums(plan, facts, second, answers, options.source);
}
