/**
 * Parallel folds (engine/parallel.ts, engine/node/threadPool.ts): a fit whose mixes and folds run
 * on a pool is the sequential fit bit for bit (every number compared with Object.is: a property
 * of the construction, each task a pure function of the inputs, merged in task order); progress
 * and cancel work across the pool; a task's InputError reaches the caller unchanged.
 */
import { fit, fitAsync, FitOptions, FitResult, openTaskContext, runFitTask } from "../../engine/fit";
import { CancelledError, InputError } from "../../engine/errors";
import { mulberry32 } from "../../engine/random";
import { createTaskHost, FitTask, FromTaskWorker, PoolUnavailableError, taskAffinity, TaskEndpoint, TaskPool, ToTaskWorker, WorkerPool } from "../../engine/parallel";
import { fitParallel, threadPool } from "../../engine/node/threadPool";
import { fitFromSums, fitFromSumsAsync } from "../../engine/fitSums";
import { sumsOfRows } from "../../engine/sums";
import type { SumsTable } from "../../engine/sumsTable";
import { blockSumsOf } from "../../engine/problem";

/** Correlated predictors, a sparse linear target with noise, and a 0/1 outcome from the same score. */
function data(rows: number, columns: number, seed: number): { x: number[][]; y: number[]; events: number[] } {
  const uniform = mulberry32(seed);
  const x: number[][] = [];
  const y: number[] = [];
  const events: number[] = [];
  for (let i = 0; i < rows; i++) {
    const shared = uniform() - 0.5;
    const row = Array.from({ length: columns }, (_, j) => (j % 3 === 0 ? shared : 0) + uniform() - 0.5 + j);
    const score = 2 * (row[0] - 0) - 1.5 * (row[1] - 1) + (row[2] - 2) + 0.5 * (uniform() - 0.5);
    x.push(row);
    y.push(score * 10 + 100);
    events.push(uniform() < 1 / (1 + Math.exp(-2 * score)) ? 1 : 0);
  }
  return { x, y, events };
}

/** The first place two results differ (numbers compared with Object.is, so -0 ≠ 0 and NaN = NaN), or null. */
function difference(a: unknown, b: unknown, path = "result"): string | null {
  if (typeof a === "number" || typeof b === "number") return Object.is(a, b) ? null : `${path}: ${String(a)} vs ${String(b)}`;
  if (a === null || b === null || typeof a !== "object" || typeof b !== "object") return a === b ? null : `${path}: ${String(a)} vs ${String(b)}`;
  if (Array.isArray(a) !== Array.isArray(b)) return `${path}: array vs not`;
  const keysA = Object.keys(a as object);
  const keysB = Object.keys(b as object);
  if (keysA.join() !== keysB.join()) return `${path}: keys ${keysA.join()} vs ${keysB.join()}`;
  for (const key of keysA) {
    const found = difference((a as Record<string, unknown>)[key], (b as Record<string, unknown>)[key], `${path}.${key}`);
    if (found) return found;
  }
  return null;
}

/**
 * A copy of a message as a worker would receive it (structured cloning, by hand: jest runs tests
 * in their own realm, where the global structuredClone's typed arrays fail `instanceof`).
 */
function cloned<T>(value: T): T {
  if (ArrayBuffer.isView(value)) return (value as unknown as { slice: () => T }).slice();
  if (Array.isArray(value)) return value.map(cloned) as T;
  if (value !== null && typeof value === "object") {
    const out: Record<string, unknown> = {};
    for (const [key, v] of Object.entries(value)) out[key] = cloned(v);
    return out as T;
  }
  return value;
}

/**
 * Workers in this thread (parallel.ts createTaskHost on fit.ts's task functions), each answering
 * after a random delay, so tasks finish in a shuffled order: the merge must not depend on it.
 */
