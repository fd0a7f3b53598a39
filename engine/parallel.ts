/**
 * Parallel folds: the cross-validated fit as tasks, and the pool that runs them.
 *
 * A cross-validated fit (fit.ts) is, after its set-up, a list of independent pieces of work:
 * each mix's full-data path (it fixes the strengths that mix's folds solve), then every
 * (mix, deal, fold) path scored on its held-out rows. Each piece is a `FitTask`, and
 * `runFitTask(context, task)` (fit.ts) computes it as a pure function of the fit's context
 * (the prepared data, fold plans and problems, all rebuilt identically from the fit's inputs)
 * and the task. The sequential fit (fitSteps) runs the very same tasks one after another on
 * its own context; a pool runs them in workers, each holding its own context built once from
 * the inputs it was sent once per fit. Results are merged by the fit in task order, never in
 * completion order, so every sum, maximum and choice is computed from the same numbers in the
 * same order: a pooled fit is bit-identical to the sequential one by construction.
 *
 * This module is pure (no worker API): the message protocol, the `TaskPool` interface, and
 * `WorkerPool`, a pool over any message endpoint (worker_threads in Node: engine/node/;
 * Web Workers in the add-in: functions/taskPool.ts). The worker side is `createTaskHost`.
 *
 * Scheduling: each idle worker takes the first task not yet started among those of the training
 * problems it already holds or no other worker has claimed (taskAffinity), else the first not yet
 * started, so every worker stays busy; a task's result waits until all earlier tasks' results
 * have been handed over. Cancelling (the signal read every POLL_MS) terminates every worker at
 * once, so a cancel lands within a few milliseconds whatever the workers are computing; a new
 * fit starts fresh workers.
 */
import { CancelledError, CancelSignal, FitWarning, InputError, InputErrorCode } from "./errors";
import type { HonestFold } from "./assurance";
import type { ColumnMatrix } from "./matrix";
import type { LogisticRun } from "./logistic";
import type { PathRun } from "./path";
import type { BlockSums, Standardization } from "./problem";

/** One piece of a cross-validated fit (see the module comment). `mix` indexes the fit's mixes. */
export type FitTask =
  /** A mix's full-data path: its grid's top, the grid, and the path down it. */
  | { kind: "path"; mix: number }
  /**
   * Fold `fold` of deal `deal` solved down `strengths` (the mix's full-data path strengths) and
   * scored on its held-out rows. `keepPath`: return the standardized coefficients at every strength
   * (the chosen mix's fold models come from them); `keepSigns`: return their signs (repeats' kept shares).
   */
  | { kind: "fold"; mix: number; deal: number; fold: number; strengths: number[]; keepPath: boolean; keepSigns: boolean }
  /** An exact-ridge fold of the first deal (kernel form, which keeps no path): its coefficients at one strength. */
  | { kind: "fold-point"; mix: number; fold: number; strength: number }
  /** Outer fold `outer` of the honest error (honest.ts): the whole procedure on its training rows, scored on its held-out rows. */
  | { kind: "honest"; outer: number }
  /**
   * The sums of the fit's row blocks `from` … `to` − 1 (problem.ts blockSumsOf), for a session
   * opened with `FitTaskInput.rows`: part of the one pass over the data a gram-form fit starts
   * with, the rest summed meanwhile by the coordinator (fit.ts pooledProblems).
   */
  | { kind: "block-sums"; from: number; to: number };

export type FitTaskResult =
  /** The task found the input can't be fitted: the fit throws this InputError (in task order). */
  | { kind: "failed"; code: InputErrorCode; message: string }
  | { kind: "path"; top: number; run: PathRun | LogisticRun; warnings: FitWarning[] }
  | {
      kind: "fold";
      /** Held-out measure at each strength. */
      errors: Float64Array;
      sweeps: number;
      stepHalvings: number;
      maxKktViolation: number;
      converged: boolean;
      /** The fold's standardization (with keepPath). */
      std: Standardization | null;
      /** Standardized coefficients at each strength (keepPath; null for an exact-ridge fold in kernel form: see "fold-point"). */
      path: Float64Array[] | null;
      /** keepSigns: strengths × terms signs (−1, 0, 1; 0 for a column constant in the fold). */
      signs: Int8Array | null;
    }
  | { kind: "fold-point"; coefficients: Float64Array }
  | { kind: "honest"; fold: HonestFold }
  | { kind: "block-sums"; sums: BlockSums[] };

