/**
 * Planning "Insert formulas": the formula text over the chosen ranges (settings text only when
 * something differs from the defaults), the places side by side with a blank column between,
 * spill areas sized from the spill functions' own output, and the filled-cell check that comes
 * before any write. Fitted on the demo data with the in-process engine.
 */
import * as api from "../../../functions/api";
import { requestHash } from "../../../functions/cache";
import { InProcessRunner } from "../../../functions/inProcessRunner";
import {
  excelString,
  filledLines,
  findFilledCells,
  formulaIds,
  formulaText,
  listCells,
  planPlacements,
  spillShapes,
  writePlacements,
} from "../../../taskpane/pane/insertFormulas";
import { emptyInputs, FitOutcome, mixesText, PaneInputs, settingsText } from "../../../taskpane/pane/paneState";
import { demoSheet } from "../../../taskpane/standalone/preview";
import { qualityColumns, qualityNewRows, qualityRows } from "../../../addin/demo/qualityData";
import type { SheetHost } from "../../../taskpane/host/sheetHost";

function roastInputs(): PaneInputs {
  const inputs = emptyInputs();
  inputs.ranges = {
    target: "'Roast log'!M1:M121",
    predictors: "'Roast log'!B1:L121",
    newRows: "",
    destination: "'Roast log'!O1",
  };
  return inputs;
}

describe("formula text", () => {
  test("default settings: just the two ranges", () => {
    const inputs = roastInputs();
    expect(formulaText("COEFS", inputs)).toBe("=SHRINK.COEFS('Roast log'!M1:M121, 'Roast log'!B1:L121)");
    expect(formulaText("CHOICE", inputs)).toBe("=SHRINK.CHOICE('Roast log'!M1:M121, 'Roast log'!B1:L121)");
    expect(formulaIds(inputs)).toEqual(["COEFS", "CHOICE"]);
    expect(() => formulaText("PREDICT", inputs)).toThrow(/new rows/);
  });

  test("settings without mixes leave the mixes argument empty", () => {
    const inputs = roastInputs();
    inputs.settings = { folds: "5", rule: "one-se" };
    expect(formulaText("COEFS", inputs)).toBe('=SHRINK.COEFS(\'Roast log\'!M1:M121, \'Roast log\'!B1:L121, , "folds=5; rule=one-se")');
  });

  test("mixes alone, and mixes with settings; PREDICT takes the new rows third", () => {
    const inputs = roastInputs();
    inputs.mixes = "0,1";
    expect(formulaText("COEFS", inputs)).toBe('=SHRINK.COEFS(\'Roast log\'!M1:M121, \'Roast log\'!B1:L121, "0, 1")');
    inputs.header = "yes";
    inputs.ranges.newRows = "'Roast log'!B124:L132";
    expect(formulaIds(inputs)).toEqual(["COEFS", "CHOICE", "PREDICT"]);
    expect(formulaText("PREDICT", inputs)).toBe(
      '=SHRINK.PREDICT(\'Roast log\'!M1:M121, \'Roast log\'!B1:L121, \'Roast log\'!B124:L132, "0, 1", "header=yes")',
    );
  });

  test("quotes inside text are doubled", () => {
    expect(excelString('a "b" c')).toBe('"a ""b"" c"');
  });

  test("the formula's arguments make the same request as the pane's fit (one cache entry)", () => {
    const sheet = demoSheet();
    const inputs = roastInputs();
    inputs.mixes = "0.5, 1";
    inputs.settings = { folds: "5", seed: "3" };
    const pane = api.prepare(sheet.target, sheet.predictors, mixesText(inputs) || null, settingsText(inputs) || null);
    // Excel hands a string argument to an any[][] parameter as a 1×1 range.
    const cell = api.prepare(sheet.target, sheet.predictors, [[mixesText(inputs)]], [[settingsText(inputs)]]);
    expect(requestHash(pane.request)).toBe(requestHash(cell.request));
    const defaults = api.prepare(sheet.target, sheet.predictors, null, null);
    expect(requestHash(defaults.request)).not.toBe(requestHash(pane.request));
  });
});

