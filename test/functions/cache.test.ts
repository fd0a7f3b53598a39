/**
 * The shared fit cache (functions/cache.ts): one run per distinct request, shared in-flight
 * runs, LRU bounds, reference-counted cancellation, brief caching of InputErrors.
 *
 * Expected values come from the cache's own documented contract (functions/cache.ts header)
 * and common practice for memoizing caches; engine results are compared with a direct
 * in-process run of the same request.
 */
import { CancelledError, InputError } from "../../engine/errors";
import { fitAsync, FitResult } from "../../engine/fit";
import { approximateBytes, canonicalText, FitCache, requestHash } from "../../functions/cache";
import { AnyFitRequest, cancelSource, CancelToken, FitProgress, FitRequest, FitRunner } from "../../functions/runner";
import { InProcessRunner } from "../../functions/inProcessRunner";
import { mulberry32 } from "../../engine/random";
import * as cells from "../../functions/functions";

/** A runner whose fits finish only when the test says so. */
class ManualRunner implements FitRunner {
  calls: {
    request: AnyFitRequest;
    cancel?: CancelToken;
    progress?: (progress: FitProgress) => void;
    resolve: (result: FitResult) => void;
    reject: (error: unknown) => void;
    cancelled: boolean;
  }[] = [];

  fit(request: AnyFitRequest, cancel?: CancelToken, progress?: (progress: FitProgress) => void): Promise<FitResult> {
    return new Promise<FitResult>((resolve, reject) => {
      const call = { request, cancel, progress, resolve, reject, cancelled: false };
      cancel?.onCancel(() => {
        call.cancelled = true;
        reject(new CancelledError());
      });
      this.calls.push(call);
    });
  }
}

/** A stand-in result: the cache treats results as opaque data. */
function fakeResult(tag: number, extraNumbers = 0): FitResult {
  return { kind: "shrinkwise-fit", tag, padding: new Array<number>(extraNumbers).fill(tag) } as unknown as FitResult;
}

function request(seed: number, rows = 6, columns = 2, options: FitRequest["options"] = {}): FitRequest {
  const uniform = mulberry32(seed);
  const predictors = Array.from({ length: rows }, () => Array.from({ length: columns }, () => uniform()));
  const target = predictors.map((row) => row[0] - row[1] + 0.1 * uniform());
  return { predictors, target, options };
}

const tick = () => new Promise<void>((resolve) => setImmediate(resolve));

