/**
 * engine/fitSums.ts fitFromSums: the cross-validated elastic net from a sums table.
 *
 * Sources of the expected values:
 * - Two routes agreeing: fitFromSums(sumsOfRows(rows, labels)) against fit(rows, {foldLabels:
 *   labels, updates: "gram"}) on the same rows and folds, ≤ 1e-10 relative (the bar): the
 *   two differ only in the point the sums are taken about (the in-memory route uses a data value
 *   nearest the mean, the table the mean itself) and in summation order.
 * - Invariance: adding 1e12 to every predictor (timestamps) changes only the intercept (common
 *   practice: a location shift of a predictor is absorbed by the intercept); mean/spread ≥ 1e8.
 * - Optimality: the KKT conditions at the chosen point, by the independent checker in
 *   test/helpers/kkt.ts (Friedman, Hastie & Tibshirani 2010, J. Stat. Software 33(1) §2.1).
 */
import fc from "fast-check";
import { CancelledError, InputError } from "../../engine/errors";
import { fit, FitOptions, FitResult } from "../../engine/fit";
import { fitFromSums, fitFromSumsAsync } from "../../engine/fitSums";
import { sumsOfRows } from "../../engine/sums";
import { SumsTable } from "../../engine/sumsTable";
import { checkKkt } from "../helpers/kkt";
import { expectRelative, expectVectorRelative } from "../helpers/numeric";
import { Design, makeProblem } from "../helpers/problems";
import { TestRandom } from "../helpers/random";

const TOLERANCE = 1e-10; // the bar for the two routes

interface Data {
  x: number[][];
  y: number[];
  w: number[] | null;
  labels: string[];
  names: string[];
}

function makeData(seed: number, rows: number, columns: number, blocks: number, weighted: boolean, design: Design = "ar1", rho = 0.5): Data {
  const problem = makeProblem({ seed, rows, columns, design, rho, nonzero: Math.min(3, columns), noise: 0.7 });
  const random = new TestRandom(seed ^ 0x2545f491);
  const w = weighted ? problem.y.map(() => (random.uniform() < 0.05 ? 0 : 0.2 + 2.8 * random.uniform())) : null;
  // Fold f0, f1, … dealt in turn: first appearance and text order agree (fold models compare in order).
  const labels = problem.y.map((_, i) => `f${i % blocks}`);
  const names = Array.from({ length: columns }, (_, j) => `roast_${j + 1}`);
  return { x: problem.x, y: problem.y, w, labels, names };
}

function tableOf(d: Data, timeOrdered = false): SumsTable {
  return sumsOfRows(d.x, d.y, d.w, d.labels, d.names, "cup_score", { timeOrdered });
}

/** The two routes' results agree to `tolerance` (coefficients, path, CV curve, choices, fold models). */
function expectSameFit(fromSums: FitResult, fromRows: FitResult, tolerance: number, compareScore = true): void {
  expect(fromSums.mix).toBe(fromRows.mix);
  expectRelative(fromSums.strength, fromRows.strength, tolerance, "chosen strength");
  expectVectorRelative(fromSums.coefficients, fromRows.coefficients, tolerance, "coefficients");
  // The intercept against the size of the terms it balances (b0 = ȳ − Σ b_j x̄_j).
  const size = Math.abs(fromRows.intercept) + fromRows.targetSpread + fromRows.coefficients.reduce((s, b, j) => s + Math.abs(b) * (fromRows.predictorSpreads[j] + 1), 0);
  expect(Math.abs(fromSums.intercept - fromRows.intercept)).toBeLessThanOrEqual(tolerance * size);
  expectVectorRelative(fromSums.standardizedCoefficients, fromRows.standardizedCoefficients, tolerance, "standardized coefficients");
  expectRelative(fromSums.targetSpread, fromRows.targetSpread, tolerance, "target spread");
  expect(fromSums.path.strengths.length).toBe(fromRows.path.strengths.length);
  expectVectorRelative(fromSums.path.strengths, fromRows.path.strengths, tolerance, "path strengths");
  // Path points against the path's largest coefficient: at the top of the grid a coefficient the
  // other route leaves at rounding noise (1e-17) must not count as a relative error of 1.
  const pathScale = Math.max(...fromRows.path.coefficients.flat().map(Math.abs), Number.MIN_VALUE);
  fromSums.path.coefficients.forEach((row, k) =>
    row.forEach((b, j) => expect(Math.abs(b - fromRows.path.coefficients[k][j])).toBeLessThanOrEqual(1e3 * tolerance * pathScale)),
  );
  if (fromRows.cv) {
    const a = fromSums.cv as NonNullable<FitResult["cv"]>;
    expect(a.folds).toBe(fromRows.cv.folds);
    expect(a.table.length).toBe(fromRows.cv.table.length);
    a.table.forEach((row, i) => {
      const other = fromRows.cv!.table[i];
      expect(row.mix).toBe(other.mix);
      expectRelative(row.error, other.error, tolerance, `CV error ${i}`);
      expect(Math.abs(row.se - other.se)).toBeLessThanOrEqual(tolerance * other.error);
    });
    expect(fromSums.choices?.lowest.index).toBe(fromRows.choices?.lowest.index);
    expect(fromSums.choices?.oneSe.index).toBe(fromRows.choices?.oneSe.index);
    const models = fromSums.foldModels ?? [];
    expect(models.length).toBe(fromRows.foldModels?.length);
    models.forEach((model, f) => expectVectorRelative(model.coefficients, fromRows.foldModels![f].coefficients, 1e3 * tolerance, `fold model ${f}`));
    expect(fromSums.keptShare?.map((k) => k.kept)).toEqual(fromRows.keptShare?.map((k) => k.kept));
  }
  if (compareScore) {
    expectRelative(fromSums.fit.rmse, fromRows.fit.rmse, tolerance, "in-sample RMSE");
    expect(Math.abs(fromSums.fit.r2 - fromRows.fit.r2)).toBeLessThanOrEqual(tolerance);
    expect(Math.abs(fromSums.fit.bias - fromRows.fit.bias)).toBeLessThanOrEqual(tolerance * fromRows.targetSpread);
  }
  expect(fromSums.fit.mae).toBeNaN(); // documented: needs the rows
  expect(fromSums.rowsUsed).toBe(fromRows.rowsUsed);
  expect(fromSums.heldOut ?? null).toBeNull();
  expect(fromSums.constantColumns).toEqual(fromRows.constantColumns);
}