describe("placement and spill areas", () => {
  let outcome: FitOutcome;
  const sheet = demoSheet();

  beforeAll(async () => {
    const inputs = roastInputs();
    inputs.ranges.newRows = "'Roast log'!B124:L132";
    inputs.settings = { folds: "5" };
    const prepared = api.prepare(sheet.target, sheet.predictors, null, settingsText(inputs));
    const result = await new InProcessRunner().fit(prepared.request);
    outcome = { result, prepared, inputs, values: { target: sheet.target, predictors: sheet.predictors, newRows: sheet.newRows }, elapsedMs: 0 };
  });

  test("spill sizes match what the functions return", async () => {
    const runner = new InProcessRunner();
    const settings = settingsText(outcome.inputs);
    const coefs = await api.coefs(runner, sheet.target, sheet.predictors, null, settings);
    const choice = await api.choice(runner, sheet.target, sheet.predictors, null, settings);
    const predict = await api.predict(runner, sheet.target, sheet.predictors, sheet.newRows, null, settings);
    const shapes = spillShapes(outcome, ["COEFS", "CHOICE", "PREDICT"]);
    expect(shapes).toEqual([
      { id: "COEFS", rows: coefs.length, columns: 2 },
      { id: "CHOICE", rows: choice.length, columns: 2 },
      { id: "PREDICT", rows: predict.length, columns: 1 },
    ]);
    // COEFS: header + intercept + terms (origin's reference level is listed too).
    expect(coefs.length).toBe(2 + outcome.result.terms.length + 1);
    expect(predict.length).toBe(sheet.newRows.length);
  });

  test("side by side from the chosen cell, one blank column between", () => {
    const shapes = spillShapes(outcome, formulaIds(outcome.inputs));
    const placements = planPlacements("'Roast log'!O1", shapes, outcome.inputs);
    const coefsRows = shapes[0].rows;
    const choiceRows = shapes[1].rows;
    expect(placements.map((p) => [p.id, p.anchor, p.area])).toEqual([
      ["COEFS", "'Roast log'!O1", `'Roast log'!O1:P${coefsRows}`],
      ["CHOICE", "'Roast log'!R1", `'Roast log'!R1:S${choiceRows}`],
      ["PREDICT", "'Roast log'!U1", "'Roast log'!U1:U9"],
    ]);
    expect(placements[0].formula).toBe('=SHRINK.COEFS(\'Roast log\'!M1:M121, \'Roast log\'!B1:L121, , "folds=5")');
    // A range as destination: its top-left cell.
    expect(planPlacements("Sheet2!C5:D9", shapes, outcome.inputs)[1].anchor).toBe("Sheet2!F5");
  });

  test("an unreadable destination or one too near the sheet's edge is refused", () => {
    const shapes = spillShapes(outcome, ["COEFS"]);
    expect(() => planPlacements("not a cell", shapes, outcome.inputs)).toThrow(/not a range address/);
    expect(() => planPlacements("XFD1", spillShapes(outcome, ["COEFS"]), outcome.inputs)).toThrow(/edge of the sheet/);
  });

  test("filled cells are found per area before anything is written", async () => {
    const shapes = spillShapes(outcome, formulaIds(outcome.inputs));
    const placements = planPlacements("'Roast log'!O1", shapes, outcome.inputs);
    const asked: string[] = [];
    const written: [string, string[][]][] = [];
    const host = {
      filledCells: async (address: string) => {
        asked.push(address);
        if (address.includes("O1:")) return ["P3"];
        if (address.includes("U1")) return Array.from({ length: 9 }, (_, i) => `U${i + 1}`);
        return [];
      },
      writeFormulas: async (address: string, formulas: string[][]) => {
        written.push([address, formulas]);
      },
    } as unknown as SheetHost;
    const filled = await findFilledCells(host, placements);
    expect(asked).toEqual(placements.map((p) => p.area));
    expect(filled.map((f) => [f.id, f.area, f.cells.length, f.size])).toEqual([
      ["COEFS", placements[0].area, 1, placements[0].rows * 2],
      ["PREDICT", "'Roast log'!U1:U9", 9, 9],
    ]);
    expect(filledLines(filled)).toEqual([
      `SHRINK.COEFS over ${placements[0].area}: P3 is in use`,
      "SHRINK.PREDICT over 'Roast log'!U1:U9: all 9 cells are in use",
    ]);
    expect(written).toEqual([]);
    await writePlacements(host, placements);
    expect(written.map(([at, f]) => [at, f[0][0].slice(0, 15)])).toEqual([
      ["'Roast log'!O1", "=SHRINK.COEFS('"],
      ["'Roast log'!R1", "=SHRINK.CHOICE("],
      ["'Roast log'!U1", "=SHRINK.PREDICT"],
    ]);
  });

  test("long lists of cells are cut", () => {
    const cells = Array.from({ length: 15 }, (_, i) => `A${i + 1}`);
    expect(listCells(cells.slice(0, 3))).toBe("A1, A2, A3");
    expect(listCells(cells)).toBe("A1, A2, A3, A4, A5, A6, A7, A8, A9, A10, A11, A12 and 3 more");
  });
});

