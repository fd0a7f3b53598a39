/**
 * Messages that used to mislead, each asserted exactly as the cell now shows it: no data rows,
 * text-only predictors with a header, fold-column groups, folds beside a fold column, Unicode
 * spellings of one name, SCORE's headers and huge values, bounds that fix every coefficient, a
 * grid of one strength.
 */
import { choice, coefs, score } from "../../functions/api";
import { expectRelative } from "../helpers/numeric";
import { CountingRunner, labelled, QUICK, rejection, sheet } from "./support";

const FIXED = "strength=0.01";

describe("no data rows", () => {
  test("header-only predictors and target: there are no data rows", async () => {
    expect(await rejection(coefs(new CountingRunner(), [["Sales"]], [["Size", "Region", "Temp"]], 1, QUICK))).toEqual({
      code: "#VALUE!",
      message: "predictors and target hold only their header rows ('Size', 'Region', 'Temp' and 'Sales'): there are no data rows; select the rows of data below the headers too",
    });
  });

  test("header-only predictors beside a target with values", async () => {
    expect((await rejection(coefs(new CountingRunner(), [[1], [2]], [["Size", "Temp"]], 1, QUICK))).message).toBe(
      "predictors holds only a header row ('Size', 'Temp'): there are no data rows; select the rows of data below it too",
    );
  });
});

describe("text-only predictors with a header", () => {
  test("when row 1's text also appears below it, the message names the real problem", async () => {
    const { target, predictors } = sheet();
    const region = predictors.slice(1).map((row) => [row[1]]);
    const withLevelOnTop = [["North"], ...region];
    expect((await rejection(coefs(new CountingRunner(), target.slice(1), withLevelOnTop, 1, QUICK))).message).toBe(
      "predictors has 43 rows but target has 42: if predictors' row 1 is a header, add header=yes to settings (predictors hold only text, and a text of row 1 also appears below it, so Shrinkwise can't tell a header from data); otherwise select the same rows in both",
    );
  });
});

describe("fold column", () => {
  /** 42 rows: group labels typed in mixed case; `tiny` rows form the second group. */
  function grouped(tiny: number): unknown[][] {
    const { predictors } = sheet();
    return predictors.map((row, i) => [...row, i === 0 ? "Site" : i <= 42 - tiny ? (i % 2 ? "Big Site" : "big site") : "Tiny"]);
  }

  test("a group too small to train on: the label as typed, and what can help (not 'fewer folds')", async () => {
    const { target } = sheet();
    expect((await rejection(coefs(new CountingRunner(), target, grouped(2), 1, "fold column=Site; grid size=10"))).message).toBe(
      "holding out fold label 'Big Site' leaves only 2 rows to train on (at least 3 needed): the other groups are too small; merge small groups into larger ones, or check the fold column",
    );
  });

  test("folds beside a fold column: refused unless it equals the number of groups", async () => {
    const { target } = sheet();
    const x = grouped(12);
    expect(await rejection(coefs(new CountingRunner(), target, x, 1, "fold column=Site; folds=10; grid size=10"))).toEqual({
      code: "#VALUE!",
      message: "'folds' is 10 but 'fold column' makes one fold per group of 'Site', and it has 2 ('Big Site', 'Tiny'): remove 'folds' from settings",
    });
    const values = labelled(await choice(new CountingRunner(), target, x, 1, "fold column=Site; folds=2; grid size=10"));
    expect(values.get("folds")).toBe(2);
    expect(values.get("fold method")).toBe("by fold column 'Site'");
  });
});

describe("Unicode spellings of one name", () => {
  test("a setting naming a column with e + combining accent finds the column typed with é", async () => {
    const { target, predictors } = sheet();
    const x = predictors.map((row, i) => (i === 0 ? ["Taille", "R\u00e9gion", "Temp"] : row));
    const runner = new CountingRunner();
    await coefs(runner, target, x, 1, `${FIXED}; no penalty=Re\u0301gion`);
    expect(runner.last().options.penaltyMultipliers).toEqual([1, 0, 0, 0, 1]);
  });

  test("two columns that differ only by normalization are one name, reported once", async () => {
    const { target, predictors } = sheet();
    const x = predictors.map((row, i) => (i === 0 ? ["caf\u00e9", "Region", "cafe\u0301"] : row));
    expect((await rejection(coefs(new CountingRunner(), target, x, 1, FIXED))).message).toBe(
      "predictors has two columns named 'caf\u00e9' (columns 1 and 3): give each column its own name",
    );
  });
});

describe("SHRINK.SCORE", () => {
  test("a header on one side and a length mismatch: the mismatch, counted below the header", async () => {
    expect(await rejection(score([["actual"], [1], [2], [3]], [[1], [2], [3], [4]]))).toEqual({
      code: "#VALUE!",
      message: "actual has 3 values below its header 'actual' but predicted has 4: give one prediction per actual value",
    });
    expect((await rejection(score([[1], [2], [3]], [["prediction"], [1], [2]]))).message).toBe(
      "actual has 3 values but predicted has 2 values below its header 'prediction': give one prediction per actual value",
    );
  });

  test("a header on one side of equal counts is still dropped; numbers stored as text are never taken for headers", async () => {
    const values = labelled(await score([["actual"], [1], [2], [4]], [[1], [2], [3]]));
    expect(values.get("pairs used")).toBe(3);
    expect((await rejection(score([["1"], [2], [4]], [["1"], [2], [3]]))).message).toBe(
      "actual row 1 has text '1' (a number stored as text?): SHRINK.SCORE needs numbers (clear the cell to skip it)",
    );
  });

  test("values near 1e200 score without #NUM! or #DIV/0!", async () => {
    const values = labelled(await score([[1e200], [2e200], [3e200], [4e200]], [[1.1e200], [2e200], [2.9e200], [4e200]]));
    expectRelative(values.get("RMSE") as number, Math.sqrt(0.005) * 1e200, 1e-14, "RMSE = sqrt(0.02e400 / 4), by hand (common practice)");
    expectRelative(values.get("R²") as number, 0.996, 1e-14, "R² = 1 − 0.02e400 / 5e400, by hand (common practice)");
  });
});

describe("settings that leave nothing to choose", () => {
  test("lower=0 with upper=0 for every term fixes every coefficient at 0", async () => {
    const { target, predictors } = sheet();
    expect(await rejection(coefs(new CountingRunner(), target, predictors, 1, `${QUICK}; lower=0; upper=0`))).toEqual({
      code: "#VALUE!",
      message:
        "'lower' and 'upper' are both 0 for every term, which fixes every coefficient at 0: nothing is left to fit; keep one of them (lower=0 alone keeps coefficients from going negative, upper=0 alone from going positive)",
    });
    // One term left free: not refused here.
    const runner = new CountingRunner();
    await coefs(runner, target, predictors, 1, `${QUICK}; lower=Size:0, Region:0, Temp:0; upper=Size:0, Region:0`);
    expect(runner.calls).toBe(1);
  });

  test("grid size=1 with cross-validation says the model would be the intercept alone; with a fixed strength it is fine", async () => {
    const { target, predictors } = sheet();
    expect((await rejection(coefs(new CountingRunner(), target, predictors, 1, "grid size=1"))).message).toBe(
      "'grid size' is 1: cross-validation would try only the top of the grid, where every penalized coefficient is 0, so the model would be the intercept alone; use 2 or more (by default the grid has 20 per tenfold drop), or give a fixed 'strength'",
    );
    const runner = new CountingRunner();
    await coefs(runner, target, predictors, 1, `grid size=1; ${FIXED}`);
    expect(runner.last().options.strengthCount).toBe(1);
  });
});
