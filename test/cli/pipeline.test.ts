/**
 * The whole command in process (runCommand with files held in memory): exit codes and the
 * one-line messages for bad usage and bad input, including the engine's own messages.
 */
import { readInput, runCommand } from "../../engine/cli/fit";

/** 24 rows in time order: y = 0.5 + 1.2a − 0.7b + a small wobble. */
function timeSeries(): string {
  const lines = ["t,a,b,y"];
  for (let t = 1; t <= 24; t++) {
    const a = t / 3 + (t % 4);
    const b = (t * 7) % 5;
    lines.push(`${t},${a.toFixed(3)},${b},${(0.5 + 1.2 * a - 0.7 * b + 0.1 * Math.sin(t)).toFixed(4)}`);
  }
  return lines.join("\n");
}

/** The time series with column a × `aFactor` and y × `yFactor`, written as the file would hold them. */
function scaledSeries(aFactor: number, yFactor: number): string {
  const [header, ...rows] = timeSeries().split("\n");
  return [header, ...rows.map((line) => {
    const [t, a, b, y] = line.split(",").map(Number);
    return [t, a * aFactor, b, y * yFactor].map(String).join(",");
  })].join("\n");
}

const files: Record<string, string> = {
  "time.csv": timeSeries(),
  "huge-a.csv": scaledSeries(1e200, 1),
  "huge-y.csv": scaledSeries(1, 1e200),
  "status.csv": "a,b,status\n1,5,ok\n2,3,ok\n3,4,late\n4,1,ok\n5,2,late\n6,6,ok\n",
  "good.csv": "a,b,y,w,site\n1,5,3.1,1,n\n2,3,4.9,1,n\n3,4,7.2,2,s\n4,1,9.1,1,s\n5,2,10.8,1,e\n6,6,13.2,1,e\n",
  "constant.csv": "a,y\n1,5\n2,5\n3,5\n",
  "negative-weight.csv": "a,y,w\n1,2,1\n2,3,-1\n3,5,1\n",
};

function read(file: string): string {
  if (!(file in files)) return readInput(file);
  return files[file];
}

function expectFailure(argv: string[], message: string | RegExp): void {
  const outcome = runCommand(argv, read);
  expect(outcome.exitCode).toBe(2);
  expect(outcome.stdout).toBe("");
  expect(outcome.stderr.trimEnd().split("\n")).toHaveLength(1);
  if (typeof message === "string") expect(outcome.stderr).toBe(`shrinkwise: ${message}\n`);
  else expect(outcome.stderr).toMatch(message);
}

