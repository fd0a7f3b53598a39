/**
 * Benchmark of the cross-validated fit (a script, not a test): `npm run bench`.
 *
 * Pinned workload (whatever the user-facing defaults become): 10 random folds (seed 1), mixes
 * 0, 0.2, 0.4, 0.6, 0.8, 1, exactly 100 strengths per mix from the top down to 1e-4 of it (1e-2
 * when predictors ≥ rows), no early stop except an exact fit (the engine always ends a full-data
 * path whose training fit is exact), the engine's default tolerance and sweep cap. Data: bench/data.ts
 * (AR(1)-correlated predictors, ten true coefficients).
 *
 * Per numeric case, in a child process of its own (so each case starts from the same memory state):
 * - `firstMs`: the case's first `fit` in its process (after only a small 200 × 10 warm-up fit):
 *   the engine's code is still being compiled by V8 then, as it is on a worksheet's first
 *   recalculation after the add-in loads.
 * - `ms`: one full `fit` in steady state (best of --repeat), after warm-up fits of the case itself
 *   (the first fit and more, up to --warm fits in all or 2 s of them, whichever comes first; e.g.
 *   3 fits of 1,000 × 50, one of 200 × 2,000). The floor's compiler runs before its clock starts
 *   too, so steady state is the like-for-like comparison; `firstMs` is printed beside it.
 *   `gramMs` one XᵀX pass over the same data in the same process, `ratio = ms / gramMs` (the
 *   figure this bench has always printed; kept).
 * - `peakMB`: the process's peak resident memory during the case's first fit, less its resident
 *   memory before the case's data were made (Linux: VmHWM reset through /proc/self/clear_refs;
 *   elsewhere process.resourceUsage().maxRSS, an upper bound); `dataMB` the data's own size
 *   (8·n·(p + 1) bytes). Goal: peak ≤ 3 × data + O(p²) (`p2MB` = 8p² bytes for comparison).
 * Right after each timed fit (interleaved, so both see the same load on a shared machine), the
 * compiled floor (bench/floor/floor.c, our own plain C coordinate descent from the published
 * algorithm; bench/floor.ts) runs the same workload on the same data, folds and strengths, in a
 * process of its own: `floorMs` (its compute time, best of --repeat), `vsFloor = ms / floorMs`
 * (targets: ≤ 1, ≤ 0.25 on the wide case), and the check that both solve the same problem:
 * `cvMaxRelDiff`, the largest relative difference between the two cross-validation curves, and
 * `sameChoice`, whether the lowest-error point (mix, strength) is the same.
 * Without a C compiler the floor is skipped with a message (floorMs null).
 *
 * Cell-path cases ("cells-1000x50", "cells-50000x40"): SHRINK.COEFS from raw worksheet values to
 * the spilled array through functions/api.ts, the fit cache and the worker protocol (bench/cellPath.ts),
 * timed against the engine's own `fit` on the same data and settings in the same process, best of
 * max(3, --repeat) each, after --warm untimed runs of each on the case itself; the engine first,
 * before the cell path's first transfer puts this thread's typed-array code into V8's slower
 * checked mode (see the cells case below): `vsEngine = ms / engineMs` (goal ≤ 1.2).
 *
 * Two-class cases (`--two-class`; minutes each, so not in the default run): the same predictors
 * with a yes/no outcome drawn from the logistic model, fitted as penalized logistic regression on
 * the pinned workload; the numeric fit of the same predictors is timed beside it, `vsNumber`.
 *
 * `--only sums`: the fit from a sums table (bench/sums.ts): fitFromSums on 20 predictors × 10 blocks
 * × the default grid × 6 mixes, from tables summed from 10,000 and 1,000,000 rows (goal ≤ 50 ms,
 * the same for both: the fit never sees the rows).
 *
 * `--only sums` also times the sums table by DuckDB (bench/sumsDuckdb.ts): a seeded 10,000,000 × 20
 * Parquet file in a temporary folder (removed afterwards), the sums' time as a ratio to a plain
 * single-aggregate scan of the same columns at the same DuckDB thread count (one, then every core;
 * goal ≤ 3), and the process's peak memory at 1M and
 * 10M rows (goal: independent of the rows).
 *
 * Prints a table, then one JSON line per case.
 *
 * `--copy-data`: the fits copy the predictors into their working units as before instead of
 * reading them in place (engine/fit.ts setReadInPlace; the same results), for A/B runs of time
 * and peakMB. Single-threaded fits only (pool workers keep reading in place).
 *
 * `npm run bench` starts this file under tsx's require hook (package.json), as its children.
 *
 * Usage: npm run bench [-- --only 1000x50,cells-1000x50] [-- --repeat 3] [-- --warm 3] [-- --threads 1|auto]
 *        [-- --two-class] [-- --no-floor] [-- --no-cells] [-- --copy-data]
 */