function shuffledPool(size: number, seed: number, shared = false, seen: (message: ToTaskWorker | FromTaskWorker) => void = () => undefined): TaskPool {
  const uniform = mulberry32(seed);
  return new WorkerPool((): TaskEndpoint => {
    let deliver: (message: FromTaskWorker) => void = () => undefined;
    let stopped = false;
    const host = createTaskHost(
      (message) => {
        seen(message);
        setTimeout(() => !stopped && deliver(message), Math.floor(uniform() * 4));
      },
      openTaskContext,
      runFitTask,
    );
    return {
      post: (message: ToTaskWorker) => {
        seen(message);
        setTimeout(() => !stopped && host(cloned(message)), 0);
      },
      listen: (onMessage) => {
        deliver = (message) => onMessage(cloned(message));
      },
      terminate: () => {
        stopped = true;
      },
    };
  }, size, shared);
}

const weights = (n: number): number[] => Array.from({ length: n }, (_, i) => (i % 11 === 0 ? 0 : 1 + (i % 4) / 2));

const CASES: [string, (d: ReturnType<typeof data>) => { y: number[]; options: FitOptions }][] = [
  ["number, gram form", (d) => ({ y: d.y, options: { mixes: [0, 0.5, 1], folds: 5, gridDensity: 10 } })],
  ["number, repeats and weights", (d) => ({ y: d.y, options: { mixes: [0, 0.5, 1], folds: 4, repeats: 3, gridDensity: 10, weights: weights(d.y.length) } })],
  ["number, residual form, MAE, one-SE", (d) => ({ y: d.y, options: { mixes: [0, 1], folds: 4, gridDensity: 10, updates: "residual", measure: "mae", rule: "one-se" } })],
  ["two-class, repeats and weights", (d) => ({ y: d.events, options: { outcome: "two-class", mixes: [0.5, 1], folds: 4, repeats: 2, gridDensity: 8, weights: weights(d.y.length) } })],
  ["two-class, AUC", (d) => ({ y: d.events, options: { outcome: "two-class", mixes: [0, 1], folds: 5, gridDensity: 8, measure: "auc" } })],
  ["number, honest error (outer folds as tasks), repeats, weights", (d) => ({ y: d.y, options: { mixes: [0, 1], folds: 4, repeats: 2, gridDensity: 8, honestError: true, weights: weights(d.y.length) } })],
  ["two-class, honest error", (d) => ({ y: d.events, options: { outcome: "two-class", mixes: [1], folds: 4, gridDensity: 8, honestError: true } })],
];

describe("a pooled fit is the sequential fit bit for bit", () => {
  const d = data(150, 8, 3);
  for (const [name, make] of CASES) {
    test(`${name}: 2 and 3 workers finishing in shuffled order`, async () => {
      const { y, options } = make(d);
      const sequential = fit(d.x, y, options);
      for (const size of [2, 3]) {
        const pool = shuffledPool(size, size * 17);
        const pooled = await fitAsync(d.x, y, options, { pool });
        pool.dispose();
        expect(difference(pooled, sequential)).toBeNull();
      }
    });
  }
  test("wide data (exact ridge folds in kernel form, their chosen point computed by a task)", async () => {
    const wide = data(40, 60, 5);
    const options: FitOptions = { mixes: [0], folds: 4, gridDensity: 10 };
    const pool = shuffledPool(3, 1);
    const pooled = await fitAsync(wide.x, wide.y, options, { pool });
    pool.dispose();
    expect(difference(pooled, fit(wide.x, wide.y, options))).toBeNull();
    expect(pooled.foldModels?.length).toBe(4);
  });
});

