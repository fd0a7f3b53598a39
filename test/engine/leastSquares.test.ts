/**
 * The exact unpenalized baseline: published reference values, and agreement with independent
 * computations (ml-matrix) on generated problems.
 *
 * Provenance of the fixtures (copied from the project's shared reference notes):
 * - longley_nist.tsv: NIST Statistical Reference Datasets, linear regression, "Longley" (higher
 *   difficulty), 16 rows, columns y, x1..x6, taken from NIST's own data file (it carries 2325 and
 *   70551, not the 2326 / 70561 typos of some copies).
 * - diabetes.tsv: Efron, Hastie, Johnstone & Tibshirani (2004), "Least Angle Regression", Annals of
 *   Statistics 32(2): 442 rows, ten baseline predictors AGE..S6 in raw units, response Y.
 * - prostate.tsv: Stamey et al. (1989), as used in Hastie, Tibshirani & Friedman, The Elements of
 *   Statistical Learning, 2nd ed., Section 3.2: 97 rows, eight predictors, response lpsa, train flag.
 */
import { readFileSync } from "fs";
import { join } from "path";
import { Matrix, inverse, solve } from "ml-matrix";
import { leastSquares, LeastSquaresResult } from "../../engine/leastSquares";
import { ColumnMatrix, fromRows, selectRows } from "../../engine/matrix";

// ---------------------------------------------------------------- helpers

/** Log relative error, NIST's accuracy grade: the number of correct leading digits of `estimate`. */
function logRelativeError(estimate: number, certified: number): number {
  if (estimate === certified) return Infinity;
  return -Math.log10(Math.abs(estimate - certified) / Math.abs(certified));
}

/** |actual − expected| / |expected|; expected must not be 0. */
function relativeError(actual: number, expected: number): number {
  if (expected === 0) throw new Error("relativeError requires a nonzero expected value");
  return Math.abs(actual - expected) / Math.abs(expected);
}

/** Asserts every component agrees to `tolerance` relative error, naming the component that fails. */
function expectAllRelative(actual: ArrayLike<number | null>, expected: ArrayLike<number>, tolerance: number): void {
  expect(actual.length).toBe(expected.length);
  for (let j = 0; j < expected.length; j++) {
    const value = actual[j];
    if (value === null) throw new Error(`component ${j} is null, expected ${expected[j]}`);
    const error = relativeError(value, expected[j]);
    if (!(error <= tolerance)) {
      throw new Error(`component ${j}: ${value} vs ${expected[j]}, relative error ${error} > ${tolerance}`);
    }
  }
}

/** Asserts |actual − expected| <= tolerance for every component. */
function expectAllAbsolute(actual: ArrayLike<number>, expected: ArrayLike<number>, tolerance: number): void {
  expect(actual.length).toBe(expected.length);
  for (let j = 0; j < expected.length; j++) {
    const error = Math.abs(actual[j] - expected[j]);
    if (!(error <= tolerance)) {
      throw new Error(`component ${j}: ${actual[j]} vs ${expected[j]}, absolute error ${error} > ${tolerance}`);
    }
  }
}

/** Reads a tab-separated fixture: header names and trimmed text cells. */
function readTable(name: string): { header: string[]; rows: string[][] } {
  const lines = readFileSync(join(__dirname, "..", "fixtures", name), "utf8").trim().split(/\r?\n/);
  return {
    header: lines[0].split("\t").map((cell) => cell.trim()),
    rows: lines.slice(1).map((line) => line.split("\t").map((cell) => cell.trim())),
  };
}

/** Deterministic uniform generator on [0, 1) (mulberry32), so generated problems are reproducible. */
function seededUniform(seed: number): () => number {
  let state = seed >>> 0;
  return () => {
    state = (state + 0x6d2b79f5) >>> 0;
    let t = state;
    t = Math.imul(t ^ (t >>> 15), t | 1);
    t ^= t + Math.imul(t ^ (t >>> 7), t | 61);
    return ((t ^ (t >>> 14)) >>> 0) / 4294967296;
  };
}