import { fork } from "child_process";
import * as fs from "fs";
import * as os from "os";
import * as path from "path";
import { fit, fitAsync, FitOptions, FitResult, setReadInPlace } from "../engine/fit";
import { threadCount, threadPool } from "../engine/node/threadPool";
import type { TaskPool } from "../engine/parallel";
import { planFolds } from "../engine/folds";
import { ColumnMatrix } from "../engine/matrix";
import { EXACT_FIT_RATIO, strengthGrid } from "../engine/path";
import { blockSums } from "../engine/problem";
import { coefsThroughCells, nodeWorkerRunner, worksheetValues } from "./cellPath";
import { makeData, makeTwoClass } from "./data";
import { sumsFitBench } from "./sums";
import { duckdbSumsBench } from "./sumsDuckdb";
import { compileFloor, FloorRun, runFloor, writeFloorInput } from "./floor";

type Kind = "number" | "two-class" | "cells";

interface Case {
  name: string;
  n: number;
  p: number;
  kind: Kind;
  /** Target on the ratio to the floor (number), to the numeric fit (two-class) or to the engine (cells). */
  target: number;
}

const CASES: Case[] = [
  { name: "1000x50", n: 1000, p: 50, kind: "number", target: 1 },
  { name: "20000x100", n: 20000, p: 100, kind: "number", target: 1 },
  { name: "200x2000", n: 200, p: 2000, kind: "number", target: 0.25 },
  { name: "100000x20", n: 100000, p: 20, kind: "number", target: 1 },
  { name: "cells-1000x50", n: 1000, p: 50, kind: "cells", target: 1.2 },
  { name: "cells-50000x40", n: 50000, p: 40, kind: "cells", target: 1.2 },
  { name: "1000x50-2c", n: 1000, p: 50, kind: "two-class", target: 5 },
  { name: "20000x100-2c", n: 20000, p: 100, kind: "two-class", target: 5 },
  { name: "200x2000-2c", n: 200, p: 2000, kind: "two-class", target: 5 },
];

/** A/B runs: copy the predictors (see the file comment). Passed on to each case's child process. */
const COPY_DATA = process.argv.includes("--copy-data");

/** The pinned workload. */
const MIXES = [0, 0.2, 0.4, 0.6, 0.8, 1];
const FOLDS = 10;
const SEED = 1;
const GRID = 100;
const LOW_END_TALL = 1e-4;
const LOW_END_WIDE = 1e-2;
/** The engine's defaults (engine/fit.ts), which the floor is given too. */
const ENGINE_TOLERANCE = 1e-9;
const ENGINE_MAX_SWEEPS = 10000;
const DATA_SEED = 20261201;

function lowEndFor(n: number, p: number): number {
  return p >= n ? LOW_END_WIDE : LOW_END_TALL;
}

function pinnedOptions(n: number, p: number): FitOptions {
  return { mixes: MIXES, folds: FOLDS, seed: SEED, strengthCount: GRID, lowEndRatio: lowEndFor(n, p), stopEarly: false };
}

/** The same workload as settings text for the cell functions. */
function pinnedSettings(n: number, p: number): string {
  return `folds=${FOLDS}; seed=${SEED}; grid size=${GRID}; low end=${lowEndFor(n, p)}; stop early=no`;
}

// ---------------------------------------------------------------------------------------------
// Threads

/**
 * Worker threads for the pooled fit (engine/node/threadPool.ts). `1`: single-threaded only.
 * `auto` (os.availableParallelism) or a whole number N ≥ 2: every engine case is timed
 * single-threaded AND pooled over N worker threads, interleaved in the same child process, and
 * the pooled result is checked to be bit-identical to the single-threaded one.
 */
