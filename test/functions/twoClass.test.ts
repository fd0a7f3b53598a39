/**
 * Yes/no (two-class) targets in the SHRINK cell functions: the outcome, event, cutoff and
 * predict settings; how a target column is read (TRUE/FALSE cells, 0/1, two labels, numbers
 * stored as text, blanks); the requests sent to the engine and the cache key; SHRINK.APPLY on a
 * log-odds table; SHRINK.SCORE's yes/no measures against a count by hand; and every refusal.
 *
 * The fitted spills (COEFS, CHOICE, PREDICT, PATH, CVCURVE, BASELINE) over the engine's logistic
 * solver are in twoClassFits.test.ts.
 */
import { CancelledError } from "../../engine/errors";
import type { FitResult } from "../../engine/fit";
import { apply, baseline, choice, coefs, cvcurve, path, predict, prepare, score } from "../../functions/api";
import { FitCache, requestHash } from "../../functions/cache";
import { buildDataset, readCoefficientHeader } from "../../functions/dataset";
import { SettingError } from "../../functions/errors";
import type { CancelToken, FitRequest, FitRunner } from "../../functions/runner";
import { parseSettings } from "../../functions/settings";
import { expectRelative } from "../helpers/numeric";
import { CountingRunner, labelled, QUICK, rejection, sheet, yesNoSheet } from "./support";

function settingError(raw: unknown, scope?: Parameters<typeof parseSettings>[1]): string {
  try {
    parseSettings(raw, scope);
  } catch (e) {
    expect(e).toBeInstanceOf(SettingError);
    return (e as Error).message;
  }
  throw new Error("expected a SettingError");
}

/** The message a synchronous call throws with. */
function thrown(work: () => unknown): string {
  try {
    work();
  } catch (e) {
    return (e as Error).message;
  }
  throw new Error("expected the call to throw");
}

function dataset(target: unknown[][], predictors: unknown[][], settings = "") {
  return buildDataset(target, predictors, parseSettings(settings || null));
}

describe("settings", () => {
  test("outcome: auto, number, two-class and their spellings", () => {
    expect(parseSettings(null).outcome).toBeNull();
    for (const w of ["auto", "Auto"]) expect(parseSettings(`outcome=${w}`).outcome).toBe("auto");
    for (const w of ["number", "numeric", "Numbers"]) expect(parseSettings(`outcome=${w}`).outcome).toBe("number");
    for (const w of ["two-class", "two class", "yes/no", "binary"]) expect(parseSettings(`outcome=${w}`).outcome).toBe("two-class");
    expect(parseSettings([["target kind", "yes/no"]]).outcome).toBe("two-class");
    expect(settingError("outcome=count")).toBe("'outcome' must be auto, number or two-class (also yes/no); got 'count'");
    expect(settingError([["outcome", 1]])).toBe("'outcome' must be auto, number or two-class (also yes/no); got 1");
  });

  test("event: a label as typed; a number or TRUE in a cell reads as its label", () => {
    expect(parseSettings("event= fail ").event).toBe("fail");
    expect(parseSettings([["event", 1]]).event).toBe("1");
    expect(parseSettings([["event", true]]).event).toBe("TRUE");
    expect(parseSettings([["positive class", "Yes"]]).event).toBe("Yes");
  });

  test("cutoff: strictly between 0 and 1, as a number, text or a percentage", () => {
    expect(parseSettings("cutoff=0.3").cutoff).toBe(0.3);
    expect(parseSettings("cutoff=30%").cutoff).toBe(0.3);
    expect(parseSettings("threshold = 12.5 %").cutoff).toBe(0.125);
    expect(parseSettings([["cutoff", 0.25]]).cutoff).toBe(0.25);
    const what = "'cutoff' must be a probability between 0 and 1 (not 0 or 1), like 0.5 or 50%";
    expect(settingError("cutoff=0")).toBe(`${what}; got '0'`);
    expect(settingError("cutoff=1")).toBe(`${what}; got '1'`);
    expect(settingError("cutoff=150%")).toBe(`${what}; got '150%'`);
    expect(settingError("cutoff=half")).toBe(`${what}; got 'half'`);
    expect(settingError([["cutoff", -0.2]])).toBe(`${what}; got -0.2`);
    expect(settingError([["cutoff", true]])).toBe(`${what}; got TRUE`);
  });

  test("predict: probability or class", () => {
    for (const w of ["probability", "Probabilities"]) expect(parseSettings(`predict=${w}`).predictOutput).toBe("probability");
    for (const w of ["class", "label"]) expect(parseSettings(`predict=${w}`).predictOutput).toBe("class");
    expect(settingError("predict=odds")).toBe("'predict' must be probability or class; got 'odds'");
  });

  test("error: the yes/no measures and their spellings", () => {
    for (const w of ["deviance", "binomial deviance"]) expect(parseSettings(`error=${w}`).measure).toBe("deviance");
    for (const w of ["misclassified", "misclassification", "error rate", "misclassified share"]) expect(parseSettings(`error=${w}`).measure).toBe("misclassified");
    for (const w of ["auc", "AUC", "area under the curve"]) expect(parseSettings(`error=${w}`).measure).toBe("auc");
  });

  test("SCORE and BASELINE take only their own settings, and say which", () => {
    expect(settingError("folds=5", { fn: "SHRINK.SCORE", names: ["outcome", "event", "cutoff"] })).toBe(
      "'folds' doesn't apply to SHRINK.SCORE: its settings are outcome, event, cutoff",
    );
  });
});

