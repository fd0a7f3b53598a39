/**
 * Two-class (penalized logistic) fits: agreement with an independent Newton solve, invariances of
 * the model, the step control, determinism and the input checks.
 *
 * Objective (engine/logistic.ts): −(1/Σw) Σ w [y η − log(1 + e^η)] + λ Σ m_j [α|b̃_j| + (1−α)/2 b̃_j²]
 * on standardized predictors (Friedman, Hastie & Tibshirani 2010, J. Stat. Software 33(1), §3).
 */
import fc from "fast-check";
import { CholeskyDecomposition, Matrix } from "ml-matrix";
import { InputError } from "../../engine/errors";
import { fit, fitAsync, FitOptions, FitResult } from "../../engine/fit";
import { LogisticDescent } from "../../engine/logistic";
import { problemFromRows } from "../../engine/problem";
import { columnScales } from "../helpers/kkt";
import { checkLogisticKkt, sigmoid } from "../helpers/logisticKkt";
import { expectRelative, expectVectorRelative } from "../helpers/numeric";
import { TestRandom } from "../helpers/random";

/** Rows of normal predictors with offsets and scales, and a 0/1 outcome drawn from a logistic model (Math.exp). */
function twoClassData(seed: number, rows: number, columns: number, strength = 1): { x: number[][]; y: number[] } {
  const random = new TestRandom(seed);
  const offsets = Array.from({ length: columns }, (_, j) => (j % 2 ? 5 : -3) * (j + 1));
  const scales = Array.from({ length: columns }, (_, j) => 0.5 + j);
  const x: number[][] = [];
  const y: number[] = [];
  for (let i = 0; i < rows; i++) {
    const z = Array.from({ length: columns }, () => random.normal());
    x.push(z.map((v, j) => offsets[j] + scales[j] * v));
    const eta = strength * (1.2 * z[0] - 0.8 * (columns > 1 ? z[1] : 0) + 0.4 * (columns > 2 ? z[2] : 0)) + 0.3;
    y.push(random.uniform() < sigmoid(eta) ? 1 : 0);
  }
  return { x, y };
}

function expectInputError(run: () => unknown, code: string, message: RegExp): void {
  let caught: unknown = null;
  try {
    run();
  } catch (error) {
    caught = error;
  }
  expect(caught).toBeInstanceOf(InputError);
  expect((caught as InputError).code).toBe(code);
  expect((caught as InputError).message).toMatch(message);
}

/**
 * Ridge-penalized logistic regression by Newton's method, written here from the objective with
 * ml-matrix's Cholesky solve (a general-purpose library): unknowns (b0, b̃) on the predictors
 * standardized by test/helpers/kkt.ts columnScales; gradient (1/W) X̃₁ᵀ W (p − y) + λ (0, M b̃) and
 * Hessian (1/W) X̃₁ᵀ diag(w p(1 − p)) X̃₁ + λ diag(0, M), iterated until the step is below 1e-15.
 * Returns the intercept and coefficients in the data's units.
 */
