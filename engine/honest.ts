/**
 * Honest error of the whole procedure by nested cross-validation (Varma & Simon 2006, "Bias in
 * error estimation when using cross-validation for model selection", BMC Bioinformatics 7:91;
 * Hastie, Tibshirani & Friedman, The Elements of Statistical Learning, 2nd ed., §7.10.2).
 *
 * The cross-validated error at the chosen point is the one that chose it: the lowest of many
 * noisy estimates, so it is biased low (optimistic). Nested cross-validation assesses the
 * procedure instead: an outer split into K folds; on each outer training part the whole inner
 * procedure runs as the user set it (every mix, every strength, the folds dealt on those rows,
 * repeats, the rule) and picks its model; that model is scored on the outer held-out rows it
 * never saw, with the measure of the cross-validation curve (same functions, same units).
 * The honest error is the fold-weighted mean over the outer folds; its SE uses the formula of the
 * curve's SE (fit.ts summarise): sqrt([Σ W_k (e_k − mean)² / Σ W_k] · K/(K − 1) / K).
 *
 * Cost: K more whole fits on (K − 1)/K of the rows each. The inner fits run through the caller's
 * fit generator (`yield*`), so progress and cancel flow through them.
 */
import { InputError, type FitWarning } from "./errors";
import type { FoldPlan } from "./folds";
import { rowsOfBlocks } from "./folds";
import type { ColumnMatrix } from "./matrix";
import { selectRows } from "./matrix";
import { linearScore, logistic } from "./model";
import { areaUnderCurve, devianceFromScores, misclassifiedShare } from "./classMetrics";
import type { HonestError, HonestFold } from "./assurance";
import type { LinearModel } from "./model";
import type { CancelSignal } from "./errors";
import type { ErrorMeasure } from "./words";

/** Added to the fit's seed for the outer random split (a prime, so the outer deal differs from every repeat's deal seed … seed + 49). */
export const HONEST_SEED_OFFSET = 7919;

/** The outer split and the work it will take, known before any fit runs (the progress total). */
export interface HonestPlan {
  plan: FoldPlan;
  /** Units of work (fitSteps onProgress units) of the inner fit of each outer fold. */
  innerUnits: number[];
  /** Their sum. */
  units: number;
}

/**
 * What the nested run reads and sets of the fit's options (fit.ts FitOptions has these fields;
 * kept structural here so this module does not import fit.ts, which imports it).
 */
export interface InnerOptions {
  honestError?: boolean;
  stability?: object | null;
  weights?: ArrayLike<number> | null;
  foldLabels?: ArrayLike<number | string> | null;
  onProgress?: (done: number, total: number) => void;
  signal?: CancelSignal;
}

/** What the nested run reads of an inner fit's result (fit.ts FitResult has these fields). */
export interface InnerResult {
  model: LinearModel;
  mix: number;
  strength: number;
  rule: string;
  coefficients: number[];
  choices: { lowest: { termsKept: number }; oneSe: { termsKept: number } } | null;
}

export interface NestedInput<FitOptions extends InnerOptions = InnerOptions, FitResult extends InnerResult = InnerResult> {
  /** The data as given (data units), rows in the fit's order. */
  x: ColumnMatrix;
  y: Float64Array;
  weights: Float64Array | null;
  measure: ErrorMeasure;
  cutoff: number;
  /** The user's options: the inner procedure runs with them, minus honest error and stability. */
  options: FitOptions;
  honest: HonestPlan;
  /** The chosen point's cross-validated error on all rows. */
  optimistic: number;
  warnings: FitWarning[];
  /** Units of honest work done so far (0 … honest.units), monotone. */
  progress: (units: number) => void;
  fitSteps: (x: ColumnMatrix, y: ArrayLike<number>, options: FitOptions) => Generator<void, FitResult, void>;
}

/** Rows of `rows` with positive weight. */
function positive(rows: Int32Array, weights: Float64Array | null): Int32Array {
  return weights ? rows.filter((i) => weights[i] > 0) : rows;
}

/**
 * The measure of `model` on rows `rows` of the data (weighted), as the cross-validation curve
 * computes it: MSE or MAE in the target's units; deviance per row from the log-odds, the share
 * misclassified at the cutoff, or the AUC (NaN with one class among the rows).
 */
