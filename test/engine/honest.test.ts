/**
 * Honest error by nested cross-validation (FitOptions.honestError; engine/honest.ts):
 * - on pure noise (y independent of X) the honest MSE is near the target's variance, while the
 *   optimistic CV minimum, being the lowest of many noisy estimates, sits below the honest one on
 *   average (Varma & Simon 2006, BMC Bioinformatics 7:91: CV error at the selected point is biased
 *   low, nested CV nearly unbiased; ESL 2nd ed. §7.10.2);
 * - agreement of two routes: a hand-rolled nested loop (the outer deal from planFolds with the
 *   documented seed, fit() on each outer training part, predict() on its held-out rows) gives the
 *   same honest error, number and two-class;
 * - bit-identical for the same seed; units, offsets and weight scale don't matter;
 * - progress counts the inner fits and ends at the total; a cancel lands inside a nested fit;
 * - InputErrors: fixed strength, an outer training part too small for the inner folds.
 */
import { fit, FitOptions } from "../../engine/fit";
import { CancelledError, InputError } from "../../engine/errors";
import { planFolds, rowsOfBlocks } from "../../engine/folds";
import { predict } from "../../engine/model";
import { binomialDeviance } from "../../engine/classMetrics";
import { HONEST_SEED_OFFSET } from "../../engine/honest";
import { TestRandom } from "../helpers/random";

function data(n: number, p: number, seed: number, kind: "noise" | "signal" | "two-class"): { x: number[][]; y: number[] } {
  const random = new TestRandom(seed);
  const x: number[][] = [];
  const y: number[] = [];
  for (let i = 0; i < n; i++) {
    const row = Array.from({ length: p }, () => random.normal());
    x.push(row);
    const eta = 1.2 * row[0] - row[1];
    if (kind === "noise") y.push(5 + 2 * random.normal());
    else if (kind === "signal") y.push(5 + eta + random.normal());
    else y.push(random.uniform() < 1 / (1 + Math.exp(-eta)) ? 1 : 0);
  }
  return { x, y };
}

function relative(a: number, b: number): number {
  return Math.abs(a - b) / Math.max(Math.abs(a), Math.abs(b), 1e-300);
}

test("pure noise: honest MSE near the target's variance, the optimistic minimum below it on average (Varma & Simon 2006; ESL §7.10.2)", () => {
  let honestRatio = 0;
  let gap = 0;
  const seeds = [1, 2, 3, 4, 5];
  for (const seed of seeds) {
    const { x, y } = data(80, 20, 100 + seed, "noise");
    const result = fit(x, y, { honestError: true, seed, mixes: [0, 0.5, 1], gridDensity: 10 });
    const honest = result.honest;
    expect(honest).toBeTruthy();
    if (!honest) return;
    // The target's sample variance: the MSE of predicting by the mean (noise SD 2, variance 4).
    const mean = y.reduce((a, b) => a + b, 0) / y.length;
    const variance = y.reduce((a, b) => a + (b - mean) * (b - mean), 0) / (y.length - 1);
    honestRatio += honest.error / variance / seeds.length;
    gap += (honest.error - honest.optimistic) / seeds.length;
    expect(honest.optimistic).toBe(result.choices?.lowest.error);
    expect(honest.perFold.length).toBe(10);
    expect(honest.folds).toBe(10);
    expect(honest.se).toBeGreaterThan(0);
  }
  // Generous: out-of-sample error of any procedure on noise is at least the variance (up to noise
  // in the estimate) and a sound one doesn't blow it up.
  expect(honestRatio).toBeGreaterThan(0.85);
  expect(honestRatio).toBeLessThan(1.5);
  expect(gap).toBeGreaterThan(0);
});

