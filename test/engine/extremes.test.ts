/**
 * Offsets, extreme magnitudes and weights (engine/problem.ts, engine/scale.ts, engine/fit.ts):
 * - a large offset is not a constant: an Excel date-time column (45000.5 + minutes/1440), a
 *   millisecond timestamp (1.7e12 + 1000·z) and 1e15 + z fit as the same column without the offset,
 *   in every storage form (gram, residual, kernel ridge) and in the least-squares baseline;
 * - a column is constant only when its values are equal, or differ by rounding (2^-52 of its
 *   largest |value|);
 * - any finite magnitude fits: a predictor × 1e160 or × 1e200, every predictor × 1e±200, the target
 *   × 1e±200, weights of 1e300 or 1e307; what can't be represented is said, never returned wrong;
 * - refusals that say the real reason (bounds, a grid of one strength, the seed's range).
 *
 * References: centring invariance (common practice: a predictor shifted by a constant keeps its
 * slope; the reference fit uses the shifted column with the shift taken off again, exactly, so it
 * holds the very same values) and the unit-free contract (engine/fit.ts: a column or the target
 * × c moves its coefficients by exactly that factor). Tolerance 1e-8 norm-wise relative, as in
 * invariance.test.ts (two solves of standardized problems equal up to rounding, each stopping
 * inside a 1e-9·λ convergence band); powers of two give bit-identical fits.
 */
import { fit, FitOptions, FitResult } from "../../engine/fit";
import { InputError } from "../../engine/errors";
import { checkKkt } from "../helpers/kkt";
import { expectRelative, expectVectorRelative } from "../helpers/numeric";
import { makeProblem } from "../helpers/problems";

const TOLERANCE = 1e-8;

const tall = makeProblem({ seed: 3101, rows: 60, columns: 5, design: "ar1", rho: 0.6, nonzero: 3, noise: 0.5 });
const wide = makeProblem({ seed: 3102, rows: 20, columns: 30, design: "equicorrelated", rho: 0.4, nonzero: 3, noise: 0.4 });

/** Column `j` (default 0) replaced by `make(row[j])`. */
function withColumn(x: number[][], make: (v: number, i: number) => number, j = 0): number[][] {
  return x.map((row, i) => row.map((v, col) => (col === j ? make(v, i) : v)));
}

/** The column with the largest true effect (on the standardized scale it has 0.5 to 2). */
function strongest(problem: { beta: number[]; x: number[][] }): number {
  const spread = (j: number): number => {
    const values = problem.x.map((row) => row[j]);
    const mean = values.reduce((a, b) => a + b, 0) / values.length;
    return Math.sqrt(values.reduce((a, b) => a + (b - mean) ** 2, 0) / values.length);
  };
  let best = 0;
  for (let j = 1; j < problem.beta.length; j++) if (Math.abs(problem.beta[j]) * spread(j) > Math.abs(problem.beta[best]) * spread(best)) best = j;
  return best;
}

function expectSameModel(after: FitResult, before: FitResult, label: string, scale: (j: number) => number = () => 1): void {
  expect(after.mix).toBe(before.mix);
  expectRelative(after.strength, before.strength, 1e-12, `${label}: chosen strength`); // unit-free λ (engine/fit.ts)
  expectVectorRelative(
    after.coefficients.map((b, j) => b * scale(j)),
    before.coefficients,
    TOLERANCE,
    `${label}: coefficients`,
  ); // centring and unit invariance (the contract)
}

