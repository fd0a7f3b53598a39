/**
 * The stand-in workbook: an in-memory workbook holding the demo data, for the standalone
 * preview and the browser tests, behind the same SheetHost interface as Excel.
 *
 * - `StandInWorkbook`: sheets, each a sparse map of cells ({ value, formula, … }), in tab order.
 * - `createDemoWorkbook()`: the sheet "Roast log", laid out as README and the preview describe:
 *   A1:M121 the header row and the 120 demo batches (roast_id in A, predictors B:L, score M),
 *   A124:L132 the new batches (header row 124, eight batches below it), nothing else; and the
 *   sheet "Quality check" (a yes/no target): A1:N301 the header row and 300 batches (batch_id in
 *   A, predictors B:M, check "pass"/"fail" in N), A304:M312 eight new batches.
 * - `StandInSheetHost`: the SheetHost. Formulas written to it are computed: a formula
 *   `=SHRINK.NAME(arg, …)` goes through functions/api.ts with the shared fit runner, exactly as
 *   the cells in Excel, and its result spills into the cells below and to the right.
 *
 * Formulas the stand-in computes (anything else shows #NAME? with a message):
 *   =SHRINK.COEFS|CHOICE|PREDICT|APPLY|PATH|CVCURVE|KEPT|SCORE|BASELINE(arg, …), any case, where
 *   each argument is
 *     a range          B1:L121, $M$1:$M$121, 'Roast log'!M1:M121, whole columns B:L (cut to the
 *                      sheet's last filled row), whole rows 1:5;
 *     a spill ref      O1# (the whole result spilled from O1);
 *     a number         5, -0.5, 1e-3;   text  "folds=5; seed=7" ("" inside for a quote);
 *     TRUE / FALSE;    an array constant {0, 0.5, 1} or {"folds", 5; "seed", 7};
 *     a nested call    SHRINK.PREDICT(…) (its result is passed as an array);
 *     left out         SHRINK.COEFS(M1:M121, B1:L121, , "folds=5") (arrives as null, as in Excel).
 * Blank cells arrive as null and error cells as their text (#N/A), as Excel on the web passes them.
 *
 * Spilling: a result of r × c cells fills r × c cells from the formula's cell. If any of those
 * cells (but the formula's own) holds something, the formula shows #SPILL! with a message and
 * spills nothing; it spills again once the cells are cleared. A function's error shows its code
 * (#VALUE!, #N/A, …) with the message; error cells inside a result show theirs. While a fit runs
 * the formula's cell shows #BUSY!. Editing a cell that a formula reads computes it again, as
 * Excel's recalculation does; so does a change to a spilled result another formula reads (O1#).
 *
 * Events: `subscribe` tells the view about changed cells, selection and sheets; `watch` (the
 * SheetHost contract) fires on edits (setCell, setCells, writeFormulas) to watched cells, not on
 * recalculated results, as Excel's worksheet change event does.
 */
import * as api from "../../functions/api";
import type { Spill } from "../../functions/api";
import { sharedRunner } from "../../functions/functions";
import type { FitRunner } from "../../functions/runner";
import { roasteryColumns, roasteryNewRows, roasteryRows } from "../../addin/demo/roasteryData";
import { qualityColumns, qualityNewRows, qualityRows } from "../../addin/demo/qualityData";
import {
  CellPosition,
  cellName,
  cleanSheetName,
  formatAddress,
  intersect,
  numberedName,
  parseAddress,
  RangeAddress,
  rangeOf,
  rangeSize,
  sameSheetName,
  spillArea,
} from "../host/address";
import { blockArea, blockRows } from "../report/report";
import type { CellValue, ReportSheet, SheetHost } from "../host/sheetHost";
import { SheetHostError } from "../host/sheetHost";

// ---------------------------------------------------------------------------------------------
// The workbook

export interface StandInCell {
  /** What the cell shows: a number, text, TRUE/FALSE, an error's text (#VALUE!), or "" (blank). */
  value: CellValue;
  /** The formula typed in this cell (its spill anchor), e.g. "=SHRINK.COEFS(M1:M121, B1:L121)". */
  formula?: string;
  /** Set on cells filled by another cell's spilled result: that cell. */
  spillFrom?: CellPosition;
  /** The message of an error value. */
  message?: string;
  /** Number format (report sheets), e.g. "0.0000". */
  format?: string;
  /** Drawn bold (report headers). */
  bold?: boolean;
}

/** A chart on a stand-in sheet, as a description (the view draws it from the cells of `source`). */
export interface StandInChart {
  title: string;
  /** The data on this sheet (no sheet name): first column x, one line per further column, header row first. */
  source: string;
  logX: boolean;
  xTitle: string;
  yTitle: string;
  /** Top-left cell of its place on the sheet. */
  at: string;
}

function cellKey(row: number, column: number): number {
  return (row - 1) * 16384 + (column - 1);
}

export class StandInSheet {
  readonly name: string;
  readonly charts: StandInChart[] = [];
  private readonly cells = new Map<number, StandInCell>();
  private lastRow = 0;
  private lastColumn = 0;
  private extentStale = false;

  constructor(name: string) {
    this.name = name;
  }

  get(row: number, column: number): StandInCell | undefined {
    return this.cells.get(cellKey(row, column));
  }

  /** Puts a cell (undefined or a blank value without formula clears it). */
  set(row: number, column: number, cell: StandInCell | undefined): void {
    const key = cellKey(row, column);
    if (!cell || (cell.value === "" && cell.formula === undefined && cell.spillFrom === undefined && !cell.format && !cell.bold)) {
      if (this.cells.delete(key)) this.extentStale = true;
      return;
    }
    this.cells.set(key, cell);
    if (row > this.lastRow) this.lastRow = row;
    if (column > this.lastColumn) this.lastColumn = column;
  }

