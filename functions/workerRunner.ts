/**
 * A FitRunner that runs the engine in a Web Worker (the add-in's normal path, so a long fit
 * never blocks Excel's add-in thread). functions/inProcessRunner.ts is the same contract on the
 * calling thread (tests, hosts without `Worker`, and this runner's fallback).
 *
 * WorkerRunner talks to functions/fit.worker.ts (protocol documented there). One worker
 * serves every fit; fits interleave inside it. Cancelling a fit rejects its caller at once
 * with CancelledError and posts {type:"cancel"}; the engine stops at its next checkpoint. As a
 * backstop, if the worker has not acknowledged the cancel within `cancelGraceMs` (default 2 s),
 * the worker is terminated and a fresh one started, and every other fit that was running in the
 * old worker is posted again to the new one (same request, so the same answer).
 *
 * Fits from a sums table (`fitSums`, a SumsFitRequest) go to the same worker as {type:"fitSums"}
 * and are answered, cancelled, re-posted and failed over exactly like ordinary fits.
 *
 * Errors cross the boundary as plain data and are rebuilt here as InputError / CancelledError
 * (fromPlainError), so callers cannot tell a worker fit from an in-process one. Results are
 * structured clones of the engine's plain result object, equal to the in-process result.
 *
 * If the worker fails before it has answered anything (the script could not load, or the host
 * forbids workers), the runner switches to its fallback runner (by default in-process) for
 * the fits in flight and for good.
 */
import { CancelledError } from "../engine/errors";
import type { FitResult } from "../engine/fit";
import type { FromWorker, ToWorker } from "./fit.worker";
import { fromPlainError, unpackResult } from "./fit.worker";
import { InProcessRunner } from "./inProcessRunner";
import type { AnyFitRequest, CancelToken, FitProgress, FitRunner, SumsFitRequest } from "./runner";

/** The part of the DOM Worker this runner uses (a fake in tests). */
export interface WorkerLike {
  /** `transfer`: buffers whose ownership moves to the worker (no copy; detached here). */
  postMessage(message: ToWorker, transfer?: ArrayBuffer[]): void;
  terminate(): void;
  onmessage: ((event: { data: FromWorker }) => void) | null;
  onerror: ((event: unknown) => void) | null;
}

export interface WorkerRunnerOptions {
  /** How long a cancelled fit may keep running before the worker is replaced. Default 2000 ms. */
  cancelGraceMs?: number;
  /** Where fits go if the worker fails before its first answer. Default: in-process. */
  fallback?: FitRunner;
  /** Smallest request matrix, in bytes, for which a buffer is reserved for the next copy. Default 512 KB. */
  spareMinBytes?: number;
}

export const DEFAULT_CANCEL_GRACE_MS = 2000;

/** What a job asks the worker for: an ordinary fit, or a fit from a sums table. */
type Work = { kind: "fit"; request: AnyFitRequest } | { kind: "sums"; request: SumsFitRequest };

interface Job {
  id: number;
  work: Work;
  resolve: (result: FitResult) => void;
  reject: (error: unknown) => void;
  onProgress?: (progress: FitProgress) => void;
  cancel?: CancelToken;
}

export interface WorkerRunnerStats {
  /** Workers created so far. */
  started: number;
  /** Workers terminated because a cancelled fit did not stop in time. */
  replaced: number;
  /** Fits posted (re-posts after a replacement included). */
  posted: number;
  /** True once the runner has switched to its fallback. */
  usingFallback: boolean;
}

export class WorkerRunner implements FitRunner {
  readonly cancelGraceMs: number;
  private readonly fallback: FitRunner;
  private readonly spareMinBytes: number;
  private worker: WorkerLike | null = null;
  private answered = false;
  private failedOver = false;
  private nextId = 1;
  private readonly jobs = new Map<number, Job>();
  /** Cancelled fits still running in the current worker → their backstop timers. */
  private readonly stopping = new Map<number, ReturnType<typeof setTimeout>>();
  private counters = { started: 0, replaced: 0, posted: 0 };
  /**
   * A buffer for the next packed request's copy (its pages touched while the last fit ran, see
   * reserveSpare), or null. The worker hands nothing back: see fit.worker.ts on transfers.
   */
  private spare: ArrayBuffer | null = null;
  private spareTimer: ReturnType<typeof setTimeout> | null = null;

  constructor(
    private readonly createWorker: () => WorkerLike,
    options: WorkerRunnerOptions = {},
  ) {
    this.cancelGraceMs = options.cancelGraceMs ?? DEFAULT_CANCEL_GRACE_MS;
    this.fallback = options.fallback ?? new InProcessRunner();
    this.spareMinBytes = options.spareMinBytes ?? SPARE_MIN_BYTES;
  }

  fit(request: AnyFitRequest, cancel?: CancelToken, onProgress?: (progress: FitProgress) => void): Promise<FitResult> {
    return this.start({ kind: "fit", request }, cancel, onProgress);
  }

