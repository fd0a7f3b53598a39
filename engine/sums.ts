/**
 * Reading, checking and writing sums tables (sumsTable.ts), and computing one from rows in memory.
 *
 * - `checkSums(value)`: validates a parsed sums table and returns a checked copy (−0 stored as 0).
 * - `sumsToJSON(table)` / `parseSumsJSON(text)`: the JSON form, exact both ways (JSON numbers
 *   are written in their shortest round-trip form).
 * - `sumsToLong(table)` / `sumsFromLong(rows)`: the long form below, exact both ways when the
 *   values travel as numbers (as numeric text they are exact when written in round-trip form).
 * - `sumsOfRows(...)`: the in-memory reference every query engine's sums are tested against.
 *
 * ## The long form (version 1)
 *
 * What a worksheet range or a database query holds: four columns, a header row
 * `block | term_a | term_b | value` (case, spaces and underscores in the header are ignored, so
 * `Block | Term A | TERM_B | Value` reads too), then one row per number, in any order. Blank
 * rows are ignored. `value` holds a number (or numeric text such as "1.5e3"); it is empty (blank
 * or NULL) on the rows that carry words in term_b. Names in term_a and term_b are the table's
 * term names or its target's name; words starting with `#` are keywords of ours, so no term,
 * target or block may start with `#`, and no block is called `*`.
 *
 * Global rows, block `*`:
 *
 *   block | term_a      | term_b            | value
 *   *     | #format     | shrinkwise-sums   | 1          the format's name and version (required)
 *   *     | #target     | <target name>     | c_y        the target and its centre (required)
 *   *     | #term       | <term name>       | 1 … p      one row per term: its position (required)
 *   *     | #centre     | <term name>       | c_a        one row per term: its centre (required)
 *   *     | #weights    | <weights column>  | (empty)    absent: every row weighs 1
 *   *     | #skipped    | (empty)           | count      rows left out for a blank cell (absent: 0)
 *   *     | #blocking   | <words>           | (empty)    how rows were dealt into blocks (absent: empty)
 *   *     | #source     | <words>           | (empty)    where the sums were computed (optional)
 *   *     | #time-order | (empty)           | 0 or 1     1: the blocks are in time order (optional, absent: 0)
 *   *     | #block      | <label>           | 1 … B      one row per block: its position (optional;
 *                                                        absent: blocks sorted by label, numerically
 *                                                        when every label is a number, else as text)
 *
 * Rows of block b (its fold label as text, or a number, which is read as its shortest text):
 *
 *   b     | #weight     | (empty)           | Σw
 *   b     | #rows       | (empty)           | number of rows in the block (rows of weight 0 included)
 *   b     | #offset     | <name>            | Σw(v − c)/Σw, for every term and the target (required)
 *   b     | #mean       | <name>            | Σw·v/Σw (optional: read as centre + offset when absent)
 *   b     | #largest    | <name>            | largest |v| over rows of positive weight (optional:
 *                                            for every term and the target, or for none)
 *   b     | <name a>    | <name b>          | Σw(v_a − c_a)(v_b − c_b): one row per pair of the
 *                                            terms and the target, itself included (the target's
 *                                            own pair is Σw(y − c_y)²). Either order; a pair given
 *                                            both ways must carry the same value.
 *
 * A query builds it in two passes: the first finds the centre (the weighted means of the whole
 * source), the second sums per block about it. Any centre near the data is correct (the fit
 * reads each block's offset from it); the weighted mean keeps the most digits.
 *
 * Precision: see sumsTable.ts. Values are held in the data's units, so products must be within
 * the range of doubles: a column whose squares pass 1.8e308 or fall below 2.2e-308 (values beyond
 * about 1e154 or below 1e-154) is refused with a message to record it in other units.
 */
import { InputError } from "./errors";
import { ColumnMatrix } from "./matrix";
import { blockSumsOf, stableCentre } from "./problem";
import { powerOfTwo, scaleByPowerOfTwo, SMALLEST_NORMAL, unitExponent } from "./scale";
import { SumsBlock, SumsTable, SUMS_FORMAT, SUMS_VERSION, upperIndex, upperSize } from "./sumsTable";
import { checkPredictors, checkRowVector, checkWeights } from "./validate";

/** The long form's header (sumsToLong writes it; sumsFromLong reads any case and spacing). */
export const LONG_HEADER = ["block", "term_a", "term_b", "value"] as const;

/** The block name of the long form's global rows. */
export const GLOBAL_BLOCK = "*";

/**
 * A diagonal entry may fall below Σw·offset² (the block's own variance below 0) by rounding only:
 * this share of the larger of the two. A query engine summing millions of rows in some order
 * loses up to about n·2^-53 of a sum; 1e-9 allows 1e7 rows and still catches sums that come from
 * different rows (a real inconsistency is of the size of the variance itself).
 */
export const VARIANCE_ROUNDING = 1e-9;

