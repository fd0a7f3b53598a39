/**
 * Worksheet ranges → encoded numeric data for the engine, and the same encoding for new rows.
 *
 * Training data (`buildDataset`):
 * 1. Header (setting `header` = yes / no forces it; with auto, the first rule that applies):
 *    a. predictors has one row: a row of names (texts that aren't numbers) is an error saying there
 *       are no data rows; otherwise no header;
 *    b. row 1 is all text and some column has a number or TRUE/FALSE below it: a header;
 *    c. row 1 is all text, not all numbers stored as text, and some column has a number stored as
 *       text below it: a header;
 *    d. predictors hold only text: a header when the target, as long as predictors, has a name on
 *       top and numbers below; or when the target is one row shorter and no text of row 1 appears
 *       again below it in its column (a note says so); otherwise no header;
 *    e. row 1 is all numbers (or numbers stored as text) and the target, as long as predictors, has
 *       a name on top and numbers below: a header named by those numbers (a note says so);
 *    f. row 1 looks like labels made of numbers — two or more whole numbers rising from left to
 *       right, while fewer than half of the complete rows below rise that way (years 2019, 2020,
 *       2021 over the data) — and the target doesn't sit one row above predictors with a name on
 *       top: an error asking for header=yes or header=no rather than a guess;
 *    g. otherwise no header. Without a header, columns are named x1, x2, …
 * 2. Target: one column. It may be as long as predictors (its first cell then sits beside the
 *    header: its text names the target; beside a header of numbers a number may name it too), as
 *    long as the data rows only, or — when predictors have no header — one longer with a text
 *    header of its own. One row shorter than predictors without a header is an error suggesting
 *    header=yes. Its values are numbers, or a yes/no outcome (two values: TRUE/FALSE, 0/1 or two
 *    labels; setting `outcome`, rules in engine/outcome.ts, decided over every data row): then the
 *    target sent to the engine is 1 for the event (setting `event`, or the default: TRUE, 1, or
 *    the rarer label, a tie noted) and 0 for the other class, over the rows used.
 * 3. Cells are classified (cells.ts; texts in Unicode NFC); zeros of columns named by
 *    `zero is missing` become blank.
 * 4. Each predictors column is read as numbers when at least half of its values look like numbers
 *    (numbers, TRUE/FALSE as 1/0, numbers stored as text in the convention of
 *    engine/numberText.ts, or texts written like numbers in another convention), as dates when at
 *    least half are dates written as text (an error: convert them to real dates), else as text
 *    (levels). In a number column, numbers stored as text are read as numbers and a note names
 *    the column; any other text is an error naming column, row and value (with a decimal-comma or
 *    date hint when it looks like one); in a text column a number is an error. The target and the
 *    weights column read numbers stored as text the same way (with a note); a fold column whose
 *    texts are all numbers stored as text labels folds by those numbers. The columns named by
 *    `fold column` and `weights column` are taken out of the predictors.
 * 5. Rows with a blank or error cell in the target or any used column are skipped and counted;
 *    rows blank everywhere are padding and not counted.
 * 6. Text columns become indicator columns `Column: level`, one per level except the reference
 *    level (the most frequent level in the rows used; ties: the first to appear).
 * 7. Every name a coefficient table would list (number columns, each level's `Column: level`,
 *    reference rows included) must differ from the others as term lookup compares names (NFC,
 *    case, spaces: textKey) and must not end in "(reference)"; a clash is an error naming the
 *    column to rename (a number column 'Region: North' beside a text column 'Region' with the level
 *    North would otherwise spill two rows SHRINK.APPLY can't tell apart).
 * Row numbers in messages count from the top of the selected range (a header row is row 1).
 *
 * New rows (`encodeNewRows`, `applyCoefficientTable`): the same columns, matched by header name
 * when new_rows has a header row, else by position; numbers stored as text are read as numbers;
 * blank rows give a blank result, a row with a blank or error cell gives a "missing" row (the
 * cell shows #N/A); a level not seen in training is an error naming it and its column.
 *
 * Cost: O(rows × columns) throughout.
 */
import {
  Cell,
  classifyCell,
  describeCell,
  isBlankGrid,
  isNumeric,
  numberOfCell,
  storedAsTextHint,
  textKey,
  toGrid,
} from "./cells";
import { rowOf, type ColumnMatrix } from "../engine/matrix";
import { numberFromText, readNumberText } from "../engine/numberText";
import { readOutcome, type OutcomeKind, type OutcomeValue } from "../engine/outcome";
import { DataError, SettingError } from "./errors";
import type { AnyFitRequest, PlainFitOptions } from "./runner";
import type { Settings } from "./settings";

/** How one source column turns into terms (0 or 1 number column, or indicators). */
export interface ColumnCode {
  /** The column's name (header text, or x1, x2, …). */
  name: string;
  kind: "number" | "text";
  /** Position in the training predictors block (new rows without a header are matched by it). */
  position: number;
  /** Indicator levels (display text), in term order. */
  levels: string[];
  /** textKey(level) → index into `levels`, or -1 for the reference level. */
  levelIndex: Map<string, number>;
  /** The reference level (display text), or null when unknown. */
  reference: string | null;
  /**
   * A level not in `levelIndex` may stand for the reference level (a coefficient table without
   * a reference row): at most one such level is accepted.
   */
  inferReference: boolean;
  /** Zeros in this column are blank cells (setting `zero is missing`). */
  zeroIsMissing: boolean;
}

/** Everything needed to encode rows the way the training rows were encoded. */
export interface RowEncoder {
  /** Columns producing terms, in term order. */
  columns: ColumnCode[];
  /** Term names, in order: a number column's name, or `Column: level` indicators. */
  terms: string[];
  /** Width of the training predictors block (null for a coefficient table). */
  width: number | null;
  /** Names of every column of the training block, for "its header has …" messages. */
  sourceNames: string[];
  /** What the columns came from, for messages: "predictors" or "coefficient_table". */
  source: string;
}

export interface Dataset {
  targetName: string;
  /** Term names (engine `names`). */
  names: string[];
  /** One encoded row per used row (made from `matrix` when first read). */
  readonly predictors: number[][];
  /** The same encoded values as one column-major matrix (rows used × terms): what large requests send. */
  matrix: ColumnMatrix;
  target: number[];
  weights: number[] | null;
  foldLabels: (number | string)[] | null;
  rowsUsed: number;
  /** Rows with some data but a blank or error cell in a used column. */
  rowsSkipped: number;
  hasHeader: boolean;
  encoder: RowEncoder;
  /** Text columns with their reference level. */
  referenceLevels: { column: string; level: string }[];
  /** Plain-language notes worth showing (skipped rows, one-level columns, zero rows). */
  notes: string[];
  /** Names of the fold and weights columns, when used. */
  foldColumn: string | null;
  weightsColumn: string | null;
  /** "two-class": `target` holds 1 for the event, 0 for the other class (see `classes`). */
  outcome: OutcomeKind;
  /** The two classes of a yes/no target; null for a number target. */
  classes: TargetClasses | null;
}

/**
 * Grids of at least this many encoded values (rows used × terms) send the packed request
 * (runner.ts PackedFitRequest). Below it both forms cost microseconds, and the rows form keeps a
 * small request readable where tests and diagnostics show it.
 */
export const PACKED_MIN_VALUES = 4096;

/** The fit request for this dataset: packed (the matrix) for large grids, else rows. */
export function datasetRequest(dataset: Dataset, options: PlainFitOptions): AnyFitRequest {
  if (dataset.matrix.rows * dataset.matrix.columns >= PACKED_MIN_VALUES) return { predictors: dataset.matrix, target: dataset.target, options };
  return { predictors: dataset.predictors, target: dataset.target, options };
}

/** A matrix's rows as arrays. */
function rowsOf(matrix: ColumnMatrix): number[][] {
  const rows = new Array<number[]>(matrix.rows);
  for (let i = 0; i < matrix.rows; i++) rows[i] = rowOf(matrix, i);
  return rows;
}

/** The settings the data layer reads (`outcome` and `event` default to auto and the default event). */
export type DataSettings = Pick<Settings, "header" | "zeroIsMissing" | "foldColumn" | "weightsColumn"> & Partial<Pick<Settings, "outcome" | "event">>;

/** The two classes of a yes/no target, over the rows used. */
export interface TargetClasses {
  /** Labels as engine/outcome.ts writes them (TRUE, 1, fail). */
  event: string;
  other: string;
  eventCount: number;
  otherCount: number;
  /** The values as the cells hold them (a boolean, a number or a text), for predicted classes. */
  eventValue: OutcomeValue;
  otherValue: OutcomeValue;
}

/** Names that mean the intercept everywhere (reserved: no predictor column may use them). */
const INTERCEPT_KEYS = new Set(["(intercept)", "intercept"]);
/**
 * A coefficient table may also call its intercept "constant" (a common word for it in hand-made
 * tables). It is read so only when the table has no intercept row, so a predictor genuinely
 * named "constant" still round-trips through SHRINK.COEFS (whose intercept row is "intercept").
 */
const CONSTANT_KEY = "constant";

/** Most levels a text column may have (each level but one becomes a term). */
export const MAX_LEVELS = 1000;

/** At most `limit` names, quoted, with "…" when cut. */
export function listNames(names: readonly string[], limit = 12): string {
  const shown = names.slice(0, limit).map((n) => `'${n}'`);
  return names.length > limit ? `${shown.join(", ")}, … (${names.length} in all)` : shown.join(", ");
}

