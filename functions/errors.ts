/**
 * The one place where problems become Excel error values (`CustomFunctions.Error`).
 *
 * Only #VALUE! and #N/A show a message in Excel, so those two carry every message:
 *
 * | what went wrong                                                        | cell shows | message                                  |
 * |------------------------------------------------------------------------|------------|------------------------------------------|
 * | bad worksheet data (`DataError`: shapes, text in a number column, …)   | #VALUE!    | what is wrong and what to fix            |
 * | bad settings or mixes (`SettingError`)                                 | #VALUE!    | the setting, the allowed values/range    |
 * | the engine refused the input (`InputError`, any code)                  | #VALUE!    | the engine's message, unchanged          |
 * |   e.g. a yes/no target with a third class, an event not in the data, one class only (engine/outcome.ts), a measure for the other kind of target (checkMeasure) | | |
 * | a yes/no setting (event, cutoff, predict) on a number target (`SettingError`) | #VALUE! | the settings named, and how targets are read |
 * | SHRINK.SCORE: labels beside a prediction outside 0 to 1 (`DataError`)    | #VALUE!    | the cell, and that probabilities are needed |
 * | SHRINK.APPLY on a BASELINE table that reports separation (`DataError`) | #VALUE!    | why, and to use the COEFS table          |
 * | something asked for is not available (`DataError` made with `"n/a"`):  | #N/A       | why, and what to do                      |
 * |   e.g. SHRINK.CVCURVE after a fixed strength (no cross-validation ran) |            |                                          |
 * | one row of new rows has a blank or error cell (a single cell of PREDICT/APPLY) | #N/A | which row and column                 |
 * | the fit was cancelled (`CancelledError`: Excel superseded the call)    | #N/A       | "the fit was cancelled…"                 |
 * | an unexpected internal failure (any other exception)                   | #N/A       | "Shrinkwise could not finish: …"         |
 * | a number that can't be shown (NaN, ±Infinity) inside a result          | #NUM!      | (none: Excel shows no message)           |
 * | R² of actual values that are all equal (inside SCORE's result)         | #DIV/0!    | (none)                                   |
 *
 * Errors crossing from a Web Worker may arrive as plain objects: they are recognized by their
 * `name` ("InputError", "CancelledError", "DataError", "SettingError") as well as by class.
 *
 * Outside Excel (the standalone preview) `CustomFunctions.Error` may not exist; a stand-in
 * with the same `code` and `message` fields is made instead.
 */
import { CancelledError, InputError } from "../engine/errors";

/** Worksheet data the cell functions can't use. `availability: "n/a"` shows as #N/A. */
export class DataError extends Error {
  readonly availability: "value" | "n/a";
  constructor(message: string, availability: "value" | "n/a" = "value") {
    super(message);
    this.name = "DataError";
    this.availability = availability;
  }
}

/** A setting (or the mixes argument) that can't be used. Shows as #VALUE!. */
export class SettingError extends Error {
  constructor(message: string) {
    super(message);
    this.name = "SettingError";
  }
}

/** The error codes Shrinkwise produces, by the key names of `CustomFunctions.ErrorCode`. */
type CodeName = "invalidValue" | "notAvailable" | "invalidNumber" | "divisionByZero";

const CODE_TEXT: Record<CodeName, string> = {
  invalidValue: "#VALUE!",
  notAvailable: "#N/A",
  invalidNumber: "#NUM!",
  divisionByZero: "#DIV/0!",
};

/** Codes that may carry a message. */
const WITH_MESSAGE = new Set<CodeName>(["invalidValue", "notAvailable"]);

/** The stand-in used when the host provides no `CustomFunctions.Error` (standalone preview). */
class StandInCellError {
  readonly code: CustomFunctions.ErrorCode;
  readonly message?: string;
  constructor(code: CustomFunctions.ErrorCode, message?: string) {
    this.code = code;
    if (message !== undefined) this.message = message;
  }
}

interface CustomFunctionsGlobal {
  Error?: new (code: CustomFunctions.ErrorCode, message?: string) => CustomFunctions.Error;
  ErrorCode?: Record<string, string>;
}

function host(): CustomFunctionsGlobal | undefined {
  return (globalThis as { CustomFunctions?: CustomFunctionsGlobal }).CustomFunctions;
}

/** Longest message passed to Excel; longer ones are cut with "…". */
const MESSAGE_LIMIT = 480;

function makeError(codeName: CodeName, message?: string): CustomFunctions.Error {
  const api = host();
  const code = (api?.ErrorCode?.[codeName] ?? CODE_TEXT[codeName]) as CustomFunctions.ErrorCode;
  let text = WITH_MESSAGE.has(codeName) ? message : undefined;
  if (text !== undefined && text.length > MESSAGE_LIMIT) text = `${text.slice(0, MESSAGE_LIMIT - 1)}…`;
  if (api && typeof api.Error === "function") return new api.Error(code, text);
  return new StandInCellError(code, text) as CustomFunctions.Error;
}

/** An error value for one cell of a result. */
export function cellError(codeName: CodeName, message?: string): CustomFunctions.Error {
  return makeError(codeName, message);
}

/** True for values made by this module (or any `CustomFunctions.Error`). */
export function isCellError(value: unknown): value is CustomFunctions.Error {
  if (value instanceof StandInCellError) return true;
  const ErrorClass = host()?.Error;
  return typeof ErrorClass === "function" && value instanceof ErrorClass;
}

function nameOf(e: unknown): string {
  if (e && typeof e === "object" && typeof (e as { name?: unknown }).name === "string") return (e as { name: string }).name;
  return "";
}

function messageOf(e: unknown): string {
  if (e && typeof e === "object" && typeof (e as { message?: unknown }).message === "string") return (e as { message: string }).message;
  return typeof e === "string" ? e : String(e);
}

/**
 * Turns anything thrown while computing a cell function into the error value the cell shows
 * (mapping in the table above).
 * Example: toCellError(new InputError("folds", "folds must be …")) → #VALUE! "folds must be …".
 */
export function toCellError(e: unknown): CustomFunctions.Error {
  if (isCellError(e)) return e;
  if (e instanceof DataError) return makeError(e.availability === "n/a" ? "notAvailable" : "invalidValue", e.message);
  const name = nameOf(e);
  if (e instanceof CancelledError || name === "CancelledError") {
    return makeError("notAvailable", "the fit was cancelled before it finished: recalculate to run it again");
  }
  if (e instanceof InputError || e instanceof SettingError || name === "InputError" || name === "SettingError") {
    return makeError("invalidValue", messageOf(e));
  }
  if (name === "DataError") {
    const availability = (e as { availability?: unknown }).availability;
    return makeError(availability === "n/a" ? "notAvailable" : "invalidValue", messageOf(e));
  }
  return makeError("notAvailable", `Shrinkwise could not finish: ${messageOf(e)}`);
}