/** Checked copy of a sums table, or an InputError saying what to fix. Cost O(blocks·p²). */
export function checkSums(value: unknown): SumsTable {
  if (!isRecord(value)) {
    throw new InputError("sums", `this is not a Shrinkwise sums table: expected an object with format '${SUMS_FORMAT}'`);
  }
  if (value.format !== SUMS_FORMAT) {
    throw new InputError("sums", `this is not a Shrinkwise sums table: its format is ${describe(value.format)}, expected '${SUMS_FORMAT}'`);
  }
  if (value.version !== SUMS_VERSION) {
    throw new InputError(
      "sums",
      `this sums table is version ${describe(value.version)} and this Shrinkwise reads version ${SUMS_VERSION}: compute the sums again with this version of Shrinkwise`,
    );
  }
  if (!Array.isArray(value.terms) || value.terms.length === 0) {
    throw new InputError("sums", "the sums table lists no terms: it needs at least one predictor");
  }
  const terms: string[] = [];
  const seen = new Set<string>();
  for (let j = 0; j < value.terms.length; j++) {
    const name = value.terms[j];
    if (typeof name !== "string" || name.trim() === "") throw new InputError("sums", `term ${j + 1} of the sums table has no name: give every term a name`);
    checkName(name, "term");
    if (seen.has(name)) throw new InputError("sums", `term '${name}' appears twice in the sums table: each term must be listed once`);
    seen.add(name);
    terms.push(name);
  }
  const p = terms.length;
  if (typeof value.target !== "string" || value.target.trim() === "") throw new InputError("sums", "the sums table names no target: give the target's name");
  const target = value.target;
  checkName(target, "target");
  if (seen.has(target)) throw new InputError("sums", `'${target}' is both the target and a term of the sums table: a column can't predict itself`);
  if (value.weights !== null && value.weights !== undefined && typeof value.weights !== "string") {
    throw new InputError("sums", `the sums table's weights must be a column name or null; got ${describe(value.weights)}`);
  }
  const weights = typeof value.weights === "string" && value.weights !== "" ? value.weights : null;
  const centre = value.centre;
  if (!isRecord(centre)) throw new InputError("sums", "the sums table has no centre: it needs the centre of every term and of the target");
  const centreTerms = numbers(centre.terms, p, "the centre", terms);
  const centreTarget = finite(centre.target, `the centre of the target '${target}'`);
  const skippedRows = value.skippedRows ?? 0;
  if (typeof skippedRows !== "number" || !Number.isInteger(skippedRows) || skippedRows < 0) {
    throw new InputError("sums", `the sums table's skipped rows must be a whole number of 0 or more; got ${describe(skippedRows)}`);
  }
  const blocking = value.blocking ?? "";
  if (typeof blocking !== "string") throw new InputError("sums", `the sums table's blocking must be words; got ${describe(blocking)}`);
  if (value.source !== undefined && value.source !== null && typeof value.source !== "string") {
    throw new InputError("sums", `the sums table's source must be words; got ${describe(value.source)}`);
  }
  if (value.timeOrdered !== undefined && value.timeOrdered !== null && typeof value.timeOrdered !== "boolean") {
    throw new InputError("sums", `the sums table's time order must be true or false; got ${describe(value.timeOrdered)}`);
  }
  if (!Array.isArray(value.blocks)) throw new InputError("sums", "the sums table has no blocks: it needs one block of sums per fold label");
  // One block, or a block of weight 0, is a valid table (least squares from sums takes it); the
  // cross-validated fit asks for 2 or more blocks of positive weight (fitSums.ts).
  if (value.blocks.length < 1) throw new InputError("sums", "the sums table has no blocks: it needs one block of sums per fold label");
  const labels = new Set<string>();
  const blocks = value.blocks.map((raw: unknown, b: number) => checkBlock(raw, b, p, terms, target, labels));
  if (!blocks.some((block) => block.weight > 0)) {
    throw new InputError("sums", `every block of the sums table has weight 0: at least one needs rows of positive weight; check the weights`);
  }
  const table: SumsTable = {
    format: SUMS_FORMAT,
    version: SUMS_VERSION,
    terms,
    target,
    weights,
    centre: { terms: centreTerms, target: centreTarget },
    skippedRows,
    blocking,
    blocks,
  };
  if (typeof value.source === "string") table.source = value.source;
  if (value.timeOrdered === true) table.timeOrdered = true;
  return table;
}