/** A generated well-conditioned problem: independent uniform predictors, known slopes plus noise. */
function generatedProblem(seed: number, rows: number, slopes: number[], intercept: number) {
  const uniform = seededUniform(seed);
  const predictorRows: number[][] = [];
  const response: number[] = [];
  for (let i = 0; i < rows; i++) {
    const row = slopes.map(() => 4 * uniform() - 2);
    predictorRows.push(row);
    let value = intercept + (uniform() - 0.5) * 0.4;
    for (let j = 0; j < slopes.length; j++) value += slopes[j] * row[j];
    response.push(value);
  }
  return { predictorRows, response };
}

/** No field of a result is NaN or infinite. */
function expectNoNaN(result: LeastSquaresResult): void {
  const numbers = [
    result.intercept,
    result.residualSumOfSquares,
    result.residualStandardDeviation,
    result.r2,
    ...result.coefficients,
    ...Array.from(result.fitted),
  ];
  if (result.interceptStandardError !== null) numbers.push(result.interceptStandardError);
  for (const se of result.standardErrors) if (se !== null) numbers.push(se);
  for (const value of numbers) expect(Number.isFinite(value)).toBe(true);
}

/** Columns of a column-major matrix, as plain rows for ml-matrix. */
function toRows(matrix: ColumnMatrix, withOnes: boolean): number[][] {
  const out: number[][] = [];
  for (let i = 0; i < matrix.rows; i++) {
    const row: number[] = withOnes ? [1] : [];
    for (let j = 0; j < matrix.columns; j++) row.push(matrix.data[j * matrix.rows + i]);
    out.push(row);
  }
  return out;
}

// ---------------------------------------------------------------- NIST StRD Longley

describe("NIST StRD Longley", () => {
  const table = readTable("longley_nist.tsv");
  const response = table.rows.map((row) => Number(row[0]));
  const predictors = fromRows(table.rows.map((row) => row.slice(1).map(Number)));
  const fit = leastSquares(predictors, response);

  // certified values, NIST StRD Longley (B0 is the intercept, B1..B6 the slopes)
  const certifiedEstimates = [
    -3482258.63459582, 15.0618722713733, -0.035819179292591, -2.02022980381683, -1.03322686717359,
    -0.0511041056535807, 1829.15146461355,
  ];
  // certified values, NIST StRD Longley (standard deviations of the estimates)
  const certifiedStandardDeviations = [
    890420.383607373, 84.9149257747669, 0.0334910077722432, 0.488399681651699, 0.214274163161675,
    0.22607320006937, 455.478499142212,
  ];
  const certifiedResidualStandardDeviation = 304.854073561965; // certified value, NIST StRD Longley
  const certifiedR2 = 0.995479004577296; // certified value, NIST StRD Longley
  const certifiedResidualSumOfSquares = 836424.055505915; // certified value, NIST StRD Longley

  test("shape of the fit: full rank, 9 residual degrees of freedom", () => {
    expect(fit.rank).toBe(6); // certified model: six slopes, all estimated
    expect(fit.aliased).toEqual([]); // certified model: six slopes, all estimated
    expect(fit.degreesOfFreedom).toBe(9); // certified value, NIST StRD Longley (residual df)
  });

  test("all seven certified estimates to at least 12 digits (LRE >= 12)", () => {
    const estimates = [fit.intercept, ...fit.coefficients];
    estimates.forEach((estimate, k) => {
      expect(logRelativeError(estimate, certifiedEstimates[k])).toBeGreaterThanOrEqual(12);
    });
  });

  test("certified standard deviations of the estimates and the residual SD to at least 10 digits", () => {
    const standardErrors = [fit.interceptStandardError, ...fit.standardErrors];
    standardErrors.forEach((se, k) => {
      expect(se).not.toBeNull();
      expect(logRelativeError(se as number, certifiedStandardDeviations[k])).toBeGreaterThanOrEqual(10);
    });
    expect(logRelativeError(fit.residualStandardDeviation, certifiedResidualStandardDeviation)).toBeGreaterThanOrEqual(10);
    expect(logRelativeError(fit.residualSumOfSquares, certifiedResidualSumOfSquares)).toBeGreaterThanOrEqual(10);
  });

  test("R² to at least 10 digits", () => {
    expect(logRelativeError(fit.r2, certifiedR2)).toBeGreaterThanOrEqual(10);
  });
});

