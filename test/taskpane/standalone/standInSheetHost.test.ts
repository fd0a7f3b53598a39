/**
 * The stand-in workbook and its SheetHost (taskpane/standalone/standInSheetHost.ts): the demo layout,
 * selection, reading, formulas computed through functions/api.ts and spilled, #SPILL!, errors,
 * recalculation after an edit, watching, the report sheet, settings.
 *
 * Sources of expected values: "demo data" (addin/demo/roasteryData.ts and README's layout),
 * "engine result" (the same cell function called directly on the same values), "common
 * practice" (how a spreadsheet spills and blocks results).
 */
import * as api from "../../../functions/api";
import { fitCache } from "../../../functions/cache";
import { InProcessRunner } from "../../../functions/inProcessRunner";
import type { Spill } from "../../../functions/api";
import { roasteryColumns, roasteryNewRows, roasteryRows } from "../../../addin/demo/roasteryData";
import { qualityColumns, qualityNewRows, qualityRows } from "../../../addin/demo/qualityData";
import {
  createDemoWorkbook,
  DEMO_SHEET,
  QUALITY_RANGES,
  QUALITY_SHEET,
  FormulaError,
  parseFormula,
  StandInSheetHost,
  StandInWorkbook,
} from "../../../taskpane/standalone/standInSheetHost";
import { SheetHostError } from "../../../taskpane/host/sheetHost";

/** Settings that keep the cross-validated fits quick. */
const QUICK = '"folds=5; grid size=25"';

/** One cache for the whole file: formulas over the same ranges fit once. */
const runner = fitCache(new InProcessRunner());

function newHost(workbook = createDemoWorkbook()): StandInSheetHost {
  return new StandInSheetHost(workbook, { runner, storage: null, theme: "light" });
}

/** The demo ranges as the cell functions receive them (blanks null), built from the demo data directly. */
function demoGrids(): { target: unknown[][]; predictors: unknown[][]; newRows: unknown[][] } {
  const last = roasteryColumns.length - 1;
  return {
    target: [[roasteryColumns[last]], ...roasteryRows.map((row) => [row[last]])],
    predictors: [roasteryColumns.slice(1, last), ...roasteryRows.map((row) => row.slice(1, last))],
    newRows: [roasteryColumns.slice(1, last), ...roasteryNewRows.map((row) => row.slice(1, last))],
  };
}

/** A spill as the sheet shows it: numbers, text, and error codes for error cells. */
function shown(spill: Spill): unknown[][] {
  return spill.map((row) => row.map((cell) => (cell !== null && typeof cell === "object" ? (cell as { code: string }).code : cell)));
}

describe("the demo workbook (layout from README and the preview)", () => {
  test("'Quality check' holds the quality data (addin/demo/qualityData.ts): header and 300 batches in A1:N301, the new batches in A304:M312", async () => {
    const host = newHost();
    const at = (address: string): string => `'${QUALITY_SHEET}'!${address}`;
    expect((await host.readValues(at("A1:N1")))[0]).toEqual([...qualityColumns]); // demo data
    const data = await host.readValues(at(QUALITY_RANGES.data));
    expect(data).toHaveLength(1 + qualityRows.length);
    expect(data.slice(1)).toEqual(qualityRows.map((row) => row.map((v) => v ?? "")));
    expect((await host.readValues(at(QUALITY_RANGES.target))).slice(1).flat()).toEqual(qualityRows.map((row) => row[row.length - 1] ?? ""));
    expect((await host.readValues(at("A302:N303"))).flat().every((v) => v === "")).toBe(true);
    const fresh = await host.readValues(at(QUALITY_RANGES.newBatches));
    expect(fresh[0]).toEqual(qualityColumns.slice(0, -1));
    expect(fresh.slice(1)).toEqual(qualityNewRows.map((row) => row.map((v) => v ?? "")));
  });

  test("A1:M121 holds the header and 120 batches; A124:L132 the new batches with their header", async () => {
    const host = newHost();
    expect(host.workbook.sheets().map((s) => s.name)).toEqual([DEMO_SHEET, QUALITY_SHEET]);
    expect(host.workbook.activeSheet.name).toBe(DEMO_SHEET);
    const header = await host.readValues("A1:M1");
    expect(header[0]).toEqual([...roasteryColumns]); // demo data
    const first = await host.readValues("A2:M2");
    expect(first[0]).toEqual(roasteryRows[0].map((v) => v ?? ""));
    const last = await host.readValues("A121:M121");
    expect(last[0]).toEqual(roasteryRows[119].map((v) => v ?? ""));
    expect((await host.readValues("A122:M123")).flat().every((v) => v === "")).toBe(true);
    const newHeader = await host.readValues("A124:M124");
    expect(newHeader[0]).toEqual([...roasteryColumns.slice(0, 12), ""]);
    const batches = await host.readValues("A125:L132");
    expect(batches).toEqual(roasteryNewRows.map((row) => row.map((v) => v ?? "")));
    expect(await host.filledCells("A133:M140")).toEqual([]);
  });

  test("four cells of the data are blank on purpose (demo data: README)", async () => {
    const host = newHost();
    const values = await host.readValues("'Roast log'!B2:M121");
    expect(values.flat().filter((v) => v === "")).toHaveLength(4);
  });
});

