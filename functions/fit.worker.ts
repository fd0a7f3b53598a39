/**
 * The fit worker: runs the engine off the add-in's UI thread.
 *
 * Protocol (all messages are plain data; ids are chosen by the main side):
 *   in:  { type: "fit", id, request }        start a fit of `request` (an AnyFitRequest)
 *        { type: "fitSums", id, request }    start a fit from a sums table (a SumsFitRequest:
 *                                            engine/fitSums.ts fitFromSumsAsync, in this worker's
 *                                            own thread; same progress, cancel and answers)
 *        { type: "cancel", id }              raise that fit's signal; it stops at the next
 *                                            checkpoint and answers with a "cancelled" error
 *        { type: "warm" }                    a small fit on made-up data, answered by nothing,
 *                                            so the engine is compiled before the first real fit;
 *                                            ignored once any fit came, stopped when one comes
 *   out: { type: "progress", id, done, total }  after each unit of work
 *        { type: "result", id, result }         the engine's FitResult, structured-cloned (its
 *                                            held-out lists packed: packResult / unpackResult)
 *        { type: "error", id, error }           a PlainError (see below)
 * A packed request (runner.ts PackedFitRequest) arrives with its matrix's buffer transferred.
 * Nothing goes back transferred: transferring detaches the sender's ArrayBuffer, and the first
 * detach in a V8 isolate invalidates that isolate's "array buffer detaching" protector, after which
 * optimized code checks every typed-array access for a detached buffer and the engine ran ~25%
 * slower in that thread for good (measured on the task workers: engine/parallel.ts, bench/PROFILE.md).
 * This worker runs the engine, so its answers are copied (the packed held-out lists: ~1 MB on
 * 50,000 rows, a memcpy); the main side, which runs no engine code, may transfer into it.
 * Every fit gets exactly one "result" or "error". Several fits may run at once: a fit yields a
 * macrotask once its current slice of work has run SLICE_MS (fitInSlices), so they interleave and
 * cancel messages get through.
 * Where the host allows nested workers, a fit's mixes and folds run on a pool of task workers
 * (taskPool.ts, task.worker.ts), with the same result bit for bit; a cancel stops them at once.
 * A fit from sums uses the same pool (its workers get the fit's problems, never rows).
 *
 * The handler (`createFitHandler`) is plain code with no worker globals, so tests drive it
 * directly; the bootstrap at the bottom wires it to the worker's own message port.
 */
import { FitOptions, FitResult, fitSteps, nextTask } from "../engine/fit";
import { mulberry32 } from "../engine/random";
import { CancelledError, InputError, InputErrorCode } from "../engine/errors";
import { fitFromSumsAsync } from "../engine/fitSums";
import type { AnyFitRequest, SumsFitRequest } from "./runner";
import { browserTaskPool, pooledFit } from "./taskPool";

/** An error as it crosses the worker boundary. */
export interface PlainError {
  kind: "input" | "cancelled" | "other";
  /** InputError's code, for kind "input". */
  code?: InputErrorCode;
  name: string;
  message: string;
}

export type ToWorker =
  | { type: "fit"; id: number; request: AnyFitRequest }
  | { type: "fitSums"; id: number; request: SumsFitRequest }
  | { type: "cancel"; id: number }
  | { type: "warm" };

/** The fit from sums a worker runs (fitFromSumsAsync, pooled where the host allows; replaceable in tests). */
import type { SumsFitFunction } from "./taskPool";
export type { SumsFitFunction };

export type FromWorker =
  | { type: "progress"; id: number; done: number; total: number }
  | { type: "result"; id: number; result: WireFitResult }
  | { type: "error"; id: number; error: PlainError };

/** The fit a worker runs (defined beside the pool, which provides one; see taskPool.ts). */
import type { FitFunction } from "./taskPool";
export type { FitFunction };

/**
 * FitResult.heldOut's three lists (one entry per held-out row) as typed arrays for the trip to
 * the main side: the structured clone of three plain arrays of 50,000 numbers took 17–19 ms each
 * way and back (v8 serialize + deserialize, measured), about 10% of the 50,000 × 40
 * recalculation; typed arrays are cloned as one block copy each (copied, not transferred: see the
 * module comment). Every value is kept exactly (row and fold are whole numbers below 2³¹, the
 * residuals doubles). `unpackResult` rebuilds the plain lists, so callers see the same FitResult
 * as from the in-process runner.
 */
