/**
 * Every cell function through its public signature in functions/api.ts: spilled shapes and
 * labels, header detection, indicator coding, blank and error cells, cross-checks against the
 * engine, and each bad input with its error code and message.
 */
import { fit } from "../../engine/fit";
import { apply, baseline, choice, coefs, cvcurve, path, predict, score } from "../../functions/api";
import { cancelSource } from "../../functions/runner";
import { expectRelative, expectVectorRelative } from "../helpers/numeric";
import { coefficientMap, CountingRunner, encodedByHand, expectRectangular, labelled, QUICK, rejection, sheet } from "./support";

const TERMS = ["Size", "Region: North", "Region: West", "Region: South", "Temp"];

describe("spilled shapes and labels", () => {
  test("COEFS: header, intercept, then every term in column order with the reference level shown", async () => {
    const runner = new CountingRunner();
    const { target, predictors } = sheet();
    const out = await coefs(runner, target, predictors, null, QUICK);
    expectRectangular(out);
    expect(out.map((row) => row[0])).toEqual([
      "term",
      "intercept",
      "Size",
      "Region: East (reference)",
      "Region: North",
      "Region: West",
      "Region: South",
      "Temp",
    ]);
    expect(out[0]).toEqual(["term", "coefficient"]);
    expect(out[3][1]).toBe(0);
    for (const row of out.slice(1)) expect(typeof row[1]).toBe("number");
    expect(runner.calls).toBe(1);
    // Default mixes: the engine's default (no mixes option sent).
    expect(runner.last().options.mixes).toBeUndefined();
  });

  test("CHOICE: label | value rows, cross-validated", async () => {
    const runner = new CountingRunner();
    const { target, predictors } = sheet();
    const out = await choice(runner, target, predictors, "0, 1", `${QUICK}; seed=3; rule=one-se`);
    expectRectangular(out);
    expect(out.map((row) => row[0])).toEqual([
      "label",
      "strength",
      "strength ÷ top of grid",
      "mix",
      "CV MSE",
      "± SE",
      "rule",
      "lowest-error strength",
      "terms kept",
      "rows used",
      "rows skipped",
      "folds",
      "fold method",
      "seed",
      "reference levels",
      "notes",
      "repeats",
    ]);
    const values = labelled(out);
    // One deal of the folds unless repeats says otherwise; no honest-error rows unless asked.
    expect(values.get("repeats")).toBe(1);
    expect(values.get("rule")).toBe("one-SE rule");
    expect(values.get("folds")).toBe(4);
    expect(values.get("fold method")).toBe("random");
    expect(values.get("seed")).toBe(3);
    expect(values.get("rows used")).toBe(42);
    expect(values.get("rows skipped")).toBe(0);
    expect(values.get("reference levels")).toBe("Region: East");
    // The one-SE strength is at least the lowest-error strength (common practice: it is the larger penalty).
    expect(values.get("strength") as number).toBeGreaterThanOrEqual(values.get("lowest-error strength") as number);
    expect([0, 1]).toContain(values.get("mix"));
    const fraction = values.get("strength ÷ top of grid") as number;
    expect(fraction > 0 && fraction <= 1).toBe(true);
  });

  test("CHOICE with a fixed strength: the cross-validation rows say none", async () => {
    const { target, predictors } = sheet();
    const values = labelled(await choice(new CountingRunner(), target, predictors, 1, "strength=0.05"));
    expect(values.get("strength")).toBe(0.05);
    expect(values.get("rule")).toBe("fixed strength (no cross-validation)");
    for (const label of ["CV error", "± SE", "one-SE rule's strength", "folds", "fold method", "seed"]) expect(values.get(label)).toBe("none");
  });

  test("PATH: strength, terms kept, intercept and one column per term; one row per strength", async () => {
    const runner = new CountingRunner();
    const { target, predictors } = sheet();
    const out = await path(runner, target, predictors, 1, "folds=4; grid size=12");
    expectRectangular(out);
    expect(out[0]).toEqual(["strength", "terms kept", "intercept", ...TERMS]);
    expect(out.length).toBeGreaterThan(5);
    expect(out.length).toBeLessThanOrEqual(13);
    // The top of the grid zeroes every penalized coefficient (the grid's definition, engine convention).
    expect(out[1][1]).toBe(0);
    expect(out[1].slice(3)).toEqual([0, 0, 0, 0, 0]);
    for (let k = 2; k < out.length; k++) expect(out[k][0] as number).toBeLessThan(out[k - 1][0] as number);
    expect(runner.last().options.mixes).toEqual([1]);
  });

  test("PATH with its mix omitted asks for the same fit as COEFS (one cache entry serves both)", async () => {
    const runner = new CountingRunner();
    const { target, predictors } = sheet();
    await coefs(runner, target, predictors, null, QUICK);
    await path(runner, target, predictors, null, QUICK);
    await choice(runner, target, predictors, null, QUICK);
    await cvcurve(runner, target, predictors, null, QUICK);
    expect(runner.calls).toBe(4);
    const first = JSON.stringify(runner.requests[0]);
    for (const request of runner.requests) expect(JSON.stringify(request)).toBe(first);
  });

  test("CVCURVE: header, then mix | strength | CV error | ± SE | terms kept for every mix and strength", async () => {
    const { target, predictors } = sheet();
    const out = await cvcurve(new CountingRunner(), target, predictors, "0, 1", "folds=4; grid size=10; error=mae");
    expectRectangular(out);
    expect(out[0]).toEqual(["mix", "strength", "CV MAE", "± SE", "terms kept"]);
    const mixes = new Set(out.slice(1).map((row) => row[0]));
    expect(mixes).toEqual(new Set([0, 1]));
    for (const row of out.slice(1)) {
      expect(row[2] as number).toBeGreaterThan(0);
      expect(row[3] as number).toBeGreaterThanOrEqual(0);
    }
  });

  test("PREDICT: one value per new row; a header row gives a header cell; blank rows give blank cells", async () => {
    const { target, predictors } = sheet();
    const newRows = [["Temp", "Region", "Size"], [1, "north", 5], [null, "", null], [2, "West", 4]];
    const out = await predict(new CountingRunner(), target, predictors, newRows, 1, QUICK);
    expect(out).toHaveLength(4);
    expect(out[0]).toEqual(["prediction"]);
    expect(typeof out[1][0]).toBe("number");
    expect(out[2]).toEqual([""]);
    expect(typeof out[3][0]).toBe("number");
  });

  test("PREDICT: a row missing a value gives a #N/A cell saying which; an error cell too", async () => {
    const { target, predictors } = sheet();
    const newRows = [
      [5, "East", null],
      [5, "East", "#DIV/0!"],
      [5, "East", 1],
    ];
    const out = await predict(new CountingRunner(), target, predictors, newRows, 1, QUICK);
    expect(out[0][0]).toMatchObject({ code: "#N/A", message: "no prediction for new_rows row 1: 'Temp' is blank" });
    expect(out[1][0]).toMatchObject({ code: "#N/A", message: "no prediction for new_rows row 2: 'Temp' is #DIV/0!" });
    expect(typeof out[2][0]).toBe("number");
  });

  test("SCORE against a hand computation (common practice formulas)", async () => {
    const actual = [["actual"], [3], [5], [2], [8], [null], ["#N/A"]];
    const predicted = [["prediction"], [2.5], [5.5], [2], [7], [4], [1]];
    const out = await score(actual, predicted);
    expectRectangular(out);
    expect(out.map((row) => row[0])).toEqual(["label", "MAE", "RMSE", "R²", "mean error (predicted − actual)", "pairs used", "pairs skipped"]);
    const values = labelled(out);
    // Errors (predicted − actual): −0.5, 0.5, 0, −1. Mean actual 4.5, total sum of squares 21.
    expectRelative(values.get("MAE") as number, 0.5, 1e-15, "MAE, by hand (common practice)"); // 2 / 4
    expectRelative(values.get("RMSE") as number, Math.sqrt(1.5 / 4), 1e-15, "RMSE, by hand (common practice)");
    expectRelative(values.get("R²") as number, 1 - 1.5 / 21, 1e-15, "R², by hand (common practice)");
    expectRelative(values.get("mean error (predicted − actual)") as number, -0.25, 1e-15, "mean error, by hand (common practice)");
    expect(values.get("pairs used")).toBe(4);
    expect(values.get("pairs skipped")).toBe(2);
  });

  test("SCORE: rows as well as columns; R² of a constant actual is #DIV/0!", async () => {
    const values = labelled(await score([[2, 2, 2]], [[1, 2, 3]]));
    expect(values.get("MAE")).toBe(2 / 3); // |−1| + 0 + 1 over 3, by hand
    expect(values.get("R²")).toMatchObject({ code: "#DIV/0!" });
  });

  test("BASELINE: term | coefficient | standard error, then a blank row and the summary rows", async () => {
    const { target, predictors } = sheet();
    const out = await baseline(new CountingRunner(), target, predictors);
    expectRectangular(out);
    expect(out[0]).toEqual(["term", "coefficient", "standard error"]);
    expect(out.map((row) => row[0])).toEqual([
      "term",
      "intercept",
      "Size",
      "Region: East (reference)",
      "Region: North",
      "Region: West",
      "Region: South",
      "Temp",
      "",
      "residual SD",
      "residual degrees of freedom",
      "R²",
      "rows used",
    ]);
    expect(out[11][1] as number).toBeGreaterThan(0.99);
    expect(out[10][1]).toBe(42 - 6); // rows − terms − intercept
  });

  test("BASELINE says when a term is aliased", async () => {
    const target = [["y"], [1], [2.5], [2.9], [4.2], [5.1], [5.8]];
    const predictors = [["a", "b", "twice a"], [1, 0.5, 2], [2, 0.1, 4], [3, 0.7, 6], [4, 0.2, 8], [5, 0.9, 10], [6, 0.4, 12]];
    const out = await baseline(new CountingRunner(), target, predictors);
    const row = out.find((r) => r[0] === "twice a") as unknown[];
    expect(row[1]).toBe(0);
    expect(row[2]).toBe("aliased (a combination of other terms)");
  });
});