describe("a gram-form fit's block sums shared between the coordinator and the workers (pools with shared memory)", () => {
  // Large enough for the pass to be shared (fit.ts POOLED_SUMS_WORK: rows × (columns + 2)² ≥ 2^22).
  const d = data(2500, 40, 5);
  const options = (weighted: boolean): FitOptions => ({ mixes: [0, 1], folds: 5, gridDensity: 6, ...(weighted ? { weights: weights(2500) } : {}) });
  for (const weighted of [false, true]) {
    test(`${weighted ? "with" : "without"} weights: each block a worker sums is blockSumsOf's over all blocks, bit for bit, and the fit is the sequential one`, async () => {
      const sequential = fit(d.x, d.y, options(weighted));
      for (const size of [2, 3]) {
        const messages: (ToTaskWorker | FromTaskWorker)[] = [];
        const pool = shuffledPool(size, size * 5, true, (message) => messages.push(message));
        const pooled = await fitAsync(d.x, d.y, options(weighted), { pool });
        pool.dispose();
        expect(difference(pooled, sequential)).toBeNull();
        const opened = messages.find((m): m is Extract<ToTaskWorker, { type: "open" }> => m.type === "open" && m.input.rows !== undefined);
        expect(opened).toBeDefined();
        const rows = (opened as Extract<ToTaskWorker, { type: "open" }>).input.rows as {
          values: Float64Array;
          rows: number;
          columns: number;
          weighted: boolean;
          factors: Float64Array | null;
          blocks: Int32Array[];
          shiftX: Float64Array;
          shiftY: number;
        };
        const { rows: n, columns: p, values } = rows;
        expect(rows.weighted).toBe(weighted);
        // The one call over every block, as the sequential fit makes it.
        const all = blockSumsOf({ rows: n, columns: p, data: values.subarray(0, n * p) }, values.subarray(n * p, n * (p + 1)), weighted ? values.subarray(n * (p + 1), n * (p + 2)) : null, rows.blocks, rows.shiftX, rows.shiftY, undefined, rows.factors);
        const tasks = messages.filter((m): m is Extract<ToTaskWorker, { type: "task" }> => m.type === "task" && m.task.kind === "block-sums");
        // This thread sums the first run of blocks, the workers (size − 1 of them) the rest, each block once.
        expect(tasks.map((m) => m.task)).toEqual(
          Array.from({ length: size - 1 }, (_, g) => ({ kind: "block-sums", from: Math.floor(((g + 1) * 5) / size), to: Math.floor(((g + 2) * 5) / size) })),
        );
        let checked = 0;
        for (const m of messages) {
          if (m.type !== "result" || m.result.kind !== "block-sums") continue;
          const task = tasks.find((t) => t.id === m.id && t.session === m.session)?.task as Extract<FitTask, { kind: "block-sums" }>;
          expect(m.result.sums.length).toBe(task.to - task.from);
          m.result.sums.forEach((block, k) => expect(difference(block, all[task.from + k], `block ${task.from + k}`)).toBeNull());
          checked += m.result.sums.length;
        }
        expect(checked).toBe(5 - Math.floor(5 / size));
      }
    });
  }

  test("the check above catches a block summed differently (one last bit of one product)", () => {
    const n = 300;
    const p = 6;
    const values = Float64Array.from({ length: n * p }, (_, t) => Math.sin(t) * 3);
    const y = Float64Array.from({ length: n }, (_, i) => Math.cos(i));
    const blocks = [0, 1, 2].map((b) => Int32Array.from({ length: 100 }, (_, i) => 3 * i + b));
    const x = { rows: n, columns: p, data: values };
    const all = blockSumsOf(x, y, null, blocks, new Float64Array(p), 0);
    const part = blockSumsOf(x, y, null, blocks.slice(1), new Float64Array(p), 0);
    expect(difference(part[0], all[1])).toBeNull();
    part[0].xx[7] = part[0].xx[7] * (1 + Number.EPSILON);
    expect(difference(part[0], all[1])).not.toBeNull();
  });

  test("worker threads (a SharedArrayBuffer): the fit is the sequential one on 2 threads", async () => {
    const pool = threadPool(2);
    try {
      for (const weighted of [false, true]) expect(difference(await fitParallel(d.x, d.y, options(weighted), { pool }), fit(d.x, d.y, options(weighted)))).toBeNull();
    } finally {
      pool.dispose();
    }
  });

  test("without shared memory the workers get no block-sums task", async () => {
    const messages: (ToTaskWorker | FromTaskWorker)[] = [];
    const pool = shuffledPool(2, 9, false, (message) => messages.push(message));
    const pooled = await fitAsync(d.x, d.y, options(false), { pool });
    pool.dispose();
    expect(difference(pooled, fit(d.x, d.y, options(false)))).toBeNull();
    expect(messages.some((m) => m.type === "task" && m.task.kind === "block-sums")).toBe(false);
  });
});

