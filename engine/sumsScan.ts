/**
 * The sums table (sumsTable.ts) of rows read in batches by the engine itself, for sources no SQL
 * engine reads where the sums are wanted (a Parquet file in the pane: DuckDB compiled to
 * WebAssembly has no Parquet reader without an extension fetched from the internet).
 *
 * The same plan as the SQL route, evaluated in TypeScript: `planSums`, `firstPassSql`,
 * `readFirstPass`, `readLevels`, `termsOf`, `secondPassSql` and `assembleSums` of sumsSql.ts
 * decide what is computed, check the input and word the messages; this file only computes the
 * answers each query would return, row by row, as DuckDB defines them (NULL skips a row and is
 * counted; text read as numbers by TRY_CAST's rules; the first pass's centre Σw·x/Σw; the
 * discrete quantiles of time blocks; the second pass's sums about the centre per block). So the
 * checks, the terms, the block labels and their order, and the table are those of the SQL route,
 * and the sums agree with DuckDB's on the same rows to rounding (the order of the additions
 * differs; test/engine/sumsScan.test.ts holds them to 1e-10 relative).
 *
 * Memory: one batch of the used columns at a time (a Parquet row group), plus per block
 * O(p²) sums, plus per text predictor its levels (refused past the level cap; distinct texts are
 * counted up to DISTINCT_COUNT_LIMIT). One exception, documented: time blocks keep the ordering
 * column of the used rows (8 bytes a row) to find the exact quantiles DuckDB's quantile_disc
 * returns. Two scans over the source (three batches' worth of work per row at most).
 *
 * Accuracy: each batch's sums are added up on their own and then added to the totals (partial
 * sums per batch), which keeps the rounding of long sums near that of a pairwise sum.
 */
import { InputError, throwIfCancelled, type CancelSignal } from "./errors";
import {
  assembleSums,
  compareCodePoints,
  firstPassSql,
  foldOfKey,
  planSums,
  readFirstPass,
  readLevels,
  secondPassSql,
  termsOf,
  type FirstPassFacts,
  type FoldRule,
  type LevelList,
  type SqlRow,
  type SumsPlan,
  type SumsTerm,
} from "./sumsSql";
import { upperIndex, upperSize, type SumsTable } from "./sumsTable";

/** One batch of rows: the values of each asked column, `rows` long (null or undefined: blank). */
export interface ColumnBatch {
  readonly rows: number;
  column(name: string): ArrayLike<unknown>;
}

/**
 * Rows read in batches. Values: numbers, bigints (64-bit integers), booleans, strings, null or
 * undefined (blank); dates and times as numbers of seconds since 1970 (as DuckDB's epoch()).
 */
export interface RowSource {
  /** Column name → type name in DuckDB's words (DOUBLE, BIGINT, VARCHAR, TIMESTAMP, …). */
  readonly types: ReadonlyMap<string, string>;
  /** The source's name in messages (a file name). */
  readonly name: string;
  /** Batches one scan reads, for progress (0 when not known). */
  readonly batches: number;
  /** Reads `columns` batch by batch, calling `visit` for each; an error thrown by `visit` stops the scan. */
  scan(columns: readonly string[], visit: (batch: ColumnBatch) => void): Promise<void>;
}

/** What to compute: the SQL route's request without its source and dialect. */
export interface ScanRequest {
  target: string;
  predictors: readonly string[];
  weights?: string | null;
  fold: FoldRule;
  levelCap?: number;
}

export interface ScanOptions {
  signal?: CancelSignal;
  /** After each batch: `done` of `total` batches of both scans (total 0 when not known). */
  onProgress?: (done: number, total: number, step: "first" | "second") => void;
  /** SumsTable.source. */
  source?: string;
}

/** Distinct texts of a text predictor counted at most (past the level cap, only "too many" matters). */
export const DISTINCT_COUNT_LIMIT = 100000;

/** A blank value. */
function blank(value: unknown): boolean {
  return value === null || value === undefined;
}

const NUMBER_TEXT = /^[+-]?(\d+\.?\d*|\.\d+)([eE][+-]?\d+)?$/;

