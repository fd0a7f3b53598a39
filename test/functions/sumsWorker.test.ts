/**
 * Fits from a sums table through the fit worker (functions/fit.worker.ts "fitSums",
 * functions/workerRunner.ts fitSums) and through the pane's route (taskpane/sources/routes.ts
 * fitThrough), against the engine's own fitFromSums on the same table.
 *
 * Sources of the expected values: two routes agreeing (common practice): the worker route must
 * give the direct call's result bit for bit (the same deterministic engine on a structured clone
 * of the same plain table, the HTML standard's structured clone keeping every double), and a bad
 * table the direct call's InputError, code and message unchanged.
 *
 * As in workerRunner.test.ts, a fake Worker carries every message across with structuredClone on
 * a later macrotask and runs the real handler.
 */
import { CancelledError, InputError } from "../../engine/errors";
import type { FitResult } from "../../engine/fit";
import { fitFromSums } from "../../engine/fitSums";
import { mulberry32 } from "../../engine/random";
import { sumsOfRows } from "../../engine/sums";
import type { SumsTable } from "../../engine/sumsTable";
import { FitCache } from "../../functions/cache";
import { createFitHandler, FromWorker, ToWorker } from "../../functions/fit.worker";
import { InProcessRunner } from "../../functions/inProcessRunner";
import { cancelSource, FitProgress, FitRunner } from "../../functions/runner";
import { WorkerLike, WorkerRunner } from "../../functions/workerRunner";
import { fitThrough, fitWithSettings, routesFor, sumsRoutes } from "../../taskpane/sources/routes";
import type { SumsFitSettings } from "../../taskpane/sources/sumsInputs";

class FakeWorker implements WorkerLike {
  onmessage: ((event: { data: FromWorker }) => void) | null = null;
  onerror: ((event: unknown) => void) | null = null;
  terminated = false;
  received: ToWorker[] = [];
  /** Every answer the worker posted, with the time it posted it (ms, performance.now). */
  answers: { message: FromWorker; at: number }[] = [];
  private readonly handle: (message: ToWorker) => void;

  constructor() {
    this.handle = createFitHandler((message) => {
      const copy = structuredClone(message);
      this.answers.push({ message: copy, at: performance.now() });
      setImmediate(() => {
        if (!this.terminated) this.onmessage?.({ data: copy });
      });
    });
  }

  postMessage(message: ToWorker): void {
    const copy = structuredClone(message);
    this.received.push(copy);
    setImmediate(() => {
      if (!this.terminated) this.handle(copy);
    });
  }

  terminate(): void {
    this.terminated = true;
  }
}

/** An invented roastery table: `terms` settings of the roaster, the cup score, `blocks` batches. */
function table(seed: number, rows: number, terms: number, blocks: number): SumsTable {
  const uniform = mulberry32(seed);
  const x = Array.from({ length: rows }, () => Array.from({ length: terms }, () => uniform() - 0.5));
  const y = x.map((row) => 3 * row[0] - 2 * row[1] + row[2] + 0.4 * (uniform() - 0.5));
  const w = x.map(() => 0.5 + uniform());
  const labels = x.map((_, i) => `batch${i % blocks}`);
  const names = Array.from({ length: terms }, (_, j) => `setting_${j + 1}`);
  return sumsOfRows(x, y, w, labels, names, "cup_score");
}

function workerRunner(): { runner: WorkerRunner; workers: FakeWorker[] } {
  const workers: FakeWorker[] = [];
  const runner = new WorkerRunner(() => {
    const w = new FakeWorker();
    workers.push(w);
    return w;
  });
  return { runner, workers };
}

const settings: SumsFitSettings = { mixes: [0, 0.5, 1], rule: "one-se", standardize: true, intercept: true };
const quiet = { aborted: false, onAbort: () => undefined };

test("the worker route gives the direct call's result bit for bit, with every unit's progress", async () => {
  const sums = table(11, 600, 8, 6);
  const options = { mixes: [0, 0.5, 1], rule: "one-se" as const };
  const direct = fitFromSums(sums, options);
  const { runner, workers } = workerRunner();
  const progress: FitProgress[] = [];
  const viaWorker = await runner.fitSums({ sums, options }, undefined, (p) => progress.push(p));
  expect(viaWorker).toStrictEqual(direct);
  // Bit for bit: the JSON text (every double written in full) is the same.
  expect(JSON.stringify(viaWorker)).toBe(JSON.stringify(direct));
  expect(workers.length).toBe(1);
  expect(workers[0].received.map((m) => m.type)).toEqual(["fitSums"]);
  // Every unit once, in order: 3 mixes × (6 folds + 1).
  expect(progress.map((p) => p.done)).toEqual(Array.from({ length: 21 }, (_, k) => k + 1));
  expect(progress.every((p) => p.total === 21)).toBe(true);
  // The in-process runner and the cache in front of the worker give the same object.
  await expect(new InProcessRunner().fitSums({ sums, options })).resolves.toStrictEqual(direct);
  const cache = new FitCache(runner);
  await expect((cache.fitSums as NonNullable<FitRunner["fitSums"]>)({ sums, options })).resolves.toStrictEqual(direct);
});