function checkBlock(raw: unknown, b: number, p: number, terms: string[], target: string, labels: Set<string>): SumsBlock {
  if (!isRecord(raw)) throw new InputError("sums", `block ${b + 1} of the sums table is not a block of sums`);
  const label = raw.label;
  if (typeof label !== "string" || label.trim() === "") throw new InputError("sums", `block ${b + 1} of the sums table has no label: give every block its fold label`);
  if (label === GLOBAL_BLOCK || label.startsWith("#")) {
    throw new InputError("sums", `block label '${label}' is kept for the long form's own rows: relabel that block`);
  }
  if (labels.has(label)) throw new InputError("sums", `block '${label}' appears twice in the sums table: each fold label must have one block (add their sums together)`);
  labels.add(label);
  const where = `block '${label}'`;
  const weight = finite(raw.weight, `${where}'s weight`);
  if (!(weight >= 0)) {
    throw new InputError("sums", `${where} has weight ${weight}: a block's weight is a sum of weights, 0 or more; check the weights`);
  }
  const rows = raw.rows;
  if (typeof rows !== "number" || !Number.isInteger(rows) || rows < 1) {
    throw new InputError("sums", `${where} has ${describe(rows)} rows: every block needs at least 1 row (a whole number)`);
  }
  const offset = numbers(raw.offset, p, `${where}'s offsets`, terms);
  const mean = numbers(raw.mean, p, `${where}'s means`, terms);
  const offsetY = finite(raw.offsetY, `${where}'s offset of the target '${target}'`);
  const meanY = finite(raw.meanY, `${where}'s mean of the target '${target}'`);
  if (!Array.isArray(raw.cross) || raw.cross.length !== upperSize(p)) {
    throw new InputError(
      "sums",
      `${where} has ${Array.isArray(raw.cross) ? raw.cross.length : "no"} cross-products but ${p} terms need ${upperSize(p)} (the upper triangle, row by row)`,
    );
  }
  const cross: number[] = new Array<number>(upperSize(p));
  for (let a = 0; a < p; a++) {
    for (let c = a; c < p; c++) {
      const t = upperIndex(p, a, c);
      cross[t] = finite(raw.cross[t], `${where}'s cross-product of '${terms[a]}' and '${terms[c]}'`);
    }
  }
  const crossY = numbers(raw.crossY, p, `${where}'s cross-products with the target`, terms);
  const yy = finite(raw.yy, `${where}'s sum of squares of the target '${target}'`);
  for (let a = 0; a < p; a++) checkSpread(cross[upperIndex(p, a, a)], weight, offset[a], terms[a], label);
  checkSpread(yy, weight, offsetY, target, label);
  const block: SumsBlock = { label, weight, rows, mean, offset, meanY, offsetY, cross, crossY, yy };
  if (raw.largest !== undefined && raw.largest !== null) {
    const largest = numbers(raw.largest, p, `${where}'s largest values`, terms);
    largest.forEach((v, j) => {
      if (v < 0) throw new InputError("sums", `${where}'s largest value of '${terms[j]}' is negative (${v}): it is a largest magnitude, 0 or more`);
    });
    block.largest = largest;
  }
  if (raw.largestY !== undefined && raw.largestY !== null) {
    const largestY = finite(raw.largestY, `${where}'s largest value of the target '${target}'`);
    if (largestY < 0) throw new InputError("sums", `${where}'s largest value of the target '${target}' is negative (${largestY}): it is a largest magnitude, 0 or more`);
    block.largestY = largestY;
  }
  return block;
}

/**
 * The block's own spread of a term: Σw(v − c)² − Σw·offset² = Σw(v − mean)² ≥ 0, up to rounding
 * (VARIANCE_ROUNDING). Otherwise the sums can't come from one set of rows.
 */
function checkSpread(square: number, weight: number, offset: number, name: string, label: string): void {
  const shift = weight * offset * offset;
  if (square >= 0 && square - shift >= -VARIANCE_ROUNDING * Math.max(square, shift)) return;
  throw new InputError(
    "sums",
    `block '${label}': the spread of '${name}' is negative (its sum of squares about the centre, ${square}, is below weight × offset², ${shift}): these sums can't come from one set of rows; compute them again`,
  );
}

function checkName(name: string, what: string): void {
  if (name.startsWith("#") || name === GLOBAL_BLOCK) {
    throw new InputError("sums", `${what} '${name}' starts with '#' or is '*', which the long form keeps for its own rows: rename the column`);
  }
}

function isRecord(value: unknown): value is Record<string, unknown> {
  return typeof value === "object" && value !== null && !Array.isArray(value);
}

function describe(value: unknown): string {
  if (typeof value === "string") return `'${value}'`;
  if (value === undefined) return "missing";
  return String(value);
}

/** A finite number, −0 stored as 0. */
function finite(value: unknown, what: string): number {
  if (typeof value !== "number" || !Number.isFinite(value)) {
    throw new InputError("sums", `${what} is ${value === undefined ? "missing" : `not a finite number (${describe(value)})`}: the sums table needs a number there`);
  }
  return value === 0 ? 0 : value;
}

function numbers(value: unknown, p: number, what: string, terms: string[]): number[] {
  if (!Array.isArray(value) || value.length !== p) {
    throw new InputError("sums", `${what}: ${Array.isArray(value) ? `${value.length} values` : "missing"}, but the table has ${p} term${p === 1 ? "" : "s"}: give one value per term`);
  }
  return value.map((v: unknown, j: number) => finite(v, `${what.replace(/s$/, "")} of '${terms[j]}'`));
}

// ---------------------------------------------------------------------------------------------
// JSON form
// ---------------------------------------------------------------------------------------------