/**
 * Text read as a double the way DuckDB's TRY_CAST(… AS DOUBLE) reads its common forms:
 * surrounding spaces ignored, decimal or exponent notation, inf / infinity / nan in any case;
 * anything else (including the empty text) is NULL.
 */
export function textToNumber(text: string): number | null {
  const t = text.trim();
  if (NUMBER_TEXT.test(t)) return Number(t);
  const word = t.toLowerCase();
  if (word === "inf" || word === "infinity" || word === "+inf" || word === "+infinity") return Infinity;
  if (word === "-inf" || word === "-infinity") return -Infinity;
  if (word === "nan" || word === "+nan" || word === "-nan") return NaN;
  return null;
}

/** A value as a double, as CAST(… AS DOUBLE) (TRY_CAST for text) gives it; null for blank or unreadable text. */
export function valueToNumber(value: unknown): number | null {
  if (value === null || value === undefined) return null;
  if (typeof value === "number") return value;
  if (typeof value === "bigint") return Number(value); // correctly rounded, as DuckDB's cast
  if (typeof value === "boolean") return value ? 1 : 0;
  if (typeof value === "string") return textToNumber(value);
  if (value instanceof Date) return value.getTime() / 1000;
  return null;
}

/** A time as DuckDB writes it when cast to text (DATE: 2024-01-31; TIMESTAMP: 2024-01-31 06:00:00). */
function timeText(seconds: number, type: string): string {
  const iso = new Date(seconds * 1000).toISOString();
  if (/^DATE$/i.test(type.trim())) return iso.slice(0, 10);
  return iso.slice(0, 19).replace("T", " ") + (iso.slice(20, 23) === "000" ? "" : `.${iso.slice(20, 23)}`);
}

/**
 * The index DuckDB's quantile_disc picks among n sorted values for the fraction written as the
 * decimal `text`: max(1, ⌈n·q⌉) − 1, with q the decimal exactly (DuckDB reads the literal as a
 * DECIMAL and computes the index in integers). Checked against DuckDB in the tests.
 */
export function discreteQuantileIndex(n: number, text: string): number {
  const match = /^(\d*)\.?(\d*)$/.exec(text);
  if (!match) throw new RangeError(`a quantile fraction must be written as a plain decimal, got ${text}`);
  const digits = BigInt((match[1] + match[2]).replace(/^0+(?=\d)/, "") || "0");
  const scale = 10n ** BigInt(match[2].length);
  const product = BigInt(n) * digits;
  const ceiling = (product + scale - 1n) / scale;
  return Math.max(1, Number(ceiling)) - 1;
}

/** Per-block running sums of the second pass. */
interface BlockSums {
  weight: number;
  rows: number;
  offset: Float64Array;
  offsetY: number;
  cross: Float64Array;
  crossY: Float64Array;
  yy: number;
  largest: Float64Array;
  largestY: number;
}

function freshBlock(p: number): BlockSums {
  return {
    weight: 0,
    rows: 0,
    offset: new Float64Array(p),
    offsetY: 0,
    cross: new Float64Array(upperSize(p)),
    crossY: new Float64Array(p),
    yy: 0,
    largest: new Float64Array(p),
    largestY: 0,
  };
}

function addInto(total: BlockSums, part: BlockSums): void {
  total.weight += part.weight;
  total.rows += part.rows;
  total.offsetY += part.offsetY;
  total.yy += part.yy;
  total.largestY = Math.max(total.largestY, part.largestY);
  for (let a = 0; a < part.offset.length; a++) {
    total.offset[a] += part.offset[a];
    total.crossY[a] += part.crossY[a];
    total.largest[a] = Math.max(total.largest[a], part.largest[a]);
  }
  for (let t = 0; t < part.cross.length; t++) total.cross[t] += part.cross[t];
}

/** A growable list of doubles (the ordering column of time blocks). */
class DoubleList {
  private data = new Float64Array(1024);
  length = 0;
  push(value: number): void {
    if (this.length === this.data.length) {
      const grown = new Float64Array(this.data.length * 2);
      grown.set(this.data);
      this.data = grown;
    }
    this.data[this.length++] = value;
  }
  sorted(): Float64Array {
    return this.data.subarray(0, this.length).sort();
  }
}

