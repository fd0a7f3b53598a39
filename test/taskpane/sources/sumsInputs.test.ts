/**
 * The pane's choices for fitting from a file or a sums table (taskpane/sources/sumsInputs.ts):
 * the file's columns checked for their parts, the fold rule, and the few settings a fit from
 * sums takes. Messages must name the column and say what to do; a good choice must give the
 * spec the SQL generator takes, unchanged.
 */
import type { FileColumn } from "../../../taskpane/sources/fileSums";
import { checkFileChoice, checkSumsFit, defaultFileChoice, defaultSumsFit, emptyFileChoice, wholeNumber, type FileChoice } from "../../../taskpane/sources/sumsInputs";

const COLUMNS: FileColumn[] = [
  { name: "batch_id", type: "BIGINT", numeric: true },
  { name: "roasted_at", type: "TIMESTAMP", numeric: false },
  { name: "origin", type: "VARCHAR", numeric: false },
  { name: "drum_temp", type: "DOUBLE", numeric: true },
  { name: "moisture", type: "DOUBLE", numeric: true },
  { name: "kg", type: "DOUBLE", numeric: true },
  { name: "cup_score", type: "DOUBLE", numeric: true },
];

function choice(patch: Partial<FileChoice>): FileChoice {
  return { ...emptyFileChoice(), target: "cup_score", predictors: ["drum_temp", "moisture", "origin"], foldColumn: "batch_id", ...patch };
}

describe("a file choice", () => {
  test("a good choice gives the generator's spec: hash into K folds (default 10)", () => {
    expect(checkFileChoice(choice({}), COLUMNS)).toEqual({
      fields: {},
      spec: { target: "cup_score", predictors: ["drum_temp", "moisture", "origin"], weights: null, fold: { kind: "hash", key: "batch_id", folds: 10 } },
    });
    expect(checkFileChoice(choice({ folds: "5", weights: "kg" }), COLUMNS).spec).toMatchObject({ weights: "kg", fold: { kind: "hash", key: "batch_id", folds: 5 } });
  });

  test("time blocks order by a timestamp; a fold column takes any column and no K", () => {
    expect(checkFileChoice(choice({ foldRule: "time", foldColumn: "roasted_at", folds: "4" }), COLUMNS).spec?.fold).toEqual({ kind: "time", column: "roasted_at", folds: 4 });
    expect(checkFileChoice(choice({ foldRule: "column", foldColumn: "origin", predictors: ["drum_temp"], folds: "x" }), COLUMNS).spec?.fold).toEqual({ kind: "column", column: "origin" });
  });

  test("each bad part gets its own message, naming the column", () => {
    const check = (patch: Partial<FileChoice>) => checkFileChoice(choice(patch), COLUMNS).fields;
    expect(check({ target: "" }).target).toBe("Choose the target column.");
    expect(check({ target: "origin" }).target).toMatch(/'origin' is VARCHAR, not numbers: .*number target/);
    expect(check({ target: "gone" }).target).toMatch(/no column 'gone'/);
    expect(check({ predictors: [] }).predictors).toBe("Choose at least one predictor column.");
    expect(check({ predictors: ["drum_temp", "cup_score"] }).predictors).toMatch(/'cup_score' is the target: leave it out/);
    expect(check({ weights: "origin" }).weights).toMatch(/'origin' is VARCHAR: weights must be numbers/);
    expect(check({ weights: "kg", predictors: ["kg"] }).predictors).toMatch(/'kg' is the weights column/);
    expect(check({ foldColumn: "drum_temp" })["fold-column"]).toMatch(/'drum_temp' is DOUBLE: the hash needs a whole-number key/);
    expect(check({ foldRule: "time", foldColumn: "origin" })["fold-column"]).toMatch(/time blocks need a date, time or number column/);
    expect(check({ foldRule: "column", foldColumn: "origin" }).predictors).toMatch(/'origin' is the fold column/);
    expect(check({ foldColumn: "" })["fold-column"]).toBe("Choose the key column.");
    expect(check({ folds: "1" }).folds).toBe("Folds must be from 2 to 100, not 1");
    expect(check({ folds: "2.5" }).folds).toBe("Folds must be a whole number from 2 to 100, not '2.5'");
    expect(checkFileChoice(choice({ target: "" }), COLUMNS).spec).toBeNull();
  });

  test("a new file: the last number column is the target, an ID-like integer column the key, the other numbers predictors", () => {
    const fresh = defaultFileChoice(COLUMNS);
    expect(fresh).toMatchObject({ target: "cup_score", foldRule: "hash", foldColumn: "batch_id", predictors: ["drum_temp", "moisture", "kg"] });
    expect(checkFileChoice(fresh, COLUMNS).spec).not.toBeNull();
    // What still names a column of the new file is kept.
    const kept = defaultFileChoice(COLUMNS, choice({ target: "moisture", predictors: ["drum_temp", "gone"] }));
    expect(kept).toMatchObject({ target: "moisture", predictors: ["drum_temp"] });
  });

  test("wholeNumber: the range and the form", () => {
    expect(wholeNumber(" 7 ", "K", 2, 9)).toBe(7);
    expect(wholeNumber("10", "K", 2, 9)).toBe("K must be from 2 to 9, not 10");
    expect(wholeNumber("1e1", "K", 2, 90)).toMatch(/whole number/);
  });
});

describe("the settings of a fit from sums", () => {
  test("defaults: no mixes (the engine's), lowest error, one fold per block, standardized, with intercept", () => {
    expect(checkSumsFit(defaultSumsFit())).toEqual({ fields: {}, settings: { rule: "lowest", standardize: true, intercept: true } });
  });

  test("mixes are read by the cell functions' parser; folds merge blocks", () => {
    const check = checkSumsFit({ ...defaultSumsFit(), mixes: "0, 0.5, 1", folds: "5", rule: "one-se", standardize: false });
    expect(check.settings).toEqual({ mixes: [0, 0.5, 1], folds: 5, rule: "one-se", standardize: false, intercept: true });
  });

  test("bad mixes or folds: the field's message, no settings", () => {
    const bad = checkSumsFit({ ...defaultSumsFit(), mixes: "0, 2", folds: "one" });
    expect(bad.settings).toBeNull();
    expect(bad.fields.mixes).toMatch(/2/);
    expect(bad.fields.folds).toMatch(/whole number/);
  });
});