describe("large offsets are not constants", () => {
  const cases = [
    { name: "Excel date-time, 30 minutes from 45000.5 (serial days)", offset: 45000.5, spread: (v: number) => ((v + 3) * 30) / 1440 / 6 },
    { name: "millisecond timestamp 1.7e12 + 1000·z", offset: 1.7e12, spread: (v: number) => 1000 * v },
    { name: "1e15 + z", offset: 1e15, spread: (v: number) => v },
  ];
  const forms: { label: string; data: typeof tall; options: FitOptions }[] = [
    { label: "p > n (residual form, kernel ridge)", data: wide, options: { mixes: [0, 0.5, 1], folds: 4, strengthCount: 40 } },
    { label: "n > p, gram form", data: tall, options: { mixes: [0, 0.5, 1], folds: 4, strengthCount: 40, updates: "gram" } },
    { label: "n > p, residual form", data: tall, options: { mixes: [0.5, 1], folds: 4, strengthCount: 40, updates: "residual" } },
  ];
  for (const form of forms) {
    test.each(cases)(`${form.label}: $name keeps its slope`, ({ offset, spread }) => {
      const j = strongest(form.data);
      const shifted = withColumn(form.data.x, (v) => offset + spread(v), j);
      const back = withColumn(shifted, (v) => v - offset, j); // exact (Sterbenz): the same values, without the offset
      const after = fit(shifted, form.data.y, form.options);
      const before = fit(back, form.data.y, form.options);
      expect(after.constantColumns).toEqual([]); // problem.ts: spread far above 2^-52 of the magnitude
      expectSameModel(after, before, form.label);
      expect(after.coefficients[j]).not.toBe(0); // the column carries the largest true effect and is kept
      // The CV table, which scores held-out rows in centred form, agrees too.
      expectVectorRelative(
        (after.cv?.table ?? []).map((row) => row.error),
        (before.cv?.table ?? []).map((row) => row.error),
        TOLERANCE,
        "CV errors",
      ); // centring invariance (common practice)
    });
  }

  test.each(cases)("least-squares baseline: $name is not aliased and keeps its slope", ({ offset, spread }) => {
    const shifted = withColumn(tall.x, (v) => offset + spread(v));
    const back = withColumn(shifted, (v) => v - offset);
    const after = fit(shifted, tall.y, { strength: 0, mixes: [0] });
    const before = fit(back, tall.y, { strength: 0, mixes: [0] });
    expect(after.baseline?.aliased).toEqual([]);
    expectVectorRelative(after.coefficients, before.coefficients, 1e-9, "least-squares slopes"); // centring invariance; QR with refinement is accurate to ~1e-13 here
    expectVectorRelative(
      after.baseline?.standardErrors as number[],
      before.baseline?.standardErrors as number[],
      1e-9,
      "standard errors",
    ); // they depend on the centred column only
  });
});

describe("constant means equal values, or values that differ by rounding", () => {
  const rows = tall.x.length;
  const equal = withColumn(tall.x, () => 45000.5);
  // 0.1 + 0.2 and 0.3 differ by one unit in the last place: a formula's rounding, not a spread.
  const rounding = withColumn(tall.x, (_, i) => (i % 2 === 0 ? 0.1 + 0.2 : 0.3));
  test.each([
    ["equal values", equal],
    ["values one rounding step apart", rounding],
  ])("%s: left out as constant in every form and in the baseline", (_name, x) => {
    for (const updates of ["gram", "residual"] as const) {
      const result = fit(x, tall.y, { mixes: [1], folds: 4, strengthCount: 20, updates });
      expect(result.constantColumns).toEqual(["x1"]);
      expect(result.coefficients[0]).toBe(0);
    }
    const baseline = fit(x, tall.y, { strength: 0, mixes: [0] });
    expect(baseline.baseline?.aliased).toEqual(["x1"]);
    expect(rows).toBeGreaterThan(2);
  });

  test("two distinct values a hundred rounding steps apart are a column, not a constant", () => {
    const x = withColumn(tall.x, (_, i) => (i % 2 === 0 ? 1 : 1 + 100 * 2 ** -52));
    const result = fit(x, tall.y, { mixes: [0], strength: 0.1 });
    expect(result.constantColumns).toEqual([]); // problem.ts: SD 50·2^-52 > 2^-52 × 1
  });
});