/** Whether a row of a batch is used: no blank in any used column. */
function usedRowTest(plan: SumsPlan, batch: ColumnBatch): (i: number) => boolean {
  const columns = plan.used.map((name) => batch.column(name));
  return (i) => {
    for (const values of columns) if (blank(values[i])) return false;
    return true;
  };
}

/**
 * The sums table of `source` for `request`, by two scans (see the file comment). Throws the SQL
 * route's InputErrors (planSums, readFirstPass), CancelledError between batches when the signal
 * is raised, and whatever the source's reader throws.
 */
export async function sumsOfScan(request: ScanRequest, source: RowSource, options: ScanOptions = {}): Promise<SumsTable> {
  const plan = planSums(
    {
      source: { kind: "parquet", path: source.name },
      dialect: "duckdb",
      target: request.target,
      predictors: request.predictors,
      weights: request.weights ?? null,
      fold: request.fold,
      ...(request.levelCap !== undefined ? { levelCap: request.levelCap } : {}),
    },
    source.types,
  );
  const total = source.batches > 0 ? 2 * source.batches : 0;
  let done = 0;
  const step = (which: "first" | "second"): void => {
    throwIfCancelled(options.signal);
    done++;
    options.onProgress?.(done, total, which);
  };
  const facts = await firstScan(plan, source, () => step("first"), options.signal);
  const levels = new Map<string, LevelList>();
  for (const [name, rows] of facts.levelRows) levels.set(name, readLevels(rows));
  const terms = termsOf(plan, levels, facts.facts.weight);
  if (terms.length === 0) throw new InputError("no-predictors", "no predictor is left to fit: every text predictor has one level in the used rows");
  const second = secondPassSql(plan, facts.facts, terms);
  const blocks = await secondScan(plan, facts.facts, terms, second.centre, source, () => step("second"), options.signal);
  // The answers each second-pass query would return: one row per block, s<i> per slot.
  const answers = second.queries.map((query) =>
    [...blocks].map(([label, sums]) => {
      const row: SqlRow = { sw_block: label };
      query.slots.forEach((slot, i) => {
        let value: number;
        switch (slot.kind) {
          case "weight":
            value = sums.weight;
            break;
          case "rows":
            value = sums.rows;
            break;
          case "offsetY":
            value = sums.offsetY;
            break;
          case "yy":
            value = sums.yy;
            break;
          case "largestY":
            value = sums.largestY;
            break;
          case "offset":
            value = sums.offset[slot.a];
            break;
          case "crossY":
            value = sums.crossY[slot.a];
            break;
          case "largest":
            value = sums.largest[slot.a];
            break;
          case "cross":
            value = sums.cross[upperIndex(terms.length, slot.a, slot.b)];
            break;
        }
        row[`s${i}`] = value;
      });
      return row;
    }),
  );
  return assembleSums(plan, facts.facts, second, answers, options.source);
}

