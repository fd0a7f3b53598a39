/**
 * Errors and warnings that a spreadsheet user can act on.
 *
 * Two channels (one policy for the whole engine):
 * - `InputError`: the input cannot be fitted as given. The message says what to fix,
 *   in the user's words ("predictors has 120 rows but target has 118").
 * - `FitWarning`: the fit went ahead but something was adjusted or is worth knowing
 *   (a constant column dropped, rows skipped, the path stopped early).
 * Programming mistakes are ordinary exceptions; the cell-function layer maps
 * `InputError` to a cell error value in exactly one place.
 */

/** Stable identifiers of the kinds of bad input; the cell functions map them to error codes. */
export type InputErrorCode =
  | "empty"
  | "shape"
  | "not-finite"
  | "constant-target"
  | "too-few-rows"
  | "weights"
  | "mix"
  | "strength"
  | "bounds"
  | "folds"
  | "fold-labels"
  | "multipliers"
  | "setting"
  | "no-predictors"
  | "out-of-range"
  /** A sums table (sums.ts) that can't be read: wrong format or version, missing or inconsistent entries. */
  | "sums";

export class InputError extends Error {
  readonly code: InputErrorCode;
  constructor(code: InputErrorCode, message: string) {
    super(message);
    this.name = "InputError";
    this.code = code;
  }
}

/** Raised when the caller's cancel signal is set; the work stops at the next checkpoint. */
export class CancelledError extends Error {
  constructor() {
    super("The fit was cancelled.");
    this.name = "CancelledError";
  }
}

/** A cancel flag the engine reads at its checkpoints (see throwIfCancelled). */
export interface CancelSignal {
  readonly aborted: boolean;
}

/**
 * A checkpoint: throws CancelledError when the signal is raised. Long computations call it
 * between slices of their work (rows of a matrix, sweeps, iterations) small enough that no two
 * checkpoints are more than about 0.1 s apart on one core; reading the flag never changes the
 * arithmetic, so results are bit-identical with or without a signal.
 */
export function throwIfCancelled(signal: CancelSignal | undefined): void {
  if (signal?.aborted) throw new CancelledError();
}

export type WarningCode =
  | "constant-column"
  | "aliased"
  | "early-stop"
  | "grid-edge"
  | "not-converged"
  | "rows-skipped"
  | "fold-constant"
  | "out-of-range"
  | "step-halved"
  | "separated"
  | "stability"
  /** A sums table's block whose rows all weigh 0, left out of least squares from sums (fitSums.ts). */
  | "weight-zero-rows";

export interface FitWarning {
  code: WarningCode;
  message: string;
}
