/**
 * The command's outputs: the JSON object's shape and types (coefficients keyed by the file's
 * column names), the readable report, number formatting and the one-line failure messages.
 * Data are generated here (a fixed linear rule plus deterministic noise), so every run is the same.
 */
import { CommandError, parseArgs, toFitOptions } from "../../engine/cli/args";
import { errorWithSe, failureLine, finiteOrNull, formatNumber, jsonReport, jsonText, textReport } from "../../engine/cli/format";
import { FitTable, readFitTable } from "../../engine/cli/table";
import { InputError } from "../../engine/errors";
import { fit, FitResult } from "../../engine/fit";

/** 40 rows: y = 3 + 2·size − 1.5·age + 0·noise-column + small noise; one blank row. */
function sampleCsv(): string {
  let state = 12345;
  const next = (): number => {
    state = (state * 1103515245 + 12345) % 2147483648;
    return state / 2147483648;
  };
  const lines = ["size,age,extra,y"];
  for (let i = 0; i < 40; i++) {
    const size = 10 * next();
    const age = 5 * next();
    const extra = next();
    const y = 3 + 2 * size - 1.5 * age + 0.3 * (next() - 0.5);
    lines.push([size, age, extra, y].map((v) => v.toFixed(6)).join(","));
  }
  lines.push("1.0,2.0,0.5,");
  return lines.join("\n") + "\n";
}

function run(argv: string[]): { result: FitResult; table: FitTable } {
  const parsed = parseArgs(argv);
  if (parsed.help) throw new Error("unexpected help");
  const o = parsed.options;
  const table = readFitTable(sampleCsv(), { target: o.target, predictors: o.predictors, exclude: o.exclude });
  const result = fit(table.predictors, table.targetValues, toFitOptions(o, { names: table.predictorNames, weights: null, foldLabels: null }));
  return { result, table };
}

const isNumber = (value: unknown): boolean => typeof value === "number" && Number.isFinite(value);

describe("jsonReport with cross-validation", () => {
  const { result, table } = run(["data.csv", "--target", "y", "--mix", "0.5,1", "--count", "40", "--folds", "5", "--rule", "onese"]);
  const parsed = JSON.parse(jsonText(result, { table }));

  it("has the required keys with the right types", () => {
    expect(isNumber(parsed.intercept)).toBe(true);
    expect(isNumber(parsed.strength)).toBe(true);
    expect(isNumber(parsed.mix)).toBe(true);
    expect([0.5, 1]).toContain(parsed.mix);
    expect(parsed.rowsUsed).toBe(40);
    expect(parsed.rowsSkipped).toBe(1);
    expect(parsed.skippedRows).toEqual([41]);
    expect(parsed.rule).toBe("one-se");
    expect(typeof parsed.coefficients).toBe("object");
    expect(Array.isArray(parsed.warnings)).toBe(true);
    expect(parsed.warnings.every((w: unknown) => typeof w === "string")).toBe(true);
    expect(parsed.warnings[0]).toMatch(/^1 row with blank cells skipped \(data row 41; blanks by column: y 1\)/);
  });

  it("keys coefficients by the file's column names, in original units", () => {
    expect(Object.keys(parsed.coefficients)).toEqual(["size", "age", "extra"]);
    expect(Object.keys(parsed.standardizedCoefficients)).toEqual(["size", "age", "extra"]);
    expect(parsed.predictors).toEqual(["size", "age", "extra"]);
    expect(parsed.target).toBe("y");
    // The generating rule is 2·size − 1.5·age; shrinkage pulls toward 0, so only loose bounds.
    expect(parsed.coefficients.size).toBeGreaterThan(1.5);
    expect(parsed.coefficients.size).toBeLessThanOrEqual(2.05);
    expect(parsed.coefficients.age).toBeLessThan(-1);
    expect(parsed.coefficients).toEqual(Object.fromEntries(result.terms.map((t, j) => [t, result.coefficients[j]])));
  });

  it("takes cv from the chosen rule's point and reports both rules", () => {
    const point = result.choices!.oneSe;
    expect(parsed.cv).toEqual({
      mix: point.mix,
      strength: point.strength,
      strengthFraction: point.strengthFraction,
      error: point.error,
      se: point.se,
      termsKept: point.termsKept,
      rule: "one-se",
      measure: "mse",
      scheme: "random",
      folds: 5,
      seed: 1,
    });
    expect(parsed.strength).toBe(point.strength);
    expect(Object.keys(parsed.choices)).toEqual(["lowest", "oneSe"]);
    expect(parsed.choices.lowest.error).toBeLessThanOrEqual(parsed.choices.oneSe.error);
    expect(parsed.choices.oneSe.strength).toBeGreaterThanOrEqual(parsed.choices.lowest.strength);
  });

  it("includes in-sample scores, diagnostics and the saved model", () => {
    for (const key of ["r2", "rmse", "mae", "bias"]) expect(isNumber(parsed.fit[key])).toBe(true);
    expect(parsed.fit.r2).toBeGreaterThan(0.9);
    expect(typeof parsed.diagnostics.solver).toBe("string");
    expect(typeof parsed.diagnostics.converged).toBe("boolean");
    expect(parsed.diagnostics.strengthCount).toBe(40);
    // realised density (N − 1)/log10(1/low end) (engine/path.ts gridDensity, definition)
    expect(parsed.diagnostics.gridDensity).toBe(39 / Math.log10(1 / parsed.diagnostics.lowEndRatio));
    expect(parsed.model.kind).toBe("shrinkwise-linear-model");
    expect(parsed.model.terms).toEqual(["size", "age", "extra"]);
  });
});

