/**
 * Cross-validation (common practice: Hastie, Tibshirani & Friedman, ESL 2nd ed. §7.10; one-SE rule
 * from Breiman, Friedman, Olshen & Stone 1984, CART): errors recomputed independently by refitting
 * each fold's training rows at a fixed strength and scoring its held-out rows, fold assignments
 * rebuilt from their documented definitions, the choice rules checked against the CV table.
 *
 * Tolerance 1e-8 relative for recomputed CV errors: both sides solve the same strictly convex
 * problems (α < 1, or lasso with n > p), run here with solver tolerance 1e-12, so the only
 * differences are the solvers' stopping points and summation order (~1e-11); 1e-8 leaves margin
 * while a wrong row, fold or weight changes the error in the 2nd-3rd digit.
 */
import fc from "fast-check";
import { fit, FitOptions, FitResult } from "../../engine/fit";
import { planFolds } from "../../engine/folds";
import { randomFolds } from "../../engine/random";
import { expectRelative } from "../helpers/numeric";
import { makeProblem, Problem } from "../helpers/problems";
import { TestRandom } from "../helpers/random";

const TOLERANCE = 1e-8;
const SOLVER_TOLERANCE = 1e-12;

/**
 * Mulberry32 written out from its description in engine/random.ts (state += 0x6D2B79F5, then two
 * xor-shift-multiply rounds, output / 2³²), and the documented fold assignment: Fisher–Yates
 * shuffle of 0..n−1 driven by it (i from n−1 down to 1, k = floor(u·(i+1))), then the row at
 * shuffled position t goes to fold t mod K.
 */
function documentedRandomFolds(rows: number, folds: number, seed: number): number[] {
  let state = seed >>> 0;
  const next = (): number => {
    state = (state + 0x6d2b79f5) >>> 0;
    let t = state;
    t = Math.imul(t ^ (t >>> 15), t | 1);
    t ^= t + Math.imul(t ^ (t >>> 7), t | 61);
    return ((t ^ (t >>> 14)) >>> 0) / 4294967296;
  };
  const order = Array.from({ length: rows }, (_, i) => i);
  for (let i = rows - 1; i > 0; i--) {
    const k = Math.floor(next() * (i + 1));
    [order[i], order[k]] = [order[k], order[i]];
  }
  const labels = new Array<number>(rows);
  order.forEach((row, t) => (labels[row] = t % folds));
  return labels;
}

interface Split {
  train: number[];
  test: number[];
}

function splitsFromLabels(labels: readonly (number | string)[]): Split[] {
  const order: (number | string)[] = [];
  for (const label of labels) if (!order.includes(label)) order.push(label);
  return order.map((label) => ({
    train: labels.flatMap((l, i) => (l === label ? [] : [i])),
    test: labels.flatMap((l, i) => (l === label ? [i] : [])),
  }));
}

/** Documented time-ordered plan (engine/folds.ts): K + 1 contiguous blocks, fold k trains on all earlier blocks. */
function timeSplits(rows: number, folds: number): Split[] {
  const edge = (b: number): number => Math.floor((b * rows) / (folds + 1));
  const out: Split[] = [];
  for (let k = 1; k <= folds; k++) {
    out.push({
      train: Array.from({ length: edge(k) }, (_, i) => i),
      test: Array.from({ length: edge(k + 1) - edge(k) }, (_, i) => edge(k) + i),
    });
  }
  return out;
}

/**
 * CV error at one strength by hand: refit each split's training rows at that fixed strength (its own
 * standardization), score the held-out rows (weighted mean squared or absolute error), and average
 * the folds weighted by their held-out weight; SE = sqrt(Σ W_k (e_k − ē)² / Σ W_k · K/(K−1) / K),
 * which for equal folds is SD over folds / √K (common practice, ESL §7.10).
 */
function cvByHand(
  problem: Problem,
  weights: number[] | null,
  splits: Split[],
  alpha: number,
  lambda: number,
  measure: "mse" | "mae",
): { mean: number; se: number; errors: number[]; foldWeights: number[] } {
  const errors: number[] = [];
  const foldWeights: number[] = [];
  for (const split of splits) {
    const model = fit(
      split.train.map((i) => problem.x[i]),
      split.train.map((i) => problem.y[i]),
      { mixes: [alpha], strength: lambda, weights: weights ? split.train.map((i) => weights[i]) : null, tolerance: SOLVER_TOLERANCE },
    );
    let loss = 0;
    let total = 0;
    for (const i of split.test) {
      let prediction = model.intercept;
      for (let j = 0; j < model.coefficients.length; j++) prediction += model.coefficients[j] * problem.x[i][j];
      const e = problem.y[i] - prediction;
      const w = weights ? weights[i] : 1;
      loss += w * (measure === "mse" ? e * e : Math.abs(e));
      total += w;
    }
    errors.push(loss / total);
    foldWeights.push(total);
  }
  const W = foldWeights.reduce((a, b) => a + b, 0);
  const K = errors.length;
  const mean = errors.reduce((s, e, k) => s + foldWeights[k] * e, 0) / W;
  const variance = errors.reduce((s, e, k) => s + foldWeights[k] * (e - mean) * (e - mean), 0) / W;
  return { mean, se: Math.sqrt((variance * K) / (K - 1) / K), errors, foldWeights };
}

