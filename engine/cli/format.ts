/**
 * The command's two outputs from a FitResult: one JSON object (for automation) and a readable
 * report (for people). Pure: returns strings and plain objects, prints nothing.
 *
 * JSON numbers that are not finite (an R² of a constant prediction, say) become null, so the
 * output always parses.
 */
import Papa from "papaparse";
import type { HonestError, StabilityResult } from "../assurance";
import { InputError } from "../errors";
import { higherIsBetter, type ChoicePoint, type ErrorMeasure, type FitResult } from "../fit";
import type { TwoClassScore } from "../classMetrics";
import type { LinearModel } from "../model";
import { CommandError } from "./args";
import type { FitTable } from "./table";
import { skippedRowsMessage } from "./table";
import {
  bestPointLabel as bestPointWords,
  CANNOT_BE_SELECTED,
  errorWithSe,
  FALSE_SELECTION_LABEL,
  HONEST_LABEL,
  measureName as measureWords,
  measureWithDirection,
  NEVER_PENALIZED,
  RULE_WORDS,
  significant,
  stabilityBasisWords,
} from "../words";

export { errorWithSe, RULE_WORDS };

/** What the reports need besides the engine's result. */
export interface ReportContext {
  table: FitTable;
  /** Name of the fold-label column, when folds came from one. */
  foldColumn?: string | null;
  /** `--sums`: the sums table the fit came from (its file, how its rows were dealt into blocks, its block count, where it was computed). */
  sums?: { file: string; blocking: string; blocks: number; source: string | null } | null;
  /** Whether the model has an intercept (default true): the least-squares line counts it among the coefficients. */
  intercept?: boolean;
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

/** In-sample accuracy of a yes/no model's probabilities (engine/classMetrics.ts), non-finite values as null. */
export type JsonClassFit = { [K in keyof TwoClassScore]: number | null };

/** The JSON object printed by `--json`. Coefficient objects are keyed by the file's column names. */
export interface JsonReport {
  target: string;
  /** How the target was read: "number", or "two-class" (a yes/no target; coefficients are log-odds of the event). */
  outcome: "number" | "two-class";
  /** Yes/no target: the event's label (the class the model gives the probability of); null for a number target. */
  event: string | null;
  /** Yes/no target: both classes and their rows used; null for a number target. */
  classes: { event: string; other: string; eventRows: number; otherRows: number } | null;
  predictors: string[];
  intercept: number | null;
  coefficients: Record<string, number | null>;
  /**
   * Coefficient × the predictor's population SD: the change in the target, in the target's
   * units, per SD of the predictor (comparable across predictors; not the unit-free b̃).
   */
  standardizedCoefficients: Record<string, number | null>;
  /** Yes/no target: e^coefficient, the factor on the odds of the event per unit of the predictor; null for a number target. */
  oddsRatios: Record<string, number | null> | null;
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
  /** Yes/no target: in-sample log loss, Brier score, AUC and the table at the cutoff; null for a number target. */
  classFit: JsonClassFit | null;
  /**
   * `--strength 0` only: standard errors (column → SE, null where aliased), residual SD, df, aliased columns.
   * Yes/no target, in addition: z values and p-values (column → value), residual and null deviance
   * with the null model's df, and the separation found (null when none).
   */
  baseline: {
    standardErrors: Record<string, number | null>;
    interceptStandardError: number | null;
    residualStandardDeviation: number | null;
    degreesOfFreedom: number;
    r2: number | null;
    aliased: string[];
    zValues?: Record<string, number | null>;
    interceptZ?: number | null;
    pValues?: Record<string, number | null>;
    interceptP?: number | null;
    deviance?: number | null;
    nullDeviance?: number | null;
    nullDegreesOfFreedom?: number;
    separation?: { kind: "complete" | "quasi"; terms: string[]; message: string } | null;
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
    /** Yes/no target: steps the solver had to shorten (0 for a number target). */
    stepHalvings: number;
  };
  /** The fitted model as the engine saves it (terms, intercept, coefficients; link "logistic" for a yes/no target). */
  model: LinearModel;
  /**
   * With cross-validation: column → the share of the fold models at the chosen point that keep the
   * term (nonzero coefficient) and the share agreeing with the model's sign (for a term the model
   * drops: the share of folds dropping it too); see engine/keptShare.ts. Null for a fixed strength.
   */
  keptShare: Record<string, { kept: number; sameSign: number }> | null;
  /** Deals of the random folds the choice was made on (--repeats; 1 without it); 0 for a fixed strength (no cross-validation). */
  repeats: number;
  /** --honest: the nested cross-validation error of the whole procedure (engine/assurance.ts HonestError); null otherwise. */
  honest: {
    measure: string;
    folds: number;
    error: number | null;
    se: number | null;
    /** The chosen point's CV error: the one that chose the model, optimistic for it. */
    optimistic: number | null;
    perFold: { weight: number | null; error: number | null; mix: number | null; strength: number | null; termsKept: number }[];
  } | null;
  /**
   * --stability: stability selection at the chosen mix (engine/assurance.ts StabilityResult); terms
   * keyed by column name like keptShare; q is StabilityResult.expectedTerms. Null otherwise.
   */
  stability: {
    mix: number | null;
    draws: number;
    q: number;
    threshold: number;
    seed: number;
    candidates: number;
    falseSelectionBound: number | null;
    strengths: (number | null)[];
    averageSelected: (number | null)[];
    /** candidate: whether the term could be selected (false for never-penalized, constant or bound-held terms; counted in `candidates`). */
    terms: Record<string, { share: number | null; stable: boolean; candidate: boolean }>;
  } | null;
  /** --sums only (absent otherwise): the sums table fitted, how its rows were dealt into blocks, its block count and where it was computed. */
  sums?: { file: string; blocking: string; blocks: number; source: string | null };
}

/** A finite number as is; NaN and ±Infinity as null. */
export function finiteOrNull(value: number): number | null {
  return Number.isFinite(value) ? value : null;
}

function byName(names: readonly string[], values: readonly number[]): Record<string, number | null> {
  // fromEntries makes own properties even for a column called "__proto__".
  return Object.fromEntries(names.map((name, j) => [name, finiteOrNull(values[j])]));
}

function byNameOrNull(names: readonly string[], values: readonly (number | null)[]): Record<string, number | null> {
  return Object.fromEntries(names.map((name, j) => [name, finiteOrNull(values[j] ?? NaN)]));
}

/** Every field of a two-class score, non-finite values as null. */
function classFitJson(score: TwoClassScore): JsonClassFit {
  return Object.fromEntries(Object.entries(score).map(([key, value]) => [key, finiteOrNull(value as number)])) as JsonClassFit;
}

/** The baseline's two-class fields, present only when the engine gave them (a yes/no target). */
function baselineTwoClass(result: FitResult): Partial<NonNullable<JsonReport["baseline"]>> {
  const b = result.baseline;
  if (!b || result.outcome !== "two-class") return {};
  const out: Partial<NonNullable<JsonReport["baseline"]>> = {};
  if (b.zValues) out.zValues = byNameOrNull(result.terms, b.zValues);
  if (b.interceptZ !== undefined) out.interceptZ = finiteOrNull(b.interceptZ ?? NaN);
  if (b.pValues) out.pValues = byNameOrNull(result.terms, b.pValues);
  if (b.interceptP !== undefined) out.interceptP = finiteOrNull(b.interceptP ?? NaN);
  if (b.deviance !== undefined) out.deviance = finiteOrNull(b.deviance);
  if (b.nullDeviance !== undefined) out.nullDeviance = finiteOrNull(b.nullDeviance);
  if (b.nullDegreesOfFreedom !== undefined) out.nullDegreesOfFreedom = b.nullDegreesOfFreedom;
  if (b.separation !== undefined) out.separation = b.separation ? { kind: b.separation.kind, terms: b.separation.terms.slice(), message: b.separation.message } : null;
  return out;
}

/**
 * The odds ratio of a log-odds coefficient, e^b (display only; the model keeps b). Infinity past
 * e^709.78, which the outputs show as n/a (JSON null).
 */
export function oddsRatio(logOdds: number): number {
  return Math.exp(logOdds);
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
  const note = result.outcome === "two-class" ? (table.classes?.note ?? null) : null;
  return [...(skipped ? [skipped] : []), ...(note ? [note] : []), ...result.warnings.map((w) => w.message)];
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
  const twoClass = result.outcome === "two-class";
  const classes = twoClass && table.classes ? table.classes : null;
  const model: LinearModel = {
    kind: result.model.kind,
    terms: result.model.terms.slice(),
    intercept: result.model.intercept,
    coefficients: result.model.coefficients.slice(),
  };
  if (result.model.link && result.model.link !== "identity") model.link = result.model.link;
  return {
    target: table.target,
    outcome: twoClass ? "two-class" : "number",
    event: classes ? classes.event : null,
    classes: classes ? { event: classes.event, other: classes.other, eventRows: classes.eventRows, otherRows: classes.otherRows } : null,
    predictors: result.terms.slice(),
    intercept: finiteOrNull(result.intercept),
    coefficients: byName(result.terms, result.coefficients),
    standardizedCoefficients: byName(result.terms, result.standardizedCoefficients),
    oddsRatios: twoClass ? byName(result.terms, result.coefficients.map(oddsRatio)) : null,
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
    classFit: result.classFit ? classFitJson(result.classFit) : null,
    baseline: result.baseline
      ? {
          standardErrors: Object.fromEntries(result.terms.map((name, j) => [name, finiteOrNull(result.baseline?.standardErrors[j] ?? NaN)])),
          interceptStandardError: finiteOrNull(result.baseline.interceptStandardError ?? NaN),
          residualStandardDeviation: finiteOrNull(result.baseline.residualStandardDeviation),
          degreesOfFreedom: result.baseline.degreesOfFreedom,
          r2: finiteOrNull(result.baseline.r2),
          aliased: result.baseline.aliased.slice(),
          ...baselineTwoClass(result),
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
      stepHalvings: d.stepHalvings ?? 0,
    },
    model,
    keptShare: result.keptShare ? Object.fromEntries(result.keptShare.map((s) => [s.term, { kept: s.kept, sameSign: s.sameSign }])) : null,
    repeats: result.cv ? result.cv.repeats : 0,
    honest: result.honest ? honestJson(result.honest) : null,
    stability: result.stability ? stabilityJson(result.stability, result.terms) : null,
    // Only with --sums: where the numbers came from.
    ...(context.sums ? { sums: { file: context.sums.file, blocking: context.sums.blocking, blocks: context.sums.blocks, source: context.sums.source } } : {}),
  };
}

function honestJson(honest: HonestError): NonNullable<JsonReport["honest"]> {
  return {
    measure: honest.measure,
    folds: honest.folds,
    error: finiteOrNull(honest.error),
    se: finiteOrNull(honest.se),
    optimistic: finiteOrNull(honest.optimistic),
    perFold: honest.perFold.map((f) => ({
      weight: finiteOrNull(f.weight),
      error: finiteOrNull(f.error),
      mix: finiteOrNull(f.mix),
      strength: finiteOrNull(f.strength),
      termsKept: f.termsKept,
    })),
  };
}

function stabilityJson(s: StabilityResult, terms: readonly string[]): NonNullable<JsonReport["stability"]> {
  return {
    mix: finiteOrNull(s.mix),
    draws: s.draws,
    q: s.expectedTerms,
    threshold: s.threshold,
    seed: s.seed,
    candidates: s.candidates,
    falseSelectionBound: finiteOrNull(s.falseSelectionBound),
    strengths: s.strengths.map(finiteOrNull),
    averageSelected: s.averageSelected.map(finiteOrNull),
    terms: Object.fromEntries(terms.map((name, j) => [name, { share: finiteOrNull(s.share[j]), stable: s.stable[j], candidate: s.candidate ? s.candidate[j] : true }])),
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

/** Rows of cells as aligned columns: first column left-aligned, the others right-aligned (or all left-aligned, for words). */
function columns(rows: string[][], indent = "  ", allLeft = false): string[] {
  const widths: number[] = [];
  for (const row of rows) row.forEach((cell, c) => (widths[c] = Math.max(widths[c] ?? 0, [...cell].length)));
  return rows.map((row) =>
    (indent + row.map((cell, c) => (c === 0 || allLeft ? cell.padEnd(widths[c]) : cell.padStart(widths[c]))).join("  ")).trimEnd(),
  );
}

function schemeText(result: FitResult, foldColumn: string | null | undefined, sums?: ReportContext["sums"]): string {
  const cv = result.cv;
  if (!cv) return "";
  if (sums) {
    const merged = cv.folds < sums.blocks - (cv.scheme === "time" ? 1 : 0) ? `, merged from ${sums.blocks} blocks` : "";
    const how = sums.blocking ? ` (${sums.blocking})` : "";
    return cv.scheme === "time" ? `${cv.folds} time-ordered folds of the sums table's blocks${how}${merged}` : `${cv.folds} folds, the sums table's blocks${how}${merged}`;
  }
  if (cv.scheme === "labels") return `${cv.folds} folds, one per value of '${foldColumn ?? "fold labels"}'`;
  if (cv.scheme === "time") return `${cv.folds} time-ordered folds`;
  return `${cv.folds} random folds (seed ${cv.seed})`;
}

/**
 * A cross-validation measure named for people: MSE, MAE, deviance, misclassified share, AUC.
 * `withDirection` adds "(higher is better)" to the AUC, the one measure where it is.
 */
/** The point the "lowest" rule picks, in words: "lowest error", or "highest AUC" where higher is better. */
export function bestPointLabel(measure: ErrorMeasure | undefined): string {
  return measure === undefined ? RULE_WORDS.lowest : bestPointWords(measure);
}

export function measureName(measure: ErrorMeasure, withDirection = false): string {
  return withDirection ? measureWithDirection(measure) : measureWords(measure);
}

/** The readable report printed without `--json`. */
export function textReport(result: FitResult, context: ReportContext): string {
  const { table } = context;
  const lines: string[] = [];
  const p = result.terms.length;
  const twoClass = result.outcome === "two-class";
  const classes = twoClass ? table.classes : null;
  const event = classes ? `'${classes.event}'` : "the event";
  lines.push(`Shrinkwise fit of '${table.target}' on ${p} predictor${p === 1 ? "" : "s"}`);
  if (classes) {
    lines.push(
      `Outcome: yes/no, event ${event} (${classes.eventRows} of ${classes.eventRows + classes.otherRows} rows; the other class is '${classes.other}')`,
    );
  }
  lines.push("");
  const baseline = result.baseline;
  const separation = twoClass ? (baseline?.separation ?? null) : null;
  const seText = (value: number | null | undefined): string => (value === null || value === undefined ? "aliased" : formatNumber(value));
  const termRows: string[][] = [];
  if (twoClass) {
    // Standard errors, z and p exist only when the unpenalized estimates do (no separation).
    const tests = baseline !== null && separation === null;
    const orNa = (value: number | null | undefined): string => (value === null || value === undefined ? "n/a" : formatNumber(value, 4));
    termRows.push(["term", `log-odds of ${event}`, "odds ratio", "per SD", ...(tests ? ["SE", "z", "p-value"] : [])]);
    termRows.push([
      "intercept",
      formatNumber(result.intercept),
      "",
      "",
      ...(tests && baseline ? [seText(baseline.interceptStandardError), orNa(baseline.interceptZ), orNa(baseline.interceptP)] : []),
    ]);
    result.terms.forEach((term, j) => {
      termRows.push([
        term,
        formatNumber(result.coefficients[j]),
        formatNumber(oddsRatio(result.coefficients[j])),
        formatNumber(result.standardizedCoefficients[j]),
        ...(tests && baseline ? [seText(baseline.standardErrors[j]), orNa(baseline.zValues?.[j]), orNa(baseline.pValues?.[j])] : []),
      ]);
    });
  } else {
    termRows.push(["term", "coefficient", "per SD", ...(baseline ? ["LS SE"] : [])]);
    termRows.push(["intercept", formatNumber(result.intercept), "", ...(baseline ? [seText(baseline.interceptStandardError)] : [])]);
    result.terms.forEach((term, j) => {
      termRows.push([
        term,
        formatNumber(result.coefficients[j]),
        formatNumber(result.standardizedCoefficients[j]),
        ...(baseline ? [seText(baseline.standardErrors[j])] : []),
      ]);
    });
  }
  // With cross-validation: in how many of the K fold models each term is kept, and agrees in sign.
  const shares = result.keptShare;
  // With repeats the shares count every deal's fold models: r·K of them.
  const deals = result.cv?.repeats ?? 1;
  const K = (result.cv?.folds ?? 0) * deals;
  if (shares && K > 0) {
    const ofK = (share: number): string => `${Math.round(share * K)}/${K}`;
    termRows[0].push("kept in folds", "same sign");
    termRows[1].push("", "");
    shares.forEach((s, j) => termRows[j + 2].push(ofK(s.kept), ofK(s.sameSign)));
  }
  // With stability selection: each term's stable share over the half-samples, and whether it is stable.
  const stability = result.stability ?? null;
  if (stability) {
    termRows[0].push("stable share", "stable");
    termRows[1].push("", "");
    result.terms.forEach((_, j) => {
      const candidate = stability.candidate ? stability.candidate[j] : true;
      // A term that can't be selected: why, in place of a share (never penalized: in every model; constant or held at 0: in none).
      const share = candidate ? formatNumber(stability.share[j], 3) : stability.share[j] > 0 ? NEVER_PENALIZED : CANNOT_BE_SELECTED;
      termRows[j + 2].push(share, stability.stable[j] ? "yes" : "no");
    });
  }
  lines.push(...columns(termRows));
  if (shares && K > 0) {
    const models = deals > 1 ? `${K} fold models (${deals} deals × ${K / deals} folds)` : `${K} fold models`;
    lines.push(`  (kept in folds: how many of the ${models} at the chosen point keep the term; same sign: how many agree with its sign above)`);
  }
  if (stability) lines.push(...stabilityLines(stability));
  if (twoClass) {
    lines.push(
      `  (log-odds of ${event} per unit of each predictor; odds ratio = e^log-odds, what the odds`,
      "  are multiplied by per unit; per SD = log-odds per SD of the predictor)",
    );
    if (separation) lines.push("  The classes are separated: these unpenalized estimates have no finite value (see below).");
  }
  lines.push("");
  const kept = result.coefficients.filter((b) => b !== 0).length;
  if (result.rule === "fixed") {
    const point =
      twoClass && result.strength === 0
        ? "unpenalized logistic fit (strength 0)"
        : result.diagnostics.solver === "least-squares"
          ? "least squares (strength 0)"
          : `mix ${formatNumber(result.mix)}, strength λ ${formatNumber(result.strength)}`;
    lines.push(`Fixed point: ${point}, ${kept} of ${p} terms kept; no cross-validation`);
  } else {
    const ruleWords = (rule: "lowest" | "one-se"): string => (rule === "lowest" ? bestPointLabel(result.cv?.measure) : RULE_WORDS[rule]);
    lines.push(
      `Chosen point (${ruleWords(result.rule)}): mix ${formatNumber(result.mix)}, strength λ ${formatNumber(result.strength)}` +
        ` (${formatNumber(result.strengthFraction, 4)} of the grid's top), ${kept} of ${p} terms kept`,
    );
  }
  if (result.choices && result.cv) {
    lines.push(`Cross-validation: ${schemeText(result, context.foldColumn, context.sums)}, scored by ${measureName(result.cv.measure, true)}`);
    const d = result.diagnostics;
    lines.push(
      `Grid: ${d.strengthCount} strengths per mix (${formatNumber(d.gridDensity, 4)} per tenfold drop), from each mix's top down to ${formatNumber(d.lowEndRatio)} of it`,
    );
    // One column per rule, the chosen one marked in its heading.
    const rules = ["lowest", "one-se"] as const;
    const points = [result.choices.lowest, result.choices.oneSe];
    const rows: string[][] = [
      ["", ...rules.map((rule) => (rule === "lowest" ? bestPointLabel(result.cv?.measure) : RULE_WORDS[rule]) + (rule === result.rule ? " (chosen)" : ""))],
      ["mix", ...points.map((c) => formatNumber(c.mix))],
      ["strength λ", ...points.map((c) => formatNumber(c.strength))],
      [`CV ${measureName(result.cv.measure)} ± SE${higherIsBetter(result.cv.measure) ? " (higher is better)" : ""}`, ...points.map((c) => errorWithSe(c.error, c.se))],
      ["terms kept", ...points.map((c) => `${c.termsKept} of ${p}`)],
    ];
    lines.push(...columns(rows));
    lines.push(repeatsLine(result.cv.repeats, result.cv.seed));
  }
  if (result.honest) lines.push(...honestLines(result.honest, p, table.weights !== null));
  if (baseline && twoClass) {
    if (separation) {
      lines.push(`Unpenalized logistic fit: ${separation.message}`);
    } else {
      const coefficients = result.rowsUsed - baseline.degreesOfFreedom;
      lines.push(
        `Unpenalized logistic fit: residual deviance ${formatNumber(baseline.deviance ?? NaN)} on ${baseline.degreesOfFreedom} df` +
          ` (${result.rowsUsed} rows − ${coefficients} coefficient${coefficients === 1 ? "" : "s"}),` +
          ` null deviance ${formatNumber(baseline.nullDeviance ?? NaN)} on ${baseline.nullDegreesOfFreedom ?? "n/a"} df`,
      );
    }
  } else if (baseline) {
    // df = rows counted − coefficients (terms kept, and the intercept): the rows counted are those
    // of positive weight (from sums: the table's rows, less its blocks of weight 0), which with
    // weights of 0 are fewer than the rows used.
    const coefficients = p - baseline.aliased.length + (context.intercept === false ? 0 : 1);
    const counted = baseline.degreesOfFreedom + coefficients;
    const rows = counted === result.rowsUsed ? `${counted} rows` : `${counted} rows of positive weight`;
    lines.push(
      `Least squares: residual SD ${formatNumber(baseline.residualStandardDeviation, 4)}, residual df ${baseline.degreesOfFreedom}` +
        ` (${rows} − ${coefficients} coefficient${coefficients === 1 ? "" : "s"})`,
    );
  }
  if (twoClass && result.classFit) {
    lines.push(...classFitLines(result.classFit, classes));
  } else {
    const fit = result.fit;
    lines.push(`In-sample: R² ${formatNumber(fit.r2, 4)}, RMSE ${formatNumber(fit.rmse)}, MAE ${formatNumber(fit.mae)}`);
  }
  if (context.sums) {
    lines.push(`Rows: ${result.rowsUsed} used, ${table.rowsSkipped} skipped, as summed in ${context.sums.file}${context.sums.source ? ` (${context.sums.source})` : ""}; MAE needs the rows`);
  } else {
    lines.push(`Rows: ${result.rowsUsed} used, ${table.rowsSkipped} skipped`);
  }
  // The separation message is printed with the baseline above: not again among the warnings.
  const warnings = warningMessages(result, table).filter((message) => message !== separation?.message);
  if (warnings.length > 0) {
    lines.push("Warnings:");
    for (const message of warnings) lines.push(`  - ${message}`);
  }
  return lines.join("\n") + "\n";
}

/** The repeats of the fold deal in one line. */
export function repeatsLine(repeats: number, seed: number | null): string {
  if (repeats <= 1) return "Repeats: 1 deal of the folds";
  const seeds = seed === null ? "" : ` (seeds ${seed} to ${seed + repeats - 1})`;
  return `Repeats: ${repeats} deals of the folds${seeds}; the choice used the curve averaged over them: each CV error above is the mean over all ${repeats} deals' held-out folds, its SE the average of the deals' own SEs`;
}

/**
 * The stability selection's explanation and the bound (Meinshausen & Bühlmann 2010, JRSS-B 72(4),
 * Theorem 1; complementary pairs: Shah & Samworth 2013, JRSS-B 75(1)).
 */
export function stabilityLines(s: StabilityResult): string[] {
  const stable = s.stable.filter(Boolean).length;
  return [
    `  (stable share: the highest share of the ${2 * s.draws} half-sample fits that select the term, over the ${s.strengths.length} strengths where ` +
      `at most ${s.expectedTerms} terms are selected on average; stable: share ${formatNumber(s.threshold)} or more; ${stable} stable)`,
    `Stability selection: ${FALSE_SELECTION_LABEL} ${formatNumber(s.falseSelectionBound, 4)} (q²/((2π − 1)·p) with ${stabilityBasisWords(s)})`,
  ];
}

/** The honest (nested cross-validation) error of the whole procedure, beside the optimistic one, and its outer folds. */
export function honestLines(h: HonestError, p: number, weighted = false): string[] {
  const name = measureName(h.measure as ErrorMeasure, true);
  const rows: string[][] = [["outer fold", weighted ? "weight scored" : "rows scored", measureName(h.measure as ErrorMeasure), "mix", "strength λ", "terms kept"]];
  h.perFold.forEach((f, k) => {
    rows.push([String(k + 1), formatNumber(f.weight), formatNumber(f.error), formatNumber(f.mix), formatNumber(f.strength), `${f.termsKept} of ${p}`]);
  });
  return [
    `${HONEST_LABEL[0].toUpperCase()}${HONEST_LABEL.slice(1)}, by nested cross-validation over ${h.folds} outer folds: ${name} ${errorWithSe(h.error, h.se)}`,
    `  The chosen point's CV ${measureName(h.measure as ErrorMeasure)} (${formatNumber(h.optimistic)}) is the one that chose the model, so it is optimistic for it;`,
    "  the honest error reruns the whole choice (every mix, every strength and the rule) on each outer training part and scores it on the held-out part.",
    ...columns(rows),
  ];
}

/**
 * The predictions CSV of `--predict`: the new file's columns as read, then `prediction` (a yes/no
 * model: the probability of the event, then `class`, the event's or the other label at the
 * cutoff), then with an interval level `low (90%)` and `high (90%)`. Numbers at full precision;
 * an unbounded interval end (too few training rows for the level) reads -Infinity / Infinity.
 */
export function predictionsCsv(
  table: { columns: readonly string[]; rows: readonly (readonly string[])[] },
  predictions: ArrayLike<number>,
  extra: { classes?: { event: string; other: string; cutoff: number } | null; interval?: { level: number; low: ArrayLike<number>; high: ArrayLike<number> } | null } = {},
): string {
  // An interval with too few training rows for its level is unbounded: written Infinity / -Infinity
  // (JavaScript's Number reads them back); NaN never reaches here (the engine refuses it).
  const number = (value: number): string => (Number.isNaN(value) ? "" : String(value));
  const header = [...table.columns, "prediction"];
  const classes = extra.classes ?? null;
  const interval = extra.interval ?? null;
  if (classes) header.push("class");
  if (interval) {
    const level = `${significant(interval.level * 100, 6)}%`;
    header.push(`low (${level})`, `high (${level})`);
  }
  const rows = table.rows.map((row, i) => {
    const out = [...row, number(predictions[i])];
    if (classes) out.push(predictions[i] >= classes.cutoff ? classes.event : classes.other);
    if (interval) out.push(number(interval.low[i]), number(interval.high[i]));
    return out;
  });
  return Papa.unparse({ fields: header, data: rows }, { newline: "\n" }) + "\n";
}

/**
 * The in-sample block of a yes/no model: log loss, Brier score and AUC, then the 2×2 table at
 * the cutoff in words (events caught, events missed, false alarms, correct all-clear) with
 * accuracy, sensitivity and specificity. Counts are sums of weights when weights are given.
 */
export function classFitLines(score: TwoClassScore, classes: FitTable["classes"]): string[] {
  const event = classes ? `'${classes.event}'` : "the event";
  const other = classes ? `'${classes.other}'` : "the other class";
  const count = (value: number): string => formatNumber(value);
  const rows: string[][] = [
    ["", `flagged ${event}`, "not flagged"],
    [`${event} (${count(score.eventsCaught + score.eventsMissed)} rows)`, `${count(score.eventsCaught)} events caught`, `${count(score.eventsMissed)} events missed`],
    [`${other} (${count(score.falseAlarms + score.correctAllClear)} rows)`, `${count(score.falseAlarms)} false alarms`, `${count(score.correctAllClear)} correct all-clear`],
  ];
  return [
    `In-sample: log loss ${formatNumber(score.logLoss, 4)}, Brier ${formatNumber(score.brier, 4)}, AUC ${formatNumber(score.auc, 4)}`,
    `At cutoff ${formatNumber(score.cutoff)} (a row is flagged as ${event} when its probability is ${formatNumber(score.cutoff)} or more):`,
    ...columns(rows, "  ", true),
    `  accuracy ${formatNumber(score.accuracy, 4)}, sensitivity ${formatNumber(score.sensitivity, 4)} (share of events caught), specificity ${formatNumber(score.specificity, 4)} (share of the other class cleared)`,
  ];
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