describe("runCommand", () => {

  it("--folds with --fold-column: a count other than the column's groups is refused (exact); the same count is fine", () => {
    expectFailure(
      ["good.csv", "--target", "y", "--fold-column", "site", "--folds", "10", "--mix", "1", "--count", "10"],
      "--folds 10 can't apply with --fold-column site: that column makes one fold per distinct value, and it has 3 ('n', 's', 'e'); leave --folds out",
    );
    expect(runCommand(["good.csv", "--target", "y", "--fold-column", "site", "--folds", "3", "--mix", "1", "--count", "10"], read).exitCode).toBe(0);
  });
  it("prints help with exit 0", () => {
    const outcome = runCommand(["--help"], read);
    expect(outcome.exitCode).toBe(0);
    expect(outcome.stdout).toMatch(/^Usage: npm run fit -- <data.csv> --target <column>/);
    for (const option of ["--mix", "--strength", "--folds", "--seed", "--rule", "--json", "--predictors", "--exclude", "--error", "--count", "--low-end", "--time-ordered", "--fold-column", "--weights-column", "--no-standardize", "--no-intercept"]) {
      expect(outcome.stdout).toContain(option);
    }
  });

  it("a predictor × 1e200 fits: its coefficient ÷ 1e200, the others as before (not 'constant')", () => {
    const json = (file: string): { coefficients: Record<string, number>; warnings: string[]; mix: number; strength: number } => {
      const outcome = runCommand([file, "--target", "y", "--exclude", "t", "--folds", "4", "--count", "30", "--json"], read);
      expect(outcome.exitCode).toBe(0);
      return JSON.parse(outcome.stdout);
    };
    const plain = json("time.csv");
    const huge = json("huge-a.csv");
    expect(huge.warnings).toEqual(plain.warnings);
    expect(huge.mix).toBe(plain.mix);
    // the unit-free contract (engine/fit.ts): a column × c moves its coefficient by 1/c; 1e-8 as in test/engine/extremes.test.ts
    expect(Math.abs((huge.coefficients.a * 1e200) / plain.coefficients.a - 1)).toBeLessThan(1e-8);
    expect(Math.abs(huge.coefficients.b / plain.coefficients.b - 1)).toBeLessThan(1e-8);
  });

  it("a target × 1e200 fits; a cross-validated MSE beyond the doubles is null in JSON with a warning", () => {
    const outcome = runCommand(["huge-y.csv", "--target", "y", "--exclude", "t", "--folds", "4", "--count", "30", "--json"], read);
    expect(outcome.exitCode).toBe(0);
    const parsed = JSON.parse(outcome.stdout);
    expect(parsed.cv.error).toBeNull();
    expect(parsed.warnings.join(" ")).toMatch(/cross-validated mean squared errors are above 1\.8e308/);
    expect(Number.isFinite(parsed.coefficients.a)).toBe(true);
  });

  it("fits with weights and fold labels from columns", () => {
    const outcome = runCommand(["good.csv", "--target", "y", "--weights-column", "w", "--fold-column", "site", "--mix", "1", "--count", "10", "--json"], read);
    expect(outcome.stderr).toBe("");
    expect(outcome.exitCode).toBe(0);
    const report = JSON.parse(outcome.stdout);
    expect(Object.keys(report.coefficients)).toEqual(["a", "b"]);
    expect(report.cv).toMatchObject({ scheme: "labels", folds: 3 });
  });

  it("fits time-ordered folds, mae, no intercept, no standardizing", () => {
    const outcome = runCommand(
      ["time.csv", "--target", "y", "--exclude", "t", "--time-ordered", "--folds", "3", "--measure", "mae", "--no-intercept", "--no-standardize", "--mix", "0", "--low-end", "0.01", "--count", "15", "--json"],
      read,
    );
    expect(outcome.stderr).toBe("");
    const report = JSON.parse(outcome.stdout);
    expect(report.cv).toMatchObject({ scheme: "time", measure: "mae", folds: 3, seed: null });
    expect(report.intercept).toBe(0);
    expect(report.diagnostics.strengthCount).toBe(15);
    expect(report.diagnostics.lowEndRatio).toBe(0.01);
  });

  it.each([
    [["good.csv", "--target", "y", "--exclude", "site", "--folds", "x"], "--folds needs a number; got 'x'"],
    [["good.csv", "--target", "y", "--exclude", "site", "--mix", "2"], /^shrinkwise: mix 2 is outside 0 to 1/],
    [["good.csv", "--target", "y", "--exclude", "site", "--mix", "0,1", "--strength", "0.1"], /^shrinkwise: a fixed strength is fitted at one mix, but 2 mixes were given/],
    [["good.csv", "--target", "y", "--exclude", "site", "--mix", "1", "--strength", "-1"], /^shrinkwise: strength -1 is not allowed/],
    [["good.csv", "--target", "y", "--exclude", "site", "--folds", "1"], /^shrinkwise: folds must be a whole number from 2 to 1000; got 1/],
    [["good.csv", "--target", "y", "--exclude", "site", "--count", "0"], /^shrinkwise: the number of strengths must be a whole number/],
    [["good.csv", "--target", "y", "--exclude", "site", "--low-end", "2"], /^shrinkwise: the low-end ratio must be between 0 and 1/],
    [["good.csv", "--target", "y", "--fold-column", "site", "--time-ordered"], "--fold-column and --time-ordered each say how rows make folds: give one"],
    [["good.csv", "--target", "z"], /^shrinkwise: the target 'z' is not a column of the file; the columns are 'a', 'b', 'y', 'w', 'site'/],
    [["good.csv", "--target", "y"], "column 'site' has text in data row 1 ('n'); leave the column out with --exclude site"],
    [["constant.csv", "--target", "y"], /^shrinkwise: the target has the same value \(5\) in every row/],
    [["negative-weight.csv", "--target", "y", "--weights-column", "w"], /^shrinkwise: weights row 2 is negative/],
    [["/definitely/not/here.csv", "--target", "y"], "can't read /definitely/not/here.csv: no such file"],
    [["good.csv", "--target", "y", "--unknown"], "unknown option --unknown"],
    [["good.csv"], /^shrinkwise: --target is missing/],
    // Yes/no flags on a target read as numbers (auto): the flag is named and the fix given.
    [["good.csv", "--target", "y", "--exclude", "site", "--event", "1"], "--event 1 applies to a yes/no target, and 'y' was read as numbers: leave it out, or give --outcome two-class if the column holds two classes"],
    [["good.csv", "--target", "y", "--exclude", "site", "--cutoff", "0.3"], "--cutoff 0.3 applies to a yes/no target, and 'y' was read as numbers: leave it out, or give --outcome two-class if the column holds two classes"],
    // A measure of the other outcome, once auto has read the target: the engine's words (engine/fit.ts checkMeasure).
    [["good.csv", "--target", "y", "--exclude", "site", "--error", "auc"], "the error measure auc is for yes/no (two-class) outcomes, and this target is a number: use mse or mae"],
    [["status.csv", "--target", "status", "--error", "mae"], "the error measure mae is for number outcomes, and this target is yes/no (two-class): use deviance, misclassified or auc"],
    [["good.csv", "--target", "site", "--exclude", "w"], /^shrinkwise: 'site' holds text \('n'\) among numbers: a number outcome needs numbers in every row; a yes\/no outcome needs exactly two distinct values/],
    [["status.csv", "--target", "status", "--event", "early"], "event 'early' is not one of 'status''s two values ('ok', 'late'): name one of them"],
  ])("exit 2 and one line for %j", (argv, message) => {
    expectFailure(argv, message);
  });
});
