/**
 * The cell path of `npm run bench`: SHRINK.COEFS from raw worksheet values (a 2-D array of cells
 * as Excel passes them, a header row of names on top) to the spilled array, through the real
 * functions/api.ts, the fit cache (functions/cache.ts) and the Web-Worker runner
 * (functions/workerRunner.ts) talking the worker protocol of functions/fit.worker.ts. In Node the
 * worker is a worker_threads Worker running that same handler (bench/cellWorker.ts); only the
 * transport differs (structured clone over a MessagePort, as in the browser).
 */
import * as path from "path";
import { Worker } from "worker_threads";
import type { FromWorker, ToWorker } from "../functions/fit.worker";
import { coefs } from "../functions/api";
import { FitCache } from "../functions/cache";
import type { FitRunner } from "../functions/runner";
import { WorkerLike, WorkerRunner } from "../functions/workerRunner";
import type { ColumnMatrix } from "../engine/matrix";

/** A worker_threads Worker dressed as the DOM Worker the runner expects. */
class NodeFitWorker implements WorkerLike {
  onmessage: ((event: { data: FromWorker }) => void) | null = null;
  onerror: ((event: unknown) => void) | null = null;
  private readonly worker: Worker;

  constructor() {
    // tsx's loader does not reach worker threads by itself: register it inside the worker first.
    const loader = require.resolve("tsx/cjs");
    const script = path.join(__dirname, "cellWorker.ts");
    this.worker = new Worker(`require(${JSON.stringify(loader)}); require(${JSON.stringify(script)});`, { eval: true });
    this.worker.on("message", (data: FromWorker) => this.onmessage?.({ data }));
    this.worker.on("error", (error) => this.onerror?.(error));
  }

  postMessage(message: ToWorker, transfer?: ArrayBuffer[]): void {
    this.worker.postMessage(message, transfer);
  }

  terminate(): void {
    void this.worker.terminate();
  }
}

/** The add-in's engine runner (one worker serving every fit), here on a worker thread. */
export function nodeWorkerRunner(): WorkerRunner {
  return new WorkerRunner(() => new NodeFitWorker());
}

/** The worksheet ranges Excel would pass: target column and predictor block, header row first. */
export function worksheetValues(x: ColumnMatrix, y: Float64Array): { target: unknown[][]; predictors: unknown[][] } {
  const n = x.rows;
  const p = x.columns;
  const target: unknown[][] = [["y"]];
  const header: unknown[] = [];
  for (let j = 0; j < p; j++) header.push(`x${j + 1}`);
  const predictors: unknown[][] = [header];
  for (let i = 0; i < n; i++) {
    target.push([y[i]]);
    const row = new Array<unknown>(p);
    for (let j = 0; j < p; j++) row[j] = x.data[j * n + i];
    predictors.push(row);
  }
  return { target, predictors };
}

/**
 * One recalculation of =SHRINK.COEFS(target, predictors, mixes, settings) with a cold cache
 * (a new FitCache in front of the long-lived worker runner, so the fit really runs); returns the
 * spilled array. Throws when the spill is an error value.
 */
export async function coefsThroughCells(
  runner: FitRunner,
  cells: { target: unknown[][]; predictors: unknown[][] },
  mixes: readonly number[],
  settings: string,
): Promise<unknown[][]> {
  const cache = new FitCache(runner);
  const spill = (await coefs(cache, cells.target, cells.predictors, [mixes.slice()], settings)) as unknown;
  if (!Array.isArray(spill) || !Array.isArray(spill[0]) || spill[0][0] !== "term") {
    throw new Error(`SHRINK.COEFS did not spill a coefficient table: ${String((spill as { message?: unknown })?.message ?? JSON.stringify(spill)).slice(0, 300)}`);
  }
  return spill as unknown[][];
}