describe("any finite magnitude fits", () => {
  const options: FitOptions = { mixes: [0, 0.5, 1], folds: 5, strengthCount: 40 };
  const base = fit(tall.x, tall.y, options);

  test.each([1e160, 1e200, 1e-200, 2 ** 900])("one predictor × %p: its coefficient ÷ c, the others unchanged", (c) => {
    const result = fit(withColumn(tall.x, (v) => v * c), tall.y, options);
    expect(result.constantColumns).toEqual([]);
    expectSameModel(result, base, `x1 × ${c}`, (j) => (j === 0 ? c : 1));
    if (c === 2 ** 900) {
      // a power of two: the working copy is bit for bit the same, so is everything unit-free
      expect(result.path.strengths).toEqual(base.path.strengths);
      expect(result.coefficients.slice(1)).toEqual(base.coefficients.slice(1));
    }
  });

  test.each([1e200, 1e-200])("every predictor × %p: coefficients ÷ c", (c) => {
    const result = fit(tall.x.map((row) => row.map((v) => v * c)), tall.y, options);
    expectSameModel(result, base, `every predictor × ${c}`, () => c);
  });

  test("target × 1e200: coefficients × 1e200, the same choice; CV MSE too large to show is non-finite with a warning", () => {
    const c = 1e200;
    const result = fit(tall.x, tall.y.map((v) => v * c), options);
    expectSameModel(result, base, "target × 1e200", () => 1 / c);
    expectRelative(result.intercept / c, base.intercept, TOLERANCE, "intercept ÷ c"); // the contract
    expect(result.choices?.lowest.error).toBe(Infinity); // MSE ≈ 1e400 is beyond the doubles (engine/fit.ts errorUnits)
    expect(result.warnings.map((w) => w.code)).toContain("out-of-range");
    expect(result.warnings.find((w) => w.code === "out-of-range")?.message).toMatch(/above 1\.8e308.*choice .* unaffected/);
    expectRelative(result.fit.rmse / c, base.fit.rmse, 1e-12, "in-sample RMSE ÷ c"); // metrics.ts is scale-safe
    // MAE scales with c only, and fits
    const mae = fit(tall.x, tall.y.map((v) => v * c), { ...options, measure: "mae" });
    const maeBase = fit(tall.x, tall.y, { ...options, measure: "mae" });
    expectRelative((mae.choices?.lowest.error as number) / c, maeBase.choices?.lowest.error as number, TOLERANCE, "CV MAE ÷ c"); // the contract
  });

  test("target × 1e-200: CV MSE too small to show is non-finite with a warning, coefficients × 1e-200", () => {
    const c = 1e-200;
    const result = fit(tall.x, tall.y.map((v) => v * c), options);
    expectSameModel(result, base, "target × 1e-200", () => 1 / c);
    expect(Number.isNaN(result.choices?.lowest.error)).toBe(true);
    expect(result.warnings.find((w) => w.code === "out-of-range")?.message).toMatch(/below 2\.2e-308/);
  });

  test("target × 1e150 with a predictor × 1e-150: KKT of the y-units problem holds on the data as given", () => {
    const x = withColumn(tall.x, (v) => v * 1e-150);
    const y = tall.y.map((v) => v * 1e150);
    const result = fit(x, y, { mixes: [0.5], strength: 0.01 });
    const report = checkKkt({ x, y, intercept: result.intercept, coefficients: result.coefficients, lambda: 0.01, alpha: 0.5 });
    expect(report.max).toBeLessThanOrEqual(1e-7); // Friedman et al. 2010 §2.1 in the target's units (test/helpers/kkt.ts)
  });

  test("a coefficient beyond the doubles' range is an error naming the column, never a wrong number", () => {
    const x = withColumn(tall.x, (v) => v * 1e-300);
    const y = tall.y.map((v) => v * 1e300);
    expect(() => fit(x, y, options)).toThrow(InputError);
    expect(() => fit(x, y, options)).toThrow(/coefficient of 'x1' is too large to represent as a number \(beyond ±1\.8e308\)/);
    expect(() => fit(x, y, { strength: 0, mixes: [0] })).toThrow(/coefficient of 'x1' is too large/);
    const tiny = withColumn(tall.x, (v) => v * 1e300);
    expect(() => fit(tiny, tall.y.map((v) => v * 1e-300), options)).toThrow(/coefficient of 'x1' is too small to represent as a number \(below 2\.2e-308\)/);
  });

  test("without standardization a column penalized in its own units must not be extreme: said, not mis-fitted", () => {
    expect(() => fit(withColumn(tall.x, (v) => v * 1e200), tall.y, { ...options, standardize: false })).toThrow(
      /with standardization off, predictor 1 is penalized in its own units, and its values are too large \(beyond 1e135\)/,
    );
  });

  test.each([1e300, 1e307, 1e-300])("weights all %p: the same fit as weights of 1", (w) => {
    const weights = tall.y.map((_, i) => (i % 4 === 0 ? 2 : 1));
    const reference = fit(tall.x, tall.y, { ...options, weights });
    const result = fit(tall.x, tall.y, { ...options, weights: weights.map((v) => v * w) });
    expectSameModel(result, reference, `weights × ${w}`);
    expectVectorRelative(
      (result.cv?.table ?? []).map((row) => row.error),
      (reference.cv?.table ?? []).map((row) => row.error),
      1e-12,
      "CV errors",
    ); // Σw·loss/Σw: the weights' scale cancels (the objective)
  });
});

