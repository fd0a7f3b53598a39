/**
 * The coefficient table a fit from sums writes into the sheet (taskpane/sources/coefficientSheet.ts).
 * Checked by the reader that uses it: SHRINK.APPLY's own parser (functions/dataset.ts
 * readCoefficientTable, applyCoefficientTable) must read back every coefficient bit for bit and
 * predict b0 + Σ b·x; and the write goes through the stand-in workbook as values, only into
 * empty cells unless the pane confirmed.
 */
import { apply } from "../../../functions/api";
import { readCoefficientTable } from "../../../functions/dataset";
import { StandInSheetHost, StandInWorkbook } from "../../../taskpane/standalone/standInSheetHost";
import { applyFormula, coefficientValues, filledInArea, planCoefficientWrite, writeCoefficients } from "../../../taskpane/sources/coefficientSheet";

const MODEL = {
  terms: ["drum_temp", "moisture", "origin: Kenya", "origin: Brazil"],
  intercept: 81.25 + 1e-13,
  coefficients: [0.1 + 0.2, -2.5e-7, 0, 1 / 3],
};

test("the table reads back through SHRINK.APPLY's parser exactly (common practice: round trip)", () => {
  const values = coefficientValues(MODEL);
  expect(values.slice(0, 2)).toEqual([
    ["term", "coefficient"],
    ["intercept", MODEL.intercept],
  ]);
  const table = readCoefficientTable(values);
  expect(table.link).toBe("identity");
  expect(table.intercept).toBe(MODEL.intercept);
  expect(table.terms.map((t) => t.term)).toEqual(MODEL.terms);
  expect(table.terms.map((t) => t.coefficient)).toEqual(MODEL.coefficients);
});

test("SHRINK.APPLY on the written table predicts b0 + Σ b·x (by hand, from memory of the linear model)", async () => {
  const values = coefficientValues(MODEL);
  const newRows = [
    ["drum_temp", "moisture", "origin"],
    [200, 11, "Kenya"],
    [205, 10.5, "Brazil"],
    [190, 12, "Colombia"],
  ];
  const spill = await apply(values, newRows);
  const [b0, bt, bm, bk, bb] = [MODEL.intercept, ...MODEL.coefficients];
  const expected = [b0 + bt * 200 + bm * 11 + bk, b0 + bt * 205 + bm * 10.5 + bb, b0 + bt * 190 + bm * 12];
  const got = spill.slice(1).map((row) => row[0] as number);
  got.forEach((g, i) => expect(Math.abs(g - expected[i])).toBeLessThanOrEqual(1e-12 * Math.abs(expected[i])));
});

test("nothing can be written when a coefficient is not finite or a term would read as a formula", () => {
  expect(() => coefficientValues({ ...MODEL, coefficients: [NaN, 0, 0, 0] })).toThrow(/'drum_temp' is NaN, which a cell can't hold: nothing was written/);
  expect(() => coefficientValues({ ...MODEL, intercept: Infinity })).toThrow(/'intercept' is Infinity/);
  expect(() => coefficientValues({ ...MODEL, terms: ["=x", "b", "c", "d"] })).toThrow(/'=x' would read as a formula/);
});

test("the area from the chosen cell; past the sheet's edge is refused", () => {
  const plan = planCoefficientWrite("'Roast log'!O3", coefficientValues(MODEL));
  expect(plan.area).toBe("'Roast log'!O3:P8");
  expect(plan.anchor).toBe("'Roast log'!O3");
  expect(applyFormula(plan, "B2:D9")).toBe("=SHRINK.APPLY('Roast log'!O3:P8, B2:D9)");
  expect(() => planCoefficientWrite("A1048575", coefficientValues(MODEL))).toThrow(/runs past the edge of the sheet/);
});

test("written as values on the stand-in sheet; filled cells are found before writing", async () => {
  const host = new StandInSheetHost(new StandInWorkbook(["Data"]));
  const plan = planCoefficientWrite("Data!B2", coefficientValues(MODEL));
  expect(await filledInArea(host, plan)).toEqual([]);
  host.setCell("Data!C4", "keep me");
  expect(await filledInArea(host, plan)).toEqual(["C4"]);
  await writeCoefficients(host, plan);
  const back = await host.readValues(plan.area);
  expect(back).toEqual(coefficientValues(MODEL));
  expect(host.cell("Data!C3")?.formula).toBeUndefined();
});
