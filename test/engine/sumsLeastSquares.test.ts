/**
 * Strength 0 (least squares) from a sums table: engine/leastSquares.ts leastSquaresOfSums through
 * engine/fitSums.ts, against the rows' route (fit.ts at strength 0: Householder QR on the rows).
 *
 * Sources of the expected values:
 * - Two routes agreeing: the normal equations on the centred sums (common practice; Golub & Van
 *   Loan, Matrix Computations, §5.3.1) and QR on the rows solve the same weighted least-squares
 *   problem, so on well-conditioned problems the coefficients agree to ≤ 1e-9 relative (the
 *   issue's bar), and so do the standard errors, residual SD and R², which both routes compute by
 *   the same convention (σ² = Σw·r² / (rows of positive weight − terms kept − 1)).
 * - Published standard: NIST StRD Longley, certified estimates and standard deviations.
 * - The documented difference (engine/fitSums.ts): rows of weight 0 inside a block of positive
 *   weight are counted in a sums table's rows, so the sums route's df is larger by their number
 *   and its standard errors smaller by exactly √(df₊ / df) (follows from σ² = RSS / df).
 */
import { readFileSync } from "fs";
import { join } from "path";
import fc from "fast-check";
import { InputError } from "../../engine/errors";
import { fit, FitResult } from "../../engine/fit";
import { fitFromSums } from "../../engine/fitSums";
import { leastSquaresOfSums } from "../../engine/leastSquares";
import { emptySums } from "../../engine/problem";
import { checkSums, sumsOfRows } from "../../engine/sums";
import type { SumsTable } from "../../engine/sumsTable";
import { expectRelative, expectVectorRelative } from "../helpers/numeric";
import { makeProblem } from "../helpers/problems";
import { TestRandom } from "../helpers/random";

const TOLERANCE = 1e-9; // the issue's bar for least squares from sums against the rows' route

function names(p: number): string[] {
  return Array.from({ length: p }, (_, j) => `roast_${j + 1}`);
}

/** The sums table of rows dealt into `blocks` blocks in turn. */
function tableOf(x: number[][], y: number[], w: number[] | null, blocks: number): SumsTable {
  return sumsOfRows(x, y, w, y.map((_, i) => `b${i % blocks}`), names(x[0].length), "cup_score");
}

/** The two routes' least-squares results agree to `tolerance` (estimates, SEs, residual SD, R², df, aliased). */
function expectSameLeastSquares(fromSums: FitResult, fromRows: FitResult, tolerance: number, seTolerance = tolerance): void {
  expect(fromSums.diagnostics.solver).toBe("least-squares");
  expectVectorRelative(fromSums.coefficients, fromRows.coefficients, tolerance, "coefficients");
  // The intercept against the size of the terms it balances (b0 = ȳ − Σ b_j x̄_j).
  const size = Math.abs(fromRows.intercept) + fromRows.targetSpread + fromRows.coefficients.reduce((s, b, j) => s + Math.abs(b) * (fromRows.predictorSpreads[j] + 1), 0);
  expect(Math.abs(fromSums.intercept - fromRows.intercept)).toBeLessThanOrEqual(tolerance * size);
  const a = fromSums.baseline!;
  const b = fromRows.baseline!;
  expect(a.aliased).toEqual(b.aliased);
  expect(a.degreesOfFreedom).toBe(b.degreesOfFreedom);
  expect(a.standardErrors.map((se) => se === null)).toEqual(b.standardErrors.map((se) => se === null));
  expectVectorRelative(a.standardErrors.map((se) => se ?? 0), b.standardErrors.map((se) => se ?? 0), seTolerance, "standard errors");
  if (b.interceptStandardError !== null) expectRelative(a.interceptStandardError as number, b.interceptStandardError, seTolerance, "intercept SE");
  if (b.residualStandardDeviation > 0) expectRelative(a.residualStandardDeviation, b.residualStandardDeviation, seTolerance, "residual SD");
  expect(Math.abs(a.r2 - b.r2)).toBeLessThanOrEqual(tolerance);
  expect(fromSums.rowsUsed).toBe(fromRows.rowsUsed);
  expect(fromSums.warnings.map((w) => w.code)).toEqual(fromRows.warnings.map((w) => w.code));
}

