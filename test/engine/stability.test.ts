/**
 * Stability selection with complementary pairs (engine/stability.ts):
 * - the error control it is published with: over simulated data with known true terms, correlated
 *   look-alikes and independent noise, the mean number of falsely selected terms stays within
 *   q²/((2π − 1)·p) (Meinshausen & Bühlmann 2010, JRSS-B 72(4), Theorem 1; Shah & Samworth 2013,
 *   JRSS-B 75(1), Theorem 1 — a bound on the expectation, so the mean over seeds is compared);
 * - a dominant true term is selected by every half, pure noise by few;
 * - agreement of two routes: the shares recounted from the same halves, each fitted with the public
 *   fit() at each fixed strength, and Λ formed by hand from the definition;
 * - bit-identical for a seed; unchanged by column units, offsets and the weights' scale; two-class;
 *   settings checked; progress ends at its total; cancel lands inside the half-sample fits.
 * Set ASSURE_REPORT=1 to print the false-selection figures.
 */
import { fit, FitOptions, FitResult } from "../../engine/fit";
import { dealHalves, drawSeed, HalfPath, StabilityInput, stabilitySelection } from "../../engine/stability";
import type { StabilityResult } from "../../engine/assurance";
import type { FitWarning } from "../../engine/errors";
import { CancelledError, InputError } from "../../engine/errors";
import { TestRandom } from "../helpers/random";

const REPORT = process.env.ASSURE_REPORT === "1";

/**
 * n rows, `truth.length` true terms (independent normals), then for each of the first
 * `lookAlikes` true terms a look-alike column = true column + N(0, 1) (correlation 1/√2 ≈ 0.71 with
 * it, truly zero in the model), then independent noise columns up to p. y = 5 + Σ truth·x + N(0, 1).
 */
function simulate(n: number, p: number, truth: number[], lookAlikes: number, seed: number): { x: number[][]; y: number[]; trueTerms: Set<number> } {
  const random = new TestRandom(seed);
  const x: number[][] = [];
  const y: number[] = [];
  for (let i = 0; i < n; i++) {
    const row = new Array<number>(p);
    for (let j = 0; j < truth.length; j++) row[j] = random.normal();
    for (let a = 0; a < lookAlikes; a++) row[truth.length + a] = row[a % truth.length] + random.normal();
    for (let j = truth.length + lookAlikes; j < p; j++) row[j] = random.normal();
    let s = 5;
    for (let j = 0; j < truth.length; j++) s += truth[j] * row[j];
    x.push(row);
    y.push(s + random.normal());
  }
  return { x, y, trueTerms: new Set(truth.map((_, j) => j)) };
}