export function heldOutMeasure(
  result: InnerResult,
  x: ColumnMatrix,
  y: Float64Array,
  weights: Float64Array | null,
  rows: Int32Array,
  measure: ErrorMeasure,
  cutoff: number,
): { error: number; weight: number } {
  const held = selectRows(x, rows);
  const actual = Float64Array.from(rows, (i) => y[i]);
  const w = Float64Array.from(rows, (i) => (weights ? weights[i] : 1));
  let weight = 0;
  for (const v of w) weight += v;
  const scores = linearScore(result.model, held);
  let error: number;
  if (measure === "mse" || measure === "mae") {
    let loss = 0;
    for (let t = 0; t < rows.length; t++) {
      const e = actual[t] - scores[t];
      loss += w[t] * (measure === "mse" ? e * e : Math.abs(e));
    }
    error = loss / weight;
  } else if (measure === "deviance") {
    error = devianceFromScores(actual, scores, w);
  } else if (measure === "auc") {
    error = areaUnderCurve(actual, scores, w);
  } else {
    error = misclassifiedShare(actual, Float64Array.from(scores, logistic), cutoff, w);
  }
  return { error, weight };
}

function describeOuter(plan: FoldPlan, k: number): string {
  if (plan.scheme === "labels") return `outer fold '${plan.names[k]}' (the rows of the other fold labels)`;
  if (plan.scheme === "time") return `outer time block ${plan.names[k]} (the rows before it)`;
  return `outer fold ${plan.names[k]} (the rows of the other ${plan.trainBlocks.length - 1} outer folds)`;
}

/** What one outer fold reads (NestedInput without the fit-wide callbacks): a pool worker has these. */
export type OuterInput<FitOptions extends InnerOptions = InnerOptions> = Pick<NestedInput<FitOptions>, "x" | "y" | "weights" | "measure" | "cutoff" | "options" | "honest">;

/** The inner fit of outer fold k: its rows (data units) and options (the user's, minus honest error and stability, on those rows). */
export function outerFoldFit<FitOptions extends InnerOptions>(input: OuterInput<FitOptions>, k: number): { x: ColumnMatrix; y: Float64Array; options: FitOptions } {
  const { x, y, weights, options, honest } = input;
  const plan = honest.plan;
  const labels = options.foldLabels ?? null;
  const training = rowsOfBlocks(plan, plan.trainBlocks[k]);
  return {
    x: selectRows(x, training),
    y: Float64Array.from(training, (i) => y[i]),
    options: {
      ...options,
      honestError: false,
      stability: null,
      weights: weights ? Float64Array.from(training, (i) => weights[i]) : null,
      foldLabels: labels ? Array.from(training, (i) => labels[i]) : null,
      onProgress: undefined,
    },
  };
}

/** The InputError to give when outer fold k's inner fit could not run (its own error, said where). */
export function outerFoldError(plan: FoldPlan, k: number, error: InputError): InputError {
  const hint =
    plan.scheme === "labels"
      ? "give more fold labels (each outer training part must still hold enough labels for its own folds)"
      : plan.scheme === "time"
        ? "use fewer folds or more rows (the earliest outer blocks are short)"
        : "use fewer folds or more rows";
  return new InputError(
    error.code,
    `honest error (nested cross-validation) runs the whole procedure again on the training rows of each outer fold, and on ${describeOuter(plan, k)} it could not: ${error.message} — ${hint}, or turn honest error off`,
  );
}

/** Outer fold k's record: the inner fit's model scored on the outer held-out rows, and its choice. */
export function outerFoldRecord<FitOptions extends InnerOptions>(input: OuterInput<FitOptions>, k: number, inner: InnerResult): HonestFold {
  const { x, y, weights, measure, cutoff } = input;
  const plan = input.honest.plan;
  const scoredRows = positive(plan.blocks[plan.validateBlock[k]], weights);
  const { error, weight } = heldOutMeasure(inner, x, y, weights, scoredRows, measure, cutoff);
  const point = inner.choices ? (inner.rule === "one-se" ? inner.choices.oneSe : inner.choices.lowest) : null;
  return {
    weight,
    error,
    mix: inner.mix,
    strength: inner.strength,
    termsKept: point ? point.termsKept : inner.coefficients.filter((b) => b !== 0).length,
  };
}

