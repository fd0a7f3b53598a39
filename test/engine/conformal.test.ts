/**
 * CV+ prediction intervals (Barber, Candès, Ramdas & Tibshirani 2021, "Predictive inference with
 * the jackknife+", Annals of Statistics 49(1), the K-fold CV+ interval):
 * - the quantile indexing against a hand-worked example (worked out below, by hand);
 * - selection against a full sort (two routes to the k-th smallest);
 * - the fold models the fit keeps against refits of each fold's training rows at the chosen mix
 *   and strength (two routes), for coordinate descent (row and gram forms) and exact ridge;
 * - held-out residuals against the kept fold models' predictions;
 * - bit-identical intervals for the same seed, and the refusals.
 */
import { cvPlusIntervals, kthSmallest, lowerRank, predictionIntervals, FoldModel } from "../../engine/conformal";
import { fit, FitOptions, FitResult } from "../../engine/fit";
import { fromRows } from "../../engine/matrix";
import { CancelledError, InputError } from "../../engine/errors";
import { TestRandom } from "../helpers/random";

describe("quantile indexing, by hand", () => {
  // Three fold models μ̂₋ₖ(x) = intercept + 1·x; the new row is x = 2, so μ = 12, 14, 13.
  const models: FoldModel[] = [
    { intercept: 10, coefficients: [1] },
    { intercept: 12, coefficients: [1] },
    { intercept: 11, coefficients: [1] },
  ];
  const folds = [0, 0, 0, 1, 1, 1, 2, 2, 2];
  const residuals = [1, -2, 3, 0.5, 4, -1, 2, 2.5, -0.25];
  const x = fromRows([[2]]);
  // μ − R sorted: 9, 10, 10, 10.5, 11, 11, 12.75, 13, 13.5
  // μ + R sorted: 13, 13.25, 14, 14.5, 15, 15, 15, 15.5, 18        (n = 9, n + 1 = 10)
  const cases: [number, number, number][] = [
    // level, low = ⌊α·10⌋-th smallest of μ − R, high = ⌈(1−α)·10⌉-th smallest of μ + R
    [0.9, 9, 18], // α·10 = 1 (exactly, though 1 − 0.9 is 0.0999… in doubles): 1st and 9th
    [0.85, 9, 18], // 1.5 → 1st; ⌈8.5⌉ = 9th
    [0.8, 10, 15.5], // 2nd; 8th
    [0.7, 10, 15], // 3rd; 7th
    [0.5, 11, 15], // 5th; 5th
  ];
  test.each(cases)("level %p gives [%p, %p]", (level, low, high) => {
    const out = cvPlusIntervals(models, folds, residuals, x, level);
    expect(out.low[0]).toBe(low);
    expect(out.high[0]).toBe(high);
  });
  test("⌊α(n+1)⌋ < 1: unbounded on both sides", () => {
    // level 0.95: α·10 = 0.5 → rank 0; level 0.9 with n = 8: α·9 = 0.9 → rank 0.
    const out = cvPlusIntervals(models, folds, residuals, x, 0.95);
    expect(out.low[0]).toBe(-Infinity);
    expect(out.high[0]).toBe(Infinity);
    const eight = cvPlusIntervals(models, folds.slice(0, 8), residuals.slice(0, 8), x, 0.9);
    expect(eight.low[0]).toBe(-Infinity);
    expect(eight.high[0]).toBe(Infinity);
  });
  test("the rank ⌊α(n+1)⌋ at exact multiples despite decimal rounding", () => {
    expect(lowerRank(9, 0.9)).toBe(1);
    expect(lowerRank(19, 0.95)).toBe(1);
    expect(lowerRank(99, 0.9)).toBe(10);
    expect(lowerRank(98, 0.9)).toBe(9);
    expect(lowerRank(18, 0.95)).toBe(0);
    expect(lowerRank(4, 0.8)).toBe(1);
  });
  test("levels outside (0, 1) are refused", () => {
    for (const level of [0, 1, 1.5, -0.1, NaN, 90]) {
      expect(() => cvPlusIntervals(models, folds, residuals, x, level)).toThrow(/strictly between 0 and 1/);
    }
  });
});

test("selection agrees with a full sort (ties included)", () => {
  const random = new TestRandom(7);
  for (let trial = 0; trial < 200; trial++) {
    const n = 1 + random.integer(60);
    const values = Float64Array.from({ length: n }, () => (random.uniform() < 0.3 ? random.integer(4) : random.normal()));
    const sorted = Float64Array.from(values).sort();
    const k = 1 + random.integer(n);
    expect(kthSmallest(Float64Array.from(values), n, k)).toBe(sorted[k - 1]);
  }
});

function linearData(n: number, p: number, seed: number): { x: number[][]; y: number[] } {
  const random = new TestRandom(seed);
  const beta = Array.from({ length: p }, (_, j) => (j < 3 ? 2 - j : 0));
  const x: number[][] = [];
  const y: number[] = [];
  for (let i = 0; i < n; i++) {
    const row = Array.from({ length: p }, () => random.normal());
    x.push(row);
    y.push(5 + row.reduce((s, v, j) => s + v * beta[j], 0) + random.normal());
  }
  return { x, y };
}

