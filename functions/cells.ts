/**
 * What a worksheet cell means to Shrinkwise: the written policy for blanks, text and error
 * cells, and the classifier every cell function uses to apply it.
 *
 * Excel passes `any[][]` ranges as rows of plain values. The same empty cell can arrive as
 * `null`, `""` or `0` depending on the host, and an error cell (with
 * `allowErrorForDataTypeAny`) as a `CustomFunctions.Error`, an object carrying an error code,
 * or the error's text. `classifyCell` reduces every shape to one of five kinds.
 *
 * ## Policy
 *
 * | cell arrives as                              | kind    | target           | number column     | text column         | fold / weights column | new rows (PREDICT, APPLY)             | settings value        | SCORE        |
 * |----------------------------------------------|---------|------------------|-------------------|---------------------|-----------------------|---------------------------------------|-----------------------|--------------|
 * | `null`, `undefined`, `""`, only spaces        | blank   | row skipped      | row skipped       | row skipped         | row skipped           | all blank: `""`; else `#N/A` cell     | setting not given     | pair skipped |
 * | `0` in a column named by `zero is missing`    | blank   | row skipped      | row skipped       | row skipped         | row skipped           | as blank                              | –                     | –            |
 * | a finite number (dates are serial numbers)   | number  | used             | used              | error (mixed)       | label / weight        | used                                  | number                | used         |
 * | `TRUE` / `FALSE`                              | boolean | 1 / 0            | 1 / 0             | error (mixed)       | label / weight 1 / 0  | 1 / 0                                 | yes / no              | 1 / 0        |
 * | text that is a number (see below)            | text    | the number†      | the number†       | –  (column is numbers) | label / weight†    | the number / level                    | read as the value     | error*       |
 * | other text (not an error text)               | text    | a class label‡   | error (mixed)     | a level: indicators | label / error         | level (unseen: error) / error         | read as the value     | error*       |
 * | an error value in any shape (see below)      | error   | row skipped      | row skipped       | row skipped         | row skipped           | `#N/A` cell for that row              | error                 | pair skipped |
 * | `NaN`, `±Infinity`, any other object         | error   | row skipped      | row skipped       | row skipped         | row skipped           | `#N/A` cell for that row              | error                 | pair skipped |
 *
 * - "row skipped": the row is left out of the fit and counted (SHRINK.CHOICE shows
 *   "rows skipped"); a row blank in every cell (target and all predictors) is padding and is
 *   not counted. An error cell never turns into a number.
 * - Texts are kept in Unicode NFC (an "é" typed as e + combining accent is the same text), and
 *   compared (textKey) ignoring case and spacing.
 * - †Numbers stored as text: a text that reads as a number under engine/numberText.ts ('.'
 *   decimal point, optional ',' between groups of three digits, sign, exponent, spaces around;
 *   the same whatever the workbook's locale) counts as that number in number columns, the target,
 *   the weights column and new rows; SHRINK.CHOICE's notes name each column read that way.
 * - "error (mixed)": a column is a number column when at least half of its values look like
 *   numbers (numbers, booleans, numbers stored as text, or numbers written with a decimal comma),
 *   a date column (an error: convert to real dates) when at least half are dates written as text,
 *   otherwise a text column; a cell of the other kind is an error naming the column, the row and
 *   the value ("predictors column 'Moisture' row 7 has text 'n/a' in a number column: fix it or
 *   clear the cell"). A text that looks like a number in another convention or like a date gets a
 *   hint saying so.
 * - Text columns become indicator (0/1) columns, one per level except the reference level,
 *   the most frequent level (ties: the first to appear). Levels match ignoring case and
 *   surrounding spaces.
 * - ‡The target: two distinct labels (or TRUE/FALSE, or 0/1) make a yes/no outcome (setting
 *   `outcome`, default auto; engine/outcome.ts); a stray text among numbers is an error naming the
 *   row ("target row 10 has text 'lots': the target must be numbers …"), a stray number among
 *   labels too; three or more labels are an error listing them. TRUE/FALSE among numbers are 1/0.
 * - *SCORE: a first cell of text that isn't a number, on either side, is a header and is
 *   dropped (on the actual side, unless it appears again below: then it is a class label);
 *   actual values may be two class labels (yes/no scoring); any other text is an error (numbers
 *   stored as text get the hint, not a reading).
 * - Blanks arriving as 0: the setting `zero is missing = Moisture, Density` (or `= all`)
 *   treats the zeros of those columns (the target may be named too) as blank cells.
 *
 * Error shapes recognized: `CustomFunctions.Error` instances; any object whose `code`,
 * `type`, `errorType` or `basicValue` is an error text ("#N/A") or an error name
 * ("notAvailable", "NotAvailable", "Div0"); Excel's `{ type: "Error", ... }` cell values;
 * JavaScript `Error` objects; and the texts "#N/A", "#DIV/0!", "#VALUE!", "#REF!", "#NAME?",
 * "#NUM!", "#NULL!", "#SPILL!", "#CALC!", "#GETTING_DATA", "#BUSY!", "#FIELD!", "#CONNECT!",
 * "#BLOCKED!", "#UNKNOWN!", "#PYTHON!", "#EXTERNAL!" (ignoring case and surrounding spaces; a
 * cell whose text is exactly an error's text is read as that error). Cell values wrapped as
 * `{ type: "Double" | "String" | "Boolean", basicValue }` are unwrapped first.
 */

