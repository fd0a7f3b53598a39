/**
 * Reading a delimited text file into the numeric columns a fit needs. Pure: takes the file's
 * text, returns arrays; never touches the file system.
 *
 * Policy, one rule per kind of cell (each has a test):
 * - The first non-empty line is the header; names are trimmed and must be unique and non-empty
 *   (a trailing delimiter that leaves an unnamed, entirely blank column is ignored).
 * - The delimiter is detected (comma, tab, semicolon, pipe); lines with nothing but blanks and
 *   delimiters are skipped silently.
 * - Cells are trimmed. A blank cell in any column the fit uses (target, predictors, weights,
 *   fold labels) skips that row; skipped rows are counted and listed.
 * - Names and cells are read in Unicode NFC (an accented letter typed either way is one name).
 * - Numbers are read as engine/numberText.ts reads them, the same convention as numbers stored as
 *   text in a worksheet: '.' decimal point, optional ',' between groups of three digits (quote the
 *   cell in a comma-separated file: "1,234.5"), sign, exponent.
 * - A non-blank cell that is not a number in a numeric column used by the fit is an error naming
 *   the column, the data row (1-based, header not counted) and the value, with a hint when it
 *   looks like a number in another convention (a decimal comma) or a date.
 *   Fold labels may be text. Columns the fit doesn't use are never checked.
 * - The target is read by engine/outcome.ts `readOutcome`, the rule the cell functions use:
 *   with outcome `auto` (the default) exactly two distinct values that are TRUE/FALSE, 0/1 or
 *   two texts make a yes/no (two-class) target, coded 1 for the event and 0 for the other
 *   class; anything else is a number target. A cell is a number when it reads as one (above),
 *   TRUE or FALSE in any case when it is one of those words (as a worksheet stores them), and
 *   otherwise text. A number target with a stray text cell (at least half its cells numbers) is
 *   reported as a text cell in a numeric column, with the row and value; other text targets get
 *   readOutcome's message. With outcome `number` the target is a numeric column like any other,
 *   except that a column of exactly two labels gets readOutcome's message (a yes/no target).
 */
import Papa from "papaparse";
import { InputError } from "../errors";
import { numberFromText, numberTextHint } from "../numberText";
import { readOutcome, type OutcomeKind, type OutcomeSetting, type OutcomeValue } from "../outcome";
import { CommandError } from "./args";

/** The file as text cells: trimmed header names and the data rows below them. */
export interface TextTable {
  columns: string[];
  /** One array per data row, each as long as `columns` (short rows padded with ""). */
  rows: string[][];
}

/** Which columns play which part. Unknown names are errors that list the columns. */
export interface ColumnRoles {
  target: string;
  /** Default: every column except the target, weights and fold columns and `exclude`. */
  predictors?: readonly string[] | null;
  exclude?: readonly string[] | null;
  weightsColumn?: string | null;
  foldColumn?: string | null;
  /** How to read the target (default auto; see the file comment). */
  outcome?: OutcomeSetting;
  /** Yes/no targets: the event's label (default as readOutcome picks it). */
  event?: string | null;
}

/** A yes/no target's two classes as read (engine/outcome.ts). */
export interface TargetClasses {
  /** The event's label as written (TRUE, 1, fail, …): target values 1. */
  event: string;
  /** The other class's label: target values 0. */
  other: string;
  /** Rows used of each class. */
  eventRows: number;
  otherRows: number;
  /** How the event was picked when both classes have as many rows, or null. */
  note: string | null;
}

/** The numbers for the engine, rows with blanks already removed. */
export interface FitTable {
  target: string;
  predictorNames: string[];
  /** predictors[i][j]: kept row i, predictor j. */
  predictors: number[][];
  /** The target's numbers; for a yes/no target 1 = the event, 0 = the other class. */
  targetValues: number[];
  /** How the target was read. */
  outcome: OutcomeKind;
  /** Yes/no targets: the two classes; null for a number target. */
  classes: TargetClasses | null;
  weights: number[] | null;
  foldLabels: string[] | null;
  rowsUsed: number;
  rowsSkipped: number;
  /** 1-based data-row numbers of the skipped rows. */
  skippedRows: number[];
  /** Per used column in file order, how many rows were skipped for a blank in it (only columns with blanks). */
  blanksByColumn: Record<string, number>;
}