function threadsFor(asked: string): { asked: string; used: number; note: string } {
  if (asked === "1") return { asked, used: 1, note: "" };
  const n = asked === "auto" ? "auto" : Number(asked);
  if (n !== "auto" && !(Number.isInteger(n) && n >= 1)) throw new Error(`--threads must be 1, auto or a whole number; got ${asked}`);
  const used = threadCount(n);
  return { asked, used, note: used > 1 ? "" : `--threads ${asked}: 1 core here, so every fit runs single-threaded` };
}

/** The pooled run's JSON fields (null when only one thread ran). */
function pooledFields(report: { ms: number; pooledMs: number | null; pooledIdentical: boolean | null }): Record<string, number | boolean | null> {
  return {
    pooledMs: report.pooledMs === null ? null : Number(report.pooledMs.toFixed(1)),
    pooledSpeedup: report.pooledMs === null ? null : Number((report.ms / report.pooledMs).toFixed(3)),
    pooledIdentical: report.pooledIdentical,
  };
}

/** Same numbers everywhere (Object.is on every number, so -0 and NaN count), ignoring nothing. */
function sameResult(a: unknown, b: unknown): boolean {
  if (typeof a === "number" && typeof b === "number") return Object.is(a, b);
  if (a === null || b === null || typeof a !== "object" || typeof b !== "object") return a === b;
  if (ArrayBuffer.isView(a) || Array.isArray(a)) {
    const x = a as unknown as ArrayLike<unknown>;
    const y = b as unknown as ArrayLike<unknown>;
    if (x.length !== y.length) return false;
    for (let i = 0; i < x.length; i++) if (!sameResult(x[i], y[i])) return false;
    return true;
  }
  const keys = Object.keys(a as object);
  if (keys.length !== Object.keys(b as object).length) return false;
  return keys.every((k) => sameResult((a as Record<string, unknown>)[k], (b as Record<string, unknown>)[k]));
}

// ---------------------------------------------------------------------------------------------
// Memory

function statusKb(field: string): number | null {
  try {
    const match = new RegExp(`^${field}:\\s+(\\d+) kB`, "m").exec(fs.readFileSync("/proc/self/status", "utf8"));
    return match ? Number(match[1]) : null;
  } catch {
    return null;
  }
}

/** Peak-memory probe: `start()` before the case's data, `peakMB()` after the fit. */
function memoryProbe(): { start: () => void; resetPeak: () => void; peakMB: () => number; method: string } {
  const gc = (globalThis as { gc?: () => void }).gc;
  let base = 0;
  let linux = statusKb("VmHWM") !== null;
  return {
    method: linux ? "VmHWM" : "maxRSS",
    start() {
      gc?.();
      gc?.();
      base = linux ? (statusKb("VmRSS") ?? 0) * 1024 : process.memoryUsage().rss;
    },
    resetPeak() {
      gc?.();
      if (!linux) return;
      try {
        fs.writeFileSync("/proc/self/clear_refs", "5");
      } catch {
        linux = false;
      }
    },
    peakMB() {
      const peak = linux ? (statusKb("VmHWM") ?? 0) * 1024 : process.resourceUsage().maxRSS * 1024;
      return (peak - base) / 1e6;
    },
  };
}

// ---------------------------------------------------------------------------------------------
// One case, in a child process

interface CurveOfMix {
  mix: number;
  strengths: number[];
  cv: number[];
}

interface ChildReport {
  /** Best pooled time (threads > 1), and whether every pooled result equalled the single-threaded one bit for bit. */
  pooledMs: number | null;
  pooledIdentical: boolean | null;
  name: string;
  /** number and two-class: the case's first fit in the process; warmFits: fits before the timed ones. */
  firstMs: number | null;
  warmFits: number;
  ms: number;
  gramMs: number;
  peakMB: number | null;
  memoryMethod: string;
  dataMB: number;
  chosen: { mix: number; strength: number; index: number; termsKept: number } | null;
  sweeps: number;
  maxKkt: number;
  converged: boolean;
  curves: CurveOfMix[];
  /** number: the floor's best run (interleaved with ours in the child), or null when skipped. */
  floor: FloorRun | null;
  /** two-class: the numeric fit's time with the same settings; cells: the engine's own fit time. */
  otherMs: number | null;
  eventShare: number | null;
  stepHalvings: number;
}

