/**
 * The packed form of a fit request (functions/runner.ts PackedFitRequest: the encoded predictors
 * as one column-major matrix) and the cache key over it (functions/cache.ts): the same numbers in
 * either form are one cache entry, any changed bit is a new run, and the lookup hash is
 * MurmurHash3 x86_32.
 *
 * Expected values: the hash's test vectors are from memory of the reference implementation
 * (Appleby's SMHasher, MurmurHash3.cpp) and were confirmed, when this test was written, against
 * an independent JavaScript implementation (imurmurhash 0.1.4, over the same ASCII bytes); every
 * other expectation is a property of the cache's documented contract (two routes agreeing).
 */
import { fit, FitResult } from "../../engine/fit";
import { fromRows } from "../../engine/matrix";
import { mulberry32 } from "../../engine/random";
import { FitCache, murmur3Words, requestHash } from "../../functions/cache";
import type { AnyFitRequest, CancelToken, FitProgress, FitRunner, PackedFitRequest } from "../../functions/runner";
import { createFitHandler, FromWorker, ToWorker } from "../../functions/fit.worker";
import { WorkerLike, WorkerRunner, wireRequest } from "../../functions/workerRunner";

/** Records requests; every fit resolves with a tag so tests can tell runs apart. */
class RecordingRunner implements FitRunner {
  readonly requests: AnyFitRequest[] = [];
  fit(request: AnyFitRequest, _cancel?: CancelToken, _progress?: (progress: FitProgress) => void): Promise<FitResult> {
    this.requests.push(request);
    return Promise.resolve({ tag: this.requests.length } as unknown as FitResult);
  }
}

function rowsRequest(seed: number, rows = 30, columns = 4): { predictors: number[][]; target: number[]; options: { folds: number } } {
  const uniform = mulberry32(seed);
  const predictors = Array.from({ length: rows }, () => Array.from({ length: columns }, () => uniform() - 0.5));
  const target = predictors.map((row) => row[0] - 2 * row[1] + 0.1 * uniform());
  return { predictors, target, options: { folds: 3 } };
}

function packed(request: { predictors: number[][]; target: number[]; options: { folds: number } }): PackedFitRequest {
  return { predictors: fromRows(request.predictors), target: request.target.slice(), options: { ...request.options } };
}

/** ASCII text as little-endian 32-bit words (its length a multiple of 4). */
function asciiWords(text: string): Uint32Array {
  const words = new Uint32Array(text.length / 4);
  for (let i = 0; i < text.length; i += 4) {
    words[i / 4] = (text.charCodeAt(i) | (text.charCodeAt(i + 1) << 8) | (text.charCodeAt(i + 2) << 16) | (text.charCodeAt(i + 3) << 24)) >>> 0;
  }
  return words;
}

/** The next double above x (one unit in the last place). */
function nextUp(x: number): number {
  const bits = new Float64Array([x]);
  new BigInt64Array(bits.buffer)[0] += BigInt(x >= 0 ? 1 : -1);
  return bits[0];
}

describe("the lookup hash", () => {
  test("MurmurHash3 x86_32 test vectors (reference implementation, from memory; confirmed with imurmurhash 0.1.4)", () => {
    expect(murmur3Words(asciiWords(""), 0)).toBe(0);
    expect(murmur3Words(asciiWords(""), 1)).toBe(0x514e28b7);
    expect(murmur3Words(asciiWords("test"), 0)).toBe(0xba6bd213);
    expect(murmur3Words(asciiWords("abcdefgh12345678"), 42)).toBe(0x2b5a5b54);
  });
});