describe("selection", () => {
  test("A1 of the active sheet at first; set by code with or without a sheet name", async () => {
    const host = newHost();
    expect(await host.selectionAddress()).toBe("'Roast log'!A1");
    host.setSelection("B1:L121");
    expect(await host.selectionAddress()).toBe("'Roast log'!B1:L121");
    host.setSelection("'roast LOG'!$M$1:$M$121");
    expect(await host.selectionAddress()).toBe("'Roast log'!M1:M121");
  });

  test("an unknown sheet or a bad address is a SheetHostError; there is no prompt", async () => {
    const host = newHost();
    expect(() => host.setSelection("Nowhere!A1")).toThrow(SheetHostError);
    expect(() => host.setSelection("A1:")).toThrow(SheetHostError);
    expect(host.canPromptForRange).toBe(false);
    await expect(host.promptForRange("target")).resolves.toBeNull();
  });

  test("subscribers hear about selection changes", () => {
    const host = newHost();
    const seen: string[] = [];
    const stop = host.subscribe((change) => seen.push(change.kind));
    host.setSelection("C3");
    stop();
    host.setSelection("C4");
    expect(seen).toEqual(["selection"]);
  });
});

describe("reading", () => {
  test("blanks read as \"\", error cells as their text; whole columns cut to the filled rows", async () => {
    const host = newHost(new StandInWorkbook(["Data"]));
    host.setCells("A1", [
      ["x", "y"],
      [1, "#N/A"],
      [true, null],
    ]);
    expect(await host.readValues("A1:B3")).toEqual([
      ["x", "y"],
      [1, "#N/A"],
      [true, ""],
    ]);
    expect(await host.readValues("A:B")).toHaveLength(3);
    expect(await host.filledCells("Data!A1:C3")).toEqual(["A1", "B1", "A2", "B2", "A3"]);
    await expect(host.readValues("Other!A1")).rejects.toThrow(SheetHostError);
  });

  test("typed text that reads as a number or TRUE/FALSE is stored as one (common practice)", async () => {
    const host = newHost(new StandInWorkbook(["Data"]));
    await host.writeFormulas("A1:C1", [["12.5", "true", "n/a"]]);
    expect(await host.readValues("A1:C1")).toEqual([[12.5, true, "n/a"]]);
  });
});

describe("writing values", () => {
  test("writeValues stores constants at full precision; a size mismatch is refused", async () => {
    const host = newHost(new StandInWorkbook(["Data"]));
    await host.writeValues("B2:C3", [
      ["term", "coefficient"],
      ["intercept", 0.1 + 0.2],
    ]);
    expect(await host.readValues("B2:C3")).toEqual([
      ["term", "coefficient"],
      ["intercept", 0.30000000000000004],
    ]);
    await expect(host.writeValues("B2:C3", [["x"]])).rejects.toThrow(/2 × 2 cells but 1 row/);
  });
});

