/**
 * A1-style addresses: parsing, formatting and the little arithmetic the pane and the two sheet
 * hosts need (size, offset, intersection, the area a spilled result covers).
 *
 * Rows and columns are numbered from 1, as the sheet shows them (A1 is row 1, column 1).
 * Accepted forms, each with an optional sheet name in front (`Data!`, `'Roast log'!`, an
 * apostrophe inside a quoted name written twice) and `$` markers, which are ignored:
 *
 *   B2          one cell
 *   B1:L121     a rectangle (corners in any order)
 *   B:L         whole columns      (rows 1 to MAX_ROWS)
 *   3:5         whole rows         (columns 1 to MAX_COLUMNS)
 *
 * Anything else throws a SheetHostError whose message says what an address looks like.
 */
import { SheetHostError } from "./sheetHost";

/** Rows and columns of a worksheet (Excel's limits). */
export const MAX_ROWS = 1048576;
export const MAX_COLUMNS = 16384;

export interface CellPosition {
  row: number;
  column: number;
}

export interface RangeAddress {
  /** The sheet name as written (unquoted), or null when the address names no sheet. */
  sheet: string | null;
  top: number;
  left: number;
  bottom: number;
  right: number;
  /** Set for whole-column (`B:L`) and whole-row (`3:5`) references. */
  whole?: "columns" | "rows";
}

/**
 * Column letters → number: A → 1, Z → 26, AA → 27, XFD → 16384. Throws for anything that is
 * not 1 to 3 letters within the sheet's width.
 */
export function columnNumber(letters: string): number {
  if (!/^[A-Za-z]{1,3}$/.test(letters)) throw new SheetHostError(`'${letters}' is not a column: columns are letters from A to XFD`);
  let n = 0;
  for (const ch of letters.toUpperCase()) n = n * 26 + (ch.charCodeAt(0) - 64);
  if (n > MAX_COLUMNS) throw new SheetHostError(`column ${letters} is past the last column (XFD)`);
  return n;
}

/** Column number → letters: 1 → A, 27 → AA, 16384 → XFD. */
export function columnLetters(column: number): string {
  if (!Number.isInteger(column) || column < 1 || column > MAX_COLUMNS) {
    throw new SheetHostError(`column ${column} is outside 1 to ${MAX_COLUMNS}`);
  }
  let n = column;
  let out = "";
  while (n > 0) {
    const rest = (n - 1) % 26;
    out = String.fromCharCode(65 + rest) + out;
    n = Math.floor((n - 1) / 26);
  }
  return out;
}

/** "B2" for row 2, column 2. */
export function cellName(row: number, column: number): string {
  if (!Number.isInteger(row) || row < 1 || row > MAX_ROWS) throw new SheetHostError(`row ${row} is outside 1 to ${MAX_ROWS}`);
  return `${columnLetters(column)}${row}`;
}

/** True when a sheet name must be quoted in an address (spaces, punctuation, names that read as a cell). */
export function needsQuotes(name: string): boolean {
  if (!/^[A-Za-z_\u00C0-\uFFFF][A-Za-z0-9_.\u00C0-\uFFFF]*$/.test(name)) return true;
  // Names Excel would read as a reference: A1-style cells, R1C1-style cells, R or C alone.
  if (/^[A-Za-z]{1,3}\d+$/.test(name)) return true;
  if (/^[Rr]\d*([Cc]\d*)?$/.test(name) || /^[Cc]\d*$/.test(name)) return true;
  return false;
}

/** The sheet name as it appears before `!`: quoted (apostrophes doubled) when needed. */
export function quoteSheetName(name: string): string {
  return needsQuotes(name) ? `'${name.replace(/'/g, "''")}'` : name;
}