/** The first scan: the first pass's answer row (read by readFirstPass) and each text predictor's level rows. */
async function firstScan(plan: SumsPlan, source: RowSource, afterBatch: () => void, signal: CancelSignal | undefined): Promise<{ facts: FirstPassFacts; levelRows: Map<string, SqlRow[]> }> {
  const pass = firstPassSql(plan);
  const weights = plan.weights;
  let totalRows = 0;
  let usedRows = 0;
  let weight = 0;
  let negative = 0;
  const numberColumns = [plan.target, ...(weights ? [weights] : []), ...plan.predictors];
  const weightedSum = new Map<string, number>(numberColumns.map((c) => [c.name, 0]));
  const textColumns = numberColumns.filter((c) => c.kind === "text");
  const textCheck = new Map(textColumns.map((c) => [c.name, { present: 0, numbers: 0, sample: null as string | null }]));
  const textPredictors = plan.predictors.filter((c) => c.kind === "text");
  const levelCounts = new Map(textPredictors.map((c) => [c.name, new Map<string, { n: number; w: number }>()]));
  const fold = plan.request.fold;
  const times = fold.kind === "time" && fold.cuts === undefined ? new DoubleList() : null;
  await source.scan(plan.used, (batch) => {
    throwIfCancelled(signal);
    const n = batch.rows;
    totalRows += n;
    const used = usedRowTest(plan, batch);
    const w = weights ? batch.column(weights.name) : null;
    const rowWeight = new Float64Array(n);
    const isUsed = new Uint8Array(n);
    let batchWeight = 0;
    for (let i = 0; i < n; i++) {
      if (!used(i)) continue;
      isUsed[i] = 1;
      usedRows++;
      if (w) {
        const value = valueToNumber(w[i]);
        rowWeight[i] = value ?? NaN;
        if (value !== null) {
          batchWeight += value;
          if (value < 0) negative++;
        }
      } else {
        rowWeight[i] = 1;
        batchWeight += 1;
      }
    }
    weight += batchWeight;
    for (const c of numberColumns) {
      const values = batch.column(c.name);
      let sum = 0;
      for (let i = 0; i < n; i++) {
        if (!isUsed[i]) continue;
        const x = valueToNumber(values[i]);
        const wi = rowWeight[i];
        if (x === null || Number.isNaN(wi)) continue; // NULL in the product: skipped by sum()
        sum += w ? wi * x : x;
      }
      weightedSum.set(c.name, (weightedSum.get(c.name) as number) + sum);
    }
    for (const c of textColumns) {
      const values = batch.column(c.name);
      const check = textCheck.get(c.name) as { present: number; numbers: number; sample: string | null };
      for (let i = 0; i < n; i++) {
        const v = values[i];
        if (blank(v)) continue;
        check.present++;
        if (valueToNumber(v) !== null) check.numbers++;
        else {
          const text = String(v);
          if (check.sample === null || compareCodePoints(text, check.sample) < 0) check.sample = text;
        }
      }
    }
    for (const c of textPredictors) {
      const values = batch.column(c.name);
      const counts = levelCounts.get(c.name) as Map<string, { n: number; w: number }>;
      for (let i = 0; i < n; i++) {
        if (!isUsed[i]) continue;
        const level = String(values[i]);
        let entry = counts.get(level);
        if (!entry) {
          if (counts.size >= DISTINCT_COUNT_LIMIT) continue;
          counts.set(level, (entry = { n: 0, w: 0 }));
        }
        entry.n++;
        if (!Number.isNaN(rowWeight[i])) entry.w += rowWeight[i];
      }
    }
    if (times) {
      const values = batch.column(plan.foldColumn.name);
      for (let i = 0; i < n; i++) if (isUsed[i]) times.push(valueToNumber(values[i]) as number);
    }
    afterBatch();
  });
  // The first pass's answer row, by the aliases readFirstPass reads.
  const row: SqlRow = { [pass.total]: totalRows, [pass.used]: usedRows, [pass.weight]: usedRows === 0 ? null : weight };
  if (pass.negativeWeights !== null) row[pass.negativeWeights] = negative;
  for (const [name, alias] of pass.weightedSum) row[alias] = usedRows === 0 ? null : weightedSum.get(name);
  for (const [name, aliases] of pass.textCheck) {
    const check = textCheck.get(name) as { present: number; numbers: number; sample: string | null };
    row[aliases.present] = check.present;
    row[aliases.numbers] = check.numbers;
    row[aliases.sample] = check.sample;
  }
  for (const [name, alias] of pass.distinct) row[alias] = (levelCounts.get(name) as Map<string, unknown>).size;
  if (pass.cuts !== null && times && fold.kind === "time") {
    const sorted = times.sorted();
    row[pass.cuts] =
      sorted.length === 0 ? null : Array.from({ length: fold.folds }, (_, j) => sorted[discreteQuantileIndex(sorted.length, String((j + 1) / (fold.folds + 1)))]);
  }
  const facts = readFirstPass(plan, pass, row);
  const levelRows = new Map<string, SqlRow[]>();
  for (const name of facts.textPredictors) {
    const counts = levelCounts.get(name) as Map<string, { n: number; w: number }>;
    levelRows.set(
      name,
      [...counts].map(([level, c]) => ({ level, n: c.n, w: c.w })),
    );
  }
  return { facts, levelRows };
}