describe("a fit from a sums table on a pool is the sequential fitFromSums bit for bit", () => {
  // The workers get the fit's own problems (the snapshot), never rows: a sums table has none.
  const d = data(300, 12, 23);
  const labels = d.y.map((_, i) => `lot ${i % 6}`);
  const names = Array.from({ length: 12 }, (_, j) => `probe_${j + 1}`);
  const weighted = d.y.map((_, i) => 1 + (i % 3));
  const tables: [string, SumsTable, FitOptions][] = [
    ["six blocks, three mixes", sumsOfRows(d.x, d.y, null, labels, names, "roast_loss"), { mixes: [0, 0.5, 1], gridDensity: 10 }],
    ["weights, merged into 3 folds, one-SE", sumsOfRows(d.x, d.y, weighted, labels, names, "roast_loss"), { mixes: [0.25, 1], folds: 3, rule: "one-se", gridDensity: 10 }],
    ["time-ordered blocks", sumsOfRows(d.x, d.y, null, labels, names, "roast_loss", { timeOrdered: true }), { mixes: [1], gridDensity: 10 }],
  ];
  for (const [name, table, options] of tables) {
    test(`${name}: 2 and 3 workers finishing in shuffled order`, async () => {
      const sequential = fitFromSums(table, options);
      for (const size of [2, 3]) {
        const pool = shuffledPool(size, size * 29);
        const pooled = await fitFromSumsAsync(table, options, { pool });
        pool.dispose();
        expect(difference(pooled, sequential)).toBeNull();
      }
    });
  }
  test("least squares (strength 0) needs no tasks: the same result with a pool", async () => {
    const pool = shuffledPool(2, 3);
    const pooled = await fitFromSumsAsync(tables[0][1], { strength: 0, mixes: [1] }, { pool });
    pool.dispose();
    expect(difference(pooled, fitFromSums(tables[0][1], { strength: 0, mixes: [1] }))).toBeNull();
  });
});

test("an honest error's outer fold that can't be fitted gives the sequential fit's InputError", async () => {
  const d = data(60, 4, 19);
  // Two fold labels: each outer training part holds one label, too few for its own folds.
  const options: FitOptions = { mixes: [1], gridDensity: 8, honestError: true, foldLabels: d.y.map((_, i) => (i % 2 === 0 ? "east" : "west")) };
  let expected: InputError | null = null;
  try {
    fit(d.x, d.y, options);
  } catch (error) {
    expected = error as InputError;
  }
  expect(expected).toBeInstanceOf(InputError);
  const pool = shuffledPool(2, 5);
  const pooled = fitAsync(d.x, d.y, options, { pool });
  await expect(pooled).rejects.toThrow(InputError);
  await pooled.catch((error: InputError) => {
    expect(error.code).toBe((expected as InputError).code);
    expect(error.message).toBe((expected as InputError).message);
  });
  pool.dispose();
});

