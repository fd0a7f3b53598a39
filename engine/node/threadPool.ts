/**
 * Parallel folds in Node (the command line and the bench): a parallel.ts WorkerPool over
 * worker_threads, and `fitParallel`, a fit on a pool of a given size. Node-only (this folder is
 * not part of the add-in's bundle); the engine itself stays free of worker APIs.
 */
import { availableParallelism } from "os";
import * as path from "path";
import { Worker } from "worker_threads";
import { fit, fitAsync, FitOptions, FitResult } from "../fit";
import type { ColumnMatrix } from "../matrix";
import { FromTaskWorker, TaskEndpoint, TaskPool, WorkerPool } from "../parallel";

/** The worker script, beside this file (a .ts source under tsx or ts-jest, a .js file once compiled). */
function workerScript(): { file: string; eval: boolean } {
  const source = __filename.endsWith(".ts");
  const entry = path.join(__dirname, source ? "taskThread.ts" : "taskThread.js");
  if (!source) return { file: entry, eval: false };
  // Running from sources: the thread registers tsx's require hook first (found from here, not
  // from the working folder, which may be anywhere), then loads the entry.
  const tsx = require.resolve("tsx/cjs/api");
  return { file: `require(${JSON.stringify(tsx)}).register(); require(${JSON.stringify(entry)});`, eval: true };
}

/** One worker thread as a parallel.ts endpoint. */
function spawnThread(): TaskEndpoint {
  const script = workerScript();
  const worker = new Worker(script.file, { eval: script.eval });
  // A pool's idle workers must not keep the process alive.
  worker.unref();
  return {
    post: (message, transfer) => worker.postMessage(message, transfer ?? []),
    listen: (onMessage, onError) => {
      worker.on("message", (message: FromTaskWorker) => onMessage(message));
      worker.on("error", onError);
      worker.on("exit", (code) => {
        if (code !== 0) onError(new Error(`the worker thread exited with code ${code}`));
      });
    },
    terminate: () => void worker.terminate(),
    hold: (busy) => (busy ? worker.ref() : worker.unref()),
  };
}

/** Workers for `threads`: a whole number from 1, or "auto" (the cores Node may use, os.availableParallelism). */
export function threadCount(threads: number | "auto"): number {
  if (threads === "auto") return Math.max(1, availableParallelism());
  if (!(Number.isInteger(threads) && threads >= 1)) throw new Error(`threads must be a whole number from 1 or auto; got ${String(threads)}`);
  return threads;
}

/**
 * A pool of worker threads running fit tasks (parallel.ts). Dispose of it when done. Worker
 * threads share memory (SharedArrayBuffer), so a gram-form fit's pass of block sums is shared
 * between this thread and a worker (fit.ts pooledProblems).
 */
export function threadPool(threads: number | "auto"): TaskPool {
  return new WorkerPool(spawnThread, threadCount(threads), true);
}

/**
 * Fits as `fit` does, with the folds and mixes spread over `threads` worker threads (1: the
 * sequential fit in this thread, no workers). Bit-identical to `fit` for the same inputs.
 * `pool`: an existing pool to use (kept open) instead of starting one for this fit.
 */
export async function fitParallel(
  predictors: ArrayLike<ArrayLike<number>> | ColumnMatrix,
  target: ArrayLike<number>,
  options: FitOptions = {},
  run: { threads?: number | "auto"; pool?: TaskPool } = {},
): Promise<FitResult> {
  if (run.pool) return fitAsync(predictors, target, options, { pool: run.pool });
  const threads = threadCount(run.threads ?? "auto");
  if (threads <= 1) return fit(predictors, target, options);
  const pool = threadPool(threads);
  try {
    return await fitAsync(predictors, target, options, { pool });
  } finally {
    pool.dispose();
  }
}