/** What every worker receives once per fit: the inputs (data units) and the options without callbacks. */
export interface FitTaskInput {
  predictors: ColumnMatrix;
  target: Float64Array;
  options: Record<string, unknown>;
  /**
   * Instead of the inputs, what the tasks read, already built (fit.ts decides when: gram-form
   * fits scored by squared error, whose folds need only their sums): the worker then skips the
   * pass over the data. Opaque here; predictors and target are empty then.
   */
  snapshot?: unknown;
  /**
   * Instead of a fit to run, the rows "block-sums" tasks read, in memory shared with the
   * coordinator (TaskPool.sharedValues; fit.ts decides what they hold); opaque here. The fit's own
   * tasks run in a later session, opened with the fit's input.
   */
  rows?: unknown;
}

/** A fit's use of a pool: open once, run batches of tasks, close. */
export interface TaskSession {
  /**
   * Runs `tasks`; `consume(i, result)` is called for i = 0, 1, … in task order (whatever order they
   * finish in), `finished(i)` as each task completes. Resolves once every result is consumed;
   * rejects with CancelledError when `signal` is raised (within POLL_MS), with the error `consume`
   * throws, or with a worker's failure (an InputError keeps its code and message).
   */
  run(tasks: readonly FitTask[], consume: (index: number, result: FitTaskResult) => void, finished: (index: number) => void, signal?: CancelSignal): Promise<void>;
  /** Ends the session (the workers stay for the next fit unless the session failed or was cancelled). */
  close(): void;
}

/** Runs a fit's tasks; `fitAsync(x, y, options, { pool })` uses it. */
export interface TaskPool {
  /** Number of workers. */
  readonly size: number;
  /** Starts a fit: every worker receives `input` once and builds its context from it. */
  open(input: FitTaskInput): TaskSession;
  /** Stops every worker. */
  dispose(): void;
  /**
   * Optional: `length` doubles in memory the workers share with this thread (a view of a
   * SharedArrayBuffer; a message carrying it copies nothing), reused from fit to fit: what is
   * written there before a task is posted is what the task reads. Absent, or null, where workers
   * can't share memory (the add-in's Web Workers without cross-origin isolation): fits then do
   * their set-up in this thread.
   */
  sharedValues?(length: number): Float64Array | null;
}

/** Messages to a task worker. */
export type ToTaskWorker = { type: "open"; session: number; input: FitTaskInput } | { type: "task"; session: number; id: number; task: FitTask };

/** An error as it crosses a worker boundary. */
export interface PlainTaskError {
  kind: "input" | "cancelled" | "other";
  code?: InputErrorCode;
  name: string;
  message: string;
}

/** Messages from a task worker. */
export type FromTaskWorker =
  | { type: "result"; session: number; id: number; result: FitTaskResult }
  | { type: "error"; session: number; id: number; error: PlainTaskError };

/** Turns a thrown value into plain data. */
export function plainTaskError(error: unknown): PlainTaskError {
  if (error instanceof InputError) return { kind: "input", code: error.code, name: error.name, message: error.message };
  if (error instanceof CancelledError) return { kind: "cancelled", name: error.name, message: error.message };
  if (error instanceof Error) return { kind: "other", name: error.name, message: error.message };
  return { kind: "other", name: "Error", message: String(error) };
}

/** Rebuilds the engine's error classes from plain data. */
export function fromPlainTaskError(plain: PlainTaskError): Error {
  if (plain.kind === "input") return new InputError(plain.code ?? "setting", plain.message);
  if (plain.kind === "cancelled") return new CancelledError();
  const error = new Error(plain.message);
  error.name = plain.name;
  return error;
}