describe("error control (Meinshausen & Bühlmann 2010, Theorem 1; Shah & Samworth 2013, Theorem 1)", () => {
  // 20 seeds × one lasso fit with 25 pairs (50 half paths) each, n = 150, p = 40: a few seconds.
  // 25 pairs instead of the default 50 keep the runtime modest; the bound does not depend on B.
  const seeds = Array.from({ length: 20 }, (_, s) => 1000 + s);
  const truth = [1, -0.8, 0.6, 0.5];
  const runs = seeds.map((seed) => {
    const { x, y, trueTerms } = simulate(150, 40, truth, 8, seed);
    const result = fit(x, y, { mixes: [1], folds: 5, stability: { draws: 25 }, seed });
    const stability = result.stability;
    if (!stability) throw new Error("no stability result");
    let falseSelections = 0;
    let trueSelections = 0;
    stability.stable.forEach((stable, j) => {
      if (stable && trueTerms.has(j)) trueSelections++;
      else if (stable) falseSelections++;
    });
    return { falseSelections, trueSelections, bound: stability.falseSelectionBound, stability };
  });

  test("the mean number of falsely selected terms stays within the bound", () => {
    const mean = runs.reduce((s, r) => s + r.falseSelections, 0) / runs.length;
    const max = Math.max(...runs.map((r) => r.falseSelections));
    const bound = runs[0].bound;
    // Default q = round(√(0.8·40)) = 6, π = 0.75: bound 36 / (0.5·40) = 1.8 (assurance.ts defaults).
    expect(runs[0].stability.expectedTerms).toBe(6);
    expect(bound).toBeCloseTo(1.8, 12);
    if (REPORT) {
      const trueMean = runs.reduce((s, r) => s + r.trueSelections, 0) / runs.length;
      console.log(
        `stability selection, n 150, p 40 (4 true, 8 look-alikes r≈0.71, 28 noise), 25 pairs, ${runs.length} seeds: ` +
          `false selections mean ${mean.toFixed(3)}, max ${max}, bound ${bound}; true terms found mean ${trueMean.toFixed(2)} of 4; ` +
          `counted strengths mean ${(runs.reduce((s, r) => s + r.stability.strengths.length, 0) / runs.length).toFixed(1)}`,
      );
    }
    expect(mean).toBeLessThanOrEqual(bound);
  });

  test("the counted strengths keep the average selection within q, it grows down the path, and the shares add up to at most its last value", () => {
    for (const { stability } of runs) {
      expect(stability.averageSelected.length).toBe(stability.strengths.length);
      for (const average of stability.averageSelected) expect(average).toBeLessThanOrEqual(stability.expectedTerms);
      // Nondecreasing down the path: each half's selection so far is a union.
      for (let k = 1; k < stability.averageSelected.length; k++) expect(stability.averageSelected[k]).toBeGreaterThanOrEqual(stability.averageSelected[k - 1]);
      // Σ_j share_j ≤ q̂ at the weakest counted strength (each half selecting j in Λ has j in its union there).
      const total = stability.share.reduce((a, b) => a + b, 0);
      expect(total).toBeLessThanOrEqual(stability.averageSelected[stability.averageSelected.length - 1] + 1e-12);
    }
  });
});

describe("shares", () => {
  // p = 30: default q = round(√24) = 5, so a half selects about 4 noise terms at the weakest counted
  // strength, spread over 29 noise columns (by symmetry about 4/29 ≈ 0.14 each on average).
  const random = new TestRandom(77);
  const n = 120;
  const p = 30;
  const x: number[][] = [];
  const y: number[] = [];
  for (let i = 0; i < n; i++) {
    const row = Array.from({ length: p }, () => random.normal());
    x.push(row);
    y.push(3 * row[0] + random.normal());
  }

  test("a dominant true term is selected by every half and stable; pure noise rarely", () => {
    const result = fit(x, y, { mixes: [1], stability: { draws: 20 } });
    const stability = result.stability as NonNullable<FitResult["stability"]>;
    // Common practice (the behaviour stability selection rests on, Meinshausen & Bühlmann 2010 §2):
    // a term far above the noise is selected by every half from near the top of the path.
    expect(stability.share[0]).toBe(1);
    expect(stability.stable[0]).toBe(true);
    // Noise: the shares add up to at most q̂ at the weakest counted strength (the inequality behind
    // Meinshausen & Bühlmann 2010, Theorem 1: a half selecting j anywhere in Λ has j in its union
    // there), so with the true term at 1 the noise columns average at most (q − 1)/(p − 1) = 4/29.
    // A single noise column can still run high (one correlating with y by chance in this sample
    // is picked by most halves), so each is checked only against the threshold.
    const noise = stability.share.slice(1);
    expect(noise.reduce((a, b) => a + b, 0) / noise.length).toBeLessThanOrEqual((stability.expectedTerms - 1) / (p - 1));
    expect(noise.reduce((a, b) => a + b, 0) / noise.length).toBeLessThan(0.3);
    for (let j = 1; j < p; j++) expect(stability.stable[j]).toBe(false);
    expect(stability.candidates).toBe(p);
    expect(stability.candidate).toEqual(new Array(p).fill(true));
    expect(stability.mix).toBe(1);
    expect(stability.seed).toBe(1); // the fit's seed by default
  });

  test("an unpenalized term is no candidate: share 1, not marked stable; a constant column: share 0", () => {
    const withConstant = x.map((row) => [...row, 4]);
    const multipliers = new Array(p + 1).fill(1);
    multipliers[1] = 0;
    const result = fit(withConstant, y, { mixes: [1], penaltyMultipliers: multipliers, stability: { draws: 5 } });
    const stability = result.stability as NonNullable<FitResult["stability"]>;
    expect(stability.candidates).toBe(p - 1);
    expect(stability.candidate?.[1]).toBe(false);
    expect(stability.share[1]).toBe(1);
    expect(stability.stable[1]).toBe(false);
    expect(stability.candidate?.[p]).toBe(false);
    expect(stability.share[p]).toBe(0);
    // Default q from the candidates: round(√(0.8·29)) = 5.
    expect(stability.expectedTerms).toBe(5);
  });

  test("ridge keeps every term: no halves fitted, shares 0, a warning", () => {
    let last = [0, 0];
    const result = fit(x, y, { mixes: [0], stability: { draws: 4 }, onProgress: (done, total) => (last = [done, total]) });
    expect(result.stability?.share.every((s) => s === 0)).toBe(true);
    expect(result.stability?.strengths).toEqual([]);
    expect(result.warnings.some((w) => w.code === "stability" && /ridge/.test(w.message))).toBe(true);
    expect(last[0]).toBe(last[1]);
  });
});