describe("keys", () => {
  test("option key order does not matter; content does (common practice for content-addressed caches)", () => {
    const a = canonicalText({ folds: 5, seed: 2, mixes: [0, 1] });
    const b = canonicalText({ mixes: [0, 1], seed: 2, folds: 5 });
    expect(a).toBe(b);
    expect(canonicalText({ folds: 5, seed: undefined })).toBe(canonicalText({ folds: 5 }));
    expect(canonicalText({ folds: 5 })).not.toBe(canonicalText({ folds: 6 }));
    // Numbers are exact: 0.1 + 0.2 is not 0.3, -0 is not 0, infinities survive (JSON would write null).
    expect(canonicalText([0.1 + 0.2])).not.toBe(canonicalText([0.3]));
    expect(canonicalText([-0])).not.toBe(canonicalText([0]));
    expect(canonicalText({ lowerBounds: [-Infinity] })).not.toBe(canonicalText({ lowerBounds: [null] }));
    // A typed array and a list with the same numbers describe the same fit.
    expect(canonicalText({ weights: new Float64Array([1, 2]) })).toBe(canonicalText({ weights: [1, 2] }));
    // Text labels differ from numeric ones.
    expect(canonicalText({ foldLabels: ["1"] })).not.toBe(canonicalText({ foldLabels: [1] }));
  });

  test("the data are hashed by their bits: one changed bit gives a new run", async () => {
    const inner = new ManualRunner();
    const cache = new FitCache(inner);
    const a = request(1);
    const b = request(1);
    const x = b.predictors[3][1];
    // Next double up from x (one bit in the last place).
    const bits = new Float64Array([x]);
    new BigInt64Array(bits.buffer)[0] += BigInt(1);
    b.predictors[3][1] = bits[0];
    expect(b.predictors[3][1]).not.toBe(x);
    void cache.fit(a);
    void cache.fit(b);
    expect(inner.calls.length).toBe(2);
    expect(cache.stats().runs).toBe(2);
  });

  test("a 32-bit hash collision is caught by comparing the stored request (found by search)", async () => {
    // Birthday bound (common practice): among ~2^16 random inputs a 32-bit collision is likely;
    // search deterministically (seeded) over one-cell requests until two share a hash.
    const uniform = mulberry32(2024);
    const seen = new Map<number, number>();
    let pair: [number, number] | null = null;
    for (let i = 0; i < 1_000_000 && !pair; i++) {
      const x = 1000 * uniform();
      const h = requestHash({ predictors: [[x]], target: [1], options: {} });
      const earlier = seen.get(h);
      if (earlier !== undefined && earlier !== x) pair = [earlier, x];
      else seen.set(h, x);
    }
    expect(pair).not.toBeNull();
    const [u, v] = pair as [number, number];
    const first: FitRequest = { predictors: [[u]], target: [1], options: {} };
    const second: FitRequest = { predictors: [[v]], target: [1], options: {} };
    expect(requestHash(first)).toBe(requestHash(second));

    const inner = new ManualRunner();
    const cache = new FitCache(inner);
    const p1 = cache.fit(first);
    inner.calls[0].resolve(fakeResult(u));
    await expect(p1).resolves.toMatchObject({ tag: u });
    const p2 = cache.fit(second);
    expect(inner.calls.length).toBe(2); // not served the first request's answer
    inner.calls[1].resolve(fakeResult(v));
    await expect(p2).resolves.toMatchObject({ tag: v });
    // Both now cached side by side in one bucket.
    await expect(cache.fit(first)).resolves.toMatchObject({ tag: u });
    await expect(cache.fit(second)).resolves.toMatchObject({ tag: v });
    expect(cache.stats()).toMatchObject({ runs: 2, hits: 2, entries: 2 });
  });
});

