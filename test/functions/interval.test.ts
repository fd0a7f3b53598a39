/**
 * SHRINK.PREDICT with `interval`: CV+ prediction intervals (Barber, Candès, Ramdas & Tibshirani
 * 2021, Annals of Statistics 49(1)) in the cells. The numbers are checked against the engine's
 * own route (fit + predictionIntervals on the same request), the layout, the unbounded case, the
 * setting's spellings and the refusals.
 */
import { predictionIntervals } from "../../engine/conformal";
import { fit } from "../../engine/fit";
import { fromRows } from "../../engine/matrix";
import { readFileSync } from "fs";
import { join } from "path";
import { predict } from "../../functions/api";
import { InProcessRunner } from "../../functions/inProcessRunner";
import { demoSheet, RANGES } from "../../taskpane/standalone/preview";
import { parseSettings } from "../../functions/settings";
import { CountingRunner, QUICK, rejection, sheet } from "./support";

/** Number-only data (Size, Temp), so the design's columns are the cells' columns. */
function numericSheet(rows: number): { target: unknown[][]; predictors: unknown[][] } {
  const { target, predictors } = sheet(rows);
  return { target, predictors: predictors.map((row) => [row[0], row[2]]) };
}

describe("SHRINK.PREDICT interval=", () => {
  test("prediction | low | high, the same numbers as the engine's route; blank and missing rows", async () => {
    const { target, predictors } = numericSheet(60);
    const runner = new CountingRunner();
    const newRows = [["Size", "Temp"], [5, 1], [null, null], [6, null], [3.5, -4]];
    const out = await predict(runner, target, predictors, newRows, 1, `${QUICK}; interval=0.9`);
    expect(out[0]).toEqual(["prediction", "low (90%)", "high (90%)"]);
    expect(out[2]).toEqual(["", "", ""]);
    expect(out[3].map((c) => (c as { code: string }).code)).toEqual(["#N/A", "#N/A", "#N/A"]);
    const request = runner.last();
    const result = fit(request.predictors, request.target, request.options);
    const engine = predictionIntervals(result, fromRows([[5, 1], [3.5, -4]]), 0.9);
    expect([out[1][1], out[4][1]]).toEqual(Array.from(engine.low));
    expect([out[1][2], out[4][2]]).toEqual(Array.from(engine.high));
    for (const row of [out[1], out[4]]) expect((row[1] as number) < (row[2] as number)).toBe(true);
  });

  test("the interval setting does not change the fit (the same request, so the same cache entry)", async () => {
    const { target, predictors } = numericSheet(40);
    const runner = new CountingRunner();
    const newRows = [[5, 1]];
    await predict(runner, target, predictors, newRows, 1, QUICK);
    await predict(runner, target, predictors, newRows, 1, `${QUICK}; interval=80%`);
    expect(runner.requests[1]).toEqual(runner.requests[0]);
  });

  test("too few rows for the level: each end is an error saying so", async () => {
    // 40 rows at 99%: ⌊0.01 × 41⌋ = 0 < 1, so CV+ has no finite end.
    const { target, predictors } = numericSheet(40);
    const out = await predict(new CountingRunner(), target, predictors, [[5, 1]], 1, `${QUICK}; interval=99%`);
    expect(typeof out[0][0]).toBe("number");
    for (const cell of out[0].slice(1)) {
      expect(cell).toMatchObject({ code: "#N/A", message: "unbounded: a 99% interval needs at least 99 rows with a held-out error; lower the interval level or add rows" });
    }
  });

  test("spellings and bad levels", () => {
    expect(parseSettings("interval=0.9").interval).toBe(0.9);
    expect(parseSettings("interval level=90%").interval).toBe(0.9);
    expect(parseSettings([["prediction interval", 0.95]]).interval).toBe(0.95);
    for (const bad of ["interval=1", "interval=0", "interval=150%", "interval=wide"]) {
      expect(() => parseSettings(bad)).toThrow(/^'interval' must be a coverage level between 0 and 1 \(not 0 or 1\), like 0.9 or 90%; got /);
    }
  });

  test("a yes/no target is refused with a message", async () => {
    const { target, predictors } = numericSheet(40);
    const yesNo = target.map((row, i) => (i === 0 ? row : [(row[0] as number) > 10]));
    const error = await rejection(predict(new CountingRunner(), yesNo, predictors, [[5, 1]], 1, `${QUICK}; interval=0.9`));
    expect(error.message).toBe("prediction intervals are for number targets; a yes/no model gives probabilities: remove the interval setting");
  });

  test("the README's example on the demo data is what the function returns", async () => {
    const sheet = demoSheet();
    const formula = `=SHRINK.PREDICT(${RANGES.target}, ${RANGES.predictors}, ${RANGES.newRows}, , "interval=0.9")`;
    const readme = readFileSync(join(__dirname, "..", "..", "README.md"), "utf8");
    expect(readme).toContain(`\`${formula}\``);
    const out = await predict(new InProcessRunner(), sheet.target, sheet.predictors, sheet.newRows, null, "interval=0.9");
    const shown = (cell: unknown): string => (typeof cell === "number" ? String(Number(cell.toPrecision(4))) : String(cell));
    for (const row of out) expect(readme).toContain(`| ${row.map(shown).join(" | ")} |`);
  });
});