describe("worker threads", () => {
  let pool: TaskPool;
  beforeAll(() => {
    pool = threadPool(2);
  });
  afterAll(() => pool.dispose());

  test("number and two-class fits with repeats and weights: identical on 2 and 3 threads", async () => {
    const d = data(200, 10, 7);
    const three = threadPool(3);
    try {
      for (const [, make] of [CASES[1], CASES[3]]) {
        const { y, options } = make(d);
        const sequential = fit(d.x, y, options);
        expect(difference(await fitParallel(d.x, y, options, { pool }), sequential)).toBeNull();
        expect(difference(await fitParallel(d.x, y, options, { pool: three }), sequential)).toBeNull();
      }
    } finally {
      three.dispose();
    }
  });

  test("a fit from sums: identical on 2 threads", async () => {
    const d = data(200, 10, 31);
    const table = sumsOfRows(d.x, d.y, null, d.y.map((_, i) => i % 5), Array.from({ length: 10 }, (_, j) => `probe_${j + 1}`), "roast_loss");
    const options: FitOptions = { mixes: [0, 0.5, 1] };
    expect(difference(await fitFromSumsAsync(table, options, { pool }), fitFromSums(table, options))).toBeNull();
  });

  test("progress counts every unit once and ends at the total", async () => {
    const d = data(120, 6, 9);
    const seen: [number, number][] = [];
    await fitParallel(d.x, d.y, { mixes: [0, 0.5, 1], folds: 4, repeats: 2, onProgress: (done, total) => seen.push([done, total]) }, { pool });
    expect(seen.length).toBe(3 * (2 * 4 + 1));
    seen.forEach(([done, total], k) => {
      expect(done).toBe(k + 1);
      expect(total).toBe(27);
    });
    // With the honest error, each outer fold's units arrive together when its task ends: rising, ending at the total.
    const honest: [number, number][] = [];
    await fitParallel(d.x, d.y, { mixes: [0, 1], folds: 3, honestError: true, onProgress: (done, total) => honest.push([done, total]) }, { pool });
    const total = honest[0][1];
    expect(total).toBe(2 * 4 + 3 * (2 * 4));
    honest.forEach(([done, t], k) => {
      expect(t).toBe(total);
      if (k > 0) expect(done).toBeGreaterThan(honest[k - 1][0]);
    });
    expect(honest[honest.length - 1][0]).toBe(total);
  });

  test("a cancel raised mid-run stops every worker within 0.25 s with CancelledError", async () => {
    const d = data(3000, 60, 11);
    const signal = { aborted: false };
    let raisedAt = 0;
    let units = 0;
    const run = fitParallel(d.x, d.y, {
      mixes: [0, 0.25, 0.5, 0.75, 1],
      folds: 10,
      strengthCount: 100,
      lowEndRatio: 1e-4,
      updates: "residual",
      signal,
      onProgress: () => {
        units++;
        if (units === 3) {
          signal.aborted = true;
          raisedAt = performance.now();
        }
      },
    }, { pool });
    await expect(run).rejects.toThrow(CancelledError);
    expect((performance.now() - raisedAt) / 1000).toBeLessThanOrEqual(0.25); // the requirement: cancellation within 0.25 s
    expect(units).toBeLessThan(5 * 11);
    // The pool starts fresh workers for the next fit.
    const small = data(60, 4, 2);
    expect(difference(await fitParallel(small.x, small.y, { mixes: [1], folds: 3 }, { pool }), fit(small.x, small.y, { mixes: [1], folds: 3 }))).toBeNull();
  });

  test("an InputError found by a worker's task reaches the caller with its code and message", async () => {
    const d = data(80, 4, 13);
    // Every term held at 0 by bounds of 0 and 0: the full-data paths find nothing to choose.
    const options: FitOptions = { mixes: [0.5, 1], folds: 4, lowerBounds: [0, 0, 0, 0], upperBounds: [0, 0, 0, 0] };
    let expected: unknown = null;
    try {
      fit(d.x, d.y, options);
    } catch (error) {
      expected = error;
    }
    expect(expected).toBeInstanceOf(InputError);
    const pooled = fitParallel(d.x, d.y, options, { pool });
    await expect(pooled).rejects.toThrow(InputError);
    await pooled.catch((error: InputError) => {
      expect(error.code).toBe((expected as InputError).code);
      expect(error.message).toBe((expected as InputError).message);
    });
  });
});

test("a pool whose workers can't start says so (PoolUnavailableError), so a caller can fit sequentially", async () => {
  const pool = new WorkerPool(() => {
    throw new Error("workers are not allowed here");
  }, 2);
  const d = data(60, 4, 1);
  await expect(fitAsync(d.x, d.y, { mixes: [1], folds: 3 }, { pool })).rejects.toThrow(PoolUnavailableError);
});

test("a fit on a pool keeps the same result as fit when run twice on one pool (workers reused)", async () => {
  const d = data(100, 5, 21);
  const pool = shuffledPool(2, 3);
  const options: FitOptions = { mixes: [0.5], folds: 3 };
  const first: FitResult = await fitAsync(d.x, d.y, options, { pool });
  const second: FitResult = await fitAsync(d.x, d.y, { ...options, seed: 2 }, { pool });
  pool.dispose();
  expect(difference(first, fit(d.x, d.y, options))).toBeNull();
  expect(difference(second, fit(d.x, d.y, { ...options, seed: 2 }))).toBeNull();
});

