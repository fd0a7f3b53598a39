/**
 * Worksheet ranges → encoded numeric data for the engine, and the same encoding for new rows.
 *
 * Training data (`buildDataset`):
 * 1. Header: the first row of predictors is a header when every cell of it is text and some
 *    column has a number or TRUE/FALSE below it (or the target, aligned with predictors, has
 *    text on top and numbers below). The setting `header` = yes / no forces it. Without a
 *    header, columns are named x1, x2, …
 * 2. Target: one column. It may be as long as predictors (its first cell then sits beside the
 *    header: its text names the target), as long as the data rows only, or — when predictors
 *    have no header — one longer with a text header of its own.
 * 3. Cells are classified (cells.ts); zeros of columns named by `zero is missing` become blank.
 * 4. Each predictors column is a number column (numbers, TRUE/FALSE as 1/0) or a text column
 *    (levels); a cell of the other kind is an error naming column, row and value. The columns
 *    named by `fold column` and `weights column` are taken out of the predictors.
 * 5. Rows with a blank or error cell in the target or any used column are skipped and counted;
 *    rows blank everywhere are padding and not counted.
 * 6. Text columns become indicator columns `Column: level`, one per level except the reference
 *    level (the most frequent level in the rows used; ties: the first to appear).
 * Row numbers in messages count from the top of the selected range (a header row is row 1).
 *
 * New rows (`encodeNewRows`, `applyCoefficientTable`): the same columns, matched by header name
 * when new_rows has a header row, else by position; blank rows give a blank result, a row with
 * a blank or error cell gives a "missing" row (the cell shows #N/A); a level not seen in
 * training is an error naming it and its column.
 *
 * Cost: O(rows × columns) throughout.
 */
import {
  Cell,
  classifyCell,
  describeCell,
  isBlankGrid,
  isNumeric,
  numericValue,
  storedAsTextHint,
  textKey,
  toGrid,
} from "./cells";
import { DataError, SettingError } from "./errors";
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
  /** One encoded row per used row. */
  predictors: number[][];
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
}

/** The settings the data layer reads. */
export type DataSettings = Pick<Settings, "header" | "zeroIsMissing" | "foldColumn" | "weightsColumn">;

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

function findColumn(names: readonly string[], wanted: string): number {
  const key = textKey(wanted);
  return names.findIndex((name) => textKey(name) === key);
}

function zeroHint(column: string): string {
  return ` (if that cell looks empty, Excel may have passed it as 0: add 'zero is missing=${column}' to settings)`;
}

