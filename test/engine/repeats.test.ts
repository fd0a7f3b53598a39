/**
 * Repeated cross-validation (FitOptions.repeats; engine/repeats.ts, engine/fit.ts):
 * - repeats = 1 is the fit without the option, bit for bit, for both outcomes;
 * - agreement of two routes: with r deals the curve equals the average of r single-deal fits'
 *   curves (seeds seed … seed + r − 1): every deal of random folds holds out each row once, so the
 *   fold-weighted mean over all r·K folds is the mean of the r deals' means; the SE equals the
 *   mean of their SEs (the documented choice, repeats.ts); the choice is the curve's lowest point;
 * - kept shares count r·K fold models; the fold models for CV+ come from the first deal;
 * - bit-identical for the same seed; InputErrors for labels / time order with repeats, and for
 *   repeats outside 1 … 50 or not whole;
 * - results do not depend on a column's units and offset, or on the weights' scale;
 * - progress counts mixes × (r·K + 1) units, and a cancel lands.
 */
import { fit, FitOptions, FitResult } from "../../engine/fit";
import { CancelledError, InputError } from "../../engine/errors";
import { TestRandom } from "../helpers/random";

function data(n: number, p: number, seed: number, twoClass = false): { x: number[][]; y: number[] } {
  const random = new TestRandom(seed);
  const x: number[][] = [];
  const y: number[] = [];
  for (let i = 0; i < n; i++) {
    const row = Array.from({ length: p }, () => random.normal());
    x.push(row);
    const eta = 1.5 * row[0] - row[1] + 0.5 * row[2];
    if (twoClass) y.push(random.uniform() < 1 / (1 + Math.exp(-eta)) ? 1 : 0);
    else y.push(20 + eta + random.normal());
  }
  return { x, y };
}

function relative(a: number, b: number): number {
  return Math.abs(a - b) / Math.max(Math.abs(a), Math.abs(b), 1e-300);
}

describe("repeats = 1 is the plain fit, bit for bit (common practice: an option at its default changes nothing)", () => {
  test("number outcome", () => {
    const { x, y } = data(70, 6, 1);
    const options: FitOptions = { mixes: [0, 0.5, 1], folds: 5, seed: 3, gridDensity: 10 };
    const plain = fit(x, y, options);
    const once = fit(x, y, { ...options, repeats: 1 });
    expect(once).toEqual(plain);
    expect(once.cv?.repeats).toBe(1);
    expect(once.foldModels?.length).toBe(5);
  });
  test("two-class outcome (deviance and AUC)", () => {
    const { x, y } = data(90, 5, 2, true);
    for (const measure of ["deviance", "auc"] as const) {
      const options: FitOptions = { outcome: "two-class", measure, mixes: [0.5, 1], folds: 4, seed: 9, gridDensity: 8 };
      expect(fit(x, y, { ...options, repeats: 1 })).toEqual(fit(x, y, options));
    }
  });
});

/** The average of r single-deal fits' curves and SEs, row by row of the CV table. */
function averagedCurves(fits: FitResult[]): { error: number[]; se: number[] } {
  const rows = fits[0].cv?.table.length ?? 0;
  const error = new Array<number>(rows).fill(0);
  const se = new Array<number>(rows).fill(0);
  for (const one of fits) {
    const table = one.cv?.table ?? [];
    expect(table.length).toBe(rows);
    table.forEach((row, k) => {
      // The same full-data grid for every seed (it depends on the full data only; in gram form the
      // full data's sums are added up block by block, so the deal's order can move the last digit).
      expect(relative(row.strength, fits[0].cv?.table[k].strength ?? NaN)).toBeLessThanOrEqual(1e-13);
      error[k] += row.error / fits.length;
      se[k] += row.se / fits.length;
    });
  }
  return { error, se };
}