describe("agreement of two routes: the shares recounted with the public fit() at fixed strengths", () => {
  // Definitions as in Meinshausen & Bühlmann 2010 (§2.2 and Theorem 1) with complementary pairs
  // (Shah & Samworth 2013 §2): for each half, the union of the terms selected at each strength and
  // every larger one; q̂ = its average size; Λ = strengths with q̂ ≤ q; share = max over Λ.
  const random = new TestRandom(5);
  const n = 41; // odd: one row sits out of each draw
  const p = 6;
  const x: number[][] = [];
  const y: number[] = [];
  for (let i = 0; i < n; i++) {
    const row = Array.from({ length: p }, () => random.normal());
    x.push(row);
    y.push(1.2 * row[0] - 0.7 * row[1] + 0.3 * row[2] + random.normal());
  }
  const draws = 3;
  const q = 3;

  test.each(["residual", "gram"] as const)("%s updates", (updates) => {
    const options: FitOptions = { mixes: [0.8], folds: 4, strengthCount: 15, lowEndRatio: 1e-2, updates, stability: { draws, expectedTerms: q, seed: 9 } };
    const result = fit(x, y, options);
    const stability = result.stability as NonNullable<FitResult["stability"]>;
    const strengths = result.path.strengths;
    const halves = 2 * draws;
    const counts = strengths.map(() => new Array<number>(p).fill(0));
    const unionTotal = new Array<number>(strengths.length).fill(0);
    const all = Int32Array.from({ length: n }, (_, i) => i);
    for (let b = 0; b < draws; b++) {
      const pair = dealHalves(all, null, 9, b);
      expect(pair.a.length).toBe(20);
      expect(pair.b.length).toBe(20);
      expect(new Set([...pair.a, ...pair.b]).size).toBe(40);
      for (const rows of [pair.a, pair.b]) {
        const union = new Set<number>();
        strengths.forEach((strength, k) => {
          const half = fit(
            Array.from(rows, (i) => x[i]),
            Array.from(rows, (i) => y[i]),
            { mixes: [0.8], strength, updates },
          );
          half.coefficients.forEach((c, j) => {
            if (c !== 0) {
              counts[k][j]++;
              union.add(j);
            }
          });
          unionTotal[k] += union.size;
        });
      }
    }
    let counted = 0;
    while (counted < strengths.length && unionTotal[counted] / halves <= q) counted++;
    const share = new Array<number>(p).fill(0);
    for (let k = 0; k < counted; k++) for (let j = 0; j < p; j++) share[j] = Math.max(share[j], counts[k][j] / halves);
    expect(stability.strengths).toEqual(strengths.slice(0, counted));
    expect(stability.averageSelected).toEqual(unionTotal.slice(0, counted).map((t) => t / halves));
    expect(stability.share).toEqual(share);
    expect(stability.stable).toEqual(share.map((s) => s >= 0.75));
    expect(stability.falseSelectionBound).toBe((q * q) / ((2 * 0.75 - 1) * p)); // q²/((2π − 1)p), Meinshausen & Bühlmann 2010, Theorem 1
  });
});

