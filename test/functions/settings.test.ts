/**
 * Settings parsing (text form and range form), the mixes argument, and the mapping of settings
 * to engine options as seen by the runner.
 */
import { apply, choice, coefs } from "../../functions/api";
import { SettingError } from "../../functions/errors";
import { parseMixes, parseSettings, SETTING_NAMES } from "../../functions/settings";
import { CountingRunner, labelled, QUICK, rejection, sheet } from "./support";

function settingError(raw: unknown): string {
  try {
    parseSettings(raw);
  } catch (e) {
    expect(e).toBeInstanceOf(SettingError);
    return (e as Error).message;
  }
  throw new Error("expected a SettingError");
}

describe("text form", () => {
  test("every setting, with the accepted spellings", () => {
    const s = parseSettings(
      "folds=5; Seed = 7; rule=one-se; error=mae; standardize=no; intercept=yes; Grid_Size=30; low-end=0.001; Stop_Early=yes; " +
        "fold column=Batch; weights column=W; penalty=Size:2, Region: North:0.5; no penalty=Temp; lower=0; upper=Size:3, Temp:none; header=yes; zero is missing=Size, Temp",
    );
    expect(s).toEqual({
      folds: 5,
      seed: 7,
      rule: "one-se",
      measure: "mae",
      standardize: false,
      intercept: true,
      gridDensity: null,
      gridSize: 30,
      lowEnd: 0.001,
      stopEarly: true,
      strength: null,
      foldColumn: "Batch",
      timeOrdered: null,
      weightsColumn: "W",
      penalty: [
        { name: "Size", value: 2 },
        { name: "Region: North", value: 0.5 },
      ],
      noPenalty: ["Temp"],
      lower: { all: 0 },
      upper: {
        terms: [
          { name: "Size", value: 3 },
          { name: "Temp", value: Infinity },
        ],
      },
      header: "yes",
      zeroIsMissing: ["Size", "Temp"],
      outcome: null,
      event: null,
      cutoff: null,
      predictOutput: null,
      interval: null,
      repeats: null,
      honestError: null,
      stability: null,
      draws: null,
      expectedTerms: null,
      stabilityThreshold: null,
    });
  });
  test("rule words: lowest, lowest error, one-se, one-SE rule, one standard error; older tokens min, onese, 1se as aliases", () => {
    for (const w of ["lowest", "Lowest Error", "min", "minimum"]) expect(parseSettings(`rule=${w}`).rule).toBe("lowest");
    for (const w of ["one-se", "One SE", "one-SE rule", "one standard error", "onese", "1se"]) expect(parseSettings(`rule=${w}`).rule).toBe("one-se");
  });
  test("line breaks separate settings too; strength and time order", () => {
    const s = parseSettings(["strength=0.25", "time order=yes", "zero is missing=all"].join("\n"));
    expect(s.strength).toBe(0.25);
    expect(s.timeOrdered).toBe(true);
    expect(s.zeroIsMissing).toBe("all");
  });
  test("omitted or blank settings are all defaults", () => {
    for (const raw of [null, undefined, "", [[null]], [[""]]]) {
      const s = parseSettings(raw);
      expect(s.folds).toBeNull();
      expect(s.header).toBe("auto");
    }
  });
});

describe("range form", () => {
  test("two columns name | value, with a header row, numbers and booleans in cells", () => {
    const s = parseSettings([
      ["setting", "value"],
      ["Folds", 5],
      ["time order", true],
      ["intercept", false],
      ["", ""],
      ["rule", "lowest"],
      ["seed", null],
    ]);
    expect(s.folds).toBe(5);
    expect(s.timeOrdered).toBe(true);
    expect(s.intercept).toBe(false);
    expect(s.rule).toBe("lowest");
    expect(s.seed).toBeNull(); // a blank value is not given
  });
  test("one column of name=value texts", () => {
    const s = parseSettings([["folds=3"], ["error=mse; seed=2"]]);
    expect(s.folds).toBe(3);
    expect(s.measure).toBe("mse");
    expect(s.seed).toBe(2);
  });
  test("an error cell as a value says so", () => {
    expect(settingError([["folds", new CustomFunctions.Error(CustomFunctions.ErrorCode.notAvailable)]])).toBe(
      "setting 'folds' has the error #N/A as its value: fix that cell",
    );
  });
  test("a third column with content is refused", () => {
    expect(settingError([["folds", 5, "x"]])).toBe("settings has 3 columns: give two columns, name | value (row 1 has something in column 3)");
  });
});