describe("fitFromSums equals the in-memory gram-form fit on the same rows and folds", () => {
  it("over random problems (fast-check): weights, standardize off, no intercept, bounds, multipliers", () => {
    fc.assert(
      fc.property(
        fc.record({
          seed: fc.integer({ min: 0, max: 0x7fffffff }),
          columns: fc.integer({ min: 1, max: 9 }),
          blocks: fc.integer({ min: 2, max: 7 }),
          weighted: fc.boolean(),
          standardize: fc.boolean(),
          intercept: fc.boolean(),
          extras: fc.boolean(),
          mixes: fc.constantFrom([0, 0.5, 1], [1], [0.25, 0.75], [0]),
          rule: fc.constantFrom<"lowest" | "one-se">("lowest", "one-se"),
        }),
        (c) => {
          const d = makeData(c.seed, 40 + 10 * c.blocks, c.columns, c.blocks, c.weighted);
          const options: FitOptions = { mixes: c.mixes, standardize: c.standardize, intercept: c.intercept, rule: c.rule, strengthCount: 40 };
          if (c.extras) {
            options.penaltyMultipliers = d.names.map((_, j) => (j === 0 ? 2 : 1));
            options.lowerBounds = d.names.map((_, j) => (j === 1 ? 0 : -Infinity));
          }
          const fromRows = fit(d.x, d.y, { ...options, weights: d.w, foldLabels: d.labels, updates: "gram", names: d.names });
          const fromSums = fitFromSums(tableOf(d), options);
          expectSameFit(fromSums, fromRows, TOLERANCE);
        },
      ),
      { numRuns: 30 },
    );
  });

  it("time-ordered tables forward-chain as time-ordered folds do", () => {
    for (const K of [2, 4]) {
      const d = makeData(77 + K, 150, 4, 1, true);
      // timePlan (folds.ts): K + 1 contiguous blocks, block b from ⌊b·n/(K+1)⌋.
      const n = d.y.length;
      d.labels = d.y.map((_, i) => {
        let b = 0;
        while (Math.floor(((b + 1) * n) / (K + 1)) <= i) b++;
        return `t${b}`;
      });
      const fromRows = fit(d.x, d.y, { weights: d.w, timeOrdered: true, folds: K, updates: "gram", names: d.names, mixes: [0.5, 1] });
      const fromSums = fitFromSums(tableOf(d, true), { mixes: [0.5, 1] });
      expect(fromSums.cv?.scheme).toBe("time");
      expectSameFit(fromSums, fromRows, TOLERANCE);
    }
  });

  it("folds: K merges blocks b → b mod K (labels), and consecutive blocks in time order", () => {
    const d = makeData(5, 240, 5, 8, false);
    const merged: Data = { ...d, labels: d.labels.map((l) => `m${Number(l.slice(1)) % 3}`) };
    expectSameFit(fitFromSums(tableOf(d), { folds: 3 }), fitFromSums(tableOf(merged)), TOLERANCE);
    expectSameFit(fitFromSums(tableOf(d), { folds: 3 }), fit(merged.x, merged.y, { foldLabels: merged.labels, updates: "gram", names: d.names }), TOLERANCE);
    // Time order: 8 blocks into K + 1 = 4 groups of two consecutive blocks.
    const timed: Data = { ...d, labels: d.y.map((_, i) => `t${Math.floor(i / 30)}`) };
    const pairs: Data = { ...d, labels: d.y.map((_, i) => `t${Math.floor(i / 60)}`) };
    expectSameFit(fitFromSums(tableOf(timed, true), { folds: 3 }), fitFromSums(tableOf(pairs, true)), TOLERANCE);
  });

  it("a column constant on one block (an indicator absent there), a constant column, and 30 predictors", () => {
    const d = makeData(12, 160, 5, 4, true);
    // 'roast_4' is 0 on every row of block f0 (a level that lot never had) and 'roast_5' is 7 everywhere.
    d.x = d.x.map((row, i) => row.map((v, j) => (j === 3 ? (d.labels[i] === "f0" ? 0 : i % 3 === 0 ? 1 : 0) : j === 4 ? 7 : v)));
    const fromRows = fit(d.x, d.y, { weights: d.w, foldLabels: d.labels, updates: "gram", names: d.names, mixes: [0, 0.5, 1] });
    const fromSums = fitFromSums(tableOf(d), { mixes: [0, 0.5, 1] });
    expect(fromSums.constantColumns).toEqual(["roast_5"]);
    expectSameFit(fromSums, fromRows, TOLERANCE);
    const wide = makeData(13, 200, 30, 5, false, "equicorrelated", 0.4);
    expectSameFit(fitFromSums(tableOf(wide), { mixes: [0.5, 1] }), fit(wide.x, wide.y, { foldLabels: wide.labels, updates: "gram", names: wide.names, mixes: [0.5, 1] }), TOLERANCE);
  });

  it("a fixed strength, and a table without largest values", () => {
    const d = makeData(9, 120, 6, 4, true);
    const fromRows = fit(d.x, d.y, { weights: d.w, strength: 0.05, mixes: [0.5], updates: "gram", names: d.names });
    expectSameFit(fitFromSums(tableOf(d), { strength: 0.05, mixes: [0.5] }), fromRows, TOLERANCE);
    const table = tableOf(d);
    const bare = { ...table, blocks: table.blocks.map((b) => ({ ...b, largest: null, largestY: null })) };
    expectSameFit(fitFromSums(bare, {}), fitFromSums(table, {}), TOLERANCE);
  });
});