/** The JSON form (checked first), one line per block after the header fields for readable diffs. */
export function sumsToJSON(table: SumsTable): string {
  const checked = checkSums(table);
  const { blocks, ...head } = checked;
  const lines = blocks.map((block) => `    ${JSON.stringify(block)}`);
  const headText = JSON.stringify(head, null, 2);
  return `${headText.slice(0, -2)},\n  "blocks": [\n${lines.join(",\n")}\n  ]\n}\n`;
}

/** A checked table from the JSON form's text. */
export function parseSumsJSON(text: string): SumsTable {
  let value: unknown;
  try {
    value = JSON.parse(text);
  } catch (error) {
    throw new InputError("sums", `the sums file is not valid JSON (${(error as Error).message}): save the sums again, or check the file is a Shrinkwise sums table`);
  }
  return checkSums(value);
}

// ---------------------------------------------------------------------------------------------
// Long form (documented in the module comment)
// ---------------------------------------------------------------------------------------------

/** A cell of the long form: text, a number, or blank (null, undefined, ""). BigInt labels from a query read as their digits. */
export type LongCell = string | number | bigint | boolean | null | undefined;

/** The long form of a (checked) table: the header row, then the global rows, then each block's. */
export function sumsToLong(table: SumsTable): (string | number)[][] {
  const t = checkSums(table);
  const out: (string | number)[][] = [[...LONG_HEADER]];
  const g = (key: string, word: string, value: number | ""): void => {
    out.push([GLOBAL_BLOCK, key, word, value]);
  };
  g("#format", t.format, t.version);
  g("#target", t.target, t.centre.target);
  t.terms.forEach((name, j) => g("#term", name, j + 1));
  t.terms.forEach((name, j) => g("#centre", name, t.centre.terms[j]));
  if (t.weights !== null) g("#weights", t.weights, "");
  g("#skipped", "", t.skippedRows);
  g("#blocking", t.blocking, "");
  if (t.source !== undefined) g("#source", t.source, "");
  if (t.timeOrdered) g("#time-order", "", 1);
  t.blocks.forEach((block, b) => g("#block", block.label, b + 1));
  const names = [...t.terms, t.target];
  const p = t.terms.length;
  for (const block of t.blocks) {
    const row = (key: string, word: string, value: number): void => {
      out.push([block.label, key, word, value]);
    };
    row("#weight", "", block.weight);
    row("#rows", "", block.rows);
    names.forEach((name, j) => row("#mean", name, j < p ? block.mean[j] : block.meanY));
    names.forEach((name, j) => row("#offset", name, j < p ? block.offset[j] : block.offsetY));
    if (block.largest && block.largestY !== undefined && block.largestY !== null) {
      const largest = block.largest;
      const largestY = block.largestY;
      names.forEach((name, j) => row("#largest", name, j < p ? largest[j] : largestY));
    }
    for (let a = 0; a <= p; a++) {
      for (let c = a; c <= p; c++) {
        const value = c < p ? block.cross[upperIndex(p, a, c)] : a < p ? block.crossY[a] : block.yy;
        row(names[a], names[c], value);
      }
    }
  }
  return out;
}

/** Cell text: trimmed; blank for null, undefined and whitespace. */
function cellText(cell: LongCell): string {
  if (cell === null || cell === undefined) return "";
  if (typeof cell === "number") return Number.isFinite(cell) ? String(cell) : "";
  return String(cell).trim();
}

function isBlank(cell: LongCell): boolean {
  return cellText(cell) === "" && !(typeof cell === "number" && !Number.isFinite(cell));
}

/**
 * A checked table from the long form (see the module comment): the header row first (blank rows
 * before it are skipped), then rows in any order. Cost O(rows).
 */
