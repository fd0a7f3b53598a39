/**
 * The command's two outputs from a FitResult: one JSON object (for automation) and a readable
 * report (for people). Pure: returns strings and plain objects, prints nothing.
 *
 * JSON numbers that are not finite (an R² of a constant prediction, say) become null, so the
 * output always parses.
 */
import { InputError } from "../errors";
import type { ChoicePoint, FitResult } from "../fit";
import type { LinearModel } from "../model";
import { CommandError } from "./args";
import type { FitTable } from "./table";
import { skippedRowsMessage } from "./table";
import { errorWithSe, RULE_WORDS, significant } from "../words";

export { errorWithSe, RULE_WORDS };

/** What the reports need besides the engine's result. */
export interface ReportContext {
  table: FitTable;
  /** Name of the fold-label column, when folds came from one. */
  foldColumn?: string | null;
}

export interface JsonChoice {
  mix: number | null;
  strength: number | null;
  strengthFraction: number | null;
  error: number | null;
  se: number | null;
  /** Terms with a nonzero coefficient at this point. */
  termsKept: number;
}

/** The JSON object printed by `--json`. Coefficient objects are keyed by the file's column names. */
export interface JsonReport {
  target: string;
  predictors: string[];
  intercept: number | null;
  coefficients: Record<string, number | null>;
  /**
   * Coefficient × the predictor's population SD: the change in the target, in the target's
   * units, per SD of the predictor (comparable across predictors; not the unit-free b̃).
   */
  standardizedCoefficients: Record<string, number | null>;
  /** Terms with a nonzero coefficient in the model. */
  termsKept: number;
  strength: number | null;
  strengthFraction: number | null;
  mix: number | null;
  rule: "lowest" | "one-se" | "fixed";
  /** The chosen cross-validation point, or null for a fixed strength. */
  cv: (JsonChoice & { rule: "lowest" | "one-se"; measure: string; scheme: string; folds: number; seed: number | null }) | null;
  /** Both rules' points (the model is the one named by `rule`), or null for a fixed strength. */
  choices: { lowest: JsonChoice; oneSe: JsonChoice } | null;
  /** In-sample accuracy of the model (weighted when weights are given). */
  fit: { r2: number | null; rmse: number | null; mae: number | null; bias: number | null };
  /** `--strength 0` only: standard errors (column → SE, null where aliased), residual SD, df, aliased columns. */
  baseline: {
    standardErrors: Record<string, number | null>;
    interceptStandardError: number | null;
    residualStandardDeviation: number | null;
    degreesOfFreedom: number;
    r2: number | null;
    aliased: string[];
  } | null;
  rowsUsed: number;
  rowsSkipped: number;
  /** 1-based data-row numbers of rows skipped for blank cells. */
  skippedRows: number[];
  constantColumns: string[];
  warnings: string[];
  diagnostics: {
    solver: string;
    updates: string;
    sweeps: number;
    converged: boolean;
    maxKktViolation: number | null;
    maxKktViolationAllFits: number | null;
    strengthCount: number;
    gridDensity: number | null;
    lowEndRatio: number | null;
    earlyStop: { index: number; strength: number | null; reason: string } | null;
  };
  /** The fitted model as the engine saves it (terms, intercept, coefficients). */
  model: LinearModel;
}

/** A finite number as is; NaN and ±Infinity as null. */
export function finiteOrNull(value: number): number | null {
  return Number.isFinite(value) ? value : null;
}

function byName(names: readonly string[], values: readonly number[]): Record<string, number | null> {
  // fromEntries makes own properties even for a column called "__proto__".
  return Object.fromEntries(names.map((name, j) => [name, finiteOrNull(values[j])]));
}

function choice(point: ChoicePoint): JsonChoice {
  return {
    mix: finiteOrNull(point.mix),
    strength: finiteOrNull(point.strength),
    strengthFraction: finiteOrNull(point.strengthFraction),
    error: finiteOrNull(point.error),
    se: finiteOrNull(point.se),
    termsKept: point.termsKept,
  };
}

/** Every warning as one message: the file's skipped rows first, then the engine's. */
export function warningMessages(result: FitResult, table: FitTable): string[] {
  const skipped = skippedRowsMessage(table);
  return [...(skipped ? [skipped] : []), ...result.warnings.map((w) => w.message)];
}