function classifyGrid(grid: unknown[][]): Cell[][] {
  return grid.map((row) => row.map(classifyCell));
}

const BLANK_CELL: Cell = { kind: "blank" };

/**
 * True when raw value `v` of column `j` is a plain finite number that reads as itself: not a zero
 * that `zeros` (CellGrid.zerosBlankAt) makes blank. Such a cell is classified as
 * { kind: "number", value: v } by cells.ts, so its Cell need not be made.
 */
function isPlain(v: unknown, zeros: Uint8Array | null, j: number): v is number {
  return typeof v === "number" && v - v === 0 && (v !== 0 || zeros === null || zeros[j] === 0);
}

/**
 * A training range's cells, classified on demand (cells.ts policy). A plain finite number, the
 * bulk of a data range, is read straight from the raw value by `numberAt`, with no Cell object:
 * building one object per cell of a 50,000 × 40 range cost more than the fit itself, mostly in
 * garbage collection. Other cells (text, booleans, errors, wrapped values) are classified once
 * and kept. `blankZeros` makes the zeros of some columns blank (setting `zero is missing`)
 * without touching the raw values.
 */
class CellGrid {
  readonly rows: number;
  readonly width: number;
  private readonly kept: (Cell[] | undefined)[];
  private zeroColumns: ReadonlySet<number> = new Set();
  private zeroMask: Uint8Array | null = null;
  private zeroFrom = Infinity;

  constructor(private readonly raw: unknown[][]) {
    this.rows = raw.length;
    this.width = raw.length > 0 ? raw[0].length : 0;
    this.kept = new Array<Cell[] | undefined>(this.rows);
  }

  /** From row `from` on, a number 0 in one of `columns` reads as a blank cell. */
  blankZeros(columns: ReadonlySet<number>, from: number): void {
    this.zeroColumns = columns;
    this.zeroFrom = from;
    this.zeroMask = null;
    if (columns.size === 0) return;
    this.zeroMask = new Uint8Array(this.width);
    for (const j of columns) this.zeroMask[j] = 1;
  }

  /**
   * The value of a cell that is a plain finite number (exactly what numberOfCell(at(i, j)) gives
   * for it), or NaN for any other cell: the caller then reads `at(i, j)`.
   */
  numberAt(i: number, j: number): number {
    const v = this.raw[i][j];
    return isPlain(v, this.zerosBlankAt(i), j) ? v : NaN;
  }

  /** Row i's raw values, for loops over every cell that test `isPlain` inline. */
  rawRow(i: number): readonly unknown[] {
    return this.raw[i];
  }

  /** Row i's columns whose zeros read as blank (1), or null when none do. */
  zerosBlankAt(i: number): Uint8Array | null {
    return i >= this.zeroFrom ? this.zeroMask : null;
  }

  /** The number a cell stands for (numberOfCell), or null. */
  numberOf(i: number, j: number): number | null {
    const v = this.numberAt(i, j);
    return v === v ? v : numberOfCell(this.at(i, j));
  }

  /** The classified cell. */
  at(i: number, j: number): Cell {
    const v = this.raw[i][j];
    let cell: Cell;
    if (typeof v === "number") {
      cell = classifyCell(v);
    } else {
      let row = this.kept[i];
      if (!row) row = this.kept[i] = new Array<Cell>(this.width);
      cell = row[j] ?? (row[j] = classifyCell(v));
    }
    if (cell.kind === "number" && cell.value === 0 && i >= this.zeroFrom && this.zeroColumns.has(j)) return BLANK_CELL;
    return cell;
  }

  /** Row i's cells. */
  row(i: number): Cell[] {
    const out = new Array<Cell>(this.width);
    for (let j = 0; j < this.width; j++) out[j] = this.at(i, j);
    return out;
  }
}

function findColumn(names: readonly string[], wanted: string): number {
  const key = textKey(wanted);
  return names.findIndex((name) => textKey(name) === key);
}

function zeroHint(column: string): string {
  return ` (if that cell looks empty, Excel may have passed it as 0: add 'zero is missing=${column}' to settings)`;
}

/** A text cell that is not a number (not even one stored as text): a header name or a level. */
function isNameText(c: Cell): boolean {
  return c.kind === "text" && numberFromText(c.value) === null;
}

/** A cell that counts as a number: a number, TRUE/FALSE, or a number stored as text. */
function isNumberLike(c: Cell): boolean {
  return numberOfCell(c) !== null;
}

/** How a row of cells is shown in messages: 2019, 2020, 2021 (at most 6, then "…"). */
function showRow(row: readonly Cell[]): string {
  const shown = row.slice(0, 6).map((c) => (c.kind === "text" ? `'${c.value}'` : describeCell(c)));
  return row.length > 6 ? `${shown.join(", ")}, …` : shown.join(", ");
}

/** Strictly increasing whole numbers, at least two. */
function risingWholeNumbers(row: readonly Cell[]): boolean {
  if (row.length < 2) return false;
  let previous = -Infinity;
  for (const c of row) {
    if (c.kind === "boolean") return false;
    const v = numberOfCell(c);
    if (v === null || !Number.isInteger(v) || !(v > previous)) return false;
    previous = v;
  }
  return true;
}

/**
 * Row 1 of predictors looks like column labels made of numbers (years 2019, 2020, 2021): two or
 * more whole numbers rising from left to right, while fewer than half of the complete rows below
 * rise that way (so columns such as year built | year sold, which rise in every row, are data).
 */
function looksLikeNumberLabels(cells: CellGrid): boolean {
  if (!risingWholeNumbers(cells.row(0))) return false;
  let complete = 0;
  let rising = 0;
  for (let i = 1; i < cells.rows; i++) {
    const row = cells.row(i);
    if (!row.every(isNumberLike)) continue;
    complete++;
    if (risingWholeNumbers(row)) rising++;
  }
  return complete === 0 || 2 * rising < complete;
}

interface HeaderDecision {
  header: boolean;
  /** What was decided and why, for SHRINK.CHOICE's notes (auto mode, when it wasn't obvious). */
  note: string | null;
}

/**
 * Header decision for predictors (the rules are listed in the file comment). Throws DataError
 * when there are no data rows, or when row 1 is a row of numbers that looks like labels and
 * nothing else settles it.
 */
function detectHeader(cells: CellGrid, targetCells: CellGrid, mode: Settings["header"]): HeaderDecision {
  const no: HeaderDecision = { header: false, note: null };
  const yes: HeaderDecision = { header: true, note: null };
  if (mode === "no") return no;
  if (mode === "yes") {
    if (cells.rows < 2) throw new DataError("settings say header=yes but predictors has only one row: select the header row and the data below it");
    return yes;
  }
  const first = cells.row(0);
  const targetTop = targetCells.at(0, 0);
  if (cells.rows < 2) {
    if (first.every(isNameText)) {
      if (targetCells.rows === 1 && isNameText(targetTop)) {
        throw new DataError(
          `predictors and target hold only their header rows (${showRow(first)} and '${(targetTop as { value: string }).value}'): there are no data rows; select the rows of data below the headers too`,
        );
      }
      throw new DataError(`predictors holds only a header row (${showRow(first)}): there are no data rows; select the rows of data below it too`);
    }
    return no;
  }
  const width = first.length;
  // A plain number is a number (isNumeric) and number-like: no need to classify it.
  const below = (test: (c: Cell) => boolean): boolean => {
    for (let j = 0; j < width; j++) for (let i = 1; i < cells.rows; i++) if (!Number.isNaN(cells.numberAt(i, j)) || test(cells.at(i, j))) return true;
    return false;
  };
  const numberLikeBelowTop = (): boolean => {
    for (let i = 1; i < targetCells.rows; i++) if (!Number.isNaN(targetCells.numberAt(i, 0)) || isNumberLike(targetCells.at(i, 0))) return true;
    return false;
  };
  const targetHeader = targetCells.rows === cells.rows && isNameText(targetTop) && numberLikeBelowTop();
  if (first.every((c) => c.kind === "text")) {
    if (below(isNumeric)) return yes;
    if (!first.every(isNumberLike)) {
      if (below(isNumberLike)) return yes;
      // Predictors hold only text: the target may still show the header.
      if (targetHeader) return yes;
      if (targetCells.rows === cells.rows - 1) {
        // One row more than the target: row 1 is a header unless one of its texts is also a level below it.
        const repeatsBelow = (c: Cell, j: number): boolean => {
          for (let i = 1; i < cells.rows; i++) {
            const below = cells.at(i, j);
            if (below.kind === "text" && textKey(below.value) === textKey((c as { value: string }).value)) return true;
          }
          return false;
        };
        const repeats = first.some(repeatsBelow);
        if (!repeats) {
          return {
            header: true,
            note: `predictors row 1 (${showRow(first)}) is read as the header: predictors hold only text and have one row more than the target (add header=yes to settings to say so)`,
          };
        }
      }
      return no;
    }
    // Row 1 holds numbers stored as text above more of them: decided below as a row of numbers.
  }
  if (!first.every(isNumberLike)) return no;
  if (targetHeader) {
    return {
      header: true,
      note: `predictors row 1 (${showRow(first)}) is read as the header because the target's row 1 ('${(targetTop as { value: string }).value}') is a header beside it (add header=yes to settings to say so)`,
    };
  }
  const targetAbove = targetCells.rows === cells.rows + 1 && isNameText(targetTop);
  if (!targetAbove && looksLikeNumberLabels(cells)) {
    throw new DataError(
      `predictors row 1 (${showRow(first)}) looks like column labels (whole numbers rising from left to right, like years) but could be data: add header=yes to settings if it names the columns, or header=no if it is data`,
    );
  }
  return no;
}

