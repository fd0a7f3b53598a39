/**
 * The shared fit cache: a FitRunner that sits in front of another FitRunner (the Web Worker
 * in the add-in) so that COEFS, CHOICE, PREDICT, PATH, CVCURVE and KEPT over the same ranges and
 * settings compute once, and so that recalculations Excel triggers without a real change
 * (row inserts, reloads) cost nothing.
 *
 * Key. A request is reduced to a fingerprint: the options as canonical text (object keys
 * sorted, numbers written with `String`, which round-trips every double exactly, plus
 * explicit forms for -0, NaN and ±Infinity) and the numbers of the data (shape, target,
 * predictors column by column; a packed request's matrix is kept as it is, not copied). A
 * request is the same as a cached one only when the whole fingerprint is equal bit for bit: the
 * option text, the shape, and every number of the target and the predictors (-0 and 0 differ, a
 * NaN equals the same NaN). No hash decides a hit. The entries are found by a 32-bit MurmurHash3
 * of the option text, the shape and the target's bits, which picks a bucket; each entry of the
 * bucket is then compared in full, stopping at the first differing number. The predictors are
 * left out of that hash on purpose: hashing a 50,000 × 40 grid took 8 ms of every recalculation
 * (on the way to the worker), while the comparison costs nothing when no entry has the same
 * settings, shape and target (the first reading of a range, a changed target) and stops early
 * when one differs in a cell (a cell edited). Entries that differ only in their predictors share
 * a bucket; the bounds below keep it small. The two forms of a request (rows of numbers, or the
 * packed matrix) with the same numbers are the same entry. `requestHash` (tests, diagnostics)
 * still hashes the whole fingerprint.
 *
 * Sharing. A finished entry answers at once (a hit). A call that finds the same request in
 * flight joins it (also a hit): one engine run, any number of waiters, each receiving progress.
 * Every caller receives the same result object: treat it as read-only.
 *
 * Cancellation (reference-counted waiters). When one waiter's token fires, that waiter alone
 * rejects with CancelledError and leaves. When the last waiter leaves a run still in flight,
 * the run itself is cancelled (its token fires) and the entry is dropped, so a later identical
 * call starts afresh instead of joining a run that is being torn down. This is how a call that
 * Excel supersedes (the user edited an input) stops its fit.
 *
 * Bounds. Least recently used entries are evicted once the cached bytes exceed `maxBytes`
 * (default 64 MiB) or the entry count exceeds `maxEntries` (default 200). An entry's size is
 * its fingerprint plus an estimate of its result object (see `approximateBytes`). Runs in
 * flight are never evicted; an answer larger than `maxBytes` on its own is returned to its
 * waiters but not kept.
 *
 * Failures. An InputError is a deterministic answer to its request, so it is shared with the
 * burst of sibling formulas that ask the same thing (like a result) but kept only briefly
 * (`failureTtlMs`, default 30 s): a user who sees the message edits the inputs, and nothing is
 * gained by holding the error longer. Any other failure (a crashed worker, a cancelled run,
 * a programming error) is never cached: the next call runs again.
 */
import { CancelledError, InputError } from "../engine/errors";
import type { FitResult } from "../engine/fit";
import type { ColumnMatrix } from "../engine/matrix";
import { AnyFitRequest, cancelSource, CancelToken, FitProgress, FitRunner } from "./runner";

/** Default byte budget for finished entries: 64 MiB. */
export const DEFAULT_MAX_BYTES = 64 * 1024 * 1024;
/** Default cap on the number of finished entries. */
export const DEFAULT_MAX_ENTRIES = 200;
/** Default time an InputError stays cached, in milliseconds. */
export const DEFAULT_FAILURE_TTL_MS = 30_000;

export interface FitCacheOptions {
  /** Byte budget for finished entries (approximate). Default 64 MiB. */
  maxBytes?: number;
  /** Most finished entries kept. Default 200. */
  maxEntries?: number;
  /** How long an InputError answer is kept, in ms. 0 = never cached. Default 30 000. */
  failureTtlMs?: number;
  /** Clock in ms (tests). Default Date.now. */
  now?: () => number;
}