describe("header detection", () => {
  test("with a header: names from it; without: x1, x2, …", async () => {
    const runner = new CountingRunner();
    const withHeader = sheet(42, true);
    await coefs(runner, withHeader.target, withHeader.predictors, 1, QUICK);
    expect(runner.last().options.names).toEqual(TERMS);
    const without = sheet(42, false);
    const out = await coefs(runner, without.target, without.predictors, 1, QUICK);
    expect(runner.last().options.names).toEqual(["x1", "x2: North", "x2: West", "x2: South", "x3"]);
    expect(out[3][0]).toBe("x2: East (reference)");
    // Same numbers either way.
    expect(JSON.stringify(runner.requests[0].predictors)).toBe(JSON.stringify(runner.requests[1].predictors));
  });

  test("target with its own header, aligned or not with predictors", async () => {
    const runner = new CountingRunner();
    const { target, predictors } = sheet();
    // Target without its header cell, predictors with one.
    await coefs(runner, target.slice(1), predictors, 1, QUICK);
    // Target with a header, predictors without.
    await coefs(runner, target, predictors.slice(1), 1, QUICK);
    expect(runner.requests[0].target).toEqual(runner.requests[1].target);
    expect(runner.requests[0].target).toHaveLength(42);
  });

  test("header=no makes the first row data; header=yes forces a header auto-detection would miss", async () => {
    const { target, predictors } = sheet();
    expect(await rejection(coefs(new CountingRunner(), target, predictors, 1, "header=no"))).toEqual({
      code: "#VALUE!",
      message: "predictors column 'x1' row 1 has text 'Size' in a number column: fix it or clear the cell",
    });
    const numbersOnly = predictors.map((row) => [row[0], row[2]]);
    const aligned = [[1, 2], ...numbersOnly.slice(1)];
    // A row of numbers beside the target's text header: read as the header, and CHOICE says so.
    const numbered = new CountingRunner();
    const decided = labelled(await choice(numbered, target, aligned, 1, QUICK));
    expect(numbered.last().options.names).toEqual(["1", "2"]);
    expect(numbered.last().target).toHaveLength(42);
    expect(String(decided.get("notes"))).toContain(
      "predictors row 1 (1, 2) is read as the header because the target's row 1 ('Sales') is a header beside it (add header=yes to settings to say so)",
    );
    expect((await rejection(coefs(new CountingRunner(), target, aligned, 1, "header=no"))).message).toBe(
      "target row 1 has text 'Sales': the target must be numbers, so fix the cell or clear it (settings say header=no, so row 1 is data)",
    );
    // Text-only predictors under a header, target without one: one row more than the target, and
    // 'Region' is no level below it, so row 1 is the header (and CHOICE says how that was decided).
    const region = predictors.map((row) => [row[1]]);
    const y = target.slice(1);
    const runner = new CountingRunner();
    const notes = String(labelled(await choice(runner, y, region, 1, QUICK)).get("notes"));
    expect(runner.last().options.names).toEqual(["Region: North", "Region: West", "Region: South"]);
    expect(notes).toContain(
      "predictors row 1 ('Region') is read as the header: predictors hold only text and have one row more than the target (add header=yes to settings to say so)",
    );
    await coefs(runner, y, region, 1, `${QUICK}; header=yes`);
    expect(runner.last().options.names).toEqual(["Region: North", "Region: West", "Region: South"]);
  });
});