export interface PackedHeldOut {
  packed: true;
  row: Int32Array;
  fold: Int32Array;
  residual: Float64Array;
}

/** A FitResult as it crosses the worker boundary (heldOut possibly packed). */
export type WireFitResult = Omit<FitResult, "heldOut"> & { heldOut?: FitResult["heldOut"] | PackedHeldOut };

/** The result to post (the result itself is not changed). */
export function packResult(result: FitResult): WireFitResult {
  const held = result.heldOut;
  if (!held || !Array.isArray(held.row)) return result;
  const packed: PackedHeldOut = { packed: true, row: Int32Array.from(held.row), fold: Int32Array.from(held.fold), residual: Float64Array.from(held.residual) };
  return { ...result, heldOut: packed };
}

/** The FitResult a packed one stands for (plain lists again); anything else as it came. */
export function unpackResult(result: WireFitResult): FitResult {
  const held = result.heldOut;
  if (!held || !("packed" in held)) return result as FitResult;
  return { ...result, heldOut: { row: listOf(held.row), fold: listOf(held.fold), residual: listOf(held.residual) } } as FitResult;
}

/** A typed array's values as a plain list (an indexed loop: Array.from took 4 ms for three lists of 50,000, this 1). */
function listOf(values: Int32Array | Float64Array): number[] {
  const list: number[] = [];
  for (let i = 0; i < values.length; i++) list.push(values[i]);
  return list;
}

/**
 * Longest run of a fit's units of work between two yields to the worker's event loop, in ms. The
 * engine's fitAsync yields after every unit (66 in the bench's fits, 1–2 ms each); each yield cost
 * the worker about 0.1 ms of thread time and the fit 5–10% in all (thread CPU of a 1,000 × 50 fit
 * in a worker: 94 ms run straight through, 101 with a yield per unit, 97 with one per 10 ms). A cancel
 * still gets through within a slice and a unit.
 */
export const SLICE_MS = 10;

/**
 * The worker's fit: the engine's fit as a generator (fitSteps: the same plan and steps as fitAsync
 * without a pool, so the same result bit for bit), yielding a macrotask (the engine's nextTask)
 * whenever `sliceMs` have passed since the last yield.
 */
export function fitInSlices(sliceMs: number = SLICE_MS): FitFunction {
  return async (predictors, target, options) => {
    const steps = fitSteps(predictors, target, options);
    let last = performance.now();
    for (;;) {
      const step = steps.next();
      if (step.done) return step.value;
      if (performance.now() - last >= sliceMs) {
        await nextTask();
        last = performance.now();
      }
    }
  };
}

/**
 * The warm-up fit: 200 rows × 20 made-up predictors, three mixes, five folds (a fit of ~80 ms that
 * took the first real 1,000 × 50 fit from ~340 to ~240 ms, bench/PROFILE.md). Its result is thrown
 * away: it only gets V8 to compile the engine, which changes no number of any later fit.
 */
function runWarmUp(signal: { aborted: boolean }): Promise<unknown> {
  const uniform = mulberry32(20261205);
  const predictors: number[][] = [];
  const target: number[] = [];
  for (let i = 0; i < 200; i++) {
    const row: number[] = [];
    for (let j = 0; j < 20; j++) row.push(uniform() - 0.5);
    predictors.push(row);
    target.push(row[0] - 0.5 * row[1] + 0.25 * row[2] + 0.1 * (uniform() - 0.5));
  }
  // Short slices, so a real fit that arrives stops it within ~2 ms.
  return fitInSlices(2)(predictors, target, { mixes: [0, 0.5, 1], folds: 5, seed: 1, signal });
}

/** Turns any thrown value into plain data that survives structured cloning. */
export function toPlainError(error: unknown): PlainError {
  if (error instanceof InputError) return { kind: "input", code: error.code, name: error.name, message: error.message };
  if (error instanceof CancelledError) return { kind: "cancelled", name: error.name, message: error.message };
  if (error instanceof Error) return { kind: "other", name: error.name, message: error.message };
  return { kind: "other", name: "Error", message: String(error) };
}