/** Counts over the data cells of one column, for deciding how it is read. Rows are 0-based indices into the range. */
interface ColumnScan {
  /** Number and TRUE/FALSE cells. */
  numbers: number;
  texts: number;
  /** Texts that read as numbers (engine/numberText.ts). */
  numericTexts: number;
  /** Texts written like numbers in another convention (decimal comma, …). */
  foreignTexts: number;
  /** Texts written like dates. */
  dateTexts: number;
  firstNumber: number;
  /** First text read as a number, and the first one using ',' thousands separators. */
  firstNumericText: number;
  firstGrouped: number;
  /** First text that is not a number in the convention. */
  firstOtherText: number;
  firstDate: number;
}

function emptyScan(): ColumnScan {
  return {
    numbers: 0,
    texts: 0,
    numericTexts: 0,
    foreignTexts: 0,
    dateTexts: 0,
    firstNumber: -1,
    firstNumericText: -1,
    firstGrouped: -1,
    firstOtherText: -1,
    firstDate: -1,
  };
}

/** Counts cell `c` of row `i` into `scan`. */
function scanCell(scan: ColumnScan, c: Cell, i: number): void {
  if (isNumeric(c)) {
    scan.numbers++;
    if (scan.firstNumber < 0) scan.firstNumber = i;
    return;
  }
  if (c.kind !== "text") return;
  scan.texts++;
  const reading = readNumberText(c.value);
  if (reading.kind === "number") {
    scan.numericTexts++;
    if (scan.firstNumericText < 0) scan.firstNumericText = i;
    if (reading.grouped && scan.firstGrouped < 0) scan.firstGrouped = i;
    return;
  }
  if (scan.firstOtherText < 0) scan.firstOtherText = i;
  if (reading.kind === "foreign" || reading.kind === "too-large") scan.foreignTexts++;
  if (reading.kind === "date") {
    scan.dateTexts++;
    if (scan.firstDate < 0) scan.firstDate = i;
  }
}

/** The scans of `width` columns whose `count` data cells from row `from` on are all plain numbers. */
function plainScans(width: number, from: number, count: number): ColumnScan[] {
  const scans: ColumnScan[] = [];
  for (let j = 0; j < width; j++) {
    const scan = emptyScan();
    scan.numbers = count;
    scan.firstNumber = count > 0 ? from : -1;
    scans.push(scan);
  }
  return scans;
}

/** The usual grid read in one pass (plainBlock). */
interface PlainBlock {
  /** The predictors, column-major (`count` rows × the range's width). */
  data: Float64Array;
  /** The target's values, one per data row (a packed array, as the request sends it). */
  target: number[];
  /** Rows that are 0 in the target and in every column. */
  zeroRows: number;
}

/**
 * The `count` data rows of predictors (from row `from`) as a column-major matrix, with the target's
 * rows (from `targetFrom`) read alongside, when every one of those cells is a plain number
 * (isPlain); null at the first cell that is not. One pass over the raw rows, nothing allocated per
 * row; the matrix goes into a buffer reserved while an earlier fit ran when one of the right size
 * is held (reserveMatrix), else into fresh memory.
 */
function plainBlock(cells: CellGrid, target: CellGrid, from: number, targetFrom: number, count: number): PlainBlock | null {
  const width = cells.width;
  const data = takeMatrix(count * width);
  const values: number[] = [];
  let zeroRows = 0;
  for (let d = 0; d < count; d++) {
    const t = target.numberAt(targetFrom + d, 0);
    if (Number.isNaN(t)) return giveBack(data);
    values.push(t);
    const i = from + d;
    const row = cells.rawRow(i);
    const zeros = cells.zerosBlankAt(i);
    for (let j = 0, at = d; j < width; j++, at += count) {
      const v = row[j];
      if (!isPlain(v, zeros, j)) return giveBack(data);
      data[at] = v;
    }
    if (t === 0) {
      let allZero = true;
      for (let j = 0; allZero && j < width; j++) allZero = row[j] === 0;
      if (allZero) zeroRows++;
    }
  }
  return { data, target: values, zeroRows };
}

// ---------------------------------------------------------------------------------------------
// A matrix buffer reserved ahead

/**
 * Fresh memory is slow to write the first time: a new 16 MB matrix cost 5–10 ms of page faults
 * here (up to ~45 ms on a loaded VM, bench/PROFILE.md), as much as reading the whole grid. So
 * while a fit runs (the add-in's thread waits for the worker) `reserveMatrix` allocates the next
 * matrix of the same size and touches every page of it; the next reading of a grid of that size
 * writes into it (`takeMatrix`). The reserved buffer is new memory that nothing else has seen and
 * it is handed out once: whoever takes it owns it, as if it had been allocated then. At most one
 * is held (the size of the last large grid read).
 */
let reserved: Float64Array | null = null;
let reserveTimer: ReturnType<typeof setTimeout> | null = null;

/** Matrices smaller than this are not worth reserving (their pages cost microseconds). */
const RESERVE_MIN_VALUES = 1 << 16;

/** A zeroed buffer of `length` values: the reserved one when it has that length, else fresh. */
function takeMatrix(length: number): Float64Array {
  const buffer = reserved;
  if (buffer !== null && buffer.length === length) {
    reserved = null;
    return buffer;
  }
  return new Float64Array(length);
}

/** Returns a buffer takeMatrix gave out that was not used after all (its contents cleared); null. */
function giveBack(buffer: Float64Array): null {
  if (buffer.length >= RESERVE_MIN_VALUES && reserved === null) {
    buffer.fill(0);
    reserved = buffer;
  }
  return null;
}

/**
 * Reserves a matrix buffer of `length` values for the next grid of that size, in a task of its
 * own (so after the caller's fit has been posted, while it runs). Nothing for small matrices, or
 * when one of that size is already held.
 */
export function reserveMatrix(length: number): void {
  if (length < RESERVE_MIN_VALUES || (reserved !== null && reserved.length === length) || reserveTimer !== null) return;
  reserveTimer = setTimeout(() => {
    reserveTimer = null;
    if (reserved !== null && reserved.length === length) return;
    const buffer = new Float64Array(length);
    // One write per 4 KB page makes the system map it now; the values stay 0.
    for (let k = 0; k < length; k += 512) buffer[k] = 0;
    reserved = buffer;
  }, 0);
}

/** Drops the reserved buffer (tests; a host low on memory). */
export function releaseReservedMatrix(): void {
  reserved = null;
  if (reserveTimer !== null) clearTimeout(reserveTimer);
  reserveTimer = null;
}

/**
 * The scans of every column of `cells` over rows `from` on, in one pass row by row (each row of
 * a worksheet range is an array of its own, so one pass over them beats one per column). A plain
 * number is counted without a Cell.
 */
function scanColumns(cells: CellGrid, from: number): ColumnScan[] {
  const scans: ColumnScan[] = [];
  for (let j = 0; j < cells.width; j++) scans.push(emptyScan());
  for (let i = from; i < cells.rows; i++) {
    const row = cells.rawRow(i);
    const zeros = cells.zerosBlankAt(i);
    for (let j = 0; j < cells.width; j++) {
      const scan = scans[j];
      if (isPlain(row[j], zeros, j)) {
        scan.numbers++;
        if (scan.firstNumber < 0) scan.firstNumber = i;
        continue;
      }
      scanCell(scan, cells.at(i, j), i);
    }
  }
  return scans;
}

/**
 * How a column is read: "number" when at least half of its values look like numbers (numbers,
 * TRUE/FALSE, numbers stored as text, or numbers written in another convention), "date" when
 * at least half are dates written as text, else "text" (levels).
 */
function columnReading(scan: ColumnScan): "number" | "date" | "text" {
  const total = scan.numbers + scan.texts;
  if (2 * (scan.numbers + scan.numericTexts + scan.foreignTexts) >= total) return "number";
  if (2 * scan.dateTexts >= total) return "date";
  return "text";
}

/** The note for a column read from numbers stored as text. */
function fromTextNote(what: string, scan: ColumnScan, cellAt: (i: number) => Cell, categoriesHint: boolean): string {
  const first = cellAt(scan.firstNumericText) as { kind: "text"; value: string };
  let note = `${what} read as numbers: its cells hold numbers stored as text (first: row ${scan.firstNumericText + 1}, '${first.value}')`;
  if (scan.firstGrouped >= 0) {
    const grouped = (cellAt(scan.firstGrouped) as { kind: "text"; value: string }).value;
    note += `; ',' is read as a thousands separator, so '${grouped}' is ${String(numberFromText(grouped))}`;
  }
  if (categoriesHint) note += "; to use them as categories, write labels that aren't numbers";
  return note;
}

/** The error for a column of dates written as text. */
function datesError(what: string, scan: ColumnScan, cellAt: (i: number) => Cell, leaveOut: string): DataError {
  const first = cellAt(scan.firstDate) as { kind: "text"; value: string };
  return new DataError(
    `${what} holds dates stored as text (row ${scan.firstDate + 1}: '${first.value}'): as text, each date would become a 0/1 term of its own; convert them to real dates (for example with DATEVALUE), which Excel keeps as numbers, or ${leaveOut}`,
  );
}

/** A target cell as an outcome value: numbers (and numbers stored as text) as numbers, TRUE/FALSE as booleans, other text as a label; null for blank and error cells. */
function outcomeValueOf(c: Cell): OutcomeValue | null {
  if (c.kind === "number" || c.kind === "boolean") return c.value;
  if (c.kind === "text") return numberFromText(c.value) ?? c.value;
  return null;
}