describe("the half-sample draws", () => {
  test("complementary halves of ⌊m/2⌋ rows; stratified halves hold both classes evenly", () => {
    const eligible = Int32Array.from([0, 2, 3, 5, 6, 7, 8, 9, 11]);
    const { a, b } = dealHalves(eligible, null, 4, 0);
    expect(a.length).toBe(4);
    expect(b.length).toBe(4);
    const together = [...a, ...b];
    expect(new Set(together).size).toBe(8);
    for (const i of together) expect(Array.from(eligible)).toContain(i);
    const classes = [1, 0, 0, 1, 0, 0, 0, 0, 0, 1, 0, 1];
    const rows = Int32Array.from({ length: 12 }, (_, i) => i);
    for (let draw = 0; draw < 20; draw++) {
      const pair = dealHalves(rows, classes, 3, draw);
      const events = (half: Int32Array) => Array.from(half).filter((i) => classes[i] === 1).length;
      expect(events(pair.a)).toBe(2);
      expect(events(pair.b)).toBe(2);
    }
  });

  test("a draw depends on the seed and its number only", () => {
    const rows = Int32Array.from({ length: 50 }, (_, i) => i);
    expect(dealHalves(rows, null, 1, 3)).toEqual(dealHalves(rows, null, 1, 3));
    expect(dealHalves(rows, null, 1, 3)).not.toEqual(dealHalves(rows, null, 1, 4));
    expect(dealHalves(rows, null, 2, 3)).not.toEqual(dealHalves(rows, null, 1, 3));
    expect(drawSeed(1, 0)).not.toBe(drawSeed(1 + 4294967296, 0)); // the seed's high bits count too
  });
});

describe("reproducible and unit-free", () => {
  const random = new TestRandom(31);
  const n = 80;
  const p = 10;
  const x: number[][] = [];
  const y: number[] = [];
  const weights: number[] = [];
  for (let i = 0; i < n; i++) {
    const row = Array.from({ length: p }, () => random.normal());
    x.push(row);
    y.push(row[0] - 0.6 * row[3] + 0.4 * row[5] + random.normal());
    weights.push(0.5 + random.uniform());
  }
  const options: FitOptions = { mixes: [0.5, 1], folds: 5, stability: { draws: 8 }, weights };

  test("the same seed gives bit-identical results; another stability seed other draws", () => {
    const first = fit(x, y, options).stability;
    const second = fit(x, y, options).stability;
    expect(second).toEqual(first);
    const other = fit(x, y, { ...options, stability: { draws: 8, seed: 12345 } }).stability;
    expect(other?.seed).toBe(12345);
    expect(other?.averageSelected).not.toEqual(first?.averageSelected);
  });

  test("unchanged by each column's units and offset, the target's, and the weights' scale (common practice: λ is unit-free, fit.ts)", () => {
    const base = fit(x, y, options).stability;
    const factors = [3.7, -0.02, 1e4, 1, -250, 0.5, 7, -1, 1e-3, 42];
    const offsets = [100, -3, 1e5, 0, 7, -1e3, 2, 50, 0.1, -9];
    const moved = x.map((row) => row.map((v, j) => v * factors[j] + offsets[j]));
    const changed = fit(
      moved,
      y.map((v) => 1000 * v - 17),
      { ...options, weights: weights.map((w) => w * 1000) },
    ).stability;
    expect(changed?.share).toEqual(base?.share);
    expect(changed?.stable).toEqual(base?.stable);
    expect(changed?.strengths.length).toBe(base?.strengths.length);
  });
});

