/**
 * Stability selection with complementary pairs of half-samples, at the chosen mix.
 *
 * Method: Meinshausen & Bühlmann (2010), "Stability selection", JRSS-B 72(4), 417–473, with the
 * complementary pairs of Shah & Samworth (2013), "Variable selection with error control: another
 * look at stability selection", JRSS-B 75(1), 55–80.
 *
 * After the cross-validated fit is assembled, for draws b = 0..B−1 the rows with positive weight
 * (m of them) are shuffled (dealHalves: Mulberry32 seeded from the stability seed and b) and dealt
 * into two disjoint halves A_b and B_b of ⌊m/2⌋ rows each (with m odd one row sits out of that
 * draw): Shah & Samworth's complementary pairs. Each half is fitted down the chosen mix's full-data
 * path strengths (unit-free λ, so each half standardizes its own rows, target included, exactly as
 * a cross-validation fold does, and λ means the same thing on every half); a term is selected by a
 * half at λ when its coefficient there is nonzero.
 *
 * Which strengths count. Meinshausen & Bühlmann's Theorem 1 bounds the expected number of falsely
 * selected terms, E V ≤ q_Λ² / ((2π − 1)·p), where q_Λ = E|Ŝ^Λ| is the expected number of terms
 * selected at ANY strength of the set Λ (the union over Λ) by a fit on half the rows. So, walking
 * down the strengths from the largest, each half's selection so far is the union of the terms it
 * selected at this strength or any larger one; q̂(λ_k) is the average size of those unions over the
 * 2B halves (nondecreasing in k), and Λ = the strengths with q̂ ≤ q (a run from the top). A term's
 * share is then the highest, over λ ∈ Λ, of the share of the 2B halves selecting it at λ (their
 * Π̂_j = max over Λ of the selection probability), and it is stable when share ≥ π. With Λ so
 * chosen, the bound q²/((2π − 1)·p) holds (Shah & Samworth 2013, Theorem 1, keep it for
 * complementary pairs under the same exchangeability assumption and the "better than random
 * guessing" condition; their bound is on the expectation E V, not on any one run).
 * `averageSelected` in the result reports those q̂ values at the counted strengths.
 *
 * If even the top strength has q̂ > q, Λ is empty: every share is 0 and a warning says to raise q.
 *
 * Candidates (the p in the bound): terms that can be selected, i.e. penalized (multiplier > 0),
 * not constant on the rows used, and not held at 0 by bounds of 0 and 0. An unpenalized term
 * (multiplier 0) is in every model by the user's choice: it is not a candidate, its share is
 * reported as 1 and `stable` as false (stability selection makes no claim about it; the result's
 * `candidate` flags tell the two apart). Constant and bound-held terms: share 0, not candidates.
 *
 * Ridge (mix 0) keeps every term at every strength, so there is nothing to select: no halves are
 * fitted (their progress units are counted at once), every share is 0 and a warning says to
 * choose among mixes above 0.
 *
 * Cost: 2B half-sample paths, one progress unit each. Two exact shortcuts, so the result is the
 * same as fitting every half to the end of the path:
 * - the union sizes only grow down the path, so once the halves fitted so far already sum to more
 *   than 2B·q at some strength, that strength and every weaker one are out of Λ whatever the other
 *   halves do; later halves stop there;
 * - Λ usually ends near the top of the path, where fits are sparse and cheap, while the weak end
 *   (dense fits; for two classes, near separation) costs the most: the halves are first solved
 *   down to a depth guessed from the full-data path (firstDepth), and only if Λ reaches that depth
 *   are they solved again twice as deep, and so on. Progress counts the halves of the first pass;
 *   a deeper pass (when the guess was short) runs after it without further units.
 *
 * Same inputs and seed → bit-identical results (the draws depend on the seed and b only).
 */
import { CancelSignal, FitWarning, InputError, throwIfCancelled } from "./errors";
import { checkStabilityOptions, defaultExpectedTerms, falseSelectionBound, StabilityOptions, StabilityResult } from "./assurance";
import { mulberry32 } from "./random";

/** One half's path, solved on demand: `at(k)` solves strengths[k] (called for k = 0, 1, 2, … in order) and returns its coefficients (nonzero = selected). */
export interface HalfPath {
  at(k: number): ArrayLike<number>;
  /** False once any point hit the sweep or step cap. */
  converged(): boolean;
}

/** The stability settings as used: q resolved against the candidates and checked. */
export interface StabilitySettings {
  draws: number;
  expectedTerms: number;
  threshold: number;
  seed: number;
  candidates: number;
}

/**
 * Checks the options (assurance.ts checkStabilityOptions) and resolves q: default round(√(0.8·p))
 * with p the candidates (defaultExpectedTerms); a q above the candidates is an InputError.
 */