// ---------------------------------------------------------------- published check values

describe("diabetes data (Efron et al. 2004 setting)", () => {
  const table = readTable("diabetes.tsv");
  const n = table.rows.length;
  const raw = table.rows.map((row) => row.slice(0, 10).map(Number));
  const response = table.rows.map((row) => Number(row[10]));
  // Columns centred and scaled to unit Euclidean length, y centred, as in the paper's setting.
  const standardizedColumns = Array.from({ length: 10 }, (_, j) => {
    const column = raw.map((row) => row[j]);
    const mean = column.reduce((a, b) => a + b, 0) / n;
    const centred = column.map((v) => v - mean);
    const length = Math.sqrt(centred.reduce((a, v) => a + v * v, 0));
    return centred.map((v) => v / length);
  });
  const responseMean = response.reduce((a, b) => a + b, 0) / n;
  const centredResponse = response.map((v) => v - responseMean);
  const predictors = fromRows(raw.map((_, i) => standardizedColumns.map((column) => column[i])));
  const fit = leastSquares(predictors, centredResponse);

  test("least-squares coefficients to the printed 2 decimals, R² 0.518", () => {
    expect(table.header.slice(0, 10)).toEqual(["AGE", "SEX", "BMI", "BP", "S1", "S2", "S3", "S4", "S5", "S6"]);
    // check value from the shared reference notes (a general-purpose least-squares routine in the
    // setting of Efron et al. 2004), printed to 2 decimals: allow half a unit in the last place plus slack
    const published = [-10.01, -239.82, 519.85, 324.38, -792.18, 476.74, 101.04, 177.06, 751.27, 67.63];
    expectAllAbsolute(fit.coefficients, published, 0.006);
    expect(Math.abs(fit.r2 - 0.518)).toBeLessThanOrEqual(0.0005); // check value from the shared reference notes, 3 decimals
    // sum of |b| = 3460.0, the right end of the paper's Figure 1 axis (from memory, per the notes)
    const l1 = fit.coefficients.reduce((a, b) => a + Math.abs(b), 0);
    expect(Math.abs(l1 - 3460)).toBeLessThanOrEqual(0.5);
    expect(Math.abs(fit.intercept)).toBeLessThanOrEqual(1e-9); // centred data: intercept 0 (by construction)
  });
});