/** The object `--json` prints. */
export function jsonReport(result: FitResult, context: ReportContext): JsonReport {
  const { table } = context;
  let cv: JsonReport["cv"] = null;
  if (result.choices && result.cv && result.rule !== "fixed") {
    cv = {
      ...choice(result.rule === "lowest" ? result.choices.lowest : result.choices.oneSe),
      rule: result.rule,
      measure: result.cv.measure,
      scheme: result.cv.scheme,
      folds: result.cv.folds,
      seed: result.cv.seed,
    };
  }
  const d = result.diagnostics;
  return {
    target: table.target,
    predictors: result.terms.slice(),
    intercept: finiteOrNull(result.intercept),
    coefficients: byName(result.terms, result.coefficients),
    standardizedCoefficients: byName(result.terms, result.standardizedCoefficients),
    termsKept: result.coefficients.filter((b) => b !== 0).length,
    strength: finiteOrNull(result.strength),
    strengthFraction: finiteOrNull(result.strengthFraction),
    mix: finiteOrNull(result.mix),
    rule: result.rule,
    cv,
    choices: result.choices ? { lowest: choice(result.choices.lowest), oneSe: choice(result.choices.oneSe) } : null,
    fit: {
      r2: finiteOrNull(result.fit.r2),
      rmse: finiteOrNull(result.fit.rmse),
      mae: finiteOrNull(result.fit.mae),
      bias: finiteOrNull(result.fit.bias),
    },
    baseline: result.baseline
      ? {
          standardErrors: Object.fromEntries(result.terms.map((name, j) => [name, finiteOrNull(result.baseline?.standardErrors[j] ?? NaN)])),
          interceptStandardError: finiteOrNull(result.baseline.interceptStandardError ?? NaN),
          residualStandardDeviation: finiteOrNull(result.baseline.residualStandardDeviation),
          degreesOfFreedom: result.baseline.degreesOfFreedom,
          r2: finiteOrNull(result.baseline.r2),
          aliased: result.baseline.aliased.slice(),
        }
      : null,
    rowsUsed: result.rowsUsed,
    rowsSkipped: table.rowsSkipped,
    skippedRows: table.skippedRows.slice(),
    constantColumns: result.constantColumns.slice(),
    warnings: warningMessages(result, table),
    diagnostics: {
      solver: d.solver,
      updates: d.updates,
      sweeps: d.sweeps,
      converged: d.converged,
      maxKktViolation: finiteOrNull(d.maxKktViolation),
      maxKktViolationAllFits: finiteOrNull(d.maxKktViolationAllFits),
      strengthCount: d.strengthCount,
      gridDensity: finiteOrNull(d.gridDensity),
      lowEndRatio: finiteOrNull(d.lowEndRatio),
      earlyStop: d.earlyStop ? { index: d.earlyStop.index, strength: finiteOrNull(d.earlyStop.strength), reason: d.earlyStop.reason } : null,
    },
    model: {
      kind: result.model.kind,
      terms: result.model.terms.slice(),
      intercept: result.model.intercept,
      coefficients: result.model.coefficients.slice(),
    },
  };
}

/** `--json` output: the report as one line-terminated JSON text (indented for reading). */
export function jsonText(result: FitResult, context: ReportContext): string {
  return JSON.stringify(jsonReport(result, context), null, 2) + "\n";
}

/**
 * A number for people: 6 significant digits, exponent form when very large or very small,
 * "n/a" when not finite.
 */
export function formatNumber(value: number, digits = 6): string {
  return Number.isFinite(value) ? significant(value, digits) : "n/a";
}

/** Rows of cells as aligned columns: first column left-aligned, the others right-aligned. */
function columns(rows: string[][], indent = "  "): string[] {
  const widths: number[] = [];
  for (const row of rows) row.forEach((cell, c) => (widths[c] = Math.max(widths[c] ?? 0, [...cell].length)));
  return rows.map((row) =>
    (indent + row.map((cell, c) => (c === 0 ? cell.padEnd(widths[c]) : cell.padStart(widths[c]))).join("  ")).trimEnd(),
  );
}

function schemeText(result: FitResult, foldColumn: string | null | undefined): string {
  const cv = result.cv;
  if (!cv) return "";
  if (cv.scheme === "labels") return `${cv.folds} folds, one per value of '${foldColumn ?? "fold labels"}'`;
  if (cv.scheme === "time") return `${cv.folds} time-ordered folds`;
  return `${cv.folds} random folds (seed ${cv.seed})`;
}