function tableRows(result: FitResult, mix: number) {
  return (result.cv?.table ?? []).filter((row) => row.mix === mix);
}

/** Compares the engine's CV table at a few path points with the hand recomputation. */
function expectTableMatches(result: FitResult, problem: Problem, weights: number[] | null, splits: Split[], alpha: number, measure: "mse" | "mae", checkSe: boolean): void {
  const rows = tableRows(result, alpha);
  const last = rows.length - 1;
  const chosen = result.choices?.lowest.index ?? 0;
  for (const k of Array.from(new Set([3, Math.floor(last / 3), chosen, last]))) {
    const hand = cvByHand(problem, weights, splits, alpha, rows[k].strength, measure);
    expectRelative(rows[k].error, hand.mean, TOLERANCE, `CV ${measure} at point ${k}`); // recomputed by refitting each fold (ESL §7.10)
    if (checkSe) expectRelative(rows[k].se, hand.se, TOLERANCE, `CV SE at point ${k}`); // SD over folds / √K (ESL §7.10)
  }
}

const sparse = makeProblem({ seed: 2024, rows: 62, columns: 10, design: "ar1", rho: 0.5, nonzero: 3, noise: 0.6 });

describe("choices", () => {
  test("rule tokens: lowest and one-se; the older min, onese and 1se give bit-identical fits", () => {
    const problem = makeProblem({ seed: 5, rows: 40, columns: 6, design: "ar1", rho: 0.5, nonzero: 3, noise: 1 });
    const run = (rule: FitOptions["rule"]): string => JSON.stringify(fit(problem.x, problem.y, { mixes: [1], folds: 4, strengthCount: 20, rule }));
    const lowest = run("lowest");
    const oneSe = run("one-se");
    expect(run(undefined)).toBe(lowest); // the default rule is the lowest error
    expect(run("min")).toBe(lowest);
    expect(run("onese")).toBe(oneSe);
    expect(run("1se")).toBe(oneSe);
    expect(JSON.parse(oneSe).rule).toBe("one-se");
    expect(Object.keys(JSON.parse(lowest).choices)).toEqual(["lowest", "oneSe"]);
  });

  test("when the lasso wins on mixes [0, 1], the chosen strength is the lasso-only run's", () => {
    const strongSparse = makeProblem({ seed: 31, rows: 60, columns: 25, design: "equicorrelated", rho: 0.2, nonzero: 2, noise: 0.3 });
    const both = fit(strongSparse.x, strongSparse.y, { mixes: [0, 1], folds: 5, seed: 11 });
    expect(both.mix).toBe(1); // precondition: two large effects among 25 predictors is lasso territory (common practice)
    const lassoOnly = fit(strongSparse.x, strongSparse.y, { mixes: [1], folds: 5, seed: 11 });
    expect(both.strength).toBe(lassoOnly.strength); // same folds, same grid: the same computation
    expect(both.choices?.lowest).toEqual(lassoOnly.choices?.lowest);
    expect(both.coefficients).toEqual(lassoOnly.coefficients);
    // the lasso's best CV error is below the best ridge error (that is why it won)
    const best = (mix: number) => Math.min(...tableRows(both, mix).map((row) => row.error));
    expect(best(1)).toBeLessThan(best(0));
    expect(both.choices?.lowest.error).toBe(best(1));
  });

  test("one-SE rule: the largest strength within one SE of the minimum, never below the min-error strength (property over seeds)", () => {
    fc.assert(
      fc.property(
        fc.integer({ min: 0, max: 1e6 }),
        fc.integer({ min: 1, max: 1e6 }),
        fc.constantFrom([1], [0.5], [0, 1]),
        (dataSeed, foldSeed, mixes) => {
          const problem = makeProblem({ seed: dataSeed, rows: 40, columns: 10, design: "ar1", rho: 0.6, nonzero: 3, noise: 1 });
          const result = fit(problem.x, problem.y, { mixes, folds: 5, seed: foldSeed, strengthCount: 40, rule: "one-se" });
          const { lowest: min, oneSe: onese } = result.choices as NonNullable<FitResult["choices"]>;
          expect(onese.strength).toBeGreaterThanOrEqual(min.strength);
          expect(onese.mix).toBe(min.mix);
          expect(result.strength).toBe(onese.strength);
          const rows = tableRows(result, min.mix);
          // min: the lowest error in the whole table (common practice)
          expect(min.error).toBe(Math.min(...(result.cv?.table ?? []).map((row) => row.error)));
          // onese: within one SE of the minimum, and every larger strength is not (Breiman et al. 1984)
          const limit = min.error + min.se;
          expect(onese.error).toBeLessThanOrEqual(limit);
          for (let k = 0; k < onese.index; k++) expect(rows[k].error).toBeGreaterThan(limit);
        },
      ),
      { numRuns: 20, seed: 5150 },
    );
  });
});

