/**
 * The contract between the cell functions and whatever runs the engine.
 *
 * The cell-function layer (functions/api.ts) turns worksheet ranges into a `FitRequest`
 * and asks a `FitRunner` for the result. In the add-in the runner is the shared fit cache in
 * front of a Web Worker; in tests and the standalone preview it may run the engine in-process.
 * Everything in a request is plain data (it is posted to a worker and hashed for the cache).
 */
import type { FitOptions, FitResult } from "../engine/fit";
import type { SumsFitOptions } from "../engine/fitSums";
import type { ColumnMatrix } from "../engine/matrix";
import type { SumsTable } from "../engine/sumsTable";

/** Engine options without callbacks: what can cross to a worker and into a cache key. */
export type PlainFitOptions = Omit<FitOptions, "onProgress" | "signal">;

export interface FitRequest {
  /** Rows of numbers (already encoded: indicators, booleans as 1/0), one per used row. */
  predictors: number[][];
  /** One number per used row. */
  target: number[];
  options: PlainFitOptions;
}

/**
 * The packed form of a request, which large grids use (functions/dataset.ts `datasetRequest`):
 * the same encoded predictors as one column-major matrix in a single Float64Array. It crosses to a
 * worker as one block copy instead of an array per row, and the cache keys it without a copy.
 * The engine's result, and the cache entry, are the same as for the rows form of the same numbers.
 * Read-only once made: the cache keeps the matrix itself as its key.
 */
export interface PackedFitRequest {
  predictors: ColumnMatrix;
  target: number[];
  options: PlainFitOptions;
}

/** Either form: what runners, the cache and the fit worker take. */
export type AnyFitRequest = FitRequest | PackedFitRequest;

/**
 * A fit from a sums table (engine/fitSums.ts fitFromSums): the table (plain data, checked by the
 * engine again wherever it runs) and the options without callbacks. No rows: it costs
 * O(blocks·p²) per strength however many rows the sums cover.
 */
export interface SumsFitRequest {
  /** The table as read (SumsTable, or anything: the engine checks it and refuses a bad one with an InputError). */
  sums: SumsTable | unknown;
  options: Omit<SumsFitOptions, "onProgress" | "signal">;
}

/**
 * Raised by the caller (e.g. Excel cancelling a superseded recalculation). `onCancel`
 * registers a callback that runs once, at cancellation (immediately if already cancelled).
 */
export interface CancelToken {
  readonly cancelled: boolean;
  onCancel(callback: () => void): void;
}

export interface FitProgress {
  done: number;
  total: number;
}

export interface FitRunner {
  /**
   * Resolves with the engine's result, or rejects with the engine's InputError (bad input),
   * or with CancelledError (engine/errors.ts) once `cancel` fires.
   */
  fit(request: AnyFitRequest, cancel?: CancelToken, onProgress?: (progress: FitProgress) => void): Promise<FitResult>;
  /**
   * A fit from a sums table, with the same progress, cancel and errors as `fit`. Optional: a
   * runner without it leaves the caller to fit in its own thread (engine/fitSums.ts
   * fitFromSumsAsync). The worker runner runs it in the fit worker, off the pane's thread.
   */
  fitSums?(request: SumsFitRequest, cancel?: CancelToken, onProgress?: (progress: FitProgress) => void): Promise<FitResult>;
}

/** A token that is cancelled by calling `cancel()`. */
export function cancelSource(): { token: CancelToken; cancel: () => void } {
  let cancelled = false;
  const callbacks: (() => void)[] = [];
  const token: CancelToken = {
    get cancelled() {
      return cancelled;
    },
    onCancel(callback) {
      if (cancelled) callback();
      else callbacks.push(callback);
    },
  };
  return {
    token,
    cancel() {
      if (cancelled) return;
      cancelled = true;
      for (const callback of callbacks.splice(0)) callback();
    },
  };
}