describe("agreement of two routes: a hand-rolled nested loop with fit() and predict()", () => {
  test("number outcome, weighted, mse and mae, lowest and one-se", () => {
    const { x, y } = data(60, 6, 7, "signal");
    const random = new TestRandom(8);
    const weights = y.map(() => 0.5 + random.uniform());
    for (const [measure, rule] of [
      ["mse", "lowest"],
      ["mae", "one-se"],
    ] as const) {
      const options: FitOptions = { mixes: [0.5, 1], folds: 4, seed: 3, gridDensity: 10, weights, measure, rule };
      const result = fit(x, y, { ...options, honestError: true });
      const outer = planFolds(60, Float64Array.from(weights), { scheme: "random", folds: 4, seed: 3 + HONEST_SEED_OFFSET, labels: null });
      const errors: number[] = [];
      const foldWeights: number[] = [];
      for (let k = 0; k < 4; k++) {
        const train = Array.from(rowsOfBlocks(outer, outer.trainBlocks[k]));
        const held = Array.from(outer.blocks[outer.validateBlock[k]]);
        const inner = fit(
          train.map((i) => x[i]),
          train.map((i) => y[i]),
          { ...options, weights: train.map((i) => weights[i]) },
        );
        const predictions = predict(inner.model, held.map((i) => x[i]));
        let loss = 0;
        let total = 0;
        held.forEach((i, t) => {
          const e = y[i] - predictions[t];
          loss += weights[i] * (measure === "mse" ? e * e : Math.abs(e));
          total += weights[i];
        });
        errors.push(loss / total);
        foldWeights.push(total);
        expect(result.honest?.perFold[k].strength).toBe(inner.strength);
        expect(result.honest?.perFold[k].mix).toBe(inner.mix);
        expect(relative(result.honest?.perFold[k].weight ?? NaN, total)).toBeLessThanOrEqual(1e-14);
      }
      const W = foldWeights.reduce((a, b) => a + b, 0);
      const mean = errors.reduce((a, e, k) => a + foldWeights[k] * e, 0) / W;
      const v = errors.reduce((a, e, k) => a + foldWeights[k] * (e - mean) * (e - mean), 0) / W;
      // The SE formula of the CV curve (engine/fit.ts summarise).
      const se = Math.sqrt((v * 4) / 3 / 4);
      expect(relative(result.honest?.error ?? NaN, mean)).toBeLessThanOrEqual(1e-10);
      expect(relative(result.honest?.se ?? NaN, se)).toBeLessThanOrEqual(1e-10);
      const chosen = rule === "lowest" ? result.choices?.lowest : result.choices?.oneSe;
      expect(result.honest?.optimistic).toBe(chosen?.error);
    }
  });

  test("two-class outcome, deviance (stratified outer folds)", () => {
    const { x, y } = data(90, 4, 9, "two-class");
    const options: FitOptions = { outcome: "two-class", mixes: [1], folds: 3, seed: 5, gridDensity: 8 };
    const result = fit(x, y, { ...options, honestError: true });
    const outer = planFolds(90, null, { scheme: "random", folds: 3, seed: 5 + HONEST_SEED_OFFSET, labels: null, strata: y });
    const errors: number[] = [];
    const sizes: number[] = [];
    for (let k = 0; k < 3; k++) {
      const train = Array.from(rowsOfBlocks(outer, outer.trainBlocks[k]));
      const held = Array.from(outer.blocks[outer.validateBlock[k]]);
      const inner = fit(
        train.map((i) => x[i]),
        train.map((i) => y[i]),
        options,
      );
      // Deviance per row from probabilities (classMetrics binomialDeviance), another route than the log-odds one the engine uses.
      errors.push(binomialDeviance(held.map((i) => y[i]), predict(inner.model, held.map((i) => x[i]))));
      sizes.push(held.length);
    }
    const mean = errors.reduce((a, e, k) => a + sizes[k] * e, 0) / 90;
    expect(relative(result.honest?.error ?? NaN, mean)).toBeLessThanOrEqual(1e-10);
    expect(result.honest?.measure).toBe("deviance");
  });
});

test("two-class AUC: between 0.5 and 1 on data with signal, optimistic not below the honest AUC on average (higher is better; Varma & Simon 2006)", () => {
  let gap = 0;
  for (const seed of [1, 2, 3]) {
    const { x, y } = data(120, 8, 200 + seed, "two-class");
    const result = fit(x, y, { outcome: "two-class", measure: "auc", mixes: [1], folds: 5, seed, gridDensity: 8, honestError: true });
    const honest = result.honest;
    expect(honest?.error).toBeGreaterThan(0.5);
    expect(honest?.error).toBeLessThanOrEqual(1);
    gap += ((honest?.optimistic ?? NaN) - (honest?.error ?? NaN)) / 3;
  }
  expect(gap).toBeGreaterThan(-0.02);
});

test("same inputs and seed: bit-identical (common practice), repeats included", () => {
  const { x, y } = data(50, 5, 10, "signal");
  const options: FitOptions = { mixes: [1], folds: 4, seed: 2, gridDensity: 8, honestError: true, repeats: 2 };
  const a = fit(x, y, options);
  expect(fit(x, y, options)).toEqual(a);
  expect(a.honest?.perFold.length).toBe(4);
});