/**
 * Whether the target is a number or a yes/no outcome (setting `outcome`; rules in
 * engine/outcome.ts), over the data rows `start` … `start + count − 1`. A stray text among numbers
 * keeps the message it always had (row, value, hint); a stray number among labels says the target
 * reads as labels. TRUE/FALSE mixed with numbers are 1/0, as in any number column. Throws DataError
 * or the engine's InputError.
 */
function targetKind(
  cells: CellGrid,
  start: number,
  count: number,
  scan: ColumnScan,
  settings: DataSettings,
  name: string | undefined,
  plain: number[] | null,
): OutcomeKind {
  const setting = settings.outcome ?? "auto";
  // A target of plain numbers only (the usual one) is read as such without a boxed value per row;
  // the general reading below gives the same answer for it. `plain`: those values, already read.
  let plainValues = plain;
  if (plainValues === null) {
    plainValues = [];
    for (let i = start; i < start + count; i++) {
      const v = cells.numberAt(i, 0);
      if (Number.isNaN(v)) break;
      plainValues.push(v);
    }
  }
  if (plainValues.length === count) {
    if (setting === "number") return "number";
    return readOutcome(plainValues, { outcome: setting, name }).kind;
  }
  const values: OutcomeValue[] = [];
  const labels = new Set<string>();
  let firstNumber = -1;
  for (let i = start; i < start + count; i++) {
    const plain = cells.numberAt(i, 0);
    const v = plain === plain ? plain : outcomeValueOf(cells.at(i, 0));
    if (v === null) continue;
    values.push(v);
    if (typeof v === "string") labels.add(v.toLowerCase());
    else if (firstNumber < 0) firstNumber = i;
  }
  const labelCount = values.filter((v) => typeof v === "string").length;
  const numberCount = values.length - labelCount;
  if (labelCount === 0) {
    if (setting === "number") return "number";
    if (setting === "two-class") return readOutcome(values, { outcome: "two-class", name }).kind;
    const allBoolean = values.every((v) => typeof v === "boolean");
    const asNumbers = allBoolean ? values : values.map((v) => (typeof v === "boolean" ? (v ? 1 : 0) : v));
    return readOutcome(asNumbers, { outcome: "auto", name }).kind;
  }
  if (setting === "two-class") return readOutcome(values, { outcome: "two-class", name }).kind;
  if (numberCount === 0) {
    // Labels only: a yes/no target when there are two (the engine's messages otherwise).
    if (setting === "number" && labels.size === 2) readOutcome(values, { outcome: "number", name });
    if (setting === "auto") return readOutcome(values, { outcome: "two-class", name }).kind;
  }
  if (setting === "auto" && labelCount > numberCount && numberCount > 0) {
    const shown = [...new Set(values.filter((v): v is string => typeof v === "string"))];
    throw new DataError(
      `target row ${firstNumber + 1} has ${describeCell(cells.at(firstNumber, 0))} among the labels ${listNames(shown, 4)}: a yes/no target holds two labels (or TRUE/FALSE, or 0/1), so fix the cell or clear it`,
    );
  }
  const row = scan.firstOtherText + 1;
  const c = cells.at(scan.firstOtherText, 0) as { kind: "text"; value: string };
  const headerHint =
    row !== 1 ? "" : settings.header === "no" ? " (settings say header=no, so row 1 is data)" : " (if it is a header, give predictors a header row too)";
  throw new DataError(`target row ${row} has text '${c.value}'${storedAsTextHint(c.value)}: the target must be numbers, so fix the cell or clear it${headerHint}`);
}

/**
 * Reads target and predictors ranges into encoded rows (see the file comment).
 * Throws DataError for anything the user must fix, SettingError for settings that name
 * columns that don't exist.
 * Example: target [[1],[2],[3]], predictors [["a"],["b"],["a"]] → names ["x1: b"] (reference 'a'),
 * predictors [[0],[1],[0]].
 */