/** Splits delimited text into trimmed cells. Throws CommandError for an empty file or broken quotes. */
export function parseDelimited(text: string): TextTable {
  const source = text.charCodeAt(0) === 0xfeff ? text.slice(1) : text;
  const parsed = Papa.parse<string[]>(source, {
    header: false,
    dynamicTyping: false,
    skipEmptyLines: "greedy",
    delimitersToGuess: [",", "\t", ";", "|"],
  });
  const quoteError = parsed.errors.find((e) => e.type === "Quotes");
  if (quoteError) {
    // Papa counts rows from 0 with the header as row 0, so its row number is the data-row number.
    const row = quoteError.row;
    const where = typeof row !== "number" ? "" : row === 0 ? " in the header row" : ` in data row ${row}`;
    throw new CommandError(`the file has an unmatched quote${where}: ${quoteError.message}`);
  }
  const lines = parsed.data;
  if (lines.length === 0) throw new CommandError("the file is empty: it needs a header row and rows of data");
  // Names and cells in Unicode NFC, so 'é' typed either way is one name (and one fold label).
  let columns = lines[0].map((name) => String(name).trim().normalize("NFC"));
  let rows = lines.slice(1).map((line) => line.map((cell) => String(cell).trim().normalize("NFC")));
  for (let r = 0; r < rows.length; r++) {
    const row = rows[r];
    if (row.length > columns.length && row.slice(columns.length).some((cell) => cell !== "")) {
      throw new CommandError(
        `data row ${r + 1} has ${row.length} values but the header names ${columns.length} columns: check the delimiter and quotes`,
      );
    }
    if (row.length > columns.length) rows[r] = row.slice(0, columns.length);
    while (rows[r].length < columns.length) rows[r].push("");
  }
  // A trailing delimiter on every line leaves unnamed, empty columns: drop them.
  const keep = columns.map((name, j) => name !== "" || rows.some((row) => row[j] !== ""));
  if (keep.some((k) => !k)) {
    columns = columns.filter((_, j) => keep[j]);
    rows = rows.map((row) => row.filter((_, j) => keep[j]));
  }
  const seen = new Set<string>();
  columns.forEach((name, j) => {
    if (name === "") throw new CommandError(`column ${j + 1} has no name in the header row: give every column a name`);
    if (seen.has(name)) throw new CommandError(`the header names column '${name}' twice: column names must be unique`);
    seen.add(name);
  });
  if (rows.length === 0) throw new CommandError("the file has a header row but no data rows");
  return { columns, rows };
}

function listColumns(columns: readonly string[]): string {
  return columns.map((c) => `'${c}'`).join(", ");
}

function columnIndex(table: TextTable, name: string, what: string): number {
  const j = table.columns.indexOf(name);
  if (j < 0) {
    throw new CommandError(`${what} '${name}' is not a column of the file; the columns are ${listColumns(table.columns)}`);
  }
  return j;
}

/** Picks the columns for each role and checks they don't overlap. */
function assignRoles(table: TextTable, roles: ColumnRoles): { target: number; predictors: number[]; weights: number; folds: number } {
  const target = columnIndex(table, roles.target, "the target");
  const weights = roles.weightsColumn ? columnIndex(table, roles.weightsColumn, "the weights column") : -1;
  const folds = roles.foldColumn ? columnIndex(table, roles.foldColumn, "the fold column") : -1;
  if (weights === target) throw new CommandError(`'${roles.target}' can't be both the target and the weights column`);
  if (folds === target) throw new CommandError(`'${roles.target}' can't be both the target and the fold column`);
  if (weights >= 0 && weights === folds) throw new CommandError(`'${roles.weightsColumn}' can't be both the weights column and the fold column`);
  let predictors: number[];
  if (roles.predictors) {
    predictors = [];
    for (const name of roles.predictors) {
      const j = columnIndex(table, name, "predictor");
      if (j === target) throw new CommandError(`'${name}' is the target: it can't also be a predictor`);
      if (j === weights) throw new CommandError(`'${name}' is the weights column: it can't also be a predictor`);
      if (j === folds) throw new CommandError(`'${name}' is the fold column: it can't also be a predictor`);
      if (predictors.includes(j)) throw new CommandError(`predictor '${name}' is listed twice: list each column once`);
      predictors.push(j);
    }
  } else {
    const excluded = new Set<number>();
    for (const name of roles.exclude ?? []) excluded.add(columnIndex(table, name, "excluded column"));
    predictors = table.columns.map((_, j) => j).filter((j) => j !== target && j !== weights && j !== folds && !excluded.has(j));
  }
  if (predictors.length === 0) {
    throw new CommandError(`no predictor columns left: the file has ${listColumns(table.columns)}`);
  }
  return { target, predictors, weights, folds };
}