function timeGram(x: ColumnMatrix, y: Float64Array): number {
  const rows = new Int32Array(x.rows);
  for (let i = 0; i < x.rows; i++) rows[i] = i;
  const shift = new Float64Array(x.columns);
  const start = performance.now();
  blockSums(x, y, null, rows, shift, 0);
  return performance.now() - start;
}

function curvesOf(result: FitResult): CurveOfMix[] {
  const curves: CurveOfMix[] = [];
  for (const row of result.cv?.table ?? []) {
    let curve = curves.find((c) => c.mix === row.mix);
    if (!curve) curves.push((curve = { mix: row.mix, strengths: [], cv: [] }));
    curve.strengths.push(row.strength);
    curve.cv.push(row.error);
  }
  return curves;
}

async function runChild(c: Case, repeat: number, warmFits: number, floorDir: string | null, floorBinary: string | null, threads: number): Promise<ChildReport> {
  const probe = memoryProbe();
  const warm = makeData(200, 10, 1);
  fit(warm.x, warm.y, { mixes: [0.5], folds: 3 });
  if (c.kind === "two-class") fit(warm.x, makeTwoClass(warm.x, warm.y, 1), { mixes: [0.5], folds: 3, outcome: "two-class" });
  // The pool starts (and compiles the engine in each worker) before the memory baseline and any
  // timing, so its idle workers are not counted in the single-threaded fit's peak.
  const pool: TaskPool | null = threads > 1 && c.kind !== "cells" ? threadPool(threads) : null;
  if (pool) await fitAsync(warm.x, warm.y, { mixes: [0.5], folds: 3 }, { pool });
  probe.start();
  const { x, y } = makeData(c.n, c.p, DATA_SEED);
  const events = c.kind === "two-class" ? makeTwoClass(x, y, 20261203) : null;
  const dataMB = (8 * c.n * (c.p + 1)) / 1e6;
  const options = pinnedOptions(c.n, c.p);
  const report: ChildReport = {
    name: c.name,
    ms: Infinity,
    gramMs: Infinity,
    peakMB: null,
    memoryMethod: probe.method,
    dataMB,
    chosen: null,
    sweeps: 0,
    maxKkt: 0,
    converged: true,
    curves: [],
    floor: null,
    otherMs: null,
    eventShare: null,
    stepHalvings: 0,
    pooledMs: null,
    pooledIdentical: null,
    firstMs: null,
    warmFits: 0,
  };
  let result: FitResult | null = null;
  if (c.kind === "cells") {
    const runner = nodeWorkerRunner();
    const cells = worksheetValues(x, y);
    try {
      // The engine's own fit first, warmed as the numeric cases (--warm fits), then timed: the cell
      // path transfers the request's matrix to the worker, which detaches a buffer in this thread,
      // and after the first detach V8 checks every typed-array access in optimized code here (~25%
      // slower engine code for the process's life; functions/fit.worker.ts). The add-in's thread
      // runs no engine code, so the engine's figure is taken before that, in a clean isolate.
      for (let w = 0; w < warmFits; w++) fit(x, y, options);
      let engineBest = Infinity;
      for (let r = 0; r < Math.max(3, repeat); r++) {
        const start = performance.now();
        result = fit(x, y, options);
        engineBest = Math.min(engineBest, performance.now() - start);
      }
      // Then the cell path: the worker warmed (its first fit compiles the engine there) on a small
      // grid and on the case itself, as many fits as the engine had, then timed.
      const small = worksheetValues(warm.x, warm.y);
      await coefsThroughCells(runner, small, MIXES, pinnedSettings(200, 10));
      for (let w = 0; w < warmFits; w++) await coefsThroughCells(runner, cells, MIXES, pinnedSettings(c.n, c.p));
      for (let r = 0; r < Math.max(3, repeat); r++) {
        const start = performance.now();
        await coefsThroughCells(runner, cells, MIXES, pinnedSettings(c.n, c.p));
        report.ms = Math.min(report.ms, performance.now() - start);
      }
      report.otherMs = engineBest;
    } finally {
      runner.dispose();
    }
  } else {
    try {
    let floorInput: string | null = null;
    // The case's first fit (cold: V8 still compiling) with the peak memory, then warm-up fits of
    // the case until --warm fits or 2 s of them; the timed repeats below are steady state.
    const fitCase = (): FitResult => (events ? fit(x, events, { ...options, outcome: "two-class" }) : fit(x, y, options));
    probe.resetPeak();
    let warmStart = performance.now();
    fitCase();
    report.firstMs = performance.now() - warmStart;
    if (!events) report.peakMB = probe.peakMB();
    report.warmFits = 1;
    let warmTotal = report.firstMs;
    while (report.warmFits < warmFits && warmTotal < 2000) {
      warmStart = performance.now();
      fitCase();
      warmTotal += performance.now() - warmStart;
      report.warmFits++;
    }
    // The pool's workers warmed on the case alike (as many pooled fits as single-threaded ones).
    if (pool) {
      for (let w = 0; w < report.warmFits; w++) await fitAsync(x, events ?? y, events ? { ...options, outcome: "two-class" as const } : options, { pool });
    }
    for (let r = 0; r < repeat; r++) {
      report.gramMs = Math.min(report.gramMs, timeGram(x, y));
      if (events) {
        const start = performance.now();
        fit(x, y, options);
        report.otherMs = Math.min(report.otherMs ?? Infinity, performance.now() - start);
      }
      const start = performance.now();
      result = fitCase();
      report.ms = Math.min(report.ms, performance.now() - start);
      if (pool && result) {
        const fitOptions = events ? { ...options, outcome: "two-class" as const } : options;
        const pooledStart = performance.now();
        const pooled = await fitAsync(x, events ?? y, fitOptions, { pool });
        report.pooledMs = Math.min(report.pooledMs ?? Infinity, performance.now() - pooledStart);
        report.pooledIdentical = (report.pooledIdentical ?? true) && sameResult(pooled, result);
      }
      // The floor right after ours, in each repeat: both see the same load on a shared machine.
      if (r === 0 && c.kind === "number" && floorDir && floorBinary) floorInput = writeFloorFile(c, x, y, floorDir, curvesOf(result));
      if (floorInput && floorBinary) {
        const run = runFloor(floorBinary, floorInput);
        if (!report.floor || run.ms < report.floor.ms) report.floor = run;
      }
    }
    if (floorInput) fs.rmSync(floorInput, { force: true });
    } finally {
      pool?.dispose();
    }
  }
  if (!result) throw new Error("no fit ran");
  report.chosen = { mix: result.mix, strength: result.strength, index: result.choices?.lowest.index ?? -1, termsKept: result.coefficients.filter((b) => b !== 0).length };
  report.sweeps = result.diagnostics.sweeps;
  report.maxKkt = result.diagnostics.maxKktViolationAllFits;
  report.converged = result.diagnostics.converged;
  report.stepHalvings = result.diagnostics.stepHalvings;
  report.curves = curvesOf(result);
  if (events) {
    let share = 0;
    for (let i = 0; i < events.length; i++) share += events[i] / events.length;
    report.eventShare = share;
  }
  return report;
}