export interface FitCacheStats {
  /** Calls answered without starting a run: from a finished entry or by joining one in flight. */
  hits: number;
  /** Of the hits, how many joined a run in flight. */
  joins: number;
  /** Calls that started a run. */
  misses: number;
  /** Runs started on the underlying runner. */
  runs: number;
  /** Runs cancelled because every waiter left. */
  cancelledRuns: number;
  /** Finished entries dropped to stay within the bounds. */
  evictions: number;
  /** Finished entries held now (results and brief errors). */
  entries: number;
  /** Runs in flight now. */
  inFlight: number;
  /** Approximate bytes held by finished entries. */
  bytes: number;
  maxBytes: number;
  maxEntries: number;
}

/** What a request is compared by: canonical option text and the data's numbers (see fingerprintOf). */
interface Fingerprint {
  options: string;
  /** Shape: rows, columns (−1 when ragged), target length; ragged rows' lengths after them. */
  head: Float64Array;
  target: Float64Array;
  /** The predictors, column-major (row by row when ragged). */
  data: Float64Array;
}

interface Waiter {
  resolve: (result: FitResult) => void;
  reject: (error: unknown) => void;
  onProgress?: (progress: FitProgress) => void;
  settled: boolean;
}

interface Entry {
  hash: number;
  fingerprint: Fingerprint;
  state: "running" | "done" | "failed";
  result?: FitResult;
  error?: InputError;
  /** Failed entries only: when the cached error stops being served. */
  expires?: number;
  bytes: number;
  waiters: Set<Waiter>;
  lastProgress?: FitProgress;
  cancelRun: () => void;
  /** Set when the entry left the cache (evicted, cancelled, cleared): its outcome is ignored. */
  dropped: boolean;
}

export class FitCache implements FitRunner {
  readonly maxBytes: number;
  readonly maxEntries: number;
  readonly failureTtlMs: number;
  private readonly now: () => number;
  /** Lookup hash → entries with that hash (more than one when they differ only in their predictors, or on a collision). */
  private readonly buckets = new Map<number, Entry[]>();
  /** Finished entries in least-recently-used-first order (Map keeps insertion order). */
  private readonly lru = new Map<Entry, true>();
  private bytes = 0;
  private counters = { hits: 0, joins: 0, misses: 0, runs: 0, cancelledRuns: 0, evictions: 0 };
  private running = 0;

  constructor(
    private readonly inner: FitRunner,
    options: FitCacheOptions = {},
  ) {
    this.maxBytes = options.maxBytes ?? DEFAULT_MAX_BYTES;
    this.maxEntries = options.maxEntries ?? DEFAULT_MAX_ENTRIES;
    this.failureTtlMs = options.failureTtlMs ?? DEFAULT_FAILURE_TTL_MS;
    this.now = options.now ?? Date.now;
  }

  fit(request: AnyFitRequest, cancel?: CancelToken, onProgress?: (progress: FitProgress) => void): Promise<FitResult> {
    if (cancel?.cancelled) return Promise.reject(new CancelledError());
    const fingerprint = fingerprintOf(request);
    const hash = lookupHash(fingerprint);
    let entry = this.find(hash, fingerprint);
    if (entry && entry.state === "failed" && entry.expires !== undefined && entry.expires <= this.now()) {
      this.drop(entry);
      entry = undefined;
    }
    if (entry && entry.state === "done") {
      this.counters.hits++;
      this.touch(entry);
      return Promise.resolve(entry.result as FitResult);
    }
    if (entry && entry.state === "failed") {
      this.counters.hits++;
      this.touch(entry);
      return Promise.reject(entry.error);
    }
    if (entry) {
      this.counters.hits++;
      this.counters.joins++;
    } else {
      this.counters.misses++;
      entry = this.start(request, hash, fingerprint);
    }
    return this.wait(entry, cancel, onProgress);
  }

  /**
   * A fit from a sums table goes straight to the runner behind the cache (the worker, off the
   * pane's thread), not cached: the pane asks for it once per click, and it never repeats the
   * cell functions' bursts of identical requests. Absent behind a runner without fitSums.
   */
  get fitSums(): FitRunner["fitSums"] {
    const inner = this.inner;
    return inner.fitSums ? (request, cancel, onProgress) => (inner.fitSums as NonNullable<FitRunner["fitSums"]>).call(inner, request, cancel, onProgress) : undefined;
  }

