/**
 * The command line's "how sure is it" parts, in process (runCommand with files held in memory):
 * `--predict` with and without `--interval` (the CSV's numbers against the engine's own
 * predict and predictionIntervals on the same rows: agreement of two routes), where the CSV and
 * the report go, the exit-2 refusals, and the JSON keys repeats, honest and stability.
 */
import Papa from "papaparse";
import { falseSelectionBound } from "../../engine/assurance";
import { parseArgs, toFitOptions } from "../../engine/cli/args";
import { runCommand } from "../../engine/cli/fit";
import { readFitTable } from "../../engine/cli/table";
import { predictionIntervals } from "../../engine/conformal";
import { fit, type FitResult } from "../../engine/fit";
import { fromRows } from "../../engine/matrix";
import { predict } from "../../engine/model";

/** 60 rows: y = 2 + 1.5a − 0.8b + 0·c + a deterministic wobble; status is a yes/no column from a and b. */
function trainingCsv(): string {
  const lines = ["id,a,b,c,y,status"];
  for (let i = 1; i <= 60; i++) {
    const a = ((i * 7) % 13) / 2;
    const b = ((i * 5) % 11) / 3;
    const c = Math.sin(i * 1.7);
    const y = 2 + 1.5 * a - 0.8 * b + 0.4 * Math.sin(i * 2.3);
    const status = a - b + Math.sin(i * 3.1) > 1.5 ? "late" : "ok";
    lines.push([i, a, b, c.toFixed(5), y.toFixed(5), status].join(","));
  }
  return lines.join("\n") + "\n";
}

/** New rows: the predictors in another order, an extra label column, one row with quotes to copy through. */
const NEW_ROWS = 'label,c,b,a\nfirst,0.1,1,2\n"second, quoted",-0.3,2.5,4\nthird,0,0,0\n';

const files: Record<string, string> = {
  "train.csv": trainingCsv(),
  "new.csv": NEW_ROWS,
  "missing.csv": "a,b\n1,2\n",
  "text.csv": "a,b,c\n1,2,3\n4,five,6\n",
  "blank.csv": "a,b,c\n1,2,3\n4,,6\n",
};

function read(file: string): string {
  if (!(file in files)) throw new Error(`no test file ${file}`);
  return files[file];
}

const QUICK = ["--folds", "5", "--count", "25"];

/** The same fit the command makes, by the parts (args → table → engine). */
function engineFit(argv: string[]): FitResult {
  const parsed = parseArgs(argv);
  if (parsed.help) throw new Error("unexpected help");
  const o = parsed.options;
  const table = readFitTable(trainingCsv(), { target: o.target, predictors: o.predictors, exclude: o.exclude, outcome: o.outcome });
  return fit(table.predictors, table.targetValues, toFitOptions(o, { names: table.predictorNames, weights: null, foldLabels: null, outcome: table.outcome }));
}

function csv(text: string): { fields: string[]; rows: Record<string, string>[] } {
  const parsed = Papa.parse<Record<string, string>>(text.trim(), { header: true });
  return { fields: parsed.meta.fields ?? [], rows: parsed.data };
}

/** The new rows in the model's predictor order (a, b, c). */
const NEW_VALUES = [
  [2, 1, 0.1],
  [4, 2.5, -0.3],
  [0, 0, 0],
];

function expectFailure(argv: string[], message: string | RegExp): void {
  const outcome = runCommand(argv, read, () => {
    throw new Error("nothing should be written");
  });
  expect(outcome.exitCode).toBe(2);
  expect(outcome.stdout).toBe("");
  expect(outcome.stderr.trimEnd().split("\n")).toHaveLength(1);
  if (typeof message === "string") expect(outcome.stderr).toBe(`shrinkwise: ${message}\n`);
  else expect(outcome.stderr).toMatch(message);
}

