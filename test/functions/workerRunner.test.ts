/**
 * The Web Worker runner and the worker's message handler (functions/workerRunner.ts,
 * functions/fit.worker.ts).
 *
 * A fake Worker stands in for the browser's: it carries every message across with
 * structuredClone on a later macrotask (what postMessage does: the HTML standard's structured
 * clone algorithm, delivered asynchronously) and runs the real handler from fit.worker.ts.
 * Expected results are the engine's own in-process results for the same request.
 */
import { CancelledError, InputError } from "../../engine/errors";
import { fit, FitResult } from "../../engine/fit";
import { mulberry32 } from "../../engine/random";
import { createFitHandler, FitFunction, fitInSlices, FromWorker, ToWorker, toPlainError, fromPlainError, packResult, unpackResult } from "../../functions/fit.worker";
import { cancelSource, FitProgress, FitRequest } from "../../functions/runner";
import { InProcessRunner } from "../../functions/inProcessRunner";
import { WorkerLike, WorkerRunner } from "../../functions/workerRunner";

class FakeWorker implements WorkerLike {
  onmessage: ((event: { data: FromWorker }) => void) | null = null;
  onerror: ((event: unknown) => void) | null = null;
  terminated = false;
  received: ToWorker[] = [];
  private readonly handle: (message: ToWorker) => void;