describe("least squares from sums equals least squares from rows", () => {
  test("random well-conditioned problems: weights, intercept or none, 1 to 5 blocks, far-off means (property)", () => {
    fc.assert(
      fc.property(
        fc.record({
          seed: fc.integer({ min: 1, max: 1_000_000 }),
          p: fc.integer({ min: 1, max: 12 }),
          extra: fc.integer({ min: 3, max: 60 }),
          blocks: fc.integer({ min: 1, max: 5 }),
          weighted: fc.boolean(),
          intercept: fc.boolean(),
          offset: fc.constantFrom(0, 1e6, 1e9),
        }),
        ({ seed, p, extra, blocks, weighted, intercept, offset }) => {
          const rows = p + extra + 2;
          const problem = makeProblem({ seed, rows, columns: p, design: "ar1", rho: 0.5, nonzero: Math.min(3, p), noise: 0.5 });
          const random = new TestRandom(seed ^ 0x5bd1e995);
          // A location shift of the predictors (timestamps): only with an intercept, which absorbs it.
          const x = problem.x.map((row) => row.map((v) => v + (intercept ? offset : 0)));
          const w = weighted ? problem.y.map(() => 0.2 + 2.8 * random.uniform()) : null;
          const options = { strength: 0, mixes: [1], intercept };
          const fromRows = fit(x, problem.y, { ...options, names: names(p), ...(w ? { weights: w } : {}) });
          const fromSums = fitFromSums(tableOf(x, problem.y, w, blocks), options);
          expectSameLeastSquares(fromSums, fromRows, TOLERANCE);
        },
      ),
      { numRuns: 60, seed: 12 },
    );
  });

  test("NIST StRD Longley: certified estimates to 12 digits and SDs to 10, and the rows' route to 1e-9", () => {
    const lines = readFileSync(join(__dirname, "..", "fixtures", "longley_nist.tsv"), "utf8").trim().split(/\r?\n/);
    const rows = lines.slice(1).map((line) => line.split("\t").map((cell) => Number(cell.trim())));
    const y = rows.map((r) => r[0]);
    const x = rows.map((r) => r.slice(1));
    // certified values, NIST StRD Longley (B0 is the intercept, B1..B6 the slopes)
    const certified = [-3482258.63459582, 15.0618722713733, -0.035819179292591, -2.02022980381683, -1.03322686717359, -0.0511041056535807, 1829.15146461355];
    // certified values, NIST StRD Longley (standard deviations of the estimates)
    const certifiedSd = [890420.383607373, 84.9149257747669, 0.0334910077722432, 0.488399681651699, 0.214274163161675, 0.22607320006937, 455.478499142212];
    const certifiedResidualSd = 304.854073561965; // certified value, NIST StRD Longley
    const certifiedR2 = 0.995479004577296; // certified value, NIST StRD Longley
    for (const blocks of [1, 4]) {
      const fromSums = fitFromSums(tableOf(x, y, null, blocks), { strength: 0, mixes: [1] });
      const lre = (estimate: number, c: number): number => -Math.log10(Math.abs(estimate - c) / Math.abs(c));
      [fromSums.intercept, ...fromSums.coefficients].forEach((v, k) => expect(lre(v, certified[k])).toBeGreaterThanOrEqual(12));
      const base = fromSums.baseline!;
      [base.interceptStandardError as number, ...(base.standardErrors as number[])].forEach((v, k) => expect(lre(v, certifiedSd[k])).toBeGreaterThanOrEqual(10));
      expect(lre(base.residualStandardDeviation, certifiedResidualSd)).toBeGreaterThanOrEqual(10);
      expect(lre(base.r2, certifiedR2)).toBeGreaterThanOrEqual(10);
      expect(base.degreesOfFreedom).toBe(9); // certified value, NIST StRD Longley (residual df)
      expectSameLeastSquares(fromSums, fit(x, y, { strength: 0, mixes: [1], names: names(6) }), TOLERANCE);
    }
  });

  test("aliased terms (an exact sum of two others, a constant) are reported as the rows' route reports them", () => {
    const problem = makeProblem({ seed: 41, rows: 60, columns: 4, design: "ar1", rho: 0.3, nonzero: 3, noise: 0.5, rescale: false });
    // roast_3 = roast_1 + roast_2 exactly (small integers: the sum is exact); roast_5 constant.
    const x = problem.x.map((row, i) => {
      const a = Math.round(8 * row[0]);
      const b = Math.round(8 * row[1]);
      return [a, b, a + b, row[2] + 0.01 * i, 7];
    });
    const y = problem.y;
    const fromRows = fit(x, y, { strength: 0, mixes: [1], names: names(5) });
    const fromSums = fitFromSums(tableOf(x, y, null, 3), { strength: 0, mixes: [1] });
    expect(fromRows.baseline!.aliased).toEqual(["roast_3", "roast_5"]);
    expectSameLeastSquares(fromSums, fromRows, TOLERANCE);
    expect(fromSums.coefficients[2]).toBe(0);
    expect(fromSums.constantColumns).toEqual(["roast_5"]);
  });

  test("a block of weight 0: left out with the warning weight-zero-rows, as rows of weight 0 are by the rows' route", () => {
    const problem = makeProblem({ seed: 43, rows: 50, columns: 3, design: "ar1", rho: 0.4, nonzero: 2, noise: 0.5 });
    const random = new TestRandom(43);
    const w = problem.y.map((_, i) => (i % 5 === 4 ? 0 : 0.5 + random.uniform())); // the rows of b4 weigh 0
    // The table of the rows that weigh something (blocks b0 … b3), and block b4 as a query engine
    // returns a block whose rows all weigh 0 (engine/sumsSql.ts): weight 0, its rows, sums 0.
    const keep = problem.y.map((_, i) => i % 5 !== 4);
    const sub = <T,>(values: T[]): T[] => values.filter((_, i) => keep[i]);
    const positive = sumsOfRows(sub(problem.x), sub(problem.y), sub(w), sub(problem.y.map((_, i) => `b${i % 5}`)), names(3), "cup_score");
    const zeros = (n: number): number[] => new Array<number>(n).fill(0);
    const table = checkSums({
      ...positive,
      blocks: [...positive.blocks, { label: "b4", weight: 0, rows: 10, mean: positive.centre.terms.slice(), offset: zeros(3), meanY: positive.centre.target, offsetY: 0, cross: zeros(6), crossY: zeros(3), yy: 0 }],
    });
    const fromSums = fitFromSums(table, { strength: 0, mixes: [1] });
    const fromRows = fit(problem.x, problem.y, { strength: 0, mixes: [1], weights: w, names: names(3) });
    const zero = fromSums.warnings.find((warning) => warning.code === "weight-zero-rows");
    expect(zero?.message).toBe("block 'b4' weighs 0 in total: 10 rows of weight 0 left out of the fit and of the degrees of freedom");
    expect(fromSums.baseline!.degreesOfFreedom).toBe(40 - 3 - 1);
    expectSameLeastSquares({ ...fromSums, warnings: fromSums.warnings.filter((x) => x !== zero) }, fromRows, TOLERANCE);
    // Cross-validation needs every block to score: refused, naming the block and what to do.
    expect(() => fitFromSums(table, { mixes: [1] })).toThrow(/^block 'b4' has weight 0: cross-validation needs rows of positive weight in every block to score it; .*strength 0, least squares\)$/);
  });

  test("rows of weight 0 inside blocks: same estimates; df counts them, so the SEs are smaller by exactly √(df₊/df) (documented)", () => {
    const problem = makeProblem({ seed: 47, rows: 40, columns: 3, design: "ar1", rho: 0.4, nonzero: 2, noise: 0.5 });
    const w = problem.y.map((_, i) => (i % 8 === 3 ? 0 : 1)); // 5 rows of weight 0, spread over the blocks
    const fromSums = fitFromSums(tableOf(problem.x, problem.y, w, 4), { strength: 0, mixes: [1] });
    const fromRows = fit(problem.x, problem.y, { strength: 0, mixes: [1], weights: w, names: names(3) });
    expectVectorRelative(fromSums.coefficients, fromRows.coefficients, TOLERANCE, "coefficients");
    const dfRows = fromRows.baseline!.degreesOfFreedom;
    const dfSums = fromSums.baseline!.degreesOfFreedom;
    expect([dfRows, dfSums]).toEqual([35 - 4, 40 - 4]);
    const ratio = Math.sqrt(dfRows / dfSums);
    expectVectorRelative(fromSums.baseline!.standardErrors as number[], (fromRows.baseline!.standardErrors as number[]).map((se) => se * ratio), TOLERANCE, "SEs × √(df₊/df)");
    expectRelative(fromSums.baseline!.residualStandardDeviation, fromRows.baseline!.residualStandardDeviation * ratio, TOLERANCE, "residual SD × √(df₊/df)");
  });

  test("the residual variance convention: σ² = Σw·r² / (rows − terms − 1), r from the rows by hand (common practice)", () => {
    const problem = makeProblem({ seed: 53, rows: 30, columns: 2, design: "ar1", rho: 0.2, nonzero: 2, noise: 0.5 });
    const w = problem.y.map((_, i) => 1 + (i % 3));
    const fromSums = fitFromSums(tableOf(problem.x, problem.y, w, 3), { strength: 0, mixes: [1] });
    let rss = 0;
    problem.x.forEach((row, i) => {
      const r = problem.y[i] - fromSums.intercept - row[0] * fromSums.coefficients[0] - row[1] * fromSums.coefficients[1];
      rss += w[i] * r * r;
    });
    expectRelative(fromSums.baseline!.residualStandardDeviation, Math.sqrt(rss / (30 - 2 - 1)), 1e-9, "residual SD by hand");
    // The in-sample score comes from the sums too: RMSE² = Σw·r² / Σw.
    expectRelative(fromSums.fit.rmse, Math.sqrt(rss / w.reduce((s, v) => s + v, 0)), 1e-9, "RMSE by hand");
    expect(fromSums.fit.mae).toBeNaN();
  });

  test("the weights' scale: weights all 1 are no weights, weights × 3 give σ × √3 and the same SEs, by either route (common practice)", () => {
    const problem = makeProblem({ seed: 61, rows: 25, columns: 2, design: "ar1", rho: 0.2, nonzero: 2, noise: 0.5 });
    const { x, y } = problem;
    const options = { strength: 0, mixes: [1] };
    const plain = fit(x, y, { ...options, names: names(2) }).baseline!;
    for (const [w, factor] of [
      [y.map(() => 1), 1],
      [y.map(() => 3), 3],
      [y.map((_, i) => 0.75 * (1 + (i % 2))), 1],
    ] as [number[], number][]) {
      const fromRows = fit(x, y, { ...options, names: names(2), weights: w }).baseline!;
      const fromSums = fitFromSums(tableOf(x, y, w, 3), options).baseline!;
      for (const b of [fromRows, fromSums]) {
        if (factor !== 1 || w.every((v) => v === 1)) {
          expectRelative(b.residualStandardDeviation, plain.residualStandardDeviation * Math.sqrt(factor), 1e-12, "residual SD × √factor");
          expectVectorRelative(b.standardErrors as number[], plain.standardErrors as number[], 1e-12, "SEs");
        }
      }
      expectRelative(fromSums.residualStandardDeviation, fromRows.residualStandardDeviation, TOLERANCE, "residual SD, the two routes");
    }
  });
});