/**
 * The floor's input: the case's data, the engine's own folds (random, seed 1, no strata for a
 * number outcome) and the full grid of each mix (strengthGrid from the same top, count and low
 * end as the fit's, checked against the fit's own strengths).
 */
function writeFloorFile(c: Case, x: ColumnMatrix, y: Float64Array, floorDir: string, curves: CurveOfMix[]): string {
  const plan = planFolds(c.n, null, { scheme: "random", folds: FOLDS, seed: SEED, labels: null });
  const fold = new Int32Array(c.n);
  plan.validateBlock.forEach((block, k) => {
    for (const i of plan.blocks[block]) fold[i] = k;
  });
  const grids = curves.map((curve) => strengthGrid(curve.strengths[0], GRID, lowEndFor(c.n, c.p)));
  curves.forEach((curve, a) => {
    curve.strengths.forEach((s, k) => {
      if (s !== grids[a][k]) throw new Error(`${c.name}: the rebuilt grid of mix ${curve.mix} differs from the fit's at point ${k}`);
    });
  });
  const file = path.join(floorDir, `${c.name}.bin`);
  writeFloorInput(file, { n: c.n, p: c.p, x: x.data, y, fold, folds: FOLDS, mixes: MIXES, grids, tolerance: ENGINE_TOLERANCE, maxSweeps: ENGINE_MAX_SWEEPS, exactFitRatio: EXACT_FIT_RATIO });
  return file;
}