describe("formulas", () => {
  test("parsing: ranges, sheet names, left-out arguments, text, numbers, arrays, spill refs, nested calls", () => {
    const call = parseFormula(`=shrink.coefs('Roast log'!M1:M121, $B$1:L121, , "a ""quoted"" word")`);
    expect(call.name).toBe("COEFS");
    expect(call.args[0]).toEqual({ kind: "range", range: { sheet: "Roast log", top: 1, left: 13, bottom: 121, right: 13 }, spill: false });
    expect(call.args[1]).toMatchObject({ kind: "range", range: { sheet: null, top: 1, left: 2 } });
    expect(call.args[2]).toBeNull();
    expect(call.args[3]).toEqual({ kind: "text", value: 'a "quoted" word' });
    const nested = parseFormula("=SHRINK.SCORE(M1:M121, SHRINK.PREDICT(M1:M121, B1:L121, B1:L121))");
    expect(nested.args[1]).toMatchObject({ kind: "call", name: "PREDICT" });
    expect(parseFormula("=SHRINK.APPLY(O1#, B124:L132)").args[0]).toMatchObject({ kind: "range", spill: true });
    expect(parseFormula("=SHRINK.COEFS(M1:M121, B1:L121, {0, 0.5; 1, -2e-1})").args[2]).toEqual({
      kind: "array",
      rows: [
        [0, 0.5],
        [1, -0.2],
      ],
    });
    expect(parseFormula("=SHRINK.PATH(M1:M121, B1:L121, 1, TRUE)").args.slice(2)).toEqual([
      { kind: "number", value: 1 },
      { kind: "boolean", value: true },
    ]);
  });

  test.each([
    ["=SUM(A1:A3)", "#NAME?"],
    ["=SHRINK.NOPE(A1)", "#NAME?"],
    ["=SHRINK.COEFS(M1:M121)", "#VALUE!"],
    ["=SHRINK.SCORE(A1, B1, C1)", "#VALUE!"],
    ["=SHRINK.COEFS(M1:M121, B1:L121", "#VALUE!"],
    ["=SHRINK.APPLY(O1:O3#, B1)", "#REF!"],
  ])("%s can't be computed: %s", (formula, code) => {
    let caught: unknown = null;
    try {
      parseFormula(formula);
    } catch (e) {
      caught = e;
    }
    expect(caught).toBeInstanceOf(FormulaError);
    expect((caught as FormulaError).code).toBe(code);
    expect((caught as FormulaError).message.length).toBeGreaterThan(10);
  });

  test("SHRINK.COEFS spills the same table the cell function returns (engine result), marked as spill", async () => {
    const host = newHost();
    await host.writeFormulas("O1", [[`=SHRINK.COEFS(M1:M121, B1:L121, , ${QUICK})`]]);
    expect(host.cell("O1")?.value).toBe("#BUSY!"); // while the fit runs
    await host.whenCalculated();
    const grids = demoGrids();
    const expected = shown(await api.coefs(runner, grids.target, grids.predictors, null, "folds=5; grid size=25"));
    expect(expected).toHaveLength(15); // header, intercept, 12 terms, the reference level (demo data)
    const values = await host.readValues(`O1:P${expected.length}`);
    expect(values).toEqual(expected);
    expect(host.cell("O1")?.formula).toBe(`=SHRINK.COEFS(M1:M121, B1:L121, , ${QUICK})`);
    expect(host.cell("P2")?.spillFrom).toEqual({ row: 1, column: 15 });
    expect(await host.filledCells("O1:Q20")).toHaveLength(2 * expected.length);
    expect(await host.readValues(`O${expected.length + 1}:P${expected.length + 1}`)).toEqual([["", ""]]);
  });

  test("a blocked spill shows #SPILL! naming the cell in the way, and spills once it is cleared (common practice)", async () => {
    const host = newHost();
    host.setCell("P5", "in the way");
    await host.writeFormulas("O1", [[`=SHRINK.COEFS(M1:M121, B1:L121, , ${QUICK})`]]);
    await host.whenCalculated();
    expect(host.cell("O1")?.value).toBe("#SPILL!");
    expect(host.cell("O1")?.message).toContain("P5");
    expect(await host.filledCells("O1:P20")).toEqual(["O1", "P5"]);
    host.setCell("P5", null);
    await host.whenCalculated();
    expect(host.cell("O1")?.value).toBe("term");
    expect(host.cell("P5")?.spillFrom).toEqual({ row: 1, column: 15 });
    // Typing into the spill blocks it again.
    host.setCell("O3", 7);
    await host.whenCalculated();
    expect(host.cell("O1")?.value).toBe("#SPILL!");
    expect(host.cell("P2")).toBeUndefined();
  });

  test("errors show their code and message: a bad mix, an unknown function", async () => {
    const host = newHost();
    await host.writeFormulas("O1:P1", [["=SHRINK.COEFS(M1:M121, B1:L121, 2)", "=SHRINK.TOTAL(A1)"]]);
    await host.whenCalculated();
    expect(host.cell("O1")?.value).toBe("#VALUE!");
    expect(host.cell("O1")?.message).toMatch(/mix 2/);
    expect(host.cell("P1")?.value).toBe("#NAME?");
    expect(host.cell("P1")?.message).toMatch(/SHRINK\.COEFS/);
  });

  test("O1# passes the spilled table on: APPLY on it equals PREDICT (engine result: the same model)", async () => {
    const host = newHost();
    await host.writeFormulas("O1", [[`=SHRINK.COEFS(M1:M121, B1:L121, , ${QUICK})`]]);
    await host.writeFormulas("R1:S1", [["=SHRINK.APPLY(O1#, B124:L132)", `=SHRINK.PREDICT(M1:M121, B1:L121, B124:L132, , ${QUICK})`]]);
    await host.whenCalculated();
    const applied = await host.readValues("R1:R9");
    const predicted = await host.readValues("S1:S9");
    expect(applied[0]).toEqual(["prediction"]);
    expect(applied).toHaveLength(9);
    for (let i = 1; i < 9; i++) {
      // Relative error 1e-12: the same coefficients applied to the same rows.
      expect(Math.abs((applied[i][0] as number) - (predicted[i][0] as number))).toBeLessThanOrEqual(1e-12 * Math.abs(predicted[i][0] as number));
    }
  });

  test("a nested call's result is passed as an array (SCORE of PREDICT, engine result)", async () => {
    const host = newHost();
    await host.writeFormulas("O1", [[`=SHRINK.SCORE(M1:M121, SHRINK.PREDICT(M1:M121, B1:L121, B1:L121, , ${QUICK}))`]]);
    await host.whenCalculated();
    const grids = demoGrids();
    const predictions = await api.predict(runner, grids.target, grids.predictors, grids.predictors, null, "folds=5; grid size=25");
    const expected = shown(await api.score(grids.target, predictions));
    expect(await host.readValues(`O1:P${expected.length}`)).toEqual(expected);
  });

  test("editing a cell a formula reads computes it again; watchers hear edits in their ranges only", async () => {
    const host = newHost();
    await host.writeFormulas("O1", [[`=SHRINK.COEFS(M1:M121, B1:L121, , ${QUICK})`]]);
    await host.whenCalculated();
    const before = host.cell("P2")?.value;
    let calls = 0;
    const stop = await host.watch(["'Roast log'!M1:M121", "B1:L121"], () => calls++);
    host.setCell("M2", 99);
    expect(calls).toBe(1);
    expect(host.cell("O1")?.value).toBe("#BUSY!");
    await host.whenCalculated();
    expect(host.cell("O1")?.value).toBe("term");
    expect(host.cell("P2")?.value).not.toBe(before); // the intercept moved with the new score
    host.setCell("Z1", 1); // outside the watched ranges
    expect(calls).toBe(1);
    stop();
    host.setCell("M3", 80);
    expect(calls).toBe(1);
    await host.whenCalculated();
  });

  test("a result blocked by another's spill spills once that formula is replaced (common practice)", async () => {
    const host = newHost();
    await host.writeFormulas("O1", [[`=SHRINK.COEFS(M1:M121, B1:L121, , ${QUICK})`]]);
    await host.whenCalculated();
    await host.writeFormulas("N3", [["=SHRINK.SCORE(M1:M121, M1:M121)"]]); // 7 × 2 from N3 runs into O3:O9
    await host.whenCalculated();
    expect(host.cell("N3")?.value).toBe("#SPILL!");
    await host.writeFormulas("O1", [[""]]);
    await host.whenCalculated();
    expect(host.cell("N3")?.value).toBe("label");
    expect(host.cell("O3")?.value).toBe("value");
  });

  test("replacing a formula with a value clears its spill", async () => {
    const host = newHost();
    await host.writeFormulas("O1", [[`=SHRINK.COEFS(M1:M121, B1:L121, , ${QUICK})`]]);
    await host.whenCalculated();
    await host.writeFormulas("O1", [["done"]]);
    await host.whenCalculated();
    expect(await host.filledCells("O1:P20")).toEqual(["O1"]);
    expect(host.cell("O1")?.formula).toBeUndefined();
  });

  test("writeFormulas checks the shape of what it is given", async () => {
    const host = newHost();
    await expect(host.writeFormulas("O1:O2", [["=SHRINK.SCORE(M1:M3, M1:M3)"]])).rejects.toThrow(SheetHostError);
  });
});