/**
 * Builds the engine's input from text cells: picks columns, skips rows with blanks, converts
 * numbers. Throws CommandError naming the column, data row and value of the first text cell
 * in a numeric column, or when no rows are left.
 */
export function buildFitTable(table: TextTable, roles: ColumnRoles): FitTable {
  const { target, predictors, weights, folds } = assignRoles(table, roles);
  const setting = roles.outcome ?? "auto";
  // A number target is checked like any numeric column; otherwise readOutcome reads it (below).
  const numeric = [...(setting === "number" ? [target] : []), ...predictors, ...(weights >= 0 ? [weights] : [])];
  const used = [...(setting === "number" ? [] : [target]), ...numeric, ...(folds >= 0 ? [folds] : [])];
  const defaultPredictors = !roles.predictors;
  if (setting === "number") {
    // Two labels and no number: a yes/no target given --outcome number; readOutcome says so (as the cells do).
    const cells = table.rows.map((row) => row[target]).filter((cell) => cell !== "");
    if (cells.length > 0 && cells.every((cell) => numberFromText(cell) === null) && new Set(cells.map((cell) => cell.toLowerCase())).size === 2) {
      readOutcome(cells.map(targetValue), { outcome: "number", name: table.columns[target] });
    }
  }
  // Text first, column by column in file order, so the message names the first offending row.
  for (const j of [...numeric].sort((a, b) => a - b)) {
    for (let r = 0; r < table.rows.length; r++) {
      const cell = table.rows[r][j];
      if (cell !== "" && numberFromText(cell) === null) {
        const hint =
          defaultPredictors && predictors.includes(j)
            ? `; leave the column out with --exclude ${table.columns[j]}`
            : ": use numbers only (leave a cell empty to skip its row)";
        throw new CommandError(`column '${table.columns[j]}' has text in data row ${r + 1} ('${cell}')${numberTextHint(cell, "file")}${hint}`);
      }
    }
  }
  const out: FitTable = {
    target: table.columns[target],
    predictorNames: predictors.map((j) => table.columns[j]),
    predictors: [],
    targetValues: [],
    outcome: "number",
    classes: null,
    weights: weights >= 0 ? [] : null,
    foldLabels: folds >= 0 ? [] : null,
    rowsUsed: 0,
    rowsSkipped: 0,
    skippedRows: [],
    blanksByColumn: {},
  };
  const blankCounts = new Array<number>(table.columns.length).fill(0);
  const targetCells: OutcomeValue[] = [];
  for (let r = 0; r < table.rows.length; r++) {
    const row = table.rows[r];
    const blanks = used.filter((j) => row[j] === "");
    if (blanks.length > 0) {
      out.rowsSkipped++;
      out.skippedRows.push(r + 1);
      for (const j of blanks) blankCounts[j]++;
      continue;
    }
    if (setting === "number") out.targetValues.push(numberFromText(row[target]) as number);
    else targetCells.push(targetValue(row[target]));
    out.predictors.push(predictors.map((j) => numberFromText(row[j]) as number));
    if (out.weights) out.weights.push(numberFromText(row[weights]) as number);
    if (out.foldLabels) out.foldLabels.push(row[folds]);
    out.rowsUsed++;
  }
  // fromEntries makes own properties even for a column called "__proto__".
  out.blanksByColumn = Object.fromEntries(table.columns.map((name, j): [string, number] => [name, blankCounts[j]]).filter(([, count]) => count > 0));
  if (out.rowsUsed === 0) {
    throw new CommandError(`no rows left to fit: all ${table.rows.length} data rows have a blank in a column the fit uses`);
  }
  if (setting !== "number") readTarget(out, targetCells, table, target, setting, roles.event ?? null);
  return out;
}

/** A target cell as readOutcome takes it: a number, TRUE/FALSE (any case), or text. */
export function targetValue(cell: string): OutcomeValue {
  const n = numberFromText(cell);
  if (n !== null) return n;
  const word = cell.toLowerCase();
  if (word === "true" || word === "false") return word === "true";
  return cell;
}

