/**
 * Every point of the full-data path satisfies the optimality (KKT) conditions of the objective,
 * checked by an independent checker (test/helpers/kkt.ts) from the raw data and the reported
 * original-units coefficients. Conditions: Friedman, Hastie & Tibshirani 2010, J. Stat. Software
 * 33(1) §2.1, with the normal cone of the box for bounded coefficients (standard convex optimality).
 *
 * Problems are generated inside each property from a seed (test/helpers/problems.ts): equicorrelated
 * or AR(1) columns, a sparse truth, noise; optional weights (some zero), penalty multipliers (some 0,
 * some 2) and sign bounds (some coefficients >= 0, some <= 0).
 *
 * Tolerance: 1e-7 relative to λ (the brief's requirement). The engine stops when no coordinate moves
 * by more than 1e-9·λ in a sweep; a coordinate's residual after the sweep is bounded by the moves of
 * the others through the Gram matrix (at most p of them), which leaves the 1e-7 bar a margin.
 *
 * Set KKT_REPORT=1 to print the largest violation measured per configuration.
 */
import fc from "fast-check";
import { fit, FitOptions, FitResult, UpdateScheme } from "../../engine/fit";
import { checkKkt, columnScales } from "../helpers/kkt";
import { makeProblem, Design } from "../helpers/problems";
import { TestRandom } from "../helpers/random";

const KKT_TOLERANCE = 1e-7; // the brief's bar, relative to λ
const RUNS = 25;

const measured = new Map<string, number>();
function record(label: string, value: number): void {
  measured.set(label, Math.max(measured.get(label) ?? 0, value));
}
afterAll(() => {
  if (process.env.KKT_REPORT) {
    const lines = Array.from(measured.entries()).map(([label, v]) => `${label.padEnd(52)} ${v.toExponential(2)}`);
    console.log(`largest KKT violation relative to λ (independent checker):\n${lines.join("\n")}`);
  }
});

interface Case {
  seed: number;
  design: Design;
  rho: number;
  weighted: boolean;
  multipliers: "none" | "positive" | "withZero";
  bounds: boolean;
  updates: UpdateScheme;
  exactRidge: boolean;
  crossValidated: boolean;
}

const caseArbitrary = fc.record({
  seed: fc.integer({ min: 0, max: 0x7fffffff }),
  design: fc.constantFrom<Design>("equicorrelated", "ar1"),
  rho: fc.double({ min: 0, max: 0.95, noNaN: true }),
  weighted: fc.boolean(),
  multipliers: fc.constantFrom<Case["multipliers"]>("none", "positive", "withZero"),
  bounds: fc.boolean(),
  updates: fc.constantFrom<UpdateScheme>("auto", "gram", "residual"),
  exactRidge: fc.boolean(),
  crossValidated: fc.boolean(),
});

/** λ_max by hand for the penalized columns (Friedman et al. 2010 §2.5), ignoring unpenalized ones. */
function roughTop(x: number[][], y: number[], weights: number[] | null, alpha: number): number {
  const { totalWeight, centre, scale } = columnScales(x, weights, true, true);
  let ybar = 0;
  for (let i = 0; i < y.length; i++) ybar += (weights ? weights[i] : 1) * y[i];
  ybar /= totalWeight;
  let top = 0;
  for (let j = 0; j < x[0].length; j++) {
    let s = 0;
    for (let i = 0; i < y.length; i++) s += (weights ? weights[i] : 1) * ((x[i][j] - centre[j]) / scale[j]) * (y[i] - ybar);
    top = Math.max(top, Math.abs(s) / (totalWeight * Math.max(alpha, 0.001)));
  }
  return top;
}

