/**
 * Pooled speed-up of the cross-validated fit (a script, not a test):
 * `npx tsx bench/pooled.ts [--only 1000x50,20000x100] [--repeat 3] [--threads 2]`.
 *
 * On the bench's pinned workload (10 random folds, seed 1, mixes 0, 0.2, …, 1, exactly 100
 * strengths down to 1e-4 of the top, 1e-2 when predictors ≥ rows, no early stop but an exact fit)
 * it times, interleaved in one process so the shared machine's load hits all alike, best of
 * `--repeat`: the sequential fit (`fit`, this thread), the fit on a pool of 1 worker thread (the
 * pool's overhead) and on a pool of `--threads` workers (default 2). Pools are started and warmed
 * (one fit each) before timing, as a command-line or add-in session keeps them. Checks the pooled
 * results are bit-identical to the sequential one. Prints a table, then one JSON line per case;
 * `speedup = sequential ms / pooled ms`. On a shared machine other processes take cores too:
 * `ceiling` is what `--threads` threads of plain arithmetic gain over one, measured just before
 * each case (the most any pool could have gained then), and `ofCeiling = speedup / ceiling`.
 */
import { loadavg } from "os";
import { Worker } from "worker_threads";
import { fit, FitOptions, FitResult } from "../engine/fit";
import { fitParallel, threadPool } from "../engine/node/threadPool";
import type { TaskPool } from "../engine/parallel";
import { makeData } from "./data";

const CASES = [
  { name: "1000x50", n: 1000, p: 50 },
  { name: "20000x100", n: 20000, p: 100 },
  { name: "200x2000", n: 200, p: 2000 },
  { name: "100000x20", n: 100000, p: 20 },
];

function pinned(n: number, p: number): FitOptions {
  return { mixes: [0, 0.2, 0.4, 0.6, 0.8, 1], folds: 10, seed: 1, strengthCount: 100, lowEndRatio: p >= n ? 1e-2 : 1e-4, stopEarly: false };
}

/** What `threads` threads of plain arithmetic gain over one thread doing the same work now (see the module comment). */
async function ceiling(threads: number): Promise<number> {
  const code = `const { parentPort, workerData } = require("worker_threads"); let s = 0; for (let i = 0; i < workerData; i++) s += Math.sqrt(i) * 1e-9; parentPort.postMessage(s);`;
  const run = (units: number[]): Promise<unknown[]> =>
    Promise.all(
      units.map(
        (work) =>
          new Promise((done) => {
            const worker = new Worker(code, { eval: true, workerData: work });
            worker.on("message", (message) => {
              done(message);
              void worker.terminate();
            });
          }),
      ),
    );
  const work = 1e8;
  let start = performance.now();
  await run([threads * work]);
  const one = performance.now() - start;
  start = performance.now();
  await run(new Array(threads).fill(work));
  return one / (performance.now() - start);
}

function identical(a: FitResult, b: FitResult): boolean {
  const same = (u: unknown, v: unknown): boolean => {
    if (typeof u === "number" || typeof v === "number") return Object.is(u, v);
    if (u === null || v === null || typeof u !== "object" || typeof v !== "object") return u === v;
    const ku = Object.keys(u as object);
    if (ku.join() !== Object.keys(v as object).join()) return false;
    return ku.every((k) => same((u as Record<string, unknown>)[k], (v as Record<string, unknown>)[k]));
  };
  return same(a, b);
}

async function main(): Promise<void> {
  const args = process.argv.slice(2);
  const at = (flag: string): string | null => (args.indexOf(flag) >= 0 ? args[args.indexOf(flag) + 1] : null);
  const only = at("--only") ? new Set((at("--only") as string).split(",")) : null;
  const repeat = Math.max(1, Number(at("--repeat") ?? 3));
  const threads = Math.max(2, Number(at("--threads") ?? 2));
  const warm = makeData(300, 20, 1);
  const pools: [string, TaskPool][] = [
    ["pool1", threadPool(1)],
    [`pool${threads}`, threadPool(threads)],
  ];
  fit(warm.x, warm.y, pinned(300, 20));
  for (const [, pool] of pools) await fitParallel(warm.x, warm.y, pinned(300, 20), { pool });
  const rows: string[][] = [["case", "sequential ms", "1 worker ms", `${threads} workers ms`, "speed-up", "ceiling", "identical", "load"]];
  const lines: string[] = [];
  for (const c of CASES) {
    if (only && !only.has(c.name)) continue;
    const { x, y } = makeData(c.n, c.p, 20261201);
    const options = pinned(c.n, c.p);
    const best: Record<string, number> = { sequential: Infinity };
    for (const [name] of pools) best[name] = Infinity;
    let reference: FitResult | null = null;
    let allIdentical = true;
    const load = loadavg()[0];
    const most = await ceiling(threads);
    for (let r = 0; r < repeat; r++) {
      let start = performance.now();
      reference = fit(x, y, options);
      best.sequential = Math.min(best.sequential, performance.now() - start);
      for (const [name, pool] of pools) {
        start = performance.now();
        const pooled = await fitParallel(x, y, options, { pool });
        best[name] = Math.min(best[name], performance.now() - start);
        if (!identical(pooled, reference)) allIdentical = false;
      }
    }
    const many = best[`pool${threads}`];
    rows.push([c.name, best.sequential.toFixed(0), best.pool1.toFixed(0), many.toFixed(0), (best.sequential / many).toFixed(2), most.toFixed(2), String(allIdentical), load.toFixed(1)]);
    lines.push(
      JSON.stringify({
        case: c.name,
        threads,
        sequentialMs: Number(best.sequential.toFixed(1)),
        oneWorkerMs: Number(best.pool1.toFixed(1)),
        pooledMs: Number(many.toFixed(1)),
        speedup: Number((best.sequential / many).toFixed(3)),
        ceiling: Number(most.toFixed(3)),
        ofCeiling: Number((best.sequential / many / most).toFixed(3)),
        identical: allIdentical,
        loadAverage: Number(load.toFixed(2)),
      }),
    );
  }
  for (const [, pool] of pools) pool.dispose();
  const widths = rows[0].map((_, k) => Math.max(...rows.map((r) => r[k].length)));
  for (const r of rows) console.log(r.map((cell, k) => cell.padStart(widths[k])).join("  "));
  for (const line of lines) console.log(line);
}

void main();
