/**
 * A FitRunner that runs the engine in the calling JavaScript context (`fitAsync`, which yields
 * to the event loop between units of work so a cancel can get through). Used by the tests and
 * the standalone preview; the add-in uses the cached Web-Worker runner instead.
 *
 * Cancelling: the token is mapped to the engine's `{ aborted }` signal; the fit stops with
 * CancelledError at its next checkpoint. A token cancelled before the call rejects at once.
 */
import { CancelledError } from "../engine/errors";
import { fitAsync, FitResult } from "../engine/fit";
import { fitFromSumsAsync } from "../engine/fitSums";
import type { AnyFitRequest, CancelToken, FitProgress, FitRunner, SumsFitRequest } from "./runner";

type Progress = ((done: number, total: number) => void) | undefined;

/**
 * Runs one engine call with the token mapped to its `{ aborted }` signal and its progress as
 * FitProgress: a token cancelled before the call rejects at once, a raised signal ends in
 * CancelledError.
 */
async function cancellable(
  cancel: CancelToken | undefined,
  onProgress: ((progress: FitProgress) => void) | undefined,
  run: (signal: { aborted: boolean }, progress: Progress) => Promise<FitResult>,
): Promise<FitResult> {
  const signal = { aborted: false };
  if (cancel) {
    if (cancel.cancelled) throw new CancelledError();
    cancel.onCancel(() => {
      signal.aborted = true;
    });
  }
  const result = await run(signal, onProgress ? (done, total) => onProgress({ done, total }) : undefined);
  if (signal.aborted) throw new CancelledError();
  return result;
}

export class InProcessRunner implements FitRunner {
  fit(request: AnyFitRequest, cancel?: CancelToken, onProgress?: (progress: FitProgress) => void): Promise<FitResult> {
    return cancellable(cancel, onProgress, (signal, progress) => fitAsync(request.predictors, request.target, { ...request.options, signal, onProgress: progress }));
  }

  /** A fit from a sums table (fitFromSumsAsync), cancelled and reported like `fit`. */
  fitSums(request: SumsFitRequest, cancel?: CancelToken, onProgress?: (progress: FitProgress) => void): Promise<FitResult> {
    return cancellable(cancel, onProgress, (signal, progress) => fitFromSumsAsync(request.sums, { ...request.options, signal, onProgress: progress }));
  }
}

/** A new in-process runner. */
export function createInProcessRunner(): FitRunner {
  return new InProcessRunner();
}
