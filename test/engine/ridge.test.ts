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