function ridgeLogisticByNewton(
  x: number[][],
  y: number[],
  lambda: number,
  weights: number[] | null,
  multipliers: number[] | null,
): { intercept: number; coefficients: number[] } {
  const n = x.length;
  const p = x[0].length;
  const { totalWeight, centre, scale } = columnScales(x, weights, true, true);
  const design = x.map((row) => [1, ...row.map((v, j) => (v - centre[j]) / scale[j])]);
  let beta = new Array<number>(p + 1).fill(0);
  for (let iteration = 0; iteration < 100; iteration++) {
    const gradient = new Array<number>(p + 1).fill(0);
    const hessian = Matrix.zeros(p + 1, p + 1);
    for (let i = 0; i < n; i++) {
      const w = (weights ? weights[i] : 1) / totalWeight;
      let eta = 0;
      for (let a = 0; a <= p; a++) eta += design[i][a] * beta[a];
      const prob = sigmoid(eta);
      for (let a = 0; a <= p; a++) {
        gradient[a] += w * design[i][a] * (prob - y[i]);
        // Upper triangle, mirrored below: ml-matrix's Cholesky wants an exactly symmetric matrix.
        for (let b = a; b <= p; b++) {
          const value = hessian.get(a, b) + w * prob * (1 - prob) * design[i][a] * design[i][b];
          hessian.set(a, b, value);
          hessian.set(b, a, value);
        }
      }
    }
    for (let a = 1; a <= p; a++) {
      const m = multipliers ? multipliers[a - 1] : 1;
      gradient[a] += lambda * m * beta[a];
      hessian.set(a, a, hessian.get(a, a) + lambda * m);
    }
    const step = new CholeskyDecomposition(hessian).solve(Matrix.columnVector(gradient)).to1DArray();
    beta = beta.map((b, a) => b - step[a]);
    if (Math.max(...step.map(Math.abs)) < 1e-15 * Math.max(1, ...beta.map(Math.abs))) break;
  }
  const coefficients = beta.slice(1).map((b, j) => b / scale[j]);
  let intercept = beta[0];
  for (let j = 0; j < p; j++) intercept -= coefficients[j] * centre[j];
  return { intercept, coefficients };
}

describe("ridge-penalized logistic regression matches an independent Newton solve", () => {
  test.each([
    ["rows > predictors", 80, 4, 0.05, false, false],
    ["with weights and multipliers", 80, 4, 0.02, true, true],
    ["weak penalty", 120, 3, 1e-4, false, false],
    ["predictors > rows", 25, 40, 0.1, false, false],
  ])("%s", (_, rows, columns, lambda, weighted, multiplied) => {
    const { x, y } = twoClassData(11 + rows + columns, rows, columns);
    const weights = weighted ? y.map((_v, i) => [0.5, 1, 2][i % 3]) : null;
    const multipliers = multiplied ? Array.from({ length: columns }, (_v, j) => [1, 0.5, 2, 1.5][j % 4]) : null;
    const reference = ridgeLogisticByNewton(x, y, lambda, weights, multipliers);
    for (const updates of ["gram", "residual"] as const) {
      const result = fit(x, y, { outcome: "two-class", mixes: [0], strength: lambda, weights, penaltyMultipliers: multipliers, updates });
      // Newton's method on the same objective, ml-matrix Cholesky: agreement to 1e-8 (the brief's bar).
      expectVectorRelative(result.coefficients, reference.coefficients, 1e-8, `${updates} coefficients`);
      expectRelative(result.intercept, reference.intercept, 1e-8, `${updates} intercept`);
    }
  });
});