describe("indicator coding", () => {
  test("the reference level is the most frequent, indicators follow first appearance, levels ignore case", async () => {
    const runner = new CountingRunner();
    const target = [["y"], [1], [2], [3], [4], [5], [6.5], [7]];
    const predictors = [["Shade"], ["red"], ["Blue"], ["blue"], ["green"], ["RED "], ["blue"], ["green"]];
    await coefs(runner, target, predictors, 1, "folds=2; grid size=5");
    const request = runner.last();
    expect(request.options.names).toEqual(["Shade: red", "Shade: green"]);
    expect(request.predictors).toEqual([[1, 0], [0, 0], [0, 0], [0, 1], [1, 0], [0, 0], [0, 1]]);
  });

  test("ties for most frequent go to the level seen first", async () => {
    const runner = new CountingRunner();
    const target = [["y"], [1], [2], [3], [4], [5.5], [6]];
    const predictors = [["Shade"], ["red"], ["blue"], ["blue"], ["red"], ["green"], ["green"]];
    await coefs(runner, target, predictors, 1, "folds=2; grid size=5");
    expect(runner.last().options.names).toEqual(["Shade: blue", "Shade: green"]);
  });

  test("new rows are coded the same way, by header name in any order or by position", async () => {
    const runner = new CountingRunner();
    const { target, predictors } = sheet();
    const byName = await predict(runner, target, predictors, [["Region", "Temp", "Size"], ["South", 2, 4], ["EAST", 0, 5]], 1, "strength=0.01");
    const byPosition = await predict(runner, target, predictors, [[4, "South", 2], [5, "EAST", 0]], 1, "strength=0.01");
    expect(byName.slice(1)).toEqual(byPosition);
    // Engine result at the same point: predictions from the engine's model on hand-coded rows.
    const { x, y, names } = encodedByHand();
    const reference = fit(x, y, { names, mixes: [1], strength: 0.01 });
    const hand = [
      [4, 0, 0, 1, 2],
      [5, 0, 0, 0, 0],
    ].map((row) => reference.intercept + row.reduce((s, v, j) => s + v * reference.coefficients[j], 0));
    expectVectorRelative(byPosition.map((r) => r[0] as number), hand, 1e-12, "predictions vs engine result at the same point");
  });

  test("a header row in new_rows that matches no predictors name gets a hint", async () => {
    const { target, predictors } = sheet(42, false);
    expect((await rejection(predict(new CountingRunner(), target, predictors, [["Size", "Region", "Temp"], [5, "East", 1]], 1, QUICK))).message).toBe(
      "new_rows row 1 column 'x1' has text 'Size', but 'x1' is a number column: fix it or clear the cell (if row 1 is a header, its names must match the predictors names: 'x1', 'x2', 'x3')",
    );
  });

  test("a predictors header with a blank name gets a hint", async () => {
    const { target, predictors } = sheet();
    const x = predictors.map((row, i) => (i === 0 ? ["Size", "Region", null] : row));
    expect((await rejection(coefs(new CountingRunner(), target, x, 1, QUICK))).message).toBe(
      "predictors column 'x1' row 1 has text 'Size' in a number column: fix it or clear the cell (if row 1 is a header, give every column a name there, or add header=yes to settings)",
    );
  });

  test("a level unseen in training is an error naming it and the column", async () => {
    const { target, predictors } = sheet();
    expect(await rejection(predict(new CountingRunner(), target, predictors, [[5, "Central", 1]], 1, QUICK))).toEqual({
      code: "#VALUE!",
      message:
        "new_rows row 1 column 'Region' has 'Central', a level of 'Region' not seen in training (levels: 'East', 'North', 'West', 'South'): fix the text, or refit with rows that include it",
    });
  });
});