describe("--predict", () => {
  const base = ["train.csv", "--target", "y", "--exclude", "id,status", "--mix", "1", ...QUICK];

  it("writes CSV to standard output (no report): the new file's columns, then the model's prediction", () => {
    const outcome = runCommand([...base, "--predict", "new.csv"], read);
    expect(outcome.exitCode).toBe(0);
    expect(outcome.stderr).toBe("");
    const { fields, rows } = csv(outcome.stdout);
    expect(fields).toEqual(["label", "c", "b", "a", "prediction"]);
    expect(rows.map((r) => r.label)).toEqual(["first", "second, quoted", "third"]);
    const result = engineFit(base);
    expect(result.terms).toEqual(["a", "b", "c"]);
    const expected = predict(result.model, NEW_VALUES);
    // Written at full precision: reading the text back gives the engine's numbers exactly.
    rows.forEach((row, i) => expect(Number(row.prediction)).toBe(expected[i]));
  });

  it("--interval 90%: low (90%) and high (90%) are the engine's CV+ interval on the same rows", () => {
    const outcome = runCommand([...base, "--predict", "new.csv", "--interval", "90%"], read);
    expect(outcome.exitCode).toBe(0);
    const { fields, rows } = csv(outcome.stdout);
    expect(fields).toEqual(["label", "c", "b", "a", "prediction", "low (90%)", "high (90%)"]);
    const result = engineFit(base);
    const { low, high } = predictionIntervals(result, fromRows(NEW_VALUES), 0.9);
    rows.forEach((row, i) => {
      expect(Number(row["low (90%)"])).toBe(low[i]);
      expect(Number(row["high (90%)"])).toBe(high[i]);
      expect(low[i]).toBeLessThan(high[i]);
    });
    // A higher level never gives a narrower interval (CV+ quantiles move outwards with the level).
    const wide = csv(runCommand([...base, "--predict", "new.csv", "--interval", "0.95"], read).stdout).rows;
    wide.forEach((row, i) => {
      expect(Number(row["low (95%)"])).toBeLessThanOrEqual(low[i]);
      expect(Number(row["high (95%)"])).toBeGreaterThanOrEqual(high[i]);
    });
    // 60 rows are too few for 99% (⌊0.01·61⌋ = 0, engine/conformal.ts): the ends are unbounded, and say so.
    const unbounded = csv(runCommand([...base, "--predict", "new.csv", "--interval", "0.99"], read).stdout).rows;
    for (const row of unbounded) expect([row["low (99%)"], row["high (99%)"]]).toEqual(["-Infinity", "Infinity"]);
  });

  it("without --predictions-out the report's warnings go to stderr, one line each", () => {
    // Blank cells in the training file: the report would warn about the skipped rows.
    files["gaps.csv"] = trainingCsv().replace(/\n(5,[^,]*),[^,]*,/, "\n$1,,");
    const outcome = runCommand(["gaps.csv", "--target", "y", "--exclude", "id,status", "--mix", "1", ...QUICK, "--predict", "new.csv"], read);
    expect(outcome.exitCode).toBe(0);
    expect(outcome.stderr).toBe("shrinkwise: warning: 1 row with blank cells skipped (data row 5; blanks by column: b 1)\n");
    expect(csv(outcome.stdout).rows).toHaveLength(3);
  });

  it("--predictions-out writes the CSV there and prints the report (or --json) as usual", () => {
    const written: Record<string, string> = {};
    const write = (file: string, text: string): void => {
      written[file] = text;
    };
    const plain = runCommand([...base, "--predict", "new.csv"], read);
    const report = runCommand([...base, "--predict", "new.csv", "--predictions-out", "out.csv"], read, write);
    expect(report.exitCode).toBe(0);
    expect(written["out.csv"]).toBe(plain.stdout);
    expect(report.stdout).toBe(runCommand(base, read).stdout);
    const json = runCommand([...base, "--json", "--predict", "new.csv", "--predictions-out", "out2.csv"], read, write);
    expect(JSON.parse(json.stdout).target).toBe("y");
    expect(written["out2.csv"]).toBe(plain.stdout);
  });

  it("yes/no target: the probability of the event and the class at the cutoff; --interval refused", () => {
    const twoClass = ["train.csv", "--target", "status", "--exclude", "id,y", "--mix", "1", ...QUICK];
    const outcome = runCommand([...twoClass, "--predict", "new.csv", "--cutoff", "0.3"], read);
    expect(outcome.exitCode).toBe(0);
    const { fields, rows } = csv(outcome.stdout);
    expect(fields).toEqual(["label", "c", "b", "a", "prediction", "class"]);
    const result = engineFit([...twoClass, "--cutoff", "0.3"]);
    const classes = readFitTable(trainingCsv(), { target: "status", exclude: ["id", "y"] }).classes;
    if (!classes) throw new Error("status should read as yes/no");
    const probabilities = predict(result.model, NEW_VALUES);
    rows.forEach((row, i) => {
      expect(Number(row.prediction)).toBe(probabilities[i]);
      expect(probabilities[i]).toBeGreaterThanOrEqual(0);
      expect(probabilities[i]).toBeLessThanOrEqual(1);
      expect(row.class).toBe(probabilities[i] >= 0.3 ? classes.event : classes.other);
    });
    // Both classes appear among these rows, so the column is not constant by accident.
    expect(new Set(rows.map((row) => row.class)).size).toBe(2);
    expectFailure([...twoClass, "--predict", "new.csv", "--interval", "0.9"], "--interval is for number targets; a yes/no model gives probabilities: leave --interval out");
  });

  it("a missing predictor column, a text or blank cell: one line, exit 2", () => {
    expectFailure([...base, "--predict", "missing.csv"], "missing.csv has no column 'c': it needs every predictor the model uses ('a', 'b', 'c'); its columns are 'a', 'b'");
    expectFailure([...base, "--predict", "text.csv"], "text.csv has text in data row 2, column 'b' ('five'): use numbers only");
    expectFailure([...base, "--predict", "blank.csv"], "blank.csv has a blank in data row 2, column 'b': every predictor needs a value to predict the row");
    expectFailure([...base, "--interval", "0.9"], "--interval gives prediction intervals for new rows: add --predict <new.csv>");
    // The engine's own refusal (conformal.ts): a fixed strength runs no cross-validation.
    expectFailure([...base, "--strength", "0.1", "--predict", "new.csv", "--interval", "0.9"], /prediction intervals are built from the cross-validation's held-out rows/);
  });
});

describe("JSON and report: repeats, honest, stability", () => {
  const base = ["train.csv", "--target", "y", "--exclude", "id,status", ...QUICK];

  it("without the options: repeats 1, honest and stability null; every earlier key kept", () => {
    const parsed = JSON.parse(runCommand([...base, "--json"], read).stdout);
    expect(parsed.repeats).toBe(1);
    expect(parsed.honest).toBeNull();
    expect(parsed.stability).toBeNull();
    for (const key of ["target", "outcome", "coefficients", "cv", "choices", "keptShare", "diagnostics", "model"]) expect(parsed).toHaveProperty(key);
    expect(runCommand(base, read).stdout).toMatch(/\nRepeats: 1 deal of the folds\n/);
    const fixed = JSON.parse(runCommand([...base, "--json", "--mix", "1", "--strength", "0.1"], read).stdout);
    expect(fixed.repeats).toBe(0);
  });

  /* The tests below read what the engine fills in: they pass once branches assure-cv (repeats, honest) and stability are merged. */
  it("--repeats 3 --honest: the engine's numbers, finite, in JSON and in the report", () => {
    const argv = [...base, "--repeats", "3", "--honest", "--seed", "4"];
    const parsed = JSON.parse(runCommand([...argv, "--json"], read).stdout);
    const result = engineFit(argv);
    const honest = result.honest;
    if (!honest) throw new Error("the engine gave no honest error");
    expect(parsed.repeats).toBe(3);
    expect(result.cv?.repeats).toBe(3);
    expect(parsed.honest).toEqual({
      measure: "mse",
      folds: honest.folds,
      error: honest.error,
      se: honest.se,
      optimistic: honest.optimistic,
      perFold: honest.perFold.map((f) => ({ weight: f.weight, error: f.error, mix: f.mix, strength: f.strength, termsKept: f.termsKept })),
    });
    for (const value of [parsed.honest.error, parsed.honest.se, parsed.honest.optimistic]) expect(Number.isFinite(value)).toBe(true);
    expect(parsed.honest.optimistic).toBe(parsed.cv.error);
    const text = runCommand(argv, read).stdout;
    expect(text).toMatch(/Repeats: 3 deals of the folds \(seeds 4 to 6\); the choice used the curve averaged over them/);
    // Kept shares count every deal's fold models: 15 of them, so the counts read out of 15.
    expect(text).toMatch(/how many of the 15 fold models \(3 deals × 5 folds\) at the chosen point keep the term/);
    expect(text).toMatch(/\b\d+\/15\b/);
    const shares = Object.values(parsed.keptShare as Record<string, { kept: number }>);
    for (const { kept } of shares) expect(Number.isInteger(Math.round(kept * 15 * 1e9) / 1e9)).toBe(true);
    expect(text).toMatch(/Honest CV error \(whole procedure\), by nested cross-validation over \d+ outer folds: MSE /);
    expect(text).toMatch(/is the one that chose the model, so it is optimistic for it/);
  });

  it("--stability: terms keyed by column, the published bound, stable = share ≥ π; columns in the report", () => {
    const argv = [...base, "--mix", "1", "--stability", "--draws", "8", "--q", "2", "--threshold", "0.7"];
    const parsed = JSON.parse(runCommand([...argv, "--json"], read).stdout);
    const s = engineFit(argv).stability;
    if (!s) throw new Error("the engine ran no stability selection");
    const st = parsed.stability;
    expect(Object.keys(st.terms)).toEqual(["a", "b", "c"]);
    expect(st).toMatchObject({ mix: 1, draws: 8, q: 2, threshold: 0.7, candidates: s.candidates });
    // Meinshausen & Bühlmann 2010, Theorem 1: q² / ((2π − 1)·p).
    expect(st.falseSelectionBound).toBeCloseTo(falseSelectionBound(2, 0.7, s.candidates), 12);
    for (const name of ["a", "b", "c"]) {
      const { share, stable, candidate } = st.terms[name];
      expect(candidate).toBe(true);
      expect(share).toBeGreaterThanOrEqual(0);
      expect(share).toBeLessThanOrEqual(1);
      expect(stable).toBe(share >= 0.7);
    }
    expect(st.strengths.length).toBe(st.averageSelected.length);
    for (const value of [...st.strengths, ...st.averageSelected]) expect(Number.isFinite(value)).toBe(true);
    const text = runCommand(argv, read).stdout;
    expect(text).toMatch(/kept in folds\s+same sign\s+stable share\s+stable/);
    expect(text).toMatch(/Stability selection: expected false selections at most [\d.e+-]+ \(q²\/\(\(2π − 1\)·p\) with q = 2 /);
  });
});