test("the pane's route through the worker equals the pane's in-thread route", async () => {
  const sums = table(12, 400, 6, 5);
  const inThread = await fitWithSettings(sums, settings, () => undefined, quiet);
  const { runner, workers } = workerRunner();
  const routes = routesFor(new FitCache(runner));
  const progress: number[] = [];
  const viaWorker = await routes.fitFromSums(sums, settings, (done) => progress.push(done), quiet);
  expect(JSON.stringify(viaWorker)).toBe(JSON.stringify(inThread));
  expect(workers[0].received.map((m) => m.type)).toEqual(["fitSums"]);
  expect(progress.length).toBe(3 * (5 + 1));
  // Without a runner, or a runner without fitSums, the fit runs in this thread.
  expect(routesFor(undefined).fitFromSums).toBe(fitWithSettings);
  expect(fitThrough({ fit: () => Promise.reject(new Error("unused")) })).toBe(fitWithSettings);
  expect(sumsRoutes.fitFromSums).toBe(fitWithSettings);
});

test("a bad sums table becomes the direct call's one-line InputError", async () => {
  const good = table(13, 200, 4, 4);
  const bad: unknown[] = [
    { ...good, version: 7 },
    { ...good, blocks: good.blocks.slice(0, 1) },
    { ...good, blocks: good.blocks.map((b, i) => (i === 2 ? { ...b, yy: -1 } : b)) },
  ];
  const { runner } = workerRunner();
  for (const sums of bad) {
    let expected: unknown;
    try {
      fitFromSums(sums, {});
    } catch (error) {
      expected = error;
    }
    expect(expected).toBeInstanceOf(InputError);
    const error = await runner.fitSums({ sums, options: {} }).catch((e: unknown) => e);
    expect(error).toBeInstanceOf(InputError);
    expect((error as InputError).code).toBe((expected as InputError).code);
    expect((error as InputError).message).toBe((expected as InputError).message);
    expect((error as InputError).message).not.toMatch(/\n/);
    // And through the pane's route.
    const viaPane = await routesFor(runner).fitFromSums(sums as SumsTable, settings, () => undefined, quiet).catch((e: unknown) => e);
    expect((viaPane as InputError).message).toBe((expected as InputError).message);
  }
  // An option a sums table can't take: the same message too.
  const refused = await runner.fitSums({ sums: good, options: { measure: "mae" } }).catch((e: unknown) => e);
  expect(refused).toBeInstanceOf(InputError);
  expect(() => fitFromSums(good, { measure: "mae" })).toThrow((refused as InputError).message);
});

test("cancel: the caller rejects at once and the worker acknowledges within 0.25 s", async () => {
  // 60 terms × 10 blocks × 6 mixes: long enough to be running when the cancel comes.
  const sums = table(14, 1500, 60, 10);
  const options = { mixes: [0, 0.2, 0.4, 0.6, 0.8, 1] };
  const { runner, workers } = workerRunner();
  const source = cancelSource();
  let cancelledAt = 0;
  let units = 0;
  const pending = runner.fitSums({ sums, options }, source.token, () => {
    units++;
    if (units === 2) {
      cancelledAt = performance.now();
      source.cancel();
    }
  });
  await expect(pending).rejects.toBeInstanceOf(CancelledError);
  const w = workers[0];
  for (let i = 0; i < 400 && !w.answers.some((a) => a.message.type !== "progress"); i++) await new Promise((r) => setTimeout(r, 5));
  const last = w.answers[w.answers.length - 1];
  expect(last.message.type).toBe("error");
  expect(last.message.type === "error" && last.message.error.kind).toBe("cancelled");
  expect(w.received.map((m) => m.type)).toEqual(["fitSums", "cancel"]);
  // Stopped early: far fewer units than the 6 × 11 of the whole fit.
  expect(w.answers.filter((a) => a.message.type === "progress").length).toBeLessThan(66);
  // The requirement: the worker answers the cancel within 0.25 s (a unit of work here takes a
  // few ms; the engine reads the signal at every strength, engine/errors.ts throwIfCancelled).
  expect((last.at - cancelledAt) / 1000).toBeLessThanOrEqual(0.25);
  expect(runner.stats().replaced).toBe(0);
  // The worker is still good for the next fit.
  const small = table(15, 200, 4, 4);
  await expect(runner.fitSums({ sums: small, options: {} })).resolves.toStrictEqual(fitFromSums(small, {}));
  expect(workers.length).toBe(1);
});

test("a worker that fails before answering hands a fit from sums to the fallback", async () => {
  const sums = table(16, 300, 5, 5);
  const failing = new WorkerRunner(() => {
    const w = new FakeWorker();
    w.postMessage = () => setImmediate(() => w.onerror?.({ message: "script failed to load" }));
    return w;
  });
  const result: FitResult = await failing.fitSums({ sums, options: {} });
  expect(result).toStrictEqual(fitFromSums(sums, {}));
  expect(failing.stats().usingFallback).toBe(true);
  // From then on straight to the fallback.
  await expect(failing.fitSums({ sums, options: { mixes: [1] } })).resolves.toStrictEqual(fitFromSums(sums, { mixes: [1] }));
});