/** Every fold model against a refit of that fold's training rows at the chosen mix and strength. */
function checkFoldModels(result: FitResult, x: number[][], y: number[], options: FitOptions, tolerance: number): void {
  const models = result.foldModels as FoldModel[];
  const held = result.heldOut as { row: number[]; fold: number[]; residual: number[] };
  expect(models).toHaveLength(result.cv?.folds ?? -1);
  expect([...held.row].sort((a, b) => a - b)).toEqual(x.map((_, i) => i));
  for (let k = 0; k < models.length; k++) {
    const heldOut = new Set(held.row.filter((_, t) => held.fold[t] === k));
    const train = x.map((_, i) => i).filter((i) => !heldOut.has(i));
    const refit = fit(
      train.map((i) => x[i]),
      train.map((i) => y[i]),
      { ...options, mixes: [result.mix], strength: result.strength, folds: undefined, seed: undefined },
    );
    const scale = Math.max(1, ...refit.coefficients.map(Math.abs));
    expect(Math.abs(models[k].intercept - refit.intercept)).toBeLessThan(tolerance * Math.max(1, Math.abs(refit.intercept)));
    for (let j = 0; j < refit.coefficients.length; j++) {
      expect(Math.abs(models[k].coefficients[j] - refit.coefficients[j])).toBeLessThan(tolerance * scale);
    }
  }
  // Held-out residuals are y − the fold model's prediction.
  for (let t = 0; t < held.row.length; t++) {
    const i = held.row[t];
    const model = models[held.fold[t]];
    const prediction = model.intercept + model.coefficients.reduce((s, b, j) => s + b * x[i][j], 0);
    expect(Math.abs(held.residual[t] - (y[i] - prediction))).toBeLessThan(1e-9 * Math.max(1, Math.abs(y[i])));
  }
}

describe("the fold models the fit keeps are the fold fits at the chosen point (refits as a second route)", () => {
  // Solver tolerance 1e-12 on both routes: the fold fit and the refit solve the same problem
  // (a fold's problem is built from its training rows, or their sums); 1e-7 covers stopping points.
  const base: FitOptions = { tolerance: 1e-12, folds: 5, seed: 3 };
  test("elastic net, row updates, several mixes, lowest rule", () => {
    const { x, y } = linearData(80, 6, 1);
    const options: FitOptions = { ...base, mixes: [0.25, 0.5, 1], updates: "residual" };
    const result = fit(x, y, options);
    // A later mix than the first is chosen here, so the kept fold paths were replaced on the way.
    expect(result.mix).not.toBe(0.25);
    checkFoldModels(result, x, y, options, 1e-7);
  });
  test("lasso, gram updates, one-se rule", () => {
    const { x, y } = linearData(90, 5, 2);
    const options: FitOptions = { ...base, mixes: [1], updates: "gram", rule: "one-se" };
    const result = fit(x, y, options);
    expect(result.rule).toBe("one-se");
    checkFoldModels(result, x, y, options, 1e-7);
  });
  test("exact ridge with more predictors than rows (kernel form)", () => {
    const { x, y } = linearData(30, 45, 3);
    const options: FitOptions = { ...base, mixes: [0], exactRidge: true, updates: "residual" };
    checkFoldModels(fit(x, y, options), x, y, options, 1e-7);
  });
});

test("weight-0 rows are not among the held-out rows; the intervals count each other row once", () => {
  const { x, y } = linearData(60, 4, 4);
  const weights = y.map((_, i) => (i % 7 === 0 ? 0 : 1 + (i % 3)));
  const result = fit(x, y, { weights, folds: 5 });
  const held = result.heldOut as { row: number[] };
  expect(held.row.length).toBe(weights.filter((w) => w > 0).length);
  expect(held.row.every((i) => weights[i] > 0)).toBe(true);
});

test("same seed: bit-identical intervals; another fold seed: different ones", () => {
  const { x, y } = linearData(70, 5, 5);
  const fresh = fromRows(linearData(10, 5, 6).x);
  const a = predictionIntervals(fit(x, y, { seed: 11 }), fresh, 0.9);
  const b = predictionIntervals(fit(x, y, { seed: 11 }), fresh, 0.9);
  const c = predictionIntervals(fit(x, y, { seed: 12 }), fresh, 0.9);
  expect(Array.from(a.low)).toEqual(Array.from(b.low));
  expect(Array.from(a.high)).toEqual(Array.from(b.high));
  expect(Array.from(a.low)).not.toEqual(Array.from(c.low));
});

test("the interval loop reads the cancel signal", () => {
  const { x, y } = linearData(60, 4, 10);
  const result = fit(x, y, { folds: 5 });
  expect(() => predictionIntervals(result, fromRows([[0, 0, 0, 0]]), 0.9, { aborted: true })).toThrow(CancelledError);
});

describe("refusals", () => {
  test("a yes/no model", () => {
    const { x, y } = linearData(60, 3, 8);
    const result = fit(x, y.map((v) => (v > 5 ? 1 : 0)), { outcome: "two-class" });
    expect(result.foldModels ?? null).toBeNull();
    expect(() => predictionIntervals(result, fromRows([[0, 0, 0]]), 0.9)).toThrow(new InputError("setting", "prediction intervals are for number targets; a yes/no model gives probabilities: remove the interval setting"));
  });
  test("a fixed strength, time-ordered folds", () => {
    const { x, y } = linearData(60, 3, 9);
    expect(() => predictionIntervals(fit(x, y, { mixes: [1], strength: 0.1 }), fromRows([[0, 0, 0]]), 0.9)).toThrow(/fixed strength skips cross-validation/);
    expect(() => predictionIntervals(fit(x, y, { timeOrdered: true }), fromRows([[0, 0, 0]]), 0.9)).toThrow(/time-ordered folds/);
  });
});