test("unit-free: a column × 1e6 + 1e9 and weights × 1000 give the same honest error (the unit-free contract, engine/fit.ts)", () => {
  const { x, y } = data(60, 5, 11, "signal");
  const random = new TestRandom(12);
  const w = y.map(() => 0.2 + random.uniform());
  const options: FitOptions = { mixes: [0.5, 1], folds: 4, seed: 6, gridDensity: 10, honestError: true };
  const base = fit(x, y, { ...options, weights: w });
  const moved = fit(
    x.map((row) => row.map((v, j) => (j === 0 ? v * 1e6 + 1e9 : v))),
    y,
    { ...options, weights: w.map((v) => v * 1000) },
  );
  // The solvers stop inside their convergence bands (~1e-9 relative).
  expect(relative(moved.honest?.error ?? NaN, base.honest?.error ?? NaN)).toBeLessThan(1e-8);
  expect(relative(moved.honest?.se ?? NaN, base.honest?.se ?? NaN)).toBeLessThan(1e-8);
  moved.honest?.perFold.forEach((fold, k) => {
    expect(fold.termsKept).toBe(base.honest?.perFold[k].termsKept);
    expect(relative(fold.weight, (base.honest?.perFold[k].weight ?? NaN) * 1000)).toBeLessThan(1e-12);
  });
});

test("fold labels and time order: the outer folds are the labels / time blocks (Varma & Simon 2006; common practice for grouped and time-ordered data)", () => {
  const { x, y } = data(120, 4, 13, "signal");
  const labels = y.map((_, i) => `g${i % 5}`);
  const grouped = fit(x, y, { foldLabels: labels, mixes: [1], gridDensity: 8, honestError: true });
  expect(grouped.honest?.folds).toBe(5);
  const timed = fit(x, y, { timeOrdered: true, folds: 3, mixes: [1], gridDensity: 8, honestError: true });
  expect(timed.honest?.folds).toBe(3);
  expect(timed.honest?.perFold.every((fold) => Number.isFinite(fold.error))).toBe(true);
});

describe("progress and cancel", () => {
  const { x, y } = data(60, 5, 14, "signal");
  test("the total counts every inner fit's units up front; monotone; ends exactly at the total", () => {
    const seen: [number, number][] = [];
    fit(x, y, { mixes: [0, 1], folds: 4, gridDensity: 8, honestError: true, onProgress: (done, total) => seen.push([done, total]) });
    const cv = 2 * (4 + 1);
    const total = cv + 4 * cv;
    expect(seen.every(([, t]) => t === total)).toBe(true);
    for (let k = 1; k < seen.length; k++) expect(seen[k][0]).toBeGreaterThan(seen[k - 1][0]);
    expect(seen[seen.length - 1][0]).toBe(total);
  });
  test("a cancel raised inside a nested fit stops it there", () => {
    const signal = { aborted: false };
    let last = 0;
    let calls = 0;
    expect(() =>
      fit(x, y, {
        mixes: [0, 1],
        folds: 4,
        gridDensity: 8,
        honestError: true,
        signal,
        onProgress: (done) => {
          calls++;
          last = done;
          if (done === 17) signal.aborted = true;
        },
      }),
    ).toThrow(CancelledError);
    expect(last).toBe(17);
    expect(calls).toBe(17);
  });
});

describe("InputErrors that say what to change", () => {
  const { x, y } = data(30, 3, 15, "signal");
  test("a fixed strength has no procedure to assess", () => {
    expect(() => fit(x, y, { strength: 0.1, mixes: [1], honestError: true })).toThrow(/fixed strength chooses nothing/);
  });
  test("an outer training part too small for the inner folds names the outer fold", () => {
    // 10 outer folds of 20 rows leave 18 training rows, and 10 inner random folds need 20 (2 per fold).
    const small = data(20, 3, 16, "signal");
    let caught: unknown = null;
    try {
      fit(small.x, small.y, { folds: 10, mixes: [1], honestError: true });
    } catch (error) {
      caught = error;
    }
    expect(caught).toBeInstanceOf(InputError);
    expect(String((caught as Error).message)).toMatch(/outer fold \d+/);
    expect(String((caught as Error).message)).toMatch(/fewer folds/);
  });
  test("honest error must be yes or no", () => {
    expect(() => fit(x, y, { honestError: "yes" as unknown as boolean })).toThrow(InputError);
  });
});
