/**
 * The pane's logic without a browser: the fit state machine, the settings checked as the cells
 * check them (messages word for word from functions/settings.ts), the settings and mixes text
 * the formulas carry, and restoring saved inputs.
 */
import { checkMeasure, MEASURES, type FitResult } from "../../../engine/fit";
import { prepare } from "../../../functions/api";
import { parseSettings, SETTING_NAMES } from "../../../functions/settings";
import { qualityColumns, qualityRows, qualityTruth } from "../../../addin/demo/qualityData";
import { roasteryColumns, roasteryRows } from "../../../addin/demo/roasteryData";
import { errorChoices, FIELDS, WEIGHTS_FIELD } from "../../../taskpane/pane/settingsForm";
import {
  checkSettings,
  columnNames,
  detectOutcome,
  emptyInputs,
  FORM_SETTING_NAMES,
  FitOutcome,
  FitState,
  fitStatusText,
  formatNumber,
  IDLE,
  measureChoices,
  measureSummary,
  mixesProblem,
  mixesText,
  progressText,
  reduceFit,
  restoreInputs,
  settingPairs,
  settingProblem,
  settingsText,
  shownOutcome,
  INTERVAL_TWO_CLASS,
} from "../../../taskpane/pane/paneState";

function fakeOutcome(label = "a"): FitOutcome {
  const result = {
    kind: "shrinkwise-fit",
    terms: ["x1", "x2", "x3"],
    intercept: 1,
    coefficients: [0.5, 0, -2],
    standardizedCoefficients: [0.25, 0, -1],
    mix: 1,
    strength: 0.0123456789,
    rowsUsed: 40,
  } as unknown as FitResult;
  return {
    result,
    prepared: { request: { label } } as never,
    inputs: emptyInputs(),
    values: { target: [], predictors: [], newRows: null },
    elapsedMs: 1234,
  };
}