describe("r deals = the average of r single-deal fits (agreement of two routes)", () => {
  const cases: { name: string; make: () => { x: number[][]; y: number[] }; options: FitOptions; weights?: boolean }[] = [
    { name: "number, mse", make: () => data(63, 7, 4), options: { mixes: [0, 0.5, 1], folds: 5, gridDensity: 10 } },
    { name: "number, mae, weighted", make: () => data(58, 5, 5), options: { measure: "mae", mixes: [1], folds: 4, gridDensity: 10 }, weights: true },
    { name: "two-class, deviance", make: () => data(96, 5, 6, true), options: { outcome: "two-class", mixes: [0.5, 1], folds: 4, gridDensity: 8 } },
    { name: "two-class, auc", make: () => data(96, 5, 7, true), options: { outcome: "two-class", measure: "auc", mixes: [1], folds: 4, gridDensity: 8 } },
  ];
  test.each(cases)("$name", ({ make, options, weights }) => {
    const { x, y } = make();
    const random = new TestRandom(11);
    const w = weights ? y.map(() => 0.5 + random.uniform()) : undefined;
    const seed = 21;
    const r = 3;
    const pooled = fit(x, y, { ...options, weights: w, seed, repeats: r });
    const singles = Array.from({ length: r }, (_, d) => fit(x, y, { ...options, weights: w, seed: seed + d }));
    const { error, se } = averagedCurves(singles);
    const table = pooled.cv?.table ?? [];
    expect(table.length).toBe(error.length);
    let worst = 0;
    let worstSe = 0;
    table.forEach((row, k) => {
      worst = Math.max(worst, relative(row.error, error[k]));
      worstSe = Math.max(worstSe, relative(row.se, se[k]));
    });
    // Pooled mean vs mean of means, and SE vs mean of SEs: equal up to the order of additions.
    expect(worst).toBeLessThanOrEqual(1e-12);
    expect(worstSe).toBeLessThanOrEqual(1e-12);
    expect(pooled.cv?.repeats).toBe(r);
    // The choice is the best point of the averaged curve (ties to the larger strength: first in the table).
    const higher = options.measure === "auc";
    let bestRow = 0;
    table.forEach((row, k) => {
      if (higher ? row.error > table[bestRow].error : row.error < table[bestRow].error) bestRow = k;
    });
    expect(pooled.choices?.lowest.strength).toBe(table[bestRow].strength);
    expect(pooled.choices?.lowest.mix).toBe(table[bestRow].mix);
    // Kept shares over r·K fold models: every share a multiple of 1/(r·K).
    const folds = pooled.cv?.folds ?? 0;
    for (const share of pooled.keptShare ?? []) {
      expect(Math.abs(share.kept * r * folds - Math.round(share.kept * r * folds))).toBeLessThan(1e-9);
      expect(Math.abs(share.sameSign * r * folds - Math.round(share.sameSign * r * folds))).toBeLessThan(1e-9);
    }
    expect(pooled.keptShare?.length).toBe(x[0].length);
  });
});

test("CV+ fold models come from the first deal: with one mix and the choice at the same point, they are the seed's single-deal fold models (common practice: CV+ needs one partition of the rows)", () => {
  const { x, y } = data(60, 4, 12);
  const options: FitOptions = { mixes: [1], folds: 5, seed: 30, strengthCount: 30 };
  const pooled = fit(x, y, { ...options, repeats: 4 });
  const single = fit(x, y, options);
  expect(pooled.foldModels?.length).toBe(5);
  expect(pooled.heldOut?.row.length).toBe(60);
  if (pooled.strength === single.strength) {
    expect(pooled.foldModels).toEqual(single.foldModels);
    expect(pooled.heldOut).toEqual(single.heldOut);
  }
});

test("same inputs and seed: bit-identical (common practice)", () => {
  const { x, y } = data(50, 5, 13);
  const options: FitOptions = { mixes: [0, 1], folds: 5, seed: 2, repeats: 3, gridDensity: 10 };
  expect(fit(x, y, options)).toEqual(fit(x, y, options));
  const two = data(80, 4, 14, true);
  const twoOptions: FitOptions = { outcome: "two-class", mixes: [1], folds: 4, seed: 2, repeats: 3, gridDensity: 8 };
  expect(fit(two.x, two.y, twoOptions)).toEqual(fit(two.x, two.y, twoOptions));
});