/** Rebuilds the engine's error classes from plain data (the main side of the boundary). */
export function fromPlainError(plain: PlainError): Error {
  if (plain.kind === "input") return new InputError(plain.code ?? "setting", plain.message);
  if (plain.kind === "cancelled") return new CancelledError();
  const error = new Error(plain.message);
  error.name = plain.name;
  return error;
}

/**
 * The worker's message handler. `post` sends a message back (copied, never transferred);
 * `fitImpl` runs a fit (fitInSlices by default) and `fitSumsImpl` a fit from sums (the engine's
 * fitFromSumsAsync); both replaceable in tests.
 */
export function createFitHandler(
  post: (message: FromWorker) => void,
  fitImpl: FitFunction = fitInSlices(),
  fitSumsImpl: SumsFitFunction = fitFromSumsAsync,
): (message: ToWorker) => void {
  const signals = new Map<number, { aborted: boolean }>();
  /** The warm-up's signal while it runs; `worked` once any real fit came. */
  let warming: { aborted: boolean } | null = null;
  let worked = false;
  return (message: ToWorker) => {
    if (message.type === "warm") {
      if (worked || warming) return;
      const signal = { aborted: false };
      warming = signal;
      const done = (): void => {
        if (warming === signal) warming = null;
      };
      runWarmUp(signal).then(done, done);
      return;
    }
    if (message.type === "fit" || message.type === "fitSums") {
      // A real fit supersedes the warm-up at once.
      worked = true;
      if (warming) warming.aborted = true;
    }
    if (message.type === "cancel") {
      const signal = signals.get(message.id);
      if (signal) signal.aborted = true;
      return;
    }
    if (message.type === "fitSums") {
      // A fit from sums: no rows, so no buffer to hand back.
      const { id, request } = message;
      const signal = { aborted: false };
      signals.set(id, signal);
      let run: Promise<FitResult>;
      try {
        run = fitSumsImpl(request.sums, { ...request.options, signal, onProgress: (done, total) => post({ type: "progress", id, done, total }) });
      } catch (error) {
        run = Promise.reject(error);
      }
      run.then(
        (result) => {
          signals.delete(id);
          post({ type: "result", id, result });
        },
        (error: unknown) => {
          signals.delete(id);
          post({ type: "error", id, error: toPlainError(error) });
        },
      );
      return;
    }
    if (message.type !== "fit") return;
    const { id, request } = message;
    const signal = { aborted: false };
    signals.set(id, signal);
    const options: FitOptions = {
      ...request.options,
      signal,
      onProgress: (done, total) => post({ type: "progress", id, done, total }),
    };
    let run: Promise<FitResult>;
    try {
      run = fitImpl(request.predictors, request.target, options);
    } catch (error) {
      run = Promise.reject(error);
    }
    run.then(
      (result) => {
        signals.delete(id);
        post({ type: "result", id, result: packResult(result) });
      },
      (error: unknown) => {
        signals.delete(id);
        post({ type: "error", id, error: toPlainError(error) });
      },
    );
  };
}

// ---------------------------------------------------------------------------------------------
// Bootstrap: only inside a dedicated worker (WorkerGlobalScope exists there and nowhere else).

interface WorkerScope {
  postMessage(message: unknown, transfer?: ArrayBuffer[]): void;
  onmessage: ((event: { data: ToWorker }) => void) | null;
}

const scope = globalThis as unknown as WorkerScope & { WorkerGlobalScope?: new () => unknown };
if (typeof scope.WorkerGlobalScope === "function" && scope instanceof scope.WorkerGlobalScope) {
  // The folds and mixes run on nested task workers where the host allows them (taskPool.ts).
  // Without a pool (a host with 2 cores or fewer, or no nested workers) a fit runs here in slices.
  const pool = browserTaskPool();
  const pooled = pooledFit(pool);
  const handle = createFitHandler((message) => scope.postMessage(message), pool ? pooled : fitInSlices(), pooled.sums);
  scope.onmessage = (event) => handle(event.data);
}