describe("least squares from sums: shape and refusals", () => {
  test("a one-block table fits least squares (and a fixed strength) but not cross-validation", () => {
    const problem = makeProblem({ seed: 59, rows: 30, columns: 3, design: "ar1", rho: 0.2, nonzero: 2, noise: 0.5 });
    const table = tableOf(problem.x, problem.y, null, 1);
    expect(checkSums(table).blocks).toHaveLength(1);
    expect(fitFromSums(table, { strength: 0, mixes: [1] }).diagnostics.solver).toBe("least-squares");
    expect(fitFromSums(table, { strength: 0.01, mixes: [1] }).strength).toBe(0.01);
    let error: unknown;
    try {
      fitFromSums(table, {});
    } catch (e) {
      error = e;
    }
    expect(error).toBeInstanceOf(InputError);
    expect((error as InputError).message).toMatch(/^the sums table has 1 block: cross-validation needs at least 2 .*fit one strength \(e\.g\. strength 0, least squares\)$/);
  });

  test("too few rows for the terms: every term beyond the rows is aliased, no standard errors, as from rows", () => {
    const x = [
      [1, 2, 3],
      [2, 1, 5],
      [3, 5, 4],
    ];
    const y = [1, 4, 2];
    const fromRows = fit(x, y, { strength: 0, mixes: [1], names: names(3) });
    const fromSums = fitFromSums(sumsOfRows(x, y, null, ["a", "b", "a"], names(3), "cup_score"), { strength: 0, mixes: [1] });
    expect(fromSums.baseline!.aliased).toEqual(fromRows.baseline!.aliased);
    expect(fromSums.baseline!.standardErrors).toEqual([null, null, null]);
    expectVectorRelative(fromSums.coefficients, fromRows.coefficients, TOLERANCE, "coefficients");
  });

  test("leastSquaresOfSums on hand-made sums: y = 1 + 2x exactly (from memory: the line through (0,1), (1,3), (2,5))", () => {
    // Rows x = 0, 1, 2 and y = 1, 3, 5, summed about the shifts 1 and 3 (the means).
    const sums = emptySums(1);
    sums.weight = 3;
    sums.rows = 3;
    sums.xx[0] = 2; // Σ(x − 1)²
    sums.xy[0] = 4; // Σ(x − 1)(y − 3)
    sums.yy = 8; // Σ(y − 3)²
    sums.largest[0] = 2;
    const result = leastSquaresOfSums(sums, [1], 3);
    expect(result.coefficients).toEqual([2]);
    expect(result.intercept).toBe(1);
    expect(result.residualSumOfSquares).toBe(0);
    expect(result.r2).toBe(1);
    expect(result.degreesOfFreedom).toBe(1);
  });
});