describe("jsonReport for a fixed strength", () => {
  it("has cv and choices null and rule fixed", () => {
    const { result, table } = run(["data.csv", "--target", "y", "--strength", "0.01", "--mix", "1", "--predictors", "size,age"]);
    const parsed = JSON.parse(jsonText(result, { table }));
    expect(parsed.cv).toBeNull();
    expect(parsed.choices).toBeNull();
    expect(parsed.rule).toBe("fixed");
    expect(parsed.strength).toBe(0.01);
    expect(parsed.mix).toBe(1);
    expect(Object.keys(parsed.coefficients)).toEqual(["size", "age"]);
  });

  it("turns non-finite numbers into null so the JSON still parses", () => {
    const { result, table } = run(["data.csv", "--target", "y", "--strength", "0"]);
    const broken: FitResult = { ...result, intercept: NaN, coefficients: [Infinity, 1, -Infinity], fit: { ...result.fit, r2: NaN } };
    const report = jsonReport(broken, { table });
    expect(report.intercept).toBeNull();
    expect(report.coefficients).toEqual({ size: null, age: 1, extra: null });
    expect(report.fit.r2).toBeNull();
    expect(JSON.parse(jsonText(broken, { table })).coefficients.size).toBeNull();
    expect(finiteOrNull(-0.5)).toBe(-0.5);
  });

  it("keeps a column called __proto__ as an ordinary key", () => {
    const { result, table } = run(["data.csv", "--target", "y", "--strength", "0"]);
    const renamed: FitResult = { ...result, terms: ["__proto__", "age", "extra"] };
    const parsed = JSON.parse(jsonText(renamed, { table }));
    expect(Object.keys(parsed.coefficients)).toEqual(["__proto__", "age", "extra"]);
  });
});