describe("report sheet", () => {
  const report = {
    name: "Shrinkwise report",
    blocks: [
      { at: "A1", rows: [["title"], ["made now"]], header: true },
      {
        at: "C3",
        rows: [
          ["strength", "x1"],
          [1, 0],
          [0.1, 0.5],
        ],
        header: true,
        formats: ["0.000E+00", null],
      },
    ],
    charts: [] as { title: string; block: { at: string; rows: (string | number)[][]; header?: boolean }; logX: boolean; xTitle: string; yTitle: string; at: string }[],
  };
  report.charts.push({ title: "path", block: report.blocks[1], logX: true, xTitle: "strength", yTitle: "coefficient", at: "F2" });

  test("a new sheet with unique names, blocks in cells with bold headers and formats, chart descriptions; it becomes active", async () => {
    const host = newHost();
    const seen: string[] = [];
    host.subscribe((change) => seen.push(change.kind));
    const first = await host.writeReport(report);
    const second = await host.writeReport(report);
    expect([first, second]).toEqual(["Shrinkwise report", "Shrinkwise report 2"]);
    expect(host.workbook.sheets().map((s) => s.name)).toEqual([DEMO_SHEET, QUALITY_SHEET, first, second]);
    expect(host.workbook.activeSheet.name).toBe(second);
    expect(await host.selectionAddress()).toBe("'Shrinkwise report 2'!A1");
    const sheet = host.workbook.sheet(first);
    expect(sheet?.get(1, 1)).toEqual({ value: "title", bold: true });
    expect(sheet?.get(2, 1)).toEqual({ value: "made now" });
    expect(sheet?.get(4, 3)).toEqual({ value: 1, format: "0.000E+00" });
    expect(sheet?.get(4, 4)).toEqual({ value: 0 });
    expect(sheet?.charts).toEqual([{ title: "path", source: "C3:D5", logX: true, xTitle: "strength", yTitle: "coefficient", at: "F2" }]);
    expect(await host.readValues(`'${first}'!C3:D5`)).toEqual([
      ["strength", "x1"],
      [1, 0],
      [0.1, 0.5],
    ]);
    expect(seen).toContain("sheets");
  });
});