/** Reads the target's kept cells with readOutcome (auto or two-class) into `out`. */
function readTarget(out: FitTable, cells: OutcomeValue[], table: TextTable, target: number, setting: OutcomeSetting, event: string | null): void {
  let reading;
  try {
    reading = readOutcome(cells, { outcome: setting, event, name: out.target });
  } catch (error) {
    // A column of numbers with a stray text is a typo in a number target: name the row, as for any numeric column.
    const numbers = cells.filter((c) => typeof c === "number").length;
    if (error instanceof InputError && setting === "auto" && numbers > 0 && 2 * numbers >= cells.length) {
      for (let r = 0; r < table.rows.length; r++) {
        const cell = table.rows[r][target];
        if (cell !== "" && numberFromText(cell) === null) {
          throw new CommandError(
            `column '${out.target}' has text in data row ${r + 1} ('${cell}')${numberTextHint(cell, "file")}: use numbers only (leave a cell empty to skip its row)`,
          );
        }
      }
    }
    throw error;
  }
  out.targetValues = Array.from(reading.values);
  out.outcome = reading.kind;
  if (reading.kind === "two-class") {
    // readOutcome's note names the cells' setting (event=…); here the flag is --event.
    const note = reading.note === null ? null : reading.note.replace(/\bevent=…/, "--event <label>");
    out.classes = { event: reading.event, other: reading.other, eventRows: reading.eventCount, otherRows: reading.otherCount, note };
  }
}

/** parseDelimited then buildFitTable: the file's text to the engine's input. */
export function readFitTable(text: string, roles: ColumnRoles): FitTable {
  return buildFitTable(parseDelimited(text), roles);
}

/** One sentence about skipped rows for the warnings, or null when none were skipped. */
export function skippedRowsMessage(table: FitTable, shown = 10): string | null {
  if (table.rowsSkipped === 0) return null;
  // A fit from sums knows how many rows were skipped, not which: its own warning says so.
  if (table.skippedRows.length === 0) return null;
  const rows = table.skippedRows.slice(0, shown).join(", ") + (table.skippedRows.length > shown ? ", …" : "");
  const columns = Object.entries(table.blanksByColumn)
    .map(([name, count]) => `${name} ${count}`)
    .join(", ");
  const noun = table.rowsSkipped === 1 ? "row" : "rows";
  return `${table.rowsSkipped} ${noun} with blank cells skipped (data ${noun} ${rows}; blanks by column: ${columns})`;
}

/** Rows to predict (`--predict new.csv`): the file's cells, and the predictors' numbers row by row. */
export interface NewRows {
  /** The new file as read: every column is copied to the predictions. */
  table: TextTable;
  /** rows[i][j]: data row i, predictor j (in the fit's predictor order). */
  rows: number[][];
}

/**
 * Reads the rows to predict from a delimited text: every predictor of the fit must be a column
 * (by name; order and other columns don't matter) and every row needs a number in each of them.
 * Throws CommandError naming the missing column, or the row and column of a blank or text cell.
 * `label` names the file in messages.
 */
export function readNewRows(text: string, predictorNames: readonly string[], label = "the new rows file"): NewRows {
  let table: TextTable;
  try {
    table = parseDelimited(text);
  } catch (error) {
    if (error instanceof CommandError) throw new CommandError(`${label}: ${error.message}`);
    throw error;
  }
  const missing = predictorNames.filter((name) => !table.columns.includes(name));
  if (missing.length > 0) {
    throw new CommandError(
      `${label} has no column ${listColumns(missing)}: it needs every predictor the model uses (${listColumns(predictorNames)}); its columns are ${listColumns(table.columns)}`,
    );
  }
  const at = predictorNames.map((name) => table.columns.indexOf(name));
  const rows = table.rows.map((row, r) =>
    at.map((j, k) => {
      const cell = row[j];
      if (cell === "") throw new CommandError(`${label} has a blank in data row ${r + 1}, column '${predictorNames[k]}': every predictor needs a value to predict the row`);
      const value = numberFromText(cell);
      if (value === null) {
        throw new CommandError(`${label} has text in data row ${r + 1}, column '${predictorNames[k]}' ('${cell}')${numberTextHint(cell, "file")}: use numbers only`);
      }
      return value;
    }),
  );
  return { table, rows };
}
