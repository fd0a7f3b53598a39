/**
 * Ridge (α = 0) against its closed form on standardized data (common practice; ESL 2nd ed. eq. 3.44
 * written with weights and per-predictor multipliers):
 *   b̃(λ) = (X̃ᵀΩX̃ + λM)⁻¹ X̃ᵀΩỹ,   Ω = diag(w/Σw),  M = diag(m),
 * X̃ centred at the weighted means and divided by the weighted population SDs, ỹ centred.
 * The reference is computed another way with ml-matrix (`solve`, LU) from the raw data; the engine's
 * original-units coefficients are moved to the standardized scale with our own SDs.
 *
 * Tolerance 1e-9 norm-wise relative (max |Δb̃_j| / max |b̃_j|): the systems here have condition
 * numbers below ~1e4, so LU rounding is ~1e-12; the spectral path is exact up to the eigensolver's
 * rounding; coordinate descent is run with tolerance 1e-12 so its stopping error is ~1e-11.
 */
import { Matrix, solve } from "ml-matrix";
import { fit, FitOptions, UpdateScheme } from "../../engine/fit";
import { RIDGE_TOP_DF } from "../../engine/path";
import { ridgeDegreesOfFreedom, strengthForDegreesOfFreedom } from "../../engine/ridgeSpectral";
import { columnScales } from "../helpers/kkt";
import { expectRelative, expectVectorRelative, weightedMean } from "../helpers/numeric";
import { makeProblem } from "../helpers/problems";
import { TestRandom } from "../helpers/random";

const TOLERANCE = 1e-9;

interface RidgeCase {
  name: string;
  rows: number;
  columns: number;
  weighted: boolean;
  multipliers: "none" | "positive" | "withZero";
  exactRidge: boolean;
  updates: UpdateScheme;
  seed: number;
}

/** Closed-form ridge on standardized data, with ml-matrix. Returns b̃ and the standardization. */
function closedForm(x: number[][], y: number[], weights: number[] | null, multipliers: number[] | null, lambda: number) {
  const { totalWeight, centre, scale } = columnScales(x, weights, true, true);
  const n = x.length;
  const p = x[0].length;
  const ybar = weightedMean(y, weights);
  const xs = new Matrix(x.map((row) => row.map((v, j) => (v - centre[j]) / scale[j])));
  const omega = Matrix.zeros(n, n);
  for (let i = 0; i < n; i++) omega.set(i, i, (weights ? weights[i] : 1) / totalWeight);
  const yc = Matrix.columnVector(y.map((v) => v - ybar));
  const lhs = xs.transpose().mmul(omega).mmul(xs);
  for (let j = 0; j < p; j++) lhs.set(j, j, lhs.get(j, j) + lambda * (multipliers ? multipliers[j] : 1));
  const rhs = xs.transpose().mmul(omega).mmul(yc);
  const bt = solve(lhs, rhs).getColumn(0);
  return { bt, centre, scale, ybar };
}

function makeCase(c: RidgeCase) {
  const problem = makeProblem({ seed: c.seed, rows: c.rows, columns: c.columns, design: "equicorrelated", rho: 0.6, nonzero: 4, noise: 0.7 });
  const random = new TestRandom(c.seed + 11);
  const weights = c.weighted ? Array.from({ length: c.rows }, (_, i) => (i === 3 ? 0 : 0.3 + 2 * random.uniform())) : null;
  let multipliers: number[] | null = null;
  if (c.multipliers !== "none") {
    multipliers = Array.from({ length: c.columns }, (_, j) => [1, 2, 0.5][j % 3]);
    if (c.multipliers === "withZero") multipliers[1] = 0;
  }
  return { problem, weights, multipliers };
}

const cases: RidgeCase[] = [];
for (const [rows, columns] of [
  [50, 10],
  [20, 45],
]) {
  for (const weighted of [false, true]) {
    cases.push({ name: `spectral, ${rows}×${columns}, ${weighted ? "weighted" : "unweighted"}, multipliers 1/2/0.5`, rows, columns, weighted, multipliers: "positive", exactRidge: true, updates: "auto", seed: rows + columns + (weighted ? 1 : 0) });
    cases.push({ name: `spectral, ${rows}×${columns}, ${weighted ? "weighted" : "unweighted"}, no multipliers`, rows, columns, weighted, multipliers: "none", exactRidge: true, updates: "auto", seed: 3 * rows + columns });
    for (const updates of ["gram", "residual"] as const) {
      cases.push({ name: `descent (${updates}), ${rows}×${columns}, ${weighted ? "weighted" : "unweighted"}, multipliers incl. 0`, rows, columns, weighted, multipliers: "withZero", exactRidge: false, updates, seed: rows * columns + (weighted ? 5 : 0) });
    }
  }
}