  /** True when the cell holds a value or a formula, or belongs to a spilled result (even a blank-looking cell of one). */
  isFilled(row: number, column: number): boolean {
    const cell = this.get(row, column);
    return cell !== undefined && (cell.value !== "" || cell.formula !== undefined || cell.spillFrom !== undefined);
  }

  /** The last row and column holding anything (0 × 0 for an empty sheet). */
  extent(): { rows: number; columns: number } {
    if (this.extentStale) {
      this.lastRow = 0;
      this.lastColumn = 0;
      for (const key of this.cells.keys()) {
        this.lastRow = Math.max(this.lastRow, Math.floor(key / 16384) + 1);
        this.lastColumn = Math.max(this.lastColumn, (key % 16384) + 1);
      }
      this.extentStale = false;
    }
    return { rows: this.lastRow, columns: this.lastColumn };
  }

  /** Every cell held, as [row, column, cell]. */
  *entries(): IterableIterator<[number, number, StandInCell]> {
    for (const [key, cell] of this.cells) yield [Math.floor(key / 16384) + 1, (key % 16384) + 1, cell];
  }
}

export class StandInWorkbook {
  private readonly list: StandInSheet[] = [];
  private active = "";

  constructor(sheetNames: readonly string[] = ["Sheet1"]) {
    for (const name of sheetNames) this.addSheet(name);
  }

  /** The sheets in tab order. */
  sheets(): readonly StandInSheet[] {
    return this.list;
  }

  /** The sheet of that name (ignoring case), or undefined. */
  sheet(name: string): StandInSheet | undefined {
    return this.list.find((sheet) => sameSheetName(sheet.name, name));
  }

  addSheet(name: string): StandInSheet {
    if (this.sheet(name)) throw new SheetHostError(`there is already a sheet named '${name}'`);
    const sheet = new StandInSheet(name);
    this.list.push(sheet);
    if (this.active === "") this.active = name;
    return sheet;
  }

  get activeSheet(): StandInSheet {
    const sheet = this.sheet(this.active);
    if (!sheet) throw new SheetHostError("the workbook has no sheets");
    return sheet;
  }

  activate(name: string): void {
    const sheet = this.sheet(name);
    if (!sheet) throw new SheetHostError(`there is no sheet named '${name}'`);
    this.active = sheet.name;
  }

  /** The first of "name", "name 2", "name 3", … not yet taken (cleaned to a valid sheet name). */
  uniqueName(wanted: string): string {
    const base = cleanSheetName(wanted);
    for (let n = 1; ; n++) {
      const name = numberedName(base, n);
      if (!this.sheet(name)) return name;
    }
  }
}

/** Name of the demo sheet. */
export const DEMO_SHEET = "Roast log";

/** Where the demo data sit on the demo sheet (the layout README and the preview use). */
export const DEMO_RANGES = {
  data: "A1:M121",
  target: "M1:M121",
  predictors: "B1:L121",
  newBatches: "A124:L132",
  newRows: "B124:L132",
} as const;

/** Name of the second demo sheet: batches that passed or failed the quality check (a yes/no target). */
export const QUALITY_SHEET = "Quality check";

/** Where the quality-check data sit on their sheet (addin/demo/qualityData.ts: 300 batches, 8 new ones). */
export const QUALITY_RANGES = {
  data: "A1:N301",
  target: "N1:N301",
  predictors: "B1:M301",
  newBatches: "A304:M312",
  newRows: "B304:M312",
} as const;

/**
 * A workbook with the demo sheet "Roast log" (layout in DEMO_RANGES), active, and the sheet
 * "Quality check" (layout in QUALITY_RANGES): the same roastery's batches and whether each
 * passed its quality check, for a yes/no fit.
 */
export function createDemoWorkbook(): StandInWorkbook {
  const workbook = new StandInWorkbook([DEMO_SHEET, QUALITY_SHEET]);
  const fill = (sheet: StandInSheet, row: number, values: readonly (string | number | null)[]): void => {
    values.forEach((value, j) => {
      if (value !== null && value !== "") sheet.set(row, j + 1, { value });
    });
  };
  const roast = workbook.sheet(DEMO_SHEET) as StandInSheet;
  fill(roast, 1, roasteryColumns);
  roasteryRows.forEach((row, i) => fill(roast, 2 + i, row));
  fill(roast, 124, roasteryColumns.slice(0, roasteryColumns.length - 1));
  roasteryNewRows.forEach((row, i) => fill(roast, 125 + i, row));
  const quality = workbook.sheet(QUALITY_SHEET) as StandInSheet;
  fill(quality, 1, qualityColumns);
  qualityRows.forEach((row, i) => fill(quality, 2 + i, row));
  fill(quality, 304, qualityColumns.slice(0, qualityColumns.length - 1));
  qualityNewRows.forEach((row, i) => fill(quality, 305 + i, row));
  return workbook;
}

// ---------------------------------------------------------------------------------------------
// Formulas

/** One parsed argument (or a nested call). */
export type FormulaNode =
  | { kind: "call"; name: string; args: (FormulaNode | null)[] }
  | { kind: "number"; value: number }
  | { kind: "text"; value: string }
  | { kind: "boolean"; value: boolean }
  | { kind: "array"; rows: CellValue[][] }
  | { kind: "range"; range: RangeAddress; spill: boolean };

/** A formula the stand-in can't read or compute: shows `code` with the message. */
export class FormulaError extends Error {
  readonly code: string;
  constructor(code: string, message: string) {
    super(message);
    this.name = "FormulaError";
    this.code = code;
  }
}

