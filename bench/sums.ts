/**
 * `npm run bench -- --only sums`, the engine's part: the time of fitFromSums (engine/fitSums.ts)
 * on a sums table of 20 predictors in 10 blocks with the default grid (20 strengths per tenfold
 * drop down to 1e-5: 101 strengths) and 6 mixes. Goal ≤ 50 ms; it must not depend on the row
 * count, so the same fit is timed on tables summed from 10,000 and from 1,000,000 rows.
 *
 * The tables are summed in memory (engine/sums.ts sumsOfRows) from the bench's seeded data
 * (bench/data.ts); the query engines' routes time their own summing (added beside this).
 * Each fit is timed best of `repeat` (at least 5) after one warm-up fit, by the wall clock and by
 * the process's CPU time (user + system, process.cpuUsage): on a shared machine the CPU time is
 * the steadier figure, and the one-minute load average is printed beside them.
 * With `threads` > 1 the same fit is also timed on a pool of worker threads (fitFromSumsAsync with
 * engine/node/threadPool.ts, as the add-in's fit worker runs it on its task workers), best of the
 * same count, interleaved with the single-threaded runs, and checked equal to it bit for bit.
 */
import * as os from "os";
import { performance } from "perf_hooks";
import { fitFromSums, fitFromSumsAsync } from "../engine/fitSums";
import { threadPool } from "../engine/node/threadPool";
import { sumsOfRows } from "../engine/sums";
import type { SumsTable } from "../engine/sumsTable";
import { makeData } from "./data";

/** The pinned workload of the fit from sums. */
export const SUMS_FIT = { predictors: 20, blocks: 10, mixes: [0, 0.2, 0.4, 0.6, 0.8, 1], goalMs: 50 } as const;
const DATA_SEED = 20261204;

export interface SumsFitTiming {
  rows: number;
  /** Best wall-clock time. */
  ms: number;
  /** Best CPU time (user + system). */
  cpuMs: number;
  strengths: number;
  chosenMix: number;
  termsKept: number;
  /** Best wall-clock time on the pool of worker threads, and whether its result equalled the single-threaded one (JSON text); null without a pool. */
  pooled: { threads: number; ms: number; same: boolean } | null;
}

/** The bench's sums table of `rows` rows: 20 predictors, blocks by row number mod 10. */
export function benchSumsTable(rows: number): SumsTable {
  const { x, y } = makeData(rows, SUMS_FIT.predictors, DATA_SEED);
  const labels = Array.from({ length: rows }, (_, i) => i % SUMS_FIT.blocks);
  const names = Array.from({ length: SUMS_FIT.predictors }, (_, j) => `sensor_${j + 1}`);
  return sumsOfRows(x, y, null, labels, names, "roast_loss", { blocking: `row number mod ${SUMS_FIT.blocks}`, source: "bench data in memory" });
}

/** Best-of-`repeat` time of fitFromSums on `table` with the pinned workload (default grid); pooled too with `threads` > 1. */
export async function timeFitFromSums(table: SumsTable, repeat: number, threads = 1): Promise<SumsFitTiming> {
  const options = { mixes: [...SUMS_FIT.mixes] };
  let result = fitFromSums(table, options);
  const pool = threads > 1 ? threadPool(threads) : null;
  let best = Infinity;
  let bestCpu = Infinity;
  let bestPooled = Infinity;
  let same = true;
  try {
    if (pool) await fitFromSumsAsync(table, options, { pool }); // warm-up: the threads start
    for (let r = 0; r < Math.max(5, repeat); r++) {
      const cpu = process.cpuUsage();
      const start = performance.now();
      result = fitFromSums(table, options);
      best = Math.min(best, performance.now() - start);
      const used = process.cpuUsage(cpu);
      bestCpu = Math.min(bestCpu, (used.user + used.system) / 1000);
      if (pool) {
        const startPooled = performance.now();
        const pooled = await fitFromSumsAsync(table, options, { pool });
        bestPooled = Math.min(bestPooled, performance.now() - startPooled);
        same &&= JSON.stringify(pooled) === JSON.stringify(result);
      }
    }
  } finally {
    pool?.dispose();
  }
  const rows = table.blocks.reduce((n, b) => n + b.rows, 0);
  return {
    rows,
    ms: best,
    cpuMs: bestCpu,
    strengths: result.diagnostics.strengthCount,
    chosenMix: result.mix,
    termsKept: result.coefficients.filter((b) => b !== 0).length,
    pooled: pool ? { threads, ms: bestPooled, same } : null,
  };
}

/** The fit-from-sums lines of the bench: a table and one JSON line per row count. */
export async function sumsFitBench(repeat: number, threads = 1): Promise<{ table: string[][]; lines: string[] }> {
  const table: string[][] = [["sums fit", "rows summed", "predictors", "blocks", "mixes", "strengths", "ms", "cpu ms", "goal", "pooled ms", "pooled = 1 thread", "load avg"]];
  const lines: string[] = [];
  for (const rows of [10_000, 1_000_000]) {
    const timing = await timeFitFromSums(benchSumsTable(rows), repeat, threads);
    table.push([
      "fitFromSums",
      String(rows),
      String(SUMS_FIT.predictors),
      String(SUMS_FIT.blocks),
      String(SUMS_FIT.mixes.length),
      String(timing.strengths),
      timing.ms.toFixed(1),
      timing.cpuMs.toFixed(1),
      `≤ ${SUMS_FIT.goalMs}`,
      timing.pooled ? `${timing.pooled.ms.toFixed(1)} (${timing.pooled.threads} threads)` : "-",
      timing.pooled ? String(timing.pooled.same) : "-",
      os.loadavg()[0].toFixed(1),
    ]);
    lines.push(
      JSON.stringify({
        case: "sums",
        part: "fit-from-sums",
        rowsSummed: rows,
        p: SUMS_FIT.predictors,
        blocks: SUMS_FIT.blocks,
        mixes: SUMS_FIT.mixes.length,
        strengths: timing.strengths,
        ms: Number(timing.ms.toFixed(2)),
        cpuMs: Number(timing.cpuMs.toFixed(2)),
        goalMs: SUMS_FIT.goalMs,
        met: timing.ms <= SUMS_FIT.goalMs,
        pooled: timing.pooled ? { threads: timing.pooled.threads, ms: Number(timing.pooled.ms.toFixed(2)), same: timing.pooled.same } : null,
        loadAverage: Number(os.loadavg()[0].toFixed(2)),
        cores: os.cpus().length,
      }),
    );
  }
  return { table, lines };
}