describe("fit state machine", () => {
  test("idle → fitting → done, with progress in between", () => {
    let s: FitState = IDLE;
    s = reduceFit(s, { type: "start", run: 1 });
    expect(s).toMatchObject({ phase: "fitting", run: 1, done: 0, total: 0, previous: null });
    s = reduceFit(s, { type: "progress", run: 1, done: 3, total: 12 });
    expect(s).toMatchObject({ phase: "fitting", done: 3, total: 12 });
    const outcome = fakeOutcome();
    s = reduceFit(s, { type: "succeeded", run: 1, outcome });
    expect(s).toEqual({ phase: "done", run: 1, outcome });
    expect(shownOutcome(s)).toBe(outcome);
  });

  test("a changed input marks a done fit stale, and keeps its results shown", () => {
    const outcome = fakeOutcome();
    const done: FitState = { phase: "done", run: 1, outcome };
    const stale = reduceFit(done, { type: "inputsChanged" });
    expect(stale).toEqual({ phase: "stale", run: 1, outcome });
    expect(shownOutcome(stale)).toBe(outcome);
    // Idle, failed and cancelled states have nothing to mark.
    expect(reduceFit(IDLE, { type: "inputsChanged" })).toBe(IDLE);
  });

  test("a change during the fit makes its result stale on arrival", () => {
    let s = reduceFit(IDLE, { type: "start", run: 1 });
    s = reduceFit(s, { type: "inputsChanged" });
    s = reduceFit(s, { type: "succeeded", run: 1, outcome: fakeOutcome() });
    expect(s.phase).toBe("stale");
  });

  test("cancel and failure keep the previous results, and a new start carries them", () => {
    const first = fakeOutcome("first");
    let s: FitState = { phase: "done", run: 1, outcome: first };
    s = reduceFit(s, { type: "start", run: 2 });
    expect(shownOutcome(s)).toBe(first);
    const cancelled = reduceFit(s, { type: "cancelled", run: 2 });
    expect(cancelled).toEqual({ phase: "cancelled", run: 2, previous: first });
    const failed = reduceFit(s, { type: "failed", run: 2, message: "predictors has 3 rows but target has 4" });
    expect(failed).toEqual({ phase: "failed", run: 2, message: "predictors has 3 rows but target has 4", previous: first });
    expect(fitStatusText(failed)).toBe("The fit could not run: predictors has 3 rows but target has 4");
  });

  test("events of a superseded run change nothing", () => {
    let s = reduceFit(IDLE, { type: "start", run: 1 });
    s = reduceFit(s, { type: "start", run: 2 });
    const before = s;
    expect(reduceFit(s, { type: "progress", run: 1, done: 5, total: 10 })).toBe(before);
    expect(reduceFit(s, { type: "succeeded", run: 1, outcome: fakeOutcome() })).toBe(before);
    expect(reduceFit(s, { type: "failed", run: 1, message: "x" })).toBe(before);
    // After a cancel, the run's late result is ignored too.
    const cancelled = reduceFit(s, { type: "cancelled", run: 2 });
    expect(reduceFit(cancelled, { type: "succeeded", run: 2, outcome: fakeOutcome() })).toBe(cancelled);
    expect(reduceFit(cancelled, { type: "progress", run: 2, done: 1, total: 2 })).toBe(cancelled);
  });

  test("status and progress in words", () => {
    expect(fitStatusText(IDLE)).toBe("Choose the target and predictors, then press Fit.");
    expect(fitStatusText(IDLE, true)).toBe("Ready: press Fit.");
    expect(progressText(0, 0)).toBe("Starting the fit…");
    expect(progressText(12, 55)).toBe("12 of 55 fits done");
    expect(progressText(60, 55)).toBe("55 of 55 fits done");
    const done: FitState = { phase: "done", run: 1, outcome: fakeOutcome() };
    expect(fitStatusText(done)).toBe("Fitted lasso (mix 1) at strength 0.0123457: 2 of 3 terms kept, 40 rows used (1.2 s).");
    expect(fitStatusText(reduceFit(done, { type: "inputsChanged" }))).toMatch(/^Inputs changed/);
    expect(fitStatusText({ phase: "cancelled", run: 1, previous: null })).toMatch(/^Fit cancelled/);
    const fitting = reduceFit(IDLE, { type: "start", run: 1 });
    expect(fitStatusText(fitting)).toBe("Fitting…");
    const at = (done: number): string => fitStatusText(reduceFit(fitting, { type: "progress", run: 1, done, total: 12 }));
    expect([at(2), at(3), at(6), at(9), at(12)]).toEqual([
      "Fitting…",
      "Fitting: a quarter done.",
      "Fitting: half done.",
      "Fitting: three quarters done.",
      "Fitting: finishing.",
    ]);
  });

  test("numbers as the pane shows them", () => {
    expect(formatNumber(5)).toBe("5");
    expect(formatNumber(0.0123456789)).toBe("0.0123457");
    expect(formatNumber(0.00001234)).toBe("1.234e-5");
    expect(formatNumber(-2.5)).toBe("-2.5");
  });
});