export function sumsFromLong(rows: ArrayLike<ArrayLike<LongCell>>): SumsTable {
  let start = 0;
  while (start < rows.length && Array.from(rows[start] ?? []).every(isBlank)) start++;
  if (start >= rows.length) throw new InputError("sums", "the sums table is empty: it needs the header block | term_a | term_b | value and the rows of sums");
  const header = Array.from(rows[start]).map((cell) => cellText(cell).toLowerCase().replace(/[\s_]+/g, ""));
  const expected = LONG_HEADER.map((h) => h.replace(/_/g, ""));
  const column = expected.map((h) => header.indexOf(h));
  if (column.some((c) => c < 0)) {
    throw new InputError(
      "sums",
      `the sums table's first row must be the header block | term_a | term_b | value; found ${Array.from(rows[start]).map(cellText).join(" | ") || "nothing"}`,
    );
  }
  const global = new Map<string, Map<string, { value: LongCell; row: number }>>();
  const perBlock = new Map<string, Map<string, Map<string, { value: LongCell; row: number }>>>();
  const blockOrder: string[] = [];
  let allNumeric = true;
  const put = (into: Map<string, Map<string, { value: LongCell; row: number }>>, key: string, word: string, value: LongCell, row: number, where: string): void => {
    let inner = into.get(key);
    if (!inner) into.set(key, (inner = new Map()));
    const had = inner.get(word);
    if (had) {
      throw new InputError("sums", `sums table rows ${had.row} and ${row} both give ${where} ${key}${word ? ` | ${word}` : ""}: keep one of them`);
    }
    inner.set(word, { value, row });
  };
  for (let r = start + 1; r < rows.length; r++) {
    const cells = Array.from(rows[r] ?? []);
    if (cells.every(isBlank)) continue;
    const rowNumber = r + 1;
    const blockCell = cells[column[0]];
    const block = cellText(blockCell);
    const key = cellText(cells[column[1]]);
    const word = cellText(cells[column[2]]);
    const value = cells[column[3]];
    if (block === "") throw new InputError("sums", `sums table row ${rowNumber} has no block: give the fold label (or * for the table's own rows)`);
    if (key === "") throw new InputError("sums", `sums table row ${rowNumber} has nothing in term_a: give a term's name or a # keyword`);
    if (block === GLOBAL_BLOCK) {
      if (!key.startsWith("#")) throw new InputError("sums", `sums table row ${rowNumber} (block *) has '${key}' in term_a: the * rows hold # keywords such as #term and #centre`);
      put(global, key, word, value, rowNumber, "block *");
      continue;
    }
    let inner = perBlock.get(block);
    if (!inner) {
      perBlock.set(block, (inner = new Map()));
      blockOrder.push(block);
      if (typeof blockCell !== "number" && typeof blockCell !== "bigint" && !/^[+-]?(\d+\.?\d*|\.\d+)([eE][+-]?\d+)?$/.test(block)) allNumeric = false;
    }
    put(inner, key, word, value, rowNumber, `block '${block}'`);
  }
  const one = (key: string): { word: string; value: LongCell; row: number } | null => {
    const inner = global.get(key);
    if (!inner) return null;
    if (inner.size > 1) throw new InputError("sums", `the sums table has ${inner.size} ${key} rows in block *: keep one`);
    const [[word, entry]] = Array.from(inner.entries());
    return { word, ...entry };
  };
  const format = one("#format");
  if (!format) throw new InputError("sums", `the sums table has no * | #format row: it must say '${SUMS_FORMAT}' and its version (this is not a Shrinkwise sums table, or its first rows are missing)`);
  const version = numberIn(format.value, format.row, "the version");
  const targetRow = one("#target");
  if (!targetRow) throw new InputError("sums", "the sums table has no * | #target row: it names the target and gives its centre");
  const termRows = global.get("#term");
  if (!termRows || termRows.size === 0) throw new InputError("sums", "the sums table has no * | #term rows: list each term with its position 1, 2, …");
  const p = termRows.size;
  const terms: string[] = new Array<string>(p);
  for (const [name, entry] of termRows) {
    const position = numberIn(entry.value, entry.row, `the position of term '${name}'`);
    if (!Number.isInteger(position) || position < 1 || position > p) {
      throw new InputError("sums", `sums table row ${entry.row} gives term '${name}' position ${position}: positions run 1 to ${p}, one per term`);
    }
    if (terms[position - 1] !== undefined) throw new InputError("sums", `terms '${terms[position - 1]}' and '${name}' both have position ${position}: give each term its own position 1 to ${p}`);
    terms[position - 1] = name;
  }
  const centreRows = global.get("#centre") ?? new Map();
  const centre = terms.map((name) => {
    const entry = centreRows.get(name);
    if (!entry) throw new InputError("sums", `the sums table has no * | #centre | ${name} row: give the centre of every term`);
    return numberIn(entry.value, entry.row, `the centre of '${name}'`);
  });
  for (const name of centreRows.keys()) if (!termRows.has(name)) throw new InputError("sums", `the sums table gives a centre for '${name}', which is not one of its terms: list it with * | #term or remove the row`);
  const target = targetRow.word;
  const weightsRow = one("#weights");
  const skippedRow = one("#skipped");
  const blockingRow = one("#blocking");
  const sourceRow = one("#source");
  const timeRow = one("#time-order");
  const timeOrdered = timeRow ? numberIn(timeRow.value, timeRow.row, "the time order (0 or 1)") : 0;
  if (timeOrdered !== 0 && timeOrdered !== 1) throw new InputError("sums", `sums table row ${timeRow?.row}: #time-order is ${timeOrdered}; use 1 (blocks in time order) or 0`);
  const known = new Set(["#format", "#target", "#term", "#centre", "#weights", "#skipped", "#blocking", "#source", "#time-order", "#block"]);
  for (const key of global.keys()) {
    if (!known.has(key)) throw new InputError("sums", `the sums table has an unknown keyword ${key} in block *: the long form knows ${Array.from(known).join(", ")}`);
  }
  // Block order: the #block rows, or the labels sorted.
  let labels: string[];
  const listed = global.get("#block");
  if (listed && listed.size > 0) {
    labels = new Array<string>(listed.size);
    for (const [label, entry] of listed) {
      const position = numberIn(entry.value, entry.row, `the position of block '${label}'`);
      if (!Number.isInteger(position) || position < 1 || position > listed.size) {
        throw new InputError("sums", `sums table row ${entry.row} gives block '${label}' position ${position}: positions run 1 to ${listed.size}, one per block`);
      }
      if (labels[position - 1] !== undefined) throw new InputError("sums", `blocks '${labels[position - 1]}' and '${label}' both have position ${position}: give each block its own position`);
      labels[position - 1] = label;
      if (!perBlock.has(label)) {
        throw new InputError("sums", `block '${label}' is listed (* | #block) but the sums table has no rows for it: the table is missing a block; bring back all of the query's rows`);
      }
    }
    for (const label of blockOrder) {
      if (!listed.has(label)) throw new InputError("sums", `the sums table has rows for block '${label}', which its * | #block rows don't list: list it or remove its rows`);
    }
  } else {
    labels = blockOrder.slice();
    if (allNumeric) labels.sort((a, b) => Number(a) - Number(b) || (a < b ? -1 : a > b ? 1 : 0));
    else labels.sort((a, b) => (a < b ? -1 : a > b ? 1 : 0));
  }
  const names = [...terms, target];
  const blocks = labels.map((label) => readBlock(label, perBlock.get(label) as Map<string, Map<string, { value: LongCell; row: number }>>, names, centre, numberIn(targetRow.value, targetRow.row, `the centre of the target '${target}'`)));
  const table: Record<string, unknown> = {
    format: format.word,
    version,
    terms,
    target,
    weights: weightsRow && weightsRow.word !== "" ? weightsRow.word : null,
    centre: { terms: centre, target: numberIn(targetRow.value, targetRow.row, `the centre of the target '${target}'`) },
    skippedRows: skippedRow ? numberIn(skippedRow.value, skippedRow.row, "the skipped rows") : 0,
    blocking: blockingRow ? blockingRow.word : "",
    blocks,
  };
  if (sourceRow) table.source = sourceRow.word;
  if (timeOrdered === 1) table.timeOrdered = true;
  return checkSums(table);
}

