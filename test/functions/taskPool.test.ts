/**
 * The add-in's parallel folds (functions/taskPool.ts, functions/task.worker.ts): the fit worker's
 * fit function runs a fit on the task-worker pool with the sequential result bit for bit, falls
 * back to the sequential fit where task workers can't start, and runs a second fit sequentially
 * while the pool is busy. Task workers are faked in this thread (the real handler, messages
 * copied and delivered asynchronously), as test/functions/workerRunner.test.ts fakes the fit worker.
 */
import { fit, FitOptions, openTaskContext, runFitTask } from "../../engine/fit";
import { createTaskHost, FromTaskWorker, ToTaskWorker, WorkerPool } from "../../engine/parallel";
import { mulberry32 } from "../../engine/random";
import { fitFromSums } from "../../engine/fitSums";
import { sumsOfRows } from "../../engine/sums";
import { pooledFit, poolSize, taskEndpoint, TaskWorkerLike } from "../../functions/taskPool";

function data(rows: number, columns: number, seed: number): { x: number[][]; y: number[] } {
  const uniform = mulberry32(seed);
  const x: number[][] = [];
  const y: number[] = [];
  for (let i = 0; i < rows; i++) {
    const row = Array.from({ length: columns }, () => uniform() * 10);
    x.push(row);
    y.push(3 * row[0] - row[1] + uniform());
  }
  return { x, y };
}

/** A message as the other side receives it (by hand: the test realm's typed arrays must stay its own). */
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

/** A fake Web Worker running the real task handler, answering after a random delay; or one failing to load. */
function fakeTaskWorker(uniform: () => number, failToLoad = false): TaskWorkerLike & { terminated: boolean } {
  const worker: TaskWorkerLike & { terminated: boolean } = {
    onmessage: null,
    onerror: null,
    terminated: false,
    postMessage: (message) => {
      if (failToLoad) {
        setTimeout(() => worker.onerror?.({ message: "could not load task.worker.js" }), 0);
        return;
      }
      setTimeout(() => !worker.terminated && host(cloned(message as ToTaskWorker)), 0);
    },
    terminate: () => {
      worker.terminated = true;
    },
  };
  const host = createTaskHost(
    (message: FromTaskWorker) => setTimeout(() => !worker.terminated && worker.onmessage?.({ data: cloned(message) }), Math.floor(uniform() * 3)),
    openTaskContext,
    runFitTask,
  );
  return worker;
}

const options: FitOptions = { mixes: [0, 0.5, 1], folds: 4, gridDensity: 8, repeats: 2 };

test("pool size: the cores less one left to Excel, at least 1", () => {
  expect(poolSize(8)).toBe(7);
  expect(poolSize(2)).toBe(1);
  expect(poolSize(1)).toBe(1);
  expect(poolSize(undefined)).toBe(1);
});

test("a fit on the task workers is the sequential fit bit for bit (toStrictEqual)", async () => {
  const uniform = mulberry32(4);
  const workers: ReturnType<typeof fakeTaskWorker>[] = [];
  const pool = new WorkerPool(() => {
    const worker = fakeTaskWorker(uniform);
    workers.push(worker);
    return taskEndpoint(worker);
  }, 3);
  const run = pooledFit(pool);
  const { x, y } = data(90, 5, 1);
  await expect(run(x, y, options)).resolves.toStrictEqual(fit(x, y, options));
  expect(workers.length).toBe(3);
  expect(run.poolBroken()).toBe(false);
  pool.dispose();
  expect(workers.every((w) => w.terminated)).toBe(true);
});

test("task workers that fail to load: the fit runs sequentially, and so do later ones", async () => {
  const uniform = mulberry32(5);
  let made = 0;
  const pool = new WorkerPool(() => {
    made++;
    return taskEndpoint(fakeTaskWorker(uniform, true));
  }, 2);
  const run = pooledFit(pool);
  const { x, y } = data(60, 4, 2);
  await expect(run(x, y, options)).resolves.toStrictEqual(fit(x, y, options));
  expect(run.poolBroken()).toBe(true);
  await expect(run(x, y, { ...options, seed: 3 })).resolves.toStrictEqual(fit(x, y, { ...options, seed: 3 }));
  expect(made).toBe(2);
});