describe("settings checked as the cells check them", () => {
  /** The message the cell function would give for `text`. */
  function cellMessage(text: string): string {
    try {
      parseSettings(text);
    } catch (error) {
      return (error as Error).message;
    }
    throw new Error(`'${text}' was accepted`);
  }

  test("a bad value gets the cell functions' own message", () => {
    expect(settingProblem("folds", "1")).toBe(cellMessage("folds=1"));
    expect(settingProblem("folds", "1")).toMatch(/folds/);
    expect(settingProblem("low end", "2")).toBe(cellMessage("low end=2"));
    expect(settingProblem("grid density", "0")).toBe(cellMessage("grid density=0"));
    expect(settingProblem("stop early", "maybe")).toBe(cellMessage("stop early=maybe"));
    expect(settingProblem("strength", "-1")).toBe(cellMessage("strength=-1"));
    expect(settingProblem("lower", "3")).toBe(cellMessage("lower=3"));
    expect(settingProblem("rule", "fastest")).toBe(cellMessage("rule=fastest"));
  });

  test("the form has a field for every setting it offers (grid density beside grid size)", () => {
    const names = [...FIELDS.map((field) => field.name), WEIGHTS_FIELD.name];
    for (const name of FORM_SETTING_NAMES) expect([name, names.includes(name)]).toEqual([name, true]);
    const at = (name: string): number => FIELDS.findIndex((field) => field.name === name);
    expect(at("grid size")).toBe(at("grid density") + 1);
    expect(FIELDS[at("grid density")].label).toBe("Grid density (strengths per tenfold drop)");
  });

  test("good and empty values pass", () => {
    expect(settingProblem("folds", "5")).toBeNull();
    expect(settingProblem("folds", "  ")).toBeNull();
    expect(settingProblem("penalty", "moisture:2, origin:0.5")).toBeNull();
    expect(settingProblem("rule", "onese")).toBeNull();
  });

  test("separators that would break the settings text are refused in our words", () => {
    expect(settingProblem("penalty", "a:1; b:2")).toMatch(/can't contain ';'/);
    expect(settingProblem("no penalty", "a=b")).toMatch(/can't contain '='/);
  });

  test("mixes", () => {
    expect(mixesProblem("")).toBeNull();
    expect(mixesProblem("0, 0.5, 1")).toBeNull();
    expect(mixesProblem("ridge, lasso")).toBeNull();
    expect(mixesProblem("2")).toBe("mix 2 is outside 0 to 1: use 0 for ridge, 1 for lasso, or a value between");
    expect(mixesProblem("0, 0")).toMatch(/listed twice/);
    expect(mixesProblem("a")).toMatch(/not a number/);
  });

  test("checkSettings collects field problems and clashes between settings", () => {
    const inputs = emptyInputs();
    expect(checkSettings(inputs)).toEqual({ fields: {}, mixes: null, overall: null, ok: true });
    inputs.settings.folds = "x";
    inputs.mixes = "3";
    const bad = checkSettings(inputs);
    expect(bad.ok).toBe(false);
    expect(Object.keys(bad.fields)).toEqual(["folds"]);
    expect(bad.mixes).toMatch(/outside 0 to 1/);
    // A clash the parser finds only with both settings together.
    const clash = emptyInputs();
    clash.settings["fold column"] = "group";
    clash.settings["time order"] = "yes";
    expect(checkSettings(clash)).toMatchObject({ fields: {}, ok: false, overall: cellMessage("fold column=group; time order=yes") });
    // The grid's size and density, each fine alone, clash together.
    const grid = emptyInputs();
    grid.settings["grid density"] = "10";
    grid.settings["grid size"] = "40";
    expect(checkSettings(grid)).toMatchObject({ fields: {}, ok: false, overall: cellMessage("grid density=10; grid size=40") });
    // A fixed strength needs a single mix.
    const strength = emptyInputs();
    strength.settings.strength = "0.1";
    expect(checkSettings(strength).overall).toMatch(/single mix/);
    strength.mixes = "1";
    expect(checkSettings(strength).ok).toBe(true);
  });
});

describe("settings text, mixes text and restore", () => {
  test("only non-default settings, in the settings table's order, header from the toggle", () => {
    const inputs = emptyInputs();
    expect(settingsText(inputs)).toBe("");
    inputs.settings = { rule: "one-se", folds: " 5 ", seed: "", "weights column": "batch_kg" };
    inputs.header = "yes";
    expect(settingsText(inputs)).toBe("folds=5; rule=one-se; weights column=batch_kg; header=yes");
    // The text reads back to the same settings.
    const parsed = parseSettings(settingsText(inputs));
    expect(parsed).toMatchObject({ folds: 5, rule: "one-se", weightsColumn: "batch_kg", header: "yes" });
  });

  test("mixes text is tidied", () => {
    const inputs = emptyInputs();
    inputs.mixes = " 0,0.5  1 ";
    expect(mixesText(inputs)).toBe("0, 0.5, 1");
  });

  test("setting pairs for the report: numbers as numbers", () => {
    const inputs = emptyInputs();
    inputs.mixes = "1";
    inputs.settings = { folds: "5", rule: "one-se" };
    expect(settingPairs(inputs)).toEqual([
      { name: "mixes", value: 1 },
      { name: "folds", value: 5 },
      { name: "rule", value: "one-se" },
    ]);
  });

  test("restoreInputs keeps what it knows and drops the rest", () => {
    expect(restoreInputs(null)).toEqual(emptyInputs());
    expect(restoreInputs("nonsense")).toEqual(emptyInputs());
    const restored = restoreInputs({
      ranges: { target: "Data!M1:M121", predictors: "Data!B1:L121", newRows: 5, destination: "O1" },
      header: "sometimes",
      mixes: "0, 1",
      settings: { folds: "5", "made up": "1", header: "yes", seed: 7, rule: "" },
    });
    expect(restored).toEqual({
      ranges: { target: "Data!M1:M121", predictors: "Data!B1:L121", newRows: "", destination: "O1" },
      header: "auto",
      mixes: "0, 1",
      settings: { folds: "5" },
    });
  });

  test("restoreInputs reads the older rule tokens a previous pane saved as today's", () => {
    expect(restoreInputs({ settings: { rule: "onese" } }).settings).toEqual({ rule: "one-se" });
    expect(restoreInputs({ settings: { rule: "1se" } }).settings).toEqual({ rule: "one-se" });
    expect(restoreInputs({ settings: { rule: "one-se" } }).settings).toEqual({ rule: "one-se" });
    // The lowest error is the form's default (empty), whatever it was called.
    expect(restoreInputs({ settings: { rule: "min" } }).settings).toEqual({});
    expect(restoreInputs({ settings: { rule: "lowest" } }).settings).toEqual({});
  });

  test("column names from the header row, or x1, x2, …", () => {
    expect(columnNames(["temp", "moisture", "origin"], "auto")).toEqual(["temp", "moisture", "origin"]);
    expect(columnNames([1.5, 2, "East"], "auto")).toEqual(["x1", "x2", "x3"]);
    expect(columnNames(["temp", "moisture"], "no")).toEqual(["x1", "x2"]);
    expect(columnNames(undefined, "auto")).toEqual([]);
  });

  test("column names as the cells name them: NFC texts, and a header of numbers (years) when header is yes", () => {
    expect(columnNames(["Re\u0301gion", "temp"], "auto")).toEqual(["R\u00e9gion", "temp"]);
    expect(columnNames([2019, 2020, 2021], "yes")).toEqual(["2019", "2020", "2021"]);
    expect(columnNames([2019, 2020, 2021], "auto")).toEqual(["x1", "x2", "x3"]);
  });
});


describe("yes/no (two-class) targets: how the target reads, the settings that follow it", () => {
  /** The quality-check demo sheet as the pane reads it: N1:N301 and B1:M301 (addin/demo/qualityData.ts). */
  function qualityGrids(): { target: unknown[][]; predictors: unknown[][] } {
    const last = qualityColumns.length - 1;
    return {
      target: [[qualityColumns[last]], ...qualityRows.map((row) => [row[last]])],
      predictors: [qualityColumns.slice(1, last), ...qualityRows.map((row) => row.slice(1, last))],
    };
  }
  function roastGrids(): { target: unknown[][]; predictors: unknown[][] } {
    const last = roasteryColumns.length - 1;
    return {
      target: [[roasteryColumns[last]], ...roasteryRows.map((row) => [row[last]])],
      predictors: [roasteryColumns.slice(1, last), ...roasteryRows.map((row) => row.slice(1, last))],
    };
  }
  /** The message the cells would give for these ranges and settings (functions/api.ts prepare). */
  function cellsMessage(target: unknown[][], predictors: unknown[][], settings: string): string {
    try {
      prepare(target, predictors, null, settings);
    } catch (error) {
      return (error as Error).message;
    }
    throw new Error(`'${settings}' was accepted`);
  }

  test("the quality data read as yes/no, event 'fail', 73 of 296 rows (demo data: qualityTruth), the same reading as the cells'", () => {
    const { target, predictors } = qualityGrids();
    const detection = detectOutcome(target, predictors, emptyInputs());
    expect(detection).toMatchObject({ ok: true, kind: "two-class", rows: qualityTruth.completeRows, defaultEvent: "fail", labels: ["fail", "pass"] });
    if (!detection.ok) throw new Error("expected a reading");
    expect(detection.classes).toEqual({ event: "fail", other: "pass", eventCount: qualityTruth.fails, otherCount: qualityTruth.completeRows - qualityTruth.fails });
    expect(detection.line).toBe(`yes/no outcome, event 'fail' (${qualityTruth.fails} of ${qualityTruth.completeRows} rows; the other class is 'pass')`);
    // The cells' own dataset over the same ranges.
    const dataset = prepare(target, predictors, null, null).dataset;
    expect(dataset.outcome).toBe("two-class");
    expect(dataset.classes).toMatchObject(detection.classes as object);
  });

  test("a named event (any case) swaps the classes; an unknown one gets the cells' message", () => {
    const { target, predictors } = qualityGrids();
    const inputs = emptyInputs();
    inputs.settings.event = "PASS";
    const detection = detectOutcome(target, predictors, inputs);
    expect(detection.ok && detection.classes).toEqual({ event: "pass", other: "fail", eventCount: qualityTruth.completeRows - qualityTruth.fails, otherCount: qualityTruth.fails });
    // The default event and the labels stay as read without a name: the form's choice lists them.
    expect(detection.ok && detection.defaultEvent).toBe("fail");
    inputs.settings.event = "late";
    const unknown = detectOutcome(target, predictors, inputs);
    expect(unknown.ok).toBe(false);
    expect(!unknown.ok && unknown.message).toBe(cellsMessage(target, predictors, "event=late"));
    expect(unknown.line).toBe(`The target can't be read yet: ${cellsMessage(target, predictors, "event=late")}`);
  });

  test("outcome=number on two labels: the cells' refusal; the roast scores read as a number outcome", () => {
    const quality = qualityGrids();
    const inputs = emptyInputs();
    inputs.settings.outcome = "number";
    const refused = detectOutcome(quality.target, quality.predictors, inputs);
    expect(refused.ok).toBe(false);
    expect(!refused.ok && refused.message).toBe(cellsMessage(quality.target, quality.predictors, "outcome=number"));
    const roast = roastGrids();
    const number = detectOutcome(roast.target, roast.predictors, emptyInputs());
    const rows = prepare(roast.target, roast.predictors, null, null).dataset.rowsUsed;
    expect(number).toEqual({ ok: true, kind: "number", rows, classes: null, defaultEvent: null, labels: [], line: `number outcome (${rows} rows)` });
  });

  test("settings of the other kind of target are refused in the cells' words once the kind is known", () => {
    const inputs = emptyInputs();
    inputs.settings.error = "mae";
    // Unknown kind: only the field's own parse (mae is a valid word).
    expect(checkSettings(inputs).ok).toBe(true);
    let message = "";
    try {
      checkMeasure("mae", "two-class");
    } catch (error) {
      message = (error as Error).message;
    }
    expect(checkSettings(inputs, "two-class")).toMatchObject({ ok: false, fields: { error: message } });
    expect(checkSettings(inputs, "number").ok).toBe(true);
    const yesNo = emptyInputs();
    yesNo.settings = { event: "fail", cutoff: "0.3", error: "auc" };
    expect(checkSettings(yesNo, "two-class").ok).toBe(true);
    const onNumbers = checkSettings(yesNo, "number");
    expect(Object.keys(onNumbers.fields).sort()).toEqual(["cutoff", "error", "event"]);
    expect(onNumbers.fields.event).toMatch(/^'event' applies to a yes\/no target/);
  });

  test("an interval level on a yes/no target is refused with a clear message (intervals are for number targets)", () => {
    const inputs = emptyInputs();
    inputs.settings.interval = "90%";
    expect(checkSettings(inputs, "number").ok).toBe(true);
    expect(checkSettings(inputs, "two-class")).toMatchObject({ ok: false, fields: { interval: INTERVAL_TWO_CLASS } });
    expect(INTERVAL_TWO_CLASS).toContain("number targets");
    inputs.settings.interval = "1";
    expect(checkSettings(inputs, "number").fields.interval).toBe(settingProblem("interval", "1"));
  });

  test("draws, q and π are checked as values with stability on; without it, the settings together say what to add", () => {
    const cellMessage = (text: string): string => {
      try {
        parseSettings(text);
      } catch (error) {
        return (error as Error).message;
      }
      throw new Error(`'${text}' was accepted`);
    };
    const inputs = emptyInputs();
    inputs.settings.draws = "3";
    const alone = checkSettings(inputs);
    expect(alone.fields.draws).toBeUndefined();
    if (SETTING_NAMES.includes("stability")) {
      expect(alone.overall).toBe(cellMessage("draws=3"));
      inputs.settings.stability = "yes";
      expect(checkSettings(inputs).ok).toBe(true);
      inputs.settings.draws = "0";
      expect(checkSettings(inputs).fields.draws).toBe(cellMessage("stability=yes; draws=0"));
    }
  });

  test("the how-sure fields: interval, repeats, honest error and stability (checkboxes), draws, q and π shown with stability", () => {
    const spec = (name: string) => FIELDS.find((field) => field.name === name);
    for (const name of ["interval", "repeats", "honest error", "stability", "draws", "q", "stability threshold"]) expect([name, spec(name)?.sure]).toEqual([name, true]);
    expect(spec("honest error")?.kind).toBe("check");
    expect(spec("stability")?.kind).toBe("check");
    expect(FIELDS.filter((field) => field.stabilityOnly).map((field) => field.name)).toEqual(["draws", "q", "stability threshold"]);
  });

  test("error choices follow the kind (engine/fit.ts MEASURES), the default first and shown empty", () => {
    expect(measureChoices("number")).toEqual(MEASURES.number);
    expect(measureChoices("two-class")).toEqual(MEASURES["two-class"]);
    expect(measureChoices(null)).toEqual(MEASURES.number);
    expect(errorChoices("two-class").map((c) => c.value)).toEqual(["", "misclassified", "auc"]);
    expect(errorChoices("two-class")[0].label).toMatch(/^Deviance.*\(default\)$/);
    expect(errorChoices("two-class")[2].label).toContain("higher is better");
    expect(errorChoices(null).map((c) => c.value)).toEqual(["", "mae"]);
  });

  test("the new settings go into the formulas' settings text in the cells' order, read back by the cells, and are saved and restored", () => {
    const inputs = emptyInputs();
    inputs.settings = { cutoff: "0.3", event: "fail", outcome: "two-class", error: "auc", predict: "class" };
    const text = settingsText(inputs);
    expect(text).toBe("error=auc; outcome=two-class; event=fail; cutoff=0.3; predict=class");
    expect(parseSettings(text)).toMatchObject({ measure: "auc", outcome: "two-class", event: "fail", cutoff: 0.3, predictOutput: "class" });
    expect(restoreInputs(JSON.parse(JSON.stringify(inputs))).settings).toEqual(inputs.settings);
    // A state saved before these settings existed loads as it did.
    const old = { ranges: { target: "A1:A9", predictors: "B1:C9", newRows: "", destination: "" }, header: "auto", mixes: "", settings: { folds: "5", error: "mae" } };
    expect(restoreInputs(old)).toEqual({ ...old, settings: { folds: "5", error: "mae" } });
  });

  test("the chosen point's measure in the summary: AUC says higher is better", () => {
    expect(measureSummary("auc", "0.843 ± 0.021")).toBe("CV AUC 0.843 ± 0.021 (higher is better)");
    expect(measureSummary("deviance", "0.95 ± 0.04")).toBe("CV deviance 0.95 ± 0.04");
    expect(measureSummary("mse", "1.2 ± 0.1")).toBe("CV MSE 1.2 ± 0.1");
  });
});
