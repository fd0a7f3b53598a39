/**
 * The cells on the invented quality-check demo (addin/demo/qualityData.ts): a pass/fail target
 * read as yes/no with 'fail' (the rarer class) as the event, counts checked against the data
 * counted directly, the large true effects found with the right sign, and the fitted
 * probabilities ranking the batches about as well as the true model does.
 */
import { qualityColumns, qualityNewRows, qualityPredictorColumns, qualityRows, qualityTruth } from "../../addin/demo/qualityData";
import { apply, choice, coefs, predict, score } from "../../functions/api";
import { CountingRunner, labelled } from "./support";

const SETTINGS = "folds=5; grid size=30";
const column = (name: string): number => qualityColumns.indexOf(name);
const target = [["check"], ...qualityRows.map((row) => [row[column("check")]])];
const predictors = [qualityPredictorColumns.slice(), ...qualityRows.map((row) => qualityPredictorColumns.map((name) => row[column(name)]))];
const newRows = [qualityPredictorColumns.slice(), ...qualityNewRows.map((row) => qualityPredictorColumns.map((name) => row[column(name)]))];

test("CHOICE: 'fail' is the event, counted over the complete rows; the blank cells skip their rows", async () => {
  const complete = qualityRows.filter((row) => row.every((cell) => cell !== null));
  const fails = complete.filter((row) => row[column("check")] === "fail").length;
  expect([complete.length, fails]).toEqual([qualityTruth.completeRows, qualityTruth.fails]);
  const v = labelled(await choice(new CountingRunner(), target, predictors, 1, SETTINGS));
  expect(v.get("outcome")).toBe("yes/no (two-class)");
  expect(v.get("event")).toBe(`'fail' (${fails} of ${complete.length} rows used; the other class is 'pass')`);
  expect(v.get("rows skipped")).toBe(qualityRows.length - complete.length);
  expect(v.get("reference levels")).toBe("shift: early shift");
});

test("COEFS finds the large true effects with their signs; PREDICT, APPLY and SCORE agree", async () => {
  const runner = new CountingRunner();
  const table = await coefs(runner, target, predictors, 1, SETTINGS);
  const b = new Map(table.slice(1).map((row) => [String(row[0]), row[1] as number]));
  // The generator's stated model: the terms of log-odds 1 or more per unit (moisture +1.5, night shift +1) keep their sign.
  const large = Object.entries(qualityTruth.coefficients).filter(([, value]) => Math.abs(value) >= 1);
  expect(large.map(([term]) => term).sort()).toEqual(["moisture", "shift: night shift"]);
  for (const [term, value] of large) expect(Math.sign(b.get(term) as number)).toBe(Math.sign(value));
  const p = await predict(runner, target, predictors, newRows, 1, SETTINGS);
  expect(await apply(table, newRows)).toEqual(p);
  expect(p).toHaveLength(9);
  const inSample = await predict(runner, target, predictors, predictors, 1, SETTINGS);
  const v = labelled(await score(target, inSample));
  // The true model ranks these batches with AUC 0.856 (stated by the generator); a fitted model
  // ranks its own training rows at least about as well.
  expect(v.get("AUC") as number).toBeGreaterThan(qualityTruth.auc - 0.05);
  expect(v.get("pairs used")).toBe(296);
  expect(runner.calls).toBe(3);
});