/**
 * The worker side: a message handler that builds the fit's context on "open" (with `openContext`,
 * fit.ts openTaskContext) and answers each "task" with its result (`run`, fit.ts runFitTask), in the
 * order received. `post` sends a message back.
 *
 * Results are copied, never transferred. Transferring detaches the sender's ArrayBuffer, and the
 * first detach in a V8 isolate invalidates its "array buffer detaching" protector: from then on
 * optimized code must check every typed array it reads for detachment, and the engine's loops,
 * which are nearly all typed array reads, run ~25% slower in that worker for good. Measured on
 * 1,000 × 50 with one worker thread, CPU per pooled fit in the worker: 116–121 ms with the
 * results' buffers transferred, 92–100 ms with them copied, and the same 115–121 ms when the
 * copying worker detaches one 8-byte buffer of its own at start-up. Copying a result costs far
 * less (a fold's path is at most a few hundred kB).
 */
export function createTaskHost<Context>(
  post: (message: FromTaskWorker) => void,
  openContext: (input: FitTaskInput) => Context,
  run: (context: Context, task: FitTask) => FitTaskResult,
): (message: ToTaskWorker) => void {
  let session = -1;
  let context: Context | null = null;
  let failure: unknown = null;
  return (message) => {
    if (message.type === "open") {
      session = message.session;
      context = null;
      failure = null;
      try {
        context = openContext(message.input);
      } catch (error) {
        failure = error;
      }
      return;
    }
    if (message.session !== session) return;
    try {
      if (context === null) throw failure ?? new Error("task worker: no fit opened");
      const result = run(context, message.task);
      post({ type: "result", session, id: message.id, result });
    } catch (error) {
      post({ type: "error", session, id: message.id, error: plainTaskError(error) });
    }
  };
}

/** The part of a worker the pool uses (worker_threads Worker or Web Worker, adapted). */
export interface TaskEndpoint {
  post(message: ToTaskWorker, transfer?: ArrayBuffer[]): void;
  /** Installs the handlers (called once, right after the endpoint is made). */
  listen(onMessage: (message: FromTaskWorker) => void, onError: (error: unknown) => void): void;
  terminate(): void;
  /** Optional: keep the host alive while the worker has work (Node's ref/unref); idle workers must not. */
  hold?(busy: boolean): void;
}

/** Raised when no worker could be started or the first one failed before answering: callers may fit sequentially instead. */
export class PoolUnavailableError extends Error {
  constructor(detail: string) {
    super(`the worker pool is unavailable: ${detail}`);
    this.name = "PoolUnavailableError";
  }
}

/** How often a running batch reads the cancel signal, in ms. */
export const POLL_MS = 10;

interface Running {
  tasks: readonly FitTask[];
  consume: (index: number, result: FitTaskResult) => void;
  finished: (index: number) => void;
  signal?: CancelSignal;
  resolve: () => void;
  reject: (error: unknown) => void;
  /** The first task not yet started (every earlier one has been). */
  next: number;
  /** Which tasks have been handed to a worker. */
  started: Uint8Array;
  /** Affinity key (taskAffinity) → the worker slot that first ran a task with it. */
  owners: Map<number, number>;
  consumed: number;
  results: (FitTaskResult | undefined)[];
  /** Worker slot → the task indices it has been sent and not yet answered, in the order sent. */
  busy: number[][];
  /** Tasks not yet started. */
  left: number;
  timer: ReturnType<typeof setInterval> | null;
}

/** Tasks a worker is sent ahead of its answers (see WorkerPool.feed). */
const QUEUE_DEPTH = 2;

/**
 * The training problem a task solves, as a number (null: none worth keeping a worker to). A
 * worker's context keeps what it built for a problem (its sums turned into a problem, the
 * eigendecomposition shared by the exact ridge path and the other mixes' Newton steps), so the
 * tasks of one fold are best run by one worker: measured on 20,000 × 100 with two workers and
 * tasks dealt in order, each worker ended up decomposing nearly every fold, and a pooled fit
 * took 1.5 × the CPU of a sequential one.
 */
