/**
 * `--strength 0` is the exact least-squares baseline: on NIST's Longley data the command's
 * pipeline (arguments → table → fit → JSON, and runCommand as a whole) reproduces the
 * certified coefficients.
 *
 * Fixture: test/fixtures/longley_nist.tsv, NIST Statistical Reference Datasets, linear
 * regression, "Longley" (higher difficulty), 16 rows, columns y, x1..x6.
 */
import { readFileSync } from "fs";
import { join } from "path";
import { parseArgs, toFitOptions } from "../../engine/cli/args";
import { runCommand } from "../../engine/cli/fit";
import { jsonText } from "../../engine/cli/format";
import { readFitTable } from "../../engine/cli/table";
import { fit } from "../../engine/fit";

// certified value, NIST StRD Longley (B0 intercept, B1..B6 for x1..x6)
const CERTIFIED_INTERCEPT = -3482258.63459582;
const CERTIFIED: Record<string, number> = {
  x1: 15.0618722713733,
  x2: -0.035819179292591,
  x3: -2.02022980381683,
  x4: -1.03322686717359,
  x5: -0.0511041056535807,
  x6: 1829.15146461355,
};
// certified value, NIST StRD Longley
const CERTIFIED_R2 = 0.995479004577296;
// certified values, NIST StRD Longley: standard deviations of the estimates and residual SD
const CERTIFIED_INTERCEPT_SE = 890420.383607373;
const CERTIFIED_SE: Record<string, number> = {
  x1: 84.9149257747669,
  x2: 0.0334910077722432,
  x3: 0.488399681651699,
  x4: 0.214274163161675,
  x5: 0.22607320006937,
  x6: 455.478499142212,
};
const CERTIFIED_RESIDUAL_SD = 304.854073561965;

/** |actual − expected| / |expected|. */
function relativeError(actual: number, expected: number): number {
  return Math.abs(actual - expected) / Math.abs(expected);
}

// 1e-8 relative: the baseline reaches 12+ digits; 8 leaves room for platform differences
// while still catching any shrinkage (a penalty of any size moves these by far more).
const TOLERANCE = 1e-8;

describe("--strength 0 on NIST Longley", () => {
  const file = join(__dirname, "..", "fixtures", "longley_nist.tsv");
  const parsed = parseArgs([file, "--target", "y", "--strength", "0", "--json"]);
  if (parsed.help) throw new Error("unexpected help");
  const options = parsed.options;
  const table = readFitTable(readFileSync(file, "utf8"), { target: options.target });
  const result = fit(table.predictors, table.targetValues, toFitOptions(options, { names: table.predictorNames, weights: null, foldLabels: null }));
  const report = JSON.parse(jsonText(result, { table }));

  it("gives the same output through runCommand, reading the file itself", () => {
    const outcome = runCommand([file, "--target", "y", "--strength", "0", "--json"]);
    expect(outcome.exitCode).toBe(0);
    expect(outcome.stderr).toBe("");
    expect(JSON.parse(outcome.stdout)).toEqual(report);
  });

  it("reads the tab-separated file: y is the target, x1..x6 the predictors, 16 rows", () => {
    expect(table.predictorNames).toEqual(["x1", "x2", "x3", "x4", "x5", "x6"]);
    expect(report.rowsUsed).toBe(16);
    expect(report.rowsSkipped).toBe(0);
  });

  it("reproduces the certified intercept and coefficients to 1e-8 relative", () => {
    expect(relativeError(report.intercept, CERTIFIED_INTERCEPT)).toBeLessThan(TOLERANCE);
    expect(Object.keys(report.coefficients)).toEqual(Object.keys(CERTIFIED));
    for (const [name, certified] of Object.entries(CERTIFIED)) {
      const error = relativeError(report.coefficients[name], certified);
      if (!(error < TOLERANCE)) throw new Error(`${name}: ${report.coefficients[name]} vs certified ${certified}, relative error ${error}`);
    }
  });

  it("reports the certified R² in-sample, no cross-validation, and the least-squares solver", () => {
    expect(relativeError(report.fit.r2, CERTIFIED_R2)).toBeLessThan(TOLERANCE);
    expect(report.cv).toBeNull();
    expect(report.strength).toBe(0);
    expect(report.rule).toBe("fixed");
    expect(report.diagnostics.solver).toBe("least-squares");
  });

  it("reports the certified standard errors, residual SD and 9 degrees of freedom (NIST StRD Longley)", () => {
    expect(relativeError(report.baseline.interceptStandardError, CERTIFIED_INTERCEPT_SE)).toBeLessThan(TOLERANCE);
    for (const [name, certified] of Object.entries(CERTIFIED_SE)) {
      const error = relativeError(report.baseline.standardErrors[name], certified);
      if (!(error < TOLERANCE)) throw new Error(`${name}: SE ${report.baseline.standardErrors[name]} vs certified ${certified}`);
    }
    expect(relativeError(report.baseline.residualStandardDeviation, CERTIFIED_RESIDUAL_SD)).toBeLessThan(TOLERANCE);
    expect(report.baseline.degreesOfFreedom).toBe(9);
    expect(report.baseline.aliased).toEqual([]);
  });
});