describe("two-class outcomes", () => {
  const random = new TestRandom(8);
  const n = 200;
  const p = 8;
  const x: number[][] = [];
  const y: number[] = [];
  for (let i = 0; i < n; i++) {
    const row = Array.from({ length: p }, () => random.normal());
    x.push(row);
    const eta = -0.3 + 2.5 * row[0];
    y.push(random.uniform() < 1 / (1 + Math.exp(-eta)) ? 1 : 0);
  }

  test("a dominant term is stable, noise is not; progress ends at its total", () => {
    let last = [0, 0];
    const result = fit(x, y, { outcome: "two-class", mixes: [1], folds: 5, stability: { draws: 10 }, onProgress: (done, total) => (last = [done, total]) });
    const stability = result.stability as NonNullable<FitResult["stability"]>;
    expect(stability.share[0]).toBe(1);
    expect(stability.stable[0]).toBe(true);
    for (let j = 1; j < p; j++) expect(stability.share[j]).toBeLessThan(0.5);
    expect(last).toEqual([1 * (5 + 1) + 20, 1 * (5 + 1) + 20]); // one path + 5 folds, then 2B = 20 halves
    expect(fit(x, y, { outcome: "two-class", mixes: [1], folds: 5, stability: { draws: 10 } }).stability).toEqual(stability);
  });
});

describe("settings, progress and cancel", () => {
  const random = new TestRandom(2);
  const x: number[][] = [];
  const y: number[] = [];
  for (let i = 0; i < 60; i++) {
    const row = Array.from({ length: 5 }, () => random.normal());
    x.push(row);
    y.push(row[0] + random.normal());
  }

  test.each([
    [{ draws: 0 }, /draws must be a whole number from 1 to 1000/],
    [{ draws: 2.5 }, /draws must be a whole number/],
    [{ threshold: 0.5 }, /strictly between 0.5 and 1/],
    [{ threshold: 1 }, /strictly between 0.5 and 1/],
    [{ expectedTerms: 0 }, /q .* whole number of 1 or more/],
    [{ expectedTerms: 6 }, /q .* is 6, more than the 5 terms that can be selected/],
  ])("%p is refused", (stability, message) => {
    expect(() => fit(x, y, { mixes: [1], stability })).toThrow(InputError);
    expect(() => fit(x, y, { mixes: [1], stability })).toThrow(message);
  });

  test("a fixed strength with stability selection is refused, saying what to do", () => {
    expect(() => fit(x, y, { mixes: [1], strength: 0.1, stability: {} })).toThrow(/remove the fixed strength/);
  });

  test("progress counts the 2B halves and ends exactly at its total", () => {
    const seen: [number, number][] = [];
    fit(x, y, { mixes: [0.5, 1], folds: 4, stability: { draws: 6 }, onProgress: (done, total) => seen.push([done, total]) });
    const total = 2 * (4 + 1) + 12;
    expect(seen.length).toBe(total);
    seen.forEach(([done, t], k) => {
      expect(t).toBe(total);
      expect(done).toBe(k + 1);
    });
  });

  test("with repeats and the honest error too, progress still runs one by one to its total", () => {
    const seen: [number, number][] = [];
    const result = fit(x, y, { mixes: [1], folds: 4, repeats: 2, honestError: true, stability: { draws: 3 }, onProgress: (done, total) => seen.push([done, total]) });
    expect(result.stability?.draws).toBe(3);
    const total = seen[0][1];
    seen.forEach(([done, t], k) => {
      expect(t).toBe(total);
      expect(done).toBe(k + 1);
    });
    expect(seen[seen.length - 1][0]).toBe(total);
  });

  test("cancel during the half-sample fits throws CancelledError", () => {
    const signal = { aborted: false };
    const main = 1 * (4 + 1);
    expect(() =>
      fit(x, y, {
        mixes: [1],
        folds: 4,
        stability: { draws: 10 },
        signal,
        onProgress: (done) => {
          if (done === main + 3) signal.aborted = true;
        },
      }),
    ).toThrow(CancelledError);
  });
});