describe("precision: timestamps near 1e12 (mean/spread ≥ 1e8)", () => {
  it("the sums route equals the in-memory one and the offset-free fit", () => {
    const d = makeData(21, 300, 4, 5, true);
    // Predictors recorded to 1/64 (exact at 1e12, where doubles step by 2^-13): milliseconds
    // since an epoch with a spread of a few thousand, mean/spread ≈ 1e12/3e3 > 1e8.
    const base = d.x.map((row) => row.map((v) => Math.round(v * 1000 * 64) / 64));
    const stamped = base.map((row) => row.map((v) => v + 1e12));
    const plain: Data = { ...d, x: base };
    const offset: Data = { ...d, x: stamped };
    const fromSums = fitFromSums(tableOf(offset));
    const fromRows = fit(offset.x, offset.y, { weights: d.w, foldLabels: d.labels, updates: "gram", names: d.names });
    // The in-sample score by rows predicts with b0 + Σ b_j x_j, where b0 ≈ −Σ b_j·1e12 cancels
    // (about 1e-8 of the RMSE lost); the sums route scores in centred form: compared with the
    // offset-free fit below instead.
    expectSameFit(fromSums, fromRows, TOLERANCE, false);
    const offsetFree = fitFromSums(tableOf(plain));
    expectRelative(fromSums.fit.rmse, offsetFree.fit.rmse, 1e-9, "in-sample RMSE with and without the offset");
    expect(Math.abs(fromSums.fit.r2 - offsetFree.fit.r2)).toBeLessThanOrEqual(1e-9);
    expectVectorRelative(fromSums.coefficients, offsetFree.coefficients, 1e-9, "coefficients with and without the 1e12 offset");
    fromSums.cv!.table.forEach((row, i) => expectRelative(row.error, offsetFree.cv!.table[i].error, 1e-9, `CV error ${i} with and without the offset`));
    // The intercept absorbs the shift: b0 − Σ b_j·1e12 (checked through a prediction at a row).
    const at = (r: FitResult, row: number[]): number => r.intercept + r.coefficients.reduce((s, b, j) => s + b * row[j], 0);
    expect(Math.abs(at(fromSums, stamped[0]) - at(offsetFree, base[0]))).toBeLessThanOrEqual(1e-3 * fromSums.targetSpread);
  });

  it("units near 1e100 and 1e-100 fit as units near 1 do (power-of-two scaling)", () => {
    const d = makeData(4, 100, 3, 4, false);
    const big: Data = { ...d, x: d.x.map((row) => row.map((v, j) => v * (j === 0 ? 1e100 : 1e-100))), y: d.y.map((v) => v * 1e50) };
    const a = fitFromSums(tableOf(big));
    const b = fitFromSums(tableOf(d));
    expectVectorRelative(a.standardizedCoefficients.map((v) => v / 1e50), b.standardizedCoefficients, 1e-12, "standardized coefficients across units");
    expectRelative(a.coefficients[0], (b.coefficients[0] * 1e50) / 1e100, 1e-12, "coefficient of the 1e100 column");
    expectSameFit(a, fit(big.x, big.y, { foldLabels: big.labels, updates: "gram", names: d.names }), TOLERANCE);
  });
});