describe("the model does not depend on units, offsets, labels or the scale of the weights", () => {
  const base: FitOptions = { outcome: "two-class", mixes: [0.5], strength: 0.01 };
  /** Data on a grid of 2^-10, so that shifting by 1e6 or 1e12 is exact (values stay below 2^40). */
  function gridded(seed: number): { x: number[][]; y: number[] } {
    const { x, y } = twoClassData(seed, 60, 3);
    return { x: x.map((row) => row.map((v) => Math.round(v * 1024) / 1024)), y };
  }

  test("scaling a predictor by c divides its coefficient by c and changes nothing else (property)", () => {
    fc.assert(
      fc.property(fc.integer({ min: 1, max: 1e6 }), fc.constantFrom(1e-6, 0.37, 3, 1e4, 1e9), fc.integer({ min: 0, max: 2 }), (seed, c, column) => {
        const { x, y } = gridded(seed);
        const scaled = x.map((row) => row.map((v, j) => (j === column ? v * c : v)));
        const a = fit(x, y, base);
        const b = fit(scaled, y, base);
        // Standardization makes the penalized problem the same (common practice; engine/problem.ts).
        expectRelative(b.coefficients[column] * c, a.coefficients[column], 1e-9, "scaled coefficient × c");
        for (let j = 0; j < 3; j++) if (j !== column) expectRelative(b.coefficients[j], a.coefficients[j], 1e-9, `coefficient ${j}`);
        expectRelative(b.intercept, a.intercept, 1e-9, "intercept");
      }),
      { numRuns: 12, seed: 7 },
    );
  });

  test("shifting a predictor by 1e6 or 1e12 changes only the intercept (property)", () => {
    fc.assert(
      fc.property(fc.integer({ min: 1, max: 1e6 }), fc.constantFrom(1e6, -1e6, 1e12, -1e12), fc.integer({ min: 0, max: 2 }), (seed, offset, column) => {
        const { x, y } = gridded(seed);
        const shifted = x.map((row) => row.map((v, j) => (j === column ? v + offset : v)));
        const a = fit(x, y, base);
        const b = fit(shifted, y, base);
        expectVectorRelative(b.coefficients, a.coefficients, 1e-9, "coefficients");
        // b0' = b0 − b_j·offset: compare on the scale of the terms that cancel.
        const expected = a.intercept - a.coefficients[column] * offset;
        expect(Math.abs(b.intercept - expected)).toBeLessThanOrEqual(1e-9 * (Math.abs(a.coefficients[column] * offset) + Math.abs(a.intercept)));
        // The in-sample probabilities are computed in centred form: the offset costs them no digits.
        expectRelative(b.classFit?.logLoss ?? NaN, a.classFit?.logLoss ?? NaN, 1e-9, "in-sample log loss");
      }),
      { numRuns: 12, seed: 8 },
    );
  });

  test("swapping the event (y → 1 − y) flips the sign of every coefficient and the intercept (property)", () => {
    fc.assert(
      fc.property(fc.integer({ min: 1, max: 1e6 }), fc.constantFrom(0, 0.5, 1), (seed, mix) => {
        const { x, y } = twoClassData(seed, 70, 4);
        const options: FitOptions = { outcome: "two-class", mixes: [mix], strength: 0.005 };
        const a = fit(x, y, options);
        const b = fit(
          x,
          y.map((v) => 1 - v),
          options,
        );
        // The log-likelihood is symmetric in the labels with η → −η (common practice).
        expectVectorRelative(
          b.coefficients.map((v) => -v),
          a.coefficients,
          1e-9,
          "negated coefficients",
        );
        expectRelative(-b.intercept, a.intercept, 1e-9, "negated intercept");
      }),
      { numRuns: 10, seed: 9 },
    );
  });

  test("scaling every weight by 2^k gives the same bits; by 1e7, the same fit to rounding", () => {
    const { x, y } = twoClassData(21, 80, 3);
    const weights = y.map((_v, i) => [1, 2, 0.5, 3][i % 4]);
    const options: FitOptions = { outcome: "two-class", mixes: [0.3, 1], folds: 4, strengthCount: 15, weights };
    const reference = fit(x, y, options);
    for (const k of [-40, 7, 300]) {
      const scaled = fit(x, y, { ...options, weights: weights.map((w) => w * 2 ** k) });
      // The table at the cutoff counts rows as sums of their weights (classMetrics.ts): those scale by 2^k exactly.
      const table = scaled.classFit as NonNullable<FitResult["classFit"]>;
      const expected = reference.classFit as NonNullable<FitResult["classFit"]>;
      for (const key of ["eventsCaught", "eventsMissed", "falseAlarms", "correctAllClear"] as const) {
        expect(table[key]).toBe(expected[key] * 2 ** k);
        table[key] = expected[key];
      }
      // Everything else: weights enter only through ω = w/Σw, and the working copy scales them by a power of two (exact: engine/scale.ts).
      expect(JSON.stringify(scaled)).toBe(JSON.stringify(reference));
    }
    const big = fit(x, y, { ...options, weights: weights.map((w) => w * 1e7) });
    expectVectorRelative(big.coefficients, reference.coefficients, 1e-9, "coefficients, weights × 1e7");
    expect(big.strength).toBe(reference.strength);
  });

  test("integer weights are the same as repeated rows", () => {
    const { x, y } = twoClassData(31, 50, 3);
    const weights = y.map((_v, i) => 1 + (i % 3));
    const repeatedX: number[][] = [];
    const repeatedY: number[] = [];
    x.forEach((row, i) => {
      for (let r = 0; r < weights[i]; r++) {
        repeatedX.push(row);
        repeatedY.push(y[i]);
      }
    });
    for (const mix of [0, 0.5, 1]) {
      const options: FitOptions = { outcome: "two-class", mixes: [mix], strength: 0.003 };
      const weighted = fit(x, y, { ...options, weights });
      const repeated = fit(repeatedX, repeatedY, options);
      // A weight w is the row counted w times in every sum of the objective (common practice).
      expectVectorRelative(weighted.coefficients, repeated.coefficients, 1e-8, `mix ${mix} coefficients`);
      expectRelative(weighted.intercept, repeated.intercept, 1e-8, `mix ${mix} intercept`);
    }
  });
});