describe("packed requests in the cache", () => {
  test("the rows form and the packed form of the same numbers are one entry (two routes to one key)", async () => {
    const inner = new RecordingRunner();
    const cache = new FitCache(inner);
    const plain = rowsRequest(1);
    expect(requestHash(plain)).toBe(requestHash(packed(plain)));
    const first = await cache.fit(plain);
    const second = await cache.fit(packed(plain));
    expect(second).toBe(first);
    expect(inner.requests.length).toBe(1);
  });

  test("any one changed cell of a packed request, by one bit or by sign of zero, is a new run", async () => {
    const inner = new RecordingRunner();
    const cache = new FitCache(inner);
    const base = rowsRequest(2, 12, 3);
    await cache.fit(packed(base));
    let runs = 1;
    for (let i = 0; i < 12; i++) {
      for (let j = 0; j < 3; j++) {
        const changed = packed(base);
        changed.predictors.data[j * 12 + i] = nextUp(changed.predictors.data[j * 12 + i]);
        await cache.fit(changed);
        expect(inner.requests.length).toBe(++runs);
      }
      const target = packed(base);
      target.target[i] = nextUp(target.target[i]);
      await cache.fit(target);
      expect(inner.requests.length).toBe(++runs);
    }
    // -0 and 0 are different bits, so different requests (as in the rows form).
    const zero = packed(base);
    zero.predictors.data[5] = 0;
    const minusZero = packed(base);
    minusZero.predictors.data[5] = -0;
    await cache.fit(zero);
    await cache.fit(minusZero);
    expect(inner.requests.length).toBe(runs + 2);
    // The same numbers again: a hit.
    await cache.fit(packed(base));
    expect(inner.requests.length).toBe(runs + 2);
  });

  test("the shape is part of the key: the same numbers as 6 × 2 and 4 × 3 are different requests", async () => {
    const inner = new RecordingRunner();
    const cache = new FitCache(inner);
    const data = Float64Array.from({ length: 12 }, (_, k) => k + 1);
    const target = [1, 2, 3, 4, 5, 6];
    await cache.fit({ predictors: { rows: 6, columns: 2, data }, target, options: {} });
    await cache.fit({ predictors: { rows: 4, columns: 3, data: data.slice() }, target, options: {} });
    expect(inner.requests.length).toBe(2);
  });
});

describe("the packed wire form", () => {
  test("a packed request is posted as a copy whose buffer can be transferred; the request itself is untouched", () => {
    const request = packed(rowsRequest(3));
    const { request: wire, transfer } = wireRequest(request);
    const sent = wire.predictors as PackedFitRequest["predictors"];
    expect(transfer).toEqual([sent.data.buffer]);
    expect(sent.data).not.toBe(request.predictors.data);
    expect(Array.from(sent.data)).toEqual(Array.from(request.predictors.data));
    // Transferring detaches the sent buffer only.
    structuredClone(wire, { transfer });
    expect(sent.data.length).toBe(0);
    expect(request.predictors.data.length).toBe(30 * 4);
  });

  test("the rows form is posted as it is, with nothing to transfer", () => {
    const request = rowsRequest(4);
    const { request: wire, transfer } = wireRequest(request);
    expect(wire).toBe(request);
    expect(transfer).toEqual([]);
  });

  test("the engine gives the same result bit for bit from either form, after a structured clone (common practice: the worker's transport)", () => {
    const plain = rowsRequest(5, 60, 5);
    const { request: wire, transfer } = wireRequest(packed(plain));
    const received = structuredClone(wire, { transfer });
    const options = { mixes: [0, 0.5, 1], folds: 4, seed: 3 };
    expect(fit(received.predictors, received.target, options)).toStrictEqual(fit(plain.predictors, plain.target, options));
  });
});