export function buildDataset(targetRaw: unknown, predictorsRaw: unknown, settings: DataSettings): Dataset {
  const predictorGrid = toGrid(predictorsRaw);
  const targetGrid = toGrid(targetRaw);
  if (predictorGrid.length === 0 || predictorGrid[0].length === 0 || isBlankGrid(predictorGrid)) {
    throw new DataError("predictors is empty: select the columns to predict from (one column per predictor, one row per case)");
  }
  if (targetGrid.length === 0 || targetGrid[0].length === 0 || isBlankGrid(targetGrid)) {
    throw new DataError("target is empty: select the column of values to predict");
  }
  if (targetGrid[0].length !== 1) {
    throw new DataError(
      `target must be one column but it has ${targetGrid[0].length} columns: select only the column to predict (put the others in predictors)`,
    );
  }
  const cells = new CellGrid(predictorGrid);
  const targetCells = new CellGrid(targetGrid);
  const width = cells.width;
  const decision = detectHeader(cells, targetCells, settings.header);
  const header = decision.header;
  const h = header ? 1 : 0;
  const dataRows = cells.rows - h;
  const notes: string[] = [];
  if (decision.note !== null) notes.push(decision.note);

  // Column names.
  const names: string[] = [];
  for (let j = 0; j < width; j++) {
    const c = header ? cells.at(0, j) : null;
    const name = c && c.kind === "text" ? c.value : c && c.kind !== "blank" && c.kind !== "error" ? describeCell(c) : `x${j + 1}`;
    names.push(name);
  }
  for (let j = 0; j < width; j++) {
    if (INTERCEPT_KEYS.has(textKey(names[j]))) {
      throw new DataError(`predictors column ${j + 1} is named '${names[j]}', which is reserved for the intercept: rename the column`);
    }
    for (let k = 0; k < j; k++) {
      if (textKey(names[k]) === textKey(names[j])) {
        throw new DataError(`predictors has two columns named '${names[j]}' (columns ${k + 1} and ${j + 1}): give each column its own name`);
      }
    }
  }

  // Target alignment.
  let targetName = "target";
  let targetStart: number;
  if (targetCells.rows === cells.rows) {
    targetStart = h;
    if (header) {
      const first = targetCells.at(0, 0);
      const numberHeader = cells.row(0).every(isNumberLike);
      if (first.kind === "text") targetName = first.value;
      else if (numberHeader && isNumeric(first)) targetName = describeCell(first);
      else if (first.kind !== "blank") {
        throw new DataError(
          `target row 1 is ${describeCell(first)} but it sits beside the predictors' header row: give the target a header too, or start the target range one row lower`,
        );
      }
    }
  } else if (header && targetCells.rows === dataRows) {
    targetStart = 0;
  } else if (!header && targetCells.rows === cells.rows + 1 && targetCells.at(0, 0).kind === "text") {
    targetName = (targetCells.at(0, 0) as { value: string }).value;
    targetStart = 1;
  } else if (!header && targetCells.rows === cells.rows - 1) {
    const textOnly = cells.row(0).every(isNameText);
    throw new DataError(
      `predictors has ${cells.rows} rows but target has ${targetCells.rows}: if predictors' row 1 is a header, add header=yes to settings${textOnly ? " (predictors hold only text, and a text of row 1 also appears below it, so Shrinkwise can't tell a header from data)" : ""}; otherwise select the same rows in both`,
    );
  } else {
    throw new DataError(`predictors has ${cells.rows} rows but target has ${targetCells.rows}: select the same rows in both`);
  }
  if (dataRows === 0) throw new DataError("predictors has a header row but no data below it");

  // Fold and weights columns.
  const roleColumn = (setting: string, wanted: string | null): number | null => {
    if (wanted === null) return null;
    const j = findColumn(names, wanted);
    if (j < 0) {
      throw new SettingError(
        `'${setting}' names '${wanted}', which is not a predictors column: the columns are ${listNames(names)}${header ? "" : " (predictors has no header row, so columns are named x1, x2, …)"}`,
      );
    }
    return j;
  };
  const foldIndex = roleColumn("fold column", settings.foldColumn);
  const weightsIndex = roleColumn("weights column", settings.weightsColumn);
  if (foldIndex !== null && foldIndex === weightsIndex) {
    throw new SettingError(`'${names[foldIndex]}' can't be both the fold column and the weights column`);
  }

  // Zeros treated as blanks.
  const zeroColumns = new Set<number>();
  let zeroTarget = false;
  if (settings.zeroIsMissing === "all") {
    for (let j = 0; j < width; j++) zeroColumns.add(j);
    zeroTarget = true;
  } else if (settings.zeroIsMissing) {
    for (const wanted of settings.zeroIsMissing) {
      const j = findColumn(names, wanted);
      if (j >= 0) zeroColumns.add(j);
      else if (textKey(wanted) === textKey(targetName) || textKey(wanted) === "target") zeroTarget = true;
      else {
        throw new SettingError(
          `'zero is missing' names '${wanted}', which is not a column: the columns are ${listNames(names)} and the target '${targetName}' (or write all)`,
        );
      }
    }
  }
  cells.blankZeros(zeroColumns, h);
  if (zeroTarget) targetCells.blankZeros(new Set([0]), targetStart);

  // The usual grid: every data cell of predictors and target a plain number, and no fold or
  // weights column. Its matrix is copied in this one pass; the scans, the column kinds and the rows
  // used follow from that without another pass (every column reads as numbers, every row is used).
  const block = foldIndex === null && weightsIndex === null ? plainBlock(cells, targetCells, h, targetStart, dataRows) : null;

  // Column kinds.
  const kinds: ("number" | "text" | "labels")[] = [];
  let numericFoldLabels = false;
  const scans = block ? plainScans(width, h, dataRows) : scanColumns(cells, h);
  for (let j = 0; j < width; j++) {
    const cellAt = (i: number): Cell => cells.at(i, j);
    const scan = scans[j];
    const label = j === foldIndex ? "fold column" : j === weightsIndex ? "weights column" : "predictors column";
    if (scan.numbers === 0 && scan.texts === 0) {
      throw new DataError(`${label} '${names[j]}' has no values (only blank or error cells): fill it in or leave it out of predictors`);
    }
    if (j === foldIndex) {
      // Labels; texts that are all numbers stored as text label the same folds as those numbers.
      numericFoldLabels = scan.texts > 0 && scan.numericTexts === scan.texts;
      kinds.push("labels");
      continue;
    }
    const reading = columnReading(scan);
    if (j === weightsIndex && scan.firstOtherText >= 0) {
      const c = cells.at(scan.firstOtherText, j) as { kind: "text"; value: string };
      throw new DataError(
        `weights column '${names[j]}' row ${scan.firstOtherText + 1} has text '${c.value}'${storedAsTextHint(c.value)}: weights must be numbers of 0 or more`,
      );
    }
    if (reading === "date") throw datesError(`${label} '${names[j]}'`, scan, cellAt, "leave the column out of predictors");
    if (reading === "number") {
      if (scan.firstOtherText >= 0) {
        const c = cells.at(scan.firstOtherText, j) as { kind: "text"; value: string };
        const headerHint =
          scan.firstOtherText === 0 && settings.header === "auto" ? " (if row 1 is a header, give every column a name there, or add header=yes to settings)" : "";
        // All text, mostly numbers stored as text, and an ordinary label: perhaps codes meant as categories.
        const categoriesHint =
          headerHint === "" && scan.numbers === 0 && storedAsTextHint(c.value) === ""
            ? " (most of its cells are numbers stored as text; to use the column as categories, write every value as a label that isn't a number, such as 'grade 1')"
            : "";
        throw new DataError(
          `${label} '${names[j]}' row ${scan.firstOtherText + 1} has text '${c.value}' in a number column${storedAsTextHint(c.value)}: fix it or clear the cell${headerHint}${categoriesHint}`,
        );
      }
      if (scan.numericTexts > 0) notes.push(fromTextNote(`${label} '${names[j]}'`, scan, cellAt, j !== weightsIndex));
      kinds.push("number");
      continue;
    }
    if (scan.numbers > 0) {
      const c = cells.at(scan.firstNumber, j);
      const hint = c.kind === "number" && c.value === 0 ? zeroHint(names[j]) : "";
      throw new DataError(
        `${label} '${names[j]}' row ${scan.firstNumber + 1} has ${describeCell(c)} in a text column: make it a text level or clear the cell${hint}`,
      );
    }
    kinds.push("text");
  }

  // Target: numbers (numbers stored as text count) or a yes/no outcome (engine/outcome.ts); blank
  // and error cells skip the row. The kind is decided over every data row, so a third class in a
  // skipped row is still caught; the event and the 0/1 coding come from the rows used (below).
  const targetAt = (i: number): Cell => targetCells.at(i, 0);
  const targetScan = block ? plainScans(1, targetStart, dataRows)[0] : scanColumns(targetCells, targetStart)[0];
  // readOutcome quotes a name it is given; an unnamed target is "the target" in its messages.
  const outcomeName = targetName === "target" ? undefined : targetName;
  const outcome = targetKind(targetCells, targetStart, dataRows, targetScan, settings, outcomeName, block ? block.target : null);
  if (targetScan.numericTexts > 0) notes.push(fromTextNote(`target '${targetName}'`, targetScan, targetAt, false));

  // Rows used, skipped, ignored.
  // (The usual grid uses every row: no list of them is made.)
  const used: number[] = [];
  let skipped = 0;
  let firstSkip: string | null = null;
  for (let d = 0; !block && d < dataRows; d++) {
    const i = h + d;
    let allBlank = false;
    let reason: string | null = null;
    const plainTarget = targetCells.numberAt(targetStart + d, 0);
    if (plainTarget !== plainTarget) {
      const t = targetCells.at(targetStart + d, 0);
      allBlank = t.kind === "blank";
      reason = t.kind === "blank" ? `target is blank` : t.kind === "error" ? `target is ${t.text}` : null;
    }
    const row = cells.rawRow(i);
    const zeros = cells.zerosBlankAt(i);
    for (let j = 0; j < width; j++) {
      // A plain number is neither blank nor an error.
      if (isPlain(row[j], zeros, j)) {
        allBlank = false;
        continue;
      }
      const c = cells.at(i, j);
      if (c.kind !== "blank") allBlank = false;
      if (reason === null && (c.kind === "blank" || c.kind === "error")) {
        reason = `'${names[j]}' is ${c.kind === "blank" ? "blank" : c.text}`;
      }
    }
    if (allBlank) continue;
    if (reason !== null) {
      skipped++;
      if (firstSkip === null) firstSkip = `row ${i + 1}: ${reason}`;
      continue;
    }
    used.push(d);
  }
  if (!block && used.length === 0) {
    throw new DataError(
      `no row can be used: every row has a blank or error cell in the target or a predictor (${skipped} rows; first, ${firstSkip ?? "none"})`,
    );
  }

  // Weights.
  let weights: number[] | null = null;
  if (weightsIndex !== null) {
    weights = [];
    for (const d of used) {
      const w = cells.numberOf(h + d, weightsIndex) as number;
      if (w < 0) throw new DataError(`weights column '${names[weightsIndex]}' row ${h + d + 1} is ${w}: weights must be 0 or more`);
      weights.push(w);
    }
  }
  // Fold labels: texts grouped ignoring case and spacing, each group shown as first typed.
  let foldLabels: (number | string)[] | null = null;
  if (foldIndex !== null) {
    const shown = new Map<string, string>();
    foldLabels = used.map((d) => {
      const c = cells.at(h + d, foldIndex);
      if (c.kind === "text" && !numericFoldLabels) {
        const key = textKey(c.value);
        if (!shown.has(key)) shown.set(key, c.value);
        return shown.get(key) as string;
      }
      return numberOfCell(c) as number;
    });
  }

  // Encoder: one ColumnCode per predictor column.
  const columns: ColumnCode[] = [];
  const terms: string[] = [];
  const referenceLevels: { column: string; level: string }[] = [];
  // Every name a COEFS table shows (number columns, each level's term, reference rows included),
  // by textKey (how terms are looked up), so two that read alike are caught here rather than
  // in SHRINK.APPLY or a setting.
  // Column names are claimed too (the fold and weights columns included): new rows carry them,
  // and a term named like one would be read from it.
  const shownNames = new Map<string, { column: string; level: string | null; role: string }>();
  const owner = (o: { column: string; level: string | null; role: string }): string =>
    o.level === null ? `${o.role} '${o.column}'` : `level '${o.level}' of the text column '${o.column}'`;
  const claim = (name: string, column: string, level: string | null, role = "predictors column"): void => {
    const mine = { column, level, role };
    if (REFERENCE_SUFFIX.test(name)) {
      throw new DataError(
        `${owner(mine)} would be listed as '${name}', which coefficient tables read as a reference-level mark: rename the ${level === null ? "column" : "level"} so it doesn't end in '(reference)'`,
      );
    }
    const other = shownNames.get(textKey(name));
    if (other) {
      const rename = other.level === null ? `the column '${other.column}'` : `the column '${other.column}' or '${column}'`;
      throw new DataError(`${owner(other)} and ${owner(mine)} would both be listed as '${name}', so SHRINK.APPLY and settings could not tell them apart: rename ${rename}`);
    }
    shownNames.set(textKey(name), mine);
  };
  // Every column's own name is claimed: SHRINK.APPLY reads a term that equals a column of new
  // rows as that number column, whatever kind the column is.
  for (let j = 0; j < width; j++) {
    if (j === foldIndex) claim(names[j], names[j], null, "the fold column");
    else if (j === weightsIndex) claim(names[j], names[j], null, "the weights column");
    else claim(names[j], names[j], null);
  }
  for (let j = 0; j < width; j++) {
    if (j === foldIndex || j === weightsIndex) continue;
    if (kinds[j] === "number") {
      columns.push({ name: names[j], kind: "number", position: j, levels: [], levelIndex: new Map(), reference: null, inferReference: false, zeroIsMissing: zeroColumns.has(j) });
      terms.push(names[j]);
      continue;
    }
    // Levels in order of first appearance, with counts over the rows used.
    const order: string[] = [];
    const display = new Map<string, string>();
    const counts = new Map<string, number>();
    for (const d of used) {
      const c = cells.at(h + d, j) as { kind: "text"; value: string };
      const key = textKey(c.value);
      if (!counts.has(key)) {
        order.push(key);
        display.set(key, c.value);
        counts.set(key, 0);
      }
      counts.set(key, (counts.get(key) as number) + 1);
    }
    if (order.length > MAX_LEVELS) {
      throw new DataError(
        `predictors column '${names[j]}' has ${order.length} different texts: a text column becomes one 0/1 column per level (at most ${MAX_LEVELS}), so this looks like a name or an identifier; leave it out of predictors`,
      );
    }
    let reference = order[0];
    for (const key of order) if ((counts.get(key) as number) > (counts.get(reference) as number)) reference = key;
    const levelIndex = new Map<string, number>();
    const levels: string[] = [];
    for (const key of order) {
      const level = display.get(key) as string;
      claim(`${names[j]}: ${level}`, names[j], level);
      if (key === reference) {
        levelIndex.set(key, -1);
        continue;
      }
      levelIndex.set(key, levels.length);
      levels.push(level);
      terms.push(`${names[j]}: ${level}`);
    }
    // Levels seen only in skipped rows are still known (they encode as unseen otherwise).
    for (let i = h; i < cells.rows; i++) {
      const c = cells.at(i, j);
      if (c.kind === "text" && !levelIndex.has(textKey(c.value))) {
        notes.push(`'${names[j]}' level '${c.value}' appears only in skipped rows, so the model has no term for it`);
        levelIndex.set(textKey(c.value), -2);
      }
    }
    const referenceText = display.get(reference) as string;
    referenceLevels.push({ column: names[j], level: referenceText });
    if (levels.length === 0) {
      notes.push(`'${names[j]}' has one level ('${referenceText}') in the rows used, so it adds no term`);
      continue;
    }
    columns.push({ name: names[j], kind: "text", position: j, levels, levelIndex, reference: referenceText, inferReference: false, zeroIsMissing: zeroColumns.has(j) });
  }
  if (columns.length === 0) {
    throw new DataError("no predictor is left to fit: every predictors column is the fold column, the weights column, or a text column with one level");
  }
  // A level's term must read as that column's level only: SHRINK.APPLY splits a term at a colon
  // into a column of new rows that isn't a number term and a level, so a term that also splits
  // into another such column (column 'a' level 'b: c' beside column 'a: b'; the fold and weights
  // columns and one-level text columns count, as new rows carry them too) is ambiguous.
  const textColumnKeys = new Map<string, string>();
  for (let j = 0; j < width; j++) if (j === foldIndex || j === weightsIndex || kinds[j] !== "number") textColumnKeys.set(textKey(names[j]), names[j]);
  for (const column of columns) {
    if (column.kind !== "text") continue;
    for (const level of [column.reference, ...column.levels]) {
      if (level === null) continue;
      const term = `${column.name}: ${level}`;
      for (let at = term.indexOf(":"); at > 0; at = term.indexOf(":", at + 1)) {
        const other = textColumnKeys.get(textKey(term.slice(0, at)));
        const rest = term.slice(at + 1).trim();
        if (other === undefined || textKey(other) === textKey(column.name) || rest === "") continue;
        throw new DataError(
          `level '${level}' of the text column '${column.name}' would be listed as '${term}', which also reads as '${rest}' in the column '${other}', so SHRINK.APPLY could not tell them apart: rename the column '${column.name}' or '${other}'`,
        );
      }
    }
  }

  const encoder: RowEncoder = { columns, terms, width, sourceNames: names, source: "predictors" };
  // The encoded rows go straight into one column-major matrix (the engine's layout and the packed
  // request's), through one reused row buffer.
  // The usual grid was copied and its target read in its one pass (plainBlock): every row used.
  const n = block ? dataRows : used.length;
  const p = terms.length;
  if (block && p !== width) throw new Error("a grid of plain numbers was encoded to another shape");
  const data = block ? block.data : takeMatrix(n * p);
  const values = new Array<number>(p);
  const target: number[] = block && outcome === "number" ? block.target : [];
  let zeroRows = block ? block.zeroRows : 0;
  const allNumbers = columns.every((column) => column.kind === "number");
  const positions = columns.map((column) => column.position);
  for (let r = 0; !block && r < n; r++) {
    const d = used[r];
    const i = h + d;
    // Rows of plain numbers in number columns are copied without a Cell (row by row: measured as
    // quick as copying in blocks of rows); any other row is encoded cell by cell.
    let plain = allNumbers;
    const row = cells.rawRow(i);
    const zeros = cells.zerosBlankAt(i);
    for (let k = 0; plain && k < p; k++) {
      const v = row[positions[k]];
      if (isPlain(v, zeros, positions[k])) data[k * n + r] = v;
      else plain = false;
    }
    if (!plain) {
      encodeInto(
        encoder,
        (column) => cells.at(i, column.position),
        values,
        () => "training",
        undefined,
        (column) => cells.numberAt(i, column.position),
      );
      for (let k = 0; k < p; k++) data[k * n + r] = values[k];
    }
    const t = targetCells.numberOf(targetStart + d, 0);
    if (outcome === "number") target.push(t as number);
    let allZero = t === 0;
    for (const column of columns) {
      if (!allZero) break;
      if (column.kind !== "number") {
        allZero = false;
        break;
      }
      const plain = cells.numberAt(i, column.position);
      if (plain === plain) {
        if (plain !== 0) allZero = false;
        continue;
      }
      const c = cells.at(i, column.position);
      if (!(c.kind === "number" && c.value === 0)) allZero = false;
    }
    if (allZero) zeroRows++;
  }
  const matrix: ColumnMatrix = { rows: n, columns: p, data };
  let rowsForm: number[][] | null = null;

  let classes: TargetClasses | null = null;
  if (outcome === "two-class") {
    // A plain number cell's outcome value is the number itself (outcomeValueOf).
    const values: OutcomeValue[] = block ? block.target : used.map((d) => outcomeValueOf(targetCells.at(targetStart + d, 0)) as OutcomeValue);
    const reading = readOutcome(values, { outcome: "two-class", event: settings.event ?? null, name: outcomeName });
    if (reading.kind !== "two-class") throw new Error("a two-class reading of the target came back as numbers");
    for (const v of reading.values) target.push(v);
    const eventAt = reading.values.indexOf(1);
    const otherAt = reading.values.indexOf(0);
    classes = {
      event: reading.event,
      other: reading.other,
      eventCount: reading.eventCount,
      otherCount: reading.otherCount,
      eventValue: values[eventAt],
      otherValue: values[otherAt],
    };
    if (reading.note !== null) notes.push(reading.note);
  }

  if (skipped > 0 && firstSkip !== null) {
    notes.unshift(`${skipped} row${skipped === 1 ? "" : "s"} skipped for a blank or error cell (first: ${firstSkip})`);
  }
  if (zeroRows > 0) {
    notes.push(
      `${zeroRows} row${zeroRows === 1 ? " is" : "s are"} 0 in the target and every number column: if these are empty cells that arrived as 0, add 'zero is missing=all' to settings`,
    );
  }
  return {
    targetName,
    names: terms,
    get predictors(): number[][] {
      return (rowsForm ??= rowsOf(matrix));
    },
    matrix,
    target,
    weights,
    foldLabels,
    rowsUsed: n,
    rowsSkipped: skipped,
    hasHeader: header,
    encoder,
    referenceLevels,
    notes,
    foldColumn: foldIndex === null ? null : names[foldIndex],
    weightsColumn: weightsIndex === null ? null : names[weightsIndex],
    outcome,
    classes,
  };
}