function readBlock(
  label: string,
  rows: Map<string, Map<string, { value: LongCell; row: number }>>,
  names: string[],
  centre: number[],
  centreY: number,
): Record<string, unknown> {
  const p = names.length - 1;
  const where = `block '${label}'`;
  const scalar = (key: string): number => {
    const entry = rows.get(key)?.get("");
    if (!entry) throw new InputError("sums", `${where} has no ${key} row: give ${label} | ${key} | | value`);
    return numberIn(entry.value, entry.row, `${where}'s ${key}`);
  };
  const perName = (key: string, required: boolean): number[] | null => {
    const inner = rows.get(key);
    if (!inner) {
      if (required) throw new InputError("sums", `${where} has no ${key} rows: give ${label} | ${key} | <name> | value for every term and the target`);
      return null;
    }
    for (const name of inner.keys()) {
      if (!names.includes(name)) throw new InputError("sums", `${where} has a ${key} row for '${name}', which is neither a term nor the target: remove it or list the term`);
    }
    return names.map((name) => {
      const entry = inner.get(name);
      if (!entry) throw new InputError("sums", `${where} has no ${key} row for '${name}': give ${label} | ${key} | ${name} | value`);
      return numberIn(entry.value, entry.row, `${where}'s ${key} of '${name}'`);
    });
  };
  const weight = scalar("#weight");
  const rowCount = scalar("#rows");
  const offset = perName("#offset", true) as number[];
  const mean = perName("#mean", false) ?? offset.map((o, j) => (j < p ? centre[j] : centreY) + o);
  const largest = perName("#largest", false);
  for (const key of rows.keys()) {
    if (key.startsWith("#") && !["#weight", "#rows", "#offset", "#mean", "#largest"].includes(key)) {
      throw new InputError("sums", `${where} has an unknown keyword ${key}: a block's rows are #weight, #rows, #offset, #mean, #largest and the cross-products`);
    }
    if (!key.startsWith("#") && !names.includes(key)) {
      throw new InputError("sums", `${where} has a cross-product row for '${key}', which is neither a term nor the target: remove it or list the term`);
    }
  }
  // Cross-products of the terms and the target, (a, c) or (c, a).
  const all = new Array<number>(upperSize(p + 1));
  for (let a = 0; a <= p; a++) {
    for (let c = a; c <= p; c++) {
      const forward = rows.get(names[a])?.get(names[c]);
      const backward = a === c ? undefined : rows.get(names[c])?.get(names[a]);
      if (!forward && !backward) {
        throw new InputError("sums", `${where} has no cross-product of '${names[a]}' and '${names[c]}': give ${label} | ${names[a]} | ${names[c]} | value`);
      }
      const first = forward ?? (backward as { value: LongCell; row: number });
      const value = numberIn(first.value, first.row, `${where}'s cross-product of '${names[a]}' and '${names[c]}'`);
      if (forward && backward) {
        const other = numberIn(backward.value, backward.row, `${where}'s cross-product of '${names[c]}' and '${names[a]}'`);
        if (other !== value) {
          throw new InputError(
            "sums",
            `${where}'s cross-product of '${names[a]}' and '${names[c]}' is ${value} (row ${forward.row}) but ${other} the other way round (row ${backward.row}): the sums must be symmetric; keep one row`,
          );
        }
      }
      all[upperIndex(p + 1, a, c)] = value;
    }
  }
  const cross = new Array<number>(upperSize(p));
  for (let a = 0; a < p; a++) for (let c = a; c < p; c++) cross[upperIndex(p, a, c)] = all[upperIndex(p + 1, a, c)];
  const block: Record<string, unknown> = {
    label,
    weight,
    rows: rowCount,
    mean: mean.slice(0, p),
    offset: offset.slice(0, p),
    meanY: mean[p],
    offsetY: offset[p],
    cross,
    crossY: Array.from({ length: p }, (_, a) => all[upperIndex(p + 1, a, p)]),
    yy: all[upperIndex(p + 1, p, p)],
  };
  if (largest) {
    block.largest = largest.slice(0, p);
    block.largestY = largest[p];
  }
  return block;
}