describe("CV errors recomputed independently", () => {
  test("the documented Mulberry32 fold assignment is what randomFolds gives", () => {
    for (const [rows, folds, seed] of [
      [62, 5, 7],
      [10, 3, 1],
      [100, 10, 4294967295],
    ]) {
      expect(Array.from(randomFolds(rows, folds, seed))).toEqual(documentedRandomFolds(rows, folds, seed));
    }
  });

  test.each([
    ["unweighted, unequal folds (62 rows, 5 folds)", false, 0.5],
    ["weighted (held-out weight averaging)", true, 0.5],
    ["lasso, n > p", false, 1],
  ] as const)("random folds, MSE: %s", (_name, weighted, alpha) => {
    const random = new TestRandom(8);
    const weights = weighted ? sparse.y.map(() => 0.2 + 2 * random.uniform()) : null;
    const result = fit(sparse.x, sparse.y, { mixes: [alpha], folds: 5, seed: 7, weights, tolerance: SOLVER_TOLERANCE, strengthCount: 50 });
    expect(result.cv?.scheme).toBe("random");
    expect(result.cv?.folds).toBe(5);
    const splits = splitsFromLabels(documentedRandomFolds(sparse.y.length, 5, 7));
    expectTableMatches(result, sparse, weights, splits, alpha, "mse", true);
  });

  test("p > n (residual form, held-out rows scored directly), weighted", () => {
    const wide = makeProblem({ seed: 55, rows: 24, columns: 40, design: "ar1", rho: 0.6, nonzero: 3, noise: 0.4 });
    const random = new TestRandom(56);
    const weights = wide.y.map((_, i) => (i === 5 ? 0 : 0.5 + random.uniform()));
    const result = fit(wide.x, wide.y, { mixes: [0.5], folds: 4, seed: 21, weights, tolerance: SOLVER_TOLERANCE, strengthCount: 30 });
    expect(result.diagnostics.updates).toBe("residual");
    expectTableMatches(result, wide, weights, splitsFromLabels(documentedRandomFolds(24, 4, 21)), 0.5, "mse", true);
  });

  test("a predictor constant inside some folds' training rows sits those folds out", () => {
    // an indicator that is 1 only in the "north" group: the fold that holds "north" out trains on a constant column
    const labels = sparse.y.map((_, i) => ["north", "south", "east", "west"][i % 4]);
    const x = sparse.x.map((row, i) => [...row, labels[i] === "north" ? 1 : 0]);
    const y = sparse.y.map((v, i) => v + (labels[i] === "north" ? 1.5 : 0));
    const data = { x, y, beta: [] };
    for (const updates of ["gram", "residual"] as const) {
      const result = fit(x, y, { mixes: [0.5], foldLabels: labels, updates, tolerance: SOLVER_TOLERANCE, strengthCount: 30 });
      expect(result.constantColumns).toEqual([]); // not constant on the full data
      expectTableMatches(result, data, null, splitsFromLabels(labels), 0.5, "mse", true);
    }
  });

  test("equal folds: SE is the SD over folds / √K", () => {
    const problem = makeProblem({ seed: 77, rows: 60, columns: 8, design: "equicorrelated", rho: 0.4, nonzero: 3, noise: 0.8 });
    const result = fit(problem.x, problem.y, { mixes: [0.5], folds: 4, seed: 3, tolerance: SOLVER_TOLERANCE, strengthCount: 30 });
    const splits = splitsFromLabels(documentedRandomFolds(60, 4, 3));
    expect(splits.map((s) => s.test.length)).toEqual([15, 15, 15, 15]);
    const row = tableRows(result, 0.5)[12];
    const hand = cvByHand(problem, null, splits, 0.5, row.strength, "mse");
    const mean = hand.errors.reduce((a, b) => a + b, 0) / 4;
    const sd = Math.sqrt(hand.errors.reduce((s, e) => s + (e - mean) * (e - mean), 0) / 3); // SD with divisor K − 1
    expectRelative(row.error, mean, TOLERANCE, "CV error, equal folds"); // plain mean over equal folds (ESL §7.10)
    expectRelative(row.se, sd / 2, TOLERANCE, "CV SE, equal folds"); // SD / √K, K = 4 (ESL §7.10)
  });

  test("MAE measure (weighted)", () => {
    const random = new TestRandom(9);
    const weights = sparse.y.map((_, i) => (i % 7 === 0 ? 0 : 0.5 + random.uniform()));
    const result = fit(sparse.x, sparse.y, { mixes: [0.5], folds: 4, seed: 19, weights, measure: "mae", tolerance: SOLVER_TOLERANCE, strengthCount: 40 });
    expect(result.cv?.measure).toBe("mae");
    const splits = splitsFromLabels(documentedRandomFolds(sparse.y.length, 4, 19));
    expectTableMatches(result, sparse, weights, splits, 0.5, "mae", true);
    // and MAE is really a different measure from MSE here
    const mse = fit(sparse.x, sparse.y, { mixes: [0.5], folds: 4, seed: 19, weights, tolerance: SOLVER_TOLERANCE, strengthCount: 40 });
    expect(tableRows(mse, 0.5)[10].error).not.toBe(tableRows(result, 0.5)[10].error);
  });

  test("grouped folds via labels: one fold per label, in order of first appearance", () => {
    const labels = sparse.y.map((_, i) => ["north", "south", "east", "west"][Math.floor((i * 7) / 11) % 4]);
    const result = fit(sparse.x, sparse.y, { mixes: [0.5], foldLabels: labels, tolerance: SOLVER_TOLERANCE, strengthCount: 40 });
    expect(result.cv?.scheme).toBe("labels");
    expect(result.cv?.folds).toBe(4);
    expect(result.cv?.seed).toBeNull();
    expectTableMatches(result, sparse, null, splitsFromLabels(labels), 0.5, "mse", true);
  });
});

