/**
 * The unpenalized two-class baseline (engine/logisticBaseline.ts): published fits, agreement with
 * an independent Newton–Raphson written here on ml-matrix, invariances, the likelihood's
 * first-order conditions, separation, and the deviance's own formula.
 *
 * Provenance of the data typed in below:
 * - Space-shuttle O-ring data, 23 launches before the Challenger accident (Dalal, Fowlkes & Hoadley
 *   1989, JASA 84(408), Table 1): launch temperature (°F) and whether any O-ring showed damage.
 *   Typed from the flight-by-flight table (flight, temperature, leak-check pressure, failure 0/1)
 *   of the UCI machine-learning repository's "Challenger USA Space Shuttle O-Ring" data set (1993). Cross-checked: the same 23 temperatures with 7 damaged launches (53, 57, 58,
 *   63, 70, 70, 75 °F) appear in the 23-mission table of damaged O-ring counts widely reprinted.
 * - A 24-launch version of the table (it has a launch at 80 °F and one at 56 °F, none at 58 °F, and
 *   some failures recorded differently), with its Minitab fit: Montgomery & Runger, Applied Statistics and Probability for
 *   Engineers, 3rd ed. (2003), supplement to Chapter 11 ("S11"), the O-ring logistic regression example:
 *   data table and "Logistic Regression Table" printed there.
 * - Vasoconstriction data (Finney 1947, Biometrika 34; analysed by Pregibon 1981, Annals of
 *   Statistics 9(4)): 39 tests, volume and rate of air inspired, constriction 1/0. Typed from the
 *   `datalines` of the SAS/STAT User's Guide, PROC LOGISTIC example "Logistic Regression Diagnostics",
 *   and cross-checked value by value against the Rdatasets copy of the `vaso` data documented in the
 *   robustbase package (csv/robustbase/vaso.csv).
 */
import { Matrix, inverse, solve } from "ml-matrix";
import {
  complementaryErrorFunction,
  logisticBaseline,
  LogisticBaselineResult,
  normalTwoSidedP,
} from "../../engine/logisticBaseline";
import { CancelledError, InputError } from "../../engine/errors";
import { leastSquares } from "../../engine/leastSquares";
import { fromRows } from "../../engine/matrix";

// ---------------------------------------------------------------- helpers

/** |actual − expected| / |expected|; expected must not be 0. */
function relativeError(actual: number, expected: number): number {
  if (expected === 0) throw new Error("relativeError requires a nonzero expected value");
  return Math.abs(actual - expected) / Math.abs(expected);
}

/** Asserts a value printed to `decimals` places: the difference is at most half a unit in its last place. */
function expectPrinted(actual: number | null, printed: number, decimals: number): void {
  if (actual === null) throw new Error(`value is null, expected ${printed}`);
  const halfUnit = 0.5 * 10 ** -decimals;
  if (!(Math.abs(actual - printed) <= halfUnit * (1 + 1e-9))) {
    throw new Error(`${actual} does not round to the printed ${printed} (${decimals} decimals)`);
  }
}