  /** Has the runner behind the cache warm up now, where it can (WorkerRunner.warmUp); caches nothing. */
  warmUp(): void {
    (this.inner as { warmUp?: () => void }).warmUp?.();
  }

  /** Counters and current occupancy. */
  stats(): FitCacheStats {
    return {
      ...this.counters,
      entries: this.lru.size,
      inFlight: this.running,
      bytes: this.bytes,
      maxBytes: this.maxBytes,
      maxEntries: this.maxEntries,
    };
  }

  /** Zeroes the counters (occupancy is unchanged). */
  resetStats(): void {
    this.counters = { hits: 0, joins: 0, misses: 0, runs: 0, cancelledRuns: 0, evictions: 0 };
  }

  /** Forgets every finished entry. Runs in flight carry on for their waiters but are not kept. */
  clear(): void {
    for (const entries of this.buckets.values()) {
      for (const entry of entries) entry.dropped = true;
    }
    this.buckets.clear();
    this.lru.clear();
    this.bytes = 0;
  }

  /** True when a finished answer for this request is held (does not count as a hit). */
  has(request: AnyFitRequest): boolean {
    const fingerprint = fingerprintOf(request);
    const entry = this.find(lookupHash(fingerprint), fingerprint);
    if (!entry || entry.state === "running") return false;
    return entry.state === "done" || entry.expires === undefined || entry.expires > this.now();
  }

  private find(hash: number, fingerprint: Fingerprint): Entry | undefined {
    const entries = this.buckets.get(hash);
    if (!entries) return undefined;
    return entries.find((entry) => sameFingerprint(entry.fingerprint, fingerprint));
  }

  private start(request: AnyFitRequest, hash: number, fingerprint: Fingerprint): Entry {
    const source = cancelSource();
    const entry: Entry = {
      hash,
      fingerprint,
      state: "running",
      bytes: 0,
      waiters: new Set(),
      cancelRun: source.cancel,
      dropped: false,
    };
    const bucket = this.buckets.get(hash);
    if (bucket) bucket.push(entry);
    else this.buckets.set(hash, [entry]);
    this.running++;
    this.counters.runs++;
    let run: Promise<FitResult>;
    try {
      run = this.inner.fit(request, source.token, (progress) => {
        entry.lastProgress = progress;
        for (const waiter of entry.waiters) waiter.onProgress?.(progress);
      });
    } catch (error) {
      run = Promise.reject(error);
    }
    run.then(
      (result) => this.finish(entry, { ok: true, result }),
      (error: unknown) => this.finish(entry, { ok: false, error }),
    );
    return entry;
  }

  private wait(entry: Entry, cancel?: CancelToken, onProgress?: (progress: FitProgress) => void): Promise<FitResult> {
    return new Promise<FitResult>((resolve, reject) => {
      const waiter: Waiter = { resolve, reject, onProgress, settled: false };
      entry.waiters.add(waiter);
      if (entry.lastProgress && onProgress) onProgress(entry.lastProgress);
      cancel?.onCancel(() => {
        if (waiter.settled) return;
        waiter.settled = true;
        entry.waiters.delete(waiter);
        reject(new CancelledError());
        if (entry.waiters.size === 0 && entry.state === "running") {
          // The last waiter left: stop the run and forget it.
          this.counters.cancelledRuns++;
          this.drop(entry);
          entry.cancelRun();
        }
      });
    });
  }

  private finish(entry: Entry, outcome: { ok: true; result: FitResult } | { ok: false; error: unknown }): void {
    this.running--;
    const waiters = [...entry.waiters];
    entry.waiters.clear();
    entry.lastProgress = undefined;
    for (const waiter of waiters) {
      waiter.settled = true;
      if (outcome.ok) waiter.resolve(outcome.result);
      else waiter.reject(outcome.error);
    }
    if (entry.dropped) return;
    if (outcome.ok) {
      entry.state = "done";
      entry.result = outcome.result;
      entry.bytes = fingerprintBytes(entry.fingerprint) + approximateBytes(outcome.result);
      this.keep(entry);
    } else if (outcome.error instanceof InputError && this.failureTtlMs > 0) {
      const error = outcome.error;
      entry.state = "failed";
      entry.error = error;
      entry.expires = this.now() + this.failureTtlMs;
      entry.bytes = fingerprintBytes(entry.fingerprint) + approximateBytes(error.message) + 64;
      this.keep(entry);
    } else {
      this.drop(entry);
    }
  }