  /** A fit from a sums table, in the worker (see the module comment). */
  fitSums(request: SumsFitRequest, cancel?: CancelToken, onProgress?: (progress: FitProgress) => void): Promise<FitResult> {
    return this.start({ kind: "sums", request }, cancel, onProgress);
  }

  private start(work: Work, cancel?: CancelToken, onProgress?: (progress: FitProgress) => void): Promise<FitResult> {
    if (this.failedOver) return this.onFallback(work, cancel, onProgress);
    if (cancel?.cancelled) return Promise.reject(new CancelledError());
    return new Promise<FitResult>((resolve, reject) => {
      const job: Job = { id: this.nextId++, work, resolve, reject, onProgress, cancel };
      this.jobs.set(job.id, job);
      cancel?.onCancel(() => this.cancelJob(job));
      this.post(job);
    });
  }

  /**
   * Starts the worker now and has it run a small warm-up fit (fit.worker.ts "warm"), so the first
   * real fit finds the engine compiled; a real fit stops the warm-up at once. Nothing when the
   * worker already exists or the runner has fallen back.
   */
  warmUp(): void {
    if (this.failedOver || this.worker) return;
    try {
      this.ensureWorker().postMessage({ type: "warm" });
    } catch (error) {
      this.workerFailed(error);
    }
  }

  /** Stops the worker; fits in flight reject with CancelledError. */
  dispose(): void {
    for (const job of this.jobs.values()) job.reject(new CancelledError());
    this.jobs.clear();
    this.spare = null;
    if (this.spareTimer !== null) clearTimeout(this.spareTimer);
    this.spareTimer = null;
    this.stopWorker();
  }

  stats(): WorkerRunnerStats {
    return { ...this.counters, usingFallback: this.failedOver };
  }

  /**
   * Reserves a buffer of `bytes` for the next packed request's copy, in a task of its own (so
   * while the fit just posted runs): fresh memory is slow to write the first time (a new 16 MB
   * copy cost 5–10 ms of page faults, bench/PROFILE.md), so every page is touched now, while the
   * add-in's thread waits anyway. Nothing for small matrices or when one of that size is held.
   */
  private reserveSpare(bytes: number): void {
    if (bytes < this.spareMinBytes || (this.spare !== null && this.spare.byteLength === bytes) || this.spareTimer !== null) return;
    this.spareTimer = setTimeout(() => {
      this.spareTimer = null;
      if (this.spare !== null && this.spare.byteLength === bytes) return;
      const buffer = new ArrayBuffer(bytes);
      const pages = new Uint8Array(buffer);
      // One write per 4 KB page makes the system map it now; the bytes stay 0.
      for (let k = 0; k < bytes; k += 4096) pages[k] = 0;
      this.spare = buffer;
    }, 0);
  }

  private ensureWorker(): WorkerLike {
    if (this.worker) return this.worker;
    const worker = this.createWorker();
    this.counters.started++;
    worker.onmessage = (event) => {
      if (this.worker === worker) this.receive(event.data);
    };
    worker.onerror = (event) => {
      if (this.worker === worker) this.workerFailed(event);
    };
    this.worker = worker;
    return worker;
  }

  /** Runs `work` on the fallback runner (a fit from sums in this thread when the fallback has no fitSums). */
  private onFallback(work: Work, cancel?: CancelToken, onProgress?: (progress: FitProgress) => void): Promise<FitResult> {
    if (work.kind === "fit") return this.fallback.fit(work.request, cancel, onProgress);
    if (this.fallback.fitSums) return this.fallback.fitSums(work.request, cancel, onProgress);
    return new InProcessRunner().fitSums(work.request, cancel, onProgress);
  }

  private post(job: Job): void {
    this.counters.posted++;
    try {
      if (job.work.kind === "sums") {
        // The table is plain data: structured-cloned, no buffers to move.
        this.ensureWorker().postMessage({ type: "fitSums", id: job.id, request: job.work.request });
        return;
      }
      const { request, transfer, reusedSpare } = wireRequest(job.work.request, this.spare);
      if (reusedSpare) this.spare = null;
      // Its size read before the post detaches it.
      const bytes = transfer.length > 0 ? transfer[0].byteLength : 0;
      this.ensureWorker().postMessage({ type: "fit", id: job.id, request }, transfer);
      if (bytes > 0) this.reserveSpare(bytes);
    } catch (error) {
      // `new Worker` can throw (a security policy, a bad URL): the same as a worker failing.
      this.workerFailed(error);
    }
  }