import { numberFromText, numberTextHint } from "../engine/numberText";

export type CellKind = "blank" | "number" | "boolean" | "text" | "error";

export type Cell =
  | { kind: "blank" }
  | { kind: "number"; value: number }
  | { kind: "boolean"; value: boolean }
  | { kind: "text"; value: string }
  | { kind: "error"; text: string };

/** Error texts Excel shows, upper case. */
const ERROR_TEXTS = [
  "#NULL!",
  "#DIV/0!",
  "#VALUE!",
  "#REF!",
  "#NAME?",
  "#NUM!",
  "#N/A",
  "#GETTING_DATA",
  "#SPILL!",
  "#CALC!",
  "#FIELD!",
  "#BUSY!",
  "#CONNECT!",
  "#BLOCKED!",
  "#UNKNOWN!",
  "#PYTHON!",
  "#EXTERNAL!",
];
const ERROR_TEXT_SET = new Set(ERROR_TEXTS);

/** Error names as they appear in the custom-functions ErrorCode keys and Excel's cell-value error types, lower case → text. */
const ERROR_NAMES: Record<string, string> = {
  invalidvalue: "#VALUE!",
  value: "#VALUE!",
  notavailable: "#N/A",
  divisionbyzero: "#DIV/0!",
  div0: "#DIV/0!",
  invalidnumber: "#NUM!",
  num: "#NUM!",
  nullreference: "#NULL!",
  null: "#NULL!",
  invalidname: "#NAME?",
  name: "#NAME?",
  invalidreference: "#REF!",
  ref: "#REF!",
  spill: "#SPILL!",
  calc: "#CALC!",
  busy: "#BUSY!",
  gettingdata: "#GETTING_DATA",
  field: "#FIELD!",
  connect: "#CONNECT!",
  blocked: "#BLOCKED!",
  unknown: "#UNKNOWN!",
  python: "#PYTHON!",
  external: "#EXTERNAL!",
};

/** The error text when `text` is exactly an Excel error's text (any case, spaces around), else null. */
export function errorText(text: string): string | null {
  const upper = text.trim().toUpperCase();
  return ERROR_TEXT_SET.has(upper) ? upper : null;
}

function errorFromField(value: unknown): string | null {
  if (typeof value !== "string") return null;
  return errorText(value) ?? ERROR_NAMES[value.trim().toLowerCase()] ?? null;
}

const BLANK: Cell = { kind: "blank" };

/**
 * Classifies one raw cell value (see the policy above). Cost O(1).
 * Example: classifyCell(" #n/a ") → { kind: "error", text: "#N/A" }; classifyCell("") → blank.
 */
export function classifyCell(raw: unknown): Cell {
  if (raw === null || raw === undefined) return BLANK;
  if (typeof raw === "number") {
    return Number.isFinite(raw) ? { kind: "number", value: raw } : { kind: "error", text: "#NUM!" };
  }
  if (typeof raw === "boolean") return { kind: "boolean", value: raw };
  if (typeof raw === "string") {
    if (raw.trim() === "") return BLANK;
    const error = errorText(raw);
    // NFC: a name typed as "é" and one pasted as "e" + combining accent are the same text.
    return error ? { kind: "error", text: error } : { kind: "text", value: raw.trim().normalize("NFC") };
  }
  if (typeof raw === "object") return classifyObject(raw as Record<string, unknown>);
  return { kind: "error", text: "#VALUE!" };
}