  /** Adds a finished entry to the LRU order and trims to the bounds. */
  private keep(entry: Entry): void {
    if (entry.bytes > this.maxBytes) {
      this.drop(entry);
      return;
    }
    this.lru.set(entry, true);
    this.bytes += entry.bytes;
    this.trim();
  }

  private trim(): void {
    for (const oldest of this.lru.keys()) {
      if (this.bytes <= this.maxBytes && this.lru.size <= this.maxEntries) break;
      this.counters.evictions++;
      this.drop(oldest);
    }
  }

  private touch(entry: Entry): void {
    this.lru.delete(entry);
    this.lru.set(entry, true);
  }

  private drop(entry: Entry): void {
    if (entry.dropped) return;
    entry.dropped = true;
    if (this.lru.delete(entry)) this.bytes -= entry.bytes;
    const bucket = this.buckets.get(entry.hash);
    if (!bucket) return;
    const at = bucket.indexOf(entry);
    if (at >= 0) bucket.splice(at, 1);
    if (bucket.length === 0) this.buckets.delete(entry.hash);
  }
}

/** A cache in front of `inner` with the given bounds. */
export function fitCache(inner: FitRunner, options?: FitCacheOptions): FitCache {
  return new FitCache(inner, options);
}

// ---------------------------------------------------------------------------------------------
// Fingerprints and hashing

/**
 * A request's numbers as the cache compares them: a small head [rows, columns, target length]
 * (columns −1 and each row's length appended for ragged rows), the target, and the predictors
 * column by column. A packed request (a ColumnMatrix, functions/runner.ts) is used as it is, with
 * no copy: requests are read-only once made. Rows of numbers are packed into the same
 * column-major order, so both forms of the same data have the same fingerprint and share an
 * entry. Ragged rows (the engine rejects them) are packed row by row after their lengths, so two
 * different ragged inputs cannot pack to the same numbers.
 */
function fingerprintOf(request: AnyFitRequest): Fingerprint {
  const predictors = request.predictors;
  const target = Float64Array.from(request.target);
  let head: Float64Array;
  let data: Float64Array;
  if (isPacked(predictors)) {
    head = Float64Array.of(predictors.rows, predictors.columns, target.length);
    data = predictors.data;
  } else {
    const rows = predictors.length;
    const columns = rows > 0 ? predictors[0].length : 0;
    let ragged = false;
    for (let i = 0; i < rows; i++) {
      if (predictors[i].length !== columns) {
        ragged = true;
        break;
      }
    }
    if (ragged) {
      head = new Float64Array(3 + rows);
      head[0] = rows;
      head[1] = -1;
      head[2] = target.length;
      let cells = 0;
      for (let i = 0; i < rows; i++) {
        head[3 + i] = predictors[i].length;
        cells += predictors[i].length;
      }
      data = new Float64Array(cells);
      let at = 0;
      for (let i = 0; i < rows; i++) {
        const row = predictors[i];
        for (let j = 0; j < row.length; j++) data[at++] = row[j];
      }
    } else {
      head = Float64Array.of(rows, columns, target.length);
      data = new Float64Array(rows * columns);
      for (let i = 0; i < rows; i++) {
        const row = predictors[i];
        for (let j = 0; j < columns; j++) data[j * rows + i] = row[j];
      }
    }
  }
  return { options: canonicalText(request.options), head, target, data };
}

/** True for the packed form of a request's predictors (a column-major matrix). */
function isPacked(predictors: AnyFitRequest["predictors"]): predictors is ColumnMatrix {
  return !Array.isArray(predictors);
}

/** The 32-bit words of a double array (its exact bit patterns), without a copy. */
function wordsOf(values: Float64Array): Uint32Array {
  return new Uint32Array(values.buffer, values.byteOffset, values.length * 2);
}

