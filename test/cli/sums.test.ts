/**
 * The command's sums route in process (runCommand with files held in memory): `--sums-out` saves
 * the sums table of the rows with the folds the fit uses, and `--sums` fits from it without the
 * data file. Source of the expected values: two routes agreeing (the file's fit and the saved
 * sums' fit use the same rows and folds; engine/fitSums.ts promises 1e-10 relative).
 */
import { readFileSync } from "fs";
import { join } from "path";
import { readInput, runCommand } from "../../engine/cli/fit";
import { parseSumsJSON } from "../../engine/sums";
import { vectorRelativeError } from "../helpers/numeric";

/** 120 roasts in time order: weight loss from bean temperature, drum speed and airflow; 4 green-coffee lots. */
function roastCsv(): string {
  const lines = ["lot,bean_temp,drum_rpm,airflow,weight_loss,bags"];
  for (let i = 0; i < 120; i++) {
    const temp = 205 + ((i * 37) % 23) * 0.7;
    const rpm = 48 + ((i * 11) % 9);
    const air = ((i * 7) % 13) / 4;
    const wobble = (((i * 53) % 19) - 9) / 40;
    const loss = 0.09 * temp - 0.04 * rpm + 0.6 * air - 3 + wobble;
    lines.push(`lot-${i % 4},${temp.toFixed(2)},${rpm},${air.toFixed(2)},${i === 17 ? "" : loss.toFixed(4)},${1 + (i % 3)}`);
  }
  return lines.join("\n") + "\n";
}

const files: Record<string, string> = {
  "roasts.csv": roastCsv(),
  "new.csv": "bean_temp,drum_rpm,airflow,bags\n210,50,1.5,1\n220,55,0.5,2\n",
  "checks.csv": "moisture,check\n10,pass\n11,fail\n9,pass\n12,fail\n10.5,pass\n11.5,fail\n9.5,pass\n12.5,fail\n",
};

function session(): { read: (file: string) => string; write: (file: string, text: string) => void; written: Record<string, string> } {
  const written: Record<string, string> = {};
  return {
    written,
    read: (file) => written[file] ?? (file in files ? files[file] : readInput(file)),
    write: (file, text) => {
      written[file] = text;
    },
  };
}

function json(stdout: string): { coefficients: Record<string, number>; intercept: number; rowsUsed: number; cv: { folds: number; scheme: string } | null; sums?: { blocks: number } } {
  return JSON.parse(stdout);
}

function expectFailure(argv: string[], message: RegExp, s = session()): void {
  const outcome = runCommand(argv, s.read, s.write);
  expect(outcome.exitCode).toBe(2);
  expect(outcome.stdout).toBe("");
  expect(outcome.stderr.trimEnd().split("\n")).toHaveLength(1);
  expect(outcome.stderr).toMatch(message);
}