describe("settings and theme", () => {
  test("settings round-trip as plain data, persist through the storage given, and clear with null", async () => {
    const store = new Map<string, string>();
    const storage = {
      getItem: (key: string) => store.get(key) ?? null,
      setItem: (key: string, value: string) => void store.set(key, value),
      removeItem: (key: string) => void store.delete(key),
    };
    const host = new StandInSheetHost(createDemoWorkbook(), { runner, storage });
    expect(await host.loadSetting("ranges")).toBeNull();
    await host.saveSetting("ranges", { target: "M1:M121", folds: 5 });
    expect(await host.loadSetting("ranges")).toEqual({ target: "M1:M121", folds: 5 });
    const later = new StandInSheetHost(createDemoWorkbook(), { runner, storage });
    expect(await later.loadSetting("ranges")).toEqual({ target: "M1:M121", folds: 5 });
    await later.saveSetting("ranges", null);
    expect(await later.loadSetting("ranges")).toBeNull();
    expect(store.size).toBe(0);
  });

  test("theme: as given, else light where the page has no colour-scheme query", () => {
    expect(new StandInSheetHost(createDemoWorkbook(), { runner, theme: "dark" }).theme()).toBe("dark");
    expect(new StandInSheetHost(createDemoWorkbook(), { runner, storage: null }).theme()).toBe("light");
  });
});