/**
 * Runs the nested cross-validation (see the module comment). Yields with the inner fits. Outer
 * fold k is outerFoldFit → the inner fit → outerFoldRecord (fit.ts runs the same pieces as pool
 * tasks, one outer fold each), then honestSummary.
 */
export function* nestedCrossValidation<FitOptions extends InnerOptions, FitResult extends InnerResult>(
  input: NestedInput<FitOptions, FitResult>,
): Generator<void, HonestError, void> {
  const { honest } = input;
  const plan = honest.plan;
  const K = plan.trainBlocks.length;
  const perFold: HonestFold[] = [];
  let base = 0;
  let reported = 0;
  const report = (units: number): void => {
    if (units > reported) {
      reported = units;
      input.progress(units);
    }
  };
  for (let k = 0; k < K; k++) {
    const expected = honest.innerUnits[k];
    const fold = outerFoldFit(input, k);
    // The inner fit's units, mapped onto this fold's share of the total (they agree unless a
    // fold-label count differs from the estimate; the share keeps the bar monotone either way).
    fold.options.onProgress = (done, total) => report(base + Math.min(expected, Math.floor((done * expected) / total)));
    let inner: FitResult;
    try {
      inner = yield* input.fitSteps(fold.x, fold.y, fold.options);
    } catch (error) {
      if (!(error instanceof InputError)) throw error;
      throw outerFoldError(plan, k, error);
    }
    base += expected;
    report(base);
    perFold.push(outerFoldRecord(input, k, inner));
  }
  const result = honestSummary(input, perFold);
  report(honest.units);
  return result;
}

/** The honest error from every outer fold's record, in outer-fold order (AUC: folds without one are left out, with a warning). */
export function honestSummary(input: Pick<NestedInput, "measure" | "honest" | "optimistic" | "warnings">, perFold: HonestFold[]): HonestError {
  const { measure } = input;
  const K = input.honest.plan.trainBlocks.length;
  // AUC: an outer held-out part with one class has none; it is left out, as the curve does.
  const scored = perFold.filter((fold) => Number.isFinite(fold.error));
  if (measure === "auc" && scored.length < perFold.length) {
    if (scored.length < 2) {
      throw new InputError(
        "folds",
        `honest error by AUC compares events with non-events in each outer fold's held-out rows, and only ${scored.length} of the ${K} outer folds hold out both classes (at least 2 are needed): use fewer folds, or the deviance or the share misclassified`,
      );
    }
    input.warnings.push({
      code: "fold-constant",
      message: `${perFold.length - scored.length} of the ${K} outer folds of the honest error hold out rows of one class only, which have no AUC: the honest AUC and its standard error are over the other ${scored.length}`,
    });
  }
  const summary = foldSummary(
    scored.map((fold) => fold.error),
    scored.map((fold) => fold.weight),
  );
  if (!Number.isFinite(summary.error)) {
    input.warnings.push({
      code: "out-of-range",
      message: "the honest error can't be represented as a number in the target's units (it is left non-finite): record the target in other units (e.g. divide it by a power of ten)",
    });
  }
  return { measure, folds: K, error: summary.error, se: summary.se, optimistic: input.optimistic, perFold };
}

/**
 * Fold-weighted mean and standard error of per-fold errors: the formula of the cross-validation
 * curve (fit.ts summarise): mean = Σ W_k e_k / Σ W_k, SE = sqrt([Σ W_k (e_k − mean)² / Σ W_k] · K/(K − 1) / K).
 */
export function foldSummary(errors: readonly number[], weights: readonly number[]): { error: number; se: number } {
  const K = errors.length;
  let total = 0;
  for (const w of weights) total += w;
  let mean = 0;
  for (let f = 0; f < K; f++) mean += weights[f] * errors[f];
  mean /= total;
  let v = 0;
  for (let f = 0; f < K; f++) v += weights[f] * (errors[f] - mean) * (errors[f] - mean);
  v /= total;
  return { error: mean, se: K > 1 ? Math.sqrt((v * K) / (K - 1) / K) : 0 };
}
