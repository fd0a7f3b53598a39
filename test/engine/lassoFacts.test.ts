/**
 * Facts of the trade about the lasso end of the path (common practice), and the top of the grid
 * computed by hand: λ_max = max_j |x̃_jᵀ W ỹ| / (Σw · α · m_j), ỹ = (y − ȳ)/s_y the standardized
 * target (Friedman, Hastie & Tibshirani 2010, J. Stat. Software 33(1) §2.5, with weights and
 * multipliers). Ridge has no such λ; its top is set by effective degrees of freedom
 * (engine/path.ts RIDGE_TOP_DF, checked against the hat matrix's trace in ridge.test.ts); here,
 * what that top means for the fit.
 */
import { fit, UpdateScheme } from "../../engine/fit";
import { RIDGE_TOP_DF } from "../../engine/path";
import { columnScales, targetSpread } from "../helpers/kkt";
import { expectRelative, weightedMean } from "../helpers/numeric";
import { makeProblem } from "../helpers/problems";
import { TestRandom } from "../helpers/random";

/** Inner products x̃_jᵀ W ỹ / Σw with ỹ = (y − ȳ)/s_y, computed from the raw data. */
function correlations(x: number[][], y: number[], weights: number[] | null): number[] {
  const { totalWeight, centre, scale } = columnScales(x, weights, true, true);
  const ybar = weightedMean(y, weights);
  const sy = targetSpread(y, weights);
  return x[0].map((_, j) => {
    let s = 0;
    for (let i = 0; i < y.length; i++) s += (weights ? weights[i] : 1) * ((x[i][j] - centre[j]) / scale[j]) * ((y[i] - ybar) / sy);
    return s / totalWeight;
  });
}

/** λ_max by hand (Friedman et al. 2010 §2.5). */
function handTop(x: number[][], y: number[], weights: number[] | null, alpha: number, multipliers: number[] | null): number {
  const c = correlations(x, y, weights);
  return Math.max(...c.map((v, j) => Math.abs(v) / (alpha * (multipliers ? multipliers[j] : 1))));
}

function countNonzero(values: readonly number[]): number {
  return values.filter((v) => v !== 0).length;
}

// Independent columns and one dominant true coefficient (on x4): the inner products are well separated.
const distinct = (() => {
  const base = makeProblem({ seed: 4242, rows: 80, columns: 12, design: "ar1", rho: 0, nonzero: 0, noise: 0, rescale: false });
  const random = new TestRandom(4243);
  const y = base.x.map((row) => 1 + 2 * row[3] + 0.7 * row[7] + 0.3 * row[0] + 0.5 * random.normal());
  return { x: base.x, y };
})();
// A sparse problem with many null predictors.
const sparse = makeProblem({ seed: 99, rows: 60, columns: 20, design: "equicorrelated", rho: 0.3, nonzero: 3, noise: 0.5 });