describe("reading the target", () => {
  const { predictors } = sheet(12, true);
  const column = (values: unknown[]): unknown[][] => [["y"], ...values.map((v) => [v])];

  test("TRUE/FALSE cells: a yes/no target, TRUE is the event (engine/outcome.ts default)", () => {
    const values = [true, false, false, true, false, false, true, false, false, false, true, false];
    const d = dataset(column(values), predictors);
    expect(d.outcome).toBe("two-class");
    expect(d.target).toEqual(values.map((v) => (v ? 1 : 0)));
    expect(d.classes).toMatchObject({ event: "TRUE", other: "FALSE", eventCount: 4, otherCount: 8, eventValue: true, otherValue: false });
  });

  test("0/1 numbers: 1 is the event even when it is the more frequent class", () => {
    const values = [1, 1, 0, 1, 1, 1, 0, 1, 1, 0, 1, 1];
    const d = dataset(column(values), predictors);
    expect(d.outcome).toBe("two-class");
    expect(d.target).toEqual(values);
    expect(d.classes).toMatchObject({ event: "1", other: "0", eventCount: 9, eventValue: 1, otherValue: 0 });
  });

  test("two labels: the rarer is the event; labels match ignoring case and spaces", () => {
    const values = ["pass", "fail", "pass", "Pass", "pass ", "fail", "pass", "pass", "FAIL", "pass", "pass", "pass"];
    const d = dataset(column(values), predictors);
    expect(d.outcome).toBe("two-class");
    expect(d.classes).toMatchObject({ event: "fail", other: "pass", eventCount: 3, otherCount: 9, eventValue: "fail" });
    expect(d.target).toEqual(values.map((v) => (v.toLowerCase() === "fail" ? 1 : 0)));
  });

  test("a tie picks the first label alphabetically and the notes say so; event= picks another", () => {
    const values = ["yes", "no", "yes", "no", "yes", "no", "yes", "no", "yes", "no", "yes", "no"];
    const tied = dataset(column(values), predictors);
    expect(tied.classes?.event).toBe("no");
    expect(tied.notes).toContain("both classes have 6 rows, so the event is 'no' (first in alphabetical order); name another with event=…");
    const named = dataset(column(values), predictors, "event=YES");
    expect(named.classes?.event).toBe("yes");
    expect(named.target).toEqual(values.map((v) => (v === "yes" ? 1 : 0)));
    expect(named.notes.some((n) => n.includes("alphabetical"))).toBe(false);
  });

  test("numbers stored as text: '0'/'1' read as numbers (with the usual note), so a yes/no target", () => {
    const values = ["1", "0", "0", "1", "0", "0", "0", "1", "0", "0", "0", "0"];
    const d = dataset(column(values), predictors);
    expect(d.outcome).toBe("two-class");
    expect(d.classes?.event).toBe("1");
    expect(d.notes).toContain("target 'y' read as numbers: its cells hold numbers stored as text (first: row 2, '1')");
  });

  test("blank and error cells skip their rows and are counted; the event counts cover the rows used", () => {
    const values = ["fail", null, "pass", "pass", "#N/A", "pass", "fail", "pass", "", "pass", "pass", "pass"];
    const d = dataset(column(values), predictors);
    expect(d.rowsSkipped).toBe(3);
    expect(d.rowsUsed).toBe(9);
    expect(d.classes).toMatchObject({ event: "fail", eventCount: 2, otherCount: 7 });
    expect(d.notes[0]).toBe("3 rows skipped for a blank or error cell (first: row 3: target is blank)");
  });

  test("outcome=number: 0/1 stays a number target; TRUE/FALSE among numbers are 1/0 as before", () => {
    const d = dataset(column([1, 0, 0, 1, 0, 0, 1, 0, 0, 0, 1, 0]), predictors, "outcome=number");
    expect(d.outcome).toBe("number");
    expect(d.classes).toBeNull();
    const mixed = dataset(column([3.5, true, 2, 4, false, 1, 2, 3, 5, 1, 2, 2]), predictors);
    expect(mixed.outcome).toBe("number");
    expect(mixed.target.slice(0, 5)).toEqual([3.5, 1, 2, 4, 0]);
  });

  test("outcome=two-class takes any two values; more than two is an error listing them", () => {
    const d = dataset(column([5, 7, 7, 5, 7, 7, 7, 5, 7, 7, 7, 7]), predictors, "outcome=two-class");
    expect(d.classes).toMatchObject({ event: "5", other: "7", eventCount: 3 });
    expect(thrown(() => dataset(column([5, 7, 8, 5, 7, 7, 7, 5, 7, 7, 7, 7]), predictors, "outcome=two-class"))).toBe(
      "'y' has 3 distinct values ('5', '7', '8'): a yes/no outcome needs exactly two; use outcome=number for a numeric target",
    );
  });

  test("a third class in the target (even in a skipped row) is an error that lists the labels", () => {
    const values = ["pass", "fail", "pass", "retest", "pass", "fail", "pass", "pass", "fail", "pass", "pass", "pass"];
    expect(thrown(() => dataset(column(values), predictors))).toBe(
      "'y' has 3 distinct values ('pass', 'fail', 'retest'): a yes/no outcome needs exactly two; use outcome=number for a numeric target",
    );
    const x = predictors.map((row, i) => (i === 4 ? [null, row[1], row[2]] : row));
    expect(thrown(() => dataset(column(values), x))).toContain("has 3 distinct values");
  });

  test("an event label not in the data", () => {
    const values = ["pass", "fail", "pass", "pass", "pass", "fail", "pass", "pass", "fail", "pass", "pass", "pass"];
    expect(thrown(() => dataset(column(values), predictors, "event=failed"))).toBe(
      "event 'failed' is not one of 'y''s two values ('pass', 'fail'): name one of them",
    );
  });

  test("two labels under outcome=number say to use two-class", () => {
    const values = ["pass", "fail", "pass", "pass", "pass", "fail", "pass", "pass", "fail", "pass", "pass", "pass"];
    expect(thrown(() => dataset(column(values), predictors, "outcome=number"))).toBe(
      "'y' holds two labels ('pass', 'fail'), not numbers: it is a yes/no outcome; use outcome=two-class (or auto)",
    );
  });

  test("a stray text among numbers keeps its message; a stray number among labels says the target reads as labels", () => {
    const numbers = [3, 4, 5, 6, "lots", 2, 3, 4, 5, 6, 7, 8];
    expect(thrown(() => dataset(column(numbers), predictors))).toBe("target row 6 has text 'lots': the target must be numbers, so fix the cell or clear it");
    const labels = ["pass", "fail", "pass", 0, "pass", "fail", "pass", "pass", "fail", "pass", "pass", "pass"];
    expect(thrown(() => dataset(column(labels), predictors))).toBe(
      "target row 5 has 0 among the labels 'pass', 'fail': a yes/no target holds two labels (or TRUE/FALSE, or 0/1), so fix the cell or clear it",
    );
  });

  test("one class in the rows used is an error", () => {
    const values = ["pass", "fail", "pass", "pass", "pass", "pass", "pass", "pass", "pass", "pass", "pass", "pass"];
    const x = predictors.map((row, i) => (i === 2 ? [row[0], null, row[2]] : row));
    expect(thrown(() => dataset(column(values), x))).toBe("'y' has only one class ('pass'): a yes/no outcome needs rows of both classes");
  });
});