describe("sharing", () => {
  test("five cell functions' requests over the same inputs run the engine once", async () => {
    // COEFS, CHOICE, PREDICT, PATH and CVCURVE all ask for the fit of the same ranges and
    // settings; the requests are built separately, with options in different key orders.
    const base = request(7, 40, 3);
    const options = [
      { mixes: [0.5, 1], folds: 5, seed: 3 },
      { seed: 3, folds: 5, mixes: [0.5, 1] },
      { folds: 5, mixes: [0.5, 1], seed: 3 },
      { mixes: [0.5, 1], seed: 3, folds: 5, names: undefined },
      { seed: 3, mixes: [0.5, 1], folds: 5 },
    ];
    let engineRuns = 0;
    const engine = new InProcessRunner();
    const counting: FitRunner = {
      fit(req, cancel, progress) {
        engineRuns++;
        return engine.fit(req, cancel, progress);
      },
    };
    const cache = new FitCache(counting);
    const first = await cache.fit({ predictors: base.predictors.map((r) => r.slice()), target: base.target.slice(), options: options[0] });
    const rest = await Promise.all(
      options.slice(1).map((o) => cache.fit({ predictors: base.predictors.map((r) => r.slice()), target: base.target.slice(), options: o })),
    );
    expect(engineRuns).toBe(1);
    for (const r of rest) expect(r).toBe(first);
    expect(cache.stats()).toMatchObject({ runs: 1, misses: 1, hits: 4 });
    // The cached answer is the engine's answer (compared with a direct in-process run).
    const direct = await new InProcessRunner().fit({ ...base, options: options[0] });
    expect(first).toStrictEqual(direct);
  });

  test("the cell functions COEFS, CHOICE, PREDICT, PATH and CVCURVE on the same ranges fit once", async () => {
    // Through functions.ts (what Excel calls), with the shared cache in front of the in-process engine.
    const uniform = mulberry32(21);
    const predictors: unknown[][] = [["size", "age", "depth"]];
    const target: unknown[][] = [["yield"]];
    for (let i = 0; i < 40; i++) {
      const row = [uniform() * 10, uniform() * 5, uniform()];
      predictors.push(row);
      target.push([2 * row[0] - row[1] + uniform()]);
    }
    let engineRuns = 0;
    const engine = new InProcessRunner();
    cells.setSharedRunner(
      new FitCache({
        fit(req, cancel, progress) {
          engineRuns++;
          return engine.fit(req, cancel, progress);
        },
      }),
    );
    try {
      const invocation = () => ({}) as CustomFunctions.CancelableInvocation;
      const settings = [["folds=4; seed=5"]];
      // Mixes left out (null, as Excel passes an omitted argument): the default mixes for all five.
      const mixes = null as unknown as unknown[][];
      const results = await Promise.all([
        cells.coefs(target, predictors, mixes, settings, invocation()),
        cells.choice(target, predictors, mixes, settings, invocation()),
        cells.predict(target, predictors, [["size", "age", "depth"], [1, 2, 0.5]], mixes, settings, invocation()),
        cells.cvcurve(target, predictors, mixes, settings, invocation()),
      ]);
      // PATH with its mix left out draws the mix cross-validation picked: the same fit.
      results.push(await cells.path(target, predictors, null, settings, invocation()));
      expect(engineRuns).toBe(1);
      expect(cells.sharedRunner().stats()).toMatchObject({ runs: 1, misses: 1, hits: 4 });
      for (const spill of results) expect(spill.length).toBeGreaterThan(1);
      // Different mixes are a different fit.
      await cells.coefs(target, predictors, [[0.5], [1]], settings, invocation());
      expect(engineRuns).toBe(2);
    } finally {
      cells.setSharedRunner(undefined);
    }
  });

  test("Excel cancelling a cell function gives #N/A with a message, and stops the fit", async () => {
    let cancelledRuns = 0;
    const inner = new ManualRunner();
    cells.setSharedRunner(
      new FitCache({
        fit(req, cancel, progress) {
          cancel?.onCancel(() => cancelledRuns++);
          return inner.fit(req, cancel, progress);
        },
      }),
    );
    try {
      const invocation = {} as CustomFunctions.CancelableInvocation;
      const pending = cells.coefs([[1], [2], [3], [5]], [[1], [2], [4], [4]], null as unknown as unknown[][], null as unknown as unknown[][], invocation);
      await tick();
      expect(typeof invocation.onCanceled).toBe("function");
      invocation.onCanceled?.();
      const error = (await pending.catch((e: unknown) => e)) as { code: string; message: string };
      // #N/A carries a message; #VALUE! and #N/A are the only codes that do (platform notes).
      expect(error.code).toBe("#N/A");
      expect(error.message).toMatch(/cancelled/);
      expect(cancelledRuns).toBe(1);
    } finally {
      cells.setSharedRunner(undefined);
    }
  });

  test("the shared runner is one cache, in-process where Worker is missing (Node)", () => {
    const first = cells.sharedRunner();
    expect(cells.sharedRunner()).toBe(first);
    expect(typeof Worker).toBe("undefined");
    expect(cells.createEngineRunner()).toBeInstanceOf(InProcessRunner);
    cells.setSharedRunner(undefined);
  });

  test("registration is skipped without the CustomFunctions global", () => {
    const scope = globalThis as { CustomFunctions?: unknown };
    const saved = scope.CustomFunctions;
    delete scope.CustomFunctions;
    try {
      expect(cells.registerFunctions()).toBe(false);
    } finally {
      scope.CustomFunctions = saved;
    }
    expect(cells.registerFunctions()).toBe(true);
  });

  test("concurrent identical calls share one in-flight run, and each sees progress", async () => {
    const inner = new ManualRunner();
    const cache = new FitCache(inner);
    const seenA: FitProgress[] = [];
    const seenB: FitProgress[] = [];
    const seenC: FitProgress[] = [];
    const a = cache.fit(request(2), undefined, (p) => seenA.push(p));
    const b = cache.fit(request(2), undefined, (p) => seenB.push(p));
    expect(inner.calls.length).toBe(1);
    inner.calls[0].progress?.({ done: 1, total: 3 });
    // A late joiner gets the latest progress at once.
    const c = cache.fit(request(2), undefined, (p) => seenC.push(p));
    inner.calls[0].progress?.({ done: 2, total: 3 });
    const result = fakeResult(2);
    inner.calls[0].resolve(result);
    await expect(a).resolves.toBe(result);
    await expect(b).resolves.toBe(result);
    await expect(c).resolves.toBe(result);
    expect(seenA).toEqual([{ done: 1, total: 3 }, { done: 2, total: 3 }]);
    expect(seenB).toEqual(seenA);
    expect(seenC).toEqual(seenA);
    expect(cache.stats()).toMatchObject({ runs: 1, misses: 1, hits: 2, joins: 2, inFlight: 0, entries: 1 });
  });
});