/** Header decision for predictors (see the file comment). */
function detectHeader(cells: Cell[][], target: Cell[], mode: Settings["header"]): boolean {
  if (mode === "no") return false;
  if (mode === "yes") {
    if (cells.length < 2) throw new DataError("settings say header=yes but predictors has only one row: select the header row and the data below it");
    return true;
  }
  if (cells.length < 2) return false;
  if (!cells[0].every((c) => c.kind === "text")) return false;
  for (let j = 0; j < cells[0].length; j++) {
    for (let i = 1; i < cells.length; i++) if (isNumeric(cells[i][j])) return true;
  }
  // All-text predictors: the target, aligned with them, may still show a header.
  if (target.length === cells.length && target[0].kind === "text") {
    for (let i = 1; i < target.length; i++) if (isNumeric(target[i])) return true;
  }
  return false;
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
  const cells = classifyGrid(predictorGrid);
  const targetCells = targetGrid.map((row) => classifyCell(row[0]));
  const width = cells[0].length;
  const header = detectHeader(cells, targetCells, settings.header);
  const h = header ? 1 : 0;
  const dataRows = cells.length - h;

  // Column names.
  const names: string[] = [];
  for (let j = 0; j < width; j++) {
    const c = header ? cells[0][j] : null;
    const name = c && c.kind === "text" ? c.value : c && c.kind === "number" ? String(c.value) : `x${j + 1}`;
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
  if (targetCells.length === cells.length) {
    targetStart = h;
    if (header) {
      const first = targetCells[0];
      if (first.kind === "text") targetName = first.value;
      else if (first.kind !== "blank") {
        throw new DataError(
          `target row 1 is ${describeCell(first)} but it sits beside the predictors' header row: give the target a header too, or start the target range one row lower`,
        );
      }
    }
  } else if (header && targetCells.length === dataRows) {
    targetStart = 0;
  } else if (!header && targetCells.length === cells.length + 1 && targetCells[0].kind === "text") {
    targetName = targetCells[0].value;
    targetStart = 1;
  } else {
    throw new DataError(`predictors has ${cells.length} rows but target has ${targetCells.length}: select the same rows in both`);
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
  for (const j of zeroColumns) {
    for (let i = h; i < cells.length; i++) {
      const c = cells[i][j];
      if (c.kind === "number" && c.value === 0) cells[i][j] = { kind: "blank" };
    }
  }
  if (zeroTarget) {
    for (let i = targetStart; i < targetCells.length; i++) {
      const c = targetCells[i];
      if (c.kind === "number" && c.value === 0) targetCells[i] = { kind: "blank" };
    }
  }

  // Column kinds.
  const kinds: ("number" | "text" | "labels")[] = [];
  for (let j = 0; j < width; j++) {
    let numbers = 0;
    let texts = 0;
    let firstText = -1;
    let firstNumber = -1;
    for (let i = h; i < cells.length; i++) {
      const c = cells[i][j];
      if (c.kind === "text") {
        texts++;
        if (firstText < 0) firstText = i;
      } else if (isNumeric(c)) {
        numbers++;
        if (firstNumber < 0) firstNumber = i;
      }
    }
    const label = j === foldIndex ? "fold column" : j === weightsIndex ? "weights column" : "predictors column";
    if (numbers === 0 && texts === 0) {
      throw new DataError(`${label} '${names[j]}' has no values (only blank or error cells): fill it in or leave it out of predictors`);
    }
    if (j === foldIndex) {
      kinds.push("labels");
      continue;
    }
    if (j === weightsIndex && texts > 0) {
      const c = cells[firstText][j] as { kind: "text"; value: string };
      throw new DataError(`weights column '${names[j]}' row ${firstText + 1} has text '${c.value}'${storedAsTextHint(c.value)}: weights must be numbers of 0 or more`);
    }
    if (texts > 0 && numbers > 0) {
      if (numbers >= texts) {
        const c = cells[firstText][j] as { kind: "text"; value: string };
        const headerHint =
          firstText === 0 && settings.header === "auto" ? " (if row 1 is a header, give every column a name there, or add header=yes to settings)" : "";
        throw new DataError(
          `${label} '${names[j]}' row ${firstText + 1} has text '${c.value}' in a number column${storedAsTextHint(c.value)}: fix it or clear the cell${headerHint}`,
        );
      }
      const c = cells[firstNumber][j];
      const hint = c.kind === "number" && c.value === 0 ? zeroHint(names[j]) : "";
      throw new DataError(
        `${label} '${names[j]}' row ${firstNumber + 1} has ${describeCell(c)} in a text column: make it a text level or clear the cell${hint}`,
      );
    }
    kinds.push(texts > 0 ? "text" : "number");
  }

  // Target values must be numbers (blank and error cells skip the row).
  for (let d = 0; d < dataRows; d++) {
    const c = targetCells[targetStart + d];
    if (c.kind === "text") {
      const row = targetStart + d + 1;
      const headerHint =
        row !== 1 ? "" : settings.header === "no" ? " (settings say header=no, so row 1 is data)" : " (if it is a header, give predictors a header row too)";
      throw new DataError(`target row ${row} has text '${c.value}'${storedAsTextHint(c.value)}: the target must be numbers, so fix the cell or clear it${headerHint}`);
    }
  }

  // Rows used, skipped, ignored.
  const used: number[] = [];
  let skipped = 0;
  let firstSkip: string | null = null;
  for (let d = 0; d < dataRows; d++) {
    const i = h + d;
    const t = targetCells[targetStart + d];
    let allBlank = t.kind === "blank";
    let reason: string | null = t.kind === "blank" ? `target is blank` : t.kind === "error" ? `target is ${t.text}` : null;
    for (let j = 0; j < width; j++) {
      const c = cells[i][j];
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
  if (used.length === 0) {
    throw new DataError(
      `no row can be used: every row has a blank or error cell in the target or a predictor (${skipped} rows; first, ${firstSkip ?? "none"})`,
    );
  }

  // Weights.
  let weights: number[] | null = null;
  if (weightsIndex !== null) {
    weights = [];
    for (const d of used) {
      const c = cells[h + d][weightsIndex];
      const w = numericValue(c as { kind: "number"; value: number });
      if (w < 0) throw new DataError(`weights column '${names[weightsIndex]}' row ${h + d + 1} is ${w}: weights must be 0 or more`);
      weights.push(w);
    }
  }
  // Fold labels.
  let foldLabels: (number | string)[] | null = null;
  if (foldIndex !== null) {
    foldLabels = used.map((d) => {
      const c = cells[h + d][foldIndex];
      if (c.kind === "text") return textKey(c.value);
      return numericValue(c as { kind: "number"; value: number });
    });
  }

  // Encoder: one ColumnCode per predictor column.
  const columns: ColumnCode[] = [];
  const terms: string[] = [];
  const referenceLevels: { column: string; level: string }[] = [];
  const notes: string[] = [];
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
      const c = cells[h + d][j] as { kind: "text"; value: string };
      const key = textKey(c.value);
      if (!counts.has(key)) {
        order.push(key);
        display.set(key, c.value);
        counts.set(key, 0);
      }
      counts.set(key, (counts.get(key) as number) + 1);
    }
    let reference = order[0];
    for (const key of order) if ((counts.get(key) as number) > (counts.get(reference) as number)) reference = key;
    const levelIndex = new Map<string, number>();
    const levels: string[] = [];
    for (const key of order) {
      if (key === reference) {
        levelIndex.set(key, -1);
        continue;
      }
      levelIndex.set(key, levels.length);
      levels.push(display.get(key) as string);
      terms.push(`${names[j]}: ${display.get(key) as string}`);
    }
    // Levels seen only in skipped rows are still known (they encode as unseen otherwise).
    for (let i = h; i < cells.length; i++) {
      const c = cells[i][j];
      if (c.kind === "text" && !levelIndex.has(textKey(c.value))) {
        notes.push(`'${names[j]}' level '${c.value}' appears only in skipped rows, so the model has no term for it`);
        levelIndex.set(textKey(c.value), -2);
      }
    }
    if (order.length > MAX_LEVELS) {
      throw new DataError(
        `predictors column '${names[j]}' has ${order.length} different texts: a text column becomes one 0/1 column per level (at most ${MAX_LEVELS}), so this looks like a name or an identifier; leave it out of predictors`,
      );
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
  const termKeys = new Set<string>();
  for (const term of terms) {
    if (termKeys.has(textKey(term))) {
      throw new DataError(`two terms would both be named '${term}' (a column name clashes with an indicator name): rename the column`);
    }
    termKeys.add(textKey(term));
  }

  const encoder: RowEncoder = { columns, terms, width, sourceNames: names, source: "predictors" };
  const rows: number[][] = [];
  const target: number[] = [];
  let zeroRows = 0;
  for (const d of used) {
    const i = h + d;
    const values = new Array<number>(terms.length);
    encodeInto(encoder, (column) => cells[i][column.position], values, () => "training");
    rows.push(values);
    const t = numericValue(targetCells[targetStart + d] as { kind: "number"; value: number });
    target.push(t);
    let allZero = t === 0;
    for (const column of columns) {
      const c = cells[i][column.position];
      if (column.kind !== "number" || !(c.kind === "number" && c.value === 0)) allZero = false;
    }
    if (allZero) zeroRows++;
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
    predictors: rows,
    target,
    weights,
    foldLabels,
    rowsUsed: used.length,
    rowsSkipped: skipped,
    hasHeader: header,
    encoder,
    referenceLevels,
    notes,
    foldColumn: foldIndex === null ? null : names[foldIndex],
    weightsColumn: weightsIndex === null ? null : names[weightsIndex],
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
): void {
  let t = 0;
  for (const column of encoder.columns) {
    const c = cellOf(column);
    if (column.kind === "number") {
      if (!isNumeric(c)) {
        const text = c.kind === "text" ? `text '${c.value}'${storedAsTextHint(c.value)}` : describeCell(c);
        throw new DataError(`${where(column)} has ${text}, but '${column.name}' is a number column: fix it or clear the cell`);
      }
      out[t++] = numericValue(c);
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
  const header =
    first.every((c) => c.kind === "text" || c.kind === "blank") && first.some((c) => c.kind === "text" && known.has(textKey(c.value)));
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
}

const REFERENCE_SUFFIX = /\s*\(reference\)\s*$/i;

/**
 * Reads a coefficient table (SHRINK.COEFS or SHRINK.BASELINE output, or typed by hand): term |
 * coefficient rows, an optional header row (second cell text), ending at the first blank row.
 * "intercept" (or "(intercept)", or "constant" when no intercept row is present) is the
 * intercept (0 when absent); a term ending in " (reference)" marks a text column's reference level.
 */
export function readCoefficientTable(raw: unknown): CoefficientTable {
  const grid = toGrid(raw);
  if (grid.length === 0 || isBlankGrid(grid)) throw new DataError("coefficient_table is empty: select the table SHRINK.COEFS returned (term | coefficient)");
  if (grid[0].length < 2) {
    throw new DataError("coefficient_table needs two columns, term | coefficient: select both columns of the table SHRINK.COEFS returned");
  }
  const cells = classifyGrid(grid);
  let start = 0;
  if (cells[0][1].kind === "text") start = 1;
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
      const what = coefficientCell.kind === "text" ? `text '${coefficientCell.value}'` : describeCell(coefficientCell);
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
  if (terms.length === 0) throw new DataError("coefficient_table has no terms besides the intercept: select the whole table");
  return { intercept: intercept ?? 0, terms };
}

/** A term split into a column that exists in `header` and a level, or null. */
function splitTerm(term: string, headerKeys: Map<string, string>): { column: string; level: string } | null {
  let at = term.indexOf(":");
  while (at > 0) {
    const column = headerKeys.get(textKey(term.slice(0, at)));
    const level = term.slice(at + 1).trim();
    if (column !== undefined && level !== "") return { column, level };
    at = term.indexOf(":", at + 1);
  }
  return null;
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
  const headerLike =
    first.every((c) => c.kind === "text" || c.kind === "blank") &&
    first.some((c) => {
      if (c.kind !== "text") return false;
      const key = textKey(c.value);
      return termKeys.some((t) => t === key || t.startsWith(`${key}:`));
    });
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
    const split = splitTerm(t.term, headerKeys);
    if (!split) {
      const prefix = t.term.includes(":") ? t.term.slice(0, t.term.indexOf(":")).trim() : t.term;
      throw new DataError(
        `new_rows has no column '${prefix}' (needed for the term '${t.term}' of coefficient_table; new_rows' header has ${listNames(headerNames)}): add the column or fix the header`,
      );
    }
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
