/**
 * The SHRINK functions over the engine's penalized logistic fits: each spill's shape and headers
 * for a yes/no target, PREDICT's probabilities against the COEFS table, APPLY round-tripping
 * PREDICT exactly, predict=class, and BASELINE against the closed-form logistic fit of a 2×2
 * table.
 */
import { apply, baseline, choice, coefs, cvcurve, path, predict } from "../../functions/api";
import { expectRelative } from "../helpers/numeric";
import { CountingRunner, expectRectangular, labelled, QUICK, yesNoSheet } from "./support";

const TERMS = ["Size", "Region: North", "Region: West", "Region: South", "Temp"];
const { target, predictors, events } = yesNoSheet();
/** New rows with a header (rows 1–6 of the training data, one blank row, one row missing a value). */
const newRows: unknown[][] = [...predictors.slice(0, 7), [null, null, null], [4, "East", null]];

/** 1 / (1 + e^−η) with Math.exp (a general-purpose reference for the engine's portable exp). */
const logistic = (eta: number): number => 1 / (1 + Math.exp(-eta));

describe("spills for a yes/no target", () => {
  test("COEFS: log-odds of the event, odds ratios e^coefficient, the intercept's ratio blank, the reference level's 1", async () => {
    const runner = new CountingRunner();
    const out = await coefs(runner, target, predictors, null, QUICK);
    expectRectangular(out);
    expect(out[0]).toEqual(["term", "coefficient (log-odds of 'fail')", "odds ratio"]);
    expect(out.map((row) => row[0])).toEqual(["term", "intercept", "Size", "Region: East (reference)", "Region: North", "Region: West", "Region: South", "Temp"]);
    expect(out[1][2]).toBe("");
    expect(out[3].slice(1)).toEqual([0, 1]);
    for (const row of [out[2], ...out.slice(4)]) {
      expect(typeof row[1]).toBe("number");
      expectRelative(row[2] as number, Math.exp(row[1] as number), 1e-15, `odds ratio of ${String(row[0])} = e^coefficient (Math.exp)`);
    }
    expect(runner.last().options.outcome).toBe("two-class");
    // Size raises the chance of 'fail' in the invented model (+0.9 per unit): the fit agrees in sign.
    expect(out[2][1] as number).toBeGreaterThan(0);
  });

  test("CHOICE: outcome, event and cutoff first, then the usual rows with the measure named", async () => {
    const out = await choice(new CountingRunner(), target, predictors, "0, 1", QUICK);
    expectRectangular(out);
    expect(out.map((row) => row[0])).toEqual([
      "label",
      "outcome",
      "event",
      "cutoff",
      "strength",
      "strength ÷ top of grid",
      "mix",
      "CV deviance",
      "± SE",
      "rule",
      "one-SE rule's strength",
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
    const v = labelled(out);
    expect(v.get("outcome")).toBe("yes/no (two-class)");
    expect(v.get("event")).toBe(`'fail' (${events} of 80 rows used; the other class is 'pass')`);
    expect(v.get("cutoff")).toBe(0.5);
    expect(v.get("CV deviance") as number).toBeGreaterThan(0);
    // A tie between the classes: the event picked, and how, in the notes.
    const tied = [["Outcome"], ...predictors.slice(1).map((_, i) => [i % 2 === 0 ? "yes" : "no"])];
    const notes = labelled(await choice(new CountingRunner(), tied, predictors, 1, "strength=0.01")).get("notes");
    expect(notes).toBe("both classes have 40 rows, so the event is 'no' (first in alphabetical order); name another with event=…");
    const auc = labelled(await choice(new CountingRunner(), target, predictors, "0, 1", `${QUICK}; error=auc; cutoff=0.3`));
    expect(auc.get("cutoff")).toBe(0.3);
    const value = auc.get("CV AUC (higher is better)") as number;
    expect(value > 0 && value <= 1).toBe(true);
  });

  test("PREDICT: the probability of the event, equal to the logistic of the COEFS table's linear score", async () => {
    const runner = new CountingRunner();
    const table = await coefs(runner, target, predictors, 1, QUICK);
    const out = await predict(runner, target, predictors, newRows, 1, QUICK);
    expect(runner.calls).toBe(2);
    expect(JSON.stringify(runner.requests[0])).toBe(JSON.stringify(runner.requests[1]));
    expect(out[0]).toEqual(["probability of 'fail'"]);
    const b = new Map(table.slice(1).map((row) => [String(row[0]), row[1] as number]));
    for (let k = 1; k <= 6; k++) {
      const [size, region, temp] = newRows[k] as [number, string, number];
      const indicator = (level: string): number => (region === level ? 1 : 0);
      const eta =
        (b.get("intercept") as number) +
        (b.get("Size") as number) * size +
        (b.get("Region: North") as number) * indicator("North") +
        (b.get("Region: West") as number) * indicator("West") +
        (b.get("Region: South") as number) * indicator("South") +
        (b.get("Temp") as number) * temp;
      expectRelative(out[k][0] as number, logistic(eta), 1e-13, `row ${k}: logistic of the COEFS table's score`);
    }
    expect(out[7][0]).toBe("");
    expect(out[8][0]).toMatchObject({ code: "#N/A", message: "no prediction for new_rows row 9: 'Temp' is blank" });
  });

  test("APPLY on the COEFS table gives PREDICT's probabilities exactly", async () => {
    const runner = new CountingRunner();
    const table = await coefs(runner, target, predictors, null, QUICK);
    const predicted = await predict(runner, target, predictors, newRows, null, QUICK);
    expect(await apply(table, newRows)).toEqual(predicted);
  });

  test("predict=class: the event's label at or above the cutoff, the other below; TRUE/FALSE stay booleans", async () => {
    const runner = new CountingRunner();
    const probabilities = await predict(runner, target, predictors, newRows, 1, QUICK);
    for (const cutoff of [0.5, 0.3]) {
      const classes = await predict(runner, target, predictors, newRows, 1, `${QUICK}; predict=class; cutoff=${cutoff}`);
      expect(classes[0]).toEqual([`predicted class (cutoff ${cutoff})`]);
      for (let k = 1; k <= 6; k++) expect(classes[k][0]).toBe((probabilities[k][0] as number) >= cutoff ? "fail" : "pass");
      expect(classes[7][0]).toBe("");
    }
    const booleans = yesNoSheet(80, "booleans");
    const out = await predict(runner, booleans.target, booleans.predictors, newRows, 1, `${QUICK}; predict=class`);
    for (let k = 1; k <= 6; k++) expect(typeof out[k][0]).toBe("boolean");
    // The same draws as the labelled sheet (TRUE where 'fail'), so the same fit and the same classes.
    const labels = await predict(runner, target, predictors, newRows, 1, `${QUICK}; predict=class`);
    for (let k = 1; k <= 6; k++) expect(out[k][0]).toBe(labels[k][0] === "fail");
  });

  test("PATH: the intercept's header says log-odds; the top of the grid keeps no term", async () => {
    const out = await path(new CountingRunner(), target, predictors, 1, "folds=4; grid size=12");
    expectRectangular(out);
    expect(out[0]).toEqual(["strength", "terms kept", "intercept (log-odds of 'fail')", ...TERMS]);
    expect(out[1][1]).toBe(0);
    expect(out[1].slice(3)).toEqual([0, 0, 0, 0, 0]);
    // At the top only the intercept is fitted: the log-odds of the share of events (maximum likelihood, common practice).
    expectRelative(out[1][2] as number, Math.log(events / (80 - events)), 1e-6, "intercept-only log-odds = log(events / non-events)");
  });

  test("CVCURVE: the measure in the header", async () => {
    const headers: Record<string, string> = { deviance: "CV deviance", misclassified: "CV misclassified share", auc: "CV AUC (higher is better)" };
    for (const [measure, header] of Object.entries(headers)) {
      const out = await cvcurve(new CountingRunner(), target, predictors, 1, `folds=4; grid size=8; error=${measure}`);
      expect(out[0]).toEqual(["mix", "strength", header, "± SE", "terms kept"]);
      expect(out).toHaveLength(9);
    }
  });
});

describe("BASELINE for a yes/no target", () => {
  /**
   * One text predictor with two levels against a yes/no target: the logistic maximum-likelihood
   * fit is closed form (common practice; Agresti, Categorical Data Analysis, §2.3 and §5.2 for the
   * log odds ratio and its SE): intercept = log(a/b) in the reference level, coefficient = the log
   * odds ratio log(a·d / (b·c)), SE = √(1/a + 1/b + 1/c + 1/d), intercept SE = √(1/a + 1/b).
   * Reference 'old' (the more frequent level): a = 12 events, b = 18 non-events; 'new': c = 14, d = 6.
   */
  const cells: [string, boolean][] = [];
  for (let i = 0; i < 12; i++) cells.push(["old", true]);
  for (let i = 0; i < 18; i++) cells.push(["old", false]);
  for (let i = 0; i < 14; i++) cells.push(["new", true]);
  for (let i = 0; i < 6; i++) cells.push(["new", false]);
  const y = [["defect"], ...cells.map(([, e]) => [e])];
  const x = [["machine"], ...cells.map(([m]) => [m])];

  /** Φ(z) by Simpson's rule on the normal density from 0 (a numerical route independent of the engine's). */
  function normalCdf(z: number): number {
    const n = 20000;
    const h = Math.abs(z) / n;
    let sum = 0;
    for (let k = 0; k <= n; k++) {
      const t = k * h;
      const weight = k === 0 || k === n ? 1 : k % 2 === 1 ? 4 : 2;
      sum += weight * Math.exp((-t * t) / 2);
    }
    const half = (sum * h) / 3 / Math.sqrt(2 * Math.PI);
    return z >= 0 ? 0.5 + half : 0.5 - half;
  }

  test("coefficients, SEs, z and p-values, deviances: the closed form of a 2×2 table", async () => {
    const out = await baseline(new CountingRunner(), y, x);
    expectRectangular(out);
    expect(out[0]).toEqual(["term", "coefficient (log-odds of 'TRUE')", "standard error", "z", "p-value"]);
    expect(out.map((row) => row[0])).toEqual([
      "term",
      "intercept",
      "machine: old (reference)",
      "machine: new",
      "",
      "residual deviance",
      "residual degrees of freedom",
      "null deviance",
      "null degrees of freedom",
      "share of null deviance explained",
      "rows used",
    ]);
    const [a, b, c, d] = [12, 18, 14, 6];
    const rows = [
      { row: out[1], coefficient: Math.log(a / b), se: Math.sqrt(1 / a + 1 / b) },
      { row: out[3], coefficient: Math.log((a * d) / (b * c)) * -1, se: Math.sqrt(1 / a + 1 / b + 1 / c + 1 / d) },
    ];
    // 'new' against 'old': log odds ratio log((c/d)/(a/b)) = −log(a·d/(b·c)).
    for (const { row, coefficient, se } of rows) {
      expectRelative(row[1] as number, coefficient, 1e-8, `${String(row[0])} coefficient, closed form`);
      expectRelative(row[2] as number, se, 1e-6, `${String(row[0])} SE, closed form`);
      expectRelative(row[3] as number, coefficient / se, 1e-6, `${String(row[0])} z = coefficient / SE`);
      const z = coefficient / se;
      expectRelative(row[4] as number, 2 * (1 - normalCdf(Math.abs(z))), 1e-6, `${String(row[0])} two-sided p-value, Simpson's rule on the normal density`);
    }
    expect(out[2].slice(1)).toEqual([0, "", "", ""]);
    // Deviances from the group shares (saturated per group; common practice): −2 Σ log-likelihood.
    const ll = (events: number, total: number): number => events * Math.log(events / total) + (total - events) * Math.log(1 - events / total);
    const residual = -2 * (ll(a, a + b) + ll(c, c + d));
    const nullDeviance = -2 * ll(a + c, 50);
    const summary = new Map(out.slice(5).map((row) => [row[0], row[1]]));
    expectRelative(summary.get("residual deviance") as number, residual, 1e-8, "residual deviance, closed form");
    expectRelative(summary.get("null deviance") as number, nullDeviance, 1e-8, "null deviance, closed form");
    expect(summary.get("residual degrees of freedom")).toBe(48);
    expect(summary.get("null degrees of freedom")).toBe(49);
    expectRelative(summary.get("share of null deviance explained") as number, 1 - residual / nullDeviance, 1e-6, "1 − residual / null deviance");
    expect(summary.get("rows used")).toBe(50);
  });

  test("event= names the other class: every log-odds flips sign, the SEs stay", async () => {
    const runner = new CountingRunner();
    const defects = await baseline(runner, y, x);
    const fine = await baseline(runner, y, x, "event=FALSE");
    expect(fine[0][1]).toBe("coefficient (log-odds of 'FALSE')");
    for (const k of [1, 3]) {
      expectRelative(fine[k][1] as number, -(defects[k][1] as number), 1e-8, "log-odds of the other class = −log-odds");
      expectRelative(fine[k][2] as number, defects[k][2] as number, 1e-6, "SE unchanged by the flip");
    }
  });

  test("APPLY reads the BASELINE table (down to the blank row) as a log-odds model", async () => {
    const table = await baseline(new CountingRunner(), y, x);
    const out = await apply(table, [["machine"], ["old"], ["new"]]);
    expect(out[0]).toEqual(["probability of 'TRUE'"]);
    // Maximum likelihood reproduces each group's share of events (closed form).
    expectRelative(out[1][0] as number, 12 / 30, 1e-8, "P(event | old) = 12/30");
    expectRelative(out[2][0] as number, 14 / 20, 1e-8, "P(event | new) = 14/20");
  });

  test("separated classes: the message on top, no standard errors", async () => {
    const ys = [["ok"], ...[1, 2, 3, 4, 5, 6, 7, 8].map((v) => [v > 4 ? "fail" : "pass"])];
    const xs = [["load"], ...[1, 2, 3, 4, 5, 6, 7, 8].map((v) => [v + 0.1 * Math.sin(v)])];
    const out = await baseline(new CountingRunner(), ys, xs);
    expectRectangular(out);
    expect(out[0][0]).toBe("separation");
    expect(typeof out[0][1]).toBe("string");
    expect(String(out[0][1]).length).toBeGreaterThan(20);
    expect(out[1][0]).toBe("term");
    for (const row of out.slice(2, 4)) expect(row.slice(2)).toEqual(["none (separation: see row 1)", "", ""]);
  });
});
