/**
 * Invariances of the fitted model (common practice for standardized penalized regression):
 * - permuting rows, with fold labels that travel with the rows, changes nothing;
 * - rescaling a predictor changes only its coefficient (by the inverse factor) when standardizing;
 * - shifting y by a constant shifts every prediction by that constant (the intercept is unpenalized);
 * - a weight of 2 equals the row entered twice (the objective is Σ w_i · loss_i).
 *
 * Tolerance ~1e-8 norm-wise relative (max |Δŷ_i| / max |ŷ_i|), chosen on purpose: the two fits in
 * each pair solve the same problem up to rounding in their sums (~1e-15), but each solver stops
 * anywhere inside its convergence band (moves below 1e-9·λ per sweep), so their answers may differ
 * by ~1e-9 relative; 1e-8 leaves a factor 10 over that, while a real break of an invariance (a wrong
 * scale, a fold that loses its rows, a weight counted once) moves fitted values in the 2nd-4th digit.
 * Chosen strengths must agree to 1e-12: both fits use the same grid, computed from sums that agree
 * to rounding.
 */
import { fit, FitOptions, FitResult } from "../../engine/fit";
import { expectRelative, expectVectorRelative, predictRows } from "../helpers/numeric";
import { makeProblem } from "../helpers/problems";
import { TestRandom } from "../helpers/random";

const TOLERANCE = 1e-8;

const problem = makeProblem({ seed: 606, rows: 48, columns: 9, design: "ar1", rho: 0.7, nonzero: 4, noise: 0.6 });
const wide = makeProblem({ seed: 607, rows: 20, columns: 30, design: "equicorrelated", rho: 0.5, nonzero: 3, noise: 0.4 });

function fitted(result: FitResult, x: number[][]): number[] {
  return predictRows(x, result.intercept, result.coefficients);
}

function expectSameChoice(a: FitResult, b: FitResult): void {
  expect(a.mix).toBe(b.mix);
  expectRelative(a.strength, b.strength, 1e-12, "chosen strength"); // same grid from sums equal up to rounding
}

describe.each([
  { name: "n > p", data: problem },
  { name: "p > n", data: wide },
])("invariances, $name", ({ data }) => {
  const n = data.y.length;
  const labels = data.y.map((_, i) => `group ${(i * 5) % 4}`);

  test("permuting rows together with their fold labels leaves fitted values unchanged", () => {
    const order = new TestRandom(1).permutation(n);
    const options: FitOptions = { mixes: [0.5, 1], strengthCount: 50 };
    const before = fit(data.x, data.y, { ...options, foldLabels: labels });
    const after = fit(
      order.map((i) => data.x[i]),
      order.map((i) => data.y[i]),
      { ...options, foldLabels: order.map((i) => labels[i]) },
    );
    expectSameChoice(after, before);
    expectVectorRelative(fitted(after, data.x), fitted(before, data.x), TOLERANCE, "fitted values after permuting rows"); // invariance (common practice)
  });

  test("rescaling predictors (standardized fit) leaves fitted values unchanged and scales the coefficients inversely", () => {
    const factors = data.x[0].map((_, j) => (j === 0 ? 1000 : j === 1 ? -0.001 : j === 2 ? 7.5 : 1));
    const scaled = data.x.map((row) => row.map((v, j) => v * factors[j]));
    const options: FitOptions = { mixes: [0.3], folds: 4, seed: 5, strengthCount: 50 };
    const before = fit(data.x, data.y, options);
    const after = fit(scaled, data.y, options);
    expectSameChoice(after, before);
    expectVectorRelative(fitted(after, scaled), fitted(before, data.x), TOLERANCE, "fitted values after rescaling"); // invariance (common practice)
    expectVectorRelative(
      after.coefficients.map((b, j) => b * factors[j]),
      before.coefficients,
      TOLERANCE,
      "coefficients × scale factor",
    ); // b_j · c_j is the same standardized coefficient (common practice)
    // the test can fail: without standardization the rescaled fit is a different model
    const raw = fit(scaled, data.y, { ...options, standardize: false, strength: before.strength, mixes: [0.3] });
    const rawBefore = fit(data.x, data.y, { ...options, standardize: false, strength: before.strength, mixes: [0.3] });
    expect(() => expectVectorRelative(fitted(raw, scaled), fitted(rawBefore, data.x), TOLERANCE, "unstandardized")).toThrow();
  });

  test("shifting y by a constant shifts every prediction by that constant", () => {
    const shift = 250;
    const options: FitOptions = { mixes: [0, 0.5, 1], folds: 4, seed: 9, strengthCount: 50 };
    const before = fit(data.x, data.y, options);
    const after = fit(data.x, data.y.map((v) => v + shift), options);
    expectSameChoice(after, before);
    expectVectorRelative(after.coefficients, before.coefficients, TOLERANCE, "coefficients after shifting y"); // unpenalized intercept (common practice)
    expectRelative(after.intercept, before.intercept + shift, TOLERANCE, "intercept after shifting y"); // unpenalized intercept (common practice)
    expectVectorRelative(
      fitted(after, data.x).map((v) => v - shift),
      fitted(before, data.x),
      TOLERANCE * 10, // the shift (250) is ~50× the fitted values: subtracting it back costs ~2 digits of rounding
      "predictions − shift",
    );
  });

  describe("a weight of 2 equals the row entered twice", () => {
    const doubled = data.y.map((_, i) => i % 3 === 0);
    const weights = doubled.map((d) => (d ? 2 : 1));
    const rows = data.y.flatMap((_, i) => (doubled[i] ? [i, i] : [i]));
    const xTwice = rows.map((i) => data.x[i]);
    const yTwice = rows.map((i) => data.y[i]);

    test.each([0, 0.5, 1])("fixed strength, α = %p", (alpha) => {
      const weighted = fit(data.x, data.y, { mixes: [alpha], strength: 0.05, weights });
      const twice = fit(xTwice, yTwice, { mixes: [alpha], strength: 0.05 });
      expectVectorRelative(fitted(twice, data.x), fitted(weighted, data.x), TOLERANCE, "fitted values, weights vs duplicates"); // Σ w_i loss_i (the objective)
      expectVectorRelative(twice.path.coefficients.flat(), weighted.path.coefficients.flat(), TOLERANCE, "whole path"); // Σ w_i loss_i (the objective)
      // the test can fail: ignoring the weights is a different fit
      const unweighted = fit(data.x, data.y, { mixes: [alpha], strength: 0.05 });
      expect(() => expectVectorRelative(fitted(unweighted, data.x), fitted(twice, data.x), TOLERANCE, "unweighted")).toThrow();
    });

    test("cross-validated, with fold labels keeping duplicates together", () => {
      const options: FitOptions = { mixes: [0.5, 1], strengthCount: 50 };
      const weighted = fit(data.x, data.y, { ...options, weights, foldLabels: labels });
      const twice = fit(xTwice, yTwice, { ...options, foldLabels: rows.map((i) => labels[i]) });
      expectSameChoice(twice, weighted);
      const a = weighted.cv?.table ?? [];
      const b = twice.cv?.table ?? [];
      expect(b.length).toBe(a.length);
      // CV errors: held-out errors weighted by w equal the duplicated rows' plain average (ESL §7.10 with weights)
      expectVectorRelative(b.map((row) => row.error), a.map((row) => row.error), TOLERANCE, "CV errors, weights vs duplicates");
      expectVectorRelative(fitted(twice, data.x), fitted(weighted, data.x), TOLERANCE, "fitted values, weights vs duplicates"); // Σ w_i loss_i (the objective)
    });
  });
});
