/**
 * SHRINK.BASELINE on NIST's Longley data reproduces the certified least-squares values.
 * Fixture: test/fixtures/longley_nist.tsv (header y, x1..x6; 16 rows), read as a worksheet would
 * pass it: a header row, then numbers.
 */
import { readFileSync } from "fs";
import { join } from "path";
import { apply, baseline } from "../../functions/api";
import { expectRelative } from "../helpers/numeric";
import { CountingRunner } from "./support";

// Certified values, NIST StRD Longley: estimates B0..B6 and their standard deviations.
const CERTIFIED_COEFFICIENTS = [
  -3482258.63459582, 15.0618722713733, -0.035819179292591, -2.02022980381683, -1.03322686717359, -0.0511041056535807, 1829.15146461355,
];
const CERTIFIED_STANDARD_ERRORS = [
  890420.383607373, 84.9149257747669, 0.0334910077722432, 0.488399681651699, 0.214274163161675, 0.22607320006937, 455.478499142212,
];
const CERTIFIED_RESIDUAL_SD = 304.854073561965; // certified value, NIST StRD Longley
const CERTIFIED_R2 = 0.995479004577296; // certified value, NIST StRD Longley

function worksheet(): { target: unknown[][]; predictors: unknown[][] } {
  const lines = readFileSync(join(__dirname, "..", "fixtures", "longley_nist.tsv"), "utf8").trim().split(/\r?\n/);
  const cells = lines.map((line, i) => line.split("\t").map((text) => (i === 0 ? text.trim() : Number(text))));
  return { target: cells.map((row) => [row[0]]), predictors: cells.map((row) => row.slice(1)) };
}

test("BASELINE equals the certified coefficients, standard errors, residual SD and R²", async () => {
  const runner = new CountingRunner();
  const { target, predictors } = worksheet();
  const out = await baseline(runner, target, predictors);
  expect(runner.calls).toBe(1);
  expect(out.slice(0, 8).map((row) => row[0])).toEqual(["term", "intercept", "x1", "x2", "x3", "x4", "x5", "x6"]);
  for (let k = 0; k < 7; k++) {
    const row = out[k + 1];
    expectRelative(row[1] as number, CERTIFIED_COEFFICIENTS[k], 1e-8, `B${k}: certified value, NIST StRD Longley`);
    expectRelative(row[2] as number, CERTIFIED_STANDARD_ERRORS[k], 1e-8, `SE of B${k}: certified value, NIST StRD Longley`);
  }
  const summary = new Map(out.slice(9).map((row) => [row[0], row[1]]));
  expectRelative(summary.get("residual SD") as number, CERTIFIED_RESIDUAL_SD, 1e-8, "residual SD: certified value, NIST StRD Longley");
  expectRelative(summary.get("R²") as number, CERTIFIED_R2, 1e-8, "R²: certified value, NIST StRD Longley");
  expect(summary.get("residual degrees of freedom")).toBe(9); // certified value, NIST StRD Longley (16 − 7)
  expect(summary.get("rows used")).toBe(16);
});

test("APPLY on BASELINE's table reproduces the fitted values of the certified model", async () => {
  const { target, predictors } = worksheet();
  const table = await baseline(new CountingRunner(), target, predictors);
  const predictions = await apply(table, predictors);
  expect(predictions[0]).toEqual(["prediction"]);
  for (let i = 1; i < predictors.length; i++) {
    const x = predictors[i] as number[];
    // Fitted value from the certified coefficients (certified value, NIST StRD Longley), summed here.
    let expected = CERTIFIED_COEFFICIENTS[0];
    for (let j = 0; j < 6; j++) expected += CERTIFIED_COEFFICIENTS[j + 1] * x[j];
    expectRelative(predictions[i][0] as number, expected, 1e-8, `fitted value of row ${i}`);
  }
});