describe("the solving depth changes the cost, never the result", () => {
  // A stand-in for the half fits (no solver): term j is selected by a half from strength index
  // enter(j, rows) on, and term 4 only at odd indices (a term can leave the path: the union counts it).
  const K = 12;
  const p = 5;
  const enter = (j: number, rows: Int32Array): number => (j * 2 + rows[0] + rows[1]) % K;
  function run(firstDepth: number | undefined, expectedTerms: number): { result: StabilityResult; halves: number; solved: number } {
    let halves = 0;
    let solved = 0;
    const input: StabilityInput = {
      settings: { draws: 4, expectedTerms, threshold: 0.75, seed: 3, candidates: p },
      mix: 1,
      strengths: Array.from({ length: K }, (_, k) => 2 ** -k),
      candidate: new Array(p).fill(true),
      unpenalized: new Array(p).fill(false),
      eligible: Int32Array.from({ length: 21 }, (_, i) => i),
      strata: null,
      fitHalf: (rows): HalfPath => ({
        at: (k) => {
          solved++;
          return Array.from({ length: p }, (_, j) => (j === 4 ? k % 2 : k >= enter(j, rows) ? 1 : 0));
        },
        converged: () => true,
      }),
      onHalf: () => halves++,
      firstDepth,
    };
    const warnings: FitWarning[] = [];
    const steps = stabilitySelection(input, warnings);
    for (;;) {
      const step = steps.next();
      if (step.done) return { result: step.value, halves, solved };
    }
  }
  test.each([1, 2, 3, 5])("q = %i", (q) => {
    const whole = run(undefined, q);
    for (const depth of [1, 2, 5, K]) {
      const shallow = run(depth, q);
      expect(shallow.result).toEqual(whole.result);
      expect(shallow.halves).toBe(8); // one progress unit per half, whatever the passes
    }
    expect(run(1, q).result.strengths.length).toBeGreaterThan(0);
  });
});

describe("no strength counts", () => {
  test("when the halves select more than q terms even at the top: shares 0 and a warning to raise q", () => {
    const warnings: FitWarning[] = [];
    const steps = stabilitySelection(
      {
        settings: { draws: 3, expectedTerms: 1, threshold: 0.75, seed: 1, candidates: 4 },
        mix: 1,
        strengths: [1, 0.5, 0.25],
        candidate: [true, true, true, true],
        unpenalized: [false, false, false, false],
        eligible: Int32Array.from({ length: 10 }, (_, i) => i),
        strata: null,
        fitHalf: () => ({ at: () => [1, 1, 0, 0], converged: () => true }),
        onHalf: () => undefined,
      },
      warnings,
    );
    let step = steps.next();
    while (!step.done) step = steps.next();
    expect(step.value.strengths).toEqual([]);
    expect(step.value.share).toEqual([0, 0, 0, 0]);
    expect(step.value.stable).toEqual([false, false, false, false]);
    expect(warnings.map((w) => w.code)).toEqual(["stability"]);
    expect(warnings[0].message).toMatch(/raise q/);
  });

  test("rows of weight 0 take no part: appending some leaves the result as it was", () => {
    const random = new TestRandom(12);
    const x: number[][] = [];
    const y: number[] = [];
    for (let i = 0; i < 60; i++) {
      const row = Array.from({ length: 6 }, () => random.normal());
      x.push(row);
      y.push(row[0] - row[1] + random.normal());
    }
    const options: FitOptions = { mixes: [1], folds: 5, stability: { draws: 6 } };
    const base = fit(x, y, { ...options, weights: new Array(60).fill(1) }).stability;
    const extra = fit([...x, [1e6, -1e6, 3, 3, 3, 3], [0, 0, 0, 0, 0, 0]], [...y, 1e9, -4], { ...options, weights: [...new Array(60).fill(1), 0, 0] }).stability;
    // The full-data path's strengths may move in the last bit (the main fit's sums run over the
    // extra rows too); the draws (over rows of positive weight only) and the selections do not.
    expect(extra?.share).toEqual(base?.share);
    expect(extra?.averageSelected).toEqual(base?.averageSelected);
    expect(extra?.strengths.length).toBe(base?.strengths.length);
    extra?.strengths.forEach((strength, k) => expect(Math.abs(strength / (base?.strengths[k] ?? NaN) - 1)).toBeLessThan(1e-14));
  });
});