/**
 * Node flags for a case's child: this process's own, except that tsx's module loader (its
 * `--import …/loader.mjs`, when the bench is started by `npx tsx bench/run.ts` rather than
 * `npm run bench`, which uses the require hook already) is replaced by tsx's require hook
 * alone, which compiles the same sources on require. Measured on 1,000 × 50 in steady state (CPU
 * per fit, alternated runs): about 225 ms under the loader against 175 ms under the require hook
 * or 150–160 ms from an esbuild bundle, the form the add-in ships in. The worker threads already
 * start this way (engine/node/threadPool.ts), so the pooled and single-threaded figures now load
 * the engine alike.
 */
function childExecArgv(): string[] {
  const flags: string[] = [];
  let usedLoader = false;
  for (let i = 0; i < process.execArgv.length; i++) {
    const flag = process.execArgv[i];
    const value = process.execArgv[i + 1] ?? "";
    if ((flag === "--import" || flag === "--require" || flag === "--loader") && /[\\/]tsx[\\/]/.test(value)) {
      usedLoader = true;
      i++;
      continue;
    }
    flags.push(flag);
  }
  return usedLoader ? ["--require", require.resolve("tsx/cjs"), ...flags] : flags;
}

function inChild(c: Case, repeat: number, warmFits: number, floorDir: string | null, floorBinary: string | null, threads: number): Promise<ChildReport> {
  return new Promise((resolve, reject) => {
    const args = ["--child", c.name, "--repeat", String(repeat), "--warm", String(warmFits), "--threads", String(threads)];
    if (floorDir && floorBinary) args.push("--floor-dir", floorDir, "--floor-binary", floorBinary);
    if (COPY_DATA) args.push("--copy-data");
    const child = fork(__filename, args, { execArgv: [...childExecArgv(), "--expose-gc"], stdio: ["ignore", "inherit", "inherit", "ipc"] });
    let report: ChildReport | null = null;
    child.on("message", (message) => (report = message as ChildReport));
    child.on("error", reject);
    child.on("exit", (code) => (report ? resolve(report) : reject(new Error(`case ${c.name}: child exited with ${code}`))));
  });
}

// ---------------------------------------------------------------------------------------------
// The floor's check

function compareWithFloor(report: ChildReport, floor: FloorRun): { maxRelDiff: number; sameChoice: boolean; topRelDiff: number; floorSweeps: number; floorCapped: number } {
  let maxRelDiff = 0;
  let topRelDiff = 0;
  let floorSweeps = 0;
  let floorCapped = 0;
  let best = { error: Infinity, mix: NaN, index: -1 };
  floor.mixes.forEach((fm, a) => {
    floorSweeps += fm.sweeps;
    floorCapped += fm.capped;
    const ours = report.curves[a];
    if (fm.mix > 0) topRelDiff = Math.max(topRelDiff, Math.abs(fm.top - ours.strengths[0]) / ours.strengths[0]);
    if (fm.points !== ours.cv.length) maxRelDiff = Infinity;
    for (let k = 0; k < Math.min(fm.points, ours.cv.length); k++) {
      maxRelDiff = Math.max(maxRelDiff, Math.abs(fm.cv[k] - ours.cv[k]) / Math.abs(ours.cv[k]));
      if (fm.cv[k] < best.error) best = { error: fm.cv[k], mix: fm.mix, index: k };
    }
  });
  const sameChoice = report.chosen !== null && best.mix === report.chosen.mix && best.index === report.chosen.index;
  return { maxRelDiff, sameChoice, topRelDiff, floorSweeps, floorCapped };
}

// ---------------------------------------------------------------------------------------------