describe("ridge equals its closed form (X̃ᵀΩX̃ + λM)⁻¹X̃ᵀΩỹ at every point of the path", () => {
  test.each(cases)("$name", (c) => {
    const { problem, weights, multipliers } = makeCase(c);
    const options: FitOptions = {
      mixes: [0],
      weights,
      penaltyMultipliers: multipliers,
      exactRidge: c.exactRidge,
      updates: c.updates,
      strength: 0.02,
      strengthCount: 25,
      ...(c.exactRidge ? {} : { tolerance: 1e-12, maxSweeps: 200000 }),
    };
    const result = fit(problem.x, problem.y, options);
    expect(result.diagnostics.solver).toBe(c.exactRidge ? "spectral" : "descent"); // engine/path.ts spectralApplies
    expect(result.diagnostics.converged).toBe(true);
    const path = result.path;
    expect(path.strengths.length).toBeGreaterThan(10);
    expect(path.strengths[path.strengths.length - 1]).toBe(0.02); // the fixed strength closes the path
    for (let k = 0; k < path.strengths.length; k++) {
      const { bt, centre, scale, ybar } = closedForm(problem.x, problem.y, weights, multipliers, path.strengths[k]);
      const engine = path.coefficients[k].map((b, j) => b * scale[j]);
      expectVectorRelative(engine, bt, TOLERANCE, `standardized ridge coefficients at λ = ${path.strengths[k]}`); // computed another way with ml-matrix
      // intercept from the closed form: b0 = ȳ − Σ b_j x̄_j (the centred model moved back to original units)
      const b0 = ybar - bt.reduce((s, v, j) => s + (v / scale[j]) * centre[j], 0);
      expectRelative(path.intercepts[k], b0, TOLERANCE * 10, `intercept at λ = ${path.strengths[k]}`); // computed another way with ml-matrix
      // ridge never sets a coefficient to exactly zero at these strengths (common practice)
      expect(path.termsKept[k]).toBe(c.columns);
    }
    expect(result.coefficients).toEqual(path.coefficients[path.coefficients.length - 1]);
  });

  test("the comparison can fail: the closed form at a 1% different strength disagrees", () => {
    const { problem, weights, multipliers } = makeCase(cases[0]);
    const result = fit(problem.x, problem.y, { mixes: [0], weights, penaltyMultipliers: multipliers, strength: 0.5 });
    const { bt, scale } = closedForm(problem.x, problem.y, weights, multipliers, 0.5 * 1.01);
    const engine = result.coefficients.map((b, j) => b * scale[j]);
    expect(() => expectVectorRelative(engine, bt, TOLERANCE, "deliberately wrong strength")).toThrow(/relative error/);
  });
});

/**
 * The top of a ridge grid (engine/path.ts topStrength): the strength at which the ridge fit's
 * effective degrees of freedom over the penalized terms equal RIDGE_TOP_DF. The reference is the
 * trace of the hat matrix H = X̃ (X̃ᵀΩX̃ + λM)⁻¹ X̃ᵀΩ (ESL 2nd ed. eq. 3.50, written with weights
 * and multipliers), formed explicitly as an n × n matrix with ml-matrix (LU `solve`), instead of
 * the engine's eigenvalues. Unpenalized terms (m_j = 0) are fitted at every strength and each
 * adds exactly 1 to tr(H), so tr(H) − (number of them) is the penalized terms' share.
 *
 * Tolerance 1e-10 relative: the root is solved to rounding (~1e-15), the eigenvalues carry
 * rounding ~1e-15 of the largest, and the LU trace ~1e-13 at these condition numbers.
 */
interface TopCase {
  name: string;
  rows: number;
  columns: number;
  weighted: boolean;
  multipliers: "none" | "positive" | "withZero";
  bounded: boolean;
  updates: UpdateScheme;
  intercept: boolean;
  standardize: boolean;
}

/** tr(H) at strength λ, by ml-matrix, with the engine's scaling conventions (engine/problem.ts). */
function hatTrace(x: number[][], weights: number[] | null, multipliers: number[] | null, lambda: number, intercept: boolean, standardize: boolean): number {
  const { totalWeight, centre, scale } = columnScales(x, weights, intercept, standardize);
  const n = x.length;
  const p = x[0].length;
  const xs = new Matrix(x.map((row) => row.map((v, j) => (v - centre[j]) / scale[j])));
  const omega = Matrix.zeros(n, n);
  for (let i = 0; i < n; i++) omega.set(i, i, (weights ? weights[i] : 1) / totalWeight);
  const lhs = xs.transpose().mmul(omega).mmul(xs);
  for (let j = 0; j < p; j++) lhs.set(j, j, lhs.get(j, j) + lambda * (multipliers ? multipliers[j] : 1));
  const hat = xs.mmul(solve(lhs, xs.transpose().mmul(omega)));
  return hat.trace();
}