  private receive(message: FromWorker): void {
    this.answered = true;
    const job = this.jobs.get(message.id);
    if (message.type === "progress") {
      job?.onProgress?.({ done: message.done, total: message.total });
      return;
    }
    // A result or an error ends the fit in the worker.
    const timer = this.stopping.get(message.id);
    if (timer !== undefined) {
      clearTimeout(timer);
      this.stopping.delete(message.id);
    }
    if (!job) return;
    this.jobs.delete(message.id);
    if (message.type === "result") job.resolve(unpackResult(message.result));
    else job.reject(fromPlainError(message.error));
  }

  private cancelJob(job: Job): void {
    if (!this.jobs.has(job.id)) return; // already answered
    this.jobs.delete(job.id);
    job.reject(new CancelledError());
    if (!this.worker) return;
    this.worker.postMessage({ type: "cancel", id: job.id });
    this.stopping.set(
      job.id,
      setTimeout(() => this.replaceWorker(), this.cancelGraceMs),
    );
  }

  /** The backstop: a cancelled fit did not stop in time. Start over in a fresh worker. */
  private replaceWorker(): void {
    this.counters.replaced++;
    this.stopWorker();
    for (const job of this.jobs.values()) this.post(job);
  }

  private stopWorker(): void {
    for (const timer of this.stopping.values()) clearTimeout(timer);
    this.stopping.clear();
    const worker = this.worker;
    this.worker = null;
    if (worker) {
      worker.onmessage = null;
      worker.onerror = null;
      worker.terminate();
    }
  }

  private workerFailed(event: unknown): void {
    const jobs = [...this.jobs.values()];
    this.jobs.clear();
    this.stopWorker();
    if (!this.answered) {
      // The worker never worked here: run everything on the fallback from now on.
      this.failedOver = true;
      for (const job of jobs) {
        if (job.cancel?.cancelled) continue;
        this.onFallback(job.work, job.cancel, job.onProgress).then(job.resolve, job.reject);
      }
      return;
    }
    const detail = describeEvent(event);
    for (const job of jobs) job.reject(new Error(`the fit worker stopped unexpectedly${detail ? `: ${detail}` : ""}`));
  }
}

/** Request matrices smaller than this (512 KB) get no reserved buffer: their pages cost microseconds. */
const SPARE_MIN_BYTES = 1 << 19;

/**
 * A request as it is posted. A packed request's matrix goes as a copy whose buffer is transferred,
 * so the one block copy made here is the only one: a structured clone would copy it twice (into the
 * message, then out of it in the worker). The copy is written into `spare` (a buffer the runner
 * reserved and touched while the previous fit ran) when it is the right size, so a recalculation
 * of a same-sized grid does not pay for fresh memory's page faults. Transferring detaches the
 * buffer on this side; this thread runs no engine code while a worker is in use (fit.worker.ts). The request itself stays intact: the cache keeps its matrix as
 * the key, and a fit is posted again, unchanged, when its worker is replaced. The rows form (small
 * grids, and callers that build requests by hand) is cloned as before.
 */
export function wireRequest(
  request: AnyFitRequest,
  spare: ArrayBuffer | null = null,
): { request: AnyFitRequest; transfer: ArrayBuffer[]; reusedSpare: boolean } {
  const predictors = request.predictors;
  if (Array.isArray(predictors)) return { request, transfer: [], reusedSpare: false };
  const reusedSpare = spare !== null && spare.byteLength === predictors.data.byteLength;
  let data: Float64Array;
  if (reusedSpare) {
    data = new Float64Array(spare as ArrayBuffer);
    data.set(predictors.data);
  } else {
    data = predictors.data.slice();
  }
  return { request: { ...request, predictors: { rows: predictors.rows, columns: predictors.columns, data } }, transfer: [data.buffer as ArrayBuffer], reusedSpare };
}

function describeEvent(event: unknown): string {
  if (event && typeof event === "object" && "message" in event) return String((event as { message: unknown }).message);
  return "";
}

// ---------------------------------------------------------------------------------------------
// The browser's worker

/**
 * The script this module was loaded from, read while the bundle first runs (document.currentScript
 * is only set then). The worker bundle sits next to it.
 */
const loadedFrom: string | null =
  typeof document !== "undefined" && document.currentScript && "src" in document.currentScript
    ? (document.currentScript as HTMLScriptElement).src || null
    : null;

/** File name of the worker bundle (webpack entry "fit.worker", see addin/webpack.config.js). */
export const WORKER_FILE = "fit.worker.js";

/** URL of the worker bundle: next to the functions bundle, else relative to the page. */
export function defaultWorkerUrl(): string {
  const base = loadedFrom ?? (typeof location !== "undefined" ? location.href : "https://localhost/");
  return new URL(WORKER_FILE, base).href;
}

/** True when this host can start a Web Worker. */
export function workersAvailable(): boolean {
  return typeof Worker === "function";
}

/** Makes browser workers running the fit worker bundle. */
export function browserWorkerFactory(url: string = defaultWorkerUrl()): () => WorkerLike {
  return () => new Worker(url, { name: "shrinkwise-fit" }) as unknown as WorkerLike;
}