describe("prostate data (ESL 2nd ed., Table 3.3, least-squares column)", () => {
  const table = readTable("prostate.tsv");
  const raw = table.rows.map((row) => row.slice(1, 9).map(Number));
  const response = table.rows.map((row) => Number(row[9]));
  const isTrain = table.rows.map((row) => row[10] === "T");
  const n = raw.length;
  // Predictors standardized over all 97 rows. The SD divisor is n − 1: it reproduces every entry
  // of the table (lcavol 0.6795 -> 0.680), whereas divisor n gives lcavol 0.6760 and misses it.
  const standardizedColumns = Array.from({ length: 8 }, (_, j) => {
    const column = raw.map((row) => row[j]);
    const mean = column.reduce((a, b) => a + b, 0) / n;
    const sd = Math.sqrt(column.reduce((a, v) => a + (v - mean) ** 2, 0) / (n - 1));
    return column.map((v) => (v - mean) / sd);
  });
  const predictors = fromRows(raw.map((_, i) => standardizedColumns.map((column) => column[i])));
  // Test rows get weight 0: they are left out of the fit but still receive fitted values.
  const fit = leastSquares(predictors, response, { weights: isTrain.map((train) => (train ? 1 : 0)) });

  test("the intercept and eight coefficients to 3 decimals; test MSE 0.521", () => {
    expect(isTrain.filter(Boolean).length).toBe(67); // ESL Section 3.2: 67 training rows
    expect(table.header.slice(1, 9)).toEqual(["lcavol", "lweight", "age", "lbph", "svi", "lcp", "gleason", "pgg45"]);
    // Hastie, Tibshirani & Friedman, ESL 2nd ed., Table 3.3 (LS column), via the shared reference notes
    expect(Math.abs(fit.intercept - 2.465)).toBeLessThanOrEqual(0.0005);
    const published = [0.68, 0.263, -0.141, 0.21, 0.305, -0.288, -0.021, 0.267];
    expectAllAbsolute(fit.coefficients, published, 0.0005);
    let squaredError = 0;
    let testRows = 0;
    for (let i = 0; i < n; i++) {
      if (isTrain[i]) continue;
      squaredError += (response[i] - fit.fitted[i]) ** 2;
      testRows++;
    }
    expect(testRows).toBe(30); // ESL Section 3.2: 30 test rows
    expect(Math.abs(squaredError / testRows - 0.521)).toBeLessThanOrEqual(0.0005); // ESL Table 3.3, test error
    expect(fit.degreesOfFreedom).toBe(67 - 8 - 1); // by definition: train rows − slopes − intercept
  });

  test("weight 0 equals leaving the rows out", () => {
    const trainRows = isTrain.flatMap((train, i) => (train ? [i] : []));
    const subset = leastSquares(
      selectRows(predictors, trainRows),
      trainRows.map((i) => response[i]),
    );
    // the same problem computed another way (rows removed instead of weighted 0)
    expectAllRelative(fit.coefficients, subset.coefficients, 1e-12);
    expectAllRelative(fit.standardErrors as number[], subset.standardErrors as number[], 1e-12);
    expect(relativeError(fit.intercept, subset.intercept)).toBeLessThanOrEqual(1e-12);
    expect(relativeError(fit.residualSumOfSquares, subset.residualSumOfSquares)).toBeLessThanOrEqual(1e-12);
    expect(fit.degreesOfFreedom).toBe(subset.degreesOfFreedom); // the same problem computed another way
  });
});

// ---------------------------------------------------------------- independent computations