function classifyObject(value: Record<string, unknown>): Cell {
  const customFunctions = (globalThis as { CustomFunctions?: { Error?: unknown } }).CustomFunctions;
  const ErrorClass = customFunctions?.Error;
  if (typeof ErrorClass === "function" && value instanceof (ErrorClass as new (...args: never[]) => object)) {
    return { kind: "error", text: errorFromField(value.code) ?? "#VALUE!" };
  }
  // Excel cell values ({ type: "Double", basicValue: 5 }, { type: "Error", errorType: "Div0" }).
  if (typeof value.type === "string" && "basicValue" in value && value.type.toLowerCase() !== "error") {
    const inner = value.basicValue;
    if (inner === null || typeof inner !== "object") return classifyCell(inner);
  }
  if (typeof value.type === "string" && value.type.toLowerCase() === "error") {
    return { kind: "error", text: errorFromField(value.basicValue) ?? errorFromField(value.errorType) ?? "#VALUE!" };
  }
  for (const field of ["code", "errorType", "type", "basicValue"]) {
    const text = errorFromField(value[field]);
    if (text) return { kind: "error", text };
  }
  if (value instanceof Error) return { kind: "error", text: "#VALUE!" };
  // Anything else (an unknown object, an array inside a cell) can't be read as a value.
  return { kind: "error", text: "#VALUE!" };
}

/** True for cells that count as numbers (numbers and booleans). */
export function isNumeric(cell: Cell): cell is { kind: "number"; value: number } | { kind: "boolean"; value: boolean } {
  return cell.kind === "number" || cell.kind === "boolean";
}

/** The number of a number or boolean cell (TRUE = 1, FALSE = 0). */
export function numericValue(cell: { kind: "number"; value: number } | { kind: "boolean"; value: boolean }): number {
  return cell.kind === "number" ? cell.value : cell.value ? 1 : 0;
}

/** How a cell is named in messages: 'text', 5, TRUE, #N/A, blank. */
export function describeCell(cell: Cell): string {
  switch (cell.kind) {
    case "blank":
      return "blank";
    case "number":
      return String(cell.value);
    case "boolean":
      return cell.value ? "TRUE" : "FALSE";
    case "text":
      return `'${cell.value}'`;
    case "error":
      return cell.text;
  }
}

const NUMBER_PATTERN = /^[+-]?(\d+\.?\d*|\.\d+)([eE][+-]?\d+)?$/;

/** Reads a plain decimal number ("12", "-0.5", "1e-3"); null for anything else. */
export function parseNumberText(text: string): number | null {
  const trimmed = text.trim();
  if (!NUMBER_PATTERN.test(trimmed)) return null;
  const value = Number(trimmed);
  return Number.isFinite(value) ? value : null;
}

/**
 * A parenthesized hint for a text where a number belongs: " (a number stored as text?)" when
 * it reads as one (engine/numberText.ts), a decimal-comma or date hint when it looks like one in
 * another convention, else "".
 */
export function storedAsTextHint(text: string): string {
  return numberTextHint(text);
}

/** The number a cell stands for: a number, TRUE/FALSE as 1/0, or a number stored as text (engine/numberText.ts); else null. */
export function numberOfCell(cell: Cell): number | null {
  if (cell.kind === "number") return cell.value;
  if (cell.kind === "boolean") return cell.value ? 1 : 0;
  if (cell.kind === "text") return numberFromText(cell.value);
  return null;
}

/**
 * Key under which text levels and names are compared: Unicode NFC, trimmed, lower case, inner
 * spaces collapsed.
 */
export function textKey(text: string): string {
  return text.normalize("NFC").trim().replace(/\s+/g, " ").toLowerCase();
}

/**
 * A range argument as rows of raw cells. A scalar becomes a 1×1 range, a flat array one
 * column, `null`/`undefined` an empty range; short rows are padded with blanks. A range that
 * already is rows of equal length (what Excel passes) is returned as it is, not copied: callers
 * only read it.
 */
export function toGrid(value: unknown): unknown[][] {
  if (value === null || value === undefined) return [];
  if (!Array.isArray(value)) return [[value]];
  if (value.length === 0) return [];
  if (isRectangular(value)) return value as unknown[][];
  const rows: unknown[][] = value.map((row) => (Array.isArray(row) ? row : [row]));
  let width = 0;
  for (const row of rows) width = Math.max(width, row.length);
  return rows.map((row) => (row.length === width ? row : [...row, ...new Array<unknown>(width - row.length).fill(null)]));
}

function isRectangular(value: unknown[]): boolean {
  const first = value[0];
  if (!Array.isArray(first)) return false;
  for (let i = 1; i < value.length; i++) {
    const row = value[i];
    if (!Array.isArray(row) || row.length !== first.length) return false;
  }
  return true;
}

/** True when every cell of the grid is blank. */
export function isBlankGrid(grid: readonly (readonly unknown[])[]): boolean {
  for (const row of grid) for (const raw of row) if (classifyCell(raw).kind !== "blank") return false;
  return true;
}