/**
 * Writes the encoded values of one complete row (no blank or error cells in the columns used).
 * `where` names the row for messages. Unknown levels are errors (or, with `inferReference`,
 * the one level left out of a coefficient table).
 */
function encodeInto(
  encoder: RowEncoder,
  cellOf: (column: ColumnCode) => Cell,
  out: number[],
  where: (column: ColumnCode) => string,
  inferred?: Map<ColumnCode, { key: string; text: string }>,
  plainNumber?: (column: ColumnCode) => number,
): void {
  let t = 0;
  for (const column of encoder.columns) {
    if (column.kind === "number" && plainNumber) {
      // A plain number (CellGrid.numberAt) is its own value: no Cell needed.
      const plain = plainNumber(column);
      if (plain === plain) {
        out[t++] = plain;
        continue;
      }
    }
    const c = cellOf(column);
    if (column.kind === "number") {
      // Numbers stored as text are read as in training (engine/numberText.ts).
      const value = numberOfCell(c);
      if (value === null) {
        const text = c.kind === "text" ? `text '${c.value}'${storedAsTextHint(c.value)}` : describeCell(c);
        throw new DataError(`${where(column)} has ${text}, but '${column.name}' is a number column: fix it or clear the cell`);
      }
      out[t++] = value;
      continue;
    }
    if (c.kind !== "text") {
      const hint = c.kind === "number" && c.value === 0 ? zeroHint(column.name) : "";
      throw new DataError(`${where(column)} has ${describeCell(c)}, but '${column.name}' is a text column (levels like '${column.levels[0]}')${hint}`);
    }
    const key = textKey(c.value);
    let index = column.levelIndex.get(key);
    if (index === undefined || index === -2) {
      if (column.inferReference) {
        const previous = inferred?.get(column);
        if (!previous) {
          inferred?.set(column, { key, text: c.value });
          index = -1;
        } else if (previous.key === key) {
          index = -1;
        } else {
          throw new DataError(
            `'${column.name}' has levels '${previous.text}' and '${c.value}' that coefficient_table doesn't list: only one level can be left out (the reference level); add a row '${column.name}: ${previous.text} (reference)' with coefficient 0 to say which, or fix the text`,
          );
        }
      } else {
        const known = [...(column.reference ? [column.reference] : []), ...column.levels];
        const from = encoder.source === "predictors" ? "in training" : `in ${encoder.source}`;
        throw new DataError(
          `${where(column)} has '${c.value}', a level of '${column.name}' not seen ${from} (levels: ${listNames(known)}): fix the text, or refit with rows that include it`,
        );
      }
    }
    for (let k = 0; k < column.levels.length; k++) out[t + k] = k === index ? 1 : 0;
    t += column.levels.length;
  }
}

