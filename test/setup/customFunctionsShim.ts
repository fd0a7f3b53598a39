/**
 * Jest shim for the `CustomFunctions` global that Excel's runtime provides: the error
 * class and codes the cell functions throw, and `associate` (records registrations).
 * Mirrors the documented shape: new CustomFunctions.Error(code, message) with `code` and
 * `message`; ErrorCode values are the cell error texts.
 */
class ShimCustomFunctionsError extends Error {
  readonly code: string;
  constructor(code: string, message?: string) {
    super(message ?? "");
    this.name = "CustomFunctions.Error";
    this.code = code;
  }
}

const ErrorCode = {
  invalidValue: "#VALUE!",
  notAvailable: "#N/A",
  divisionByZero: "#DIV/0!",
  invalidNumber: "#NUM!",
  nullReference: "#NULL!",
  invalidName: "#NAME?",
  invalidReference: "#REF!",
};

const associations = new Map<string, unknown>();

(globalThis as Record<string, unknown>).CustomFunctions = {
  Error: ShimCustomFunctionsError,
  ErrorCode,
  associate(id: string | Record<string, unknown>, fn?: unknown): void {
    if (typeof id === "string") associations.set(id, fn);
    else for (const [key, value] of Object.entries(id)) associations.set(key, value);
  },
  /** Test helper: what has been associated so far. */
  __associations: associations,
};