export function stabilitySettings(options: StabilityOptions, candidates: number, fitSeed: number): StabilitySettings {
  const checked = checkStabilityOptions(options);
  if (!(candidates >= 1)) {
    throw new InputError("setting", "stability selection needs at least one term that can be selected (penalized and not constant)");
  }
  const expectedTerms = checked.expectedTerms ?? defaultExpectedTerms(candidates);
  if (expectedTerms > candidates) {
    throw new InputError(
      "setting",
      `q (the average number of terms selected) is ${expectedTerms}, more than the ${candidates} term${candidates === 1 ? "" : "s"} that can be selected: give a q from 1 to ${candidates}`,
    );
  }
  return { draws: checked.draws, expectedTerms, threshold: checked.threshold, seed: checked.seed ?? fitSeed, candidates };
}

/** Progress units stability selection adds to a fit's total: 2B half-sample paths, or 0 when not asked for. */
export function stabilityUnits(options: StabilityOptions | null | undefined): number {
  return options ? 2 * checkStabilityOptions(options).draws : 0;
}

/** Murmur3's 32-bit finalizer (Appleby, MurmurHash3, public domain): spreads nearby integers apart. */
function mix32(value: number): number {
  let z = value >>> 0;
  z = Math.imul(z ^ (z >>> 16), 0x85ebca6b) >>> 0;
  z = Math.imul(z ^ (z >>> 13), 0xc2b2ae35) >>> 0;
  return (z ^ (z >>> 16)) >>> 0;
}

/** The Mulberry32 seed of draw b: the stability seed's low and high 32 bits and b, hashed together. */
export function drawSeed(seed: number, draw: number): number {
  const low = seed >>> 0;
  const high = Math.floor(seed / 4294967296) >>> 0;
  return mix32(mix32(mix32(low) ^ high) + Math.imul(draw + 1, 0x9e3779b9));
}

/**
 * The complementary halves of draw b: the rows in `eligible` (rows with positive weight, any
 * order) are shuffled by Fisher–Yates driven by Mulberry32(drawSeed(seed, b)); with `strata` (one
 * value per data row, e.g. the class of a two-class outcome) the shuffled rows are regrouped
 * stratum by stratum (strata in increasing order, each in shuffled order). The t-th row of that
 * order goes to half A when t is even and to half B when t is odd, and with an odd count the last
 * row sits out; so each half holds ⌊m/2⌋ rows and each stratum splits as evenly as it can (a
 * two-class half then holds both classes whenever each class has 2 or more rows). Each half is
 * returned in increasing row order. Cost O(m log m).
 *
 * @example dealHalves(Int32Array.from([0, 1, 2, 3, 4]), null, 1, 0) // two disjoint halves of 2 rows
 */
export function dealHalves(eligible: ArrayLike<number>, strata: ArrayLike<number> | null, seed: number, draw: number): { a: Int32Array; b: Int32Array } {
  const m = eligible.length;
  const next = mulberry32(drawSeed(seed, draw));
  const order = Int32Array.from(eligible);
  for (let i = m - 1; i > 0; i--) {
    const k = Math.floor(next() * (i + 1));
    const tmp = order[i];
    order[i] = order[k];
    order[k] = tmp;
  }
  let dealt = order;
  if (strata) {
    const values = Array.from(new Set(Array.from(order, (i) => strata[i]))).sort((u, v) => u - v);
    dealt = new Int32Array(m);
    let t = 0;
    for (const value of values) for (let s = 0; s < m; s++) if (strata[order[s]] === value) dealt[t++] = order[s];
  }
  const size = Math.floor(m / 2);
  const a = new Int32Array(size);
  const b = new Int32Array(size);
  for (let t = 0; t < 2 * size; t++) {
    if (t % 2 === 0) a[t >> 1] = dealt[t];
    else b[t >> 1] = dealt[t];
  }
  a.sort();
  b.sort();
  return { a, b };
}

/** What the fit hands over: the chosen mix and path, the terms, the rows, and how to fit a half. */
export interface StabilityInput {
  settings: StabilitySettings;
  mix: number;
  /** The chosen mix's full-data path strengths (unit-free λ, largest first). */
  strengths: readonly number[];
  /** Per term: whether it can be selected (see the module comment). */
  candidate: readonly boolean[];
  /** Per term: unpenalized and not constant (in every model; share 1). */
  unpenalized: readonly boolean[];
  /** Rows with positive weight, in increasing order. */
  eligible: Int32Array;
  /** Two-class: the class of each data row (halves are dealt stratified by class); null for a number outcome. */
  strata: ArrayLike<number> | null;
  /** Builds the training problem of a half (as a fold's is built) and returns its path. */
  fitHalf: (rows: Int32Array) => HalfPath;
  signal?: CancelSignal;
  /** Called after each half of the first pass (one progress unit each). */
  onHalf: () => void;
  /**
   * How many strengths from the top the first pass solves (default: all). Λ usually ends near the
   * top of the path, where the fits are sparse and cheap; when it reaches the depth solved, every
   * half is solved again twice as deep, until Λ ends inside (or the path does). The result does
   * not depend on it (only the cost does).
   */
  firstDepth?: number;
}

/** Fewest rows a half may hold. */
export const MIN_HALF_ROWS = 3;

