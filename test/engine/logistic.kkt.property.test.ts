/**
 * Two-class fits: every point of the full-data path satisfies the optimality (KKT) conditions of
 * the penalized binomial log-likelihood, checked by an independent checker (test/helpers/logisticKkt.ts)
 * from the raw data and the reported intercept and coefficients in the data's units. Conditions:
 * Friedman, Hastie & Tibshirani 2010, J. Stat. Software 33(1) §3 (§2.1's conditions with the
 * residual y − p), plus the normal cone of the box for bounded coefficients (standard convex
 * optimality), plus the intercept's condition Σ w (y − p) = 0.
 *
 * Problems are generated inside each property from a seed (test/helpers/problems.ts): correlated
 * columns with their own offsets and scales; the outcome is the generated response above its
 * median, so the classes overlap (rows > predictors) or are separable (predictors > rows, where the
 * grid stops at 1e-2 of its top). Options vary: every mix from ridge to lasso, weights (some 0),
 * multipliers (some 0), sign bounds, both update forms, intercept and standardization on or off.
 *
 * Tolerance: 1e-7 relative to λ (the brief's bar). The engine stops when its own violation is at
 * most 1e-9 relative to λ (or at the rounding of its sums, logistic.ts ROUNDING_ALLOWANCE).
 *
 * Set KKT_REPORT=1 to print the largest violation measured per configuration.
 */
import fc from "fast-check";
import { fit, FitOptions, UpdateScheme } from "../../engine/fit";
import { checkLogisticKkt } from "../helpers/logisticKkt";
import { makeProblem } from "../helpers/problems";
import { TestRandom } from "../helpers/random";

const KKT_TOLERANCE = 1e-7; // the brief's bar, relative to λ
const RUNS = 40;

const measured = new Map<string, number>();
afterAll(() => {
  if (process.env.KKT_REPORT) {
    const lines = Array.from(measured.entries()).map(([label, v]) => `${label.padEnd(40)} ${v.toExponential(2)}`);
    console.log(`largest two-class KKT violation relative to λ (independent checker):\n${lines.join("\n")}`);
  }
});

/** The generated response above its median: 1, else 0. */
function twoClass(values: readonly number[]): number[] {
  const sorted = values.slice().sort((a, b) => a - b);
  const median = sorted[Math.floor(sorted.length / 2)];
  return values.map((v) => (v > median ? 1 : 0));
}

interface Case {
  seed: number;
  mix: number;
  weighted: boolean;
  multipliers: "none" | "positive" | "withZero";
  bounds: boolean;
  updates: UpdateScheme;
  intercept: boolean;
  standardize: boolean;
}

const caseArbitrary: fc.Arbitrary<Case> = fc.record({
  seed: fc.integer({ min: 0, max: 0x7fffffff }),
  mix: fc.constantFrom(0, 0.3, 0.7, 1),
  weighted: fc.boolean(),
  multipliers: fc.constantFrom<Case["multipliers"]>("none", "positive", "withZero"),
  bounds: fc.boolean(),
  updates: fc.constantFrom<UpdateScheme>("auto", "gram", "residual"),
  intercept: fc.boolean(),
  standardize: fc.boolean(),
});

function checkCase(shape: { rows: number; columns: number }, c: Case): void {
  const { rows, columns } = shape;
  const problem = makeProblem({ seed: c.seed, rows, columns, design: "ar1", rho: 0.5, nonzero: 3, noise: 1 });
  const y = twoClass(problem.y);
  const random = new TestRandom(c.seed ^ 0x5bd1e995);
  // Weights from {0, 0.5, 1, 2, 3}, except that the first 8 rows of each class keep weight 1 or
  // more, so both classes are present in every fold's training rows.
  const seen = [0, 0];
  const weights = c.weighted
    ? y.map((cls) => {
        const w = [0, 0.5, 1, 2, 3][Math.floor(random.uniform() * 5)];
        return seen[cls]++ < 8 ? Math.max(w, 1) : w;
      })
    : null;
  const multipliers =
    c.multipliers === "none" ? null : Array.from({ length: columns }, (_, j) => (c.multipliers === "withZero" && j === 1 ? 0 : 1 + (j % 3) / 2));
  const lower = c.bounds ? Array.from({ length: columns }, (_, j) => (j % 4 === 0 ? 0 : -Infinity)) : null;
  const upper = c.bounds ? Array.from({ length: columns }, (_, j) => (j % 4 === 2 ? 0 : Infinity)) : null;
  const options: FitOptions = {
    outcome: "two-class",
    mixes: [c.mix],
    folds: 3,
    strengthCount: 12,
    weights,
    penaltyMultipliers: multipliers,
    lowerBounds: lower,
    upperBounds: upper,
    updates: c.updates === "gram" && columns > 500 ? "auto" : c.updates,
    intercept: c.intercept,
    standardize: c.standardize,
  };
  const result = fit(problem.x, y, options);
  expect(result.outcome).toBe("two-class");
  const label = `${rows}x${columns} mix ${c.mix} ${c.updates}`;
  for (let k = 0; k < result.path.strengths.length; k++) {
    const report = checkLogisticKkt({
      x: problem.x,
      y,
      weights,
      intercept: result.path.intercepts[k],
      coefficients: result.path.coefficients[k],
      lambda: result.path.strengths[k],
      alpha: c.mix,
      multipliers,
      lower,
      upper,
      withIntercept: c.intercept,
      standardize: c.standardize,
    });
    measured.set(label, Math.max(measured.get(label) ?? 0, report.max));
    expect(report.coordinate).toBeLessThanOrEqual(KKT_TOLERANCE); // Friedman et al. 2010 §3 conditions, relative to λ
    expect(report.interceptViolation).toBeLessThanOrEqual(KKT_TOLERANCE); // Σ w (y − p) = 0 at every point
    // The engine's own figure agrees that the fit converged.
    expect(result.diagnostics.maxKktViolation).toBeLessThanOrEqual(1e-8);
  }
}

describe("two-class path points satisfy the KKT conditions (independent checker)", () => {
  test("rows > predictors", () => {
    fc.assert(
      fc.property(caseArbitrary, (c) => checkCase({ rows: 60, columns: 8 }, c)),
      { numRuns: RUNS, seed: 20261203 },
    );
  });

  test("predictors > rows", () => {
    fc.assert(
      fc.property(caseArbitrary, (c) => checkCase({ rows: 30, columns: 50 }, c)),
      { numRuns: RUNS, seed: 20261204 },
    );
  });
});