describe("time-ordered folds", () => {
  test("planFolds: every fold trains only on rows before the rows it is scored on", () => {
    for (const [rows, folds] of [
      [20, 3],
      [61, 5],
      [100, 9],
    ]) {
      const plan = planFolds(rows, null, { scheme: "time", folds, seed: 1, labels: null });
      expect(plan.trainBlocks.length).toBe(folds);
      const covered = new Set<number>();
      for (let k = 0; k < folds; k++) {
        const validate = Array.from(plan.blocks[plan.validateBlock[k]]);
        const train = plan.trainBlocks[k].flatMap((b) => Array.from(plan.blocks[b]));
        expect(train.length).toBeGreaterThan(0);
        expect(Math.max(...train)).toBeLessThan(Math.min(...validate));
        // trains on every earlier row (an expanding window), not just some of them
        expect(train.sort((a, b) => a - b)).toEqual(Array.from({ length: Math.min(...validate) }, (_, i) => i));
        for (const i of validate) covered.add(i);
      }
      // every row after the first block is scored exactly once
      expect(covered.size).toBe(rows - plan.blocks[0].length);
    }
  });

  test("fit with timeOrdered: errors equal refits on earlier rows only", () => {
    const result = fit(sparse.x, sparse.y, { mixes: [0.5], folds: 3, timeOrdered: true, tolerance: SOLVER_TOLERANCE, strengthCount: 40 });
    expect(result.cv?.scheme).toBe("time");
    expect(result.cv?.seed).toBeNull();
    expectTableMatches(result, sparse, null, timeSplits(sparse.y.length, 3), 0.5, "mse", true);
    // the check can tell: training each fold on all other blocks (later rows too) gives other errors
    const leaky = timeSplits(sparse.y.length, 3).map((split) => ({
      test: split.test,
      train: sparse.y.flatMap((_, i) => (split.test.includes(i) ? [] : [i])),
    }));
    const row = tableRows(result, 0.5)[10];
    const hand = cvByHand(sparse, null, leaky, 0.5, row.strength, "mse");
    expect(Math.abs(hand.mean - row.error) / row.error).toBeGreaterThan(1e-3);
  });
});

describe("determinism", () => {
  test("two runs give bit-identical JSON", () => {
    const random = new TestRandom(12);
    const weights = sparse.y.map(() => 0.5 + random.uniform());
    const options: FitOptions = { folds: 5, seed: 42, weights, rule: "one-se" };
    const first = JSON.stringify(fit(sparse.x, sparse.y, options));
    const second = JSON.stringify(fit(sparse.x, sparse.y, options));
    expect(second).toBe(first);
    // and the seed matters: a different seed gives different folds and a different table
    expect(JSON.stringify(fit(sparse.x, sparse.y, { ...options, seed: 43 }))).not.toBe(first);
  });
});
