/**
 * Every kind of bad input the engine accepts from users ends in an InputError with a
 * message that says what to fix, or in a warning when the fit can go ahead. The messages
 * are part of the product (the cell functions show them), so each is asserted here.
 */
import { fit, FitOptions } from "../../engine/fit";
import { InputError } from "../../engine/errors";

/** Small, well-posed data: 24 rows, 3 predictors. */
function data(rows = 24): { x: number[][]; y: number[] } {
  const x: number[][] = [];
  const y: number[] = [];
  for (let i = 0; i < rows; i++) {
    const a = Math.sin(i + 1);
    const b = Math.cos(2 * i + 0.5);
    const c = ((i * 7) % 11) / 11;
    x.push([a, b, c]);
    y.push(1 + 2 * a - b + 0.1 * Math.sin(5 * i));
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

const quick: FitOptions = { mixes: [1], folds: 3, strengthCount: 10 };

describe("shapes", () => {
  test("target shorter than predictors names both row counts", () => {
    const { x, y } = data(120);
    expectInputError(() => fit(x, y.slice(0, 118), quick), "shape", /^predictors has 120 rows but target has 118$/);
  });
  test("a ragged predictor row names the row", () => {
    const { x, y } = data();
    x[4] = [1, 2];
    expectInputError(() => fit(x, y, quick), "shape", /predictors row 5 has 2 values but row 1 has 3/);
  });
  test("empty predictors", () => {
    expectInputError(() => fit([], [], quick), "empty", /predictors is empty/);
  });
  test("predictors without columns", () => {
    expectInputError(() => fit([[], []], [1, 2], quick), "no-predictors", /no columns/);
  });
  test("names that don't match the columns", () => {
    const { x, y } = data();
    expectInputError(() => fit(x, y, { ...quick, names: ["a", "b"] }), "shape", /2 predictor names were given for 3 predictor columns/);
  });
  test("weights of the wrong length", () => {
    const { x, y } = data();
    expectInputError(() => fit(x, y, { ...quick, weights: [1, 2, 3] }), "shape", /predictors has 24 rows but weights has 3/);
  });
});

describe("values", () => {
  test("NaN in predictors names row and column", () => {
    const { x, y } = data();
    x[6][1] = NaN;
    expectInputError(() => fit(x, y, { ...quick, names: ["temp", "time", "dose"] }), "not-finite", /predictors row 7, column 'time' is not a number/);
  });
  test("Infinity in the target names the row", () => {
    const { x, y } = data();
    y[2] = Infinity;
    expectInputError(() => fit(x, y, quick), "not-finite", /target row 3 is infinite/);
  });
  test("a constant target", () => {
    const { x } = data();
    expectInputError(() => fit(x, new Array(24).fill(5), quick), "constant-target", /same value \(5\) in every row/);
  });
  test("a single row", () => {
    expectInputError(() => fit([[1, 2]], [3], quick), "too-few-rows", /only 1 row/);
  });
  test("every predictor constant", () => {
    const x = Array.from({ length: 24 }, () => [1, 2]);
    const y = Array.from({ length: 24 }, (_, i) => i);
    expectInputError(() => fit(x, y, quick), "no-predictors", /every predictor is constant/);
  });
  test("a constant column is dropped with a warning and coefficient 0", () => {
    const { x, y } = data();
    for (const row of x) row.push(3);
    const result = fit(x, y, { ...quick, names: ["a", "b", "c", "flat"] });
    expect(result.coefficients[3]).toBe(0);
    expect(result.constantColumns).toEqual(["flat"]);
    expect(result.warnings.map((w) => w.message)).toContain("flat is constant and left out (coefficient 0)");
  });
});

describe("folds", () => {
  test("fewer rows than folds need", () => {
    const { x, y } = data(12);
    expectInputError(() => fit(x, y, { ...quick, folds: 10 }), "too-few-rows", /10 folds need at least 20 rows \(2 per fold\) but there are 12: use fewer folds/);
  });
  test("time-ordered folds with too few rows", () => {
    const { x, y } = data(10);
    expectInputError(() => fit(x, y, { ...quick, folds: 5, timeOrdered: true }), "too-few-rows", /5 time-ordered folds need at least 12 rows/);
  });
  test("fold labels with a single group", () => {
    const { x, y } = data();
    expectInputError(() => fit(x, y, { ...quick, foldLabels: new Array(24).fill("A") }), "fold-labels", /single group \('A'\)/);
  });
  test("fold labels whose other groups are too small to train on: the label as given, and what can help", () => {
    const { x, y } = data();
    const labels = y.map((_, i) => (i < 22 ? "Big Site" : "Tiny"));
    expectInputError(
      () => fit(x, y, { ...quick, foldLabels: labels }),
      "too-few-rows",
      /^holding out fold label 'Big Site' leaves only 2 rows to train on \(at least 3 needed\): the other groups are too small; merge small groups into larger ones, or check the fold column$/,
    );
  });
  test("a fold label whose rows all weigh 0: the label as given, and what can help", () => {
    const { x, y } = data();
    const labels = y.map((_, i) => ["North", "South", "Quarry"][i % 3]);
    const weights = y.map((_, i) => (i % 3 === 2 ? 0 : 1));
    expectInputError(
      () => fit(x, y, { ...quick, foldLabels: labels, weights }),
      "folds",
      /^fold label 'Quarry' has no rows with a positive weight to score: give some of its rows a weight above 0, merge it into another group, or check the fold column$/,
    );
  });
  test("a blank fold label", () => {
    const { x, y } = data();
    const labels: (string | number)[] = y.map((_, i) => (i % 2 ? "odd" : "even"));
    labels[3] = "";
    expectInputError(() => fit(x, y, { ...quick, foldLabels: labels }), "fold-labels", /fold labels row 4 is blank/);
  });
  test("a fold count that is not a whole number", () => {
    const { x, y } = data();
    expectInputError(() => fit(x, y, { ...quick, folds: 2.5 }), "folds", /folds must be a whole number from 2 to 1000; got 2.5/);
  });
  test("one fold", () => {
    const { x, y } = data();
    expectInputError(() => fit(x, y, { ...quick, folds: 1 }), "folds", /folds must be a whole number from 2/);
  });
  test("labels and time order together", () => {
    const { x, y } = data();
    expectInputError(() => fit(x, y, { ...quick, timeOrdered: true, foldLabels: y.map((_, i) => i % 3) }), "setting", /can't be used together/);
  });
});

describe("weights", () => {
  test("a negative weight names its row", () => {
    const { x, y } = data();
    const w = new Array(24).fill(1);
    w[9] = -1;
    expectInputError(() => fit(x, y, { ...quick, weights: w }), "weights", /weights row 10 is negative/);
  });
  test("all weights zero", () => {
    const { x, y } = data();
    expectInputError(() => fit(x, y, { ...quick, weights: new Array(24).fill(0) }), "weights", /every weight is zero/);
  });
});

describe("settings", () => {
  test("mix above 1", () => {
    const { x, y } = data();
    expectInputError(() => fit(x, y, { ...quick, mixes: [0.5, 1.5] }), "mix", /mix 1.5 is outside 0 to 1/);
  });
  test("negative mix", () => {
    const { x, y } = data();
    expectInputError(() => fit(x, y, { ...quick, mixes: [-0.1] }), "mix", /mix -0.1 is outside 0 to 1/);
  });
  test("no mix", () => {
    const { x, y } = data();
    expectInputError(() => fit(x, y, { ...quick, mixes: [] }), "mix", /no mix given/);
  });
  test("negative strength", () => {
    const { x, y } = data();
    expectInputError(() => fit(x, y, { ...quick, strength: -1 }), "strength", /strength -1 is not allowed: give a strength of 0 or more/);
  });
  test("fixed strength with several mixes", () => {
    const { x, y } = data();
    expectInputError(() => fit(x, y, { ...quick, mixes: [0, 1], strength: 0.1 }), "mix", /give a single mix/);
  });
  test("lower bound above upper bound names the predictor", () => {
    const { x, y } = data();
    expectInputError(
      () => fit(x, y, { ...quick, names: ["a", "b", "c"], lowerBounds: [-1, -Infinity, 0], upperBounds: [1, -2, 5] }),
      "bounds",
      /lower bound -Infinity for 'b' is above its upper bound -2|upper bound for 'b' is -2: bounds must allow zero/,
    );
    expectInputError(
      () => fit(x, y, { ...quick, names: ["a", "b", "c"], lowerBounds: [-1, 0, 2], upperBounds: [1, 3, 1] }),
      "bounds",
      /lower bound 2 for 'c' is above its upper bound 1/,
    );
  });
  test("negative penalty multiplier", () => {
    const { x, y } = data();
    expectInputError(() => fit(x, y, { ...quick, penaltyMultipliers: [1, -1, 1] }), "multipliers", /penalty multiplier for 2 is negative/);
  });
  test("every penalty multiplier zero", () => {
    const { x, y } = data();
    expectInputError(() => fit(x, y, { ...quick, penaltyMultipliers: [0, 0, 0] }), "multipliers", /at least one predictor must be penalized/);
  });
  test("grid size and low-end ratio out of range", () => {
    const { x, y } = data();
    expectInputError(() => fit(x, y, { ...quick, strengthCount: 0 }), "setting", /number of strengths must be a whole number from 1/);
    expectInputError(() => fit(x, y, { ...quick, lowEndRatio: 1.5 }), "setting", /low-end ratio must be between 0 and 1/);
  });
  test("grid density out of range, too dense for its low end, or given with a grid size", () => {
    const { x, y } = data();
    const dense = { mixes: [1], folds: 3 };
    expectInputError(() => fit(x, y, { ...dense, gridDensity: 0 }), "setting", /grid density \(strengths per tenfold drop\) must be a whole number from 1 to 1000/);
    expectInputError(() => fit(x, y, { ...dense, gridDensity: 2.5 }), "setting", /grid density .* must be a whole number/);
    expectInputError(
      () => fit(x, y, { ...dense, gridDensity: 1000, lowEndRatio: 1e-12 }),
      "setting",
      /a grid density of 1000 down to a low end of 1e-12 gives 12001 strengths, more than 10000: lower the density or raise the low end/,
    );
    expectInputError(() => fit(x, y, { ...quick, gridDensity: 10 }), "setting", /size and its density were both given: give one/);
  });
  test("an unknown error measure or rule", () => {
    const { x, y } = data();
    expectInputError(() => fit(x, y, { ...quick, measure: "rmse" as never }), "setting", /error measure must be one of mse, mae/);
    expectInputError(() => fit(x, y, { ...quick, rule: "best" as never }), "setting", /rule must be lowest or one-se/);
  });
});

describe("resources", () => {
  test("gram updates refuse a predictor count whose p × p matrices would not fit", () => {
    const x = Array.from({ length: 3 }, (_, i) => Array.from({ length: 2001 }, (__, j) => Math.sin(i * 7 + j)));
    expectInputError(() => fit(x, [1, 2, 3], { ...quick, updates: "gram", strength: 0.1 }), "setting", /limited to 2000 predictors: use residual updates/);
  });
});

describe("never hangs", () => {
  test("a sweep cap of 1 reports non-convergence instead of looping", () => {
    const { x, y } = data();
    const result = fit(x, y, { mixes: [0.5], folds: 3, strengthCount: 20, maxSweeps: 1 });
    expect(result.diagnostics.converged).toBe(false);
    expect(result.warnings.some((w) => w.code === "not-converged")).toBe(true);
  });
});