describe("step control", () => {
  /** A solver on rows drawn from a logistic model, at its unpenalized fit. */
  function solver(mix: number, covariance: boolean, steps: { before: number; after: number; halvings: number }[]): LogisticDescent {
    const random = new TestRandom(4);
    const n = 100;
    const p = 3;
    const x = new Float64Array(n * p);
    for (let i = 0; i < x.length; i++) x[i] = random.normal();
    const y = new Float64Array(n);
    for (let i = 0; i < n; i++) y[i] = random.uniform() < sigmoid(2 * x[i] - x[n + i]) ? 1 : 0;
    const problem = problemFromRows({ rows: n, columns: p, data: x }, y, null, null, { intercept: true, standardize: true });
    const penalty = { mix, multipliers: new Float64Array(p).fill(1), lower: new Float64Array(p).fill(-Infinity), upper: new Float64Array(p).fill(Infinity) };
    const descent = new LogisticDescent(problem, y, penalty, { tolerance: 1e-9, maxSweeps: 10000, intercept: true, covariance, onStep: (step) => steps.push(step) });
    descent.fitUnpenalized();
    return descent;
  }

  test.each([
    [0, false],
    [0.5, false],
    [1, false],
    [0, true],
    [1, true],
  ])("mix %p, covariance form %p: the objective never rises, and halvings are counted", (mix, covariance) => {
    const steps: { before: number; after: number; halvings: number }[] = [];
    const descent = solver(mix, covariance, steps);
    // A start far on the wrong side (every coefficient the wrong sign, probabilities saturated):
    // Newton's first steps overshoot there, so the step control has to halve them.
    descent.startFrom(5, [-20, 10, 5]);
    const report = descent.solve(0.01, Infinity);
    expect(report.converged).toBe(true);
    expect(steps.length).toBeGreaterThan(1);
    for (const step of steps) expect(step.after).toBeLessThanOrEqual(step.before + 1e-12 * Math.abs(step.before)); // monotone up to the sum's rounding
    const halvings = steps.reduce((sum, step) => sum + step.halvings, 0);
    expect(halvings).toBeGreaterThan(0);
    expect(report.stepHalvings).toBe(halvings);
    expect(descent.stepHalvings).toBe(halvings);
    // Warm-started down a path, no halving is needed at all.
    const calm: { before: number; after: number; halvings: number }[] = [];
    const fresh = solver(mix, covariance, calm);
    for (const lambda of [0.2, 0.1, 0.05, 0.02, 0.01]) fresh.solve(lambda, lambda * 2);
    for (const step of calm) expect(step.after).toBeLessThanOrEqual(step.before + 1e-12 * Math.abs(step.before));
    expect(fresh.stepHalvings).toBe(0);
  });

  test("a fit reports no halvings and no warning about them when none were needed", () => {
    const { x, y } = twoClassData(5, 100, 4);
    const result = fit(x, y, { outcome: "two-class", mixes: [0.5], folds: 3, strengthCount: 20 });
    expect(result.diagnostics.stepHalvings).toBe(0);
    expect(result.warnings.some((w) => w.code === "step-halved")).toBe(false);
  });
});