  constructor(fitImpl?: FitFunction) {
    this.handle = createFitHandler((message) => {
      const copy = structuredClone(message);
      setImmediate(() => {
        if (!this.terminated) this.onmessage?.({ data: copy });
      });
    }, fitImpl);
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

function data(seed: number, rows: number, columns: number): { predictors: number[][]; target: number[] } {
  const uniform = mulberry32(seed);
  const predictors = Array.from({ length: rows }, () => Array.from({ length: columns }, () => uniform() - 0.5));
  const target = predictors.map((row) => 2 * row[0] - row[1] + 0.2 * (uniform() - 0.5));
  return { predictors, target };
}

function never(): Promise<FitResult> {
  return new Promise<FitResult>(() => undefined);
}

test("a worker fit returns the same result object as the in-process engine (determinism)", async () => {
  const workers: FakeWorker[] = [];
  const runner = new WorkerRunner(() => {
    const w = new FakeWorker();
    workers.push(w);
    return w;
  });
  const request: FitRequest = { ...data(3, 80, 4), options: { mixes: [0, 0.5, 1], folds: 5, seed: 9 } };
  const progress: FitProgress[] = [];
  const viaWorker = await runner.fit(request, undefined, (p) => progress.push(p));
  const direct = fit(request.predictors, request.target, request.options);
  expect(viaWorker).toStrictEqual(direct);
  // Progress crossed over: every unit (3 mixes × (5 folds + 1)) once, in order (engine contract).
  expect(progress.map((p) => p.done)).toEqual(Array.from({ length: 18 }, (_, k) => k + 1));
  expect(progress.every((p) => p.total === 18)).toBe(true);
  expect(workers.length).toBe(1);
  expect(workers[0].received.map((m) => m.type)).toEqual(["fit"]);
  // The in-process runner gives the same object too.
  await expect(new InProcessRunner().fit(request)).resolves.toStrictEqual(direct);
});

test("an InputError is rebuilt on the main side with its class, code and message", async () => {
  const runner = new WorkerRunner(() => new FakeWorker());
  const request: FitRequest = { predictors: [[1], [2], [3]], target: [1, 2], options: {} };
  let expected: unknown;
  try {
    fit(request.predictors, request.target, request.options);
  } catch (e) {
    expected = e;
  }
  expect(expected).toBeInstanceOf(InputError);
  const error = await runner.fit(request).catch((e: unknown) => e);
  expect(error).toBeInstanceOf(InputError);
  expect((error as InputError).code).toBe((expected as InputError).code);
  expect((error as InputError).message).toBe((expected as InputError).message);
});

test("plain errors round-trip through structured cloning", () => {
  const cases: unknown[] = [new InputError("folds", "folds must be 2 or more"), new CancelledError(), new RangeError("boom"), "text"];
  const rebuilt = cases.map((e) => fromPlainError(structuredClone(toPlainError(e))));
  expect(rebuilt[0]).toBeInstanceOf(InputError);
  expect((rebuilt[0] as InputError).code).toBe("folds");
  expect(rebuilt[1]).toBeInstanceOf(CancelledError);
  expect(rebuilt[2].name).toBe("RangeError");
  expect(rebuilt[2].message).toBe("boom");
  expect(rebuilt[3].message).toBe("text");
});

test("cancel: the caller rejects at once, the worker's engine stops at its next checkpoint", async () => {
  const posted: FromWorker[] = [];
  let worker: FakeWorker | null = null;
  const runner = new WorkerRunner(() => {
    worker = new FakeWorker();
    return worker;
  });
  // Watch what the worker sends back.
  const request: FitRequest = { ...data(5, 400, 30), options: { mixes: [0, 0.5, 1], folds: 10 } };
  const source = cancelSource();
  let units = 0;
  const pending = runner.fit(request, source.token, () => {
    units++;
    if (units === 2) source.cancel();
  });
  const w = worker as unknown as FakeWorker;
  const original = w.onmessage;
  w.onmessage = (event) => {
    posted.push(event.data);
    original?.(event);
  };
  await expect(pending).rejects.toBeInstanceOf(CancelledError);
  // Wait for the worker to answer the cancel.
  for (let i = 0; i < 200 && !posted.some((m) => m.type !== "progress"); i++) await new Promise((r) => setTimeout(r, 5));
  const last = posted[posted.length - 1];
  expect(last.type).toBe("error");
  expect(last.type === "error" && last.error.kind).toBe("cancelled");
  expect(w.received.map((m) => m.type)).toEqual(["fit", "cancel"]);
  // Stopped early: far fewer units than the 3 × 11 of a full fit.
  expect(posted.filter((m) => m.type === "progress").length).toBeLessThan(33);
  expect(runner.stats().replaced).toBe(0);
});

test("backstop: a cancelled fit that does not stop is ended by replacing the worker", async () => {
  const created: FakeWorker[] = [];
  // The first worker's engine ignores the cancel signal for this request (it never answers).
  const stubborn: FitFunction = (predictors, target, options) =>
    (predictors as number[][]).length === 7 && created.length === 1 ? never() : Promise.resolve(fit(predictors, target, options));
  const runner = new WorkerRunner(
    () => {
      const w = new FakeWorker(stubborn);
      created.push(w);
      return w;
    },
    { cancelGraceMs: 50 },
  );
  const source = cancelSource();
  const stuck: FitRequest = { ...data(1, 7, 2), options: {} };
  const pending = runner.fit(stuck, source.token);
  await new Promise((r) => setImmediate(r));
  source.cancel();
  await expect(pending).rejects.toBeInstanceOf(CancelledError);
  expect(created[0].terminated).toBe(false); // still within the grace period
  await new Promise((r) => setTimeout(r, 120));
  expect(created[0].terminated).toBe(true);
  expect(runner.stats().replaced).toBe(1);
  // The next fit gets a fresh worker and the engine's answer.
  const next: FitRequest = { ...data(2, 30, 3), options: { folds: 3 } };
  await expect(runner.fit(next)).resolves.toStrictEqual(fit(next.predictors, next.target, next.options));
  expect(created.length).toBe(2);
});

test("a cancelled fit that stops in time does not replace the worker", async () => {
  const created: FakeWorker[] = [];
  const runner = new WorkerRunner(
    () => {
      const w = new FakeWorker();
      created.push(w);
      return w;
    },
    { cancelGraceMs: 50 },
  );
  const source = cancelSource();
  const request: FitRequest = { ...data(5, 300, 20), options: { mixes: [0.5, 1], folds: 10 } };
  const pending = runner.fit(request, source.token, () => source.cancel());
  await expect(pending).rejects.toBeInstanceOf(CancelledError);
  await new Promise((r) => setTimeout(r, 120));
  expect(created.length).toBe(1);
  expect(created[0].terminated).toBe(false);
  expect(runner.stats().replaced).toBe(0);
});

test("a fit in flight when the worker is replaced is re-posted and answered", async () => {
  const created: FakeWorker[] = [];
  let release: (() => void) | null = null;
  const impl: FitFunction = (predictors, target, options) => {
    if ((predictors as number[][]).length === 7 && created.length === 1) return never(); // stuck, ignores cancel
    if ((predictors as number[][]).length === 9 && created.length === 1) {
      // Slow in the first worker: still running when that worker is replaced.
      return new Promise<FitResult>((resolve) => {
        release = () => resolve(fit(predictors, target, options));
      });
    }
    return Promise.resolve(fit(predictors, target, options));
  };
  const runner = new WorkerRunner(
    () => {
      const w = new FakeWorker(impl);
      created.push(w);
      return w;
    },
    { cancelGraceMs: 30 },
  );
  const stuck = cancelSource();
  const requestStuck: FitRequest = { ...data(1, 7, 2), options: {} };
  const requestSlow: FitRequest = { ...data(4, 9, 2), options: { folds: 3 } };
  const pendingStuck = runner.fit(requestStuck, stuck.token);
  const pendingSlow = runner.fit(requestSlow);
  await new Promise((r) => setImmediate(r));
  stuck.cancel();
  await expect(pendingStuck).rejects.toBeInstanceOf(CancelledError);
  const result = await pendingSlow;
  expect(result).toStrictEqual(fit(requestSlow.predictors, requestSlow.target, requestSlow.options));
  expect(created.length).toBe(2);
  expect(created[0].terminated).toBe(true);
  expect(created[1].received.map((m) => m.type)).toEqual(["fit"]);
  expect(runner.stats()).toMatchObject({ started: 2, replaced: 1, posted: 3 });
  expect(release).not.toBeNull(); // the first worker did start the slow fit before it was replaced
});

test("a worker that fails before answering hands its fits to the fallback", async () => {
  const runner = new WorkerRunner(() => {
    const w: WorkerLike = {
      onmessage: null,
      onerror: null,
      postMessage() {
        setImmediate(() => w.onerror?.({ message: "could not load fit.worker.js" }));
      },
      terminate() {},
    };
    return w;
  });
  const request: FitRequest = { ...data(6, 40, 3), options: { folds: 4 } };
  await expect(runner.fit(request)).resolves.toStrictEqual(fit(request.predictors, request.target, request.options));
  expect(runner.stats().usingFallback).toBe(true);
});

test("a worker that cannot even be created hands its fits to the fallback", async () => {
  const runner = new WorkerRunner(() => {
    throw new Error("SecurityError: workers are not allowed here");
  });
  const request: FitRequest = { ...data(7, 40, 3), options: { folds: 4 } };
  await expect(runner.fit(request)).resolves.toStrictEqual(fit(request.predictors, request.target, request.options));
  await expect(runner.fit(request)).resolves.toStrictEqual(fit(request.predictors, request.target, request.options));
  expect(runner.stats()).toMatchObject({ usingFallback: true, started: 0 });
});

describe("the worker bootstrap", () => {
  const scope = globalThis as unknown as Record<string, unknown>;
  afterEach(() => {
    delete scope.WorkerGlobalScope;
    delete scope.postMessage;
    delete scope.onmessage;
  });

  test("inside a worker scope it answers fit messages through postMessage", async () => {
    // Pretend to be a dedicated worker: WorkerGlobalScope exists and globalThis is one.
    scope.WorkerGlobalScope = class {
      static [Symbol.hasInstance](): boolean {
        return true;
      }
    };
    const out: FromWorker[] = [];
    scope.postMessage = (message: FromWorker) => out.push(message);
    jest.isolateModules(() => {
      // eslint-disable-next-line @typescript-eslint/no-require-imports
      require("../../functions/fit.worker");
    });
    const onmessage = scope.onmessage as (event: { data: ToWorker }) => void;
    expect(typeof onmessage).toBe("function");
    const request: FitRequest = { ...data(8, 30, 2), options: { folds: 3, mixes: [1] } };
    onmessage({ data: { type: "fit", id: 42, request } });
    for (let i = 0; i < 200 && !out.some((m) => m.type === "result"); i++) await new Promise((r) => setTimeout(r, 2));
    const result = out.find((m) => m.type === "result");
    expect(result && result.id).toBe(42);
    const expected = fit(request.predictors, request.target, request.options);
    // The held-out lists travel packed (typed arrays, copied) and unpack to the same result.
    if (!result || result.type !== "result") throw new Error("no result");
    expect(result.result.heldOut).toMatchObject({ packed: true });
    expect(unpackResult(result.result)).toStrictEqual(expected);
  });

  test("packResult / unpackResult: the held-out lists round-trip bit for bit, the result itself untouched", () => {
    const { predictors, target } = data(6, 40, 5);
    const result = fit(predictors, target, { folds: 4, mixes: [0.5] });
    const held = result.heldOut;
    if (!held) throw new Error("fit kept no held-out rows");
    // A −0 residual and a large row index survive the trip too.
    held.residual[0] = -0;
    held.row[1] = 2 ** 31 - 1;
    const before = structuredClone(result);
    const wire = packResult(result);
    expect(result).toStrictEqual(before);
    expect(wire.heldOut).toMatchObject({ packed: true });
    const back = unpackResult(structuredClone(wire));
    expect(Object.is(back.heldOut?.residual[0], -0)).toBe(true);
    expect(back).toStrictEqual(before);
    // Results without held-out lists (two-class fits, fits from sums, fakes) pass through as they are.
    const none = { ...result, heldOut: null };
    expect(packResult(none)).toBe(none);
    expect(unpackResult(none)).toBe(none);
  });

  test("outside a worker it does nothing", () => {
    jest.isolateModules(() => {
      // eslint-disable-next-line @typescript-eslint/no-require-imports
      require("../../functions/fit.worker");
    });
    expect(scope.onmessage).toBeUndefined();
  });
});

test("the worker's fit in slices equals the engine's fit bit for bit, and a cancel stops it between units", async () => {
  const request: FitRequest = { ...data(8, 300, 12), options: { mixes: [0, 0.5, 1], folds: 5, seed: 4 } };
  const direct = fit(request.predictors, request.target, request.options);
  for (const slice of [0, 10, 1e9]) {
    await expect(fitInSlices(slice)(request.predictors, request.target, { ...request.options })).resolves.toStrictEqual(direct);
  }
  // Yielding after every unit (slice 0), a cancel raised in the second unit's progress stops the fit.
  const signal = { aborted: false };
  let units = 0;
  const run = fitInSlices(0)(request.predictors, request.target, {
    ...request.options,
    signal,
    onProgress: () => {
      units++;
      if (units === 2) setImmediate(() => (signal.aborted = true));
    },
  });
  await expect(run).rejects.toBeInstanceOf(CancelledError);
  expect(units).toBeLessThan(18);
});

test("a warm-up started before the first fit changes nothing: the fit stops it and answers the same result", async () => {
  const workers: FakeWorker[] = [];
  const runner = new WorkerRunner(() => {
    const w = new FakeWorker();
    workers.push(w);
    return w;
  });
  runner.warmUp();
  runner.warmUp(); // the worker exists: nothing more
  const request: FitRequest = { ...data(3, 80, 4), options: { mixes: [0, 0.5, 1], folds: 5, seed: 9 } };
  const viaWorker = await runner.fit(request);
  expect(viaWorker).toStrictEqual(fit(request.predictors, request.target, request.options));
  expect(workers.length).toBe(1);
  expect(workers[0].received.map((m) => m.type)).toEqual(["warm", "fit"]);
  // A warm-up asked for after a fit is ignored by the worker (and not even posted by the runner).
  runner.warmUp();
  expect(workers[0].received.length).toBe(2);
});