/** A number from a cell (a number, or numeric text such as " 1.5e3 "), or an InputError naming the row. */
function numberIn(cell: LongCell, row: number, what: string): number {
  let value: number = NaN;
  if (typeof cell === "number") value = cell;
  else if (typeof cell === "bigint") value = Number(cell);
  else if (typeof cell === "string") {
    const text = cell.trim();
    if (/^[+-]?(\d+\.?\d*|\.\d+)([eE][+-]?\d+)?$/.test(text)) value = Number(text);
  }
  if (!Number.isFinite(value)) {
    const shown = cell === null || cell === undefined || cellText(cell) === "" ? "blank" : `'${cellText(cell)}'`;
    throw new InputError("sums", `sums table row ${row}: ${what} is ${shown}, not a number: give a number in the value column`);
  }
  return value === 0 ? 0 : value;
}

// ---------------------------------------------------------------------------------------------
// In-memory sums
// ---------------------------------------------------------------------------------------------

/** Words about the sums that the rows alone don't give (all optional). */
export interface SumsDetails {
  /** Name of the weights column (default "weights" when weights are given). */
  weightsName?: string;
  /** How the rows were dealt into blocks, in words (default "fold labels"). */
  blocking?: string;
  /** Rows left out before these (blank cells), for the record. Default 0. */
  skippedRows?: number;
  /** Where the sums were computed (default "shrinkwise in memory"). */
  source?: string;
  /** Rows are in time order: blocks keep the order of their first rows, and the table is marked time-ordered. Default false (blocks sorted by label). */
  timeOrdered?: boolean;
}

/**
 * The sums table of rows in memory, one block per distinct label (labels compared as text).
 * Two passes (common practice for stable variances): the weighted means of the whole data first
 * (problem.ts stableCentre: an anchor nearest the mean plus a corrected offset, rounded to one
 * double: the centre), then every block's sums about that centre in one pass (problem.ts
 * blockSumsOf). Values are scaled by powers of two near 1 first (scale.ts; exact), so only the
 * results need to be within the range of doubles. Blocks sort by label (numerically when every
 * label is a number, else as text), or keep time order. Cost O(n·p²).
 */