/**
 * Stability selection (module comment) as a generator: yields after each half, so a fit that runs
 * it stays responsive; returns the result. Warnings are pushed to `warnings`.
 */
export function* stabilitySelection(input: StabilityInput, warnings: FitWarning[]): Generator<void, StabilityResult, void> {
  const { settings, strengths, candidate, unpenalized, eligible, signal } = input;
  const p = candidate.length;
  const halves = 2 * settings.draws;
  const size = Math.floor(eligible.length / 2);
  if (size < MIN_HALF_ROWS) {
    throw new InputError(
      "too-few-rows",
      `stability selection fits halves of the ${eligible.length} rows with a positive weight, and a half would hold only ${size} (at least ${MIN_HALF_ROWS} needed): add rows, or leave stability selection off`,
    );
  }
  // counts[k·p + j]: halves selecting term j at strengths[k]; unionTotal[k]: Σ over halves of the size of the union down to k.
  const K = strengths.length;
  const counts = new Int32Array(K * p);
  const unionTotal = new Float64Array(K);
  const budget = halves * settings.expectedTerms;
  const ridge = input.mix === 0;
  let depth = Math.max(1, Math.min(K, input.firstDepth ?? K));
  let limit = depth;
  let converged = true;
  for (let pass = 0; ; pass++) {
    counts.fill(0);
    unionTotal.fill(0);
    limit = depth;
    converged = true;
    for (let b = 0; b < settings.draws; b++) {
      const pair = ridge ? null : dealHalves(eligible, input.strata, settings.seed, b);
      for (const rows of pair ? [pair.a, pair.b] : [null, null]) {
        throwIfCancelled(signal);
        if (rows) {
          if (input.strata) checkBothClasses(rows, input.strata);
          const path = input.fitHalf(rows);
          const inUnion = new Uint8Array(p);
          let union = 0;
          for (let k = 0; k < limit; k++) {
            throwIfCancelled(signal);
            const coefficients = path.at(k);
            const row = k * p;
            for (let j = 0; j < p; j++) {
              if (!candidate[j] || coefficients[j] === 0) continue;
              counts[row + j]++;
              if (!inUnion[j]) {
                inUnion[j] = 1;
                union++;
              }
            }
            unionTotal[k] += union;
            // The halves so far already average more than q here: out of Λ, with every weaker strength.
            if (unionTotal[k] > budget) limit = k;
          }
          if (!path.converged()) converged = false;
        }
        // Progress counts the first pass (its total is fixed up front); a deeper pass only yields.
        if (pass === 0) input.onHalf();
        yield;
      }
    }
    // Λ ends inside the depth solved (or the depth is the whole path): done. Else solve deeper.
    if (ridge || limit < depth || depth === K) break;
    depth = Math.min(K, 2 * depth);
  }
  const share = new Array<number>(p).fill(0);
  for (let k = 0; k < limit; k++) {
    for (let j = 0; j < p; j++) share[j] = Math.max(share[j], counts[k * p + j] / halves);
  }
  for (let j = 0; j < p; j++) if (unpenalized[j]) share[j] = 1;
  const stable = share.map((s, j) => candidate[j] && s >= settings.threshold);
  if (ridge) {
    warnings.push({
      code: "stability",
      message: "stability selection ran at the chosen mix, 0 (ridge), which keeps every term at every strength: there is nothing to select, so every share is 0; fit mixes above 0 (e.g. 0.5 or 1) to use it",
    });
  } else if (limit === 0) {
    warnings.push({
      code: "stability",
      message: `stability selection: even at the strongest strength the halves select more than q = ${settings.expectedTerms} term${settings.expectedTerms === 1 ? "" : "s"} on average, so no strength counts and every share is 0; raise q`,
    });
  }
  if (!converged) {
    warnings.push({ code: "not-converged", message: "some half-sample fits of stability selection hit the sweep or step cap before converging: raise the sweep cap or loosen the tolerance; their selections are approximate" });
  }
  return {
    mix: input.mix,
    draws: settings.draws,
    expectedTerms: settings.expectedTerms,
    threshold: settings.threshold,
    seed: settings.seed,
    candidates: settings.candidates,
    falseSelectionBound: falseSelectionBound(settings.expectedTerms, settings.threshold, settings.candidates),
    strengths: ridge ? [] : strengths.slice(0, limit),
    averageSelected: ridge ? [] : Array.from(unionTotal.subarray(0, limit), (total) => total / halves),
    share,
    stable,
    candidate: candidate.slice(),
  };
}

/** A two-class half needs rows of both classes (its log-odds would run to infinity otherwise). */
function checkBothClasses(rows: Int32Array, classes: ArrayLike<number>): void {
  let events = 0;
  for (const i of rows) if (classes[i] === 1) events++;
  if (events === 0 || events === rows.length) {
    throw new InputError(
      "too-few-rows",
      "stability selection deals the rows into halves, and a half got rows of one class only: each class needs at least 2 rows with a positive weight; add rows of the rarer class, or leave stability selection off",
    );
  }
}
