/**
 * End to end: the real command (`npx tsx engine/cli/fit.ts ...`) on small files written to the
 * system's temporary folder. Checks exit codes, that `--json` output parses, and that bad input
 * gives exit code 2 and a single `shrinkwise: ...` line on stderr with no stack trace.
 * The runs start together in beforeAll. Each start-up costs over a second of CPU, so the other
 * failure messages are checked in process (pipeline.test.ts) and Longley in longley.test.ts.
 */
import { spawn } from "child_process";
import { mkdtempSync, readFileSync, rmSync, writeFileSync } from "fs";
import { tmpdir } from "os";
import { join, resolve } from "path";

const ROOT = resolve(__dirname, "..", "..");

interface Outcome {
  status: number | null;
  stdout: string;
  stderr: string;
}

/** Runs the command through `npx tsx` (the default) or, with viaScript, as the README does: `npm run fit --`. */
function runCommand(args: string[], viaScript = false): Promise<Outcome> {
  return new Promise((done, fail) => {
    const launch = viaScript ? ["npm", ["run", "-s", "fit", "--", ...args]] as const : ["npx", ["tsx", "engine/cli/fit.ts", ...args]] as const;
    const child = spawn(launch[0], [...launch[1]], { cwd: ROOT, env: { ...process.env, NO_COLOR: "1" } });
    let stdout = "";
    let stderr = "";
    child.stdout.on("data", (chunk) => (stdout += chunk));
    child.stderr.on("data", (chunk) => (stderr += chunk));
    child.on("error", fail);
    child.on("close", (status) => done({ status, stdout, stderr }));
  });
}

/** 30 rows, comma-separated: y = 1 + 2a − b + noise, an id column and a text group column. */
function smallCsv(): string {
  const lines = ["id,a,b,group,y"];
  for (let i = 1; i <= 30; i++) {
    const a = (i * 7) % 11;
    const b = (i * 5) % 13;
    const noise = ((i * 37) % 17) / 17 - 0.5;
    lines.push(`${i},${a},${b},${i % 3 === 0 ? "north" : "south"},${(1 + 2 * a - b + noise).toFixed(4)}`);
  }
  return lines.join("\n") + "\n";
}

/** 40 batches: a yes/no target in words, failing more often at high moisture (text labels, read by readOutcome). */
function qualityCsv(): string {
  const lines = ["moisture,age,check"];
  for (let i = 1; i <= 40; i++) {
    const moisture = 9 + ((i * 7) % 13) / 4;
    const age = (i * 11) % 17;
    lines.push(`${moisture.toFixed(2)},${age},${(i * 5) % 9 < moisture - 9 ? "Fail" : "pass"}`);
  }
  return lines.join("\n") + "\n";
}

function expectOneLineFailure(outcome: Outcome, message: RegExp): void {
  expect(outcome.status).toBe(2);
  expect(outcome.stdout).toBe("");
  expect(outcome.stderr.endsWith("\n")).toBe(true);
  expect(outcome.stderr.trimEnd().split("\n")).toHaveLength(1);
  expect(outcome.stderr).toMatch(/^shrinkwise: /);
  expect(outcome.stderr).not.toMatch(/\n\s+at /);
  expect(outcome.stderr).toMatch(message);
}