/**
 * Bit-for-bit equality of two double arrays: -0 and 0 differ, a NaN equals the same NaN. Compared
 * as doubles (half the steps of comparing 32-bit words), and by their bits where that could
 * mislead: two equal doubles other than zero have the same bits, so only zeros (±0) and unequal
 * values (a NaN is unequal to itself) are looked at bit by bit.
 */
function sameBits(a: Float64Array, b: Float64Array): boolean {
  if (a.length !== b.length) return false;
  if (a === b) return true;
  const x = wordsOf(a);
  const y = wordsOf(b);
  for (let i = 0; i < a.length; i++) {
    const u = a[i];
    if (u !== b[i] || u === 0) {
      if (x[2 * i] !== y[2 * i] || x[2 * i + 1] !== y[2 * i + 1]) return false;
    }
  }
  return true;
}

function sameFingerprint(a: Fingerprint, b: Fingerprint): boolean {
  return a.options === b.options && sameBits(a.head, b.head) && sameBits(a.target, b.target) && sameBits(a.data, b.data);
}

function fingerprintBytes(fingerprint: Fingerprint): number {
  return fingerprint.head.byteLength + fingerprint.target.byteLength + fingerprint.data.byteLength + 2 * fingerprint.options.length + 64;
}

// MurmurHash3 x86_32 (Appleby, the public-domain SMHasher reference, MurmurHash3.cpp): 32-bit
// blocks mixed by multiply–rotate–multiply, folded into the state by rotate–multiply–add, then the
// length and a final avalanche (fmix32). Four bytes per step where FNV-1a took one, which matters
// for a fingerprint of megabytes.
const MURMUR_C1 = 0xcc9e2d51;
const MURMUR_C2 = 0x1b873593;

/** Folds 32-bit words into a MurmurHash3 x86_32 state `h`; returns the new state. */
function murmurWords(h: number, words: Uint32Array): number {
  for (let i = 0; i < words.length; i++) {
    let k = Math.imul(words[i], MURMUR_C1);
    k = (k << 15) | (k >>> 17);
    k = Math.imul(k, MURMUR_C2);
    h ^= k;
    h = (h << 13) | (h >>> 19);
    h = (Math.imul(h, 5) + 0xe6546b64) | 0;
  }
  return h;
}

/** MurmurHash3's finalization: the length in bytes, then fmix32. */
function murmurFinish(h: number, byteLength: number): number {
  h ^= byteLength;
  h ^= h >>> 16;
  h = Math.imul(h, 0x85ebca6b);
  h ^= h >>> 13;
  h = Math.imul(h, 0xc2b2ae35);
  h ^= h >>> 16;
  return h >>> 0;
}

/** MurmurHash3 x86_32 of whole 32-bit words (little-endian bytes in the reference), for tests and diagnostics. */
export function murmur3Words(words: Uint32Array, seed = 0): number {
  return murmurFinish(murmurWords(seed | 0, words), 4 * words.length);
}

/** The option text's UTF-16 code units, two to a 32-bit word (a last odd unit alone). */
function textWords(text: string): Uint32Array {
  const units = new Uint32Array((text.length + 1) >>> 1);
  for (let i = 0; i < text.length; i += 2) {
    units[i >>> 1] = text.charCodeAt(i) | ((i + 1 < text.length ? text.charCodeAt(i + 1) : 0) << 16);
  }
  return units;
}

/**
 * The bucket a request's entries are found in: MurmurHash3 x86_32 (seed 0) over the option text
 * (textWords), then the bits of the head and the target; the predictors are left out (see the
 * module comment). Only picks a bucket: a hit is the whole fingerprint equal bit for bit.
 */
function lookupHash(fingerprint: Fingerprint): number {
  const units = textWords(fingerprint.options);
  let h = murmurWords(0, units);
  h = murmurWords(h, wordsOf(fingerprint.head));
  h = murmurWords(h, wordsOf(fingerprint.target));
  return murmurFinish(h, 4 * units.length + fingerprint.head.byteLength + fingerprint.target.byteLength);
}

