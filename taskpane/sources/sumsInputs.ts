/**
 * The pane's choices for the two routes that fit from sums, without the DOM: where the data come
 * from (`SourceKind`), which columns of a picked file play which part, how its rows are dealt
 * into blocks (the fold rule), and the few settings a fit from sums takes. Each check gives the
 * message shown under its field, in the pane's words; nothing here reads a file or a sheet.
 *
 * Fold rules (one block per fold label; the fit from sums cross-validates over the blocks):
 * - "hash":   a hash of an integer key column into K folds (the same fold for a key on every
 *             engine: the generator's portable hash);
 * - "column": a column that holds the fold label of each row;
 * - "time":   K consecutive blocks in the order of a column (dates, timestamps, a counter).
 */
import { parseMixes } from "../../functions/settings";
import type { FileColumn } from "./fileSums";

/** Where the pane's data come from. */
export type SourceKind = "sheet" | "file" | "sums";

export const SOURCE_KINDS: readonly { id: SourceKind; label: string }[] = [
  { id: "sheet", label: "Worksheet ranges" },
  { id: "file", label: "A local file" },
  { id: "sums", label: "A sums table" },
];

export type FoldRuleKind = "hash" | "column" | "time";

export const FOLD_RULES: readonly { id: FoldRuleKind; label: string }[] = [
  { id: "hash", label: "Random, by a hash of a key column" },
  { id: "column", label: "A fold column" },
  { id: "time", label: "Time blocks, in the order of a column" },
];

/** The fold rule as the SQL generator takes it. */
export type FoldRule = { kind: "column"; column: string } | { kind: "hash"; key: string; folds: number } | { kind: "time"; column: string; folds: number };

/** What the user chose for a file (column names as the file has them; "" = not chosen). */
export interface FileChoice {
  target: string;
  predictors: string[];
  weights: string;
  foldRule: FoldRuleKind;
  /** The key column (hash), fold column (column) or ordering column (time). */
  foldColumn: string;
  /** K for hash and time blocks, as typed ("" = 10). */
  folds: string;
}

/** The checked choice: what the SQL generator needs besides the source. */
export interface FileSpec {
  target: string;
  predictors: string[];
  weights: string | null;
  fold: FoldRule;
}

export function emptyFileChoice(): FileChoice {
  return { target: "", predictors: [], weights: "", foldRule: "hash", foldColumn: "", folds: "" };
}

/** Folds for hash and time blocks when none are typed. */
export const DEFAULT_FILE_FOLDS = 10;
/** Most folds (blocks) a file may be dealt into. */
export const MAX_FILE_FOLDS = 100;

const INTEGER_TYPES = /^(TINYINT|SMALLINT|INTEGER|BIGINT|HUGEINT|UTINYINT|USMALLINT|UINTEGER|UBIGINT|UHUGEINT)$/i;
const ORDER_TYPES = /^(DATE|TIME|TIMESTAMP.*|DOUBLE|FLOAT|REAL|DECIMAL.*|TINYINT|SMALLINT|INTEGER|BIGINT|HUGEINT|UTINYINT|USMALLINT|UINTEGER|UBIGINT|UHUGEINT)$/i;

/** A whole number from `min` to `max` typed in a field, or a message. */
export function wholeNumber(text: string, what: string, min: number, max: number): number | string {
  const t = text.trim();
  if (!/^[+]?\d+$/.test(t)) return `${what} must be a whole number from ${min} to ${max}, not '${t}'`;
  const n = Number(t);
  if (n < min || n > max) return `${what} must be from ${min} to ${max}, not ${n}`;
  return n;
}

/** Problems per field (target, predictors, weights, fold-column, folds), and the spec when there are none. */
export interface FileCheck {
  fields: Partial<Record<"target" | "predictors" | "weights" | "fold-column" | "folds", string>>;
  spec: FileSpec | null;
}