describe("bounds", () => {
  test("least recently used entries are evicted once the byte budget is exceeded", async () => {
    const inner = new ManualRunner();
    // Each entry: a ~8 KB result; a budget for about two of them.
    const perEntry = approximateBytes(fakeResult(0, 1000));
    expect(perEntry).toBeGreaterThan(8000); // 8 bytes per number (estimate's own rule)
    const cache = new FitCache(inner, { maxBytes: 2.5 * (perEntry + 400) });
    const settle = (seed: number) => {
      const p = cache.fit(request(seed));
      return { p, call: inner.calls[inner.calls.length - 1] };
    };
    const one = settle(1);
    one.call.resolve(fakeResult(1, 1000));
    await one.p;
    const two = settle(2);
    two.call.resolve(fakeResult(2, 1000));
    await two.p;
    expect(cache.stats().entries).toBe(2);
    // Touch 1 so that 2 becomes the oldest.
    await cache.fit(request(1));
    const three = settle(3);
    three.call.resolve(fakeResult(3, 1000));
    await three.p;
    const stats = cache.stats();
    expect(stats.entries).toBe(2);
    expect(stats.evictions).toBe(1);
    expect(stats.bytes).toBeLessThanOrEqual(stats.maxBytes);
    expect(cache.has(request(1))).toBe(true);
    expect(cache.has(request(2))).toBe(false);
    expect(cache.has(request(3))).toBe(true);
  });

  test("an answer bigger than the whole budget is returned but not kept", async () => {
    const inner = new ManualRunner();
    const cache = new FitCache(inner, { maxBytes: 1000 });
    const p = cache.fit(request(1));
    inner.calls[0].resolve(fakeResult(1, 5000));
    await expect(p).resolves.toMatchObject({ tag: 1 });
    expect(cache.stats()).toMatchObject({ entries: 0, bytes: 0 });
  });

  test("the entry cap holds", async () => {
    const inner = new ManualRunner();
    const cache = new FitCache(inner, { maxEntries: 3 });
    for (let seed = 1; seed <= 5; seed++) {
      const p = cache.fit(request(seed));
      inner.calls[seed - 1].resolve(fakeResult(seed));
      await p;
    }
    expect(cache.stats()).toMatchObject({ entries: 3, evictions: 2 });
    expect(cache.has(request(1))).toBe(false);
    expect(cache.has(request(5))).toBe(true);
  });
});