/** The SHRINK functions: argument counts, what they are called, and how to run them. */
interface FunctionSpec {
  min: number;
  max: number;
  signature: string;
  run(runner: FitRunner, args: unknown[]): Promise<Spill>;
}

const FUNCTION_SPECS: Record<string, FunctionSpec> = {
  COEFS: { min: 2, max: 4, signature: "target, predictors, [mixes], [settings]", run: (r, a) => api.coefs(r, a[0], a[1], a[2] ?? null, a[3] ?? null) },
  CHOICE: { min: 2, max: 4, signature: "target, predictors, [mixes], [settings]", run: (r, a) => api.choice(r, a[0], a[1], a[2] ?? null, a[3] ?? null) },
  PREDICT: {
    min: 3,
    max: 5,
    signature: "target, predictors, new_rows, [mixes], [settings]",
    run: (r, a) => api.predict(r, a[0], a[1], a[2], a[3] ?? null, a[4] ?? null),
  },
  APPLY: { min: 2, max: 2, signature: "coefficient_table, new_rows", run: (_r, a) => api.apply(a[0], a[1]) },
  PATH: { min: 2, max: 4, signature: "target, predictors, [mix], [settings]", run: (r, a) => api.path(r, a[0], a[1], scalarOf(a[2]), a[3] ?? null) },
  CVCURVE: { min: 2, max: 4, signature: "target, predictors, [mixes], [settings]", run: (r, a) => api.cvcurve(r, a[0], a[1], a[2] ?? null, a[3] ?? null) },
  KEPT: { min: 2, max: 4, signature: "target, predictors, [mixes], [settings]", run: (r, a) => api.kept(r, a[0], a[1], a[2] ?? null, a[3] ?? null) },
  SCORE: { min: 2, max: 2, signature: "actual, predicted", run: (_r, a) => api.score(a[0], a[1]) },
  BASELINE: { min: 2, max: 2, signature: "target, predictors", run: (r, a) => api.baseline(r, a[0], a[1]) },
};

/** PATH's mix is one value: a 1 × 1 range or array arrives as that value. */
function scalarOf(value: unknown): unknown {
  if (value === undefined) return null;
  if (Array.isArray(value) && value.length === 1 && Array.isArray(value[0]) && value[0].length === 1) return value[0][0];
  return value;
}

const NUMBER = /^[+-]?(\d+\.?\d*|\.\d+)([eE][+-]?\d+)?/;
const REFERENCE = /^\$?[A-Za-z]{0,3}\$?\d*(:\$?[A-Za-z]{0,3}\$?\d*)?#?/;

/**
 * Parses `=SHRINK.NAME(arg, …)` (grammar in the file comment). Throws FormulaError: #NAME? for
 * a formula that isn't a SHRINK call, #VALUE! for a malformed one or a wrong argument count.
 * Example: parseFormula("=SHRINK.COEFS(M1:M121, B1:L121, , \"folds=5\")") → a COEFS call with a
 * null third argument.
 */