describe("the top of the path (common practice)", () => {
  test("at λ_max every coefficient is exactly 0; just below, exactly one enters: the one with the largest |x̃_jᵀ(y − ȳ)|", () => {
    const c = correlations(distinct.x, distinct.y, null);
    const sorted = c.map(Math.abs).sort((a, b) => b - a);
    // precondition: distinct inner products, the second at most 90% of the first
    expect(sorted[1]).toBeLessThan(0.9 * sorted[0]);
    const leader = c.map(Math.abs).indexOf(sorted[0]);
    const result = fit(distinct.x, distinct.y, { mixes: [1], strength: 1e-3, gridDensity: 25, lowEndRatio: 1e-4 });
    const path = result.path;
    expect(path.coefficients[0].every((b) => b === 0)).toBe(true); // common practice: λ_max is the smallest λ with b = 0
    expect(path.termsKept[0]).toBe(0);
    expectRelative(path.intercepts[0], weightedMean(distinct.y, null), 1e-13, "intercept at λ_max"); // with b = 0 the intercept is ȳ (common practice); 1e-13 allows summation-order rounding
    // the grid step is 10^(−1/25) ≈ 0.91, while the second inner product is below 0.9·λ_max: one entrant
    expect(path.termsKept[1]).toBe(1);
    expect(path.coefficients[1].findIndex((b) => b !== 0)).toBe(leader);
    expect(Math.sign(path.coefficients[1][leader])).toBe(Math.sign(c[leader])); // enters with the sign of its inner product
    // the same at fixed strengths around λ_max
    const top = path.top;
    expect(countNonzero(fit(distinct.x, distinct.y, { mixes: [1], strength: top }).coefficients)).toBe(0);
    expect(countNonzero(fit(distinct.x, distinct.y, { mixes: [1], strength: top * 1.001 }).coefficients)).toBe(0);
    const below = fit(distinct.x, distinct.y, { mixes: [1], strength: top * 0.999 }).coefficients;
    expect(countNonzero(below)).toBe(1);
    expect(below[leader]).not.toBe(0);
  });

  test("elastic net (α = 0.3) also has all coefficients exactly 0 at its λ_max", () => {
    const path = fit(sparse.x, sparse.y, { mixes: [0.3], strength: 1e-2 }).path;
    expect(path.coefficients[0].every((b) => b === 0)).toBe(true); // common practice: α > 0 has a finite λ_max
    expect(path.termsKept[1]).toBeGreaterThan(0);
  });

  test.each<[number, UpdateScheme, boolean, boolean]>([
    [1, "gram", false, false],
    [1, "residual", false, false],
    [0.5, "gram", true, false],
    [0.5, "residual", true, true],
    [0.3, "auto", true, true],
  ])("λ_max equals max_j |x̃_jᵀ W ỹ| / (Σw α m_j) by hand: α = %p, %s updates, weighted %p, multipliers %p", (alpha, updates, weighted, withMultipliers) => {
    const random = new TestRandom(5);
    const weights = weighted ? sparse.y.map(() => 0.1 + 3 * random.uniform()) : null;
    const multipliers = withMultipliers ? sparse.x[0].map((_, j) => [1, 2, 0.5][j % 3]) : null;
    const result = fit(sparse.x, sparse.y, { mixes: [alpha], updates, weights, penaltyMultipliers: multipliers, strength: 1e-2, strengthCount: 10 });
    const expected = handTop(sparse.x, sparse.y, weights, alpha, multipliers);
    expectRelative(result.path.top, expected, 1e-10, "top of the grid"); // Friedman et al. 2010 §2.5, by hand
    expectRelative(result.path.strengths[0], expected, 1e-10, "first strength of the path"); // Friedman et al. 2010 §2.5, by hand
    expect(result.path.coefficients[0].every((b) => b === 0)).toBe(true); // common practice: nothing is nonzero at λ_max
    // the hand value is sharp: 0.1% below it something is nonzero
    const inside = fit(sparse.x, sparse.y, { mixes: [alpha], updates, weights, penaltyMultipliers: multipliers, strength: expected * 0.999 });
    expect(countNonzero(inside.coefficients)).toBeGreaterThan(0);
  });

  // Regression: the top of the grid and the sweeps once summed the gradient differently in
  // residual form, so a rounding-sized coefficient (2e-16) slipped through at λ_max.
  test("residual updates: every coefficient is exactly 0 at λ_max (common practice)", () => {
    for (const [alpha, weighted] of [
      [1, false],
      [0.5, true],
    ] as const) {
      const random = new TestRandom(5);
      const weights = weighted ? sparse.y.map(() => 0.1 + 3 * random.uniform()) : null;
      const result = fit(sparse.x, sparse.y, { mixes: [alpha], updates: "residual", weights, strength: 1e-2, strengthCount: 10 });
      expect(result.path.termsKept[0]).toBe(0);
      expect(result.path.coefficients[0].every((b) => b === 0)).toBe(true);
      const atTop = fit(sparse.x, sparse.y, { mixes: [alpha], updates: "residual", weights, strength: result.path.top });
      expect(countNonzero(atTop.coefficients)).toBe(0);
    }
  });

  test("ridge (α = 0): at its top the training fit explains at most 2δ − δ² of what least squares explains", () => {
    // With shrink factors s_t summing to δ = RIDGE_TOP_DF, the ridge R² is Σ(2s_t − s_t²)q_t² ≤
    // (2δ − δ²)Σq_t² = (2δ − δ²)·R²(least squares) (algebra on ESL 2nd ed. eq. 3.47); the bound is
    // reached when one component carries everything, so it is checked on a one-factor design too.
    const oneFactor = makeProblem({ seed: 31, rows: 60, columns: 8, design: "equicorrelated", rho: 0.95, nonzero: 8, noise: 0.1 });
    for (const [problem, weights] of [
      [sparse, null],
      [sparse, sparse.y.map((_, i) => 1 + (i % 3))],
      [oneFactor, null],
    ] as const) {
      const result = fit(problem.x, problem.y, { mixes: [0], weights, strength: 1 });
      const leastSquares = fit(problem.x, problem.y, { mixes: [0], weights, strength: 0 });
      const bound = 2 * RIDGE_TOP_DF - RIDGE_TOP_DF ** 2;
      expect(result.path.r2[0]).toBeGreaterThan(0);
      expect(result.path.r2[0]).toBeLessThanOrEqual(bound * (leastSquares.baseline as { r2: number }).r2 * (1 + 1e-12));
      // ridge has no finite λ_max: at its top every coefficient is small but nonzero (common practice)
      expect(result.path.termsKept[0]).toBe(problem.x[0].length);
    }
  });
});