export function sumsOfRows(
  predictors: ColumnMatrix | ArrayLike<ArrayLike<number>>,
  target: ArrayLike<number>,
  weights: ArrayLike<number> | null,
  labels: ArrayLike<string | number>,
  names: readonly string[],
  targetName: string,
  details: SumsDetails = {},
): SumsTable {
  const x = checkPredictors(predictors, names);
  const n = x.rows;
  const p = x.columns;
  if (names.length !== p) throw new InputError("shape", `predictors has ${p} columns but ${names.length} names were given: give one name per column`);
  const y = checkRowVector(target, n, "target");
  const w = weights ? checkWeights(weights, n) : null;
  if (labels.length !== n) throw new InputError("shape", `predictors has ${n} rows but fold labels has ${labels.length}`);
  // Blocks: one per label text.
  const index = new Map<string, number>();
  const texts: string[] = [];
  const numeric: boolean[] = [];
  const assigned = new Int32Array(n);
  for (let i = 0; i < n; i++) {
    const raw = labels[i];
    const text = raw === null || raw === undefined || (typeof raw === "number" && !Number.isFinite(raw)) ? "" : String(raw).trim();
    if (text === "") throw new InputError("fold-labels", `fold labels row ${i + 1} is blank: give every row a fold label`);
    let k = index.get(text);
    if (k === undefined) {
      k = texts.length;
      index.set(text, k);
      texts.push(text);
      numeric.push(typeof raw === "number");
    }
    assigned[i] = k;
  }
  const order = texts.map((_, k) => k);
  if (!details.timeOrdered) {
    const allNumbers = numeric.every(Boolean);
    order.sort((a, b) => (allNumbers ? Number(texts[a]) - Number(texts[b]) : 0) || (texts[a] < texts[b] ? -1 : texts[a] > texts[b] ? 1 : 0));
  }
  const sizes = new Int32Array(texts.length);
  for (let i = 0; i < n; i++) sizes[assigned[i]]++;
  const rowsOf = Array.from(sizes, (size) => new Int32Array(size));
  const fill = new Int32Array(texts.length);
  for (let i = 0; i < n; i++) rowsOf[assigned[i]][fill[assigned[i]]++] = i;
  // Working copy scaled by powers of two (rows of weight 0 stored as 0: they add nothing).
  const positive = (i: number): boolean => !w || w[i] > 0;
  let heaviest = 0;
  if (w) for (let i = 0; i < n; i++) heaviest = Math.max(heaviest, w[i]);
  const kw = w ? unitExponent(heaviest) : 0;
  const workW = w ? Float64Array.from(w, (v) => v * powerOfTwo(kw)) : null;
  const exponentOf = (values: ArrayLike<number>, offset: number): number => {
    let largest = 0;
    for (let i = 0; i < n; i++) if (positive(i)) largest = Math.max(largest, Math.abs(values[offset + i]));
    return unitExponent(largest);
  };
  const kx = new Int32Array(p);
  const workX = new Float64Array(n * p);
  for (let j = 0; j < p; j++) {
    kx[j] = exponentOf(x.data, j * n);
    const factor = powerOfTwo(kx[j]);
    for (let i = 0; i < n; i++) workX[j * n + i] = positive(i) ? x.data[j * n + i] * factor : 0;
  }
  const ky = exponentOf(y, 0);
  const workY = Float64Array.from(y, (v, i) => (positive(i) ? v * powerOfTwo(ky) : 0));
  // Pass 1: the centre.
  let total = 0;
  for (let i = 0; i < n; i++) total += workW ? workW[i] : 1;
  if (!(total > 0)) throw new InputError("weights", "every weight is 0: give some rows a positive weight");
  const omega = Float64Array.from({ length: n }, (_, i) => (workW ? workW[i] : 1) / total);
  const centreOf = (values: Float64Array): number => {
    const { anchor, offset } = stableCentre(values, omega, n);
    return anchor + offset;
  };
  const shiftX = new Float64Array(p);
  for (let j = 0; j < p; j++) shiftX[j] = centreOf(workX.subarray(j * n, (j + 1) * n));
  const shiftY = centreOf(workY);
  // Pass 2: every block's sums about it.
  const sums = blockSumsOf({ rows: n, columns: p, data: workX }, workY, workW, order.map((k) => rowsOf[k]), shiftX, shiftY);
  const back = (value: number, exponent: number, what: string): number => {
    const out = scaleByPowerOfTwo(value, exponent);
    if (value !== 0 && !(Number.isFinite(out) && Math.abs(out) >= SMALLEST_NORMAL)) {
      const size = Number.isFinite(out) ? "too small (its squares fall below 2.2e-308)" : "too large (its squares pass 1.8e308)";
      throw new InputError("out-of-range", `${what} is ${size} to be held in a sums table: record it in other units (e.g. multiply or divide by a power of ten)`);
    }
    return out;
  };
  const label = (j: number): string => (j < p ? `'${names[j]}'` : `the target '${targetName}'`);
  const blocks: SumsBlock[] = sums.map((s, b) => {
    const k = order[b];
    if (!(s.weight > 0)) {
      throw new InputError("folds", `fold label '${texts[k]}' has no rows with a positive weight: give some of its rows a weight above 0, or merge it into another group`);
    }
    const weight = back(s.weight, -kw, "the weights' total");
    const offset = Array.from(s.sumX, (v, j) => back(v / s.weight, -kx[j], label(j)));
    const offsetY = back(s.sumY / s.weight, -ky, label(p));
    const cross: number[] = new Array<number>(upperSize(p));
    for (let a = 0; a < p; a++) {
      for (let c = a; c < p; c++) cross[upperIndex(p, a, c)] = back(s.xx[a * p + c], -(kx[a] + kx[c] + kw), label(a));
    }
    const centreX = (j: number): number => scaleByPowerOfTwo(shiftX[j], -kx[j]);
    return {
      label: texts[k],
      weight,
      rows: rowsOf[k].length,
      mean: offset.map((o, j) => centreX(j) + o),
      offset,
      meanY: scaleByPowerOfTwo(shiftY, -ky) + offsetY,
      offsetY,
      cross,
      crossY: Array.from(s.xy, (v, j) => back(v, -(kx[j] + ky + kw), label(j))),
      yy: back(s.yy, -(2 * ky + kw), label(p)),
      largest: Array.from(s.largest, (v, j) => scaleByPowerOfTwo(v, -kx[j])),
      largestY: scaleByPowerOfTwo(s.largestY, -ky),
    };
  });
  const table: SumsTable = {
    format: SUMS_FORMAT,
    version: SUMS_VERSION,
    terms: names.slice(),
    target: targetName,
    weights: w ? (details.weightsName ?? "weights") : null,
    centre: { terms: Array.from(shiftX, (c, j) => scaleByPowerOfTwo(c, -kx[j])), target: scaleByPowerOfTwo(shiftY, -ky) },
    skippedRows: details.skippedRows ?? 0,
    blocking: details.blocking ?? "fold labels",
    blocks,
    source: details.source ?? "shrinkwise in memory",
  };
  if (details.timeOrdered) table.timeOrdered = true;
  return checkSums(table);
}