test("a second fit while the pool is busy runs sequentially; both give the sequential result", async () => {
  const uniform = mulberry32(6);
  const pool = new WorkerPool(() => taskEndpoint(fakeTaskWorker(uniform)), 2);
  const run = pooledFit(pool);
  const a = data(80, 4, 3);
  const b = data(70, 6, 4);
  const [first, second] = await Promise.all([run(a.x, a.y, options), run(b.x, b.y, options)]);
  pool.dispose();
  expect(first).toStrictEqual(fit(a.x, a.y, options));
  expect(second).toStrictEqual(fit(b.x, b.y, options));
});

test("a fit from sums on the task workers is fitFromSums bit for bit; the pool is shared with ordinary fits", async () => {
  const uniform = mulberry32(8);
  const workers: ReturnType<typeof fakeTaskWorker>[] = [];
  const pool = new WorkerPool(() => {
    const worker = fakeTaskWorker(uniform);
    workers.push(worker);
    return taskEndpoint(worker);
  }, 2);
  const run = pooledFit(pool);
  const { x, y } = data(120, 5, 9);
  const table = sumsOfRows(x, y, null, y.map((_, i) => `lot ${i % 4}`), ["a", "b", "c", "d", "e"], "y");
  const sumsOptions = { mixes: [0, 0.5, 1], gridDensity: 8 };
  await expect(run.sums(table, sumsOptions)).resolves.toStrictEqual(fitFromSums(table, sumsOptions));
  expect(workers.length).toBe(2);
  // While the pool runs an ordinary fit, a fit from sums runs in this thread: the same result.
  const [ordinary, fromSums] = await Promise.all([run(x, y, options), run.sums(table, sumsOptions)]);
  expect(ordinary).toStrictEqual(fit(x, y, options));
  expect(fromSums).toStrictEqual(fitFromSums(table, sumsOptions));
  pool.dispose();
  await expect(pooledFit(null).sums(table, sumsOptions)).resolves.toStrictEqual(fitFromSums(table, sumsOptions));
});

test("without a pool the fit function is the sequential fit", async () => {
  const { x, y } = data(50, 3, 7);
  await expect(pooledFit(null)(x, y, { folds: 3 })).resolves.toStrictEqual(fit(x, y, { folds: 3 }));
});

describe("the task worker bootstrap", () => {
  const scope = globalThis as unknown as Record<string, unknown>;
  afterEach(() => {
    delete scope.WorkerGlobalScope;
    delete scope.postMessage;
    delete scope.onmessage;
  });

  test("inside a worker scope it answers a fit's tasks through postMessage", () => {
    scope.WorkerGlobalScope = class {
      static [Symbol.hasInstance](): boolean {
        return true;
      }
    };
    const out: FromTaskWorker[] = [];
    scope.postMessage = (message: FromTaskWorker) => out.push(message);
    jest.isolateModules(() => {
      // eslint-disable-next-line @typescript-eslint/no-require-imports
      require("../../functions/task.worker");
    });
    const onmessage = scope.onmessage as (event: { data: ToTaskWorker }) => void;
    const { x, y } = data(40, 3, 8);
    const predictors = { rows: 40, columns: 3, data: Float64Array.from({ length: 120 }, (_, k) => x[k % 40][Math.floor(k / 40)]) };
    onmessage({ data: { type: "open", session: 1, input: { predictors, target: Float64Array.from(y), options: { mixes: [1], folds: 3 } } } });
    onmessage({ data: { type: "task", session: 1, id: 0, task: { kind: "path", mix: 0 } } });
    expect(out).toHaveLength(1);
    expect(out[0]).toMatchObject({ type: "result", session: 1, id: 0, result: { kind: "path" } });
  });

  test("outside a worker it does nothing", () => {
    jest.isolateModules(() => {
      // eslint-disable-next-line @typescript-eslint/no-require-imports
      require("../../functions/task.worker");
    });
    expect(scope.onmessage).toBeUndefined();
  });
});
