/**
 * The command line on yes/no (two-class) targets, in process (runCommand with files in memory):
 * text labels, TRUE/FALSE and 0/1 read by engine/outcome.ts readOutcome, a named event, the
 * two-class measures and cutoff, the JSON's new keys beside every old one, and the readable
 * report (log-odds with odds ratios, the CV summary in the measure, the in-sample block with the
 * table at the cutoff in words, the unpenalized baseline or the separation message).
 *
 * Data are generated here from a stated logistic rule with a fixed pseudo-random sequence, so
 * every run is the same. Sources of expected values are named beside each check.
 */
import { readInput, runCommand } from "../../engine/cli/fit";

/** A small multiplicative congruential sequence in (0, 1) (Park & Miller 1988, CACM 31(10)). */
function sequence(seed: number): () => number {
  let state = seed;
  return () => {
    state = (state * 16807) % 2147483647;
    return state / 2147483647;
  };
}

/**
 * 160 batches: moisture, density, age, and whether the batch failed, drawn with log-odds of
 * failing = −1 + 1.2·moisture − 0.8·density (age has no effect). `labels` names the classes.
 */
function batches(labels: [string, string] = ["fail", "pass"], rows = 160): string {
  const next = sequence(20261203);
  const normal = (): number => Math.sqrt(-2 * Math.log(next())) * Math.cos(2 * Math.PI * next());
  const lines = ["moisture,density,age,result"];
  for (let i = 0; i < rows; i++) {
    const moisture = normal();
    const density = normal();
    const age = normal();
    const p = 1 / (1 + Math.exp(-(-1 + 1.2 * moisture - 0.8 * density)));
    lines.push([moisture.toFixed(4), density.toFixed(4), age.toFixed(4), next() < p ? labels[0] : labels[1]].join(","));
  }
  return lines.join("\n") + "\n";
}

/** Classes that a line separates: y = 1 exactly when x > 0 (no unpenalized estimate exists). */
function separated(): string {
  const lines = ["x,z,y"];
  for (let i = 0; i < 30; i++) {
    const x = i - 14.5;
    lines.push(`${x},${(i * 7) % 5},${x > 0 ? "yes" : "no"}`);
  }
  return lines.join("\n") + "\n";
}

const files: Record<string, string> = {
  "batches.csv": batches(),
  "flags.csv": batches(["TRUE", "false"]),
  "binary.csv": batches(["1", "0"]),
};

function read(file: string): string {
  return file in files ? files[file] : file === "separated.csv" ? separated() : readInput(file);
}

/** The parsed `--json` output; its shape is checked by the tests that read it. */
// eslint-disable-next-line @typescript-eslint/no-explicit-any -- parsed JSON, read field by field below
type Json = any;

function json(argv: string[]): Json {
  const outcome = runCommand([...argv, "--json"], read);
  expect(outcome.stderr).toBe("");
  expect(outcome.exitCode).toBe(0);
  return JSON.parse(outcome.stdout);
}

function text(argv: string[]): string {
  const outcome = runCommand(argv, read);
  expect(outcome.stderr).toBe("");
  expect(outcome.exitCode).toBe(0);
  return outcome.stdout;
}

/** The file's labels, counted (the data as written). */
function counts(file: string): Map<string, number> {
  const found = new Map<string, number>();
  for (const line of files[file].trim().split("\n").slice(1)) {
    const label = line.split(",")[3];
    found.set(label, (found.get(label) ?? 0) + 1);
  }
  return found;
}

/** Area under the ROC curve by comparing every (event, non-event) pair, ties ½ (Hanley & McNeil 1982, Radiology 143(1): the definition). */
function pairwiseAuc(actual: number[], scores: number[]): number {
  let pairs = 0;
  let wins = 0;
  for (let i = 0; i < actual.length; i++) {
    if (actual[i] !== 1) continue;
    for (let j = 0; j < actual.length; j++) {
      if (actual[j] !== 0) continue;
      pairs++;
      wins += scores[i] > scores[j] ? 1 : scores[i] === scores[j] ? 0.5 : 0;
    }
  }
  return wins / pairs;
}