/** The readable report printed without `--json`. */
export function textReport(result: FitResult, context: ReportContext): string {
  const { table } = context;
  const lines: string[] = [];
  const p = result.terms.length;
  lines.push(`Shrinkwise fit of '${table.target}' on ${p} predictor${p === 1 ? "" : "s"}`);
  lines.push("");
  const baseline = result.baseline;
  const seText = (value: number | null | undefined): string => (value === null || value === undefined ? "aliased" : formatNumber(value));
  const termRows: string[][] = [["term", "coefficient", "per SD", ...(baseline ? ["LS SE"] : [])]];
  termRows.push(["intercept", formatNumber(result.intercept), "", ...(baseline ? [seText(baseline.interceptStandardError)] : [])]);
  result.terms.forEach((term, j) => {
    termRows.push([
      term,
      formatNumber(result.coefficients[j]),
      formatNumber(result.standardizedCoefficients[j]),
      ...(baseline ? [seText(baseline.standardErrors[j])] : []),
    ]);
  });
  lines.push(...columns(termRows));
  lines.push("");
  const kept = result.coefficients.filter((b) => b !== 0).length;
  if (result.rule === "fixed") {
    const point =
      result.diagnostics.solver === "least-squares"
        ? "least squares (strength 0)"
        : `mix ${formatNumber(result.mix)}, strength λ ${formatNumber(result.strength)}`;
    lines.push(`Fixed point: ${point}, ${kept} of ${p} terms kept; no cross-validation`);
  } else {
    lines.push(
      `Chosen point (${RULE_WORDS[result.rule]}): mix ${formatNumber(result.mix)}, strength λ ${formatNumber(result.strength)}` +
        ` (${formatNumber(result.strengthFraction, 4)} of the grid's top), ${kept} of ${p} terms kept`,
    );
  }
  if (result.choices && result.cv) {
    const measure = result.cv.measure.toUpperCase();
    lines.push(`Cross-validation: ${schemeText(result, context.foldColumn)}, scored by ${measure}`);
    const d = result.diagnostics;
    lines.push(
      `Grid: ${d.strengthCount} strengths per mix (${formatNumber(d.gridDensity, 4)} per tenfold drop), from each mix's top down to ${formatNumber(d.lowEndRatio)} of it`,
    );
    // One column per rule, the chosen one marked in its heading.
    const rules = ["lowest", "one-se"] as const;
    const points = [result.choices.lowest, result.choices.oneSe];
    const rows: string[][] = [
      ["", ...rules.map((rule) => RULE_WORDS[rule] + (rule === result.rule ? " (chosen)" : ""))],
      ["mix", ...points.map((c) => formatNumber(c.mix))],
      ["strength λ", ...points.map((c) => formatNumber(c.strength))],
      [`CV ${measure} ± SE`, ...points.map((c) => errorWithSe(c.error, c.se))],
      ["terms kept", ...points.map((c) => `${c.termsKept} of ${p}`)],
    ];
    lines.push(...columns(rows));
  }
  if (baseline) {
    const coefficients = result.rowsUsed - baseline.degreesOfFreedom;
    lines.push(
      `Least squares: residual SD ${formatNumber(baseline.residualStandardDeviation, 4)}, residual df ${baseline.degreesOfFreedom}` +
        ` (${result.rowsUsed} rows − ${coefficients} coefficient${coefficients === 1 ? "" : "s"})`,
    );
  }
  const fit = result.fit;
  lines.push(`In-sample: R² ${formatNumber(fit.r2, 4)}, RMSE ${formatNumber(fit.rmse)}, MAE ${formatNumber(fit.mae)}`);
  lines.push(`Rows: ${result.rowsUsed} used, ${table.rowsSkipped} skipped`);
  const warnings = warningMessages(result, table);
  if (warnings.length > 0) {
    lines.push("Warnings:");
    for (const message of warnings) lines.push(`  - ${message}`);
  }
  return lines.join("\n") + "\n";
}

/**
 * The exit code and one-line stderr message for an error. Bad input or usage (a CommandError,
 * which includes an unreadable file, or the engine's InputError) is code 2; anything else is
 * unexpected, code 1.
 * Never a stack trace: the message only, on one line.
 */
export function failureLine(error: unknown): { exitCode: 1 | 2; line: string } {
  const message = error instanceof Error ? error.message : String(error);
  const oneLine = message.replace(/\s*[\r\n]+\s*/g, " ").trim();
  const expected = error instanceof CommandError || error instanceof InputError;
  return {
    exitCode: expected ? 2 : 1,
    line: `shrinkwise: ${expected ? "" : "unexpected failure: "}${oneLine}\n`,
  };
}