/** One encoded new row: values, a blank row, or a row missing a value (with the reason). */
export type EncodedRow = { kind: "values"; values: number[] } | { kind: "blank" } | { kind: "missing"; reason: string };

export interface EncodedRows {
  /** new_rows had a header row (the result keeps a header cell so rows stay aligned). */
  header: boolean;
  rows: EncodedRow[];
}

/** Encodes data rows given where each encoder column sits in the grid. */
function encodeRows(encoder: RowEncoder, cells: Cell[][], start: number, positions: number[], header: boolean): EncodedRows {
  const rows: EncodedRow[] = [];
  const positionOf = new Map<ColumnCode, number>();
  encoder.columns.forEach((column, k) => positionOf.set(column, positions[k]));
  // Zeros treated as blanks, as in training.
  for (const column of encoder.columns) {
    if (!column.zeroIsMissing) continue;
    const p = positionOf.get(column) as number;
    for (let i = start; i < cells.length; i++) {
      const c = cells[i][p];
      if (c.kind === "number" && c.value === 0) cells[i][p] = { kind: "blank" };
    }
  }
  const inferred = new Map<ColumnCode, { key: string; text: string }>();
  for (let i = start; i < cells.length; i++) {
    let allBlank = true;
    let reason: string | null = null;
    for (const column of encoder.columns) {
      const c = cells[i][positionOf.get(column) as number];
      if (c.kind !== "blank") allBlank = false;
      if (reason === null && (c.kind === "blank" || c.kind === "error")) {
        reason = `no prediction for new_rows row ${i + 1}: '${column.name}' is ${c.kind === "blank" ? "blank" : c.text}`;
      }
    }
    if (allBlank) {
      rows.push({ kind: "blank" });
      continue;
    }
    if (reason !== null) {
      rows.push({ kind: "missing", reason });
      continue;
    }
    const values = new Array<number>(encoder.terms.length);
    try {
      encodeInto(encoder, (column) => cells[i][positionOf.get(column) as number], values, (column) => `new_rows row ${i + 1} column '${column.name}'`, inferred);
    } catch (e) {
      const headerLike = cells[0].every((c) => c.kind === "text" || c.kind === "blank");
      if (e instanceof DataError && i === 0 && !header && headerLike) {
        throw new DataError(`${e.message} (if row 1 is a header, its names must match the ${encoder.source} names: ${listNames(encoder.sourceNames, 6)})`);
      }
      throw e;
    }
    rows.push({ kind: "values", values });
  }
  return { header, rows };
}

function newRowCells(raw: unknown): Cell[][] {
  const grid = toGrid(raw);
  if (grid.length === 0 || grid[0].length === 0 || isBlankGrid(grid)) {
    throw new DataError("new_rows is empty: select the rows to predict, with the same columns as predictors");
  }
  return classifyGrid(grid);
}

/**
 * A first row of new_rows that names columns: texts and blanks, at least one text a known name;
 * numbers count as names only when each is a known name (columns named 2019, 2020, … by a header of
 * numbers), so a row of data is never taken for one.
 */
function isNameRow(first: readonly Cell[], known: (key: string) => boolean): boolean {
  let named = false;
  for (const c of first) {
    if (c.kind === "blank") continue;
    const key = c.kind === "text" ? textKey(c.value) : c.kind === "number" ? textKey(describeCell(c)) : null;
    if (key === null) return false;
    if (known(key)) named = true;
    else if (c.kind !== "text") return false;
  }
  return named;
}

/** Position of each wanted name in a header row, or an error naming the first one missing. */
function headerPositions(first: Cell[], wanted: readonly string[], missingMessage: (name: string, have: string[]) => string): number[] {
  const have = first.map((c) => (c.kind === "text" ? c.value : describeCell(c)));
  return wanted.map((name) => {
    const key = textKey(name);
    const matches = have.map((h, p) => (textKey(h) === key ? p : -1)).filter((p) => p >= 0);
    if (matches.length === 0) throw new DataError(missingMessage(name, have));
    if (matches.length > 1) throw new DataError(`new_rows has two columns named '${name}': keep one`);
    return matches[0];
  });
}

/**
 * Encodes new_rows for a model fitted on `encoder`'s columns (SHRINK.PREDICT). A header row
 * (first row text or blank, naming at least one predictors column) matches columns by name; without
 * one, new_rows must have the predictors' columns in the same order.
 */
export function encodeNewRows(encoder: RowEncoder, raw: unknown): EncodedRows {
  const cells = newRowCells(raw);
  const first = cells[0];
  const known = new Set(encoder.sourceNames.map(textKey));
  const header = isNameRow(first, (key) => known.has(key));
  if (header) {
    if (cells.length < 2) throw new DataError("new_rows has a header row but no rows below it");
    const positions = headerPositions(
      first,
      encoder.columns.map((c) => c.name),
      (name, have) => `new_rows has no column '${name}' (its header row has ${listNames(have)}): add it, or leave the header out and give the predictors' columns in the same order`,
    );
    return encodeRows(encoder, cells, 1, positions, true);
  }
  const width = encoder.width as number;
  if (first.length !== width) {
    throw new DataError(
      `new_rows has ${first.length} column${first.length === 1 ? "" : "s"} but predictors has ${width}: give the same columns in the same order, or give new_rows a header row naming them`,
    );
  }
  return encodeRows(
    encoder,
    cells,
    0,
    encoder.columns.map((c) => c.position),
    false,
  );
}

/** A coefficient table as read: intercept and terms (reference rows marked). */
export interface CoefficientTable {
  intercept: number;
  terms: { term: string; coefficient: number; reference: boolean }[];
  /** "logistic" when the coefficient header says log-odds (a yes/no model): predictions are probabilities. */
  link: "identity" | "logistic";
  /** The event named in quotes in a log-odds header (`log-odds of 'fail'`), or null. */
  event: string | null;
}

/**
 * Reads a coefficient column's header: any text containing "log-odds" (also "log odds",
 * "logodds"; any case) marks a yes/no model, and the first text in quotes ('…', "…", ‘…’ or “…”)
 * after it names the event. Example: "coefficient (log-odds of 'fail')" → logistic, event fail.
 */
export function readCoefficientHeader(text: string): { link: "identity" | "logistic"; event: string | null } {
  const at = text.search(/log[\s-]*odds/i);
  if (at < 0) return { link: "identity", event: null };
  const quoted = /'([^']+)'|"([^"]+)"|‘([^’]+)’|“([^”]+)”/.exec(text.slice(at));
  const event = quoted ? (quoted[1] ?? quoted[2] ?? quoted[3] ?? quoted[4]).trim() : null;
  return { link: "logistic", event: event === "" ? null : event };
}

const REFERENCE_SUFFIX = /\s*\(reference\)\s*$/i;
/** The first cell of the row SHRINK.BASELINE puts above its header when the classes are separated (spill.ts SEPARATION_LABEL). */
const SEPARATION_KEY = "separation";

/**
 * Reads a coefficient table (SHRINK.COEFS or SHRINK.BASELINE output, or typed by hand): term |
 * coefficient rows, an optional header row (see below), ending at the first blank row.
 * "intercept" (or "(intercept)", or "constant" when no intercept row is present) is the
 * intercept, and the table must have one (`intercept | 0` says a model has none); a first row
 * naming the intercept is never a header. A coefficient stored as text is an error with the
 * stored-as-text hint. A term ending in " (reference)" marks a text column's reference level.
 * A header whose coefficient cell says "log-odds" marks a yes/no model (readCoefficientHeader);
 * columns after the second (COEFS' odds ratio, BASELINE's standard error, z, p-value) are not read.
 * A BASELINE table reporting separation (first cell `separation`) is refused.
 */
export function readCoefficientTable(raw: unknown): CoefficientTable {
  const grid = toGrid(raw);
  if (grid.length === 0 || isBlankGrid(grid)) throw new DataError("coefficient_table is empty: select the table SHRINK.COEFS returned (term | coefficient)");
  if (grid[0].length < 2) {
    throw new DataError("coefficient_table needs two columns, term | coefficient: select both columns of the table SHRINK.COEFS returned");
  }
  const cells = classifyGrid(grid);
  // A header row: its second cell is text that isn't a number, and its first cell doesn't name the intercept.
  const firstTerm = cells[0][0];
  const namesIntercept = firstTerm.kind === "text" && (INTERCEPT_KEYS.has(textKey(firstTerm.value)) || textKey(firstTerm.value) === CONSTANT_KEY);
  const second = cells[0][1];
  const start = !namesIntercept && second.kind === "text" && numberFromText(second.value) === null ? 1 : 0;
  if (start === 1 && firstTerm.kind === "text" && textKey(firstTerm.value) === SEPARATION_KEY) {
    throw new DataError(
      "coefficient_table is a SHRINK.BASELINE table that reports separation: its coefficients are not estimates (they grow without limit as the fit goes on), so nothing can be predicted from them; use the table of SHRINK.COEFS, whose penalty keeps them finite",
    );
  }
  const { link, event } = start === 1 ? readCoefficientHeader((second as { value: string }).value) : { link: "identity" as const, event: null };
  let intercept: number | null = null;
  const terms: CoefficientTable["terms"] = [];
  const seen = new Set<string>();
  for (let i = start; i < cells.length; i++) {
    const row = cells[i];
    if (row.every((c) => c.kind === "blank")) break;
    const termCell = row[0];
    const coefficientCell = row[1];
    if (termCell.kind !== "text" && termCell.kind !== "number") {
      throw new DataError(`coefficient_table row ${i + 1} has ${describeCell(termCell)} where a term name belongs`);
    }
    const term = termCell.kind === "text" ? termCell.value : String(termCell.value);
    if (coefficientCell.kind !== "number") {
      const what = coefficientCell.kind === "text" ? `text '${coefficientCell.value}'${storedAsTextHint(coefficientCell.value)}` : describeCell(coefficientCell);
      throw new DataError(`coefficient_table row ${i + 1} ('${term}') has ${what} where its coefficient belongs: give a number`);
    }
    const key = textKey(term);
    if (INTERCEPT_KEYS.has(key)) {
      if (intercept !== null) throw new DataError("coefficient_table lists the intercept twice: keep one");
      intercept = coefficientCell.value;
      continue;
    }
    const reference = REFERENCE_SUFFIX.test(term);
    const name = reference ? term.replace(REFERENCE_SUFFIX, "") : term;
    if (seen.has(textKey(name))) throw new DataError(`coefficient_table lists '${name}' twice: keep one`);
    seen.add(textKey(name));
    terms.push({ term: name, coefficient: coefficientCell.value, reference });
  }
  if (intercept === null) {
    const constant = terms.findIndex((t) => !t.reference && textKey(t.term) === CONSTANT_KEY);
    if (constant >= 0) intercept = terms.splice(constant, 1)[0].coefficient;
  }
  if (intercept === null) {
    throw new DataError(
      "coefficient_table has no intercept row: add a row 'intercept' with the model's intercept (intercept | 0 for a model without one), or select the whole table SHRINK.COEFS returned",
    );
  }
  if (terms.length === 0) throw new DataError("coefficient_table has no terms besides the intercept: select the whole table");
  return { intercept, terms, link, event };
}

