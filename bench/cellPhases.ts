/**
 * Where a SHRINK.COEFS recalculation spends its time outside the engine (a script, not a test):
 *   npx tsx bench/cellPhases.ts 50000x40 [--repeat 6]
 * Each stage of the cell path, in one process and in order, timed in CPU milliseconds of this
 * process (less disturbed than wall time on a shared machine), best and median of the repeats:
 * `prepare` (worksheet values → dataset → request: functions/api.ts prepare), `key` (the cache's
 * fingerprint and lookup hash: what a miss costs when no entry has the same settings, shape and
 * target), `wire` (the copy posted to the worker, into the buffer the runner reserved while the
 * previous fit ran, after the first repeat), `post` (the structured clone with its transfer list, standing
 * in for the port), `fit` (the engine on the received request), `result` (the result's trip back:
 * functions/fit.worker.ts packResult, the structured clone (a copy), unpackResult), `spill` (the coefficient table), and `engine` (the engine's own fit on the same data
 * and options, as `npm run bench` times it). Data and settings are the bench's cell cases'.
 * The stages run on one thread here; in the add-in `fit` runs in the worker. The `post` stage's
 * transfer detaches a buffer in this thread, which slows its later typed-array code (V8's
 * detaching protector, functions/fit.worker.ts), `fit` and `engine` alike: compare them to each
 * other here, and take the engine's own figure from `npm run bench`. As there, the next
 * matrix buffer is reserved (functions/dataset.ts reserveMatrix) in a task of its own once the
 * request is posted; here that task runs before `fit` and is timed by none of the stages.
 */
import { prepare } from "../functions/api";
import { requestLookupHash } from "../functions/cache";
import { reserveMatrix } from "../functions/dataset";
import { coefficientSpill } from "../functions/spill";
import { wireRequest } from "../functions/workerRunner";
import { packResult, unpackResult } from "../functions/fit.worker";
import { fit } from "../engine/fit";
import type { AnyFitRequest } from "../functions/runner";
import { worksheetValues } from "./cellPath";
import { makeData } from "./data";

async function main(): Promise<void> {
  const args = process.argv.slice(2);
  const [n, p] = (args[0] ?? "50000x40").split("x").map(Number);
  const at = args.indexOf("--repeat");
  const repeat = at >= 0 ? Number(args[at + 1]) : 6;
  const { x, y } = makeData(n, p, 20261201);
  const cells = worksheetValues(x, y);
  const settings = `folds=10; seed=1; grid size=100; low end=${p >= n ? 1e-2 : 1e-4}; stop early=no`;
  const mixes = [[0, 0.2, 0.4, 0.6, 0.8, 1]];
  const cpu = (): number => {
    const used = process.cpuUsage();
    return (used.user + used.system) / 1000;
  };
  const times: Record<string, number[]> = {};
  let spare: ArrayBuffer | null = null;
  for (let r = 0; r < repeat; r++) {
    let start = cpu();
    const lap = (name: string): void => {
      const now = cpu();
      (times[name] ??= []).push(now - start);
      start = now;
    };
    const prepared = prepare(cells.target, cells.predictors, mixes, settings);
    lap("prepare");
    requestLookupHash(prepared.request);
    lap("key");
    const { request, transfer, reusedSpare } = wireRequest(prepared.request, spare);
    if (reusedSpare) spare = null;
    lap("wire");
    const received = structuredClone(request, { transfer }) as AnyFitRequest;
    lap("post");
    if (!Array.isArray(prepared.request.predictors)) reserveMatrix(prepared.request.predictors.data.length);
    await new Promise((resolve) => setTimeout(resolve, 1));
    start = cpu();
    const result = fit(received.predictors, received.target, received.options);
    lap("fit");
    // The runner's reserved buffer for the next copy (workerRunner.ts reserveSpare: touched while the fit runs, not timed).
    if (!Array.isArray(received.predictors)) {
      const pages = new Uint8Array(received.predictors.data.byteLength);
      for (let k = 0; k < pages.length; k += 4096) pages[k] = 0;
      spare = pages.buffer;
    }
    start = cpu();
    // As the worker posts it: held-out lists packed (copied, not transferred), unpacked on the main side.
    const back = unpackResult(structuredClone(packResult(result)));
    lap("result");
    coefficientSpill(back, prepared.dataset);
    lap("spill");
    fit(x, y, prepared.request.options);
    lap("engine");
  }
  const summary: Record<string, string> = {};
  for (const [name, list] of Object.entries(times)) {
    const sorted = list.slice().sort((a, b) => a - b);
    summary[name] = `${sorted[0].toFixed(0)} / ${sorted[Math.floor(sorted.length / 2)].toFixed(0)}`;
  }
  console.log(JSON.stringify({ case: `${n}x${p}`, repeat, "best / median CPU ms": summary }));
}

void main();