describe("cancellation", () => {
  test("one waiter cancelling rejects alone; the run carries on for the others", async () => {
    const inner = new ManualRunner();
    const cache = new FitCache(inner);
    const first = cancelSource();
    const second = cancelSource();
    const a = cache.fit(request(4), first.token);
    const b = cache.fit(request(4), second.token);
    first.cancel();
    await expect(a).rejects.toBeInstanceOf(CancelledError);
    expect(inner.calls[0].cancelled).toBe(false);
    const result = fakeResult(4);
    inner.calls[0].resolve(result);
    await expect(b).resolves.toBe(result);
    expect(cache.stats()).toMatchObject({ runs: 1, cancelledRuns: 0, entries: 1 });
  });

  test("when the last waiter cancels, the run is cancelled and forgotten", async () => {
    const inner = new ManualRunner();
    const cache = new FitCache(inner);
    const first = cancelSource();
    const second = cancelSource();
    const a = cache.fit(request(5), first.token);
    const b = cache.fit(request(5), second.token);
    first.cancel();
    second.cancel();
    await expect(a).rejects.toBeInstanceOf(CancelledError);
    await expect(b).rejects.toBeInstanceOf(CancelledError);
    expect(inner.calls[0].cancelled).toBe(true);
    expect(cache.stats()).toMatchObject({ cancelledRuns: 1, entries: 0, inFlight: 0 });
    // The next identical call starts afresh rather than joining the cancelled run.
    const c = cache.fit(request(5));
    expect(inner.calls.length).toBe(2);
    inner.calls[1].resolve(fakeResult(5));
    await expect(c).resolves.toMatchObject({ tag: 5 });
  });

  test("an already-cancelled token rejects without starting anything", async () => {
    const inner = new ManualRunner();
    const cache = new FitCache(inner);
    const source = cancelSource();
    source.cancel();
    await expect(cache.fit(request(1), source.token)).rejects.toBeInstanceOf(CancelledError);
    expect(inner.calls.length).toBe(0);
  });

  test("a superseded call stops its engine fit (real engine, in-process)", async () => {
    // Excel cancels the old invocation when an input changes, then calls again with new data.
    // The runner below watches the engine itself: did fitAsync stop with CancelledError?
    const outcomes: string[] = [];
    const watching: FitRunner = {
      fit(req, cancel, progress) {
        const signal = { aborted: false };
        cancel?.onCancel(() => (signal.aborted = true));
        const run = fitAsync(req.predictors, req.target, {
          ...req.options,
          signal,
          onProgress: (done, total) => progress?.({ done, total }),
        });
        run.then(
          () => outcomes.push("finished"),
          (e) => outcomes.push(e instanceof CancelledError ? "cancelled" : "failed"),
        );
        return run;
      },
    };
    const cache = new FitCache(watching);
    const old = cancelSource();
    const big = request(11, 400, 30, { mixes: [0, 0.5, 1], folds: 10 });
    const superseded = cache.fit(big, old.token);
    await tick();
    old.cancel();
    await expect(superseded).rejects.toBeInstanceOf(CancelledError);
    const fresh = await cache.fit(request(12, 40, 3));
    expect(fresh.kind).toBe("shrinkwise-fit");
    expect(outcomes).toEqual(["cancelled", "finished"]);
    expect(cache.stats()).toMatchObject({ runs: 2, cancelledRuns: 1, entries: 1 });
    expect(cache.has(big)).toBe(false);
  });
});

describe("failures", () => {
  test("an InputError is shared briefly, then forgotten (documented 30 s default)", async () => {
    let clock = 1000;
    const inner = new ManualRunner();
    const cache = new FitCache(inner, { now: () => clock });
    expect(cache.failureTtlMs).toBe(30_000);
    const a = cache.fit(request(9));
    inner.calls[0].reject(new InputError("shape", "predictors has 6 rows but target has 5"));
    await expect(a).rejects.toBeInstanceOf(InputError);
    clock += 29_000;
    await expect(cache.fit(request(9))).rejects.toThrow("predictors has 6 rows but target has 5");
    expect(inner.calls.length).toBe(1);
    clock += 2_000;
    const c = cache.fit(request(9));
    expect(inner.calls.length).toBe(2);
    inner.calls[1].resolve(fakeResult(9));
    await expect(c).resolves.toMatchObject({ tag: 9 });
  });

  test("other failures are not cached", async () => {
    const inner = new ManualRunner();
    const cache = new FitCache(inner);
    const a = cache.fit(request(3));
    inner.calls[0].reject(new Error("the fit worker stopped unexpectedly"));
    await expect(a).rejects.toThrow("stopped unexpectedly");
    void cache.fit(request(3));
    expect(inner.calls.length).toBe(2);
    expect(cache.stats().entries).toBe(0);
  });

  test("a real engine InputError comes back through the cache unchanged", async () => {
    const cache = new FitCache(new InProcessRunner());
    const bad: FitRequest = { predictors: [[1], [2], [3]], target: [1, 2], options: {} };
    const error = await cache.fit(bad).catch((e: unknown) => e);
    expect(error).toBeInstanceOf(InputError);
    expect((error as InputError).code).toBe("shape");
    // Same object from the cache for the sibling call.
    await expect(cache.fit(bad)).rejects.toBe(error);
  });
});