/**
 * The ways a term splits, at one of its colons, into a column of new_rows' header (not one of
 * `exclude`, the number columns) and a level. More than one means the term is ambiguous.
 */
function splitTerm(term: string, headerKeys: Map<string, string>, exclude: ReadonlySet<string>): { column: string; level: string }[] {
  const out: { column: string; level: string }[] = [];
  let at = term.indexOf(":");
  while (at > 0) {
    const key = textKey(term.slice(0, at));
    const column = headerKeys.get(key);
    const level = term.slice(at + 1).trim();
    if (column !== undefined && !exclude.has(key) && level !== "" && !out.some((o) => textKey(o.column) === key)) out.push({ column, level });
    at = term.indexOf(":", at + 1);
  }
  return out;
}

/**
 * Predicting from a coefficient table (SHRINK.APPLY): builds the encoder from the table's terms
 * and new_rows' header, then encodes new_rows. Returns the encoded rows with the intercept and
 * coefficients in encoder term order.
 * Without a header row, new_rows is accepted only when no term is an indicator and it has one
 * column per term, in the table's order.
 */
export function applyCoefficientTable(table: CoefficientTable, raw: unknown): { encoded: EncodedRows; terms: string[]; intercept: number; coefficients: number[] } {
  const cells = newRowCells(raw);
  const first = cells[0];
  const termKeys = table.terms.map((t) => textKey(t.term));
  const headerLike = isNameRow(first, (key) => termKeys.some((t) => t === key || t.startsWith(`${key}:`)));
  const plain = table.terms.filter((t) => !t.reference);
  if (!headerLike) {
    const looksIndicator = plain.some((t) => t.term.includes(":"));
    if (looksIndicator || first.length !== plain.length) {
      throw new DataError(
        `new_rows needs a header row naming its columns (coefficient_table uses ${listNames(plain.map((t) => t.term), 6)}): include the header row in new_rows`,
      );
    }
    const columns: ColumnCode[] = plain.map((t, p) => numberColumn(t.term, p));
    const encoder: RowEncoder = { columns, terms: plain.map((t) => t.term), width: first.length, sourceNames: plain.map((t) => t.term), source: "coefficient_table" };
    return {
      encoded: encodeRows(encoder, cells, 0, columns.map((c) => c.position), false),
      terms: encoder.terms,
      intercept: table.intercept,
      coefficients: plain.map((t) => t.coefficient),
    };
  }
  if (cells.length < 2) throw new DataError("new_rows has a header row but no rows below it");
  const headerNames = first.map((c) => (c.kind === "text" ? c.value : ""));
  const headerKeys = new Map<string, string>();
  headerNames.forEach((name) => headerKeys.set(textKey(name), name));
  // Build columns in order of first use; indicators grouped under their column.
  const byColumn = new Map<string, ColumnCode>();
  const order: ColumnCode[] = [];
  const coefficientOf = new Map<string, number>();
  // Terms naming a header column exactly are number columns; the others split at a colon into a
  // column that isn't one of those and a level.
  const numberKeys = new Set<string>();
  for (const t of table.terms) if (!t.reference && headerKeys.has(textKey(t.term))) numberKeys.add(textKey(t.term));
  for (const t of table.terms) {
    const exact = headerKeys.get(textKey(t.term));
    if (exact !== undefined && !t.reference) {
      const key = textKey(exact);
      if (byColumn.has(key)) throw new DataError(`coefficient_table uses '${exact}' both as a number column and as a text column`);
      const column = numberColumn(exact, -1);
      byColumn.set(key, column);
      order.push(column);
      coefficientOf.set(`${key}\u0000`, t.coefficient);
      continue;
    }
    const splits = splitTerm(t.term, headerKeys, numberKeys);
    if (splits.length === 0) {
      const prefix = t.term.includes(":") ? t.term.slice(0, t.term.indexOf(":")).trim() : t.term;
      throw new DataError(
        `new_rows has no column '${prefix}' (needed for the term '${t.term}' of coefficient_table; new_rows' header has ${listNames(headerNames)}): add the column or fix the header`,
      );
    }
    if (splits.length > 1) {
      const [a, b] = splits;
      throw new DataError(
        `coefficient_table's term '${t.term}' reads both as level '${a.level}' of '${a.column}' and as level '${b.level}' of '${b.column}': rename one of these columns (in the data and the table) so no column name is another's followed by ':'`,
      );
    }
    const split = splits[0];
    const key = textKey(split.column);
    let column = byColumn.get(key);
    if (!column) {
      column = { name: split.column, kind: "text", position: -1, levels: [], levelIndex: new Map(), reference: null, inferReference: true, zeroIsMissing: false };
      byColumn.set(key, column);
      order.push(column);
    } else if (column.kind !== "text") {
      throw new DataError(`coefficient_table uses '${split.column}' both as a number column and as a text column`);
    }
    const levelKey = textKey(split.level);
    if (column.levelIndex.has(levelKey)) throw new DataError(`coefficient_table lists level '${split.level}' of '${split.column}' twice: keep one`);
    if (t.reference) {
      if (column.reference !== null) throw new DataError(`coefficient_table marks two reference levels for '${split.column}': keep one`);
      column.reference = split.level;
      column.levelIndex.set(levelKey, -1);
      column.inferReference = false;
      continue;
    }
    column.levelIndex.set(levelKey, column.levels.length);
    column.levels.push(split.level);
    coefficientOf.set(`${key}\u0000${levelKey}`, t.coefficient);
  }
  const columns = order.filter((c) => c.kind === "number" || c.levels.length > 0);
  const terms: string[] = [];
  const coefficients: number[] = [];
  for (const column of columns) {
    const key = textKey(column.name);
    if (column.kind === "number") {
      terms.push(column.name);
      coefficients.push(coefficientOf.get(`${key}\u0000`) as number);
    } else {
      for (const level of column.levels) {
        terms.push(`${column.name}: ${level}`);
        coefficients.push(coefficientOf.get(`${key}\u0000${textKey(level)}`) as number);
      }
    }
  }
  const encoder: RowEncoder = { columns, terms, width: null, sourceNames: headerNames, source: "coefficient_table" };
  const positions = headerPositions(
    first,
    columns.map((c) => c.name),
    (name, have) => `new_rows has no column '${name}' (its header row has ${listNames(have)})`,
  );
  return { encoded: encodeRows(encoder, cells, 1, positions, true), terms, intercept: table.intercept, coefficients };
}

function numberColumn(name: string, position: number): ColumnCode {
  return { name, kind: "number", position, levels: [], levelIndex: new Map(), reference: null, inferReference: false, zeroIsMissing: false };
}

/**
 * Indices of the terms a setting's name refers to: a term (`Region: North`) or a predictors
 * column (a text column covers all its indicator terms). Throws SettingError naming the setting.
 */
export function termIndices(dataset: Dataset, name: string, setting: string): number[] {
  const key = textKey(name);
  if (INTERCEPT_KEYS.has(key)) throw new SettingError(`'${setting}' can't name the intercept: the intercept is never penalized or bounded`);
  const exact = dataset.names.findIndex((term) => textKey(term) === key);
  if (exact >= 0) return [exact];
  let t = 0;
  for (const column of dataset.encoder.columns) {
    const count = column.kind === "number" ? 1 : column.levels.length;
    if (textKey(column.name) === key) return Array.from({ length: count }, (_, k) => t + k);
    t += count;
  }
  for (const [role, column] of [
    ["fold column", dataset.foldColumn],
    ["weights column", dataset.weightsColumn],
  ] as const) {
    if (column !== null && textKey(column) === key) throw new SettingError(`'${setting}' names '${name}', the ${role}: it is not a predictor`);
  }
  throw new SettingError(`'${setting}' names '${name}', which is not a term: the terms are ${listNames(dataset.names)}`);
}