describe("optimality at the chosen point (independent KKT checker)", () => {
  it("holds to 1e-7 relative to λ", () => {
    for (const [seed, mixes, weighted] of [
      [1, [1], false],
      [2, [0.5], true],
      [3, [0.25, 0.75], true],
    ] as [number, number[], boolean][]) {
      const d = makeData(seed, 150, 6, 5, weighted, "equicorrelated", 0.6);
      const r = fitFromSums(tableOf(d), { mixes });
      const report = checkKkt({ x: d.x, y: d.y, weights: d.w, intercept: r.intercept, coefficients: r.coefficients, lambda: r.strength, alpha: r.mix });
      expect(report.max).toBeLessThanOrEqual(1e-7);
    }
  });
});

describe("progress and cancel", () => {
  it("reports every unit and stops on the signal", async () => {
    const table = tableOf(makeData(6, 100, 3, 4, false));
    const seen: [number, number][] = [];
    fitFromSums(table, { mixes: [0, 1], onProgress: (done, total) => seen.push([done, total]) });
    expect(seen.length).toBe(2 * (4 + 1));
    expect(seen[seen.length - 1]).toEqual([10, 10]);
    const signal = { aborted: false };
    const running = fitFromSumsAsync(table, { mixes: [0, 1], signal, onProgress: () => (signal.aborted = true) });
    await expect(running).rejects.toBeInstanceOf(CancelledError);
  });
});

describe("refusals say what to do", () => {
  const table = (): SumsTable => tableOf(makeData(8, 60, 2, 3, false));
  const refused: [FitOptions, RegExp][] = [
    [{ outcome: "two-class" }, /two-class .* can't be fitted from sums/],
    [{ measure: "mae" }, /mae can't be computed from sums .* use mse/],
    [{ repeats: 3 }, /repeats .* set repeats to 1/],
    [{ honestError: true }, /honest error .* turn honest error off/],
    [{ stability: { draws: 10 } } as FitOptions, /stability selection .* leave it off/],
    [{ updates: "residual" }, /residual updates .* use gram/],
    [{ foldLabels: ["a", "b"] }, /fold labels can't be given with a sums table/],
    [{ timeOrdered: true }, /the table says whether its blocks are in time order/],
    // (strength 0, least squares, fits from sums now: test/engine/sumsLeastSquares.test.ts)
    [{ strength: 0, mixes: [0, 1] }, /a fixed strength is fitted at one mix/],
    [{ folds: 5 }, /folds is 5, but this sums table has 3 blocks: give a whole number from 2 to 3/],
    [{ folds: 1 }, /folds is 1/],
    [{ mixes: [2] }, /mix/],
    [{ weights: [1, 2] }, /weights can't be given with a sums table/],
    [{ seed: 4 }, /leave the seed out/],
  ];
  it.each(refused.map(([o, m]) => [JSON.stringify(o), o, m] as const))("%s", (_, options, message) => {
    expect(() => fitFromSums(table(), options)).toThrow(InputError);
    expect(() => fitFromSums(table(), options)).toThrow(message);
  });
  it("refuses a table of one block, a bad table, and a constant target", () => {
    const t = table();
    expect(() => fitFromSums({ ...t, blocks: t.blocks.slice(0, 1) })).toThrow(/cross-validation needs at least 2/);
    expect(() => fitFromSums({ ...t, version: 9 })).toThrow(/version 9 and this Shrinkwise reads version 1/);
    const d = makeData(8, 60, 2, 3, false);
    expect(() => fitFromSums(tableOf({ ...d, y: d.y.map(() => 4.5) }))).toThrow(/the target 'cup_score' has the same value in every row/);
  });
});