describe("blank and error cells", () => {
  test("rows with a blank or error cell (any shape) are skipped, counted, and never become numbers", async () => {
    const runner = new CountingRunner();
    const { target, predictors } = sheet();
    const dirty = predictors.map((row) => row.slice());
    const y = target.map((row) => row.slice());
    dirty[3][0] = null; // blank predictor
    dirty[5][2] = new CustomFunctions.Error(CustomFunctions.ErrorCode.notAvailable); // error instance
    dirty[8][1] = { type: "Error", errorType: "Div0" }; // error as a cell value object
    y[10][0] = "#VALUE!"; // error as text
    y[12][0] = { code: "#REF!" }; // error as an object with a code
    dirty[14][2] = ""; // empty text
    // Padding: a row blank everywhere is ignored and not counted.
    dirty.push([null, null, null]);
    y.push([null]);
    const values = labelled(await choice(runner, y, dirty, 1, `${QUICK}; strength=0.02`));
    expect(values.get("rows skipped")).toBe(6);
    expect(values.get("rows used")).toBe(36);
    expect(String(values.get("notes"))).toContain("6 rows skipped for a blank or error cell (first: row 4: 'Size' is blank)");
    // The fit equals the fit on the clean rows alone (engine result at the same point).
    const dropped = new Set([3, 5, 8, 10, 12, 14].map((i) => i - 1));
    const { x, y: yy, names } = encodedByHand();
    const keep = x.map((_, d) => d).filter((d) => !dropped.has(d));
    const reference = fit(
      keep.map((d) => x[d]),
      keep.map((d) => yy[d]),
      { names, mixes: [1], strength: 0.02, folds: 4, strengthCount: 20 },
    );
    const table = coefficientMap(await coefs(runner, y, dirty, 1, `${QUICK}; strength=0.02`));
    names.forEach((name, j) => {
      if (reference.coefficients[j] !== 0) expectRelative(table.get(name) as number, reference.coefficients[j], 1e-12, `${name}: engine result at the same point`);
      else expect(table.get(name)).toBe(0);
    });
  });

  test("zero is missing: a column's zeros are treated as blank cells (rows skipped)", async () => {
    const runner = new CountingRunner();
    const { target, predictors } = sheet();
    const zeroed = predictors.map((row, i) => (i === 2 || i === 7 ? [row[0], row[1], 0] : row));
    const plain = labelled(await choice(runner, target, zeroed, 1, `${QUICK}; strength=0.02`));
    expect(plain.get("rows skipped")).toBe(0);
    const missing = labelled(await choice(runner, target, zeroed, 1, `${QUICK}; strength=0.02; zero is missing=temp`));
    expect(missing.get("rows skipped")).toBe(2);
    expect(missing.get("rows used")).toBe(40);
  });

  test("rows of zeros everywhere are pointed out (blanks that arrived as 0)", async () => {
    const { target, predictors } = sheet();
    const padded = [...predictors, [0, "East", 0], [0, "East", 0]];
    const y = [...target, [0], [0]];
    const values = labelled(await choice(new CountingRunner(), y, padded.map((r) => [r[0], r[2]]), 1, `${QUICK}; strength=0.02`));
    expect(String(values.get("notes"))).toContain(
      "2 rows are 0 in the target and every number column: if these are empty cells that arrived as 0, add 'zero is missing=all' to settings",
    );
  });
});