describe("formulas for a yes/no target (the quality-check sheet)", () => {
  const last = qualityColumns.length - 1;
  const target = [[qualityColumns[last]], ...qualityRows.map((row) => [row[last]])];
  const predictors = [qualityColumns.slice(1, last), ...qualityRows.map((row) => row.slice(1, last))];
  const newRows = [qualityColumns.slice(1, last), ...qualityNewRows.map((row) => row.slice(1, last))];

  function qualityInputs(): PaneInputs {
    const inputs = emptyInputs();
    inputs.ranges = {
      target: "'Quality check'!N1:N301",
      predictors: "'Quality check'!B1:M301",
      newRows: "'Quality check'!B304:M312",
      destination: "'Quality check'!P1",
    };
    inputs.mixes = "0.5, 1";
    inputs.settings = { folds: "5", outcome: "two-class", event: "fail", error: "auc", cutoff: "0.3", predict: "class" };
    return inputs;
  }

  test("the formulas carry outcome, event, error, cutoff and predict, and make the pane's request (one cache entry)", () => {
    const inputs = qualityInputs();
    expect(formulaText("PREDICT", inputs)).toBe(
      "=SHRINK.PREDICT('Quality check'!N1:N301, 'Quality check'!B1:M301, 'Quality check'!B304:M312, \"0.5, 1\", \"folds=5; error=auc; outcome=two-class; event=fail; cutoff=0.3; predict=class\")",
    );
    const pane = api.prepare(target, predictors, mixesText(inputs), settingsText(inputs));
    const cell = api.prepare(target, predictors, [[mixesText(inputs)]], [[settingsText(inputs)]]);
    expect(requestHash(pane.request)).toBe(requestHash(cell.request));
    expect(pane.request.options).toMatchObject({ outcome: "two-class", measure: "auc", cutoff: 0.3 });
  });

  test("spill sizes match what the functions return for a yes/no fit", async () => {
    const inputs = qualityInputs();
    inputs.settings = { folds: "5", "grid size": "30" };
    const runner = new InProcessRunner();
    const settings = settingsText(inputs);
    const prepared = api.prepare(target, predictors, mixesText(inputs), settings);
    const result = await runner.fit(prepared.request);
    expect(result.outcome).toBe("two-class");
    const outcome: FitOutcome = { result, prepared, inputs, values: { target, predictors, newRows }, elapsedMs: 0 };
    const coefs = await api.coefs(runner, target, predictors, mixesText(inputs), settings);
    const choice = await api.choice(runner, target, predictors, mixesText(inputs), settings);
    const predict = await api.predict(runner, target, predictors, newRows, mixesText(inputs), settings);
    expect(spillShapes(outcome, ["COEFS", "CHOICE", "PREDICT"])).toEqual([
      { id: "COEFS", rows: coefs.length, columns: coefs[0].length },
      { id: "CHOICE", rows: choice.length, columns: choice[0].length },
      { id: "PREDICT", rows: predict.length, columns: 1 },
    ]);
  });
});