function runCase(c: Case, rows: number, columns: number, alpha: number, label: string): FitResult["diagnostics"] {
  const problem = makeProblem({ seed: c.seed, rows, columns, design: c.design, rho: c.rho, nonzero: 3, noise: 0.5 });
  const random = new TestRandom(c.seed ^ 0x5bd1e995);
  let weights: number[] | null = null;
  if (c.weighted) {
    weights = Array.from({ length: rows }, () => 0.2 + 2.8 * random.uniform());
    // two zero-weight rows (never enough to empty a 3-fold split)
    const zeros = random.permutation(rows).slice(0, 2);
    for (const i of zeros) weights[i] = 0;
  }
  let multipliers: number[] | null = null;
  if (c.multipliers !== "none") {
    multipliers = Array.from({ length: columns }, () => (random.uniform() < 0.3 ? 2 : 1));
    // at most 2 unpenalized predictors, so they never exhaust the rows of a fold
    if (c.multipliers === "withZero") for (const j of random.permutation(columns).slice(0, 2)) multipliers[j] = 0;
  }
  let lower: number[] | null = null;
  let upper: number[] | null = null;
  if (c.bounds) {
    lower = new Array<number>(columns).fill(-Infinity);
    upper = new Array<number>(columns).fill(Infinity);
    for (let j = 0; j < columns; j++) {
      const u = random.uniform();
      if (u < 0.25) lower[j] = 0;
      else if (u < 0.5) upper[j] = 0;
    }
  }
  const options: FitOptions = {
    mixes: [alpha],
    weights,
    penaltyMultipliers: multipliers,
    lowerBounds: lower,
    upperBounds: upper,
    updates: c.updates,
    exactRidge: c.exactRidge,
  };
  let result: FitResult;
  if (c.crossValidated) {
    result = fit(problem.x, problem.y, { ...options, folds: 3, seed: c.seed % 1000, strengthCount: 60 });
  } else {
    const bottom = rows > columns ? 1e-3 : 3e-2;
    result = fit(problem.x, problem.y, { ...options, strength: bottom * roughTop(problem.x, problem.y, weights, alpha), strengthCount: 40 });
  }
  const path = result.path;
  expect(path.strengths.length).toBeGreaterThan(0);
  for (let k = 0; k < path.strengths.length; k++) {
    const report = checkKkt({
      x: problem.x,
      y: problem.y,
      weights,
      intercept: path.intercepts[k],
      coefficients: path.coefficients[k],
      lambda: path.strengths[k],
      alpha,
      multipliers,
      lower,
      upper,
    });
    record(label, report.max);
    record(`${label} [${result.diagnostics.solver}, ${result.diagnostics.updates}]`, report.max);
    if (!(report.max <= KKT_TOLERANCE)) {
      throw new Error(
        `KKT violated at point ${k} (λ = ${path.strengths[k]}): max ${report.max} (coordinate ${report.coordinate} at x${report.worstPredictor + 1}, intercept ${report.interceptViolation}, feasibility ${report.feasibility}); solver ${result.diagnostics.solver}/${result.diagnostics.updates}, engine's own figure ${result.diagnostics.maxKktViolation}`,
      );
    }
  }
  return result.diagnostics;
}

const solversSeen = new Set<string>();

describe.each([
  { rows: 40, columns: 8, shape: "n > p (40×8)" },
  { rows: 15, columns: 40, shape: "p > n (15×40)" },
])("KKT at every point of the full-data path, $shape", ({ rows, columns, shape }) => {
  test.each([0, 0.3, 1])("mix α = %p", (alpha) => {
    fc.assert(
      fc.property(caseArbitrary, (c) => {
        const d = runCase(c, rows, columns, alpha, `${shape}, α = ${alpha}`);
        solversSeen.add(`${rows}x${columns} ${d.solver} ${d.updates}`);
      }),
      { numRuns: RUNS, seed: 20240611 + Math.round(alpha * 10) + rows },
    );
  });

  test("ridge by the exact spectral path (no bounds, positive multipliers)", () => {
    const ridgeCase = caseArbitrary.map((c): Case => ({
      ...c,
      bounds: false,
      multipliers: c.multipliers === "withZero" ? "positive" : c.multipliers,
      exactRidge: true,
    }));
    fc.assert(
      fc.property(ridgeCase, (c) => {
        const d = runCase(c, rows, columns, 0, `${shape}, α = 0 spectral`);
        expect(d.solver).toBe("spectral"); // engine/path.ts spectralApplies: α = 0, no bounds, positive multipliers
        solversSeen.add(`${rows}x${columns} ${d.solver} ${d.updates}`);
      }),
      { numRuns: 15, seed: 77 + rows },
    );
  });

  test("ridge by coordinate descent (exactRidge: false), both update schemes", () => {
    fc.assert(
      fc.property(caseArbitrary, fc.constantFrom<UpdateScheme>("gram", "residual"), (c, updates) => {
        const d = runCase({ ...c, exactRidge: false, updates }, rows, columns, 0, `${shape}, α = 0 descent`);
        expect(d.solver).toBe("descent");
        expect(d.updates).toBe(updates);
        solversSeen.add(`${rows}x${columns} ${d.solver} ${d.updates}`);
      }),
      { numRuns: 15, seed: 99 + rows },
    );
  });
});