describe("results", () => {
  const { x, y } = twoClassData(3, 120, 5);

  test("same inputs and seed give bit-identical results", () => {
    const options: FitOptions = { outcome: "two-class", mixes: [0, 0.5, 1], folds: 5, seed: 17, measure: "auc", rule: "one-se" };
    const first = fit(x, y, options);
    const second = fit(x, y, options);
    expect(second).toEqual(first);
    expect(JSON.stringify(second)).toBe(JSON.stringify(first));
  });

  test("progress counts one unit per full path and per fold, and fitAsync gives the same result", async () => {
    const calls: [number, number][] = [];
    const options: FitOptions = { outcome: "two-class", mixes: [0, 1], folds: 3, strengthCount: 10 };
    const result = fit(x, y, { ...options, onProgress: (done, total) => calls.push([done, total]) });
    expect(calls).toEqual(Array.from({ length: 8 }, (_, k) => [k + 1, 8])); // 2 mixes × (1 + 3 folds)
    expect(JSON.stringify(await fitAsync(x, y, options))).toBe(JSON.stringify(result));
  });

  test("a constant column is left out with coefficient 0", () => {
    const withConstant = x.map((row) => [...row, 7]);
    const result = fit(withConstant, y, { outcome: "two-class", mixes: [0.5], folds: 3, strengthCount: 10 });
    expect(result.constantColumns).toEqual(["x6"]);
    expect(result.coefficients[5]).toBe(0);
    expect(result.warnings.some((w) => w.code === "constant-column")).toBe(true);
    const plain = fit(x, y, { outcome: "two-class", mixes: [0.5], folds: 3, strengthCount: 10 });
    expectVectorRelative(result.coefficients.slice(0, 5), plain.coefficients, 1e-12, "the other coefficients");
  });

  test("a two-class result has log-odds coefficients, a logistic model and an in-sample class score", () => {
    const result: FitResult = fit(x, y, { outcome: "two-class", mixes: [1], folds: 4 });
    expect(result.outcome).toBe("two-class");
    expect(result.model.link).toBe("logistic");
    expect(result.targetSpread).toBe(1);
    expect(result.cv?.measure).toBe("deviance");
    const { scale } = columnScales(x, null, true, true);
    // Standardized coefficients are log-odds per SD of the predictor: b_j × SD_j.
    expectVectorRelative(
      result.standardizedCoefficients,
      result.coefficients.map((b, j) => b * scale[j]),
      1e-12,
      "standardized coefficients",
    );
    const probabilities = x.map((row) => sigmoid(result.intercept + row.reduce((s, v, j) => s + v * result.coefficients[j], 0)));
    // The in-sample log loss from the reported model, computed here (common practice: mean −log likelihood).
    const logLoss = -y.reduce((s, v, i) => s + Math.log(v === 1 ? probabilities[i] : 1 - probabilities[i]), 0) / y.length;
    expectRelative(result.classFit?.logLoss ?? NaN, logLoss, 1e-9, "in-sample log loss");
    // path.r2 is the share of the null deviance explained: 1 − deviance / null deviance.
    const share = y.reduce((s, v) => s + v, 0) / y.length;
    const nullLogLoss = -(share * Math.log(share) + (1 - share) * Math.log(1 - share));
    expectRelative(result.path.r2[result.path.strengths.indexOf(result.strength)], 1 - logLoss / nullLogLoss, 1e-9, "deviance explained");
    expect(result.path.r2[0]).toBeLessThan(1e-9);
    // Every path point is optimal (test/helpers/logisticKkt.ts).
    const k = result.path.strengths.length - 1;
    expect(checkLogisticKkt({ x, y, intercept: result.path.intercepts[k], coefficients: result.path.coefficients[k], lambda: result.path.strengths[k], alpha: 1 }).max).toBeLessThan(1e-7);
    expect(JSON.stringify(result)).not.toContain("NaN");
  });
});