/** MurmurHash3 x86_32 (seed 0) over the whole fingerprint: the option text, head, target and predictors' bits. */
function hashFingerprint(fingerprint: Fingerprint): number {
  const units = textWords(fingerprint.options);
  let h = murmurWords(0, units);
  h = murmurWords(h, wordsOf(fingerprint.head));
  h = murmurWords(h, wordsOf(fingerprint.target));
  h = murmurWords(h, wordsOf(fingerprint.data));
  const bytes = 4 * units.length + fingerprint.head.byteLength + fingerprint.target.byteLength + fingerprint.data.byteLength;
  return murmurFinish(h, bytes);
}

/** The hash the cache finds a request's entries by (options, shape, target: lookupHash), with the fingerprint it is made from: what a lookup costs before any comparison (bench/cellPhases.ts). */
export function requestLookupHash(request: AnyFitRequest): number {
  return lookupHash(fingerprintOf(request));
}

/** The request's 32-bit content hash over its whole fingerprint, for diagnostics and tests (the cache's lookup leaves the predictors out: lookupHash). */
export function requestHash(request: AnyFitRequest): number {
  return hashFingerprint(fingerprintOf(request));
}

/**
 * Canonical text of plain data: object keys sorted, `undefined` members left out (as JSON
 * does), arrays and typed arrays alike as lists, numbers exact (`String` gives the shortest
 * text that reads back as the same double), -0/NaN/±Infinity spelled out, strings quoted.
 */
export function canonicalText(value: unknown): string {
  const out: string[] = [];
  write(value, out);
  return out.join("");
}

function write(value: unknown, out: string[]): void {
  if (value === null || value === undefined) {
    out.push("null");
  } else if (typeof value === "number") {
    out.push(numberText(value));
  } else if (typeof value === "string") {
    out.push(JSON.stringify(value));
  } else if (typeof value === "boolean") {
    out.push(value ? "true" : "false");
  } else if (Array.isArray(value) || ArrayBuffer.isView(value)) {
    const list = value as ArrayLike<unknown>;
    out.push("[");
    for (let i = 0; i < list.length; i++) {
      if (i > 0) out.push(",");
      write(list[i], out);
    }
    out.push("]");
  } else if (typeof value === "object") {
    const record = value as Record<string, unknown>;
    const keys = Object.keys(record)
      .filter((key) => record[key] !== undefined)
      .sort();
    out.push("{");
    keys.forEach((key, i) => {
      if (i > 0) out.push(",");
      out.push(JSON.stringify(key), ":");
      write(record[key], out);
    });
    out.push("}");
  } else {
    // Functions, symbols and bigints have no place in a request.
    throw new TypeError(`a fit request cannot hold a ${typeof value}`);
  }
}

function numberText(x: number): string {
  if (Object.is(x, -0)) return "-0";
  return String(x); // "NaN", "Infinity", "-Infinity" included
}

// ---------------------------------------------------------------------------------------------
// Size estimate

/**
 * Approximate heap bytes of plain data, in the spirit of common engine layouts: 8 per number,
 * 2 per string character plus a header, a header plus 8 per slot for arrays and objects, the
 * byte length for typed arrays. It is an estimate for the cache budget, not an accounting.
 */
export function approximateBytes(value: unknown): number {
  let total = 0;
  const seen = new Set<object>();
  const stack: unknown[] = [value];
  while (stack.length > 0) {
    const item = stack.pop();
    if (item === null || item === undefined) {
      total += 8;
    } else if (typeof item === "number") {
      total += 8;
    } else if (typeof item === "boolean") {
      total += 4;
    } else if (typeof item === "string") {
      total += 16 + 2 * item.length;
    } else if (typeof item === "object") {
      if (seen.has(item)) continue;
      seen.add(item);
      if (ArrayBuffer.isView(item)) {
        total += 64 + item.byteLength;
      } else if (Array.isArray(item)) {
        const list = item as unknown[];
        total += 16 + 8 * list.length;
        for (let i = 0; i < list.length; i++) {
          // Numbers in arrays are counted by the slot above.
          const element = list[i];
          if (typeof element !== "number") stack.push(element);
        }
      } else {
        const values = Object.values(item as Record<string, unknown>);
        total += 32 + 16 * values.length;
        for (const member of values) if (typeof member !== "number") stack.push(member);
      }
    } else {
      total += 8;
    }
  }
  return total;
}