describe("mistakes", () => {
  test("an unknown name lists every valid name", () => {
    expect(settingError("foldz=3")).toBe(
      "unknown setting 'foldz': the settings are folds, seed, rule, error, standardize, intercept, grid density, grid size, low end, stop early, strength, " +
        "fold column, time order, weights column, penalty, no penalty, lower, upper, header, zero is missing, outcome, event, cutoff, predict, interval, " +
        "repeats, honest error, stability, draws, q, stability threshold",
    );
    expect(SETTING_NAMES).toHaveLength(31);
  });
  test("values out of range say the allowed range", () => {
    expect(settingError("folds=1")).toBe("'folds' must be a whole number from 2 to 1000; got '1'");
    expect(settingError([["folds", 2.5]])).toBe("'folds' must be a whole number from 2 to 1000; got 2.5");
    expect(settingError("seed=1.5")).toBe("'seed' must be a whole number from -4294967295 to 4294967295; got '1.5'");
    expect(settingError("grid size=0")).toBe("'grid size' must be a whole number from 1 to 10000; got '0'");
    expect(settingError("grid density=0")).toBe("'grid density' must be a whole number from 1 to 1000; got '0'");
    expect(settingError("strengths per decade=12.5")).toBe("'grid density' must be a whole number from 1 to 1000; got '12.5'");
    expect(settingError("grid density=10; grid size=40")).toBe("'grid density' and 'grid size' both set how many strengths the grid has: give one");
    expect(settingError("low end=1")).toBe(
      "'low end' must be a number between 0 and 1 (not 0 or 1), the bottom of the strength grid as a fraction of its top; got '1'",
    );
    expect(settingError("strength=-1")).toBe("'strength' must be a number of 0 or more (0 is plain least squares); got '-1'");
    expect(settingError("rule=best")).toBe("'rule' must be lowest (lowest error) or one-se (one-SE rule); got 'best'");
    expect(settingError("error=rmse")).toBe("'error' must be mse or mae (number target), or deviance, misclassified or auc (yes/no target); got 'rmse'");
    expect(settingError("header=maybe")).toBe("'header' must be yes, no or auto; got 'maybe'");
    expect(settingError("standardize=perhaps")).toBe("'standardize' must be yes or no; got 'perhaps'");
  });
  test("bounds must allow zero; penalties must be 0 or more", () => {
    expect(settingError("lower=1")).toBe("'lower' for every term is 1: lower bounds must be 0 or below (0 keeps a coefficient from going negative)");
    expect(settingError("upper=Size:-1")).toBe("'upper' for 'Size' is -1: upper bounds must be 0 or above (0 keeps a coefficient from going positive)");
    expect(settingError("penalty=Size:-1")).toBe("'penalty' for 'Size' is -1: penalty multipliers must be 0 or more (0 never penalized, 1 normal)");
    expect(settingError("penalty=Size")).toBe("'penalty' item 'Size' needs a term and a value: write term:value, like Age:2, Region:0.5");
  });
  test("commas between settings, duplicates, missing values, conflicting fold settings", () => {
    expect(settingError("folds=5, seed=7")).toBe("the value of 'folds' contains '=' ('5, seed=7'): separate settings with ';' (e.g. folds=5; seed=7)");
    expect(settingError("folds=5; Folds=6")).toBe("'folds' is given twice: give each setting once");
    expect(settingError("folds")).toBe("setting 'folds' has no value: write name=value, with settings separated by ';' (e.g. folds=5; seed=7)");
    expect(settingError("fold column=Batch; time order=yes")).toBe(
      "'fold column' and 'time order' can't be used together: choose one way to form the folds",
    );
    expect(settingError(42)).toBe("settings is 42: give text like folds=5; seed=7, or a two-column range of setting names and values");
  });
});

describe("mixes argument", () => {
  test("a number, a range, a text list, the words ridge and lasso", () => {
    expect(parseMixes(0.5)).toEqual([0.5]);
    expect(parseMixes([[0], [0.5], [null], [1]])).toEqual([0, 0.5, 1]);
    expect(parseMixes("0, 0.5; 1")).toEqual([0, 0.5, 1]);
    expect(parseMixes("ridge, lasso")).toEqual([0, 1]);
    expect(parseMixes(null)).toBeNull();
    expect(parseMixes([[null, ""]])).toBeNull();
  });
  test("bad mixes are clear errors", () => {
    expect(() => parseMixes("0, half")).toThrow("mixes '0, half' has 'half', which is not a number: give mixes from 0 (ridge) to 1 (lasso), like 0, 0.5, 1");
    expect(() => parseMixes(1.5)).toThrow("mix 1.5 is outside 0 to 1: use 0 for ridge, 1 for lasso, or a value between");
    expect(() => parseMixes("0.5, 0.5")).toThrow("mix 0.5 is listed twice: list each mix once");
  });
});