/** Splits `Sheet!A1` into its sheet name (unquoted) and the rest; sheet null when absent. */
export function splitSheet(text: string): { sheet: string | null; rest: string } {
  const trimmed = text.trim();
  if (trimmed.startsWith("'")) {
    let i = 1;
    let name = "";
    for (;;) {
      if (i >= trimmed.length) throw new SheetHostError(`'${text}' has a sheet name without its closing apostrophe`);
      const ch = trimmed[i];
      if (ch === "'") {
        if (trimmed[i + 1] === "'") {
          name += "'";
          i += 2;
          continue;
        }
        break;
      }
      name += ch;
      i++;
    }
    if (trimmed[i + 1] !== "!") throw new SheetHostError(`'${text}' needs a '!' after the sheet name`);
    if (name === "") throw new SheetHostError(`'${text}' has an empty sheet name`);
    return { sheet: name, rest: trimmed.slice(i + 2) };
  }
  const bang = trimmed.lastIndexOf("!");
  if (bang < 0) return { sheet: null, rest: trimmed };
  const name = trimmed.slice(0, bang);
  if (name === "" || /[\s'[\]*?/\\:!]/.test(name)) {
    throw new SheetHostError(`'${text}' has a sheet name that needs apostrophes around it, like 'My data'!A1`);
  }
  return { sheet: name, rest: trimmed.slice(bang + 1) };
}

const CELL = /^\$?([A-Za-z]{1,3})\$?(\d{1,7})$/;
const COLUMN = /^\$?([A-Za-z]{1,3})$/;
const ROW = /^\$?(\d{1,7})$/;

function badAddress(text: string): SheetHostError {
  return new SheetHostError(`'${text}' is not a range address: write one like B2, B1:L121 or 'Roast log'!M1:M121`);
}

function rowNumber(digits: string, text: string): number {
  const n = Number(digits);
  if (!(n >= 1 && n <= MAX_ROWS)) throw badAddress(text);
  return n;
}

/**
 * Parses an A1 address (forms in the file comment). Example: parseAddress("'Roast log'!$B$1:L121")
 * → { sheet: "Roast log", top: 1, left: 2, bottom: 121, right: 12 }.
 */
export function parseAddress(text: string): RangeAddress {
  const { sheet, rest } = splitSheet(text);
  const parts = rest.split(":");
  if (parts.length === 1) {
    const m = CELL.exec(parts[0]);
    if (!m) throw badAddress(text);
    const row = rowNumber(m[2], text);
    const column = columnNumber(m[1]);
    return { sheet, top: row, left: column, bottom: row, right: column };
  }
  if (parts.length !== 2) throw badAddress(text);
  const [a, b] = parts;
  const ca = CELL.exec(a);
  const cb = CELL.exec(b);
  if (ca && cb) {
    const r1 = rowNumber(ca[2], text);
    const r2 = rowNumber(cb[2], text);
    const c1 = columnNumber(ca[1]);
    const c2 = columnNumber(cb[1]);
    return { sheet, top: Math.min(r1, r2), left: Math.min(c1, c2), bottom: Math.max(r1, r2), right: Math.max(c1, c2) };
  }
  const wa = COLUMN.exec(a);
  const wb = COLUMN.exec(b);
  if (wa && wb) {
    const c1 = columnNumber(wa[1]);
    const c2 = columnNumber(wb[1]);
    return { sheet, top: 1, left: Math.min(c1, c2), bottom: MAX_ROWS, right: Math.max(c1, c2), whole: "columns" };
  }
  const ra = ROW.exec(a);
  const rb = ROW.exec(b);
  if (ra && rb) {
    const r1 = rowNumber(ra[1], text);
    const r2 = rowNumber(rb[1], text);
    return { sheet, top: Math.min(r1, r2), left: 1, bottom: Math.max(r1, r2), right: MAX_COLUMNS, whole: "rows" };
  }
  throw badAddress(text);
}

/**
 * Formats a range: with its sheet (quoted when needed) unless `withSheet` is false; one cell as
 * "B2", whole columns as "B:L", whole rows as "3:5".
 */
export function formatAddress(range: RangeAddress, withSheet = true): string {
  let body: string;
  if (range.whole === "columns") body = `${columnLetters(range.left)}:${columnLetters(range.right)}`;
  else if (range.whole === "rows") body = `${range.top}:${range.bottom}`;
  else if (range.top === range.bottom && range.left === range.right) body = cellName(range.top, range.left);
  else body = `${cellName(range.top, range.left)}:${cellName(range.bottom, range.right)}`;
  return withSheet && range.sheet !== null ? `${quoteSheetName(range.sheet)}!${body}` : body;
}

/** A range from corners (numbers from 1), on `sheet`. */
export function rangeOf(sheet: string | null, top: number, left: number, bottom = top, right = left): RangeAddress {
  return { sheet, top: Math.min(top, bottom), left: Math.min(left, right), bottom: Math.max(top, bottom), right: Math.max(left, right) };
}

/** Rows and columns a range covers. */
export function rangeSize(range: RangeAddress): { rows: number; columns: number } {
  return { rows: range.bottom - range.top + 1, columns: range.right - range.left + 1 };
}

/** The range moved by `rows` down and `columns` right (negative: up, left). Throws if it leaves the sheet. */
export function offsetRange(range: RangeAddress, rows: number, columns: number): RangeAddress {
  const moved: RangeAddress = {
    sheet: range.sheet,
    top: range.top + rows,
    left: range.left + columns,
    bottom: range.bottom + rows,
    right: range.right + columns,
  };
  if (moved.top < 1 || moved.left < 1 || moved.bottom > MAX_ROWS || moved.right > MAX_COLUMNS) {
    throw new SheetHostError(`moving ${formatAddress(range)} by ${rows} rows and ${columns} columns leaves the sheet`);
  }
  return moved;
}

/**
 * The cells a result of `rows` × `columns` covers when it spills from `anchor` (its top-left
 * cell): anchor included. Throws when the result would run past the sheet's edge.
 * Example: spillArea(parseAddress("O1"), 14, 2) → O1:P14.
 */
export function spillArea(anchor: RangeAddress | CellPosition, rows: number, columns: number): RangeAddress {
  const sheet = "sheet" in anchor ? anchor.sheet : null;
  const top = "top" in anchor ? anchor.top : anchor.row;
  const left = "left" in anchor ? anchor.left : anchor.column;
  if (rows < 1 || columns < 1) throw new SheetHostError("a result must have at least one row and one column");
  const bottom = top + rows - 1;
  const right = left + columns - 1;
  if (bottom > MAX_ROWS || right > MAX_COLUMNS) {
    throw new SheetHostError(`a result of ${rows} × ${columns} cells at ${cellName(top, left)} runs past the edge of the sheet`);
  }
  return { sheet, top, left, bottom, right };
}

/** Sheet names compare ignoring case, as Excel does. */
export function sameSheetName(a: string | null, b: string | null): boolean {
  if (a === null || b === null) return a === b;
  return a.toLocaleLowerCase() === b.toLocaleLowerCase();
}

/** The overlap of two ranges (sheets ignored; the result takes `a`'s sheet), or null. */
export function intersect(a: RangeAddress, b: RangeAddress): RangeAddress | null {
  const top = Math.max(a.top, b.top);
  const left = Math.max(a.left, b.left);
  const bottom = Math.min(a.bottom, b.bottom);
  const right = Math.min(a.right, b.right);
  if (top > bottom || left > right) return null;
  return { sheet: a.sheet, top, left, bottom, right };
}

/** True when the cell lies inside the range (sheets ignored). */
export function contains(range: RangeAddress, row: number, column: number): boolean {
  return row >= range.top && row <= range.bottom && column >= range.left && column <= range.right;
}

/**
 * Splits a list of areas ("A1:B2, D4" or "Sheet1!A1,Sheet1!C3") at commas outside quoted
 * sheet names. Empty items are dropped.
 */
export function splitAreas(text: string): string[] {
  const out: string[] = [];
  let current = "";
  let quoted = false;
  for (const ch of text) {
    if (ch === "'") quoted = !quoted;
    if (ch === "," && !quoted) {
      if (current.trim() !== "") out.push(current.trim());
      current = "";
      continue;
    }
    current += ch;
  }
  if (current.trim() !== "") out.push(current.trim());
  return out;
}

/** Longest name Excel allows for a worksheet. */
export const MAX_SHEET_NAME = 31;

/** A worksheet name Excel accepts: no : \ / ? * [ ], no apostrophe at either end, at most 31 characters. */
export function cleanSheetName(name: string): string {
  let clean = name.replace(/[:\\/?*[\]]/g, " ").replace(/\s+/g, " ").trim().replace(/^'+|'+$/g, "");
  if (clean === "") clean = "Report";
  return clean.slice(0, MAX_SHEET_NAME).trim();
}

/** The n-th candidate name: the base, then "base 2", "base 3", … (the base cut so the whole fits 31 characters). */
export function numberedName(base: string, n: number): string {
  if (n <= 1) return base;
  const suffix = ` ${n}`;
  return `${base.slice(0, MAX_SHEET_NAME - suffix.length).trimEnd()}${suffix}`;
}