function argValue(args: string[], flag: string): string | null {
  const at = args.indexOf(flag);
  return at >= 0 && at + 1 < args.length ? args[at + 1] : null;
}

const fixed = (value: number | null, digits: number): string => (value === null || !Number.isFinite(value) ? "–" : value.toFixed(digits));

async function main(): Promise<void> {
  const args = process.argv.slice(2);
  const repeat = Math.max(1, Number(argValue(args, "--repeat") ?? 1));
  const warmAsked = Number(argValue(args, "--warm") ?? 3);
  const warmFits = Number.isFinite(warmAsked) ? Math.max(1, Math.floor(warmAsked)) : 3;
  const childCase = argValue(args, "--child");
  if (childCase) {
    if (COPY_DATA) setReadInPlace(false);
    const c = CASES.find((k) => k.name === childCase);
    if (!c) throw new Error(`unknown case ${childCase}`);
    const report = await runChild(c, repeat, warmFits, argValue(args, "--floor-dir"), argValue(args, "--floor-binary"), Number(argValue(args, "--threads") ?? 1));
    process.send?.(report);
    return;
  }
  const only = argValue(args, "--only") ? new Set((argValue(args, "--only") ?? "").split(",")) : null;
  const threads = threadsFor(argValue(args, "--threads") ?? "1");
  if (threads.note) console.log(threads.note);
  const twoClass = args.includes("--two-class");
  const cells = !args.includes("--no-cells");
  const chosen = CASES.filter((c) => (only ? only.has(c.name) : c.kind === "number" || (c.kind === "cells" && cells) || (c.kind === "two-class" && twoClass)));
  let floorBinary: string | null = null;
  let floorDir: string | null = null;
  if (!args.includes("--no-floor") && chosen.some((c) => c.kind === "number")) {
    const built = compileFloor();
    if (built.binary) {
      floorBinary = built.binary;
      floorDir = fs.mkdtempSync(path.join(os.tmpdir(), "shrinkwise-bench-"));
    } else {
      console.log(`floor skipped: ${built.reason}`);
    }
  }
  const table: string[][] = [["case", "first fit ms", "ours ms", "floor ms", "ours÷floor", "target", "peak MB", "data MB", "8p² MB", "CV rel diff", "same choice", "sweeps ours/floor", "max KKT", "pooled ms", "1 thread ÷ pooled", "pooled = 1 thread"]];
  const cellTable: string[][] = [["case", "cell path ms", "engine ms", "cells÷engine", "target"]];
  const twoTable: string[][] = [["case", "ms", "number ms", "vs number", "event share", "chosen mix", "strength", "CV deviance", "max KKT", "halvings", "target"]];
  const lines: string[] = [];
  // The sums by DuckDB run in this process: its peak memory is the figure, so they run first,
  // before the fit-from-sums case below builds its tables from rows held in memory.
  const duckdbSums = only?.has("sums") ? await duckdbSumsBench(repeat) : null;
  if (duckdbSums) lines.push(...duckdbSums.lines);
  // The fit from sums runs in this process: it times milliseconds of work on tables of a few kB.
  const sums = only?.has("sums") ? await sumsFitBench(repeat, threads.used) : null;
  if (sums) lines.push(...sums.lines);
  try {
    for (const c of chosen) {
      const report = await inChild(c, repeat, warmFits, floorDir, floorBinary, c.kind === "cells" ? 1 : threads.used);
      const base = { case: c.name, n: c.n, p: c.p, folds: FOLDS, mixes: MIXES.length, grid: GRID };
      if (c.kind === "number") {
        const floorMs = report.floor ? report.floor.ms : null;
        const check = report.floor ? compareWithFloor(report, report.floor) : null;
        const vsFloor = floorMs !== null ? report.ms / floorMs : null;
        table.push([
          c.name,
          fixed(report.firstMs, 0),
          fixed(report.ms, 0),
          fixed(floorMs, 0),
          fixed(vsFloor, 2),
          `≤ ${c.target}`,
          fixed(report.peakMB, 1),
          fixed(report.dataMB, 1),
          fixed((8 * c.p * c.p) / 1e6, 1),
          check ? check.maxRelDiff.toExponential(1) : "–",
          check ? (check.sameChoice ? "yes" : "NO") : "–",
          `${report.sweeps}/${check ? check.floorSweeps : "–"}`,
          report.maxKkt.toExponential(1),
          fixed(report.pooledMs, 0),
          fixed(report.pooledMs === null ? null : report.ms / report.pooledMs, 2),
          report.pooledIdentical === null ? "–" : report.pooledIdentical ? "yes" : "NO",
        ]);
        lines.push(
          JSON.stringify({
            ...base,
            ms: Number(report.ms.toFixed(1)),
            firstMs: report.firstMs === null ? null : Number(report.firstMs.toFixed(1)),
            warmFits: report.warmFits,
            gramMs: Number(report.gramMs.toFixed(2)),
            ratio: Number((report.ms / report.gramMs).toFixed(3)),
            lowEnd: lowEndFor(c.n, c.p),
            threads: threads.used,
            peakMB: report.peakMB === null ? null : Number(report.peakMB.toFixed(1)),
            dataMB: Number(report.dataMB.toFixed(2)),
            floorMs: floorMs === null ? null : Number(floorMs.toFixed(1)),
            vsFloor: vsFloor === null ? null : Number(vsFloor.toFixed(3)),
            cvMaxRelDiff: check ? Number(check.maxRelDiff.toPrecision(2)) : null,
            sameChoice: check ? check.sameChoice : null,
            topMaxRelDiff: check ? Number(check.topRelDiff.toPrecision(2)) : null,
            sweeps: report.sweeps,
            floorSweeps: check ? check.floorSweeps : null,
            floorCapped: check ? check.floorCapped : null,
            maxKkt: report.maxKkt,
            converged: report.converged,
            ...pooledFields(report),
          }),
        );
      } else if (c.kind === "cells") {
        const engineMs = report.otherMs ?? NaN;
        cellTable.push([c.name, fixed(report.ms, 0), fixed(engineMs, 0), fixed(report.ms / engineMs, 2), `≤ ${c.target}`]);
        lines.push(
          JSON.stringify({
            ...base,
            ms: Number(report.ms.toFixed(1)),
            engineMs: Number(engineMs.toFixed(1)),
            vsEngine: Number((report.ms / engineMs).toFixed(3)),
            runner: "worker_threads",
            threads: threads.used,
          }),
        );
      } else {
        const numberMs = report.otherMs ?? NaN;
        const lowest = report.chosen;
        twoTable.push([
          c.name,
          fixed(report.ms, 0),
          fixed(numberMs, 0),
          fixed(report.ms / numberMs, 2),
          fixed(report.eventShare, 3),
          String(lowest?.mix ?? "–"),
          lowest ? lowest.strength.toPrecision(4) : "–",
          lowest ? (report.curves.find((k) => k.mix === lowest.mix)?.cv[lowest.index]?.toPrecision(4) ?? "–") : "–",
          report.maxKkt.toExponential(1),
          String(report.stepHalvings),
          `≤ ${c.target}x number`,
        ]);
        lines.push(
          JSON.stringify({
            ...base,
            ms: Number(report.ms.toFixed(1)),
            gramMs: Number(report.gramMs.toFixed(2)),
            ratio: Number((report.ms / report.gramMs).toFixed(3)),
            numberMs: Number(numberMs.toFixed(1)),
            vsNumber: Number((report.ms / numberMs).toFixed(3)),
            outcome: "two-class",
            threads: threads.used,
            ...pooledFields(report),
          }),
        );
      }
    }
  } finally {
    if (floorDir) fs.rmSync(floorDir, { recursive: true, force: true });
  }
  const print = (rows: string[][]): void => {
    if (rows.length < 2) return;
    const widths = rows[0].map((_, k) => Math.max(...rows.map((r) => r[k].length)));
    console.log("");
    for (const r of rows) console.log(r.map((cell, k) => cell.padStart(widths[k])).join("  "));
  };
  print(table);
  print(cellTable);
  print(twoTable);
  if (sums) print(sums.table);
  if (duckdbSums) print(duckdbSums.table);
  console.log("");
  for (const line of lines) console.log(line);
}

main().catch((error: unknown) => {
  console.error(error);
  process.exit(1);
});