describe("settings reach the engine", () => {
  test("options in the request: folds, seed, rule, measure, grid, low end, stop early, standardize, intercept, time order", async () => {
    const runner = new CountingRunner();
    const { target, predictors } = sheet();
    await coefs(runner, target, predictors, "0.5, 1", "folds=4; seed=9; rule=onese; error=mae; grid size=15; low end=0.01; early stop=on; standardize=no; intercept=yes; time order=yes", null);
    expect(runner.calls).toBe(1);
    const options = runner.last().options;
    expect(options).toMatchObject({
      mixes: [0.5, 1],
      folds: 4,
      seed: 9,
      rule: "one-se",
      measure: "mae",
      strengthCount: 15,
      lowEndRatio: 0.01,
      stopEarly: true,
      standardize: false,
      intercept: true,
      timeOrdered: true,
      names: ["Size", "Region: North", "Region: West", "Region: South", "Temp"],
    });
  });
  test("grid density (or its other spellings) reaches the engine as gridDensity, without a strength count", async () => {
    const { target, predictors } = sheet();
    for (const text of ["grid density=12", "Strengths per decade=12", "strengths_per_tenfold_drop=12"]) {
      const runner = new CountingRunner();
      await coefs(runner, target, predictors, "1", `folds=4; ${text}`, null);
      expect(runner.last().options.gridDensity).toBe(12);
      expect(runner.last().options.strengthCount).toBeUndefined();
    }
  });
  test("penalty by term and by column, no penalty, bounds per term and for all", async () => {
    const runner = new CountingRunner();
    const { target, predictors } = sheet();
    await coefs(runner, target, predictors, 1, `${QUICK}; penalty=Region:2, Size:0.5; no penalty=Temp; lower=Size:-1; upper=2`, null);
    const options = runner.last().options;
    expect(options.penaltyMultipliers).toEqual([0.5, 2, 2, 2, 0]);
    expect(options.lowerBounds).toEqual([-1, -Infinity, -Infinity, -Infinity, -Infinity]);
    expect(options.upperBounds).toEqual([2, 2, 2, 2, 2]);
  });
  test("a penalty given twice for one term, an unknown term, the intercept", async () => {
    const runner = new CountingRunner();
    const { target, predictors } = sheet();
    expect(await rejection(coefs(runner, target, predictors, 1, "penalty=Region: North:2; no penalty=Region", null))).toEqual({
      code: "#VALUE!",
      message: "'Region: North' is given a penalty twice (by 'no penalty' Region and by 'penalty' Region: North): give it once",
    });
    expect((await rejection(coefs(runner, target, predictors, 1, "no penalty=Sise", null))).message).toBe(
      "'no penalty' names 'Sise', which is not a term: the terms are 'Size', 'Region: North', 'Region: West', 'Region: South', 'Temp'",
    );
    expect((await rejection(coefs(runner, target, predictors, 1, "lower=(intercept):0", null))).message).toBe(
      "'lower' can't name the intercept: the intercept is never penalized or bounded",
    );
    expect(runner.calls).toBe(0); // settings are checked before any fit
  });
  test("lower=0 keeps every coefficient at 0 or above (engine honours the bound)", async () => {
    const runner = new CountingRunner();
    const { target, predictors } = sheet();
    const table = await coefs(runner, target, predictors, 1, `${QUICK}; lower=0`, null);
    for (const row of table.slice(2)) expect(row[1] as number).toBeGreaterThanOrEqual(0);
    // Region: West has a negative effect in the data, so the bound is active there.
    expect(table.find((row) => row[0] === "Region: West")?.[1]).toBe(0);
  });
  test("fold column: labels for the folds and not a predictor; weights column likewise", async () => {
    const runner = new CountingRunner();
    const { target, predictors } = sheet();
    const withExtra = predictors.map((row, i) => (i === 0 ? [...row, "Batch", "W"] : [...row, `b${i % 3}`, 1 + (i % 2)]));
    const result = await choice(runner, target, withExtra, 1, "fold column=batch; weights column=w; grid size=20", null);
    const options = runner.last().options;
    expect(options.names).toEqual(["Size", "Region: North", "Region: West", "Region: South", "Temp"]);
    expect(options.foldLabels).toHaveLength(42);
    expect(new Set(options.foldLabels as string[])).toEqual(new Set(["b0", "b1", "b2"]));
    expect(options.weights).toEqual(Array.from({ length: 42 }, (_, i) => 1 + ((i + 1) % 2)));
    const values = labelled(result);
    expect(values.get("folds")).toBe(3);
    expect(values.get("fold method")).toBe("by fold column 'Batch'");
    expect(values.get("seed")).toBe("not used");
  });
  test("a fold column that doesn't exist lists the columns", async () => {
    const { target, predictors } = sheet();
    expect((await rejection(coefs(new CountingRunner(), target, predictors, 1, "fold column=Batch", null))).message).toBe(
      "'fold column' names 'Batch', which is not a predictors column: the columns are 'Size', 'Region', 'Temp'",
    );
  });
  test("a fixed strength needs exactly one mix", async () => {
    const { target, predictors } = sheet();
    expect(await rejection(coefs(new CountingRunner(), target, predictors, null, "strength=0.1", null))).toEqual({
      code: "#VALUE!",
      message: "a fixed strength is fitted at one mix: give that mix (0 ridge … 1 lasso) as the mixes argument",
    });
    expect((await rejection(coefs(new CountingRunner(), target, predictors, "0, 1", "strength=0.1", null))).message).toBe(
      "a fixed strength is fitted at one mix, but 2 mixes were given: give a single mix",
    );
  });
  test("APPLY needs no settings and makes no fit", async () => {
    const runner = new CountingRunner();
    const out = await apply(
      [
        ["(intercept)", 1],
        ["a", 2],
      ],
      [["a"], [3]],
    );
    expect(out).toEqual([["prediction"], [7]]); // 1 + 2·3, by hand
    expect(runner.calls).toBe(0);
  });
});