const FAST = ["--folds", "5", "--count", "30", "--mix", "0.5,1"];

describe("yes/no targets on the command line", () => {
  const report = json(["batches.csv", "--target", "result", ...FAST]);
  const numberReport = json(["batches.csv", "--target", "moisture", "--exclude", "result", ...FAST]);

  it("reads two text labels as a yes/no target, the rarer label as the event; JSON says so and keeps every key a number fit has", () => {
    const labels = counts("batches.csv");
    const [event, other] = (labels.get("fail") ?? 0) <= (labels.get("pass") ?? 0) ? ["fail", "pass"] : ["pass", "fail"];
    expect(report.outcome).toBe("two-class");
    expect(report.event).toBe(event);
    expect(report.classes).toEqual({ event, other, eventRows: labels.get(event), otherRows: labels.get(other) });
    expect(report.cv).toMatchObject({ measure: "deviance" });
    expect(report.model.link).toBe("logistic");
    // Every key of a number fit's JSON is still there (an extension, not a new format).
    for (const key of Object.keys(numberReport)) expect([key, key in report]).toEqual([key, true]);
    for (const key of Object.keys(numberReport.diagnostics)) expect([key, key in report.diagnostics]).toEqual([key, true]);
    expect(numberReport.outcome).toBe("number");
    expect(numberReport.event).toBeNull();
    expect(numberReport.classFit).toBeNull();
    expect(numberReport.oddsRatios).toBeNull();
  });

  it("odds ratios are e^coefficient (definition of the log-odds coefficient)", () => {
    for (const [term, b] of Object.entries(report.coefficients as Record<string, number>)) {
      expect(Math.abs(report.oddsRatios[term] / Math.exp(b) - 1)).toBeLessThanOrEqual(1e-15);
    }
  });

  it("classFit: the table at the cutoff adds up to the file's classes, and its AUC is the pairwise AUC of the model's scores", () => {
    const fit = report.classFit;
    expect(fit.cutoff).toBe(0.5);
    expect(fit.eventsCaught + fit.eventsMissed).toBe(report.classes.eventRows);
    expect(fit.falseAlarms + fit.correctAllClear).toBe(report.classes.otherRows);
    expect(fit.count).toBe(report.rowsUsed);
    // The model's linear scores on the file's rows, recomputed from the JSON's coefficients.
    const rows = files["batches.csv"].trim().split("\n").slice(1).map((line) => line.split(","));
    const terms = report.predictors as string[];
    const scores = rows.map((cells) => report.intercept + terms.reduce((sum, term, j) => sum + report.coefficients[term] * Number(cells[j]), 0));
    const actual = rows.map((cells) => (cells[3] === report.event ? 1 : 0));
    // 1e-12: the same pairs counted another way; any score order-preserving map gives the same AUC.
    expect(Math.abs(fit.auc - pairwiseAuc(actual, scores))).toBeLessThanOrEqual(1e-12);
    // Accuracy, sensitivity and specificity from the four counts (their definitions: engine/classMetrics.ts).
    expect(fit.accuracy).toBeCloseTo((fit.eventsCaught + fit.correctAllClear) / fit.count, 12);
    expect(fit.sensitivity).toBeCloseTo(fit.eventsCaught / (fit.eventsCaught + fit.eventsMissed), 12);
    expect(fit.specificity).toBeCloseTo(fit.correctAllClear / (fit.falseAlarms + fit.correctAllClear), 12);
  });

  it("naming the other class the event mirrors the model: every coefficient and the intercept change sign (symmetry of the binomial log-likelihood, common practice)", () => {
    const mirrored = json(["batches.csv", "--target", "result", ...FAST, "--event", report.classes.other.toUpperCase()]);
    expect(mirrored.event).toBe(report.classes.other);
    expect(mirrored.strength).toBe(report.strength);
    expect(mirrored.mix).toBe(report.mix);
    const scale = Math.max(...Object.values(report.coefficients as Record<string, number>).map(Math.abs), Math.abs(report.intercept));
    // 1e-8 of the largest coefficient: the same problem solved from the other side, to the solver's tolerance.
    expect(Math.abs(mirrored.intercept + report.intercept)).toBeLessThanOrEqual(1e-8 * scale);
    for (const term of report.predictors as string[]) expect(Math.abs(mirrored.coefficients[term] + report.coefficients[term])).toBeLessThanOrEqual(1e-8 * scale);
  });

  it("TRUE/FALSE in any case: the event is TRUE (engine/outcome.ts); 0/1: the event is 1, and --outcome number fits them as numbers", () => {
    const flags = json(["flags.csv", "--target", "result", ...FAST]);
    expect(flags.event).toBe("TRUE");
    expect(flags.classes.other).toBe("FALSE");
    const binary = json(["binary.csv", "--target", "result", ...FAST]);
    expect(binary.event).toBe("1");
    // The same rows and classes as the labelled file: the same fit (the labels only name the classes).
    expect(binary.coefficients).toEqual(json(["batches.csv", "--target", "result", ...FAST, "--event", "fail"]).coefficients);
    const asNumbers = json(["binary.csv", "--target", "result", ...FAST, "--outcome", "number"]);
    expect(asNumbers.outcome).toBe("number");
    expect(asNumbers.cv.measure).toBe("mse");
  });

  it("--error auc and --cutoff reach the engine; the AUC's best point is its highest", () => {
    const auc = json(["batches.csv", "--target", "result", ...FAST, "--error", "auc", "--cutoff", "0.3"]);
    expect(auc.cv.measure).toBe("auc");
    expect(auc.classFit.cutoff).toBe(0.3);
    expect(auc.choices.lowest.error).toBeGreaterThanOrEqual(auc.choices.oneSe.error);
    const misclassified = json(["batches.csv", "--target", "result", ...FAST, "--error", "misclassified"]);
    expect(misclassified.cv.measure).toBe("misclassified");
    expect(misclassified.cv.error).toBeGreaterThanOrEqual(0);
    expect(misclassified.cv.error).toBeLessThanOrEqual(1);
  });

  it("the readable report: log-odds with odds ratios, the CV summary in the measure, log loss, Brier, AUC and the table at the cutoff in words", () => {
    const out = text(["batches.csv", "--target", "result", ...FAST]);
    const event = report.event as string;
    expect(out).toMatch(new RegExp(`\\nOutcome: yes/no, event '${event}' \\(${report.classes.eventRows} of ${report.rowsUsed} rows; the other class is '${report.classes.other}'\\)\\n`));
    expect(out).toMatch(new RegExp(`term\\s+log-odds of '${event}'\\s+odds ratio\\s+per SD\\s+kept in folds\\s+same sign\\n`));
    expect(out).toMatch(/Cross-validation: 5 random folds \(seed 1\), scored by deviance\n/);
    expect(out).toMatch(/\n {2}CV deviance ± SE\s+\d\S* ± \d\S*\s+\d\S* ± \d\S*\n/);
    expect(out).toMatch(/\nIn-sample: log loss 0\.\d+, Brier 0\.\d+, AUC 0\.\d+\n/);
    expect(out).toContain(`At cutoff 0.5 (a row is flagged as '${event}' when its probability is 0.5 or more):`);
    const fit = report.classFit;
    expect(out).toMatch(new RegExp(`${fit.eventsCaught} events caught\\s+${fit.eventsMissed} events missed`));
    expect(out).toMatch(new RegExp(`${fit.falseAlarms} false alarms\\s+${fit.correctAllClear} correct all-clear`));
    expect(out).toMatch(/accuracy 0\.\d+, sensitivity 0\.\d+ \(share of events caught\), specificity 0\.\d+/);
    expect(out).not.toMatch(/R²|RMSE/);
    const auc = text(["batches.csv", "--target", "result", ...FAST, "--error", "auc"]);
    expect(auc).toMatch(/scored by AUC \(higher is better\)\n/);
    expect(auc).toMatch(/\n {2}CV AUC ± SE \(higher is better\)\s+0\.\d+ ± /);
  });

  it("strength 0: the unpenalized logistic fit with SE, z and p-value, residual and null deviance with their df", () => {
    const baseline = json(["batches.csv", "--target", "result", "--strength", "0"]);
    const b = baseline.baseline;
    expect(baseline.outcome).toBe("two-class");
    expect(b.separation).toBeNull();
    // z = estimate / SE (its definition); p two-sided normal, so between 0 and 1.
    for (const term of baseline.predictors as string[]) {
      expect(Math.abs(b.zValues[term] - baseline.coefficients[term] / b.standardErrors[term])).toBeLessThanOrEqual(1e-12 * Math.abs(b.zValues[term]) + 1e-300);
      expect(b.pValues[term]).toBeGreaterThanOrEqual(0);
      expect(b.pValues[term]).toBeLessThanOrEqual(1);
    }
    // Null deviance of an intercept-only model: −2 Σ [y log p̄ + (1 − y) log(1 − p̄)], p̄ the share of events (closed form, common practice).
    const n = baseline.rowsUsed;
    const share = baseline.classes.eventRows / n;
    const nullDeviance = -2 * (baseline.classes.eventRows * Math.log(share) + baseline.classes.otherRows * Math.log(1 - share));
    expect(Math.abs(b.nullDeviance / nullDeviance - 1)).toBeLessThanOrEqual(1e-10);
    expect(b.nullDegreesOfFreedom).toBe(n - 1);
    expect(b.degreesOfFreedom).toBe(n - 4);
    // The residual deviance is 2n × the in-sample log loss (deviance per row × rows: engine/classMetrics.ts).
    expect(Math.abs(b.deviance / (2 * n * baseline.classFit.logLoss) - 1)).toBeLessThanOrEqual(1e-9);
    const out = text(["batches.csv", "--target", "result", "--strength", "0"]);
    expect(out).toMatch(/term\s+log-odds of '\w+'\s+odds ratio\s+per SD\s+SE\s+z\s+p-value\n/);
    expect(out).toMatch(/Fixed point: unpenalized logistic fit \(strength 0\), 3 of 3 terms kept; no cross-validation/);
    expect(out).toMatch(new RegExp(`\\nUnpenalized logistic fit: residual deviance [\\d.]+ on ${n - 4} df \\(${n} rows − 4 coefficients\\), null deviance [\\d.]+ on ${n - 1} df\\n`));
  });

  it("strength 0 on separated classes prints the engine's separation message instead of standard errors", () => {
    const outcome = runCommand(["separated.csv", "--target", "y", "--strength", "0"], read);
    expect(outcome.exitCode).toBe(0);
    const parsed = JSON.parse(runCommand(["separated.csv", "--target", "y", "--strength", "0", "--json"], read).stdout);
    expect(parsed.baseline.separation).not.toBeNull();
    expect(outcome.stdout).toContain(`\nUnpenalized logistic fit: ${parsed.baseline.separation.message}`);
    expect(outcome.stdout).not.toMatch(/\bSE\s+z\s+p-value/);
    expect(outcome.stdout).toContain("The classes are separated: these unpenalized estimates have no finite value (see below).");
    // Said once in the readable report, and kept among the JSON's warnings.
    expect(outcome.stdout.split(parsed.baseline.separation.message)).toHaveLength(2);
    expect(parsed.warnings).toContain(parsed.baseline.separation.message);
  });
});