describe("cross-checks", () => {
  test("SHRINK.PREDICT equals SHRINK.APPLY on SHRINK.COEFS's output", async () => {
    const runner = new CountingRunner();
    const { target, predictors } = sheet();
    const newRows = [["Region", "Size", "Temp"], ["North", 4.2, -3], ["West", 6, 1], ["east", 5, 0], ["South", 7.5, 9], [null, null, null]];
    const predicted = await predict(runner, target, predictors, newRows, "0.5, 1", QUICK);
    const table = await coefs(runner, target, predictors, "0.5, 1", QUICK);
    const applied = await apply(table, newRows);
    expect(applied[0]).toEqual(["prediction"]);
    expect(applied[5]).toEqual([""]);
    expectVectorRelative(
      applied.slice(1, 5).map((r) => r[0] as number),
      predicted.slice(1, 5).map((r) => r[0] as number),
      1e-13,
      "APPLY(COEFS) vs PREDICT (engine result at the same point)",
    );
    // Without the header row of the table, and without its reference row: the same predictions.
    const bare = table.slice(1).filter((row) => !String(row[0]).endsWith("(reference)"));
    expectVectorRelative(
      (await apply(bare, newRows)).slice(1, 5).map((r) => r[0] as number),
      predicted.slice(1, 5).map((r) => r[0] as number),
      1e-13,
      "APPLY on a bare table vs PREDICT",
    );
  });

  test("SHRINK.COEFS with a fixed strength equals the engine's fit at that point", async () => {
    const runner = new CountingRunner();
    const { target, predictors } = sheet();
    const table = coefficientMap(await coefs(runner, target, predictors, 0.5, "strength=0.08; standardize=yes"));
    const { x, y, names } = encodedByHand();
    const reference = fit(x, y, { names, mixes: [0.5], strength: 0.08 });
    expectRelative(table.get("intercept") as number, reference.intercept, 1e-12, "intercept: engine result at the same point");
    names.forEach((name, j) => {
      if (reference.coefficients[j] === 0) expect(table.get(name)).toBe(0);
      else expectRelative(table.get(name) as number, reference.coefficients[j], 1e-12, `${name}: engine result at the same point`);
    });
    expect(runner.last().options).toMatchObject({ strength: 0.08, mixes: [0.5] });
  });

  test("APPLY on BASELINE's table (three columns, summary rows after a blank row)", async () => {
    const { target, predictors } = sheet();
    const table = await baseline(new CountingRunner(), target, predictors);
    const out = await apply(table, [["Size", "Region", "Temp"], [5, "North", 1]]);
    const b = coefficientMap(table);
    // By hand from the table's own coefficients.
    const expected = (b.get("intercept") as number) + 5 * (b.get("Size") as number) + (b.get("Region: North") as number) + (b.get("Temp") as number);
    expectRelative(out[1][0] as number, expected, 1e-13, "APPLY on BASELINE, by hand from the table");
  });
});