describe("what the fitting functions send, and what they refuse before fitting", () => {
  const { target, predictors, events } = yesNoSheet();

  test("a yes/no request: outcome two-class, the target 1 for the event, the cutoff when given", () => {
    const { request, dataset: d } = prepare(target, predictors, null, `${QUICK}; cutoff=30%; error=auc`);
    expect(request.options.outcome).toBe("two-class");
    expect(request.options.cutoff).toBe(0.3);
    expect(request.options.measure).toBe("auc");
    expect(request.target).toEqual(target.slice(1).map((row) => (row[0] === "fail" ? 1 : 0)));
    expect(d.classes).toMatchObject({ event: "fail", eventCount: events, otherCount: 80 - events });
  });

  test("a number request is unchanged: no outcome or cutoff key", () => {
    const numeric = sheet();
    const { request } = prepare(numeric.target, numeric.predictors, null, QUICK);
    expect(Object.keys(request.options).sort()).toEqual(["folds", "names", "strengthCount"]);
  });

  test("the cache key changes with outcome, event, error and cutoff, and not with predict", () => {
    const key = (settings: string, t = target): number => requestHash(prepare(t, predictors, null, `${QUICK}; ${settings}`).request);
    const plain = key("");
    expect(key("outcome=two-class")).toBe(plain); // the same reading of the same data: one fit
    expect(key("predict=class")).toBe(plain); // PREDICT's output only: one fit serves COEFS and PREDICT
    const different = [key("event=pass"), key("error=misclassified"), key("cutoff=0.4"), key("error=auc")];
    for (const k of different) expect(k).not.toBe(plain);
    expect(new Set(different).size).toBe(different.length);
    // A 0/1 target read as numbers is another fit than the same 0/1 read as two classes.
    const numbers = yesNoSheet(80, "numbers");
    expect(key("outcome=number", numbers.target)).not.toBe(key("", numbers.target));
  });

  test("the shared cache runs once per distinct yes/no request (a runner that records requests)", async () => {
    const requests: FitRequest[] = [];
    const recorder: FitRunner = {
      fit(request: FitRequest, cancel?: CancelToken): Promise<FitResult> {
        requests.push(request);
        return new Promise((_, reject) => cancel?.onCancel(() => reject(new CancelledError())));
      },
    };
    const cache = new FitCache(recorder);
    const waits: Promise<unknown>[] = [];
    const tokens: (() => void)[] = [];
    for (const settings of ["", "predict=class", "event=pass", "event=fail"]) {
      let cancel: () => void = () => undefined;
      const token: CancelToken = {
        cancelled: false,
        onCancel(callback) {
          cancel = callback;
        },
      };
      tokens.push(() => cancel());
      waits.push(cache.fit(prepare(target, predictors, null, `${QUICK}; ${settings}`).request, token).catch(() => undefined));
    }
    // '' , predict=class and event=fail (the default event) are one request; event=pass another.
    expect(requests).toHaveLength(2);
    expect(cache.stats().joins).toBe(2);
    for (const cancel of tokens) cancel();
    await Promise.all(waits);
  });

  test("yes/no settings on a number target are refused, naming them", async () => {
    const numeric = sheet();
    const runner = new CountingRunner();
    expect(await rejection(coefs(runner, numeric.target, numeric.predictors, 1, `${QUICK}; event=fail`))).toEqual({
      code: "#VALUE!",
      message:
        "event=fail applies to a yes/no target, but the target 'Sales' is read as numbers (only TRUE/FALSE, 0/1 or two labels are read as yes/no, or any two values with outcome=two-class): remove it, or give a target with two classes",
    });
    expect((await rejection(predict(runner, numeric.target, numeric.predictors, numeric.predictors, 1, `${QUICK}; cutoff=0.3; predict=class`))).message).toBe(
      "cutoff=0.3 and predict=class apply to a yes/no target, but the target 'Sales' is read as numbers (only TRUE/FALSE, 0/1 or two labels are read as yes/no, or any two values with outcome=two-class): remove them, or give a target with two classes",
    );
    const zeroOne = yesNoSheet(80, "numbers");
    expect((await rejection(choice(runner, zeroOne.target, zeroOne.predictors, 1, `${QUICK}; outcome=number; predict=class`))).message).toBe(
      "predict=class applies to a yes/no target, but the target 'Outcome' is read as numbers (settings say outcome=number): remove it, or give a target with two classes",
    );
    expect(runner.calls).toBe(0);
  });

  test("a measure for the other kind of target: the engine's messages (checkMeasure)", async () => {
    const numeric = sheet();
    const runner = new CountingRunner();
    expect(await rejection(cvcurve(runner, numeric.target, numeric.predictors, 1, `${QUICK}; error=deviance`))).toEqual({
      code: "#VALUE!",
      message: "the error measure deviance is for yes/no (two-class) outcomes, and this target is a number: use mse or mae",
    });
    expect((await rejection(path(runner, target, predictors, 1, `${QUICK}; error=mse`))).message).toBe(
      "the error measure mse is for number outcomes, and this target is yes/no (two-class): use deviance, misclassified or auc",
    );
    expect(runner.calls).toBe(0);
  });

  test("BASELINE refuses settings it has no use for, and event= on a number target", async () => {
    const numeric = sheet();
    expect((await rejection(baseline(new CountingRunner(), numeric.target, numeric.predictors, "event=1"))).message).toBe(
      "event=1 applies to a yes/no target, but the target 'Sales' is read as numbers (only TRUE/FALSE, 0/1 or two labels are read as yes/no, or any two values with outcome=two-class): remove it, or give a target with two classes",
    );
    expect(await rejection(baseline(new CountingRunner(), target, predictors, "folds=5"))).toEqual({
      code: "#VALUE!",
      message: "'folds' doesn't apply to SHRINK.BASELINE: its settings are outcome, event, header, zero is missing",
    });
  });
});