describe("bad settings are InputErrors (common practice: a grouped or time-ordered split has one deal)", () => {
  const { x, y } = data(40, 3, 15);
  test("fold labels or time order with repeats > 1", () => {
    const labels = y.map((_, i) => i % 4);
    expect(() => fit(x, y, { foldLabels: labels, repeats: 2 })).toThrow(InputError);
    expect(() => fit(x, y, { foldLabels: labels, repeats: 2 })).toThrow(/repeats need random folds/);
    expect(() => fit(x, y, { timeOrdered: true, folds: 4, repeats: 3 })).toThrow(/repeats need random folds/);
    // One deal of labels is fine.
    expect(fit(x, y, { foldLabels: labels, repeats: 1, mixes: [1] }).cv?.repeats).toBe(1);
  });
  test.each([0, 51, 2.5, -1, NaN])("repeats %p", (repeats) => {
    expect(() => fit(x, y, { repeats })).toThrow(InputError);
  });
  test("a fixed strength with repeats > 1", () => {
    expect(() => fit(x, y, { strength: 0.1, mixes: [1], repeats: 2 })).toThrow(InputError);
  });
});

describe("unit-free: a column × 1e6 + 1e9 and weights × 1000 leave the repeated curve as it was (the unit-free contract, engine/fit.ts; common practice)", () => {
  test.each([
    ["number", false],
    ["two-class", true],
  ] as const)("%s", (_name, twoClass) => {
    const { x, y } = data(72, 5, 16, twoClass);
    const random = new TestRandom(17);
    const w = y.map(() => 0.2 + random.uniform());
    const options: FitOptions = { outcome: twoClass ? "two-class" : "number", mixes: [0.5, 1], folds: 4, seed: 5, repeats: 3, gridDensity: 10 };
    const base = fit(x, y, { ...options, weights: w });
    const moved = fit(
      x.map((row) => row.map((v, j) => (j === 1 ? v * 1e6 + 1e9 : v))),
      y,
      { ...options, weights: w.map((v) => v * 1000) },
    );
    expect(moved.choices?.lowest.index).toBe(base.choices?.lowest.index);
    expect(moved.choices?.oneSe.index).toBe(base.choices?.oneSe.index);
    expect(moved.mix).toBe(base.mix);
    const a = base.cv?.table ?? [];
    const b = moved.cv?.table ?? [];
    expect(b.length).toBe(a.length);
    let worst = 0;
    a.forEach((row, k) => {
      worst = Math.max(worst, relative(row.error, b[k].error), relative(row.se, b[k].se));
    });
    // Each fold solver stops inside its convergence band (~1e-9 relative): errors agree to ~1e-9.
    expect(worst).toBeLessThan(1e-8);
    expect(moved.keptShare).toEqual(base.keptShare);
  });
});

describe("progress and cancel", () => {
  const { x, y } = data(60, 5, 18);
  test("mixes × (repeats × folds + 1) units, in order, ending at the total", () => {
    const seen: [number, number][] = [];
    fit(x, y, { mixes: [0, 1], folds: 4, repeats: 3, gridDensity: 10, onProgress: (done, total) => seen.push([done, total]) });
    expect(seen.length).toBe(2 * (3 * 4 + 1));
    seen.forEach(([done, total], k) => {
      expect(done).toBe(k + 1);
      expect(total).toBe(26);
    });
  });
  test("a cancel raised between units stops the fit there", () => {
    const signal = { aborted: false };
    let units = 0;
    expect(() =>
      fit(x, y, {
        mixes: [0, 1],
        folds: 4,
        repeats: 3,
        signal,
        onProgress: () => {
          units++;
          if (units === 7) signal.aborted = true;
        },
      }),
    ).toThrow(CancelledError);
    expect(units).toBe(7);
  });
});