export function taskAffinity(task: FitTask): number | null {
  if (task.kind === "path") return -1;
  if (task.kind === "block-sums") return null;
  if (task.kind === "fold") return task.deal * 65536 + task.fold;
  if (task.kind === "fold-point") return task.fold;
  return null;
}

/**
 * The task worker `slot` takes next: the first not yet started whose problem no other worker
 * has claimed (taking it claims it), else the first not yet started. Which worker runs a task
 * never changes its result, and results are still handed over in task order.
 */
function pickTask(running: Running, slot: number): number {
  let fallback = -1;
  for (let i = running.next; i < running.tasks.length; i++) {
    if (running.started[i]) continue;
    const key = taskAffinity(running.tasks[i]);
    const owner = key === null ? undefined : running.owners.get(key);
    if (owner === undefined || owner === slot) {
      if (key !== null && owner === undefined) running.owners.set(key, slot);
      return i;
    }
    if (fallback < 0) fallback = i;
  }
  return fallback;
}

/**
 * A pool of `size` workers made by `spawn` (see the module comment for scheduling and cancel).
 * Workers start with the first fit and are kept for the next; a fit that fails or is cancelled
 * terminates them (a new fit starts new ones).
 */
export class WorkerPool implements TaskPool {
  private workers: TaskEndpoint[] = [];
  /** The session each worker last received "open" for. */
  private openedIn: number[] = [];
  private sessionCount = 0;
  private input: FitTaskInput | null = null;
  private running: Running | null = null;
  private answered = false;
  /** The shared values (sharedValues), kept for the next fit. */
  private shared: Float64Array | null = null;

  /** `sharedMemory`: the workers can be sent SharedArrayBuffers (worker_threads; see TaskPool.sharedValues). */
  constructor(
    private readonly spawn: () => TaskEndpoint,
    readonly size: number,
    private readonly sharedMemory = false,
  ) {
    if (!(Number.isInteger(size) && size >= 1)) throw new Error(`WorkerPool: size must be a whole number from 1; got ${size}`);
  }

  /**
   * One buffer, grown as needed and reused: a fresh SharedArrayBuffer's pages are faulted in on
   * first write (measured: 16 MB copied into a fresh one ~10 ms, into a reused one ~1.7 ms).
   * A task reading it has finished before the fit goes on, and one fit runs at a time.
   */
  sharedValues(length: number): Float64Array | null {
    if (!this.sharedMemory || typeof SharedArrayBuffer === "undefined") return null;
    if (this.shared === null || this.shared.length < length) this.shared = new Float64Array(new SharedArrayBuffer(8 * length));
    return this.shared.subarray(0, length);
  }

  open(input: FitTaskInput): TaskSession {
    if (this.running) this.fail(new CancelledError());
    const session = ++this.sessionCount;
    this.input = input;
    return {
      run: (tasks, consume, finished, signal) => {
        if (session !== this.sessionCount) return Promise.reject(new Error("WorkerPool: this fit's session was closed"));
        if (this.running) return Promise.reject(new Error("WorkerPool: one batch at a time"));
        if (signal?.aborted) return Promise.reject(new CancelledError());
        if (tasks.length === 0) return Promise.resolve();
        return new Promise<void>((resolve, reject) => {
          try {
            this.startWorkers();
          } catch (error) {
            this.stopWorkers();
            reject(new PoolUnavailableError(error instanceof Error ? error.message : String(error)));
            return;
          }
          const running: Running = {
            tasks,
            consume,
            finished,
            signal,
            resolve,
            reject,
            next: 0,
            started: new Uint8Array(tasks.length),
            owners: new Map(),
            consumed: 0,
            results: new Array(tasks.length),
            busy: this.workers.map(() => []),
            left: tasks.length,
            timer: null,
          };
          this.running = running;
          for (const worker of this.workers) worker.hold?.(true);
          if (signal) {
            running.timer = setInterval(() => {
              if (signal.aborted) this.fail(new CancelledError());
            }, POLL_MS);
          }
          for (let slot = 0; slot < this.workers.length; slot++) this.feed(slot, session);
        });
      },
      close: () => {
        if (session !== this.sessionCount) return;
        if (this.running) this.fail(new CancelledError());
        this.input = null;
      },
    };
  }