describe("--sums-out then --sums gives the file's model", () => {
  const cases: [string, string[]][] = [
    ["fold column, weights", ["--fold-column", "lot", "--weights-column", "bags"]],
    ["random folds", ["--exclude", "lot", "--folds", "5", "--seed", "3"]],
    ["time-ordered folds", ["--exclude", "lot", "--time-ordered", "--folds", "3"]],
  ];
  it.each(cases)("%s", (_, extra) => {
    for (const out of ["sums.json", "sums.csv"]) {
      const s = session();
      const fromFile = runCommand(["roasts.csv", "--target", "weight_loss", "--mix", "0.5,1", "--json", "--sums-out", out, ...extra], s.read, s.write);
      expect(fromFile.stderr).toBe("");
      expect(fromFile.exitCode).toBe(0);
      expect(s.written[out]).toBeDefined();
      const fromSums = runCommand(["--sums", out, "--mix", "0.5,1", "--json"], s.read, s.write);
      expect(fromSums.stderr).toBe("");
      const a = json(fromFile.stdout);
      const b = json(fromSums.stdout);
      expect(b.rowsUsed).toBe(a.rowsUsed);
      expect(b.cv?.folds).toBe(a.cv?.folds);
      expect(b.cv?.scheme).toBe(extra.includes("--time-ordered") ? "time" : "labels");
      const names = Object.keys(a.coefficients);
      expect(vectorRelativeError(names.map((n) => b.coefficients[n]), names.map((n) => a.coefficients[n]))).toBeLessThanOrEqual(1e-10);
      expect(Math.abs(b.intercept - a.intercept)).toBeLessThanOrEqual(1e-9 * Math.abs(a.intercept) + 1e-12);
    }
  });

  it("records what the rows were and skipped (the blank target row)", () => {
    const s = session();
    runCommand(["roasts.csv", "--target", "weight_loss", "--fold-column", "lot", "--sums-out", "s.json"], s.read, s.write);
    const table = parseSumsJSON(s.written["s.json"]);
    expect(table.skippedRows).toBe(1);
    expect(table.blocks.map((b) => b.label)).toEqual(["lot-0", "lot-1", "lot-2", "lot-3"]);
    expect(table.blocking).toBe("one block per value of column 'lot'");
    expect(table.terms).toEqual(["bean_temp", "drum_rpm", "airflow", "bags"]);
    const report = runCommand(["--sums", "s.json"], s.read, s.write);
    expect(report.exitCode).toBe(0);
    expect(report.stdout).toMatch(/Cross-validation: 4 folds, the sums table's blocks \(one block per value of column 'lot'\)/);
    expect(report.stdout).toMatch(/Rows: 119 used, 1 skipped, as summed in s\.json/);
    expect(report.stdout).toMatch(/1 row with a blank cell was left out when the sums were computed/);
    expect(report.stdout).toMatch(/MAE n\/a/);
  });
});

describe("--sums fits other settings without the data", () => {
  it("merges blocks with --folds, takes --rule and a fixed strength, predicts new rows", () => {
    const s = session();
    runCommand(["roasts.csv", "--target", "weight_loss", "--exclude", "lot", "--folds", "8", "--sums-out", "s.json"], s.read, s.write);
    const merged = json(runCommand(["--sums", "s.json", "--folds", "4", "--rule", "one-se", "--json"], s.read, s.write).stdout);
    expect(merged.cv?.folds).toBe(4);
    expect(merged.sums?.blocks).toBe(8);
    const fixed = runCommand(["--sums", "s.json", "--strength", "0.01", "--mix", "1", "--target", "weight_loss"], s.read, s.write);
    expect(fixed.stdout).toMatch(/Fixed point: mix 1, strength λ 0.01/);
    const predicted = runCommand(["--sums", "s.json", "--predict", "new.csv"], s.read, s.write);
    expect(predicted.exitCode).toBe(0);
    expect(predicted.stdout.split("\n")[0]).toBe("bean_temp,drum_rpm,airflow,bags,prediction");
  });

  it("refuses what needs the rows, one line each", () => {
    const s = session();
    runCommand(["roasts.csv", "--target", "weight_loss", "--exclude", "lot", "--sums-out", "s.json"], s.read, s.write);
    expectFailure(["--sums", "s.json", "roasts.csv"], /--sums fits from a saved sums table, without a data file: leave out roasts.csv/, s);
    expectFailure(["--sums", "s.json", "--fold-column", "lot"], /--fold-column can't be used with --sums: the table's blocks are the folds/, s);
    expectFailure(["--sums", "s.json", "--honest"], /--honest can't be used with --sums: nested cross-validation refits on rows/, s);
    expectFailure(["--sums", "s.json", "--stability"], /--stability can't be used with --sums/, s);
    expectFailure(["--sums", "s.json", "--predict", "new.csv", "--interval", "0.9"], /--interval can't be used with --sums: CV\+ intervals need the held-out rows' residuals/, s);
    expectFailure(["--sums", "s.json", "--repeats", "3"], /--repeats can't be used with --sums/, s);
    expectFailure(["--sums", "s.json", "--outcome", "two-class"], /--outcome two-class can't be used with --sums/, s);
    expectFailure(["--sums", "s.json", "--error", "mae"], /mae can't be computed from sums/, s);
    expectFailure(["--sums", "s.json", "--target", "cup_score"], /--target cup_score doesn't match the sums table, whose target is 'weight_loss'/, s);
    expectFailure(["--sums", "s.json", "--folds", "20"], /folds is 20, but this sums table has 10 blocks/, s);
    expectFailure(["--sums", "missing.json"], /can't read missing.json: no such file/, s);
    s.written["v2.json"] = s.written["s.json"].replace('"version": 1', '"version": 2');
    expectFailure(["--sums", "v2.json"], /this sums table is version 2 and this Shrinkwise reads version 1/, s);
    s.written["bad.csv"] = "block,term_a,term_b,value\n*,#format,shrinkwise-sums,1\n";
    expectFailure(["--sums", "bad.csv"], /no \* \| #target row/, s);
    expectFailure(["checks.csv", "--target", "check", "--sums-out", "c.json"], /--sums-out saves sums for a number target/, s);
    expectFailure(["roasts.csv", "--target", "weight_loss", "--exclude", "lot", "--repeats", "3", "--sums-out", "c.json"], /--sums-out saves one deal of the folds/, s);
    expect(s.written["c.json"]).toBeUndefined();
  });
});

describe("--sums with --strength 0: least squares from the saved sums", () => {
  interface LeastSquaresJson {
    intercept: number;
    coefficients: Record<string, number>;
    strength: number;
    rowsUsed: number;
    cv: unknown;
    baseline: { standardErrors: Record<string, number | null>; interceptStandardError: number | null; residualStandardDeviation: number; degreesOfFreedom: number; r2: number; aliased: string[] };
    diagnostics: { solver: string };
  }
  it.each([
    ["no weights", ["--exclude", "lot,bags"]],
    ["weights", ["--exclude", "lot", "--weights-column", "bags"]],
  ])("%s: the same JSON as the file's --strength 0, estimates and standard errors to 1e-9 (two routes agreeing)", (_, extra) => {
    const s = session();
    runCommand(["roasts.csv", "--target", "weight_loss", "--folds", "4", "--sums-out", "s.json", ...extra], s.read, s.write);
    const fromFile = runCommand(["roasts.csv", "--target", "weight_loss", "--strength", "0", "--json", ...extra], s.read, s.write);
    const fromSums = runCommand(["--sums", "s.json", "--strength", "0", "--json"], s.read, s.write);
    expect([fromSums.exitCode, fromSums.stderr]).toEqual([0, ""]);
    const a = JSON.parse(fromSums.stdout) as LeastSquaresJson & Record<string, unknown>;
    const b = JSON.parse(fromFile.stdout) as LeastSquaresJson & Record<string, unknown>;
    // Same shape: the file's keys, and the sums' own note of where they came from.
    expect(Object.keys(a).sort()).toEqual([...Object.keys(b), "sums"].sort());
    expect(Object.keys(a.baseline).sort()).toEqual(Object.keys(b.baseline).sort());
    expect([a.strength, a.cv, a.diagnostics.solver]).toEqual([0, null, "least-squares"]);
    const names = Object.keys(b.coefficients);
    expect(vectorRelativeError(names.map((n) => a.coefficients[n]), names.map((n) => b.coefficients[n]))).toBeLessThanOrEqual(1e-9);
    expect(vectorRelativeError(names.map((n) => a.baseline.standardErrors[n] as number), names.map((n) => b.baseline.standardErrors[n] as number))).toBeLessThanOrEqual(1e-9);
    expect(Math.abs(a.intercept - b.intercept)).toBeLessThanOrEqual(1e-9 * Math.abs(b.intercept));
    expect(Math.abs(a.baseline.residualStandardDeviation / b.baseline.residualStandardDeviation - 1)).toBeLessThanOrEqual(1e-9);
    expect([a.baseline.degreesOfFreedom, a.baseline.aliased, a.rowsUsed]).toEqual([b.baseline.degreesOfFreedom, b.baseline.aliased, b.rowsUsed]);
    // The text report prints the least-squares line as for the file.
    const text = runCommand(["--sums", "s.json", "--strength", "0"], s.read, s.write).stdout;
    expect(text).toMatch(/\nLeast squares: residual SD [\d.]+, residual df 115 \(119 rows − 4 coefficients\)\n/);
  });

  it("the least-squares line counts the rows behind df: rows of weight 0 and the intercept (common practice: df = rows − coefficients)", () => {
    const s = session();
    // bags 0 on every 10th roast: 12 of the 119 rows used weigh 0.
    s.written["zeros.csv"] = files["roasts.csv"]
      .trimEnd()
      .split("\n")
      .map((line, i) => (i > 0 && (i - 1) % 10 === 0 ? line.replace(/,\d$/, ",0") : line))
      .join("\n");
    const weighted = runCommand(["zeros.csv", "--target", "weight_loss", "--exclude", "lot", "--weights-column", "bags", "--strength", "0"], s.read, s.write).stdout;
    expect(weighted).toMatch(/\nLeast squares: residual SD [\d.]+, residual df 103 \(107 rows of positive weight − 4 coefficients\)\n/);
    const plain = runCommand(["roasts.csv", "--target", "weight_loss", "--exclude", "lot,bags", "--strength", "0", "--no-intercept"], s.read, s.write).stdout;
    expect(plain).toMatch(/\nLeast squares: residual SD [\d.]+, residual df 116 \(119 rows − 3 coefficients\)\n/);
  });

  it("refuses what least squares from sums can't do, one line each", () => {
    const s = session();
    runCommand(["roasts.csv", "--target", "weight_loss", "--exclude", "lot", "--sums-out", "s.json"], s.read, s.write);
    expectFailure(["--sums", "s.json", "--strength", "0", "--mix", "0.5,1"], /^shrinkwise: a fixed strength is fitted at one mix, but 2 mixes were given: give a single mix$/m, s);
    expectFailure(["--sums", "s.json", "--strength", "0", "--error", "mae"], /mae can't be computed from sums/, s);
    expectFailure(["--sums", "s.json", "--strength", "0", "--predict", "new.csv", "--interval", "0.9"], /--interval can't be used with --sums/, s);
    expectFailure(["--sums", "s.json", "--strength", "0", "--stability"], /--stability can't be used with --sums/, s);
    expectFailure(["--sums", "s.json", "--strength", "-1"], /strength/, s);
  });
});

describe("the README's 'Fit from sums' commands", () => {
  it("run as stated on the demo roastery: the sums fit prints the file fit's model; --folds 5 merges the 10 blocks", () => {
    const readme = readFileSync(join(__dirname, "..", "..", "README.md"), "utf8");
    const start = readme.indexOf("### Fit from sums");
    const next = readme.slice(start + 1).search(/\n##/);
    const section = readme.slice(start, next < 0 ? undefined : start + 1 + next);
    const commands = section
      .split("\n")
      .filter((line) => line.startsWith("npm run fit -- "))
      .map((line) => line.slice("npm run fit -- ".length).trim().split(/\s+/));
    expect(commands).toHaveLength(3);
    const s = session();
    const outcomes = commands.map((argv) => runCommand([...argv, "--json"], s.read, s.write));
    outcomes.forEach((o) => expect(o.stderr).toBe(""));
    const [fromFile, fromSums, merged] = outcomes.map((o) => json(o.stdout));
    const names = Object.keys(fromFile.coefficients);
    expect(vectorRelativeError(names.map((n) => fromSums.coefficients[n]), names.map((n) => fromFile.coefficients[n]))).toBeLessThanOrEqual(1e-10);
    const table = parseSumsJSON(s.written["roastery-sums.json"]);
    expect(table.blocks).toHaveLength(10);
    expect(table.blocking).toBe("10 random folds (seed 1)");
    expect(table.blocks.map((b) => b.label)).toEqual(["1", "2", "3", "4", "5", "6", "7", "8", "9", "10"]);
    expect(merged.cv?.folds).toBe(5);
    expect((merged as unknown as { mix: number }).mix).toBe(1);
  });
});