describe("the packed request's copy: nothing comes back transferred, the next copy goes into a reserved buffer", () => {
  /** A worker on this thread: messages cross by structured clone with their transfer lists, as on a real port. */
  class CloningWorker implements WorkerLike {
    onmessage: ((event: { data: FromWorker }) => void) | null = null;
    onerror: ((event: unknown) => void) | null = null;
    /** What each fit message carried, read when it arrived. */
    readonly receivedData: number[][] = [];
    /** The transfer list of every message the worker posted (it must post none: fit.worker.ts). */
    readonly answerTransfers: unknown[] = [];
    readonly handle = createFitHandler((...args: unknown[]) => {
      this.answerTransfers.push(args[1]);
      const copy = structuredClone(args[0]) as FromWorker;
      setImmediate(() => this.onmessage?.({ data: copy }));
    });
    postMessage(message: ToWorker, transfer?: ArrayBuffer[]): void {
      const copy = structuredClone(message, { transfer: transfer ?? [] });
      if (copy.type === "fit" && !Array.isArray(copy.request.predictors)) this.receivedData.push(Array.from(copy.request.predictors.data));
      setImmediate(() => this.handle(copy));
    }
    terminate(): void {}
  }
  const settle = (): Promise<void> => new Promise((resolve) => setTimeout(resolve, 5));

  test("the worker transfers nothing back; the runner reserves a buffer while a fit runs and copies the next same-sized request into it", async () => {
    const worker = new CloningWorker();
    const runner = new WorkerRunner(() => worker, { spareMinBytes: 0 });
    const options = { mixes: [1], folds: 3, seed: 1, strengthCount: 8 };
    const first = { ...packed(rowsRequest(6, 40, 3)), options };
    const second = { ...packed(rowsRequest(7, 40, 3)), options };
    const spareOf = (): ArrayBuffer | null => (runner as unknown as { spare: ArrayBuffer | null }).spare;
    expect(spareOf()).toBeNull();
    const a = await runner.fit(first);
    await settle();
    // A buffer of the request's size was reserved while the first fit ran (nothing came back).
    const reserved = spareOf();
    expect(reserved?.byteLength).toBe(960);
    const pending = runner.fit(second);
    // Posting the second request used it up (the copy went into it and went out)...
    expect(spareOf()).toBeNull();
    expect(reserved?.byteLength).toBe(0);
    const b = await pending;
    await settle();
    // ...and another was reserved for the next one.
    expect(spareOf()?.byteLength).toBe(960);
    expect(spareOf()).not.toBe(reserved);
    expect(a).toStrictEqual(fit(first.predictors, first.target, options));
    expect(b).toStrictEqual(fit(second.predictors, second.target, options));
    expect(worker.receivedData).toEqual([Array.from(first.predictors.data), Array.from(second.predictors.data)]);
    // The worker passed no transfer list with any answer (a detach would slow its engine for good).
    expect(worker.answerTransfers.length).toBeGreaterThan(0);
    expect(worker.answerTransfers.every((t) => t === undefined)).toBe(true);
    // The requests themselves are untouched (the cache keeps them as keys).
    expect(first.predictors.data.length).toBe(120);
    expect(second.predictors.data.length).toBe(120);
    runner.dispose();
  });

  test("small requests get no reserved buffer by default", async () => {
    const worker = new CloningWorker();
    const runner = new WorkerRunner(() => worker);
    const options = { mixes: [1], folds: 3, seed: 1, strengthCount: 8 };
    await runner.fit({ ...packed(rowsRequest(6, 40, 3)), options });
    await settle();
    expect((runner as unknown as { spare: ArrayBuffer | null }).spare).toBeNull();
    runner.dispose();
  });

  test("rows requests get no spare; a spare of another size is not used", () => {
    const handlerPosts: { message: FromWorker; transfer?: unknown }[] = [];
    const handle = createFitHandler(
      (...args: unknown[]) => handlerPosts.push({ message: args[0] as FromWorker, transfer: args[1] }),
      () => Promise.resolve({} as FitResult),
    );
    handle({ type: "fit", id: 1, request: rowsRequest(8) });
    return new Promise<void>((resolve) => setImmediate(resolve)).then(() => {
      expect(handlerPosts[0].message).toEqual({ type: "result", id: 1, result: {} });
      expect(handlerPosts[0].transfer).toBeUndefined();
      const request = packed(rowsRequest(9, 10, 2));
      const wrongSize = new ArrayBuffer(8);
      const { reusedSpare, transfer } = wireRequest(request, wrongSize);
      expect(reusedSpare).toBe(false);
      expect(transfer[0]).not.toBe(wrongSize);
      const rightSize = new ArrayBuffer(160);
      const reused = wireRequest(request, rightSize);
      expect(reused.reusedSpare).toBe(true);
      expect(reused.transfer[0]).toBe(rightSize);
    });
  });
});