export function parseFormula(text: string): Extract<FormulaNode, { kind: "call" }> {
  const source = text.trim();
  if (!source.startsWith("=")) throw new FormulaError("#VALUE!", "a formula starts with =");
  let at = 1;
  const fail = (message: string): never => {
    throw new FormulaError("#VALUE!", `the formula can't be read at character ${at + 1}: ${message}`);
  };
  const spaces = (): void => {
    while (at < source.length && /\s/.test(source[at])) at++;
  };
  const peek = (): string => source[at] ?? "";

  const literal = (): CellValue => {
    spaces();
    const ch = peek();
    if (ch === '"') return quoted();
    const n = NUMBER.exec(source.slice(at));
    if (n) {
      at += n[0].length;
      return Number(n[0]);
    }
    const word = /^(TRUE|FALSE)\b/i.exec(source.slice(at));
    if (word) {
      at += word[0].length;
      return word[0].toUpperCase() === "TRUE";
    }
    return fail("an array constant holds numbers, text in quotes, TRUE or FALSE");
  };

  const quoted = (): string => {
    at++; // opening quote
    let out = "";
    for (;;) {
      if (at >= source.length) return fail("text without its closing quote");
      const ch = source[at];
      if (ch === '"') {
        if (source[at + 1] === '"') {
          out += '"';
          at += 2;
          continue;
        }
        at++;
        return out;
      }
      out += ch;
      at++;
    }
  };

  const array = (): FormulaNode => {
    at++; // {
    const rows: CellValue[][] = [[]];
    for (;;) {
      rows[rows.length - 1].push(literal());
      spaces();
      const ch = peek();
      at++;
      if (ch === ",") continue;
      if (ch === ";") {
        rows.push([]);
        continue;
      }
      if (ch === "}") break;
      fail("expected , ; or } in an array constant");
    }
    if (rows.some((row) => row.length !== rows[0].length)) fail("every row of an array constant needs the same number of items");
    return { kind: "array", rows };
  };

  const reference = (sheet: string | null): FormulaNode => {
    const m = REFERENCE.exec(source.slice(at));
    const textRef = m ? m[0] : "";
    if (textRef === "" || textRef === "#") return fail("expected a range such as B1:L121");
    at += textRef.length;
    const spill = textRef.endsWith("#");
    const body = spill ? textRef.slice(0, -1) : textRef;
    let range: RangeAddress;
    try {
      range = parseAddress(body);
    } catch {
      throw new FormulaError("#NAME?", `'${body}' is not a range address`);
    }
    if (spill && (range.top !== range.bottom || range.left !== range.right)) {
      throw new FormulaError("#REF!", `${body}# : a spill reference names the one cell that holds the formula, like O1#`);
    }
    return { kind: "range", range: { ...range, sheet }, spill };
  };

  const expression = (): FormulaNode | null => {
    spaces();
    const ch = peek();
    if (ch === "," || ch === ")") return null; // left out
    if (ch === '"') return { kind: "text", value: quoted() };
    if (ch === "{") return array();
    if (ch === "'") {
      const start = at;
      at++;
      for (;;) {
        if (at >= source.length) return fail("a sheet name without its closing apostrophe");
        if (source[at] === "'") {
          if (source[at + 1] === "'") {
            at += 2;
            continue;
          }
          break;
        }
        at++;
      }
      at++;
      if (peek() !== "!") return fail("expected ! after the sheet name");
      const name = source.slice(start + 1, at - 1).replace(/''/g, "'");
      at++;
      return reference(name);
    }
    const identifier = /^[A-Za-z_][A-Za-z0-9_.]*/.exec(source.slice(at));
    if (identifier) {
      const after = source[at + identifier[0].length] ?? "";
      if (after === "(") return call();
      if (after === "!") {
        at += identifier[0].length + 1;
        return reference(identifier[0]);
      }
      if (/^(TRUE|FALSE)$/i.test(identifier[0])) {
        at += identifier[0].length;
        return { kind: "boolean", value: identifier[0].toUpperCase() === "TRUE" };
      }
      return reference(null);
    }
    if (/^\$?\d+:\$?\d+/.test(source.slice(at))) return reference(null);
    const n = NUMBER.exec(source.slice(at));
    if (n) {
      at += n[0].length;
      return { kind: "number", value: Number(n[0]) };
    }
    if (ch === "$") return reference(null);
    return fail("expected a range, a number, text in quotes or a SHRINK function");
  };

  const call = (): Extract<FormulaNode, { kind: "call" }> => {
    spaces();
    const m = /^([A-Za-z_][A-Za-z0-9_.]*)\s*\(/.exec(source.slice(at));
    if (!m) throw new FormulaError("#NAME?", "the stand-in sheet computes SHRINK functions only, such as =SHRINK.COEFS(M1:M121, B1:L121)");
    const full = m[1].toUpperCase();
    const name = full.startsWith("SHRINK.") ? full.slice(7) : "";
    const spec = FUNCTION_SPECS[name];
    if (!spec) {
      throw new FormulaError(
        "#NAME?",
        full.startsWith("SHRINK.")
          ? `there is no function ${m[1]}: the functions are ${Object.keys(FUNCTION_SPECS).map((k) => `SHRINK.${k}`).join(", ")}`
          : `the stand-in sheet computes SHRINK functions only, not ${m[1]}`,
      );
    }
    at += m[0].length;
    const args: (FormulaNode | null)[] = [];
    spaces();
    if (peek() === ")") {
      at++;
    } else {
      for (;;) {
        args.push(expression());
        spaces();
        const ch = peek();
        at++;
        if (ch === ",") continue;
        if (ch === ")") break;
        fail("expected , or ) after an argument");
      }
    }
    while (args.length > 0 && args[args.length - 1] === null) args.pop();
    if (args.length < spec.min || args.length > spec.max) {
      const count = spec.min === spec.max ? `${spec.min}` : `${spec.min} to ${spec.max}`;
      throw new FormulaError("#VALUE!", `SHRINK.${name} takes ${count} arguments (${spec.signature}) but has ${args.length}`);
    }
    for (let k = 0; k < spec.min; k++) {
      if (args[k] === null) throw new FormulaError("#VALUE!", `SHRINK.${name} needs its argument ${k + 1} (${spec.signature.split(", ")[k]})`);
    }
    return { kind: "call", name, args };
  };

  spaces();
  const top = call();
  spaces();
  if (at < source.length) fail("unexpected text after the closing parenthesis");
  return top;
}

/** Ranges a parsed formula reads (spill references as their anchor cell), sheets filled in with `sheet`. */
export function formulaReferences(node: FormulaNode, sheet: string): RangeAddress[] {
  if (node.kind === "range") return [{ ...node.range, sheet: node.range.sheet ?? sheet }];
  if (node.kind === "call") return node.args.flatMap((arg) => (arg ? formulaReferences(arg, sheet) : []));
  return [];
}

/** What a spilled result cell shows. */
function shownCell(raw: unknown): { value: CellValue; message?: string } {
  if (raw === null || raw === undefined) return { value: "" };
  if (typeof raw === "number") return Number.isFinite(raw) ? { value: raw } : { value: "#NUM!" };
  if (typeof raw === "string" || typeof raw === "boolean") return { value: raw };
  return errorShown(raw);
}

const ERROR_CODE_NAMES: Record<string, string> = {
  invalidValue: "#VALUE!",
  notAvailable: "#N/A",
  divisionByZero: "#DIV/0!",
  invalidNumber: "#NUM!",
  nullReference: "#NULL!",
  invalidName: "#NAME?",
  invalidReference: "#REF!",
};

/** An error value (a cell error, a FormulaError, anything thrown) as the cell shows it. */
function errorShown(error: unknown): { value: string; message?: string } {
  const code = error && typeof error === "object" ? (error as { code?: unknown }).code : undefined;
  const rawMessage = error && typeof error === "object" ? (error as { message?: unknown }).message : undefined;
  const message = typeof rawMessage === "string" && rawMessage !== "" ? rawMessage : undefined;
  if (typeof code === "string") {
    const text = code.startsWith("#") ? code : (ERROR_CODE_NAMES[code] ?? "#VALUE!");
    return message ? { value: text, message } : { value: text };
  }
  return { value: "#VALUE!", message: message ?? String(error) };
}

// ---------------------------------------------------------------------------------------------
// The host

export type StandInChange = { kind: "cells"; sheet: string } | { kind: "selection" } | { kind: "sheets" };

export interface StandInOptions {
  /** Runs the fits. Default: the shared fit cache (functions/functions.ts). */
  runner?: FitRunner;
  /** Where settings persist across page loads; default `localStorage` when the page has one. Null: memory only. */
  storage?: Pick<Storage, "getItem" | "setItem" | "removeItem"> | null;
  /** The theme; default from the page's prefers-color-scheme, else light. */
  theme?: "light" | "dark";
}

/** Computation state of one formula cell. */
interface FormulaState {
  sheet: StandInSheet;
  row: number;
  column: number;
  formula: string;
  references: RangeAddress[];
  /** Bumped per computation; a finished computation that isn't the latest is dropped. */
  generation: number;
  /** The last result (cells as shown), or null while none. */
  result: { value: CellValue; message?: string }[][] | null;
  /** The cells it covers now (the formula's cell alone when it shows an error or #SPILL!). */
  area: RangeAddress;
  /** Its result is in the way of something (shows #SPILL!). */
  blocked: boolean;
  /** The result last put on the sheet. */
  placed: FormulaState["result"];
}

const SETTINGS_PREFIX = "shrinkwise.stand-in.";
/** How deep one edit may set off recomputations (a guard against formulas reading each other's results in a circle). */
const MAX_DEPTH = 20;

function defaultStorage(): Pick<Storage, "getItem" | "setItem" | "removeItem"> | null {
  try {
    return typeof localStorage !== "undefined" ? localStorage : null;
  } catch {
    return null; // storage blocked by the page's settings
  }
}

/** A typed constant as Excel would store it: numbers and TRUE/FALSE converted, other text kept. */
function constantOf(text: string): CellValue {
  const trimmed = text.trim();
  if (/^[+-]?(\d+\.?\d*|\.\d+)([eE][+-]?\d+)?$/.test(trimmed)) return Number(trimmed);
  if (/^(TRUE|FALSE)$/i.test(trimmed)) return trimmed.toUpperCase() === "TRUE";
  return text;
}

export class StandInSheetHost implements SheetHost {
  readonly kind = "stand-in" as const;
  readonly canPromptForRange = false;
  readonly workbook: StandInWorkbook;
  private readonly runner: FitRunner;
  private readonly storage: Pick<Storage, "getItem" | "setItem" | "removeItem"> | null;
  private readonly themeChoice: "light" | "dark" | undefined;
  private readonly settings = new Map<string, string>();
  private readonly selections = new Map<StandInSheet, RangeAddress>();
  private readonly listeners = new Set<(change: StandInChange) => void>();
  private readonly watchers = new Set<{ ranges: RangeAddress[]; listener: () => void }>();
  private readonly formulas = new Map<StandInSheet, Map<number, FormulaState>>();
  private readonly pending = new Set<Promise<void>>();

  constructor(workbook: StandInWorkbook = createDemoWorkbook(), options: StandInOptions = {}) {
    this.workbook = workbook;
    this.runner = options.runner ?? sharedRunner();
    this.storage = options.storage === undefined ? defaultStorage() : options.storage;
    this.themeChoice = options.theme;
  }

  // --- sheets and selection --------------------------------------------------------------

  /** The sheet an address names (or the active one); throws SheetHostError for an unknown sheet. */
  private sheetOf(range: RangeAddress): StandInSheet {
    if (range.sheet === null) return this.workbook.activeSheet;
    const sheet = this.workbook.sheet(range.sheet);
    if (!sheet) throw new SheetHostError(`there is no sheet named '${range.sheet}'`);
    return sheet;
  }

  /** Parses an address, names its sheet, and cuts whole columns/rows to the sheet's filled part. */
  private resolve(address: string): { sheet: StandInSheet; range: RangeAddress } {
    const parsed = parseAddress(address);
    const sheet = this.sheetOf(parsed);
    return { sheet, range: this.usedPart({ ...parsed, sheet: sheet.name }, sheet) };
  }

  private usedPart(range: RangeAddress, sheet: StandInSheet): RangeAddress {
    if (!range.whole) return range;
    const extent = sheet.extent();
    const bottom = range.whole === "columns" ? Math.max(1, extent.rows) : range.bottom;
    const right = range.whole === "rows" ? Math.max(1, extent.columns) : range.right;
    return { sheet: range.sheet, top: range.top, left: range.left, bottom: Math.max(range.top, bottom), right: Math.max(range.left, right) };
  }

  /** Tells the view (and anyone else subscribed) what changed. Returns a function that stops it. */
  subscribe(listener: (change: StandInChange) => void): () => void {
    this.listeners.add(listener);
    return () => this.listeners.delete(listener);
  }

  private emit(change: StandInChange): void {
    for (const listener of [...this.listeners]) {
      try {
        listener(change);
      } catch {
        // a listener's failure must not stop the workbook
      }
    }
  }

  /** The selection of the active sheet (A1 until something is selected). */
  selection(): RangeAddress {
    const sheet = this.workbook.activeSheet;
    return this.selections.get(sheet) ?? rangeOf(sheet.name, 1, 1);
  }

  /** Selects a range (its sheet becomes the active sheet). Throws SheetHostError for a bad address. */
  setSelection(address: string | RangeAddress): void {
    const parsed = typeof address === "string" ? parseAddress(address) : address;
    const sheet = this.sheetOf(parsed);
    const sheetChanged = sheet !== this.workbook.activeSheet;
    this.workbook.activate(sheet.name);
    this.selections.set(sheet, { ...parsed, sheet: sheet.name });
    if (sheetChanged) this.emit({ kind: "sheets" });
    this.emit({ kind: "selection" });
  }

  /** Makes a sheet the active one (its own selection comes back). */
  activateSheet(name: string): void {
    this.workbook.activate(name);
    this.emit({ kind: "sheets" });
    this.emit({ kind: "selection" });
  }

  async selectionAddress(): Promise<string> {
    return formatAddress(this.selection());
  }

  async promptForRange(_label: string): Promise<string | null> {
    return null; // no prompt here: the pane uses the selection instead
  }

  // --- reading --------------------------------------------------------------------------

  /** The cell at an address ("B2" or "'Roast log'!B2"), or undefined when empty. */
  cell(address: string): StandInCell | undefined {
    const { sheet, range } = this.resolve(address);
    return sheet.get(range.top, range.left);
  }

  async readValues(address: string): Promise<CellValue[][]> {
    const { sheet, range } = this.resolve(address);
    return this.grid(sheet, range, (cell) => (cell ? cell.value : ""));
  }

  private grid<T>(sheet: StandInSheet, range: RangeAddress, read: (cell: StandInCell | undefined) => T): T[][] {
    const rows: T[][] = [];
    for (let r = range.top; r <= range.bottom; r++) {
      const row: T[] = [];
      for (let c = range.left; c <= range.right; c++) row.push(read(sheet.get(r, c)));
      rows.push(row);
    }
    return rows;
  }

  async filledCells(address: string): Promise<string[]> {
    const { sheet, range } = this.resolve(address);
    const filled: string[] = [];
    for (let r = range.top; r <= range.bottom; r++) {
      for (let c = range.left; c <= range.right; c++) if (sheet.isFilled(r, c)) filled.push(cellName(r, c));
    }
    return filled;
  }

  // --- writing ---------------------------------------------------------------------------

  /**
   * Writes one cell: a formula (text starting with =, computed), a constant, or null/"" to
   * clear it. Fires watchers and recomputes the formulas that read it. Returns at once; await
   * `whenCalculated()` for results.
   */
  setCell(address: string, content: CellValue | null): void {
    const { sheet, range } = this.resolve(address);
    this.setCells(formatAddress({ ...range, bottom: range.top, right: range.left }), [[content]], sheet);
  }

  /** Writes a block of cells from `address`'s top-left cell (same rules as setCell). */
  setCells(address: string, rows: (CellValue | null)[][], sheetHint?: StandInSheet): void {
    const parsed = parseAddress(address);
    const sheet = sheetHint ?? this.sheetOf(parsed);
    const height = rows.length;
    const width = Math.max(0, ...rows.map((row) => row.length));
    if (height === 0 || width === 0) return;
    const area = spillArea({ row: parsed.top, column: parsed.left }, height, width);
    const written: FormulaState[] = [];
    const cleared: RangeAddress[] = [];
    rows.forEach((row, i) =>
      row.forEach((content, j) => {
        const state = this.writeCell(sheet, parsed.top + i, parsed.left + j, content, cleared);
        if (state) written.push(state);
      }),
    );
    const changed = { ...area, sheet: sheet.name };
    this.afterChange(sheet, changed, null, 0);
    // Cells a replaced formula had spilled into are free now: results they blocked may spill.
    for (const spill of cleared) this.afterChange(sheet, spill, null, 0);
    for (const state of written) this.compute(state, 0);
    this.fireWatchers(changed);
    this.emit({ kind: "cells", sheet: sheet.name });
  }

  /** Puts one edit in place; returns the formula to compute when it is one. */
  private writeCell(sheet: StandInSheet, row: number, column: number, content: CellValue | null, cleared: RangeAddress[]): FormulaState | null {
    const existing = this.formulaAt(sheet, row, column);
    const text = typeof content === "string" ? content : null;
    if (existing && !(text !== null && text.trim().startsWith("=") && text.trim() === existing.formula)) {
      if (existing.area.bottom > existing.row || existing.area.right > existing.column) cleared.push(existing.area);
      this.removeFormula(existing);
    }
    if (text !== null && text.trim().startsWith("=")) {
      const formula = text.trim();
      if (existing && existing.formula === formula) {
        existing.generation++;
        return existing;
      }
      const state: FormulaState = {
        sheet,
        row,
        column,
        formula,
        references: [],
        generation: 0,
        result: null,
        area: rangeOf(sheet.name, row, column),
        blocked: false,
        placed: null,
      };
      let map = this.formulas.get(sheet);
      if (!map) {
        map = new Map();
        this.formulas.set(sheet, map);
      }
      map.set(cellKey(row, column), state);
      sheet.set(row, column, { value: "#BUSY!", formula, message: "calculating…" });
      return state;
    }
    const value: CellValue = content === null ? "" : typeof content === "string" ? constantOf(content) : content;
    const kept = sheet.get(row, column);
    sheet.set(row, column, value === "" ? undefined : { value, ...(kept?.format ? { format: kept.format } : {}), ...(kept?.bold ? { bold: true } : {}) });
    return null;
  }

  private formulaAt(sheet: StandInSheet, row: number, column: number): FormulaState | undefined {
    return this.formulas.get(sheet)?.get(cellKey(row, column));
  }

  /** Takes a formula out: its spilled cells are cleared (its own cell is left to the caller). */
  private removeFormula(state: FormulaState): void {
    state.generation++;
    this.formulas.get(state.sheet)?.delete(cellKey(state.row, state.column));
    this.clearSpill(state);
    state.sheet.set(state.row, state.column, undefined);
  }

  private clearSpill(state: FormulaState): void {
    const { area, sheet } = state;
    for (let r = area.top; r <= area.bottom; r++) {
      for (let c = area.left; c <= area.right; c++) {
        if (r === state.row && c === state.column) continue;
        const cell = sheet.get(r, c);
        if (cell?.spillFrom && cell.spillFrom.row === state.row && cell.spillFrom.column === state.column) sheet.set(r, c, undefined);
      }
    }
    state.area = rangeOf(sheet.name, state.row, state.column);
  }

  async writeFormulas(address: string, formulas: string[][]): Promise<void> {
    const { sheet, range } = this.resolve(address);
    const size = rangeSize(range);
    if (formulas.length !== size.rows || formulas.some((row) => row.length !== size.columns)) {
      throw new SheetHostError(`${address} is ${size.rows} × ${size.columns} cells but ${formulas.length} row(s) of formulas were given`);
    }
    this.setCells(formatAddress(range), formulas, sheet);
  }

  async writeValues(address: string, values: CellValue[][]): Promise<void> {
    const { sheet, range } = this.resolve(address);
    const size = rangeSize(range);
    if (values.length !== size.rows || values.some((row) => row.length !== size.columns)) {
      throw new SheetHostError(`${address} is ${size.rows} × ${size.columns} cells but ${values.length} row(s) of values were given`);
    }
    this.setCells(formatAddress(range), values, sheet);
  }

  /** Resolves once every computation started so far (and any it set off) has finished. */
  async whenCalculated(): Promise<void> {
    while (this.pending.size > 0) await Promise.allSettled([...this.pending]);
  }

  // --- computing -------------------------------------------------------------------------

  /** Starts computing a formula; its result is placed when it arrives (if still the latest). */
  private compute(state: FormulaState, depth: number): void {
    const generation = ++state.generation;
    const cell = state.sheet.get(state.row, state.column);
    if (!cell || cell.value !== "#BUSY!") {
      this.clearSpill(state);
      state.sheet.set(state.row, state.column, { value: "#BUSY!", formula: state.formula, message: "calculating…" });
    }
    const work = (async () => {
      let result: { value: CellValue; message?: string }[][];
      try {
        if (depth > MAX_DEPTH) throw new FormulaError("#CALC!", "these formulas read each other's results in a circle");
        const call = parseFormula(state.formula);
        state.references = formulaReferences(call, state.sheet.name);
        const spill = await this.evaluate(call, state.sheet);
        result = spill.map((row) => row.map(shownCell));
        if (result.length === 0 || result[0].length === 0) result = [[{ value: "" }]];
      } catch (error) {
        result = [[errorShown(error)]];
      }
      if (generation !== state.generation || this.formulaAt(state.sheet, state.row, state.column) !== state) return;
      state.result = result;
      this.place(state, depth);
    })();
    this.pending.add(work);
    void work.finally(() => this.pending.delete(work));
  }

  /** Values of a parsed argument, as Excel hands them to a function (rows of cells; blanks null). */
  private async evaluate(node: Extract<FormulaNode, { kind: "call" }>, sheet: StandInSheet): Promise<Spill> {
    const spec = FUNCTION_SPECS[node.name];
    const args: unknown[] = [];
    for (const arg of node.args) args.push(arg ? await this.argument(arg, sheet) : null);
    return spec.run(this.runner, args);
  }

  private async argument(node: FormulaNode, sheet: StandInSheet): Promise<unknown> {
    switch (node.kind) {
      case "number":
      case "text":
      case "boolean":
        return node.value;
      case "array":
        return node.rows;
      case "call":
        return this.evaluate(node, sheet);
      case "range": {
        const target = node.range.sheet === null ? sheet : this.workbook.sheet(node.range.sheet);
        if (!target) throw new FormulaError("#REF!", `there is no sheet named '${node.range.sheet}'`);
        let range = this.usedPart({ ...node.range, sheet: target.name }, target);
        if (node.spill) {
          const anchor = this.formulaAt(target, range.top, range.left);
          if (!anchor || anchor.blocked || anchor.result === null) {
            throw new FormulaError("#REF!", `${formatAddress(range, false)}# names no spilled result: ${formatAddress(range, false)} must hold a SHRINK formula that has spilled`);
          }
          range = anchor.area;
        }
        return this.grid(target, range, (cell) => {
          if (!cell || cell.value === "") return null;
          return cell.value;
        });
      }
    }
  }

  /**
   * Puts a formula's result on the sheet: its cells from the formula's cell down and right, or
   * #SPILL! when something is in the way. Then recomputes what reads the cells that changed.
   */
  private place(state: FormulaState, depth: number): void {
    const result = state.result;
    if (!result) return;
    const { sheet } = state;
    const before = state.area;
    const wasBlocked = state.blocked;
    const samePlacement = state.placed === result;
    this.clearSpill(state);
    const rows = result.length;
    const columns = result[0].length;
    let wanted: RangeAddress | null = null;
    let blocker: string | null = null;
    try {
      wanted = { ...spillArea({ row: state.row, column: state.column }, rows, columns), sheet: sheet.name };
    } catch (error) {
      blocker = error instanceof Error ? error.message : String(error);
    }
    if (wanted) {
      for (let r = wanted.top; r <= wanted.bottom && blocker === null; r++) {
        for (let c = wanted.left; c <= wanted.right; c++) {
          if (r === state.row && c === state.column) continue;
          if (sheet.isFilled(r, c)) {
            blocker = `${cellName(r, c)} is not empty`;
            break;
          }
        }
      }
    }
    if (blocker !== null || !wanted) {
      state.blocked = true;
      sheet.set(state.row, state.column, {
        value: "#SPILL!",
        formula: state.formula,
        message: `the result needs ${rows} × ${columns} cells from ${cellName(state.row, state.column)}, but ${blocker}: clear those cells or move the formula`,
      });
    } else {
      state.blocked = false;
      state.area = wanted;
      for (let i = 0; i < rows; i++) {
        for (let j = 0; j < columns; j++) {
          const shown = result[i][j];
          const cell: StandInCell = { value: shown.value };
          if (shown.message) cell.message = shown.message;
          if (i === 0 && j === 0) cell.formula = state.formula;
          else cell.spillFrom = { row: state.row, column: state.column };
          sheet.set(state.row + i, state.column + j, cell);
        }
      }
    }
    const changed: RangeAddress = {
      sheet: sheet.name,
      top: state.row,
      left: state.column,
      bottom: Math.max(before.bottom, state.area.bottom),
      right: Math.max(before.right, state.area.right),
    };
    state.placed = result;
    // A formula that was blocked, stays blocked and has the same result changed nothing: saying
    // so would only set off its neighbours again (two formulas in each other's way).
    if (samePlacement && wasBlocked && state.blocked) return;
    this.afterChange(sheet, changed, state, depth + 1);
    this.emit({ kind: "cells", sheet: sheet.name });
  }

  /**
   * After cells in `changed` changed: recompute formulas that read them, and re-place results
   * whose wanted area overlaps them (a spill blocked or freed). `source` is the formula whose
   * result changed (skipped).
   */
  private afterChange(sheet: StandInSheet, changed: RangeAddress, source: FormulaState | null, depth: number): void {
    const states = [...this.formulas.values()].flatMap((map) => [...map.values()]);
    for (const state of states) {
      if (state === source) continue;
      const reads = state.references.some((ref) => sameSheetName(ref.sheet, sheet.name) && intersect(ref, changed) !== null);
      if (reads) {
        this.compute(state, depth);
        continue;
      }
      if (state.sheet !== sheet || !state.result) continue;
      const rows = state.result.length;
      const columns = state.result[0].length;
      let wanted: RangeAddress;
      try {
        wanted = spillArea({ row: state.row, column: state.column }, rows, columns);
      } catch {
        continue;
      }
      const overlaps = intersect(wanted, changed) !== null;
      // A spill is affected when the change touches its area: blocked now, or maybe free again.
      if (overlaps && (state.blocked || this.spillDisturbed(state))) {
        if (depth <= MAX_DEPTH) this.place(state, depth + 1);
      }
    }
  }

  /** True when a cell of the formula's placed spill no longer holds its result (an edit landed there). */
  private spillDisturbed(state: FormulaState): boolean {
    const { area, sheet } = state;
    for (let r = area.top; r <= area.bottom; r++) {
      for (let c = area.left; c <= area.right; c++) {
        if (r === state.row && c === state.column) continue;
        const cell = sheet.get(r, c);
        if (!cell?.spillFrom || cell.spillFrom.row !== state.row || cell.spillFrom.column !== state.column) return true;
      }
    }
    return false;
  }

  private fireWatchers(changed: RangeAddress): void {
    for (const watcher of [...this.watchers]) {
      if (watcher.ranges.some((range) => sameSheetName(range.sheet, changed.sheet) && intersect(range, changed) !== null)) {
        try {
          watcher.listener();
        } catch {
          // the pane's listener failing must not stop the edit
        }
      }
    }
  }

  // --- report, watching, settings, theme ------------------------------------------------

  async writeReport(report: ReportSheet): Promise<string> {
    const name = this.workbook.uniqueName(report.name);
    const sheet = this.workbook.addSheet(name);
    const blocks = [...report.blocks];
    for (const chart of report.charts) {
      if (!blocks.some((block) => block === chart.block || block.at === chart.block.at)) blocks.push(chart.block);
    }
    for (const block of blocks) {
      const area = blockArea(block);
      const { rows, width } = blockRows(block);
      rows.forEach((row, i) => {
        const header = block.header === true && i === 0;
        for (let j = 0; j < width; j++) {
          const cell: StandInCell = { value: row[j] };
          if (header) cell.bold = true;
          const format = block.formats?.[j];
          if (!header && format) cell.format = format;
          sheet.set(area.top + i, area.left + j, cell);
        }
      });
    }
    for (const chart of report.charts) {
      sheet.charts.push({
        title: chart.title,
        source: formatAddress(blockArea(chart.block), false),
        logX: chart.logX,
        xTitle: chart.xTitle,
        yTitle: chart.yTitle,
        at: chart.at,
      });
    }
    this.workbook.activate(name);
    this.emit({ kind: "sheets" });
    this.emit({ kind: "selection" });
    return name;
  }

  async watch(addresses: string[], listener: () => void): Promise<() => void> {
    const ranges = addresses.map((address) => {
      const parsed = parseAddress(address);
      return { ...parsed, sheet: this.sheetOf(parsed).name };
    });
    const watcher = { ranges, listener };
    this.watchers.add(watcher);
    return () => {
      this.watchers.delete(watcher);
    };
  }

  async loadSetting<T>(key: string): Promise<T | null> {
    let text = this.settings.get(key) ?? null;
    if (text === null && this.storage) {
      try {
        text = this.storage.getItem(SETTINGS_PREFIX + key);
      } catch {
        text = null;
      }
    }
    if (text === null) return null;
    try {
      return JSON.parse(text) as T;
    } catch {
      return null;
    }
  }

  async saveSetting(key: string, value: unknown): Promise<void> {
    if (value === undefined || value === null) {
      this.settings.delete(key);
      try {
        this.storage?.removeItem(SETTINGS_PREFIX + key);
      } catch {
        // storage unavailable: memory only
      }
      return;
    }
    const text = JSON.stringify(value);
    if (text === undefined) throw new SheetHostError(`the setting '${key}' can't be saved: its value is not plain data`);
    this.settings.set(key, text);
    try {
      this.storage?.setItem(SETTINGS_PREFIX + key, text);
    } catch {
      // storage full or blocked: the setting lasts for this page
    }
  }

  theme(): "light" | "dark" {
    if (this.themeChoice) return this.themeChoice;
    try {
      if (typeof matchMedia === "function" && matchMedia("(prefers-color-scheme: dark)").matches) return "dark";
    } catch {
      // no media queries here
    }
    return "light";
  }
}