describe("KKT without an intercept or without standardization (problem.ts conventions)", () => {
  test.each([
    { intercept: false, standardize: true },
    { intercept: true, standardize: false },
    { intercept: false, standardize: false },
  ])("intercept $intercept, standardize $standardize", ({ intercept, standardize }) => {
    fc.assert(
      fc.property(
        fc.integer({ min: 0, max: 0x7fffffff }),
        fc.constantFrom(0, 0.3, 1),
        fc.constantFrom<UpdateScheme>("gram", "residual"),
        fc.constantFrom([30, 6], [12, 25]),
        (seed, alpha, updates, [rows, columns]) => {
          const problem = makeProblem({ seed, rows, columns, design: "ar1", rho: 0.5, nonzero: 3, noise: 0.5 });
          const result = fit(problem.x, problem.y, { mixes: [alpha], folds: 3, seed: 1, intercept, standardize, updates, strengthCount: 40 });
          const path = result.path;
          for (let k = 0; k < path.strengths.length; k++) {
            if (!intercept) expect(path.intercepts[k]).toBe(0); // no intercept: b0 is fixed at 0
            const report = checkKkt({
              x: problem.x,
              y: problem.y,
              intercept: path.intercepts[k],
              coefficients: path.coefficients[k],
              lambda: path.strengths[k],
              alpha,
              withIntercept: intercept,
              standardize,
            });
            record(`intercept ${intercept}, standardize ${standardize}`, report.max);
            expect(report.max).toBeLessThanOrEqual(KKT_TOLERANCE);
          }
        },
      ),
      { numRuns: 12, seed: 4321 },
    );
  });
});

test("coverage: both shapes ran descent with gram and residual updates, and the spectral ridge path", () => {
  for (const shape of ["40x8", "15x40"]) {
    for (const solver of ["descent gram", "descent residual"]) expect(solversSeen).toContain(`${shape} ${solver}`);
    expect(Array.from(solversSeen).some((s) => s.startsWith(`${shape} spectral`))).toBe(true);
  }
});

describe("the checker itself can fail", () => {
  const problem = makeProblem({ seed: 7, rows: 30, columns: 5, design: "ar1", rho: 0.5, nonzero: 2, noise: 0.5 });

  test("one predictor: the closed-form elastic-net solution passes, a perturbed one fails", () => {
    // Single standardized predictor: b̃ = S(c, λα) / (1 + λ(1−α)), c = x̃ᵀ(y − ȳ)/n
    // (Friedman, Hastie & Tibshirani 2010 §2.1, eq. 5 with one coordinate).
    const x = problem.x.map((row) => [row[0]]);
    const { centre, scale } = columnScales(x, null, true, true);
    const n = x.length;
    const ybar = problem.y.reduce((a, b) => a + b, 0) / n;
    let c = 0;
    for (let i = 0; i < n; i++) c += ((x[i][0] - centre[0]) / scale[0]) * (problem.y[i] - ybar);
    c /= n;
    const alpha = 0.3;
    const lambda = Math.abs(c) / 2;
    const soft = Math.sign(c) * Math.max(Math.abs(c) - lambda * alpha, 0);
    const bt = soft / (1 + lambda * (1 - alpha));
    const b = bt / scale[0];
    const b0 = ybar - b * centre[0];
    const good = checkKkt({ x, y: problem.y, intercept: b0, coefficients: [b], lambda, alpha });
    expect(good.max).toBeLessThan(1e-12); // closed form above: exact up to rounding
    const bad = checkKkt({ x, y: problem.y, intercept: b0, coefficients: [b * (1 + 1e-4)], lambda, alpha });
    expect(bad.coordinate).toBeGreaterThan(KKT_TOLERANCE);
    const shifted = checkKkt({ x, y: problem.y, intercept: b0 + 1e-4 * lambda, coefficients: [b], lambda, alpha });
    expect(shifted.interceptViolation).toBeGreaterThan(KKT_TOLERANCE);
  });

  test("an engine solution passes; nudging a zero coefficient, the intercept or crossing a bound fails", () => {
    const lower = [-Infinity, 0, -Infinity, -Infinity, -Infinity];
    const result = fit(problem.x, problem.y, { mixes: [1], strength: 0.05, lowerBounds: lower });
    const base = { x: problem.x, y: problem.y, lambda: 0.05, alpha: 1, lower };
    const ok = checkKkt({ ...base, intercept: result.intercept, coefficients: result.coefficients });
    expect(ok.max).toBeLessThanOrEqual(KKT_TOLERANCE);
    const zero = result.coefficients.findIndex((b) => b === 0);
    expect(zero).toBeGreaterThanOrEqual(0); // the lasso at this strength leaves some predictor out (precondition)
    for (const j of [zero, result.coefficients.findIndex((b) => b !== 0)]) {
      const nudged = result.coefficients.slice();
      nudged[j] += 1e-3 * (nudged[j] === 0 ? 1 : nudged[j]);
      const report = checkKkt({ ...base, intercept: result.intercept, coefficients: nudged });
      expect(report.max).toBeGreaterThan(KKT_TOLERANCE);
    }
    const infeasible = result.coefficients.slice();
    infeasible[1] = -1e-3;
    expect(checkKkt({ ...base, intercept: result.intercept, coefficients: infeasible }).feasibility).toBeGreaterThan(KKT_TOLERANCE);
  });
});