describe("SHRINK.APPLY on a log-odds table", () => {
  const table = [
    ["term", "coefficient (log-odds of 'fail')", "odds ratio"],
    ["intercept", -1, ""],
    ["Size", 0.5, Math.exp(0.5)],
    ["Temp", -0.25, Math.exp(-0.25)],
  ];
  const newRows = [["Size", "Temp"], [2, 4], [0, 0], [10, -8], [null, null], [3, null]];
  /** 1 / (1 + e^−η), written out with Math.exp (a general-purpose reference for the engine's portable exp). */
  const logistic = (eta: number): number => 1 / (1 + Math.exp(-eta));

  test("a header saying log-odds gives probabilities of the event (common practice: p = 1 / (1 + e^−η))", async () => {
    const out = await apply(table, newRows);
    expect(out[0]).toEqual(["probability of 'fail'"]);
    const etas = [-1 + 0.5 * 2 - 0.25 * 4, -1, -1 + 5 + 2];
    etas.forEach((eta, k) => expectRelative(out[k + 1][0] as number, logistic(eta), 1e-15, `row ${k + 1}: logistic(${eta})`));
    expect(out[4][0]).toBe("");
    expect(out[5][0]).toMatchObject({ code: "#N/A", message: "no prediction for new_rows row 6: 'Temp' is blank" });
  });

  test("the odds-ratio column is not read; any log-odds wording works, the event in quotes optional", async () => {
    const withoutRatios = table.map((row) => row.slice(0, 2));
    const reference = await apply(table, newRows);
    const garbled = table.map((row, i) => (i === 0 ? row : [row[0], row[1], 999]));
    expect(await apply(garbled, newRows)).toEqual(reference);
    expect((await apply(withoutRatios, newRows)).slice(1)).toEqual(reference.slice(1));
    const plain = [["term", "log odds"], ...withoutRatios.slice(1)];
    const out = await apply(plain, newRows);
    expect(out[0]).toEqual(["probability of the event"]);
    expect(out.slice(1)).toEqual(reference.slice(1));
    expect(readCoefficientHeader("Coefficient (LOG-ODDS of “defect”)")).toEqual({ link: "logistic", event: "defect" });
    expect(readCoefficientHeader("logodds")).toEqual({ link: "logistic", event: null });
    expect(readCoefficientHeader("coefficient")).toEqual({ link: "identity", event: null });
  });

  test("a number table is unchanged: the linear score itself", async () => {
    const numeric = [["term", "coefficient"], ...table.slice(1).map((row) => row.slice(0, 2))];
    const out = await apply(numeric, newRows);
    expect(out[0]).toEqual(["prediction"]);
    expect(out[1][0]).toBe(-1 + 0.5 * 2 - 0.25 * 4);
  });

  test("a BASELINE table that reports separation is refused", async () => {
    const separated = [
      ["separation", "the classes are separated …", "", "", ""],
      ["term", "coefficient (log-odds of 'fail')", "standard error", "z", "p-value"],
      ["intercept", -40, "none (separation: see row 1)", "", ""],
      ["Size", 12, "none (separation: see row 1)", "", ""],
    ];
    expect((await rejection(apply(separated, [["Size"], [1]]))).message).toBe(
      "coefficient_table is a SHRINK.BASELINE table that reports separation: its coefficients are not estimates (they grow without limit as the fit goes on), so nothing can be predicted from them; use the table of SHRINK.COEFS, whose penalty keeps them finite",
    );
  });
});