/** The block label of a used row of a batch, as the SQL route's block expression and labelText give it. */
function labeller(plan: SumsPlan, facts: FirstPassFacts, batch: ColumnBatch, types: ReadonlyMap<string, string>): (i: number) => string {
  const fold = plan.request.fold;
  const c = plan.foldColumn;
  const values = batch.column(c.name);
  if (fold.kind === "hash") {
    return (i) => {
      const v = values[i];
      const key = typeof v === "bigint" ? v : (valueToNumber(v) as number);
      return String(foldOfKey(key, fold.folds) + 1);
    };
  }
  if (fold.kind === "time") {
    const cuts = facts.cuts as number[];
    return (i) => {
      const t = valueToNumber(values[i]) as number;
      let block = 1;
      for (const cut of cuts) if (t >= cut) block++;
      return String(block);
    };
  }
  return (i) => {
    const v = values[i];
    if (c.kind === "integer") return typeof v === "bigint" ? v.toString() : String(valueToNumber(v));
    if (c.kind === "number") return String(valueToNumber(v));
    if (c.kind === "boolean") return String(v === true || v === 1 || v === 1n);
    if (c.kind === "time") return timeText(valueToNumber(v) as number, types.get(c.name) ?? "TIMESTAMP");
    return String(v);
  };
}

/** The second scan: every block's sums about the centre, in the order the blocks first appear. */
async function secondScan(
  plan: SumsPlan,
  facts: FirstPassFacts,
  terms: readonly SumsTerm[],
  centre: { terms: number[]; target: number },
  source: RowSource,
  afterBatch: () => void,
  signal: CancelSignal | undefined,
): Promise<Map<string, BlockSums>> {
  const p = terms.length;
  const totals = new Map<string, BlockSums>();
  const weights = plan.weights;
  const t = new Float64Array(p);
  const raw = new Float64Array(p);
  await source.scan(plan.used, (batch) => {
    throwIfCancelled(signal);
    const n = batch.rows;
    const used = usedRowTest(plan, batch);
    const label = labeller(plan, facts, batch, source.types);
    const w = weights ? batch.column(weights.name) : null;
    const y = batch.column(plan.target.name);
    const columns = terms.map((term) => batch.column(term.column));
    const parts = new Map<string, BlockSums>();
    for (let i = 0; i < n; i++) {
      if (!used(i)) continue;
      const key = label(i);
      let s = parts.get(key);
      if (!s) parts.set(key, (s = freshBlock(p)));
      const wi = w ? (valueToNumber(w[i]) as number) : 1;
      const yRaw = valueToNumber(y[i]) as number;
      const yc = yRaw - centre.target;
      for (let a = 0; a < p; a++) {
        const term = terms[a];
        const v = columns[a][i];
        raw[a] = term.level === null ? (valueToNumber(v) as number) : v === term.level ? 1 : 0;
        t[a] = raw[a] - centre.terms[a];
      }
      s.rows++;
      const positive = wi > 0;
      if (w) {
        s.weight += wi;
        s.offsetY += wi * yc;
        s.yy += wi * yc * yc;
        if (positive) s.largestY = Math.max(s.largestY, Math.abs(yRaw));
        let k = 0;
        for (let a = 0; a < p; a++) {
          const wa = wi * t[a];
          s.offset[a] += wa;
          s.crossY[a] += wa * yc;
          if (positive) s.largest[a] = Math.max(s.largest[a], Math.abs(raw[a]));
          for (let b = a; b < p; b++) s.cross[k++] += wa * t[b];
        }
      } else {
        s.weight += 1;
        s.offsetY += yc;
        s.yy += yc * yc;
        s.largestY = Math.max(s.largestY, Math.abs(yRaw));
        let k = 0;
        for (let a = 0; a < p; a++) {
          const ta = t[a];
          s.offset[a] += ta;
          s.crossY[a] += ta * yc;
          s.largest[a] = Math.max(s.largest[a], Math.abs(raw[a]));
          for (let b = a; b < p; b++) s.cross[k++] += ta * t[b];
        }
      }
    }
    for (const [key, part] of parts) {
      let total = totals.get(key);
      if (!total) totals.set(key, (total = freshBlock(p)));
      addInto(total, part);
    }
    afterBatch();
  });
  return totals;
}