describe("textReport", () => {
  it("shows the term table, the chosen point, both rules, in-sample scores, rows and warnings", () => {
    const { result, table } = run(["data.csv", "--target", "y", "--mix", "1", "--count", "30", "--low-end", "0.001", "--folds", "4"]);
    const text = textReport(result, { table });
    expect(text).toMatch(/^Shrinkwise fit of 'y' on 3 predictors\n/);
    expect(text).toMatch(/term\s+coefficient\s+per SD/);
    expect(text).toMatch(/\n {2}intercept\s+-?\d/);
    for (const term of ["size", "age", "extra"]) expect(text).toMatch(new RegExp(`\\n  ${term}\\s+-?\\d`));
    expect(text).toMatch(/Chosen point \(lowest error\): mix 1, strength λ /);
    expect(text).toMatch(/Cross-validation: 4 random folds \(seed 1\), scored by MSE/);
    // 29 steps over 3 tenfold drops: 9.667 per drop (engine/path.ts gridDensity, definition)
    expect(text).toMatch(/\nGrid: 30 strengths per mix \(9\.667 per tenfold drop\), from each mix's top down to 0\.001 of it\n/);
    // Sideways summary: one column per rule, the chosen one marked; rows mix, strength, error ± SE, terms kept.
    expect(text).toMatch(/\n\s+lowest error \(chosen\)\s+one-SE rule\n/);
    expect(text).toMatch(/\n {2}mix\s+1\s+1\n/);
    expect(text).toMatch(/\n {2}strength λ\s+\S+\s+\S+\n/);
    expect(text).toMatch(/\n {2}CV MSE ± SE\s+\d\S* ± \d\S*\s+\d\S* ± \d\S*\n/);
    expect(text).toMatch(/\n {2}terms kept\s+\d of 3\s+\d of 3\n/);
    for (const old of ["(intercept)", "nonzero", "onese", " min "]) expect(text).not.toContain(old);
    expect(text).toMatch(/In-sample: R² 0\.\d+, RMSE \d/);
    expect(text).toMatch(/Rows: 40 used, 1 skipped/);
    expect(text).toMatch(/Warnings:\n {2}- 1 row with blank cells skipped/);
  });

  it("names the least-squares point for strength 0", () => {
    const { result, table } = run(["data.csv", "--target", "y", "--strength", "0"]);
    const text = textReport(result, { table });
    expect(text).toMatch(/Fixed point: least squares \(strength 0\), 3 of 3 terms kept; no cross-validation/);
    expect(text).toMatch(/term\s+coefficient\s+per SD\s+LS SE\n/);
    // residual df = rows − coefficients (intercept + 3 terms): common practice.
    expect(text).toMatch(/\nLeast squares: residual SD [\d.]+, residual df 36 \(40 rows − 4 coefficients\)\n/);
    expect(text).not.toMatch(/degrees of freedom|std\. error/);
  });
});

describe("kept in folds (engine/keptShare.ts)", () => {
  it("JSON keptShare: column → the engine's kept and same-sign shares, recounted from the fold models", () => {
    const { result, table } = run(["data.csv", "--target", "y", "--mix", "1", "--count", "30", "--folds", "5"]);
    const parsed = JSON.parse(jsonText(result, { table }));
    expect(Object.keys(parsed.keptShare)).toEqual(["size", "age", "extra"]);
    const models = result.foldModels ?? [];
    expect(models.length).toBe(5);
    result.terms.forEach((term, j) => {
      const kept = models.filter((m) => m.coefficients[j] !== 0).length / models.length;
      const same = models.filter((m) => Math.sign(m.coefficients[j]) === Math.sign(result.coefficients[j])).length / models.length;
      expect(parsed.keptShare[term]).toEqual({ kept, sameSign: same });
    });
    // size and age carry the signal (true coefficients 2 and −1.5): kept by every fold.
    expect(parsed.keptShare.size).toEqual({ kept: 1, sameSign: 1 });
    expect(parsed.keptShare.age).toEqual({ kept: 1, sameSign: 1 });
    // The keys that were there before are unchanged.
    expect(parsed.coefficients.size).toBe(result.coefficients[0]);
  });

  it("text: two short columns of counts out of K; none without cross-validation", () => {
    const { result, table } = run(["data.csv", "--target", "y", "--mix", "1", "--count", "30", "--folds", "5"]);
    const text = textReport(result, { table });
    expect(text).toMatch(/term\s+coefficient\s+per SD\s+kept in folds\s+same sign\n/);
    expect(text).toMatch(/\n {2}size\s+\S+\s+\S+\s+5\/5\s+5\/5\n/);
    expect(text).toMatch(/how many of the 5 fold models at the chosen point keep the term/);
    const fixed = run(["data.csv", "--target", "y", "--mix", "1", "--strength", "0.1"]);
    expect(textReport(fixed.result, { table: fixed.table })).not.toMatch(/kept in folds/);
    expect(JSON.parse(jsonText(fixed.result, { table: fixed.table })).keptShare).toBeNull();
  });
});

describe("formatNumber", () => {
  it.each([
    [0, "0"],
    [1.23456789, "1.23457"],
    [-3482258.63459582, "-3482260"],
    [0.000012345678, "1.23457e-5"],
    [2e12, "2e+12"],
    [NaN, "n/a"],
    [Infinity, "n/a"],
  ])("formats %d as %s", (value, text) => {
    expect(formatNumber(value)).toBe(text);
  });
});

describe("failureLine", () => {
  it("gives exit 2 and one line for usage and input errors", () => {
    expect(failureLine(new CommandError("--folds needs a number; got 'x'"))).toEqual({
      exitCode: 2,
      line: "shrinkwise: --folds needs a number; got 'x'\n",
    });
    expect(failureLine(new InputError("shape", "predictors has 120 rows but target has 118"))).toEqual({
      exitCode: 2,
      line: "shrinkwise: predictors has 120 rows but target has 118\n",
    });
  });

  it("gives exit 1 for anything unexpected, still on one line without a stack", () => {
    const failure = failureLine(new RangeError("index out of range\n  at somewhere"));
    expect(failure.exitCode).toBe(1);
    expect(failure.line).toBe("shrinkwise: unexpected failure: index out of range at somewhere\n");
    expect(failureLine("plain text").exitCode).toBe(1);
  });
});

describe("errorWithSe", () => {
  // Rounding convention (common practice): the error to 3 significant digits, the SE to the same decimals.
  it.each([
    [0.5371, 0.0638, "0.537 ± 0.064"],
    [1234.5, 45.6, "1235 ± 46"],
    [2.5, 0, "2.50 ± 0.00"],
    [0.537, 0.0006, "0.53700 ± 0.00060"],
    [5e-7, 1e-8, "5e-7 ± 1e-8"],
  ])("writes %p ± %p as %p", (error, se, text) => {
    expect(errorWithSe(error, se)).toBe(text);
  });
});