/** Checks a file choice against the file's columns (DESCRIBE). */
export function checkFileChoice(choice: FileChoice, columns: readonly FileColumn[]): FileCheck {
  const fields: FileCheck["fields"] = {};
  const byName = new Map(columns.map((c) => [c.name, c]));
  const target = byName.get(choice.target);
  if (!choice.target) fields.target = "Choose the target column.";
  else if (!target) fields.target = `The file has no column '${choice.target}': choose the target again.`;
  else if (!target.numeric) {
    fields.target = `'${target.name}' is ${target.type}, not numbers: a fit from sums needs a number target (a yes/no target needs passes over the rows: put the rows on a sheet).`;
  }
  const weights = choice.weights ? byName.get(choice.weights) : null;
  if (choice.weights && !weights) fields.weights = `The file has no column '${choice.weights}'.`;
  else if (weights && !weights.numeric) fields.weights = `'${weights.name}' is ${weights.type}: weights must be numbers.`;
  else if (weights && weights.name === choice.target) fields.weights = "The weights can't be the target.";

  const foldColumn = byName.get(choice.foldColumn);
  const ruleWords = choice.foldRule === "hash" ? "key column" : choice.foldRule === "column" ? "fold column" : "ordering column";
  if (!choice.foldColumn) fields["fold-column"] = `Choose the ${ruleWords}.`;
  else if (!foldColumn) fields["fold-column"] = `The file has no column '${choice.foldColumn}'.`;
  else if (choice.foldRule === "hash" && !INTEGER_TYPES.test(foldColumn.type)) {
    fields["fold-column"] = `'${foldColumn.name}' is ${foldColumn.type}: the hash needs a whole-number key (an ID column).`;
  } else if (choice.foldRule === "time" && !ORDER_TYPES.test(foldColumn.type)) {
    fields["fold-column"] = `'${foldColumn.name}' is ${foldColumn.type}: time blocks need a date, time or number column to order by.`;
  } else if (foldColumn.name === choice.target) fields["fold-column"] = `The ${ruleWords} can't be the target.`;

  let folds = DEFAULT_FILE_FOLDS;
  if (choice.foldRule !== "column" && choice.folds.trim() !== "") {
    const n = wholeNumber(choice.folds, "Folds", 2, MAX_FILE_FOLDS);
    if (typeof n === "string") fields.folds = n;
    else folds = n;
  }

  const predictors = choice.predictors.filter((name) => name !== "");
  const used = new Set([choice.target, choice.weights, choice.foldRule === "column" ? choice.foldColumn : ""].filter((n) => n !== ""));
  if (predictors.length === 0) fields.predictors = "Choose at least one predictor column.";
  else {
    const missing = predictors.find((name) => !byName.has(name));
    const clash = predictors.find((name) => used.has(name));
    if (missing) fields.predictors = `The file has no column '${missing}': choose the predictors again.`;
    else if (clash) fields.predictors = `'${clash}' is ${clash === choice.target ? "the target" : clash === choice.weights ? "the weights column" : "the fold column"}: leave it out of the predictors.`;
  }
  if (Object.keys(fields).length > 0) return { fields, spec: null };
  const fold: FoldRule =
    choice.foldRule === "column"
      ? { kind: "column", column: choice.foldColumn }
      : choice.foldRule === "hash"
        ? { kind: "hash", key: choice.foldColumn, folds }
        : { kind: "time", column: choice.foldColumn, folds };
  return { fields, spec: { target: choice.target, predictors, weights: choice.weights || null, fold } };
}

/**
 * A fresh choice for a newly read file: keeps what still names a column of it, otherwise the last
 * number column as the target, every other number column as a predictor, and an integer column
 * named like an ID (or else the first integer column) as the hash key.
 */
export function defaultFileChoice(columns: readonly FileColumn[], previous: FileChoice = emptyFileChoice()): FileChoice {
  const names = new Set(columns.map((c) => c.name));
  const numeric = columns.filter((c) => c.numeric);
  const target = names.has(previous.target) ? previous.target : (numeric[numeric.length - 1]?.name ?? "");
  const keyLike = columns.find((c) => INTEGER_TYPES.test(c.type) && /(^|_|\b)(id|key|batch|serial)($|_|\b)/i.test(c.name));
  const foldColumn = names.has(previous.foldColumn) ? previous.foldColumn : previous.foldRule === "hash" ? (keyLike?.name ?? "") : "";
  const weights = names.has(previous.weights) ? previous.weights : "";
  const kept = previous.predictors.filter((p) => names.has(p) && p !== target);
  const predictors =
    kept.length > 0 ? kept : numeric.map((c) => c.name).filter((name) => name !== target && name !== foldColumn && name !== weights);
  return { target, predictors, weights, foldRule: previous.foldRule, foldColumn, folds: previous.folds };
}

/** The settings of a fit from sums, as typed. */
export interface SumsFitChoice {
  /** Mixes as typed ("" = the default mixes). */
  mixes: string;
  rule: "lowest" | "one-se";
  /** Merge the blocks into K folds (block k → fold k mod K); "" = one fold per block. */
  folds: string;
  standardize: boolean;
  intercept: boolean;
}

export function defaultSumsFit(): SumsFitChoice {
  return { mixes: "", rule: "lowest", folds: "", standardize: true, intercept: true };
}

/** The options a fit from sums takes from the pane (engine names). */
export interface SumsFitSettings {
  mixes?: number[];
  rule: "lowest" | "one-se";
  folds?: number;
  standardize: boolean;
  intercept: boolean;
}

/** Checks the settings; per-field problems (mixes, folds) or the options. */
export function checkSumsFit(choice: SumsFitChoice): { fields: Partial<Record<"mixes" | "folds", string>>; settings: SumsFitSettings | null } {
  const fields: Partial<Record<"mixes" | "folds", string>> = {};
  let mixes: number[] | null = null;
  try {
    mixes = parseMixes(choice.mixes.trim() === "" ? null : choice.mixes);
  } catch (error) {
    fields.mixes = error instanceof Error ? error.message : String(error);
  }
  let folds: number | undefined;
  if (choice.folds.trim() !== "") {
    const n = wholeNumber(choice.folds, "Folds", 2, MAX_FILE_FOLDS);
    if (typeof n === "string") fields.folds = n;
    else folds = n;
  }
  if (Object.keys(fields).length > 0) return { fields, settings: null };
  const settings: SumsFitSettings = { rule: choice.rule, standardize: choice.standardize, intercept: choice.intercept };
  if (mixes) settings.mixes = mixes;
  if (folds !== undefined) settings.folds = folds;
  return { fields, settings };
}