describe("refusals that give the real reason", () => {
  test("bounds that hold every penalized term at 0 say so", () => {
    const p = tall.x[0].length;
    const zeros = new Array<number>(p).fill(0);
    const multipliers = [0, 1, 1, 1, 1];
    expect(() => fit(tall.x, tall.y, { mixes: [1], lowerBounds: zeros, upperBounds: zeros.map((_, j) => (j === 0 ? Infinity : 0)), penaltyMultipliers: multipliers })).toThrow(
      /every penalized term is held at 0 by its bounds \(lower 0 and upper 0: 'x2', 'x3', 'x4', 'x5'\)/,
    );
  });

  test("bounds that allow only the direction the target doesn't pull say so (not 'already explained')", () => {
    const x = tall.x.map((row) => [row[0]]);
    const pull = fit(x, tall.y, { mixes: [1], strength: 0.001 }).coefficients[0];
    const bound = pull > 0 ? { upperBounds: [0] } : { lowerBounds: [0] };
    expect(() => fit(x, tall.y, { mixes: [1], ...bound })).toThrow(/no penalized term can move from 0 at any strength: the bounds allow each one only the direction the target doesn't pull it \('x1'/);
  });

  test("unpenalized predictors that explain the target exactly still say that", () => {
    const x = tall.x.map((row) => [row[0], row[1]]);
    const y = tall.x.map((row) => 2 + 3 * row[0]);
    expect(() => fit(x, y, { mixes: [1], penaltyMultipliers: [0, 1] })).toThrow(/the unpenalized predictors already explain the target exactly/);
  });

  test("a grid of one strength with cross-validation is refused; with a fixed strength it is fine", () => {
    expect(() => fit(tall.x, tall.y, { strengthCount: 1 })).toThrow(/a grid of one strength leaves cross-validation nothing to choose/);
    expect(fit(tall.x, tall.y, { strengthCount: 1, mixes: [1], strength: 0.01 }).strength).toBe(0.01);
  });

  test("the seed's message gives its range", () => {
    expect(() => fit(tall.x, tall.y, { seed: 1.5 })).toThrow("seed must be a whole number from -4294967295 to 4294967295; got 1.5");
    expect(() => fit(tall.x, tall.y, { seed: 4294967296 })).toThrow(/from -4294967295 to 4294967295/);
  });
});