describe("bad input: error code and message", () => {
  const runner = new CountingRunner();
  const { target, predictors } = sheet();

  test("target of two columns", async () => {
    const wide = target.map((row) => [row[0], 1]);
    expect(await rejection(coefs(runner, wide, predictors, 1, QUICK))).toEqual({
      code: "#VALUE!",
      message: "target must be one column but it has 2 columns: select only the column to predict (put the others in predictors)",
    });
  });

  test("row counts that don't match", async () => {
    const x = sheet(120, false).predictors;
    const y = sheet(118, false).target;
    expect(await rejection(coefs(runner, y, x, 1, QUICK))).toEqual({
      code: "#VALUE!",
      message: "predictors has 120 rows but target has 118: select the same rows in both",
    });
  });

  test("text in a number column names the column, the row and the text", async () => {
    const x = [["Moisture", "Density"], ...Array.from({ length: 10 }, (_, i) => [i + 1, (i * 7) % 5])];
    x[6][0] = "n/a";
    const y = [["y"], ...Array.from({ length: 10 }, (_, i) => [i * 2 + 1])];
    expect(await rejection(coefs(runner, y, x, 1, QUICK))).toEqual({
      code: "#VALUE!",
      message: "predictors column 'Moisture' row 7 has text 'n/a' in a number column: fix it or clear the cell",
    });
    // Written with a decimal comma: not a number in the convention of engine/numberText.ts, and said so.
    x[6][0] = "1,5";
    expect((await rejection(coefs(runner, y, x, 1, QUICK))).message).toBe(
      "predictors column 'Moisture' row 7 has text '1,5' in a number column (a decimal comma or another digit grouping? numbers are read with '.' as the decimal point and ',' between groups of three digits): fix it or clear the cell",
    );
  });

  test("a number in a text column (0 gets the blank-as-0 hint)", async () => {
    const x = predictors.map((row, i) => (i === 4 ? [row[0], 0, row[2]] : row));
    expect((await rejection(coefs(runner, target, x, 1, QUICK))).message).toBe(
      "predictors column 'Region' row 5 has 0 in a text column: make it a text level or clear the cell (if that cell looks empty, Excel may have passed it as 0: add 'zero is missing=Region' to settings)",
    );
  });

  test("text in the target", async () => {
    const y = target.map((row, i) => (i === 9 ? ["lots"] : row));
    expect((await rejection(coefs(runner, y, predictors, 1, QUICK))).message).toBe(
      "target row 10 has text 'lots': the target must be numbers, so fix the cell or clear it",
    );
  });

  test("empty ranges", async () => {
    expect(await rejection(coefs(runner, [[null]], predictors, 1, QUICK))).toEqual({
      code: "#VALUE!",
      message: "target is empty: select the column of values to predict",
    });
    expect((await rejection(coefs(runner, target, [[null, ""]], 1, QUICK))).message).toBe(
      "predictors is empty: select the columns to predict from (one column per predictor, one row per case)",
    );
  });

  test("a single row passes the engine's message through", async () => {
    expect(await rejection(coefs(runner, [[3]], [[1, 2]], 1, QUICK))).toEqual({
      code: "#VALUE!",
      message: "there is only 1 row of data: a fit needs at least 2 rows (and more for cross-validation)",
    });
  });

  test("the engine's checks pass through: constant target, too many folds", async () => {
    const flat = target.map((row, i) => (i === 0 ? row : [7]));
    expect((await rejection(coefs(runner, flat, predictors, 1, QUICK))).message).toBe(
      "the target has the same value (7) in every row: there is nothing to predict",
    );
    expect((await rejection(coefs(runner, target, predictors, 1, "folds=30"))).message).toBe(
      "30 folds need at least 60 rows (2 per fold) but there are 42: use fewer folds",
    );
  });

  test("every row skipped", async () => {
    const y = target.map((row, i) => (i === 0 ? row : [null]));
    expect((await rejection(coefs(runner, y, predictors, 1, QUICK))).message).toBe(
      "no row can be used: every row has a blank or error cell in the target or a predictor (42 rows; first, row 2: target is blank)",
    );
  });

  test("two columns with the same name", async () => {
    const x = predictors.map((row, i) => (i === 0 ? ["Size", "Region", "size"] : row));
    expect((await rejection(coefs(runner, target, x, 1, QUICK))).message).toBe(
      "predictors has two columns named 'size' (columns 1 and 3): give each column its own name",
    );
  });

  test("new_rows: missing column by name, wrong width by position", async () => {
    expect((await rejection(predict(runner, target, predictors, [["Size", "Region"], [1, "East"]], 1, QUICK))).message).toBe(
      "new_rows has no column 'Temp' (its header row has 'Size', 'Region'): add it, or leave the header out and give the predictors' columns in the same order",
    );
    expect((await rejection(predict(runner, target, predictors, [[1, "East"]], 1, QUICK))).message).toBe(
      "new_rows has 2 columns but predictors has 3: give the same columns in the same order, or give new_rows a header row naming them",
    );
    expect((await rejection(predict(runner, target, predictors, [[1, "East", "warm"]], 1, QUICK))).message).toBe(
      "new_rows row 1 column 'Temp' has text 'warm', but 'Temp' is a number column: fix it or clear the cell",
    );
  });

  test("APPLY: a missing column is named; indicators need a header; two unlisted levels", async () => {
    const table = [["term", "coefficient"], ["(intercept)", 1], ["Size", 2], ["Region: North", 3]];
    expect(await rejection(apply(table, [["Size"], [1]]))).toEqual({
      code: "#VALUE!",
      message:
        "new_rows has no column 'Region' (needed for the term 'Region: North' of coefficient_table; new_rows' header has 'Size'): add the column or fix the header",
    });
    expect((await rejection(apply(table, [[1, "North"]]))).message).toBe(
      "new_rows needs a header row naming its columns (coefficient_table uses 'Size', 'Region: North'): include the header row in new_rows",
    );
    // Without a reference row one level may be left out (it is the reference), not two.
    const ok = await apply(table, [["Region", "Size"], ["North", 1], ["East", 1]]);
    expect(ok).toEqual([["prediction"], [6], [3]]); // 1 + 2 + 3 and 1 + 2, by hand
    expect((await rejection(apply(table, [["Region", "Size"], ["East", 1], ["Esat", 1]]))).message).toBe(
      "'Region' has levels 'East' and 'Esat' that coefficient_table doesn't list: only one level can be left out (the reference level); add a row 'Region: East (reference)' with coefficient 0 to say which, or fix the text",
    );
    // With a reference row, any other level is unseen.
    const strict = [...table, ["Region: East (reference)", 0]];
    expect((await rejection(apply(strict, [["Region", "Size"], ["Esat", 1]]))).message).toBe(
      "new_rows row 2 column 'Region' has 'Esat', a level of 'Region' not seen in coefficient_table (levels: 'East', 'North'): fix the text, or refit with rows that include it",
    );
  });

  test("APPLY reads the intercept row as intercept, (intercept) or constant", async () => {
    const newRows = [["Size"], [2], [5]];
    for (const label of ["intercept", "(intercept)", "Intercept", "constant", "Constant"]) {
      // 10 + 3·Size, by hand.
      expect(await apply([["term", "coefficient"], [label, 10], ["Size", 3]], newRows)).toEqual([["prediction"], [16], [25]]);
    }
    // With an intercept row present, "constant" is an ordinary term (a predictor may be called that).
    const both = [["term", "coefficient"], ["intercept", 10], ["constant", 3]];
    expect(await apply(both, [["constant"], [2]])).toEqual([["prediction"], [16]]);
    expect((await rejection(apply([["intercept", 1], ["(intercept)", 2], ["Size", 3]], newRows))).message).toBe(
      "coefficient_table lists the intercept twice: keep one",
    );
  });

  test("a predictor named constant round-trips through COEFS and APPLY", async () => {
    const { target } = sheet();
    const rows = target.length - 1;
    const grid: unknown[][] = [["constant", "Size"]];
    for (let i = 0; i < rows; i++) grid.push([((i * 7) % 5) - 2, (i % 9) + 1]);
    const table = await coefs(new CountingRunner(), target, grid, 1, QUICK);
    expect(table[1][0]).toBe("intercept");
    const viaApply = await apply(table, grid);
    const viaPredict = await predict(new CountingRunner(), target, grid, grid, 1, QUICK);
    expect(viaApply).toEqual(viaPredict);
  });

  test("APPLY: a coefficient that isn't a number", async () => {
    expect((await rejection(apply([["(intercept)", 1], ["Size", "big"]], [["Size"], [1]]))).message).toBe(
      "coefficient_table row 2 ('Size') has text 'big' where its coefficient belongs: give a number",
    );
  });

  test("PATH with two mixes; CVCURVE with a fixed strength is #N/A", async () => {
    expect((await rejection(path(runner, target, predictors, "0, 1", QUICK))).message).toBe(
      "SHRINK.PATH draws one mix but 2 were given: give a single mix, or leave it out for the mix cross-validation chooses",
    );
    expect(await rejection(cvcurve(runner, target, predictors, 1, "strength=0.1"))).toEqual({
      code: "#N/A",
      message: "no cross-validation runs with a fixed strength: remove 'strength' from settings to see the curve",
    });
  });

  test("SCORE: text, different lengths", async () => {
    expect((await rejection(score([[1], ["x"]], [[1], [2]]))).message).toBe(
      "actual row 2 has text 'x': SHRINK.SCORE needs numbers (clear the cell to skip it)",
    );
    expect((await rejection(score([[1], [2], [3]], [[1], [2]]))).message).toBe(
      "actual has 3 values but predicted has 2: give one prediction per actual value",
    );
  });

  test("a cancelled fit shows #N/A", async () => {
    const source = cancelSource();
    source.cancel();
    expect(await rejection(coefs(new CountingRunner(), target, predictors, 1, QUICK, source.token))).toEqual({
      code: "#N/A",
      message: "the fit was cancelled before it finished: recalculate to run it again",
    });
  });
});