describe("SHRINK.SCORE with yes/no actual values", () => {
  // Eight pairs, three events ('fail'). Probabilities of 'fail':
  //   events      0.9, 0.6, 0.3
  //   non-events  0.2, 0.6, 0.1, 0.4, 0.7
  const actual = [["actual"], ["fail"], ["pass"], ["fail"], ["pass"], ["pass"], ["fail"], ["pass"], ["pass"], [null], ["pass"]];
  const predicted = [["p"], [0.9], [0.2], [0.6], [0.6], [0.1], [0.3], [0.4], [0.7], [0.5], ["#N/A"]];

  test("every measure against a count by hand", async () => {
    const out = await score(actual, predicted);
    expect(out.map((row) => row[0])).toEqual([
      "label",
      "event",
      "log loss",
      "Brier score",
      "AUC",
      "cutoff",
      "accuracy",
      "sensitivity",
      "specificity",
      "events caught",
      "events missed",
      "false alarms",
      "correct all-clear",
      "pairs used",
      "pairs skipped",
      "notes",
    ]);
    const v = labelled(out);
    expect(v.get("event")).toBe("'fail' (3 of 8 pairs; the other class is 'pass')");
    // AUC = Mann–Whitney share of (event, non-event) pairs ranked right, ties ½ (Hanley & McNeil 1982):
    // 0.9 beats all 5; 0.6 beats 0.2, 0.1, 0.4, ties 0.6 (3.5); 0.3 beats 0.2, 0.1 (2): 10.5 of 15.
    expectRelative(v.get("AUC") as number, 10.5 / 15, 1e-15, "AUC by a count of pairs (Hanley & McNeil 1982)");
    // Brier score (Brier 1950): squared gaps 0.01 + 0.16 + 0.49 (events) + 0.04 + 0.36 + 0.01 + 0.16 + 0.49 = 1.72, over 8.
    expectRelative(v.get("Brier score") as number, 1.72 / 8, 1e-14, "Brier score by hand (Brier 1950)");
    // Log loss: −mean log of the probability given to the class that happened (common practice), with Math.log.
    const given = [0.9, 0.6, 0.3, 0.8, 0.4, 0.9, 0.6, 0.3];
    const logLoss = -given.reduce((s, p) => s + Math.log(p), 0) / 8;
    expectRelative(v.get("log loss") as number, logLoss, 1e-14, "log loss by hand with Math.log (common practice)");
    // At 0.5, flagged: 0.9 and 0.6 (events), 0.6 and 0.7 (non-events).
    expect(v.get("cutoff")).toBe(0.5);
    expect([v.get("events caught"), v.get("events missed"), v.get("false alarms"), v.get("correct all-clear")]).toEqual([2, 1, 2, 3]);
    expect(v.get("accuracy")).toBe(5 / 8);
    expect(v.get("sensitivity")).toBe(2 / 3);
    expect(v.get("specificity")).toBe(3 / 5);
    expect(v.get("pairs used")).toBe(8);
    expect(v.get("pairs skipped")).toBe(2);
    expect(v.get("notes")).toBe("none");
  });

  test("cutoff and event settings; the other event mirrors the table", async () => {
    const at65 = labelled(await score(actual, predicted, "cutoff=65%"));
    expect([at65.get("events caught"), at65.get("events missed"), at65.get("false alarms"), at65.get("correct all-clear")]).toEqual([1, 2, 1, 4]);
    // Naming 'pass' the event, the same numbers are probabilities of 'pass': 1 − AUC, by symmetry of the pair count.
    const pass = labelled(await score(actual, predicted, [["event", "pass"]]));
    expect(pass.get("event")).toBe("'pass' (5 of 8 pairs; the other class is 'fail')");
    expectRelative(pass.get("AUC") as number, 1 - 10.5 / 15, 1e-15, "AUC with the classes swapped: 4.5 of 15 pairs");
  });

  test("TRUE/FALSE and 0/1 actual values; a header that is also a label is data", async () => {
    const booleans = actual.map((row, i) => (i === 0 || row[0] === null ? row : [row[0] === "fail"]));
    const numbers = actual.map((row, i) => (i === 0 || row[0] === null ? row : [row[0] === "fail" ? 1 : 0]));
    const reference = labelled(await score(actual, predicted));
    for (const a of [booleans, numbers]) {
      const v = labelled(await score(a, predicted));
      for (const label of ["AUC", "Brier score", "log loss", "events caught", "false alarms"]) expect(v.get(label)).toBe(reference.get(label));
    }
    // Without a header, a first label that appears again below is a value, not a header; so is
    // one that appears once, when a header there would leave a prediction unpaired.
    const v = labelled(await score(actual.slice(1), predicted.slice(1)));
    expect(v.get("pairs used")).toBe(8);
    const once = labelled(await score([["fail"], ["pass"], ["pass"]], [[0.6], [0.2], [0.7]]));
    expect(once.get("event")).toBe("'fail' (1 of 3 pairs; the other class is 'pass')");
  });

  test("0/1 actual values scored as numbers: with outcome=number, or beside predictions outside 0 to 1", async () => {
    const numbers = [[1], [0], [1], [0]];
    const asNumbers = labelled(await score(numbers, [[0.9], [0.2], [0.6], [0.4]], "outcome=number"));
    expect(asNumbers.get("MAE")).toBe((0.1 + 0.2 + 0.4 + 0.4) / 4); // |errors| summed by hand, over 4
    const wide = labelled(await score(numbers, [[1.2], [0.2], [0.6], [-0.1]]));
    expect(wide.has("MAE")).toBe(true);
    expect(wide.has("AUC")).toBe(false);
  });

  test("an infinite log loss says why", async () => {
    const v = labelled(await score([["fail"], ["pass"], ["pass"]], [[0], [0.2], [0.7]]));
    expect(v.get("log loss")).toBe("infinite: an event was given probability 0, or a non-event probability 1");
    expect(v.get("events missed")).toBe(1);
  });

  test("refusals: probabilities outside 0 to 1 beside labels, class labels as predictions, three labels, stray text, settings", async () => {
    expect((await rejection(score(actual, predicted.map((row, i) => (i === 2 ? [1.4] : row))))).message).toBe(
      "predicted row 3 is 1.4, outside 0 to 1, but actual holds two classes ('fail', 'pass'): give the probability of 'fail' for each row",
    );
    expect((await rejection(score([[1], [0], [1]], [[0.5], [2], [0.1]], "outcome=two-class"))).message).toBe(
      "predicted row 2 is 2, outside 0 to 1, but actual holds two classes ('1', '0'): give the probability of '1' for each row, or add outcome=number to settings to score the values as numbers",
    );
    expect((await rejection(score([["actual"], ["fail"], ["pass"]], [["predicted"], ["fail"], ["pass"]]))).message).toBe(
      "predicted row 2 has text 'fail' (SHRINK.SCORE scores probabilities of the event: use predict=probability): SHRINK.SCORE needs numbers (clear the cell to skip it)",
    );
    expect((await rejection(score([["a"], ["b"], ["c"], ["a"]], [[0.1], [0.2], [0.3], [0.4]]))).message).toBe(
      "'actual' has 3 distinct values ('a', 'b', 'c'): a yes/no outcome needs exactly two; use outcome=number for a numeric target",
    );
    expect((await rejection(score([["fail"], ["pass"], ["fail"]], [[0.1], [0.2], [0.3]], "event=retest"))).message).toBe(
      "event 'retest' is not one of 'actual''s two values ('fail', 'pass'): name one of them",
    );
    expect((await rejection(score([[3], [4], [5]], [[3.1], [4.2], [4.9]], "cutoff=0.4"))).message).toBe(
      "'cutoff' applies to yes/no scoring, but these pairs are scored as numbers (the actual values don't hold exactly two classes, or a prediction lies outside 0 to 1): remove it",
    );
    expect((await rejection(score([["actual"], ["fail"], ["pass"]], [[0.1], [0.2]], "outcome=number"))).message).toBe(
      "actual row 2 has text 'fail': SHRINK.SCORE needs numbers (clear the cell to skip it)",
    );
    expect((await rejection(score([[1], [0]], [[0.1], [0.2]], "folds=3"))).message).toBe(
      "'folds' doesn't apply to SHRINK.SCORE: its settings are outcome, event, cutoff",
    );
  });
});

test("numbers stay numbers: a numeric SCORE of the same shape as before", async () => {
  const out = await score([[3], [5], [2], [8]], [[2.5], [5.5], [2], [7]]);
  expect(out.map((row) => row[0])).toEqual(["label", "MAE", "RMSE", "R²", "mean error (predicted − actual)", "pairs used", "pairs skipped"]);
});