describe("agreement with ml-matrix", () => {
  test("weighted fit equals the solution of the weighted normal equations", () => {
    const { predictorRows, response } = generatedProblem(20240611, 60, [1.5, -2, 0.75, 3, -1.25], 4);
    const uniform = seededUniform(7);
    const weights = response.map(() => 0.2 + 2 * uniform());
    const fit = leastSquares(fromRows(predictorRows), response, { weights });

    // computed another way with ml-matrix: D = [1 X], solve (DᵀWD) β = DᵀWy; Cov β = σ² (DᵀWD)⁻¹
    const design = new Matrix(predictorRows.map((row) => [1, ...row]));
    const weighted = design.clone();
    for (let i = 0; i < weighted.rows; i++) for (let j = 0; j < weighted.columns; j++) weighted.set(i, j, weighted.get(i, j) * weights[i]);
    const gram = weighted.transpose().mmul(design);
    const moment = weighted.transpose().mmul(Matrix.columnVector(response));
    const beta = solve(gram, moment).to1DArray();
    const residuals = response.map((v, i) => v - design.getRow(i).reduce((a, d, j) => a + d * beta[j], 0));
    const residualSumOfSquares = residuals.reduce((a, r, i) => a + weights[i] * r * r, 0);
    const variance = residualSumOfSquares / (60 - 6);
    const gramInverse = inverse(gram);
    const standardErrors = beta.map((_, j) => Math.sqrt(variance * gramInverse.get(j, j)));

    expect(relativeError(fit.intercept, beta[0])).toBeLessThanOrEqual(1e-10);
    expectAllRelative(fit.coefficients, beta.slice(1), 1e-10);
    expect(relativeError(fit.residualSumOfSquares, residualSumOfSquares)).toBeLessThanOrEqual(1e-10);
    expect(relativeError(fit.interceptStandardError as number, standardErrors[0])).toBeLessThanOrEqual(1e-10);
    expectAllRelative(fit.standardErrors, standardErrors.slice(1), 1e-10);
    expect(fit.degreesOfFreedom).toBe(54); // by definition: 60 rows − 5 slopes − intercept
  });

  test("no-intercept fit equals ml-matrix least squares without the ones column", () => {
    const { predictorRows, response } = generatedProblem(99, 40, [2, -1, 0.5, 1.75], 3);
    const predictors = fromRows(predictorRows);
    const fit = leastSquares(predictors, response, { intercept: false });

    // computed another way with ml-matrix: solve() on a tall matrix is a QR least-squares solve
    const beta = solve(new Matrix(toRows(predictors, false)), Matrix.columnVector(response)).to1DArray();
    const residualSumOfSquares = response.reduce((a, v, i) => {
      const r = v - predictorRows[i].reduce((s, x, j) => s + x * beta[j], 0);
      return a + r * r;
    }, 0);
    const uncentredTotal = response.reduce((a, v) => a + v * v, 0);

    expectAllRelative(fit.coefficients, beta, 1e-10);
    expect(fit.intercept).toBe(0); // by definition (no intercept)
    expect(fit.interceptStandardError).toBeNull(); // by definition (no intercept)
    expect(fit.degreesOfFreedom).toBe(40 - 4); // by definition: rows − slopes
    expect(relativeError(fit.residualSumOfSquares, residualSumOfSquares)).toBeLessThanOrEqual(1e-10);
    // R² about 0 without an intercept (definition in the result's contract)
    expect(relativeError(fit.r2, 1 - residualSumOfSquares / uncentredTotal)).toBeLessThanOrEqual(1e-12);
  });
});

describe("weights", () => {
  test("weight 2 on a row equals that row entered twice", () => {
    const { predictorRows, response } = generatedProblem(31, 25, [0.5, -1.5, 2.5], -1);
    const doubled = [2, 5, 11, 17];
    const weights = response.map((_, i) => (doubled.includes(i) ? 2 : 1));
    const weightedFit = leastSquares(fromRows(predictorRows), response, { weights });
    const duplicatedRows = [...predictorRows, ...doubled.map((i) => predictorRows[i])];
    const duplicatedResponse = [...response, ...doubled.map((i) => response[i])];
    const duplicatedFit = leastSquares(fromRows(duplicatedRows), duplicatedResponse);
    // the same estimates computed another way (frequency weights as repeated rows; common practice)
    expectAllRelative(weightedFit.coefficients, duplicatedFit.coefficients, 1e-12);
    expect(relativeError(weightedFit.intercept, duplicatedFit.intercept)).toBeLessThanOrEqual(1e-12);
    expect(relativeError(weightedFit.residualSumOfSquares, duplicatedFit.residualSumOfSquares)).toBeLessThanOrEqual(1e-12);
    expect(relativeError(weightedFit.r2, duplicatedFit.r2)).toBeLessThanOrEqual(1e-12);
    // degrees of freedom count rows with positive weight, not the weight total
    expect(weightedFit.degreesOfFreedom).toBe(25 - 3 - 1);
    expect(duplicatedFit.degreesOfFreedom).toBe(29 - 3 - 1);
  });
});

// ---------------------------------------------------------------- rank deficiency and edge cases