describe("npx tsx engine/cli/fit.ts", () => {
  let folder = "";
  const outcomes: Record<string, Outcome> = {};

  beforeAll(async () => {
    folder = mkdtempSync(join(tmpdir(), "shrinkwise-cli-"));
    const csv = join(folder, "small.csv");
    const tsv = join(folder, "small.tsv");
    writeFileSync(csv, smallCsv());
    writeFileSync(tsv, smallCsv().replace(/,/g, "\t"));
    const quality = join(folder, "quality.csv");
    writeFileSync(quality, qualityCsv());
    const runs: Record<string, string[]> = {
      json: [csv, "--target", "y", "--exclude", "id", "--fold-column", "group", "--mix", "0.5,1", "--count", "20", "--json"],
      text: [tsv, "--target", "y", "--predictors", "a,b", "--folds", "5", "--seed", "7"],
      textColumn: [csv, "--target", "y", "--json"],
      missingFile: [join(folder, "nowhere.csv"), "--target", "y", "--json"],
      twoClass: [quality, "--target", "check", "--event", "fail", "--folds", "4", "--count", "20", "--mix", "1"],
      badOutcome: [quality, "--target", "check", "--outcome", "number"],
      predict: [csv, "--target", "y", "--predictors", "a,b", "--folds", "5", "--predict", csv, "--interval", "0.8", "--predictions-out", join(folder, "out.csv")],
      predictStdout: [csv, "--target", "y", "--predictors", "a,b", "--folds", "5", "--predict", csv],
      predictBadFolder: [csv, "--target", "y", "--predictors", "a,b", "--folds", "5", "--predict", csv, "--predictions-out", join(folder, "nowhere", "out.csv")],
    };
    // `npm run fit` starts the sources under tsx's require hook (package.json): the same output,
    // and DuckDB's module, loaded on demand, found by that route too.
    runs.scriptJson = runs.json;
    runs.scriptDuckdb = [csv, "--target", "y", "--predictors", "a,b", "--folds", "5", "--via", "duckdb", "--json"];
    const names = Object.keys(runs);
    const results = await Promise.all(names.map((name) => runCommand(runs[name], name.startsWith("script"))));
    names.forEach((name, k) => (outcomes[name] = results[k]));
  }, 60000);

  afterAll(() => {
    if (folder) rmSync(folder, { recursive: true, force: true });
  });

  it("--json with grouped folds: exit 0 and one parsable JSON object", () => {
    const outcome = outcomes.json;
    expect(outcome.stderr).toBe("");
    expect(outcome.status).toBe(0);
    const report = JSON.parse(outcome.stdout);
    expect(Object.keys(report.coefficients)).toEqual(["a", "b"]);
    expect(typeof report.intercept).toBe("number");
    expect(typeof report.strength).toBe("number");
    expect([0.5, 1]).toContain(report.mix);
    expect(report.cv).toMatchObject({ rule: "lowest", scheme: "labels", folds: 2 });
    expect(typeof report.cv.error).toBe("number");
    expect(typeof report.cv.se).toBe("number");
    expect(report.rowsUsed).toBe(30);
    expect(report.rowsSkipped).toBe(0);
  });

  it("`npm run fit --` (tsx's require hook) gives the same output as npx tsx, and reaches DuckDB", () => {
    expect(outcomes.scriptJson.stderr).toBe("");
    expect(outcomes.scriptJson.status).toBe(0);
    expect(outcomes.scriptJson.stdout).toBe(outcomes.json.stdout);
    const duck = outcomes.scriptDuckdb;
    expect(duck.stderr).toBe("");
    expect(duck.status).toBe(0);
    expect(Object.keys(JSON.parse(duck.stdout).coefficients)).toEqual(["a", "b"]);
  });

  it("readable report from a tab-separated file: exit 0", () => {
    const outcome = outcomes.text;
    expect(outcome.stderr).toBe("");
    expect(outcome.status).toBe(0);
    expect(outcome.stdout).toMatch(/term\s+coefficient\s+per SD/);
    expect(outcome.stdout).toMatch(/Cross-validation: 5 random folds \(seed 7\)/);
    expect(outcome.stdout).toMatch(/Rows: 30 used, 0 skipped/);
  });

  it("a text column: exit 2 and one line naming the column, row and value", () => {
    expectOneLineFailure(outcomes.textColumn, /^shrinkwise: column 'group' has text in data row 1 \('south'\); leave the column out with --exclude group\n$/);
  });

  it("a yes/no target in words with a named event (any case): exit 0, the report in log-odds with odds ratios and the table at the cutoff", () => {
    const outcome = outcomes.twoClass;
    expect(outcome.stderr).toBe("");
    expect(outcome.status).toBe(0);
    const fails = qualityCsv().split("\n").filter((line) => line.endsWith(",Fail")).length;
    expect(outcome.stdout).toContain(`Outcome: yes/no, event 'Fail' (${fails} of 40 rows; the other class is 'pass')`);
    expect(outcome.stdout).toMatch(/term\s+log-odds of 'Fail'\s+odds ratio\s+per SD/);
    expect(outcome.stdout).toMatch(/scored by deviance/);
    expect(outcome.stdout).toMatch(/events caught\s+\d+ events missed/);
  });

  it("two labels with --outcome number: exit 2 and readOutcome's one line", () => {
    expectOneLineFailure(outcomes.badOutcome, /^shrinkwise: 'check' holds two labels \('pass', 'Fail'\), not numbers: it is a yes\/no outcome/);
  });

  it("--predict with --predictions-out: the CSV in the file (interval columns included), the report on stdout", () => {
    const outcome = outcomes.predict;
    expect(outcome.stderr).toBe("");
    expect(outcome.status).toBe(0);
    expect(outcome.stdout).toMatch(/Rows: 30 used, 0 skipped/);
    const lines = readFileSync(join(folder, "out.csv"), "utf8").trimEnd().split("\n");
    expect(lines[0]).toBe("id,a,b,group,y,prediction,low (80%),high (80%)");
    expect(lines).toHaveLength(31);
  });

  it("--predict alone: the CSV on stdout, no report; an unwritable --predictions-out: exit 2, one line", () => {
    const outcome = outcomes.predictStdout;
    expect(outcome.status).toBe(0);
    expect(outcome.stdout.split("\n")[0]).toBe("id,a,b,group,y,prediction");
    expect(outcome.stdout).not.toMatch(/Rows:/);
    expectOneLineFailure(outcomes.predictBadFolder, /can't write .*out\.csv: no such folder/);
  });

  it("a missing file: exit 2 and one line", () => {
    expectOneLineFailure(outcomes.missingFile, /can't read .*nowhere\.csv: no such file/);
  });
});