/** Asserts relative agreement to `tolerance`, naming the component that fails. */
function expectRelative(actual: number | null, expected: number, tolerance: number, label: string): void {
  if (actual === null) throw new Error(`${label} is null, expected ${expected}`);
  const error = relativeError(actual, expected);
  if (!(error <= tolerance)) throw new Error(`${label}: ${actual} vs ${expected}, relative error ${error} > ${tolerance}`);
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

/** Standard normal draws by the Box–Muller transform (test data only). */
function seededNormal(seed: number): () => number {
  const uniform = seededUniform(seed);
  return () => Math.sqrt(-2 * Math.log(1 - uniform())) * Math.cos(2 * Math.PI * uniform());
}

/** Every number in a result is finite (nulls allowed where the contract allows them). */
function expectAllFinite(result: LogisticBaselineResult): void {
  const numbers = [result.intercept, result.deviance, result.nullDeviance, ...result.coefficients, ...Array.from(result.probabilities)];
  for (const list of [result.standardErrors, result.zValues, result.pValues]) for (const v of list) if (v !== null) numbers.push(v);
  for (const v of [result.interceptStandardError, result.interceptZ, result.interceptP]) if (v !== null) numbers.push(v);
  for (const value of numbers) expect(Number.isFinite(value)).toBe(true);
}

/**
 * The independent route: plain Newton–Raphson with the normal equations XᵀWX δ = Xᵀw(y − p) solved
 * by ml-matrix's `solve` (LU / QR of ml-matrix, not this project's code), on columns the test
 * centres (two-pass weighted mean) and scales itself; no step-halving; stops when the step is below
 * 1e-15 of the coefficients. Standard errors from ml-matrix's `inverse` of XᵀWX at the optimum
 * (McCullagh & Nelder, Generalized Linear Models, 2nd ed., §4.4). Results mapped back to data units.
 */
function referenceNewton(rows: number[][], y: number[], weights: number[], withIntercept: boolean) {
  const n = rows.length;
  const p = rows[0].length;
  const total = weights.reduce((a, b) => a + b, 0);
  const means = Array.from({ length: p }, (_, j) => {
    if (!withIntercept) return 0;
    let mean = 0;
    for (let i = 0; i < n; i++) mean += weights[i] * rows[i][j];
    mean /= total;
    let correction = 0;
    for (let i = 0; i < n; i++) correction += weights[i] * (rows[i][j] - mean);
    return mean + correction / total;
  });
  const scales = Array.from({ length: p }, (_, j) => {
    let sum = 0;
    for (let i = 0; i < n; i++) sum += weights[i] * (rows[i][j] - means[j]) ** 2;
    return Math.sqrt(sum / total);
  });
  const design = rows.map((row) => [...(withIntercept ? [1] : []), ...row.map((v, j) => (v - means[j]) / scales[j])]);
  const c = design[0].length;
  let beta = new Array<number>(c).fill(0);
  let information = Matrix.zeros(c, c);
  for (let iteration = 0; iteration < 200; iteration++) {
    const gradient = new Array<number>(c).fill(0);
    information = Matrix.zeros(c, c);
    for (let i = 0; i < n; i++) {
      const eta = design[i].reduce((a, v, k) => a + v * beta[k], 0);
      const prob = 1 / (1 + Math.exp(-eta));
      const v = weights[i] * prob * (1 - prob);
      for (let a = 0; a < c; a++) {
        gradient[a] += weights[i] * design[i][a] * (y[i] - prob);
        for (let b = 0; b < c; b++) information.set(a, b, information.get(a, b) + v * design[i][a] * design[i][b]);
      }
    }
    const step = solve(information, Matrix.columnVector(gradient)).to1DArray();
    beta = beta.map((value, k) => value + step[k]);
    const largestStep = Math.max(...step.map(Math.abs));
    const largestBeta = Math.max(1, ...beta.map(Math.abs));
    if (largestStep <= 1e-15 * largestBeta && iteration > 2) break;
  }
  const covariance = inverse(information);
  const first = withIntercept ? 1 : 0;
  const coefficients = means.map((_, j) => beta[first + j] / scales[j]);
  const standardErrors = means.map((_, j) => Math.sqrt(covariance.get(first + j, first + j)) / scales[j]);
  let intercept = 0;
  let interceptStandardError = 0;
  if (withIntercept) {
    intercept = beta[0] - coefficients.reduce((a, b, j) => a + b * means[j], 0);
    const u = [1, ...means.map((m, j) => -m / scales[j])];
    interceptStandardError = Math.sqrt(covariance.mmul(Matrix.columnVector(u)).to1DArray().reduce((a, v, k) => a + v * u[k], 0));
  }
  return { intercept, coefficients, standardErrors, interceptStandardError };
}

// ---------------------------------------------------------------- published data

// O-ring data, 23 launches: temperature (°F) and any O-ring damage (1) or none (0), in flight order.
const ORING_TEMPERATURE = [66, 70, 69, 68, 67, 72, 73, 70, 57, 63, 70, 78, 67, 53, 67, 75, 70, 81, 76, 79, 75, 76, 58];
const ORING_DAMAGE = [0, 1, 0, 0, 0, 0, 0, 0, 1, 1, 1, 0, 0, 1, 0, 0, 0, 0, 0, 0, 1, 0, 1];

// O-ring data, 24 launches as printed by Montgomery & Runger (3rd ed.), S11: temperature and failure.
const ORING24_TEMPERATURE = [53, 56, 57, 63, 66, 67, 67, 67, 68, 69, 70, 70, 70, 70, 72, 73, 75, 75, 76, 76, 78, 79, 80, 81];
const ORING24_FAILURE = [1, 1, 1, 0, 0, 0, 0, 0, 0, 0, 0, 1, 1, 1, 0, 0, 0, 1, 0, 0, 0, 0, 0, 0];

// Vasoconstriction data: volume, rate, constriction (1) or not (0), in the order of the printed table.
const VASO = [
  [3.7, 0.825, 1], [3.5, 1.09, 1], [1.25, 2.5, 1], [0.75, 1.5, 1], [0.8, 3.2, 1], [0.7, 3.5, 1],
  [0.6, 0.75, 0], [1.1, 1.7, 0], [0.9, 0.75, 0], [0.9, 0.45, 0], [0.8, 0.57, 0], [0.55, 2.75, 0],
  [0.6, 3.0, 0], [1.4, 2.33, 1], [0.75, 3.75, 1], [2.3, 1.64, 1], [3.2, 1.6, 1], [0.85, 1.415, 1],
  [1.7, 1.06, 0], [1.8, 1.8, 1], [0.4, 2.0, 0], [0.95, 1.36, 0], [1.35, 1.35, 0], [1.5, 1.36, 0],
  [1.6, 1.78, 1], [0.6, 1.5, 0], [1.8, 1.5, 1], [0.95, 1.9, 0], [1.9, 0.95, 1], [1.6, 0.4, 0],
  [2.7, 0.75, 1], [2.35, 0.03, 0], [1.1, 1.83, 0], [1.1, 2.2, 1], [1.2, 2.0, 1], [0.8, 3.33, 1],
  [0.95, 1.9, 0], [0.75, 1.9, 0], [1.3, 1.625, 1],
];

describe("space-shuttle O-ring data (Dalal, Fowlkes & Hoadley 1989), 23 launches", () => {
  const baseline = logisticBaseline(fromRows(ORING_TEMPERATURE.map((t) => [t])), ORING_DAMAGE, { names: ["temperature"] });

  test("the data as typed: 23 launches, 7 with damage", () => {
    expect(ORING_TEMPERATURE.length).toBe(23); // Dalal, Fowlkes & Hoadley 1989: 23 pre-accident launches
    expect(ORING_DAMAGE.reduce((a, b) => a + b, 0)).toBe(7); // the reproduced table: 7 launches with damage
  });

  test("damage on temperature: intercept 15.0429, slope −0.2322 with their SEs, z and p", () => {
    expect(baseline.converged).toBe(true);
    expect(baseline.separation).toBeNull();
    // The commonly quoted baseline, from memory (it is also what the usual R glm() summary of these
    // data prints: 15.0429 (SE 7.3786, z 2.039, p 0.0415) and −0.2322 (SE 0.1082, z −2.145,
    // p 0.0320); we read that printout on a teaching page the project does not cite).
    expectPrinted(baseline.intercept, 15.0429, 4);
    expectPrinted(baseline.coefficients[0], -0.2322, 4);
    expectPrinted(baseline.interceptStandardError, 7.3786, 4);
    expectPrinted(baseline.standardErrors[0], 0.1082, 4);
    expectPrinted(baseline.interceptZ, 2.039, 3);
    expectPrinted(baseline.zValues[0], -2.145, 3);
    expectPrinted(baseline.interceptP, 0.0415, 4);
    expectPrinted(baseline.pValues[0], 0.032, 4);
  });

  test("deviance 20.315 on 21 df, null deviance 28.267 on 22 df", () => {
    expectPrinted(baseline.deviance, 20.315, 3); // from memory (the usual glm() summary of these data)
    expectPrinted(baseline.nullDeviance, 28.267, 3); // from memory; the formula itself is checked below
    expect(baseline.degreesOfFreedom).toBe(21); // 23 launches − 2 coefficients
    expect(baseline.nullDegreesOfFreedom).toBe(22); // 23 launches − intercept
  });
});

describe("O-ring data, 24-launch version (Montgomery & Runger, S11, Minitab output)", () => {
  const baseline = logisticBaseline(fromRows(ORING24_TEMPERATURE.map((t) => [t])), ORING24_FAILURE);

  test("Logistic Regression Table: constant 10.875 (SE 5.703), temperature −0.17132 (SE 0.08344)", () => {
    expect(ORING24_FAILURE.reduce((a, b) => a + b, 0)).toBe(7); // Montgomery & Runger: "1 7 (Event)"
    expectPrinted(baseline.intercept, 10.875, 3); // Montgomery & Runger, S11, Minitab table
    expectPrinted(baseline.coefficients[0], -0.17132, 5); // same table
    expectPrinted(baseline.interceptStandardError, 5.703, 3); // same table
    expectPrinted(baseline.standardErrors[0], 0.08344, 5); // same table
    expectPrinted(baseline.interceptZ, 1.91, 2); // same table, Z
    expectPrinted(Math.abs(baseline.zValues[0] as number), 2.05, 2); // same table, Z (printed without sign)
    expectPrinted(baseline.interceptP, 0.057, 3); // same table, P
    expectPrinted(baseline.pValues[0], 0.04, 3); // same table, P (printed 0.040)
  });

  test("log-likelihood −11.515 and the test that all slopes are zero, G = 5.944 on 1 df", () => {
    expectPrinted(-baseline.deviance / 2, -11.515, 3); // same source; deviance = −2 log-likelihood for 0/1 data
    expectPrinted(baseline.nullDeviance - baseline.deviance, 5.944, 3); // same source, G statistic
    expect(baseline.nullDegreesOfFreedom - baseline.degreesOfFreedom).toBe(1); // same source, DF 1
  });
});

describe("vasoconstriction data (Finney 1947; Pregibon 1981)", () => {
  const rows = VASO.map(([volume, rate]) => [Math.log(volume), Math.log(rate)]);
  const response = VASO.map((row) => row[2]);
  const baseline = logisticBaseline(fromRows(rows), response, { names: ["log volume", "log rate"] });

  test("the data as typed: 39 tests, 20 with constriction", () => {
    expect(VASO.length).toBe(39); // Finney 1947: 39 tests
    expect(response.reduce((a, b) => a + b, 0)).toBe(20); // the printed table: 20 'constrict'
  });

  test("Pregibon's fit: intercept −2.875, log volume 5.179, log rate 4.562", () => {
    expect(baseline.converged).toBe(true);
    expect(baseline.separation).toBeNull();
    expectPrinted(baseline.intercept, -2.875, 3); // Pregibon 1981, from memory
    expectPrinted(baseline.coefficients[0], 5.179, 3); // Pregibon 1981, from memory
    expectPrinted(baseline.coefficients[1], 4.562, 3); // Pregibon 1981, from memory
    // Standard errors 1.321, 1.865, 1.838 (from memory of the usual printout of this fit).
    expectPrinted(baseline.interceptStandardError, 1.321, 3);
    expectPrinted(baseline.standardErrors[0], 1.865, 3);
    expectPrinted(baseline.standardErrors[1], 1.838, 3);
  });

  test("agrees with the independent Newton–Raphson (ml-matrix) to 1e-10", () => {
    const reference = referenceNewton(rows, response, response.map(() => 1), true);
    expectRelative(baseline.intercept, reference.intercept, 1e-10, "intercept");
    reference.coefficients.forEach((b, j) => expectRelative(baseline.coefficients[j], b, 1e-10, `coefficient ${j}`));
    reference.standardErrors.forEach((se, j) => expectRelative(baseline.standardErrors[j], se, 1e-9, `SE ${j}`));
    expectRelative(baseline.interceptStandardError, reference.interceptStandardError, 1e-9, "intercept SE");
  });
});

describe("a 0/1 predictor: the fit reproduces the two groups' log-odds", () => {
  test("intercept = log-odds of group 0, slope = log odds ratio, SE = Woolf's √(1/a + 1/b + 1/c + 1/d)", () => {
    // counts: group 0: 2 events, 5 non-events; group 1: 6 events, 3 non-events
    const rows: number[][] = [];
    const y: number[] = [];
    const add = (x: number, outcome: number, count: number) => {
      for (let r = 0; r < count; r++) {
        rows.push([x]);
        y.push(outcome);
      }
    };
    add(0, 1, 2);
    add(0, 0, 5);
    add(1, 1, 6);
    add(1, 0, 3);
    const baseline = logisticBaseline(fromRows(rows), y);
    // common practice: with one 0/1 predictor the likelihood equations reproduce each group's share
    expectRelative(baseline.intercept, Math.log(2 / 5), 1e-13, "intercept");
    expectRelative(baseline.coefficients[0], Math.log(6 / 3) - Math.log(2 / 5), 1e-13, "log odds ratio");
    // Woolf (1955), Annals of Human Genetics 19: SE of a log odds ratio
    expectRelative(baseline.standardErrors[0], Math.sqrt(1 / 2 + 1 / 5 + 1 / 6 + 1 / 3), 1e-12, "SE");
    expectRelative(baseline.interceptStandardError, Math.sqrt(1 / 2 + 1 / 5), 1e-12, "intercept SE"); // same formula, one group
  });
});

// ---------------------------------------------------------------- independent Newton–Raphson

/** A generated problem: columns with offsets and scales, known standardized slopes, weights. */
function generatedProblem(seed: number, n: number, p: number, withIntercept: boolean, weighted: boolean) {
  const uniform = seededUniform(seed);
  const normal = seededNormal(seed + 1000);
  const offsets = Array.from({ length: p }, (_, j) => (withIntercept && j % 2 === 0 ? (uniform() - 0.5) * 4e6 : 0));
  const scales = Array.from({ length: p }, () => 10 ** (8 * uniform() - 4)); // 1e-4 .. 1e4
  const gammas = Array.from({ length: p }, () => (uniform() < 0.5 ? -1 : 1) * (0.3 + 0.7 * uniform()) / Math.sqrt(p));
  const base = withIntercept ? uniform() - 0.5 : 0;
  const rows: number[][] = [];
  const y: number[] = [];
  const weights: number[] = [];
  for (let i = 0; i < n; i++) {
    const standard = gammas.map(() => normal());
    rows.push(standard.map((v, j) => offsets[j] + scales[j] * v));
    const eta = base + standard.reduce((a, v, j) => a + gammas[j] * v, 0);
    y.push(uniform() < 1 / (1 + Math.exp(-eta)) ? 1 : 0);
    weights.push(weighted ? (uniform() < 0.1 ? 0 : 0.2 + 2.8 * uniform()) : 1);
  }
  return { rows, y, weights };
}

describe("agreement with an independent Newton–Raphson on ml-matrix (generated problems)", () => {
  const shapes: [number, number][] = [
    [30, 1],
    [45, 2],
    [80, 3],
    [120, 5],
    [250, 8],
    [400, 10],
  ];
  for (const withIntercept of [true, false]) {
    for (const weighted of [false, true]) {
      test(`intercept ${withIntercept}, weights ${weighted}: coefficients to 1e-9, SEs to 1e-7`, () => {
        shapes.forEach(([n, p], s) => {
          const seed = 100 * s + (withIntercept ? 1 : 0) + (weighted ? 2 : 0);
          const { rows, y, weights } = generatedProblem(seed, n, p, withIntercept, weighted);
          const baseline = logisticBaseline(fromRows(rows), y, { intercept: withIntercept, weights });
          const label = `n ${n}, p ${p}, seed ${seed}`;
          expect({ label, converged: baseline.converged, separation: baseline.separation }).toEqual({ label, converged: true, separation: null });
          // the reference only sees rows with weight > 0, so it checks that weight-0 rows are ignored too
          const used = weights.map((w, i) => (w > 0 ? i : -1)).filter((i) => i >= 0);
          const reference = referenceNewton(used.map((i) => rows[i]), used.map((i) => y[i]), used.map((i) => weights[i]), withIntercept);
          reference.coefficients.forEach((b, j) => expectRelative(baseline.coefficients[j], b, 1e-9, `${label}: coefficient ${j}`));
          reference.standardErrors.forEach((se, j) => expectRelative(baseline.standardErrors[j], se, 1e-7, `${label}: SE ${j}`));
          if (withIntercept) {
            expectRelative(baseline.intercept, reference.intercept, 1e-9, `${label}: intercept`);
            expectRelative(baseline.interceptStandardError, reference.interceptStandardError, 1e-7, `${label}: intercept SE`);
          } else {
            expect(baseline.intercept).toBe(0);
            expect(baseline.interceptStandardError).toBeNull();
          }
          expectAllFinite(baseline);
        });
      });
    }
  }
});

// ---------------------------------------------------------------- properties

describe("invariances and optimality", () => {
  const generated = generatedProblem(7, 150, 4, true, true);
  const { y, weights } = generated;
  // Column 1 (spread about 1) is put on a grid of 2^-10, so that adding even 1e12 to it is exact
  // and the shift test compares fits to the same numbers, not to rounded copies of them.
  const rows = generated.rows.map((r) => r.map((v, j) => (j === 1 ? Math.round(v * 1024) / 1024 : v)));
  const base = logisticBaseline(fromRows(rows), y, { weights });

  test("rescaling a column by c divides its coefficient by c; nothing else moves", () => {
    // Column 3 is centred near 0, so x·c is x with one rounding of its own size; column 2 sits near
    // an offset of about 1e6, where a general c would round away digits of its spread, so it is
    // scaled by powers of two (exact).
    const cases: [number, number][] = [
      [3, 1e-3],
      [3, 7],
      [3, 1e5],
      [2, 2 ** -10],
      [2, 2 ** 20],
    ];
    for (const [column, c] of cases) {
      const scaled = logisticBaseline(fromRows(rows.map((r) => r.map((v, j) => (j === column ? v * c : v)))), y, { weights });
      const label = `column ${column}, c = ${c}`;
      expectRelative(scaled.coefficients[column], base.coefficients[column] / c, 1e-10, `coefficient, ${label}`);
      expectRelative(scaled.standardErrors[column], (base.standardErrors[column] as number) / c, 1e-9, `SE, ${label}`);
      [0, 1, 2, 3]
        .filter((j) => j !== column)
        .forEach((j) => expectRelative(scaled.coefficients[j], base.coefficients[j], 1e-10, `coefficient ${j}, ${label}`));
      expectRelative(scaled.intercept, base.intercept, 1e-10, `intercept, ${label}`);
      expectRelative(scaled.deviance, base.deviance, 1e-12, `deviance, ${label}`);
    }
  });

  test("shifting a column changes only the intercept (by −b·shift)", () => {
    for (const shift of [-3.5, 45000, 1e12]) {
      const shifted = logisticBaseline(fromRows(rows.map((r) => r.map((v, j) => (j === 1 ? v + shift : v)))), y, { weights });
      base.coefficients.forEach((b, j) => expectRelative(shifted.coefficients[j], b, 1e-9, `coefficient ${j}, shift ${shift}`));
      base.standardErrors.forEach((se, j) => expectRelative(shifted.standardErrors[j], se as number, 1e-8, `SE ${j}, shift ${shift}`));
      expectRelative(shifted.intercept, base.intercept - base.coefficients[1] * shift, 1e-9, `intercept, shift ${shift}`);
      expectRelative(shifted.deviance, base.deviance, 1e-12, "deviance");
    }
  });

  test("swapping the classes (y → 1 − y) flips every sign and keeps every SE", () => {
    const swapped = logisticBaseline(fromRows(rows), y.map((v) => 1 - v), { weights });
    expectRelative(swapped.intercept, -base.intercept, 1e-10, "intercept");
    base.coefficients.forEach((b, j) => expectRelative(swapped.coefficients[j], -b, 1e-10, `coefficient ${j}`));
    base.standardErrors.forEach((se, j) => expectRelative(swapped.standardErrors[j], se as number, 1e-9, `SE ${j}`));
    expectRelative(swapped.deviance, base.deviance, 1e-12, "deviance");
  });

  test("scaling all weights leaves the estimates unchanged; SEs shrink by √c (frequency weights)", () => {
    const c = 1000;
    const heavier = logisticBaseline(fromRows(rows), y, { weights: weights.map((w) => w * c) });
    base.coefficients.forEach((b, j) => expectRelative(heavier.coefficients[j], b, 1e-10, `coefficient ${j}`));
    expectRelative(heavier.intercept, base.intercept, 1e-10, "intercept");
    base.standardErrors.forEach((se, j) => expectRelative(heavier.standardErrors[j], (se as number) / Math.sqrt(c), 1e-9, `SE ${j}`));
    expectRelative(heavier.deviance, base.deviance * c, 1e-12, "deviance");
  });

  test("a weight of 2 is the same as the row written twice", () => {
    const small = generatedProblem(8, 40, 2, true, false);
    const doubled = small.rows.map((_, i) => (i % 3 === 0 ? 2 : 1));
    const weightedFit = logisticBaseline(fromRows(small.rows), small.y, { weights: doubled });
    const repeatedRows: number[][] = [];
    const repeatedY: number[] = [];
    small.rows.forEach((row, i) => {
      for (let r = 0; r < doubled[i]; r++) {
        repeatedRows.push(row);
        repeatedY.push(small.y[i]);
      }
    });
    const repeatedFit = logisticBaseline(fromRows(repeatedRows), repeatedY);
    weightedFit.coefficients.forEach((b, j) => expectRelative(b, repeatedFit.coefficients[j], 1e-10, `coefficient ${j}`));
    weightedFit.standardErrors.forEach((se, j) => expectRelative(se, repeatedFit.standardErrors[j] as number, 1e-9, `SE ${j}`));
    expectRelative(weightedFit.deviance, repeatedFit.deviance, 1e-12, "deviance");
  });

  test("a duplicated column is aliased (the second copy), coefficient 0, no SE; the rest unchanged", () => {
    const withCopy = logisticBaseline(fromRows(rows.map((r) => [...r, r[1]])), y, { weights });
    expect(withCopy.aliased).toEqual([4]); // same rule as leastSquares: the later copy is the combination
    expect(withCopy.coefficients[4]).toBe(0);
    expect(withCopy.standardErrors[4]).toBeNull();
    expect(withCopy.zValues[4]).toBeNull();
    expect(withCopy.pValues[4]).toBeNull();
    base.coefficients.forEach((b, j) => expectRelative(withCopy.coefficients[j], b, 1e-10, `coefficient ${j}`));
    expect(withCopy.degreesOfFreedom).toBe(base.degreesOfFreedom);
  });

  test("aliased columns: the same list as leastSquares gives on the same columns and weights", () => {
    // second route: engine/leastSquares.ts, whose rank rule the baseline repeats
    const uniform = seededUniform(31);
    const n = 40;
    const a = Array.from({ length: n }, () => uniform());
    const b = Array.from({ length: n }, () => 1e6 + uniform());
    const yy = a.map((v, i) => (v + 0.3 * uniform() > 0.6 || i % 7 === 0 ? 1 : 0));
    const zeroOnUsed = a.map((_, i) => (i < 5 ? 1 : 0)); // nonzero only on rows given weight 0 below
    const weightsWithZeros = a.map((_, i) => (i < 5 ? 0 : 1));
    const designs: { label: string; rows: number[][]; intercept: boolean; weights?: number[] }[] = [
      { label: "copy, combination, constant", rows: a.map((v, i) => [v, b[i], v, 2 * v - b[i] + 5, 3.5]), intercept: true },
      { label: "no intercept: constant kept, zero aliased", rows: a.map((v, i) => [v, 3.5, 0, b[i]]), intercept: false },
      { label: "a column constant on the rows used", rows: a.map((v, i) => [v, zeroOnUsed[i], b[i]]), intercept: true, weights: weightsWithZeros },
      { label: "more columns than rows", rows: a.slice(0, 6).map((v, i) => [v, b[i], uniform(), uniform(), uniform(), uniform(), uniform()]), intercept: true },
    ];
    for (const design of designs) {
      const outcome = design.rows.map((_, i) => yy[i]);
      const matrix = fromRows(design.rows);
      const baseline = logisticBaseline(matrix, outcome, { intercept: design.intercept, weights: design.weights });
      const linear = leastSquares(matrix, outcome, { intercept: design.intercept, weights: design.weights });
      expect({ label: design.label, aliased: baseline.aliased }).toEqual({ label: design.label, aliased: linear.aliased });
      expect(baseline.aliased.length).toBeGreaterThan(0);
      for (const j of baseline.aliased) expect(baseline.coefficients[j]).toBe(0);
    }
  });

  test("score equations Σ w x_j (y − p) = 0 and Σ w (y − p) = 0 at the optimum (first-order conditions)", () => {
    // The likelihood's gradient vanishes at the maximum (the unpenalized problem's KKT conditions).
    // Scale: the same sums with absolute values, so the check is relative and unit-free.
    const residual = y.map((v, i) => v - base.probabilities[i]);
    let interceptScore = 0;
    let interceptScale = 0;
    residual.forEach((r, i) => {
      interceptScore += weights[i] * r;
      interceptScale += weights[i] * Math.abs(r);
    });
    expect(Math.abs(interceptScore)).toBeLessThanOrEqual(1e-12 * interceptScale);
    for (let j = 0; j < 4; j++) {
      const mean = rows.reduce((a, r, i) => a + weights[i] * r[j], 0) / weights.reduce((a, b) => a + b, 0);
      let score = 0;
      let scale = 0;
      residual.forEach((r, i) => {
        score += weights[i] * (rows[i][j] - mean) * r;
        scale += weights[i] * Math.abs((rows[i][j] - mean) * r);
      });
      expect(Math.abs(score)).toBeLessThanOrEqual(1e-10 * scale);
    }
  });

  test("rows with weight 0 are ignored by the fit but get a fitted probability", () => {
    const used = weights.map((w, i) => (w > 0 ? i : -1)).filter((i) => i >= 0);
    expect(used.length).toBeLessThan(weights.length); // the generated weights include zeros
    const dropped = logisticBaseline(fromRows(used.map((i) => rows[i])), used.map((i) => y[i]), { weights: used.map((i) => weights[i]) });
    expect(dropped.coefficients).toEqual(base.coefficients);
    expect(dropped.intercept).toBe(base.intercept);
    expect(base.degreesOfFreedom).toBe(used.length - 5);
    const zeroRow = weights.findIndex((w) => w === 0);
    const eta = base.intercept + rows[zeroRow].reduce((a, v, j) => a + v * base.coefficients[j], 0);
    expectRelative(base.probabilities[zeroRow], 1 / (1 + Math.exp(-eta)), 1e-9, "probability of a weight-0 row");
  });

  test("units from 1e-200 to 1e300 and an offset of 1e15 give the same fit (O-ring data)", () => {
    const reference = logisticBaseline(fromRows(ORING_TEMPERATURE.map((t) => [t])), ORING_DAMAGE);
    for (const unit of [1e-200, 1e-100, 1e100, 1e300]) {
      const baseline = logisticBaseline(fromRows(ORING_TEMPERATURE.map((t) => [t * unit])), ORING_DAMAGE);
      expectRelative(baseline.coefficients[0] * unit, reference.coefficients[0], 1e-12, `slope, unit ${unit}`);
      expectRelative((baseline.standardErrors[0] as number) * unit, reference.standardErrors[0] as number, 1e-11, `SE, unit ${unit}`);
      expectRelative(baseline.intercept, reference.intercept, 1e-12, `intercept, unit ${unit}`);
    }
    const offset = logisticBaseline(fromRows(ORING_TEMPERATURE.map((t) => [t + 1e15])), ORING_DAMAGE);
    expectRelative(offset.coefficients[0], reference.coefficients[0], 1e-12, "slope, offset 1e15");
    expectRelative(offset.standardErrors[0], reference.standardErrors[0] as number, 1e-11, "SE, offset 1e15");
    expectRelative(offset.intercept, reference.intercept - reference.coefficients[0] * 1e15, 1e-12, "intercept, offset 1e15");
  });

  test("same inputs, bit-identical results", () => {
    const again = logisticBaseline(fromRows(rows), y, { weights });
    expect(again).toEqual(base);
  });
});

// ---------------------------------------------------------------- deviance

describe("deviance and null deviance from their formulas (common practice)", () => {
  const { rows, y, weights } = generatedProblem(11, 90, 3, true, true);
  const baseline = logisticBaseline(fromRows(rows), y, { weights });
  const total = weights.reduce((a, b) => a + b, 0);

  test("deviance = −2 Σ w [y log p + (1 − y) log(1 − p)] on the reported probabilities", () => {
    let deviance = 0;
    y.forEach((v, i) => {
      const p = baseline.probabilities[i];
      if (weights[i] > 0) deviance += -2 * weights[i] * (v * Math.log(p) + (1 - v) * Math.log(1 - p));
    });
    expectRelative(baseline.deviance, deviance, 1e-12, "deviance");
  });

  test("null deviance = −2 Σ w [y log ȳ + (1 − y) log(1 − ȳ)], ȳ the weighted event share", () => {
    const share = y.reduce((a, v, i) => a + weights[i] * v, 0) / total;
    let nullDeviance = 0;
    y.forEach((v, i) => (nullDeviance += -2 * weights[i] * (v * Math.log(share) + (1 - v) * Math.log(1 - share))));
    expectRelative(baseline.nullDeviance, nullDeviance, 1e-13, "null deviance");
    // and it is the deviance of the intercept-only fit
    const interceptOnly = logisticBaseline({ rows: rows.length, columns: 0, data: new Float64Array(0) }, y, { weights });
    expectRelative(interceptOnly.deviance, nullDeviance, 1e-13, "intercept-only deviance");
    expectRelative(interceptOnly.intercept, Math.log(share / (1 - share)), 1e-13, "intercept-only log-odds");
    expect(interceptOnly.converged).toBe(true);
  });

  test("without an intercept the null model is p = 0.5: null deviance 2 Σw log 2", () => {
    const noIntercept = logisticBaseline(fromRows(rows.map((r) => r.map((v) => v - 0))), y, { weights, intercept: false });
    expectRelative(noIntercept.nullDeviance, 2 * total * Math.log(2), 1e-13, "null deviance");
    const used = weights.filter((w) => w > 0).length;
    expect(noIntercept.nullDegreesOfFreedom).toBe(used);
    expect(noIntercept.degreesOfFreedom).toBe(used - 3);
  });
});

// ---------------------------------------------------------------- separation

/** Fits and checks the common promises for separated data: quick, finite, flagged. */
function separatedFit(rows: number[][], y: number[], names: string[], options: { intercept?: boolean } = {}) {
  const started = Date.now();
  const baseline = logisticBaseline(fromRows(rows), y, { names, ...options });
  expect(Date.now() - started).toBeLessThan(10000); // a hang guard (measured: under 30 ms)
  expect(baseline.iterations).toBeLessThan(100); // stopped by the separation check, before the Newton cap (DEFAULT_MAX_ITERATIONS)
  expectAllFinite(baseline);
  expect(baseline.converged).toBe(false);
  expect(baseline.separation).not.toBeNull();
  expect(baseline.standardErrors.every((se) => se === null)).toBe(true);
  expect(baseline.interceptStandardError).toBeNull();
  const message = baseline.separation?.message ?? "";
  expect(message).toMatch(/not finite/);
  expect(message).toMatch(/penalized fit/);
  return baseline;
}

describe("separation (Albert & Anderson 1984, Biometrika 71(1))", () => {
  test("complete, one term: every 1 above every 0", () => {
    const x = [1, 2, 3, 4, 5, 6, 7, 8, 9, 10];
    const baseline = separatedFit(x.map((v) => [v]), x.map((v) => (v > 5 ? 1 : 0)), ["roast_min"]);
    expect(baseline.separation?.kind).toBe("complete");
    expect(baseline.separation?.terms).toEqual([0]);
    expect(baseline.separation?.message).toMatch(/'roast_min'/);
    expect(baseline.separation?.message).toMatch(/at or above 6/);
  });

  test("quasi-complete, one term: the classes meet at one value", () => {
    // At dose 4 both classes occur, and the noise term interleaves them there (0: 0.1, −0.8;
    // 1: −0.5, 0.6), so no combination separates those rows: quasi-complete, not complete.
    const x = [1, 2, 3, 4, 4, 4, 4, 5, 6, 7];
    const y = [0, 0, 0, 0, 1, 0, 1, 1, 1, 1];
    const noise = [0.3, -1.2, 0.8, 0.1, -0.5, -0.8, 0.6, 0.4, 0.2, -0.3];
    const baseline = separatedFit(x.map((v, i) => [noise[i], v]), y, ["noise", "dose"]);
    expect(baseline.separation?.kind).toBe("quasi");
    expect(baseline.separation?.terms).toEqual([1]);
    expect(baseline.separation?.message).toMatch(/'dose'/);
    expect(baseline.separation?.message).not.toMatch(/'noise'/);
  });

  /** Points with y = [x1 + x2 > 0] and a noise term; each of x1, x2 alone overlaps across the classes. */
  function combination(seed: number, n: number) {
    const uniform = seededUniform(seed);
    const rows: number[][] = [];
    const y: number[] = [];
    while (rows.length < n) {
      const a = 4 * uniform() - 2;
      const b = 4 * uniform() - 2;
      if (Math.abs(a + b) < 0.1) continue; // a margin, so the separation is complete
      rows.push([a, b, uniform()]);
      y.push(a + b > 0 ? 1 : 0);
    }
    return { rows, y };
  }
  const overlaps = (values: number[], y: number[]) => {
    const events = values.filter((_, i) => y[i] === 1);
    const others = values.filter((_, i) => y[i] === 0);
    return Math.min(...events) < Math.max(...others) && Math.min(...others) < Math.max(...events);
  };

  test("complete, by a combination of two terms but by neither alone", () => {
    const { rows, y } = combination(7, 40);
    for (let j = 0; j < 3; j++) expect(overlaps(rows.map((r) => r[j]), y)).toBe(true); // no single term separates
    const baseline = separatedFit(rows, y, ["x1", "x2", "x3"]);
    expect(baseline.separation?.kind).toBe("complete");
    expect(baseline.separation?.terms).toEqual([0, 1]);
    expect(baseline.separation?.message).toMatch(/'x1' and 'x2'/);
    expect(baseline.separation?.message).not.toMatch(/'x3'/);
  });

  test("complete, by a combination, with wide offsets (a date serial and a timestamp)", () => {
    const { rows, y } = combination(7, 40);
    const wide = rows.map(([a, b, c]) => [45000 + a * 1e-3, 1.7e12 + b * 1e4, c]);
    const baseline = separatedFit(wide, y, ["day", "stamp", "x3"]);
    expect(baseline.separation?.kind).toBe("complete");
    expect(baseline.separation?.terms).toEqual([0, 1]);
  });

  test("quasi-complete, by a combination: rows of both classes on the boundary line", () => {
    const { rows, y } = combination(7, 40);
    const uniform = seededUniform(99);
    for (let r = 0; r < 5; r++) {
      const a = 2 * uniform() - 1;
      rows.push([a, -a, uniform()]);
      y.push(r % 2);
      rows.push([a + 0.3, -a - 0.3, uniform()]);
      y.push(1 - (r % 2));
    }
    for (let j = 0; j < 3; j++) expect(overlaps(rows.map((row) => row[j]), y)).toBe(true);
    const baseline = separatedFit(rows, y, ["x1", "x2", "x3"]);
    expect(baseline.separation?.kind).toBe("quasi");
    expect(baseline.separation?.terms).toEqual([0, 1]);
  });

  test("without an intercept: the sign of one term splits the classes", () => {
    const x = [-2, -1, -0.5, 0.5, 1, 2];
    const baseline = separatedFit(x.map((v) => [v]), [0, 0, 0, 1, 1, 1], ["x"], { intercept: false });
    expect(baseline.separation?.kind).toBe("complete");
    expect(baseline.separation?.terms).toEqual([0]);
  });

  test("when Newton stops before a proof, the symptoms are reported as (nearly) separated", () => {
    // The boundary rows make this case slow to prove (about 25 steps); capped at 15 steps, the
    // safety net sees rows fitted within 1e-8 while the coefficients keep growing.
    const { rows, y } = combination(7, 40);
    const uniform = seededUniform(99);
    for (let r = 0; r < 5; r++) {
      const a = 2 * uniform() - 1;
      rows.push([a, -a, uniform()]);
      y.push(r % 2);
      rows.push([a + 0.3, -a - 0.3, uniform()]);
      y.push(1 - (r % 2));
    }
    const capped = logisticBaseline(fromRows(rows), y, { names: ["x1", "x2", "x3"], maxIterations: 15 });
    expectAllFinite(capped);
    expect(capped.iterations).toBe(15);
    expect(capped.converged).toBe(false);
    expect(capped.separation?.kind).toBe("quasi");
    expect(capped.separation?.terms).toEqual([0, 1]);
    expect(capped.separation?.message).toMatch(/\(nearly\) separated by 'x1' and 'x2'/);
    // Too few steps to show anything: not converged, and no separation claimed.
    const early = logisticBaseline(fromRows(rows), y, { maxIterations: 3 });
    expectAllFinite(early);
    expect(early.converged).toBe(false);
    expect(early.separation).toBeNull();
  });

  test("more terms than the rows can carry: the data are separated, not a crash", () => {
    const uniform = seededUniform(5);
    const rows = Array.from({ length: 6 }, () => Array.from({ length: 8 }, () => uniform()));
    const baseline = separatedFit(rows, [0, 1, 0, 1, 1, 0], []);
    expect(baseline.aliased.length).toBeGreaterThan(0);
  });

  test("strongly imbalanced but overlapping data (3 events in 200) are not flagged", () => {
    const normal = seededNormal(3);
    // (a) the 3 events sit near the middle of the cloud: Stiemke's lemma (a strictly positive
    // combination of events and non-events meets) guarantees finite estimates
    const rows = Array.from({ length: 200 }, () => [normal(), normal()]);
    const y = rows.map(() => 0);
    rows[0] = [0.3, 0.1];
    rows[1] = [-0.2, 0.25];
    rows[2] = [0.05, -0.35];
    y[0] = y[1] = y[2] = 1;
    const middle = logisticBaseline(fromRows(rows), y);
    expect(middle.separation).toBeNull();
    expect(middle.converged).toBe(true);
    const reference = referenceNewton(rows, y, y.map(() => 1), true);
    reference.coefficients.forEach((b, j) => expectRelative(middle.coefficients[j], b, 1e-9, `coefficient ${j}`));
    // (b) the 3 events at the top of the range, but the highest non-event above two of them
    const x = Array.from({ length: 200 }, (_, i) => -3 + (5.8 * i) / 199);
    const top = x.map(() => 0);
    x[0] = 2.0;
    x[1] = 2.5;
    x[2] = 3.0;
    top[0] = top[1] = top[2] = 1;
    const edge = logisticBaseline(fromRows(x.map((v) => [v])), top);
    expect(edge.separation).toBeNull();
    expect(edge.converged).toBe(true);
    expect(edge.coefficients[0]).toBeGreaterThan(0);
  });
});

// ---------------------------------------------------------------- the normal tail

describe("erfc and two-sided normal p-values", () => {
  test("erfc against a second route: Simpson's rule on (2/√π) e^{−t²}", () => {
    // independent route: composite Simpson on [x, x + 8] with 40000 panels (the tail beyond is
    // below e^{-64}; the rule's error, h⁴ max|f⁗|/180, below 1e-12 of the result for x ≤ 6)
    const simpson = (x: number): number => {
      const panels = 40000;
      const h = 8 / panels;
      let sum = 0;
      for (let k = 0; k <= panels; k++) {
        const t = x + k * h;
        const weight = k === 0 || k === panels ? 1 : k % 2 === 1 ? 4 : 2;
        sum += weight * Math.exp(-t * t);
      }
      return ((2 / Math.sqrt(Math.PI)) * h * sum) / 3;
    };
    for (const x of [0, 0.1, 0.5, 1, 1.5, 1.99, 2, 2.5, 3, 4, 6]) {
      expectRelative(complementaryErrorFunction(x), simpson(x), 1e-11, `erfc(${x})`);
      expectRelative(complementaryErrorFunction(-x), 2 - simpson(x), 1e-13, `erfc(${-x})`);
    }
  });

  test("published values of erfc and the 5% two-sided point", () => {
    // Abramowitz & Stegun, Table 7.1 (from memory, to the digits shown)
    expectRelative(complementaryErrorFunction(1), 0.157299207050285, 1e-14, "erfc(1)");
    expectRelative(complementaryErrorFunction(2), 0.004677734981047266, 1e-14, "erfc(2)");
    expectRelative(complementaryErrorFunction(3), 2.209049699858544e-5, 1e-13, "erfc(3)");
    // common practice: z = 1.959963984540054 is the 97.5% point of the standard normal (from memory)
    expectRelative(normalTwoSidedP(1.959963984540054), 0.05, 1e-13, "p at 1.96");
    expectRelative(normalTwoSidedP(-1.959963984540054), 0.05, 1e-13, "p at −1.96");
    expect(normalTwoSidedP(0)).toBe(1);
    expect(normalTwoSidedP(60)).toBe(0); // below the smallest double, not NaN
  });
});

// ---------------------------------------------------------------- bad input, cancel

describe("bad input and cancel", () => {
  const x = fromRows([[1], [2], [3], [4], [5]]);

  test("a single class is an InputError('constant-target') saying both classes are needed", () => {
    let caught: unknown;
    try {
      logisticBaseline(x, [1, 1, 1, 1, 1]);
    } catch (error) {
      caught = error;
    }
    expect(caught).toBeInstanceOf(InputError);
    expect((caught as InputError).code).toBe("constant-target");
    expect((caught as InputError).message).toMatch(/both classes/);
    // a second class only on weight-0 rows does not count
    expect(() => logisticBaseline(x, [1, 1, 0, 1, 1], { weights: [1, 1, 0, 1, 1] })).toThrow(InputError);
  });

  test("y other than 0/1 is a programming error (the caller validates)", () => {
    expect(() => logisticBaseline(x, [0, 1, 2, 0, 1])).toThrow(Error);
    expect(() => logisticBaseline(x, [0, 1, 0.5, 0, 1])).toThrow(/0 or 1/);
    expect(() => logisticBaseline(x, [0, 1, NaN, 0, 1])).toThrow(/0 or 1/);
    expect(() => logisticBaseline(x, [0, 1, 0, 1])).toThrow(/one value per row/);
    expect(() => logisticBaseline(x, [0, 1, 0, 1, 0], { weights: [1, 1, -1, 1, 1] })).toThrow(/weights/);
  });

  test("a raised signal stops the fit with CancelledError, and the signal is read inside the loops", () => {
    expect(() => logisticBaseline(x, [0, 1, 0, 1, 1], { signal: { aborted: true } })).toThrow(CancelledError);
    const { rows, y } = generatedProblem(21, 300, 6, true, false);
    let reads = 0;
    const counting = {
      get aborted() {
        reads++;
        return false;
      },
    };
    const baseline = logisticBaseline(fromRows(rows), y, { signal: counting });
    // at least once per column of every factorisation, beyond once per iteration
    expect(reads).toBeGreaterThan(baseline.iterations * 7);
    let late = 0;
    const raisedLater = {
      get aborted() {
        late++;
        return late > 30;
      },
    };
    expect(() => logisticBaseline(fromRows(rows), y, { signal: raisedLater })).toThrow(CancelledError);
  });
});