describe("rank deficiency", () => {
  const { predictorRows, response } = generatedProblem(4242, 30, [1, -2, 0.5, 1.5], 2);
  const reference = leastSquares(fromRows(predictorRows), response);

  test("a column equal to 2·x1 + x3 is aliased and the rest equals the fit without it", () => {
    const withCombination = predictorRows.map((row) => [...row, 2 * row[0] + row[2]]);
    const fit = leastSquares(fromRows(withCombination), response);
    // by construction: column 4 is 2·x1 + x3
    expect(fit.aliased).toEqual([4]);
    expect(fit.rank).toBe(4);
    expect(fit.coefficients[4]).toBe(0);
    expect(fit.standardErrors[4]).toBeNull();
    // the fit without the column, computed separately
    expectAllRelative(fit.coefficients.slice(0, 4), reference.coefficients, 1e-12);
    expectAllRelative(fit.standardErrors.slice(0, 4), reference.standardErrors as number[], 1e-12);
    expect(relativeError(fit.intercept, reference.intercept)).toBeLessThanOrEqual(1e-12);
    expect(relativeError(fit.residualStandardDeviation, reference.residualStandardDeviation)).toBeLessThanOrEqual(1e-12);
    expect(fit.degreesOfFreedom).toBe(reference.degreesOfFreedom);
  });

  test("a duplicated column: the second copy is aliased", () => {
    const withDuplicate = predictorRows.map((row) => [row[0], row[1], row[1], row[2], row[3]]);
    const fit = leastSquares(fromRows(withDuplicate), response);
    // by construction: column 2 repeats column 1
    expect(fit.aliased).toEqual([2]);
    expect(fit.coefficients[2]).toBe(0);
    expect(fit.standardErrors[2]).toBeNull();
    expectAllRelative([fit.coefficients[0], fit.coefficients[1], fit.coefficients[3], fit.coefficients[4]], reference.coefficients, 1e-12);
  });

  test("the aliased column is the one that combines columns to its left", () => {
    // x1, (2·x1 + x3), x2, x3, x4: x3 = (2·x1 + x3) − 2·x1 is the dependent one
    const reordered = predictorRows.map((row) => [row[0], 2 * row[0] + row[2], row[1], row[2], row[3]]);
    const fit = leastSquares(fromRows(reordered), response);
    expect(fit.aliased).toEqual([3]);
    // by algebra: b1·x1 + b3·x3 = (b1 − 2·b3)·x1 + b3·(2·x1 + x3)
    const [b1, b2, b3, b4] = reference.coefficients;
    const [c1, c13, c2, c3, c4] = fit.coefficients;
    expectAllRelative([c1, c13, c2, c4], [b1 - 2 * b3, b3, b2, b4], 1e-11);
    expect(c3).toBe(0);
    expect(relativeError(fit.residualSumOfSquares, reference.residualSumOfSquares)).toBeLessThanOrEqual(1e-11);
  });

  test("a constant column is aliased with the intercept, but kept without an intercept", () => {
    const withConstant = predictorRows.map((row) => [row[0], 7.3, row[1], row[2], row[3]]);
    const fit = leastSquares(fromRows(withConstant), response);
    // by construction: column 1 is constant
    expect(fit.aliased).toEqual([1]);
    expect(fit.coefficients[1]).toBe(0);
    // the constant column plays the intercept's part: 7.3·b = intercept of the reference fit
    const noIntercept = leastSquares(fromRows(withConstant), response, { intercept: false });
    expect(noIntercept.aliased).toEqual([]); // by construction: nothing else is constant
    expect(relativeError(7.3 * noIntercept.coefficients[1], reference.intercept)).toBeLessThanOrEqual(1e-11);
  });

  test("an all-zero column is aliased", () => {
    // by construction: column 0 is all zeros
    const withZero = predictorRows.map((row) => [0, ...row]);
    expect(leastSquares(fromRows(withZero), response).aliased).toEqual([0]);
    expect(leastSquares(fromRows(withZero), response, { intercept: false }).aliased).toEqual([0]);
  });
});

