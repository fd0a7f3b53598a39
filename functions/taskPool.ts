/**
 * Parallel folds in the add-in: the fit worker (fit.worker.ts) spreads a fit's mixes and folds
 * over a pool of task workers (task.worker.ts, nested Web Workers), sized from
 * navigator.hardwareConcurrency less one core left to Excel; the pooled fit is bit-identical to
 * the sequential one (engine/parallel.ts). Where nested workers can't start (an older host, a
 * security policy) the first pooled fit finds out (PoolUnavailableError) and that fit and every
 * later one run sequentially in the fit worker, as before.
 *
 * One fit uses the pool at a time: a fit that starts while the pool is busy runs sequentially,
 * interleaved with the others as fits always have been in the fit worker.
 */
import { fitAsync, FitOptions, FitResult } from "../engine/fit";
import { fitFromSumsAsync, type SumsFitOptions } from "../engine/fitSums";
import { PoolUnavailableError, TaskEndpoint, TaskPool, WorkerPool } from "../engine/parallel";
import type { AnyFitRequest } from "./runner";

/** File name of the task worker bundle (webpack entry "task.worker", see addin/webpack.config.js). */
export const TASK_WORKER_FILE = "task.worker.js";

/** Task workers for a machine with `cores` logical cores: one left to Excel, at least 1. */
export function poolSize(cores: number | undefined): number {
  return Math.max(1, Math.floor(cores ?? 1) - 1);
}

/** The part of the DOM Worker a task endpoint uses (a fake in tests). */
export interface TaskWorkerLike {
  postMessage(message: unknown, transfer: Transferable[]): void;
  terminate(): void;
  onmessage: ((event: { data: unknown }) => void) | null;
  onerror: ((event: unknown) => void) | null;
}

/** A Web Worker as an engine/parallel.ts endpoint. */
export function taskEndpoint(worker: TaskWorkerLike): TaskEndpoint {
  return {
    post: (message, transfer) => worker.postMessage(message, transfer ?? []),
    listen: (onMessage, onError) => {
      worker.onmessage = (event) => onMessage(event.data as Parameters<typeof onMessage>[0]);
      worker.onerror = (event) => onError(event);
    },
    terminate: () => worker.terminate(),
  };
}

/**
 * The pool for this host, or null when a pool would not help (one task worker: the fit worker
 * alone is as fast) or workers can't be made here. `url`: the task worker bundle, by default
 * beside the script that runs this (the fit worker's own location).
 */
export function browserTaskPool(url?: string): TaskPool | null {
  if (typeof Worker !== "function") return null;
  const cores = typeof navigator !== "undefined" ? navigator.hardwareConcurrency : undefined;
  const size = poolSize(cores);
  if (size < 2) return null;
  const base = typeof location !== "undefined" ? location.href : "https://localhost/";
  const address = url ?? new URL(TASK_WORKER_FILE, base).href;
  return new WorkerPool(() => taskEndpoint(new Worker(address, { name: "shrinkwise-task" }) as unknown as TaskWorkerLike), size);
}

/**
 * The fit worker's fit function with a pool (see the module comment): pooled while the pool is
 * free and working, sequential otherwise. Without a pool it is plain fitAsync.
 */
/** A fit as the worker runs it: the request's data and options in, the result out. */
export type FitFunction = (
  predictors: AnyFitRequest["predictors"],
  target: AnyFitRequest["target"],
  options: FitOptions,
) => Promise<FitResult>;

export function pooledFit(pool: TaskPool | null): FitFunction & { poolBroken: () => boolean; sums: SumsFitFunction } {
  let busy = false;
  let broken = pool === null;
  /** `job` on the pool while it is free and working, else (and when it turns out broken) in this thread. */
  const pooled = async (job: (pool: TaskPool | null) => Promise<FitResult>): Promise<FitResult> => {
    if (broken || busy || pool === null) return job(null);
    busy = true;
    try {
      return await job(pool);
    } catch (error) {
      if (!(error instanceof PoolUnavailableError)) throw error;
      broken = true;
      pool.dispose();
      return job(null);
    } finally {
      busy = false;
    }
  };
  const run = (predictors: AnyFitRequest["predictors"], target: number[], options: FitOptions): Promise<FitResult> => pooled((p) => fitAsync(predictors, target, options, { pool: p }));
  // A fit from a sums table shares the pool the same way (engine/fitSums.ts fitFromSumsAsync).
  const sums: SumsFitFunction = (table, options) => pooled((p) => fitFromSumsAsync(table, options, { pool: p }));
  return Object.assign(run, { poolBroken: () => broken, sums });
}

/** A fit from a sums table as the worker runs it (fit.worker.ts "fitSums"). */
export type SumsFitFunction = (sums: unknown, options: SumsFitOptions) => Promise<FitResult>;