  dispose(): void {
    if (this.running) this.fail(new CancelledError());
    this.stopWorkers();
    this.shared = null;
  }

  private startWorkers(): void {
    while (this.workers.length < this.size) {
      const worker = this.spawn();
      const slot = this.workers.length;
      worker.listen(
        (message) => {
          if (this.workers[slot] === worker) this.receive(slot, message);
        },
        (error) => {
          if (this.workers[slot] === worker) this.workerFailed(error);
        },
      );
      this.workers.push(worker);
      this.openedIn.push(0);
    }
  }

  private stopWorkers(): void {
    const workers = this.workers;
    this.workers = [];
    this.openedIn = [];
    for (const worker of workers) {
      try {
        worker.terminate();
      } catch {
        // Already gone.
      }
    }
  }

  /**
   * Gives worker `slot` tasks not yet started until it holds QUEUE_DEPTH (one when fewer tasks are
   * left than workers, so the last ones are not queued behind a busy worker while another idles).
   * With one task at a time a worker idled for the round trip of every result (measured, 1,000 × 50
   * on one worker thread: 66 tasks, a pooled fit 150 ms against 95 ms for the same work in one
   * thread); with the next task already queued it goes straight on.
   */
  private feed(slot: number, session: number): void {
    const running = this.running;
    if (!running) return;
    const queue = running.busy[slot];
    while (running.left > 0 && queue.length < QUEUE_DEPTH && (queue.length === 0 || running.left >= this.workers.length)) {
      const index = pickTask(running, slot);
      running.started[index] = 1;
      running.left--;
      while (running.next < running.tasks.length && running.started[running.next]) running.next++;
      queue.push(index);
      // The fit's inputs go to each worker once per fit, before its first task.
      if (this.openedIn[slot] !== session) {
        this.openedIn[slot] = session;
        this.workers[slot].post({ type: "open", session, input: this.input as FitTaskInput });
      }
      this.workers[slot].post({ type: "task", session, id: index, task: running.tasks[index] });
    }
  }

  private receive(slot: number, message: FromTaskWorker): void {
    this.answered = true;
    const running = this.running;
    // A worker answers the tasks it was sent (in order, though nothing here relies on that).
    const at = running && message.session === this.sessionCount ? running.busy[slot].indexOf(message.id) : -1;
    if (!running || at < 0) return;
    running.busy[slot].splice(at, 1);
    if (message.type === "error") {
      this.fail(fromPlainTaskError(message.error));
      return;
    }
    running.results[message.id] = message.result;
    this.feed(slot, message.session);
    try {
      running.finished(message.id);
      // Hand over every result now in order (a later task's result waits for the earlier ones).
      while (running.consumed < running.tasks.length && running.results[running.consumed] !== undefined) {
        const index = running.consumed++;
        const result = running.results[index] as FitTaskResult;
        running.results[index] = undefined;
        running.consume(index, result);
      }
    } catch (error) {
      this.fail(error);
      return;
    }
    if (running.consumed === running.tasks.length) this.finish(running);
  }

  private finish(running: Running): void {
    for (const worker of this.workers) worker.hold?.(false);
    if (running.timer !== null) clearInterval(running.timer);
    this.running = null;
    running.resolve();
  }

  /** Ends the running batch with `error`; the workers are terminated (they may be mid-task). */
  private fail(error: unknown): void {
    const running = this.running;
    this.stopWorkers();
    if (!running) return;
    if (running.timer !== null) clearInterval(running.timer);
    this.running = null;
    running.reject(error);
  }

  private workerFailed(error: unknown): void {
    const detail = error instanceof Error ? error.message : error && typeof error === "object" && "message" in error ? String((error as { message: unknown }).message) : String(error);
    this.fail(this.answered ? new Error(`a task worker stopped unexpectedly: ${detail}`) : new PoolUnavailableError(detail));
  }
}