test("scheduling: a fold's tasks stay with the worker that took the fold first, at most two tasks are queued per worker, and every task runs once", async () => {
  // Workers in this thread that log what they are sent and answer one task per tick, in order.
  const sent: { slot: number; task: FitTask }[][] = [];
  const queued: number[] = [];
  // (Dealt in order without affinity, about half of the 18 fold tasks would land away from their fold's first worker.)
  let slots = 0;
  const pool = new WorkerPool((): TaskEndpoint => {
    const slot = slots++;
    let deliver: (message: FromTaskWorker) => void = () => undefined;
    let waiting = 0;
    const host = createTaskHost((message) => setTimeout(() => deliver(message), 1), openTaskContext, runFitTask);
    return {
      post: (message: ToTaskWorker) => {
        if (message.type === "task") {
          (sent[message.session] ??= []).push({ slot, task: message.task });
          waiting++;
          queued.push(waiting);
        }
        setTimeout(() => host(cloned(message)), 0);
      },
      listen: (onMessage) => {
        deliver = (message) => {
          waiting--;
          onMessage(cloned(message));
        };
      },
      terminate: () => undefined,
    };
  }, 2);
  const d = data(120, 6, 4);
  const options: FitOptions = { mixes: [0, 0.5, 1], folds: 6, gridDensity: 10 };
  const pooled = await fitAsync(d.x, d.y, options, { pool });
  pool.dispose();
  expect(difference(pooled, fit(d.x, d.y, options))).toBeNull();
  const log = sent.flat();
  const folds = log.filter((entry) => entry.task.kind === "fold");
  expect(folds).toHaveLength(3 * 6);
  // Every (mix, fold) task sent once.
  expect(new Set(folds.map(({ task }) => (task.kind === "fold" ? `${task.mix}/${task.fold}` : ""))).size).toBe(18);
  // Affinity: a fold's tasks go to the worker that ran its first one, except when a worker has
  // none of its own (or unclaimed) left and takes another's rather than idle: only near the end.
  const owner = new Map<number, number>();
  let elsewhere = 0;
  folds.forEach(({ slot, task }) => {
    if (task.kind !== "fold") return;
    if (!owner.has(task.fold)) owner.set(task.fold, slot);
    else if (owner.get(task.fold) !== slot) elsewhere++;
  });
  expect(elsewhere).toBeLessThanOrEqual(4);
  expect(new Set(folds.map((entry) => entry.slot)).size).toBe(2);
  expect(Math.max(...queued)).toBeLessThanOrEqual(2);
  expect(taskAffinity({ kind: "fold", mix: 0, deal: 1, fold: 3, strengths: [], keepPath: false, keepSigns: false })).not.toBe(taskAffinity({ kind: "fold", mix: 2, deal: 0, fold: 3, strengths: [], keepPath: false, keepSigns: false }));
  expect(taskAffinity({ kind: "honest", outer: 0 })).toBeNull();
});

test("a task worker answers with its results copied, never transferred (a detach would slow every later task in that worker)", () => {
  const d = data(60, 4, 9);
  const posts: unknown[][] = [];
  const host = createTaskHost((...args: unknown[]) => void posts.push(args), openTaskContext, runFitTask);
  const pool = new WorkerPool((): TaskEndpoint => ({ post: (message) => host(cloned(message)), listen: () => undefined, terminate: () => undefined }), 1);
  const running = fitAsync(d.x, d.y, { mixes: [1], folds: 3, gridDensity: 5 }, { pool });
  return new Promise<void>((resolve) => setTimeout(resolve, 50)).then(() => {
    pool.dispose();
    void running.catch(() => undefined);
    expect(posts.length).toBeGreaterThan(0);
    // One argument: the message alone, with no list of buffers to hand over.
    for (const args of posts) expect(args).toHaveLength(1);
  });
});