const topCases: TopCase[] = [];
for (const [rows, columns] of [
  [50, 10],
  [20, 45],
]) {
  for (const multipliers of ["none", "positive", "withZero"] as const) {
    for (const weighted of [false, true]) {
      topCases.push({ name: `${rows}×${columns}, multipliers ${multipliers}, ${weighted ? "weighted" : "unweighted"}`, rows, columns, weighted, multipliers, bounded: false, updates: "auto", intercept: true, standardize: true });
    }
  }
  topCases.push({ name: `${rows}×${columns}, bounds (descent path)`, rows, columns, weighted: true, multipliers: "positive", bounded: true, updates: "auto", intercept: true, standardize: true });
  topCases.push({ name: `${rows}×${columns}, no intercept, not standardized`, rows, columns, weighted: false, multipliers: "withZero", bounded: false, updates: "auto", intercept: false, standardize: false });
}
topCases.push({ name: "50×10, residual updates, multipliers withZero", rows: 50, columns: 10, weighted: true, multipliers: "withZero", bounded: false, updates: "residual", intercept: true, standardize: true });
topCases.push({ name: "50×10, residual updates, positive multipliers", rows: 50, columns: 10, weighted: false, multipliers: "positive", bounded: false, updates: "residual", intercept: true, standardize: true });

describe("the top of a ridge grid: effective degrees of freedom RIDGE_TOP_DF (ESL eq. 3.50)", () => {
  test.each(topCases)("$name", (c) => {
    const { problem, weights, multipliers } = makeCase({ name: c.name, rows: c.rows, columns: c.columns, weighted: c.weighted, multipliers: c.multipliers, exactRidge: true, updates: c.updates, seed: c.rows + 7 * c.columns });
    const options: FitOptions = { mixes: [0], weights, penaltyMultipliers: multipliers, updates: c.updates, intercept: c.intercept, standardize: c.standardize, strength: 1e-3 };
    if (c.bounded) options.upperBounds = problem.x[0].map((_, j) => (j % 2 === 0 ? 0.5 : Infinity));
    const result = fit(problem.x, problem.y, options);
    const top = result.path.top;
    expect(top).toBeGreaterThan(0);
    expect(result.path.strengths[0]).toBe(top);
    const unpenalized = multipliers ? multipliers.filter((m) => m === 0).length : 0;
    const df = hatTrace(problem.x, weights, multipliers, top, c.intercept, c.standardize) - unpenalized;
    expectRelative(df, RIDGE_TOP_DF, 1e-10, "penalized degrees of freedom at the top"); // trace of the hat matrix by ml-matrix, ESL 2nd ed. eq. 3.50
  });

  test("the check can fail: 1% off the top, the degrees of freedom differ by far more than the tolerance", () => {
    const { problem } = makeCase({ name: "", rows: 50, columns: 10, weighted: false, multipliers: "none", exactRidge: true, updates: "auto", seed: 120 });
    const top = fit(problem.x, problem.y, { mixes: [0], strength: 1e-3 }).path.top;
    const df = hatTrace(problem.x, null, null, top * 1.01, true, true);
    expect(() => expectRelative(df, RIDGE_TOP_DF, 1e-10, "deliberately moved strength")).toThrow(/relative error/);
  });

  test("strengthForDegreesOfFreedom solves df(λ) = target on hand-made spectra (closed form for one value)", () => {
    // One eigenvalue v: v/(v + λ) = δ ⇔ λ = v(1 − δ)/δ (algebra).
    expectRelative(strengthForDegreesOfFreedom([4], 0.05), (4 * 0.95) / 0.05, 1e-14, "single value");
    // Equal values v (k of them): k·v/(v + λ) = δ ⇔ λ = v(k − δ)/δ (algebra).
    expectRelative(strengthForDegreesOfFreedom([2, 2, 2, 0], 0.05), (2 * 2.95) / 0.05, 1e-14, "three equal values and a zero");
    // Widely spread values: the answer is a root of the defining equation (property).
    const spread = [1e-8, 1e-3, 0.5, 3, 1e4];
    for (const target of [0.01, 0.05, 0.5, 2.5]) {
      expectRelative(ridgeDegreesOfFreedom(spread, strengthForDegreesOfFreedom(spread, target)), target, 1e-13, `df at the solved strength, target ${target}`);
    }
    expect(strengthForDegreesOfFreedom([0, 0], 0.05)).toBe(0);
  });

  test("the penalized spectrum is invariant to the unpenalized terms' scale and to adding a copy of one (projected out)", () => {
    // Projection property (algebra): the penalized block with span(X̃_U) projected out does not
    // depend on how X̃_U is parametrized; a duplicate unpenalized column changes nothing.
    const { problem } = makeCase({ name: "", rows: 40, columns: 8, weighted: false, multipliers: "none", exactRidge: true, updates: "auto", seed: 77 });
    const multipliers = [0, 1, 1, 1, 1, 1, 1, 1];
    const base = fit(problem.x, problem.y, { mixes: [0], penaltyMultipliers: multipliers, strength: 1e-2 }).path.top;
    const withCopy = problem.x.map((row) => [...row, 3 * row[0] + 1]);
    const copied = fit(withCopy, problem.y, { mixes: [0], penaltyMultipliers: [...multipliers, 0], strength: 1e-2 }).path.top;
    expectRelative(copied, base, 1e-9, "top with a duplicated unpenalized column"); // projection invariance (algebra); 1e-9 allows the eigen-solver's rounding
  });
});