describe("sparsity (common practice)", () => {
  test("at a moderate strength the lasso gives exact zeros and ridge gives none", () => {
    const top = handTop(sparse.x, sparse.y, null, 1, null);
    const lasso = fit(sparse.x, sparse.y, { mixes: [1], strength: 0.2 * top });
    const ridge = fit(sparse.x, sparse.y, { mixes: [0], strength: 0.2 * top });
    const lassoZeros = lasso.coefficients.filter((b) => b === 0).length;
    expect(lassoZeros).toBeGreaterThanOrEqual(10); // 17 of the 20 true coefficients are 0
    expect(lassoZeros).toBeLessThan(20);
    expect(ridge.coefficients.filter((b) => b === 0).length).toBe(0);
  });

  test.each<[string, number, number, number]>([
    ["lasso, n > p", 1, 60, 20],
    ["elastic net, n > p", 0.5, 60, 20],
    ["lasso, p > n", 1, 18, 40],
    ["elastic net, p > n", 0.3, 18, 40],
  ])("%s: the path's nonzero counts match its coefficients at every point", (_name, alpha, rows, columns) => {
    const problem = makeProblem({ seed: rows + columns, rows, columns, design: "ar1", rho: 0.7, nonzero: 4, noise: 0.5 });
    const result = fit(problem.x, problem.y, { mixes: [alpha], folds: 3 });
    const path = result.path;
    expect(path.termsKept.length).toBe(path.strengths.length);
    expect(path.coefficients.length).toBe(path.strengths.length);
    for (let k = 0; k < path.strengths.length; k++) expect(path.termsKept[k]).toBe(countNonzero(path.coefficients[k]));
    expect(Math.max(...path.termsKept)).toBeGreaterThan(1);
    // the cross-validation table reports the same counts for the chosen mix
    const table = (result.cv?.table ?? []).filter((row) => row.mix === alpha);
    expect(table.map((row) => row.termsKept)).toEqual(path.termsKept);
    expect(countNonzero(result.coefficients)).toBe(result.choices?.lowest.termsKept);
  });
});