describe("strength 0: the unpenalized baseline", () => {
  test("is the maximum-likelihood fit, which a ridge fit approaches as the strength falls", () => {
    const { x, y } = twoClassData(12, 150, 3);
    const weights = y.map((_v, i) => 1 + (i % 2));
    const result = fit(x, y, { outcome: "two-class", mixes: [0], strength: 0, weights });
    expect(result.diagnostics.solver).toBe("maximum-likelihood");
    expect(result.model.link).toBe("logistic");
    // Two routes: Newton on the likelihood (logisticBaseline.ts) and the penalized solver at a
    // ridge strength of 1e-10, whose solution differs from the maximum by O(λ) (common practice).
    const ridge = fit(x, y, { outcome: "two-class", mixes: [0], strength: 1e-10, weights });
    expectVectorRelative(result.coefficients, ridge.coefficients, 1e-7, "coefficients");
    expectRelative(result.intercept, ridge.intercept, 1e-7, "intercept");
    // Independent Newton solve with ml-matrix at a vanishing penalty agrees as well.
    const reference = ridgeLogisticByNewton(x, y, 1e-12, weights, null);
    expectVectorRelative(result.coefficients, reference.coefficients, 1e-8, "coefficients vs Newton");
    const baseline = result.baseline;
    expect(baseline).not.toBeNull();
    expect(baseline?.residualStandardDeviation).toBeNaN();
    expect(baseline?.separation).toBeNull();
    // r2 is the share of the null deviance explained; z = estimate / SE (the baseline's contract).
    expectRelative(baseline?.r2 ?? NaN, 1 - (baseline?.deviance ?? NaN) / (baseline?.nullDeviance ?? NaN), 1e-15, "deviance explained");
    expect(result.path.r2).toEqual([baseline?.r2]);
    result.coefficients.forEach((b, j) => expectRelative(baseline?.zValues?.[j] ?? NaN, b / (baseline?.standardErrors[j] ?? NaN), 1e-12, `z of x${j + 1}`));
    expect(baseline?.nullDegreesOfFreedom).toBe(149);
    expect(baseline?.degreesOfFreedom).toBe(146);
  });

  test("separated classes: the terms are named and the warning says to use a penalty", () => {
    const { x } = twoClassData(13, 60, 2);
    // x1 is centred at −3: its sign about the centre splits the classes.
    const y = x.map((row) => (row[0] > -3 ? 1 : 0));
    const result = fit(x, y, { outcome: "two-class", mixes: [1], strength: 0 });
    expect(result.baseline?.separation?.terms).toEqual(["x1"]);
    expect(result.warnings.find((w) => w.code === "separated")?.message).toMatch(/penalized fit/);
  });
});

describe("input checks", () => {
  const { x, y } = twoClassData(4, 40, 3);
  test("a target other than 0/1, or with one class, is refused with a message", () => {
    expectInputError(() => fit(x, y.map((v) => v * 2), { outcome: "two-class" }), "setting", /must hold 0 or 1 in every row/);
    expectInputError(() => fit(x, y.map(() => 1), { outcome: "two-class" }), "constant-target", /needs rows of both classes/);
    const weights = y.map((v) => (v === 1 ? 0 : 1));
    expectInputError(() => fit(x, y, { outcome: "two-class", weights }), "constant-target", /positive weight .* needs rows of both classes/);
  });

  test("measures are refused across outcomes, and the cutoff must lie strictly between 0 and 1", () => {
    expectInputError(() => fit(x, y, { outcome: "two-class", measure: "mse" }), "setting", /mse is for number outcomes.*use deviance, misclassified or auc/);
    expectInputError(() => fit(x, y, { measure: "auc" }), "setting", /auc is for yes\/no \(two-class\) outcomes.*use mse or mae/);
    for (const cutoff of [0, 1, -0.2, 1.5, NaN]) {
      expectInputError(() => fit(x, y, { outcome: "two-class", cutoff }), "setting", /cutoff .* between 0 and 1/);
    }
  });

  test("strength 0 with bounds is refused: bounds need a penalized fit", () => {
    expectInputError(() => fit(x, y, { outcome: "two-class", mixes: [1], strength: 0, lowerBounds: [0, 0, 0] }), "strength", /needs a strength above 0/);
  });

  test("an outcome other than number or two-class is refused", () => {
    expectInputError(() => fit(x, y, { outcome: "three-class" as never }), "setting", /outcome must be number or two-class/);
  });
});