describe("exact fits and degenerate sizes", () => {
  test("an exact linear function: residual SD 0 (to rounding), no NaN", () => {
    // y = 3 + 2·x1 − x2 + 0.5·x3, exactly representable (integers and halves)
    const predictorRows: number[][] = [];
    const response: number[] = [];
    for (let i = 0; i < 12; i++) {
      const row = [i, (i * i) % 7, (3 * i + 1) % 5];
      predictorRows.push(row);
      response.push(3 + 2 * row[0] - row[1] + 0.5 * row[2]);
    }
    const fit = leastSquares(fromRows(predictorRows), response);
    expectNoNaN(fit);
    // exact by construction
    expectAllRelative(fit.coefficients, [2, -1, 0.5], 1e-13);
    expect(relativeError(fit.intercept, 3)).toBeLessThanOrEqual(1e-13);
    // exact by construction: zero residuals, so SD, standard errors 0 and R² 1 up to rounding
    expect(fit.residualStandardDeviation).toBeLessThanOrEqual(1e-13);
    expect(Math.abs(fit.r2 - 1)).toBeLessThanOrEqual(1e-14);
    for (const se of fit.standardErrors) expect(se as number).toBeLessThanOrEqual(1e-13);
  });

  test("zero residual degrees of freedom: SD 0 and standard errors null", () => {
    const fit = leastSquares(fromRows([[1, 2], [2, 1], [4, 5]]), [1, 2, 3]);
    expectNoNaN(fit);
    // by definition: 3 rows − 2 slopes − intercept = 0, so the contract reports SD 0 and null SEs
    expect(fit.degreesOfFreedom).toBe(0);
    expect(fit.residualStandardDeviation).toBe(0);
    expect(fit.standardErrors).toEqual([null, null]);
    expect(fit.interceptStandardError).toBeNull();
  });

  test("more columns than rows allow: the excess is aliased", () => {
    const fit = leastSquares(fromRows([[1, 2, 0], [2, 1, 1], [4, 5, 3]]), [1, 2, 3]);
    expectNoNaN(fit);
    // by construction: 3 rows leave room for 2 slopes beside the intercept
    expect(fit.rank).toBe(2);
    expect(fit.aliased).toEqual([2]);
    expect(fit.degreesOfFreedom).toBe(0);
  });

  test("no predictors with an intercept: the weighted mean model", () => {
    const fit = leastSquares(fromRows([[], [], []]), [1, 2, 4], { weights: [1, 2, 3] });
    // by hand: mean = (1 + 4 + 12) / 6 = 17/6; RSS = Σ w (y − mean)²; df = 2; SE = √(RSS/2 / 6)
    const mean = 17 / 6;
    const rss = (1 - mean) ** 2 + 2 * (2 - mean) ** 2 + 3 * (4 - mean) ** 2;
    expect(relativeError(fit.intercept, mean)).toBeLessThanOrEqual(1e-15);
    expect(relativeError(fit.residualSumOfSquares, rss)).toBeLessThanOrEqual(1e-14);
    expect(fit.degreesOfFreedom).toBe(2); // by hand: 3 rows − intercept
    expect(relativeError(fit.interceptStandardError as number, Math.sqrt(rss / 2 / 6))).toBeLessThanOrEqual(1e-14);
    expect(fit.r2).toBe(0); // by definition: the mean model explains nothing
    expect(fit.coefficients).toEqual([]);
    expect(Array.from(fit.fitted)).toEqual([fit.intercept, fit.intercept, fit.intercept]);
  });

  test("no predictors and no intercept: everything is residual", () => {
    const fit = leastSquares(fromRows([[], []]), [3, 4], { intercept: false });
    expectNoNaN(fit);
    expect(fit.residualSumOfSquares).toBe(25); // by hand: 3² + 4²
    expect(fit.degreesOfFreedom).toBe(2); // by hand: 2 rows, nothing estimated
    expect(fit.r2).toBe(0); // by definition: nothing is fitted
  });
});
