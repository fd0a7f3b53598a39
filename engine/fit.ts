/**
 * The engine's main entry point: cross-validated elastic-net regression over a grid of
 * strengths (and optionally several mixes), or a single fixed point.
 *
 * Objective, for a mix α in [0, 1] and strength λ >= 0 (conventions in problem.ts):
 *
 *   (1 / (2 Σw)) Σ_i w_i (ỹ_i − x̃_i·b̃)²  +  λ Σ_j m_j [ α |b̃_j| + (1 − α)/2 · b̃_j² ]
 *
 * on the standardized target ỹ = (y − ȳ)/s_y (s_y its weighted population SD) and standardized
 * predictors x̃_j = (x_j − x̄_j)/scale_j, so λ is unit-free: the target or a predictor recorded in
 * other units gives the same model. Results are reported in the data's own units
 * (b_j = s_y · b̃_j / scale_j, b0 = ȳ − Σ b_j x̄_j). In the target's units (loss on y, coefficients
 * β_j = s_y · b̃_j on standardized predictors) the same minimizer has lasso weight λ·s_y and ridge
 * weight λ: multiplying the objective by s_y² leaves the ridge term's λ as it was.
 *
 * Any finite data fit: every column, the target and the weights are first scaled by powers of two
 * to a largest magnitude near 1 (exact; scale.ts), all arithmetic runs on that working copy, and
 * results move back by the same powers. A result that can't be represented as a double (a
 * coefficient beyond ±1.8e308, or below 2.2e-308) is an InputError naming the column; a
 * cross-validated error that can't be is shown as non-finite with a warning.
 *
 * Two-class outcomes (options.outcome "two-class"): the squared error is replaced by the binomial
 * log-likelihood, −(1/Σw) Σ w [y η − log(1 + e^η)], on the same standardized predictors, with the
 * 0/1 target left as it is (engine/logistic.ts); coefficients are log-odds per unit, the grid's top
 * is the gradient at the intercept-only fit, and the paths end once the classes are reproduced
 * almost exactly ("saturated"). Strength 0 is the unpenalized maximum-likelihood fit
 * (logisticBaseline.ts). Random folds are stratified by class. Measures: deviance per row (the
 * default), the share misclassified at the cutoff, or the AUC (higher is better).
 *
 * Cross-validation (Hastie, Tibshirani & Friedman, ESL 2nd ed. §7.10): the full data fix
 * each mix's grid and path; every fold then solves down the same strengths on its training
 * rows (its own standardization, target included) and is scored on its held-out rows. The same
 * folds serve every mix. In gram form every fold's problem and its held-out squared error come
 * from per-block sums, so all folds together cost one pass over the data.
 */
import { CancelSignal, FitWarning, InputError, throwIfCancelled } from "./errors";
import { FoldPlan, FoldScheme, planFolds, rowsOfBlocks } from "./folds";
import { leastSquares, leastSquaresOfSums, LeastSquaresOfSumsResult } from "./leastSquares";
import { ColumnMatrix, selectRows } from "./matrix";
import { LinearModel, linearModel, logistic, predict } from "./model";
import { logisticBaseline } from "./logisticBaseline";
import { score, Score } from "./metrics";
import { areaUnderCurve, devianceFromScores, misclassifiedShare, scoreTwoClass, TwoClassScore } from "./classMetrics";
import { LogisticDescent, LogisticReport, LogisticRun, LogisticSettings, logisticTopStrength, runLogisticPath } from "./logistic";
import type { OutcomeKind } from "./outcome";
import type { FoldModel } from "./conformal";
import { KeptShare, keptShares } from "./keptShare";
import { checkRepeats, type HonestError, type StabilityOptions, type StabilityResult } from "./assurance";
import { averageOfDeals, SignTally } from "./repeats";
import { HONEST_SEED_OFFSET, HonestPlan, honestSummary, nestedCrossValidation, outerFoldError, outerFoldFit, outerFoldRecord } from "./honest";
import type { HonestFold } from "./assurance";
import { HalfPath, StabilityInput, stabilitySelection, stabilitySettings, stabilityUnits } from "./stability";
import {
  DEFAULT_GRID_DENSITY,
  EarlyStop,
  gridDensity,
  gridSize,
  LOW_END_TALL,
  LOW_END_WIDE,
  MAX_GRID_SIZE,
  PathRun,
  ridgeFactorization,
  runPath,
  spectralApplies,
  strengthGrid,
  topStrength,
} from "./path";
import { SpectralRidge } from "./ridgeSpectral";
import type { FitTask, FitTaskInput, FitTaskResult, TaskPool, TaskSession } from "./parallel";
import {
  accumulateSums,
  blockSums,
  blockSumsOf,
  BlockSums,
  CONSTANT_SPREAD_RATIO,
  emptySums,
  problemFromRows,
  problemFromSums,
  stableAnchor,
  stableAnchors,
  stableMean,
  Standardization,
  takeLargest,
  TrainingProblem,
} from "./problem";
import { CoordinateDescent, PenaltySpec } from "./descent";
import { scaleByPowerOfTwo, powerOfTwo, SMALLEST_NORMAL, unitExponent } from "./scale";
import {
  checkInteger,
  checkMixes,
  checkPerPredictor,
  checkedPredictors,
  checkRowVector,
  checkWeights,
  describeColumn,
} from "./validate";

import type { ChoiceRule } from "./words";
export type { ChoiceRule } from "./words";

/**
 * The rule a user typed, in any accepted spelling: `lowest` (also `lowest error`, and the
 * older `min`) or `one-se` (also `one-SE rule`, `one standard error`, and the older `onese`,
 * `1se`). Case, spaces, `_` and `-` are ignored. Null when the text names neither rule.
 */
export function parseRule(text: string): ChoiceRule | null {
  const key = text.toLowerCase().replace(/[\s_-]+/g, "");
  if (["lowest", "lowesterror", "min", "minimum"].includes(key)) return "lowest";
  if (["onese", "oneserule", "1se", "1serule", "onestandarderror", "onestandarderrorrule"].includes(key)) return "one-se";
  return null;
}
import type { ErrorMeasure } from "./words";
export type { ErrorMeasure } from "./words";
import { higherIsBetter } from "./words";
export { higherIsBetter } from "./words";
export const MEASURES: Readonly<Record<OutcomeKind, readonly ErrorMeasure[]>> = {
  number: ["mse", "mae"],
  "two-class": ["deviance", "misclassified", "auc"],
};
export type UpdateScheme = "auto" | "gram" | "residual";

/** Options, each with its default. */
export interface FitOptions {
  /** Mixes α to try (0 ridge … 1 lasso). Default [0, 0.25, 0.5, 0.75, 1]. */
  mixes?: readonly number[];
  /** Fit exactly this strength (unit-free λ, see above) with the single mix given: no cross-validation. 0 = least squares. */
  strength?: number | null;
  /**
   * Strengths per tenfold drop of the grid, a whole number 1 to 1000. Default 20. The grid then
   * has round(gridDensity × log10(1/lowEndRatio)) + 1 strengths (path.ts gridSize): 101 at a low end of 1e-5.
   */
  gridDensity?: number;
  /** Number of strengths in the grid (1 to 10000), instead of deriving it from gridDensity: give one or the other. */
  strengthCount?: number;
  /** Bottom of the grid as a fraction of its top. Default 1e-5 when rows > predictors, else 1e-2 (path.ts LOW_END_TALL, LOW_END_WIDE). */
  lowEndRatio?: number | null;
  /** Number of folds (random or time-ordered). Default 10. */
  folds?: number;
  /** Seed for the random fold assignment. Default 1. */
  seed?: number;
  /** One label per row; each distinct label is one fold (grouped cross-validation). */
  foldLabels?: ArrayLike<number | string> | null;
  /** Rows are in time order: train on earlier blocks, score on the next. Default false. */
  timeOrdered?: boolean;
  /**
   * "number" (default) fits squared error; "two-class" fits the binomial log-likelihood
   * (penalized logistic regression): the target must then hold 0 and 1 (1 = the event; see
   * outcome.ts for reading labels) and coefficients are log-odds of the event per unit.
   */
  outcome?: OutcomeKind;
  /** Cross-validation measure. Default "mse" for a number outcome, "deviance" for two-class; each outcome refuses the other's measures. */
  measure?: ErrorMeasure;
  /** Two-class: the probability at or above which a row counts as the event (misclassified share, classFit). Default 0.5; strictly between 0 and 1. */
  cutoff?: number;
  /** Which cross-validated point becomes the model. Default "lowest" ("min", "onese" also accepted). */
  rule?: ChoiceRule | "min" | "onese" | "1se";
  /** Standardize predictors before penalizing. Default true. */
  standardize?: boolean;
  /** Fit an (unpenalized) intercept. Default true. */
  intercept?: boolean;
  /** Observation weights (>= 0, not all 0). Default all 1. */
  weights?: ArrayLike<number> | null;
  /** Per-predictor penalty multipliers m_j >= 0 (0 = never penalized). Default all 1. */
  penaltyMultipliers?: ArrayLike<number> | null;
  /** Per-predictor lower bounds in original units (<= 0; -Infinity = none). */
  lowerBounds?: ArrayLike<number> | null;
  /** Per-predictor upper bounds in original units (>= 0; Infinity = none). */
  upperBounds?: ArrayLike<number> | null;
  /** Covariance ("gram") or residual updates. Default "auto": gram when rows >= predictors and predictors <= 500. */
  updates?: UpdateScheme;
  /** Solve ridge (α = 0, no bounds, positive multipliers) by eigendecomposition. Default true. */
  exactRidge?: boolean;
  /** Convergence tolerance relative to λ (see descent.ts). Default 1e-9. */
  tolerance?: number;
  /** Sweep cap per strength. Default 10000. */
  maxSweeps?: number;
  /**
   * End the full-data paths once a tenfold drop in strength improves the training fit by less
   * than 1% (path.ts PLATEAU_SPAN, PLATEAU_GAIN). Default false: every path covers its whole
   * grid, except that a path always ends once its training fit is exact (path.ts EXACT_FIT_RATIO).
   */
  stopEarly?: boolean;
  /** Term names, one per predictor column. Default x1, x2, … */
  names?: readonly string[];
  /**
   * Deal the random folds this many times (seeds seed, seed+1, …; 1 to 50, default 1) and score
   * every mix and strength on all repeats × folds held-out folds; the choice is made on the
   * averaged curve. Random folds only (labels and time order give one deal: an InputError).
   * The curve's error at each strength is the fold-weighted mean over all repeats × folds; its SE
   * is the average over the repeats of each repeat's own K-fold SE, not the SD over all
   * repeats × folds / √(repeats × folds): the repeats reuse the same rows, so their folds are not
   * independent and that would understate the SE (and tilt the one-SE rule) more as repeats grow
   * (repeats.ts). Fold models and held-out residuals (CV+ intervals) come from the first deal;
   * kept shares count over all repeats × folds fold models. Costs about `repeats` times the fold fits.
   */
  repeats?: number;
  /**
   * Also estimate the error of the whole procedure (every mix, strength and the rule) by nested
   * cross-validation: FitResult.honest (honest.ts). Costs about `folds` more whole fits. Default false.
   * Needs cross-validation (an InputError with a fixed strength).
   */
  honestError?: boolean;
  /** Run stability selection at the chosen mix (FitResult.stability). Default: not run. */
  stability?: StabilityOptions | null;
  /** Called after each unit of work (one mix's full-data path or one fold of one mix, and the extra fits the options above ask for). */
  onProgress?: (done: number, total: number) => void;
  /** Work stops with a CancelledError at the next strength once `aborted` is true. */
  signal?: CancelSignal;
}

export interface ChoicePoint {
  mix: number;
  strength: number;
  /** strength / top of that mix's grid. */
  strengthFraction: number;
  /** Index into that mix's grid. */
  index: number;
  error: number;
  se: number;
  /** Terms with a nonzero coefficient at this point. */
  termsKept: number;
}

export interface CvRow {
  mix: number;
  strength: number;
  error: number;
  se: number;
  /** Terms with a nonzero coefficient at this point. */
  termsKept: number;
}

export interface FitResult {
  kind: "shrinkwise-fit";
  /** "two-class": coefficients are log-odds of the event, `model.link` is "logistic", predictions are probabilities. */
  outcome: OutcomeKind;
  terms: string[];
  intercept: number;
  /** Original units: the change in the target per unit of the predictor. */
  coefficients: number[];
  /**
   * Coefficient × the predictor's population SD: the change in the target, in the target's
   * units, per SD of the predictor (so predictors compare). Divided by `targetSpread` it is the
   * unit-free b̃_j the penalty acts on.
   */
  standardizedCoefficients: number[];
  /** Each predictor's weighted population SD on the rows used (0 for a constant column). */
  predictorSpreads: number[];
  /** s_y: the target's weighted population SD on the rows used (root mean square without an intercept), the unit λ is measured against. */
  targetSpread: number;
  mix: number;
  strength: number;
  strengthFraction: number;
  rule: ChoiceRule | "fixed";
  choices: { lowest: ChoicePoint; oneSe: ChoicePoint } | null;
  cv: {
    measure: ErrorMeasure;
    scheme: FoldScheme;
    folds: number;
    seed: number | null;
    /** Deals of the folds (FitOptions.repeats; 1 without repeats). */
    repeats: number;
    table: CvRow[];
  } | null;
  path: {
    mix: number;
    top: number;
    strengths: number[];
    intercepts: number[];
    coefficients: number[][];
    /** Terms with a nonzero coefficient at each strength. */
    termsKept: number[];
    r2: number[];
  };
  /**
   * In-sample accuracy of the chosen model (weighted when weights are given); two-class: of its
   * probabilities against 0/1 (rmse² is the Brier score). From a sums table (fitSums.ts): RMSE,
   * R² and bias from the sums, MAE NaN (it needs the rows), count the rows the sums cover.
   */
  fit: Score;
  /** Two-class only: in-sample log loss, Brier score, AUC and the table at the cutoff. Null for a number outcome. */
  classFit: TwoClassScore | null;
  /**
   * Strength 0 only: the exact least-squares baseline's standard errors (null where aliased),
   * residual SD on its degrees of freedom, and the aliased terms. Null otherwise.
   */
  baseline: {
    standardErrors: (number | null)[];
    interceptStandardError: number | null;
    /** Number outcome: the residual SD; two-class: NaN (see deviance). */
    residualStandardDeviation: number;
    /** Residual degrees of freedom: rows used − coefficients kept (intercept included). */
    degreesOfFreedom: number;
    /** Number outcome: R²; two-class: the share of the null deviance explained. */
    r2: number;
    aliased: string[];
    /** Two-class only: estimate / SE (null where aliased or separated). */
    zValues?: (number | null)[];
    interceptZ?: number | null;
    /** Two-class only: two-sided normal p-values of the z values. */
    pValues?: (number | null)[];
    interceptP?: number | null;
    /** Two-class only: residual and null deviance (totals, not per row), and the null model's degrees of freedom. */
    deviance?: number;
    nullDeviance?: number;
    nullDegreesOfFreedom?: number;
    /** Two-class only: set when the classes are (nearly) separated and the unpenalized estimates do not exist. */
    separation?: { kind: "complete" | "quasi"; terms: string[]; message: string } | null;
  } | null;
  /** Rows fitted (rows of weight 0 included); from a sums table, the rows its blocks cover. */
  rowsUsed: number;
  /** Names of predictors dropped because they are constant. */
  constantColumns: string[];
  diagnostics: {
    updates: "gram" | "residual";
    /** "least-squares": the number outcome at strength 0; "maximum-likelihood": the two-class outcome at strength 0 (logisticBaseline.ts). */
    solver: "descent" | "spectral" | "least-squares" | "maximum-likelihood";
    sweeps: number;
    /** Largest KKT violation relative to λ on the chosen mix's full-data path. */
    maxKktViolation: number;
    /** Largest over every fit made (all mixes, all folds). */
    maxKktViolationAllFits: number;
    converged: boolean;
    strongRuleMisses: number;
    /** Where and why the chosen mix's path ended before its grid did, or null. */
    earlyStop: { index: number; strength: number; reason: EarlyStop } | null;
    lowEndRatio: number;
    /** Strengths in the grid (the paths may end earlier: see earlyStop). */
    strengthCount: number;
    /** Strengths per tenfold drop of the grid used, (strengthCount − 1) / log10(1/lowEndRatio). */
    gridDensity: number;
    /** Two-class: how many times the step control had to shorten a step so the objective would not rise (0 for a number outcome). */
    stepHalvings: number;
  };
  warnings: FitWarning[];
  model: LinearModel;
  /**
   * Number outcome with cross-validation: each fold's model (fitted without that fold's rows) at
   * the chosen mix and strength, in the data's units, for CV+ prediction intervals (conformal.ts).
   * Kept from the cross-validation run, no extra fits. Absent or null otherwise.
   */
  foldModels?: FoldModel[] | null;
  /**
   * With foldModels: every row with positive weight that a fold held out (0-based row index into
   * the rows given, the fold that held it out as an index into foldModels, and its held-out
   * residual y − prediction of that fold's model, in the target's units). Rows of weight 0 are
   * not listed; with time-ordered folds the first block, never held out, is not either.
   * Null for a fit from a sums table (fitSums.ts): there are no rows to hold out.
   */
  heldOut?: { row: number[]; fold: number[]; residual: number[] } | null;
  /**
   * With cross-validation (number and two-class outcomes): per term, in the order of `terms`, the
   * share of the fold models at the chosen mix and strength that keep it (nonzero coefficient) and
   * the share that agree with the full-data fit's sign (keptShare.ts). Counted from the fold fits
   * cross-validation made anyway, no extra fits. Absent or null without cross-validation.
   */
  keptShare?: KeptShare[] | null;
  /** With FitOptions.honestError: the nested cross-validation error of the whole procedure (assurance.ts). Absent or null otherwise. */
  honest?: HonestError | null;
  /** With FitOptions.stability: stability selection at the chosen mix (assurance.ts, stability.ts). Absent or null otherwise. */
  stability?: StabilityResult | null;
}

/**
 * A fold's path, kept while its mix may be the chosen one: its standardization and the
 * standardized solution at every strength index (null for an exact-ridge fold in kernel form,
 * whose point at the chosen strength is computed once the choice is made: a fold-point task).
 */
interface FoldPoints {
  std: Standardization;
  p: number;
  path: Float64Array[] | null;
}

export const DEFAULT_MIXES: readonly number[] = [0, 0.25, 0.5, 0.75, 1];
/** Largest predictor count for gram (covariance) updates: p² doubles per fold. */
export const MAX_GRAM_PREDICTORS = 2000;

/**
 * Checked input, and the working copy every computation uses: column j of x is the data's
 * column × 2^xExponent[j], y the target × 2^yExponent, the weights × 2^weightExponent, each
 * exponent bringing the largest magnitude (over rows with positive weight) into [0.5, 1)
 * (scale.ts). Rows with weight 0 are stored as 0 in x and y: they take no part in any sum,
 * and an extreme value there can't overflow one. Bounds are moved to the working units too.
 */
export interface Prepared {
  /**
   * The working copy of the predictors. When `inPlace` is set this is a deferred copy: its
   * `data` is made (the same values) only if a step other than the O(n·p) passes below asks for
   * it; `rows` and `columns` cost nothing.
   */
  x: ColumnMatrix;
  /**
   * Set when the fit reads the caller's predictors in place (every row has positive weight, so
   * the working copy is exactly source × 2^xExponent[j] per column, with no rows zeroed): the
   * Gram pass, the shifts, row-form problems, held-out rows and predictions read `source` and
   * form each value × factors[j] as they read it, the very product the copy would hold, so the
   * results are the same bit for bit and the copy's n·p doubles are never allocated. Null: read
   * `x` (weights with zeros, fits from sums, setReadInPlace(false)).
   */
  inPlace: { source: ColumnMatrix; factors: Float64Array } | null;
  y: Float64Array;
  weights: Float64Array | null;
  /** The data as given (for the in-sample score). */
  original: { x: ColumnMatrix; y: Float64Array; weights: Float64Array | null };
  xExponent: Int32Array;
  yExponent: number;
  /** The weights' power of two (0 without weights): working weights = weights × 2^weightExponent. */
  weightExponent: number;
  names: string[];
  multipliers: Float64Array;
  /** Bounds on the working copy's coefficients (b × 2^(yExponent − xExponent[j])). */
  lower: Float64Array;
  upper: Float64Array;
  /** Whether any bound is finite (as given). */
  bounded: boolean;
  mixes: number[];
  intercept: boolean;
  standardize: boolean;
  gram: boolean;
  strengthCount: number;
  lowEndRatio: number;
  settings: { tolerance: number; maxSweeps: number; exactRidge: boolean; signal?: CancelSignal };
  stopEarly: boolean;
  /** "two-class": y holds 0/1 as given (yExponent 0) and the logistic solver fits it. */
  outcome: OutcomeKind;
  /** Two-class: solve each step's quadratic in covariance form (logistic.ts), by the same rule as gram updates. */
  covariance: boolean;
  /** Two-class: the probability at or above which a row counts as the event. */
  cutoff: number;
  /**
   * Fits from a sums table (fitSums.ts): the rows are absent (x and y hold none) and the whole
   * data's sums, about the shifts, stand in for them wherever the fit would read rows (the
   * in-sample score). `weighedRows`: the rows of the blocks of positive weight, the count least
   * squares' degrees of freedom start from (fitSums.ts). Null when fitting rows.
   */
  totalSums: { sums: BlockSums; shiftX: Float64Array; shiftY: number; weighedRows?: number } | null;
}

function prepare(predictors: ArrayLike<ArrayLike<number>> | ColumnMatrix, target: ArrayLike<number>, options: FitOptions): Prepared {
  const names = options.names ? options.names.map(String) : undefined;
  const { matrix: x, largest: columnLargest } = checkedPredictors(predictors, names);
  const n = x.rows;
  const p = x.columns;
  const y = checkRowVector(target, n, "target");
  if (n < 2) throw new InputError("too-few-rows", "there is only 1 row of data: a fit needs at least 2 rows (and more for cross-validation)");
  const weights = options.weights ? checkWeights(options.weights, n) : null;
  const twoClass = options.outcome === "two-class";
  const cutoff = twoClass ? checkCutoff(options.cutoff) : 0.5;
  if (twoClass) checkClasses(y, weights);
  const { intercept, standardize, multipliers, lower, upper, mixes, lowEndRatio, strengthCount, tolerance, maxSweeps, updates } = checkSettings(options, n, p, names);
  // Two-class fits always keep the rows: the quadratic's weights change at every step.
  const covarianceForm = updates === "gram" || (updates === "auto" && n >= p && p <= 500);
  const gram = !twoClass && covarianceForm;
  // Checkpoints between the O(n·p) passes over the input (checks, working copy).
  throwIfCancelled(options.signal);
  const work = workingCopy(x, y, weights, !twoClass, readInPlace, columnLargest);
  throwIfCancelled(options.signal);
  // Constant target (the rule problem.ts applies to columns): nothing to predict.
  const omega = shareOfWeight(work.weights, n);
  const centre = intercept ? stableMean(work.y, omega, n) : 0;
  const { meanSquare, largest } = spreadAbout(work.y, omega, centre, n);
  if (!twoClass && (!(meanSquare > 0) || !(Math.sqrt(meanSquare) > CONSTANT_SPREAD_RATIO * largest))) {
    let first = 0;
    while (weights && !(weights[first] > 0)) first++;
    throw new InputError("constant-target", `the target has the same value (${y[first]}) in every row: there is nothing to predict`);
  }
  if (!standardize) checkOwnUnits(work.xExponent, names);
  const { workLower, workUpper } = workingBounds(lower, upper, work.xExponent, work.yExponent);
  return {
    x: work.x,
    inPlace: work.inPlace,
    y: work.y,
    weights: work.weights,
    original: { x, y, weights },
    xExponent: work.xExponent,
    yExponent: work.yExponent,
    weightExponent: work.weightExponent,
    names: names ?? Array.from({ length: p }, (_, j) => `x${j + 1}`),
    multipliers,
    lower: workLower,
    upper: workUpper,
    bounded: lower.some(Number.isFinite) || upper.some(Number.isFinite),
    mixes,
    intercept,
    standardize,
    gram,
    strengthCount,
    lowEndRatio,
    settings: { tolerance, maxSweeps, exactRidge: options.exactRidge ?? true, signal: options.signal },
    stopEarly: options.stopEarly ?? false,
    outcome: twoClass ? "two-class" : "number",
    covariance: twoClass && covarianceForm,
    cutoff,
    totalSums: null,
  };
}

// prepare's and fullShift's passes over the rows as small functions of their own: run once per
// fit, the same loops inside the large callers ran unoptimized (boxing each double) for much of a
// process's first fit (V8 --trace-opt / --trace-deopt). Same operations, same order.

/** Each row's share of the total weight, ω_i = w_i / Σw (1 / n without weights). */
function shareOfWeight(weights: Float64Array | null, n: number): Float64Array {
  const omega = new Float64Array(n);
  let total = 0;
  for (let i = 0; i < n; i++) total += weights ? weights[i] : 1;
  for (let i = 0; i < n; i++) omega[i] = (weights ? weights[i] : 1) / total;
  return omega;
}

/** Σ ω_i (y_i − centre)² and the largest |y_i| over rows of positive share. */
function spreadAbout(y: Float64Array, omega: Float64Array, centre: number, n: number): { meanSquare: number; largest: number } {
  let meanSquare = 0;
  let largest = 0;
  for (let i = 0; i < n; i++) {
    meanSquare += omega[i] * (y[i] - centre) * (y[i] - centre);
    if (omega[i] > 0) largest = Math.max(largest, Math.abs(y[i]));
  }
  return { meanSquare, largest };
}

/** Largest |values[offset + i]|, i < n, over rows of positive weight (every row without weights). */
function largestMagnitude(values: Float64Array, offset: number, n: number, weights: Float64Array | null): number {
  let largest = 0;
  if (weights) {
    for (let i = 0; i < n; i++) {
      const v = Math.abs(values[offset + i]);
      if (weights[i] > 0 && v > largest) largest = v;
    }
  } else {
    for (let i = 0; i < n; i++) {
      const v = Math.abs(values[offset + i]);
      if (v > largest) largest = v;
    }
  }
  return largest;
}

/** into[offset + i] = from[offset + i] × factor (0 on rows of weight 0), i < n. */
function copyScaled(from: Float64Array, offset: number, n: number, factor: number, into: Float64Array, weights: Float64Array | null): void {
  if (weights) for (let i = 0; i < n; i++) into[offset + i] = weights[i] > 0 ? from[offset + i] * factor : 0;
  else for (let i = 0; i < n; i++) into[offset + i] = from[offset + i] * factor;
}

/** The checked settings of a fit of `n` rows and `p` predictors (shared by row and sums fits: fitSums.ts). */
export interface CheckedSettings {
  intercept: boolean;
  standardize: boolean;
  multipliers: Float64Array;
  /** Bounds as given, in the data's units. */
  lower: Float64Array;
  upper: Float64Array;
  mixes: number[];
  lowEndRatio: number;
  strengthCount: number;
  tolerance: number;
  maxSweeps: number;
  updates: UpdateScheme;
}

export function checkSettings(options: FitOptions, n: number, p: number, names: string[] | undefined): CheckedSettings {
  const intercept = options.intercept ?? true;
  const standardize = options.standardize ?? true;
  const multipliers = options.penaltyMultipliers
    ? checkPerPredictor(options.penaltyMultipliers, p, "penalty multipliers", "multipliers", false)
    : new Float64Array(p).fill(1);
  for (let j = 0; j < p; j++) {
    if (multipliers[j] < 0) {
      throw new InputError("multipliers", `penalty multiplier for ${describeColumn(names, j)} is negative: use 0 (not penalized) or more`);
    }
  }
  if (!multipliers.some((m) => m > 0)) {
    throw new InputError("multipliers", "every penalty multiplier is 0: at least one predictor must be penalized (or fit strength 0 for least squares)");
  }
  const lower = options.lowerBounds
    ? checkPerPredictor(options.lowerBounds, p, "lower bounds", "bounds", true)
    : new Float64Array(p).fill(-Infinity);
  const upper = options.upperBounds
    ? checkPerPredictor(options.upperBounds, p, "upper bounds", "bounds", true)
    : new Float64Array(p).fill(Infinity);
  for (let j = 0; j < p; j++) {
    const label = describeColumn(names, j);
    if (lower[j] > upper[j]) {
      throw new InputError("bounds", `lower bound ${lower[j]} for ${label} is above its upper bound ${upper[j]}`);
    }
    if (lower[j] > 0) throw new InputError("bounds", `lower bound for ${label} is ${lower[j]}: bounds must allow zero (lower bound 0 or below)`);
    if (upper[j] < 0) throw new InputError("bounds", `upper bound for ${label} is ${upper[j]}: bounds must allow zero (upper bound 0 or above)`);
  }
  const mixes = checkMixes(options.mixes ?? DEFAULT_MIXES);
  const lowEndRatio = options.lowEndRatio ?? (n > p ? LOW_END_TALL : LOW_END_WIDE);
  if (typeof lowEndRatio !== "number" || !(lowEndRatio > 0 && lowEndRatio < 1)) {
    throw new InputError("setting", `the low-end ratio must be between 0 and 1 (exclusive); got ${String(lowEndRatio)}`);
  }
  let strengthCount: number;
  if (options.strengthCount !== undefined && options.strengthCount !== null) {
    if (options.gridDensity !== undefined && options.gridDensity !== null) {
      throw new InputError("setting", "the grid's size and its density were both given: give one (the size fixes the number of strengths, the density the strengths per tenfold drop)");
    }
    strengthCount = checkInteger(options.strengthCount, "the number of strengths", 1, MAX_GRID_SIZE, "setting");
  } else {
    const density = checkInteger(options.gridDensity ?? DEFAULT_GRID_DENSITY, "the grid density (strengths per tenfold drop)", 1, 1000, "setting");
    strengthCount = gridSize(density, lowEndRatio);
    if (strengthCount > MAX_GRID_SIZE) {
      throw new InputError(
        "setting",
        `a grid density of ${density} down to a low end of ${lowEndRatio} gives ${strengthCount} strengths, more than ${MAX_GRID_SIZE}: lower the density or raise the low end`,
      );
    }
  }
  const tolerance = options.tolerance ?? 1e-9;
  if (!(tolerance > 0 && tolerance < 1)) throw new InputError("setting", `tolerance must be between 0 and 1; got ${String(tolerance)}`);
  const maxSweeps = checkInteger(options.maxSweeps ?? 10000, "the sweep cap", 1, 1e8, "setting");
  const updates = options.updates ?? "auto";
  if (updates !== "auto" && updates !== "gram" && updates !== "residual") {
    throw new InputError("setting", `updates must be auto, gram or residual; got ${String(updates)}`);
  }
  if (updates === "gram" && p > MAX_GRAM_PREDICTORS) {
    throw new InputError("setting", `gram updates keep a ${p} × ${p} matrix per fold; they are limited to ${MAX_GRAM_PREDICTORS} predictors: use residual updates`);
  }
  return { intercept, standardize, multipliers, lower, upper, mixes, lowEndRatio, strengthCount, tolerance, maxSweeps, updates };
}

/**
 * Unstandardized columns are penalized in their own units: beyond about 1e±135 their Gram matrix
 * would overflow or underflow (standardized columns have no such limit).
 */
export function checkOwnUnits(xExponent: Int32Array, names: readonly string[] | undefined): void {
  for (let j = 0; j < xExponent.length; j++) {
    if (Math.abs(xExponent[j]) > 450) {
      const size = xExponent[j] < 0 ? "too large (beyond 1e135)" : "too small (below 1e-135)";
      throw new InputError(
        "out-of-range",
        `with standardization off, predictor ${describeColumn(names, j)} is penalized in its own units, and its values are ${size} for that: standardize the predictors, or record it in other units`,
      );
    }
  }
}

/** Bounds moved to the working copy's units: b × 2^(yExponent − xExponent[j]). */
export function workingBounds(lower: Float64Array, upper: Float64Array, xExponent: Int32Array, yExponent: number): { workLower: Float64Array; workUpper: Float64Array } {
  const p = lower.length;
  const workLower = new Float64Array(p);
  const workUpper = new Float64Array(p);
  for (let j = 0; j < p; j++) {
    workLower[j] = scaleByPowerOfTwo(lower[j], yExponent - xExponent[j]);
    workUpper[j] = scaleByPowerOfTwo(upper[j], yExponent - xExponent[j]);
  }
  return { workLower, workUpper };
}

/** The two-class cutoff: default 0.5, strictly between 0 and 1. */
function checkCutoff(cutoff: unknown): number {
  if (cutoff === undefined || cutoff === null) return 0.5;
  if (typeof cutoff !== "number" || !(cutoff > 0 && cutoff < 1)) {
    throw new InputError("setting", `the cutoff is the probability from which a row counts as the event: it must be between 0 and 1 (not 0 or 1 themselves); got ${String(cutoff)}`);
  }
  return cutoff;
}

/**
 * A two-class target holds 0 and 1 (1 = the event) in every row, and each class has rows of
 * positive weight: with one class only, the log-odds would run to infinity.
 */
function checkClasses(y: Float64Array, weights: Float64Array | null): void {
  let events = 0;
  let others = 0;
  for (let i = 0; i < y.length; i++) {
    if (y[i] !== 0 && y[i] !== 1) {
      throw new InputError(
        "setting",
        `target row ${i + 1} is ${y[i]}: a two-class (yes/no) target must hold 0 or 1 in every row (1 = the event); for a numeric target use outcome number`,
      );
    }
    const w = weights ? weights[i] : 1;
    if (w > 0) {
      if (y[i] === 1) events++;
      else others++;
    }
  }
  if (events === 0 || others === 0) {
    const only = events === 0 ? "0 (no events)" : "1 (events only)";
    throw new InputError(
      "constant-target",
      `every ${weights ? "row with a positive weight" : "row"} of the target is ${only}: a two-class fit needs rows of both classes`,
    );
  }
}

/**
 * Whether fits read the caller's predictors in place when they can (Prepared.inPlace). On by
 * default; off makes every fit copy them as before, for A/B measurements (bench/run.ts
 * --copy-data). Either way the results are the same bit for bit.
 */
let readInPlace = true;

/** Turns reading the predictors in place on or off (see readInPlace); returns the previous setting. */
export function setReadInPlace(on: boolean): boolean {
  const was = readInPlace;
  readInPlace = on;
  return was;
}

/**
 * The predictors as the O(n·p) passes read them: the caller's data with each column's power of
 * two (Prepared.inPlace), or the working copy with factors null.
 */
function readX(data: Prepared): { x: ColumnMatrix; factors: Float64Array | null } {
  return data.inPlace ? { x: data.inPlace.source, factors: data.inPlace.factors } : { x: data.x, factors: null };
}

/**
 * The working copy (see Prepared): each column, the target and the weights scaled by the power
 * of two that brings its largest magnitude on rows with positive weight into [0.5, 1); rows with
 * weight 0 stored as 0. Exact (powers of two), so the standardized problems built from it are
 * the ones the unscaled data would give, without overflow or underflow. Cost O(n·p).
 * `columnLargest`: each column's largest magnitude over all rows (validate.ts
 * checkedPredictors), used as it is when there are no weights.
 * With `inPlace` and every weight positive the predictors are not copied: x is a deferred copy
 * and `inPlace` holds the data and the powers of two (see Prepared.inPlace).
 */
function workingCopy(
  x: ColumnMatrix,
  y: Float64Array,
  weights: Float64Array | null,
  scaleTarget: boolean,
  inPlace: boolean,
  columnLargest: Float64Array,
): {
  x: ColumnMatrix;
  inPlace: Prepared["inPlace"];
  y: Float64Array;
  weights: Float64Array | null;
  xExponent: Int32Array;
  yExponent: number;
  weightExponent: number;
} {
  const n = x.rows;
  const p = x.columns;
  let workWeights: Float64Array | null = null;
  let weightExponent = 0;
  if (weights) {
    let heaviest = 0;
    for (let i = 0; i < n; i++) heaviest = Math.max(heaviest, weights[i]);
    weightExponent = unitExponent(heaviest);
    const factor = powerOfTwo(weightExponent);
    workWeights = new Float64Array(n);
    for (let i = 0; i < n; i++) workWeights[i] = weights[i] * factor;
  }
  // Values are finite here (checked before). Plain loops, the weighted test hoisted out: this
  // pass and the copy below read all n·p values, a noticeable share of a tall fit.
  const largestOf = (values: Float64Array, offset: number): number => largestMagnitude(values, offset, n, weights);
  // A two-class target stays 0/1 (exponent 0): the log-likelihood needs the classes themselves.
  const yExponent = scaleTarget ? unitExponent(largestOf(y, 0)) : 0;
  const yFactor = powerOfTwo(yExponent);
  const workY = new Float64Array(n);
  copyScaled(y, 0, n, yFactor, workY, weights);
  const xExponent = new Int32Array(p);
  let allPositive = true;
  if (weights) for (let i = 0; i < n && allPositive; i++) allPositive = weights[i] > 0;
  if (inPlace && allPositive) {
    // No row is zeroed, so the copy would be exactly x_ij × 2^xExponent[j]: formed where read.
    const factors = new Float64Array(p);
    for (let j = 0; j < p; j++) {
      // Without weights every row counts: the largest magnitudes the input check found.
      xExponent[j] = unitExponent(weights ? largestOf(x.data, j * n) : columnLargest[j]);
      factors[j] = powerOfTwo(xExponent[j]);
    }
    let copy: Float64Array | null = null;
    const deferred: ColumnMatrix = {
      rows: n,
      columns: p,
      get data(): Float64Array {
        if (!copy) {
          copy = new Float64Array(n * p);
          for (let j = 0; j < p; j++) copyScaled(x.data, j * n, n, factors[j], copy, weights);
        }
        return copy;
      },
    };
    return { x: deferred, inPlace: { source: x, factors }, y: workY, weights: workWeights, xExponent, yExponent, weightExponent };
  }
  const data = new Float64Array(n * p);
  for (let j = 0; j < p; j++) {
    const off = j * n;
    xExponent[j] = unitExponent(weights ? largestOf(x.data, off) : columnLargest[j]);
    copyScaled(x.data, off, n, powerOfTwo(xExponent[j]), data, weights);
  }
  return { x: { rows: n, columns: p, data }, inPlace: null, y: workY, weights: workWeights, xExponent, yExponent, weightExponent };
}

/** Penalty for one problem: bounds moved to its standardized units (b̃ = b × scale / s_y). */
function penaltyFor(problem: TrainingProblem, data: Prepared, mix: number): PenaltySpec {
  const p = problem.p;
  const lower = new Float64Array(p);
  const upper = new Float64Array(p);
  // Two-class: the target is not standardized (module comment of logistic.ts), so b̃ = b × scale.
  const yScale = data.outcome === "two-class" ? 1 : problem.std.yScale;
  for (let j = 0; j < p; j++) {
    lower[j] = (data.lower[j] * problem.std.xScale[j]) / yScale;
    upper[j] = (data.upper[j] * problem.std.xScale[j]) / yScale;
  }
  return { mix, multipliers: data.multipliers, lower, upper };
}

/**
 * Intercept and coefficients in the data's units (of the values the problem was built from: the
 * working copy) from standardized ones: b_j = s_y · b̃_j / scale_j, b0 = ȳ − Σ b_j x̄_j.
 */
function toOriginal(problem: { p: number; std: Standardization }, standardized: Float64Array): { intercept: number; coefficients: Float64Array } {
  const std = problem.std;
  const coefficients = new Float64Array(problem.p);
  let intercept = std.yCentre;
  for (let j = 0; j < problem.p; j++) {
    const b = std.frozen[j] ? 0 : (std.yScale * standardized[j]) / std.xScale[j];
    coefficients[j] = b;
    intercept -= b * std.xCentre[j];
  }
  return { intercept, coefficients };
}

/** The slopes of toOriginal (b_j = s_y · b̃_j / scale_j, the same expression) written into `out`. */
function slopesInto(problem: { p: number; std: Standardization }, standardized: Float64Array, out: Float64Array): void {
  const std = problem.std;
  for (let j = 0; j < problem.p; j++) out[j] = std.frozen[j] ? 0 : (std.yScale * standardized[j]) / std.xScale[j];
}

/**
 * A working-copy coefficient of column j (or the intercept, j = -1) in the data's own units:
 * b × 2^(xExponent[j] − yExponent). A value beyond the doubles' range (or below their normal
 * range, where it would lose digits) is an InputError naming the column: never a wrong number.
 */
function coefficientInDataUnits(data: Prepared, j: number, value: number): number {
  if (value === 0) return 0;
  const exponent = (j >= 0 ? data.xExponent[j] : 0) - data.yExponent;
  const out = scaleByPowerOfTwo(value, exponent);
  if (Number.isFinite(out) && Math.abs(out) >= SMALLEST_NORMAL) return out;
  const what = j >= 0 ? `the coefficient of '${data.names[j]}'` : "the intercept";
  const size = Math.abs(out) >= SMALLEST_NORMAL ? "too large" : "too small";
  const bound = Math.abs(out) >= SMALLEST_NORMAL ? "beyond ±1.8e308" : "below 2.2e-308";
  const hint =
    j >= 0
      ? `the target's values and '${data.names[j]}'s are too far apart in size; record one of them in other units (e.g. divide it by a power of ten)`
      : "record the target in other units (e.g. divide it by a power of ten)";
  throw new InputError("out-of-range", `${what} is ${size} to represent as a number (${bound}): ${hint}`);
}

/**
 * Problems for the full data and each fold, built once and shared by every mix. In gram form all
 * come from one pass of block sums; in row form a fold's problem (a copy of its training rows) is
 * built when first asked for and kept, so a pooled fit's coordinator, which solves no fold itself,
 * never copies them.
 */
export interface Problems {
  full: TrainingProblem;
  /** Fold f's training problem. */
  fold: (f: number) => TrainingProblem;
  /** Held-out block sums (gram form), for squared error without touching the rows. */
  heldOutSums: BlockSums[] | null;
  /** Each fold's held-out weight when there are no rows to add it up from (a fit from sums: fitSums.ts). */
  heldOutWeights?: number[] | null;
  shiftX: Float64Array;
  shiftY: number;
}

/**
 * The shifts block sums are taken about: the anchors of the full data's centres (stableCentre:
 * the values nearest the weighted means), so every shifted value is exact; 0 without an intercept.
 */
function fullShift(data: Prepared): { shiftX: Float64Array; shiftY: number } {
  const { y, weights } = data;
  const { x, factors } = readX(data);
  const n = x.rows;
  const shiftX = new Float64Array(x.columns);
  if (!data.intercept) return { shiftX, shiftY: 0 };
  const omega = shareOfWeight(weights, n);
  // Only the anchors (a value near each centre) are used: stableAnchor skips the two passes of
  // stableCentre's offset; the same anchors (0 when no weight is positive, as stableCentre gives).
  const anchorY = stableAnchor(y, omega, n);
  const shiftY = Number.isNaN(anchorY) ? 0 : anchorY;
  // The columns four at a time (stableAnchors: the same anchor per column, bit for bit).
  stableAnchors(x, omega, factors, shiftX, weights === null);
  for (let j = 0; j < x.columns; j++) if (Number.isNaN(shiftX[j])) shiftX[j] = 0;
  return { shiftX, shiftY };
}

function buildProblems(data: Prepared, plan: FoldPlan | null): Problems {
  const { y, weights } = data;
  const { x, factors } = readX(data);
  const signal = data.settings.signal;
  const columnUnits = Float64Array.from(data.xExponent, (e) => powerOfTwo(e));
  const options = { intercept: data.intercept, standardize: data.standardize, columnUnits };
  const { shiftX, shiftY } = fullShift(data);
  if (!data.gram || data.outcome === "two-class") {
    const full = problemFromRows(x, y, weights, null, options, signal, factors);
    const built: (TrainingProblem | null)[] = plan ? new Array(plan.trainBlocks.length).fill(null) : [];
    const fold = (f: number): TrainingProblem =>
      (built[f] ??= problemFromRows(x, y, weights, rowsOfBlocks(plan as FoldPlan, (plan as FoldPlan).trainBlocks[f]), options, signal, factors));
    return { full, fold, heldOutSums: null, shiftX, shiftY };
  }
  if (!plan) {
    const all = new Int32Array(x.rows);
    for (let i = 0; i < x.rows; i++) all[i] = i;
    const sums = blockSums(x, y, weights, all, shiftX, shiftY, signal, factors);
    return { full: problemFromSums(sums, shiftX, shiftY, options), fold: noFolds, heldOutSums: null, shiftX, shiftY };
  }
  // One pass: every block's sums, then the problems from them.
  const sums = blockSumsOf(x, y, weights, plan.blocks, shiftX, shiftY, signal, factors);
  return problemsFromBlockSums(sums, plan, shiftX, shiftY, options);
}

/**
 * Gram-form problems from every block's sums about the shifts: the total is their sum; a fold's
 * training sums are the sum of its training blocks (total minus its own block when it trains on
 * all the rest). Cost O(blocks·p²). Shared by the rows' one pass and a sums table (fitSums.ts).
 */
export function problemsFromBlockSums(
  sums: BlockSums[],
  plan: FoldPlan,
  shiftX: Float64Array,
  shiftY: number,
  options: { intercept: boolean; standardize: boolean; columnUnits: Float64Array },
): Problems {
  const p = shiftX.length;
  const total = emptySums(p);
  for (const s of sums) accumulateSums(total, s, 1);
  const full = problemFromSums(total, shiftX, shiftY, options);
  const folds = plan.trainBlocks.map((blocks, k) => {
    const training = emptySums(p);
    if (blocks.length === plan.blocks.length - 1) {
      accumulateSums(training, total, 1);
      accumulateSums(training, sums[plan.validateBlock[k]], -1);
      // A maximum can't be subtracted: the training rows' largest magnitudes from their blocks.
      training.largest.fill(0);
      training.largestY = 0;
      for (const b of blocks) takeLargest(training, sums[b]);
    } else {
      for (const b of blocks) accumulateSums(training, sums[b], 1);
    }
    return problemFromSums(training, shiftX, shiftY, options);
  });
  return { full, fold: (f) => folds[f], heldOutSums: plan.validateBlock.map((b) => sums[b]), shiftX, shiftY };
}

/**
 * Least work (rows × (columns + 2)², the pass's products) for a pooled fit to share its pass of
 * block sums (pooledProblems). Below it the pass takes a few ms at most and the round trip and
 * the copy into shared memory would eat the saving. Decides the cost only, never the result.
 */
const POOLED_SUMS_WORK = 1 << 22;

/**
 * What a "block-sums" task reads (FitTaskInput.rows): `values` (shared memory, TaskPool.sharedValues)
 * holds the predictors column by column as the fit's passes read them (n × p), then the target
 * (n), then the weights (n) if any.
 */
interface RowsForSums {
  values: Float64Array;
  rows: number;
  columns: number;
  weighted: boolean;
  factors: Float64Array | null;
  blocks: Int32Array[];
  shiftX: Float64Array;
  shiftY: number;
}

/**
 * buildProblems for a fit on `pool`: a gram-form fit's one pass of block sums (problem.ts
 * blockSumsOf) is shared between this thread and the workers. The rows are copied once into memory
 * the workers share (TaskPool.sharedValues; no copy per worker), each worker sums a run of the
 * blocks ("block-sums" tasks) while this thread sums the first run, and the problems are then
 * built from the sums as buildProblems builds them. blockSumsOf sums each block on its own (its
 * rows in row order, in windows fixed by the data's shape), so a block's sums are the same
 * whichever call over whichever blocks forms them: the same numbers, added in the same block order
 * (problemsFromBlockSums), as the sequential fit's one call (a test checks it). Other fits, pools
 * without shared memory and passes too small to pay build their problems as buildProblems does.
 */
function* pooledProblems(data: Prepared, plan: FoldPlan | null, pool: TaskPool | null): Generator<TaskBatch, Problems, void> {
  const { x, factors } = readX(data);
  const n = x.rows;
  const p = x.columns;
  const K = plan ? plan.blocks.length : 0;
  // This thread and size − 1 workers (at least one): as many threads as the pool has workers,
  // which is as many as there are cores to run them.
  const groups = pool ? Math.min(Math.max(2, pool.size), K) : 0;
  const work = n * (p + 2) * (p + 2);
  if (!plan || !pool?.sharedValues || !data.gram || data.outcome === "two-class" || groups < 2 || work < POOLED_SUMS_WORK) return buildProblems(data, plan);
  const weights = data.weights;
  const values = pool.sharedValues(n * (p + (weights ? 2 : 1)));
  if (!values) return buildProblems(data, plan);
  const signal = data.settings.signal;
  const { shiftX, shiftY } = fullShift(data);
  values.set(x.data.subarray(0, n * p));
  values.set(data.y, n * p);
  if (weights) values.set(weights, n * (p + 1));
  const start = (g: number): number => Math.floor((g * K) / groups);
  const tasks: FitTask[] = [];
  for (let g = 1; g < groups; g++) tasks.push({ kind: "block-sums", from: start(g), to: start(g + 1) });
  const rows: RowsForSums = { values, rows: n, columns: p, weighted: weights !== null, factors, blocks: plan.blocks.map((b) => Int32Array.from(b)), shiftX, shiftY };
  const sums: BlockSums[] = new Array(K);
  const none = new Float64Array(0);
  const sumBlocks = (from: number, to: number): void => {
    blockSumsOf(x, data.y, weights, plan.blocks.slice(from, to), shiftX, shiftY, signal, factors).forEach((block, k) => (sums[from + k] = block));
  };
  yield {
    tasks,
    context: null,
    input: { predictors: { rows: 0, columns: 0, data: none }, target: none, options: {}, rows },
    consume: (i, result) => {
      if (result.kind !== "block-sums") throw new Error("fit: a block-sums task returned another kind of result");
      const from = (tasks[i] as Extract<FitTask, { kind: "block-sums" }>).from;
      result.sums.forEach((block, k) => (sums[from + k] = block));
    },
    finished: () => undefined,
    // While the workers sum theirs, this thread sums the first run of blocks.
    alongside: () => sumBlocks(0, start(1)),
    // (Not reached: a fit run in this thread builds its problems with buildProblems.)
    inline: function* () {
      sumBlocks(0, K);
      yield;
    },
  };
  const columnUnits = Float64Array.from(data.xExponent, (e) => powerOfTwo(e));
  return problemsFromBlockSums(sums, plan, shiftX, shiftY, { intercept: data.intercept, standardize: data.standardize, columnUnits });
}

/** A "block-sums" task (see pooledProblems): its blocks' sums from the shared rows. */
function blockSumsTask(rows: RowsForSums, task: Extract<FitTask, { kind: "block-sums" }>): FitTaskResult {
  const { values, rows: n, columns: p } = rows;
  const x: ColumnMatrix = { rows: n, columns: p, data: values.subarray(0, n * p) };
  const y = values.subarray(n * p, n * (p + 1));
  const weights = rows.weighted ? values.subarray(n * (p + 1), n * (p + 2)) : null;
  return { kind: "block-sums", sums: blockSumsOf(x, y, weights, rows.blocks.slice(task.from, task.to), rows.shiftX, rows.shiftY, undefined, rows.factors) };
}

function noFolds(): TrainingProblem {
  throw new Error("a fit at a fixed strength has no folds");
}

/**
 * One deal of the folds (repeated cross-validation deals the random folds once per seed): its
 * plan, the fold problems built from it, each fold's held-out weight, and its held-out rows and
 * (two-class) training outcomes, gathered once when first asked for.
 */
interface Deal {
  plan: FoldPlan;
  problems: Problems;
  foldWeights: number[];
  heldOut: (fold: number) => HeldOut;
  trainingOutcomes: (fold: number) => Float64Array;
}

function makeDeal(data: Prepared, plan: FoldPlan, problems: Problems): Deal {
  const K = plan.trainBlocks.length;
  const heldOutCache: (HeldOut | null)[] = new Array(K).fill(null);
  const outcomeCache: (Float64Array | null)[] = new Array(K).fill(null);
  return {
    plan,
    problems,
    foldWeights: problems.heldOutWeights ?? plan.validateBlock.map((b) => {
      let s = 0;
      for (const i of plan.blocks[b]) s += data.weights ? data.weights[i] : 1;
      return s;
    }),
    heldOut: (f) => (heldOutCache[f] ??= gatherHeldOut(data, plan.blocks[plan.validateBlock[f]])),
    trainingOutcomes: (f) => (outcomeCache[f] ??= outcomesOf(data, rowsOfBlocks(plan, plan.trainBlocks[f]))),
  };
}

/**
 * Largest number of doubles the extra deals' fold problems and held-out rows may hold together
 * (2^24, 128 MB): within it every deal is built once and kept for all mixes; beyond it (many
 * repeats of wide row-form problems, or of large gram matrices) a deal is rebuilt for each mix,
 * which costs one pass over the data per mix and deal instead of r copies of the folds in memory.
 */
const DEAL_MEMORY = 1 << 24;

/**
 * The deals of repeated cross-validation: deal d uses seed + d (deal 0 is `first`, with the fold
 * problems already built). Returns the deal for an index, built (and kept within DEAL_MEMORY)
 * when first asked for.
 */
function dealSource(data: Prepared, options: FitOptions, first: FoldPlan, firstProblems: Problems, repeats: number): (d: number) => Deal {
  const seed = options.seed ?? 1;
  if (repeats > 1 && Math.abs(seed + repeats - 1) > 4294967295) {
    throw new InputError("setting", `repeats deal the folds with seeds ${seed} to ${seed + repeats - 1}, beyond the largest seed 4294967295: use a smaller seed`);
  }
  const plans = [first];
  for (let d = 1; d < repeats; d++) plans.push(makePlan(data, { ...options, seed: seed + d }));
  const n = data.x.rows;
  const p = data.x.columns;
  const K = first.trainBlocks.length;
  const perDeal = data.gram ? (K + 1) * p * p + n * p : (K + 1) * n * p;
  const keepAll = data.mixes.length === 1 || (repeats - 1) * perDeal <= DEAL_MEMORY;
  const kept: (Deal | null)[] = new Array(repeats).fill(null);
  kept[0] = makeDeal(data, first, firstProblems);
  // Beyond the budget, the last deal built is kept: the fit asks for one deal's folds in a row.
  let last: { d: number; deal: Deal } | null = null;
  return (d) => {
    const have = kept[d] ?? (last && last.d === d ? last.deal : null);
    if (have) return have;
    throwIfCancelled(data.settings.signal);
    const deal = makeDeal(data, plans[d], buildProblems(data, plans[d]));
    if (keepAll) kept[d] = deal;
    else last = { d, deal };
    return deal;
  };
}

/** Held-out data of one fold, gathered once when errors are computed row by row. */
interface HeldOut {
  x: ColumnMatrix;
  y: Float64Array;
  w: Float64Array;
  totalWeight: number;
}

function gatherHeldOut(data: Prepared, rows: Int32Array): HeldOut {
  const source = readX(data);
  // In place: each value × its column's power of two, as the working copy holds it.
  const x = source.factors ? selectScaledRows(source.x, rows, source.factors) : selectRows(source.x, rows);
  const y = new Float64Array(rows.length);
  const w = new Float64Array(rows.length);
  let totalWeight = 0;
  for (let t = 0; t < rows.length; t++) {
    y[t] = data.y[rows[t]];
    w[t] = data.weights ? data.weights[rows[t]] : 1;
    totalWeight += w[t];
  }
  return { x, y, w, totalWeight };
}

/** selectRows of x_j × factors[j] (the working copy's values, read in place). */
function selectScaledRows(matrix: ColumnMatrix, keep: Int32Array, factors: Float64Array): ColumnMatrix {
  const m = keep.length;
  const out = new Float64Array(m * matrix.columns);
  for (let j = 0; j < matrix.columns; j++) {
    const src = j * matrix.rows;
    const dst = j * m;
    const factor = factors[j];
    for (let t = 0; t < m; t++) out[dst + t] = matrix.data[src + keep[t]] * factor;
  }
  return { rows: m, columns: matrix.columns, data: out };
}

/** Weighted mean held-out error of each point of a fold's path. */
function foldErrors(
  data: Prepared,
  problem: TrainingProblem,
  run: PathRun,
  measure: ErrorMeasure,
  sums: BlockSums | null,
  heldOut: () => HeldOut,
  shiftX: Float64Array,
  shiftY: number,
): Float64Array {
  const errors = new Float64Array(run.strengths.length);
  const p = problem.p;
  const std = problem.std;
  // One array of slopes for every strength (slopesInto: toOriginal's slopes, the same products,
  // without its intercept or a new array per strength).
  const coefficients = new Float64Array(p);
  if (sums && measure === "mse") {
    const nz = new Int32Array(p);
    const packed = new Float64Array(p);
    for (let k = 0; k < run.strengths.length; k++) {
      throwIfCancelled(data.settings.signal);
      slopesInto(problem, run.coefficients[k], coefficients);
      errors[k] = Math.max(heldOutSquaredError(sums, std, coefficients, shiftX, shiftY, nz, packed), 0) / sums.weight;
    }
    return errors;
  }
  const held = heldOut();
  const m = held.y.length;
  // Predictions of y − yAnchor in centred form, ȳ-offset + Σ b_j ((x_j − anchor_j) − offset_j):
  // no large intercept cancels against large slopes × values.
  const prediction = new Float64Array(m);
  for (let k = 0; k < run.strengths.length; k++) {
    throwIfCancelled(data.settings.signal);
    slopesInto(problem, run.coefficients[k], coefficients);
    prediction.fill(std.yOffset);
    for (let j = 0; j < p; j++) {
      const b = coefficients[j];
      if (b === 0) continue;
      const off = j * m;
      const anchor = std.xAnchor[j];
      const offset = std.xOffset[j];
      for (let t = 0; t < m; t++) prediction[t] += b * (held.x.data[off + t] - anchor - offset);
    }
    let loss = 0;
    for (let t = 0; t < m; t++) {
      const e = held.y[t] - std.yAnchor - prediction[t];
      loss += held.w[t] * (measure === "mse" ? e * e : Math.abs(e));
    }
    errors[k] = loss / held.totalWeight;
  }
  return errors;
}

/** The nonzero slopes' columns into `nz` and the slopes into `packed`, side by side, in column order; returns how many. */
function packNonzero(coefficients: Float64Array, p: number, nz: Int32Array, packed: Float64Array): number {
  let count = 0;
  for (let j = 0; j < p; j++) {
    if (coefficients[j] !== 0) {
      packed[count] = coefficients[j];
      nz[count++] = j;
    }
  }
  return count;
}

/**
 * c = b0 − shiftY + bᵀshiftX of squaredErrorOfSums, from the centres' parts relative to the shifts
 * over the packed nonzero slopes (packNonzero), in column order.
 */
function centreTerm(std: Standardization, shiftX: Float64Array, shiftY: number, nz: Int32Array, packed: Float64Array, count: number): number {
  let c = std.yAnchor - shiftY + std.yOffset;
  for (let a = 0; a < count; a++) {
    const j = nz[a];
    c -= packed[a] * (std.xAnchor[j] - shiftX[j] + std.xOffset[j]);
  }
  return c;
}

/**
 * Σw(y − ŷ)² and Σw(y − ŷ) of the rows behind `sums` for the model with working coefficients
 * `coefficients` and the centres of `std`, from the sums alone. Over the block's sums (x' = x − shift,
 * y' = y − shift) with residual y' − c − bᵀx':
 * SSE = yy − 2c·Σy' − 2bᵀxy + c²W + 2c·bᵀΣx' + bᵀ xx b, and the residuals' sum Σy' − cW − bᵀΣx'.
 * c = b0 − shiftY + bᵀshiftX, formed from the centres' parts relative to the shifts (a fold's
 * anchors are these shifts), never from b0 itself, which a large offset would make imprecise.
 * `nz` and `packed` are scratch space of p entries: the nonzero slopes' columns and the slopes
 * themselves side by side, so the O(nonzero²) quadratic form reads its coefficients in order
 * rather than through the column list (the same products in the same order).
 */
function squaredErrorOfSums(
  sums: BlockSums,
  std: Standardization,
  coefficients: Float64Array,
  shiftX: Float64Array,
  shiftY: number,
  nz: Int32Array,
  packed: Float64Array = new Float64Array(sums.p),
): { sse: number; residualSum: number } {
  const p = sums.p;
  const count = packNonzero(coefficients, p, nz, packed);
  const c = centreTerm(std, shiftX, shiftY, nz, packed, count);
  let sse = sums.yy - 2 * c * sums.sumY + c * c * sums.weight;
  let residualSum = sums.sumY - c * sums.weight;
  const xx = sums.xx;
  const xy = sums.xy;
  const sumX = sums.sumX;
  // Four rows of the quadratic form at a time: each row's sum is its own chain in increasing b,
  // as in the one-row loop, but the four chains run side by side and share each slope's load
  // (a lone chain waits on its previous addition). The rows' terms then join sse and
  // residualSum in row order, so both are the same bit for bit.
  let a = 0;
  for (; a + 3 < count; a += 4) {
    const off0 = nz[a] * p;
    const off1 = nz[a + 1] * p;
    const off2 = nz[a + 2] * p;
    const off3 = nz[a + 3] * p;
    let q0 = 0;
    let q1 = 0;
    let q2 = 0;
    let q3 = 0;
    for (let b = 0; b < count; b++) {
      const k = nz[b];
      const v = packed[b];
      q0 += xx[off0 + k] * v;
      q1 += xx[off1 + k] * v;
      q2 += xx[off2 + k] * v;
      q3 += xx[off3 + k] * v;
    }
    sse = addRowTerms(sse, packed[a], nz[a], q0, c, xy, sumX);
    residualSum -= packed[a] * sumX[nz[a]];
    sse = addRowTerms(sse, packed[a + 1], nz[a + 1], q1, c, xy, sumX);
    residualSum -= packed[a + 1] * sumX[nz[a + 1]];
    sse = addRowTerms(sse, packed[a + 2], nz[a + 2], q2, c, xy, sumX);
    residualSum -= packed[a + 2] * sumX[nz[a + 2]];
    sse = addRowTerms(sse, packed[a + 3], nz[a + 3], q3, c, xy, sumX);
    residualSum -= packed[a + 3] * sumX[nz[a + 3]];
  }
  for (; a < count; a++) {
    const j = nz[a];
    const bj = packed[a];
    let quad = 0;
    const off = j * p;
    for (let b = 0; b < count; b++) quad += xx[off + nz[b]] * packed[b];
    sse = addRowTerms(sse, bj, j, quad, c, xy, sumX);
    residualSum -= bj * sumX[j];
  }
  return { sse, residualSum };
}

/**
 * squaredErrorOfSums' SSE alone, its quadratic form bᵀ xx b taken from the lower triangle of the
 * nonzero block (xx is symmetric): Σ_a b_a (xx_aa b_a + 2 Σ_{b<a} xx_ab b_b), half the products.
 * The sums of that form are ordered differently from squaredErrorOfSums', so the result can
 * differ from it in the last bits. Four rows at a time over their shared columns b < a, each
 * row's sum its own chain. For the held-out errors (foldErrors), called per fold and strength.
 */
function heldOutSquaredError(
  sums: BlockSums,
  std: Standardization,
  coefficients: Float64Array,
  shiftX: Float64Array,
  shiftY: number,
  nz: Int32Array,
  packed: Float64Array,
): number {
  const p = sums.p;
  const count = packNonzero(coefficients, p, nz, packed);
  const c = centreTerm(std, shiftX, shiftY, nz, packed, count);
  let sse = sums.yy - 2 * c * sums.sumY + c * c * sums.weight;
  const xx = sums.xx;
  const xy = sums.xy;
  const sumX = sums.sumX;
  let a = 0;
  for (; a + 3 < count; a += 4) {
    const off0 = nz[a] * p;
    const off1 = nz[a + 1] * p;
    const off2 = nz[a + 2] * p;
    const off3 = nz[a + 3] * p;
    let q0 = 0;
    let q1 = 0;
    let q2 = 0;
    let q3 = 0;
    for (let b = 0; b < a; b++) {
      const k = nz[b];
      const v = packed[b];
      q0 += xx[off0 + k] * v;
      q1 += xx[off1 + k] * v;
      q2 += xx[off2 + k] * v;
      q3 += xx[off3 + k] * v;
    }
    const b0 = packed[a];
    const b1 = packed[a + 1];
    const b2 = packed[a + 2];
    const b3 = packed[a + 3];
    const k0 = nz[a];
    const k1 = nz[a + 1];
    const k2 = nz[a + 2];
    q1 += xx[off1 + k0] * b0;
    q2 += xx[off2 + k0] * b0 + xx[off2 + k1] * b1;
    q3 += xx[off3 + k0] * b0 + xx[off3 + k1] * b1 + xx[off3 + k2] * b2;
    sse = addRowTerms(sse, b0, k0, 2 * q0 + xx[off0 + k0] * b0, c, xy, sumX);
    sse = addRowTerms(sse, b1, k1, 2 * q1 + xx[off1 + k1] * b1, c, xy, sumX);
    sse = addRowTerms(sse, b2, k2, 2 * q2 + xx[off2 + k2] * b2, c, xy, sumX);
    sse = addRowTerms(sse, b3, nz[a + 3], 2 * q3 + xx[off3 + nz[a + 3]] * b3, c, xy, sumX);
  }
  for (; a < count; a++) {
    const j = nz[a];
    const bj = packed[a];
    const off = j * p;
    let quad = 0;
    for (let b = 0; b < a; b++) quad += xx[off + nz[b]] * packed[b];
    sse = addRowTerms(sse, bj, j, 2 * quad + xx[off + j] * bj, c, xy, sumX);
  }
  return sse;
}

/** squaredErrorOfSums' terms of row j (slope bj, quadratic-form row sum `quad`), added to sse in the one-row loop's order. */
function addRowTerms(sse: number, bj: number, j: number, quad: number, c: number, xy: Float64Array, sumX: Float64Array): number {
  sse += -2 * bj * xy[j] + 2 * c * bj * sumX[j];
  return sse + bj * quad;
}

/**
 * The in-sample score of a fit from sums (Prepared.totalSums), in the target's units: RMSE, R² and
 * bias from the whole data's sums (squaredErrorOfSums); the MAE needs the rows and is NaN; count is
 * the rows the sums cover. R² is 1 − SSE / Σw(y − ȳ)², as score() computes it from rows.
 */
function scoreOfSums(data: Prepared, full: TrainingProblem, coefficients: Float64Array): Score {
  const total = data.totalSums as NonNullable<Prepared["totalSums"]>;
  const sums = total.sums;
  const { sse, residualSum } = squaredErrorOfSums(sums, full.std, coefficients, total.shiftX, total.shiftY, new Int32Array(full.p));
  const spread = sums.yy - (sums.sumY * sums.sumY) / sums.weight;
  const inTargetUnits = (value: number): number => scaleByPowerOfTwo(value, -data.yExponent);
  return {
    mae: NaN,
    rmse: inTargetUnits(Math.sqrt(Math.max(sse, 0) / sums.weight)),
    r2: spread > 0 ? 1 - Math.max(sse, 0) / spread : NaN,
    bias: inTargetUnits(-residualSum / sums.weight) || 0,
    count: sums.rows,
  };
}

/** Held-out errors of an exact ridge path, predicted through the eigendecomposition. */
function spectralFoldErrors(
  problem: TrainingProblem,
  spectral: SpectralRidge,
  strengths: readonly number[],
  held: HeldOut,
  measure: ErrorMeasure,
  signal: CancelSignal | undefined,
): Float64Array {
  const predictAt = spectral.heldOutPredictor(held.x);
  const prediction = new Float64Array(held.y.length);
  const errors = new Float64Array(strengths.length);
  const anchor = problem.std.yAnchor;
  for (let k = 0; k < strengths.length; k++) {
    throwIfCancelled(signal);
    predictAt(strengths[k], prediction);
    let loss = 0;
    for (let t = 0; t < prediction.length; t++) {
      const e = held.y[t] - anchor - prediction[t];
      loss += held.w[t] * (measure === "mse" ? e * e : Math.abs(e));
    }
    errors[k] = loss / held.totalWeight;
  }
  return errors;
}

/**
 * Mean and standard error over folds at each strength. Folds are weighted by their held-out
 * weight W_k: mean = Σ W_k e_k / Σ W_k; SE = sqrt( [Σ W_k (e_k − mean)² / Σ W_k] · K/(K − 1) / K ),
 * which for equal folds is the SD over folds (divisor K − 1) / √K.
 * `points` is the full-data path's length (shorter than the grid when that path ended early);
 * every fold has an error for each of those strengths, never fewer (fold paths don't end early).
 */
function summarise(errors: Float64Array[], foldWeights: number[], points: number): { mean: Float64Array; se: Float64Array } {
  const K = errors.length;
  for (const fold of errors) {
    if (fold.length !== points) throw new Error(`a fold has ${fold.length} errors for a path of ${points} strengths`);
  }
  const mean = new Float64Array(points);
  const se = new Float64Array(points);
  let totalWeight = 0;
  for (const w of foldWeights) totalWeight += w;
  for (let k = 0; k < points; k++) {
    let m = 0;
    for (let f = 0; f < K; f++) m += foldWeights[f] * errors[f][k];
    m /= totalWeight;
    let v = 0;
    for (let f = 0; f < K; f++) v += foldWeights[f] * (errors[f][k] - m) * (errors[f][k] - m);
    v /= totalWeight;
    mean[k] = m;
    se[k] = K > 1 ? Math.sqrt((v * K) / (K - 1) / K) : 0;
  }
  return { mean, se };
}

interface MixOutcome {
  mix: number;
  top: number;
  run: PathRun;
  mean: Float64Array;
  se: Float64Array;
}

/**
 * Fits the model. Synchronous; see `fitAsync` for a version that yields to the event loop
 * between units of work. Throws InputError for input it cannot fit, CancelledError when
 * the signal is raised.
 */
export function fit(
  predictors: ArrayLike<ArrayLike<number>> | ColumnMatrix,
  target: ArrayLike<number>,
  options: FitOptions = {},
): FitResult {
  const steps = fitSteps(predictors, target, options);
  for (;;) {
    const step = steps.next();
    if (step.done) return step.value;
  }
}

/**
 * As `fit`, but awaits a macrotask between units of work so messages (cancel) get through.
 * With `run.pool` (parallel.ts) the mixes' paths and the folds run on the pool's workers:
 * the result is bit-identical to `fit`'s; progress counts the units as they complete, and
 * raising the signal stops every worker at once (CancelledError). The honest error's and
 * stability selection's extra fits run in this thread.
 */
export async function fitAsync(
  predictors: ArrayLike<ArrayLike<number>> | ColumnMatrix,
  target: ArrayLike<number>,
  options: FitOptions = {},
  run: RunOptions = {},
): Promise<FitResult> {
  return runPlanAsync(fitPlan(predictors, target, options, run.pool ?? null), options, run.pool ?? null);
}

/**
 * Runs a fit's plan (fitPlan, or fitSums.ts's plan from a sums table) awaiting a macrotask between
 * units of work; with a pool, its batches of tasks run on the pool's workers (see fitAsync).
 */
export async function runPlanAsync(plan: FitPlan, options: FitOptions, pool: TaskPool | null): Promise<FitResult> {
  if (!pool) {
    const steps = runPlan(plan, options);
    for (;;) {
      const step = steps.next();
      if (step.done) return step.value;
      await nextTask();
    }
  }
  let session: TaskSession | null = null;
  try {
    for (;;) {
      const step = plan.next();
      if (step.done) return step.value;
      const batch = step.value;
      if (!batch) {
        await nextTask();
        continue;
      }
      throwIfCancelled(options.signal);
      if (batch.input) {
        // A batch with its own input (pooledProblems' rows) runs in a session of its own, and
        // this thread does its share of the work (`alongside`) while the workers do theirs.
        session?.close();
        session = pool.open(batch.input);
        const running = session.run(batch.tasks, batch.consume, batch.finished, options.signal);
        try {
          batch.alongside?.();
        } catch (error) {
          running.catch(() => undefined);
          throw error;
        }
        await running;
        session.close();
        session = null;
        continue;
      }
      session ??= pool.open(taskInput(batch.context as TaskContext, options));
      await session.run(batch.tasks, batch.consume, batch.finished, options.signal);
    }
  } finally {
    session?.close();
  }
}

/**
 * Resolves in a fresh macrotask, so messages waiting in the queue (a cancel posted to a
 * worker) are handled first. A MessageChannel round trip is used where available: browsers
 * clamp nested setTimeout(0) to 4 ms, which would add ~4 ms per unit of work.
 */
export function nextTask(): Promise<void> {
  if (typeof MessageChannel !== "undefined") {
    return new Promise<void>((resolve) => {
      const channel = new MessageChannel();
      channel.port1.onmessage = () => {
        channel.port1.close();
        resolve();
      };
      channel.port2.postMessage(null);
    });
  }
  return new Promise<void>((resolve) => setTimeout(resolve, 0));
}

/** The fit as a generator: yields after each unit of work (progress already reported). */
export function* fitSteps(
  predictors: ArrayLike<ArrayLike<number>> | ColumnMatrix,
  target: ArrayLike<number>,
  options: FitOptions = {},
): Generator<void, FitResult, void> {
  return yield* runPlan(fitPlan(predictors, target, options), options);
}

/** Runs a fit's plan in this thread (fitSteps; fitSums.ts): yields after each unit of work. */
export function* runPlan(plan: FitPlan, options: FitOptions): Generator<void, FitResult, void> {
  for (;;) {
    const step = plan.next();
    if (step.done) return step.value;
    const batch = step.value;
    if (!batch) {
      yield;
      continue;
    }
    if (batch.inline) {
      yield* batch.inline();
      continue;
    }
    // The sequential run: the batch's tasks one after another, on the fit's own context.
    for (let i = 0; i < batch.tasks.length; i++) {
      throwIfCancelled(options.signal);
      batch.consume(i, runFitTask(batch.context as TaskContext, batch.tasks[i]));
      batch.finished(i);
      yield;
    }
  }
}

/** How a pooled fit runs (fitAsync's fourth argument). */
export interface RunOptions {
  /** Runs the folds and mixes in parallel (parallel.ts); results are bit-identical to the sequential fit. */
  pool?: TaskPool | null;
}

/**
 * A batch of tasks the fit's plan asks for (parallel.ts): run them, in any order and on any
 * worker, hand each result to `consume` in task order, and call `finished` as each completes
 * (progress). `context` is the fit's own, for running them in this thread.
 */
interface TaskBatch {
  tasks: FitTask[];
  /** Null for a batch with its own `input` (its sequential run is `inline`). */
  context: TaskContext | null;
  /** What the pool's workers are sent for this batch instead of the fit's input (pooledProblems). */
  input?: FitTaskInput;
  /** With `input`: this thread's share of the work, run while the workers run the tasks. */
  alongside?: () => void;
  consume: (index: number, result: FitTaskResult) => void;
  finished: (index: number) => void;
  /**
   * Runs the same work in this thread instead, yielding inside the tasks (the honest error's inner
   * fits, so a cancel gets through between their units); the sequential run uses it.
   */
  inline?: () => Generator<void, void, void>;
}

/**
 * The fit as a plan: yields batches of tasks (the caller runs them and hands back the results
 * through the batch's consume) and, between other units of work, undefined (a point to yield).
 */
export type FitPlan = Generator<TaskBatch | void, FitResult, void>;

/** Everything the tasks of one cross-validated fit read (parallel.ts): built by the fit, and by each pool worker from the same inputs. */
export interface TaskContext {
  data: Prepared;
  problems: Problems;
  plan: FoldPlan;
  deals: (d: number) => Deal;
  measure: ErrorMeasure;
  repeats: number;
  /** Exact-ridge factorizations of first-deal folds in kernel form ("mix:fold"), kept for fold-point tasks. */
  spectral: Map<string, SpectralRidge>;
  /** The fit's options (a worker's: without callbacks, honest error or stability), for the honest error's outer folds. */
  options: FitOptions;
  /** The honest error's outer split, made when its first outer fold is asked for. */
  honest?: HonestPlan;
}

/** What a pool worker holds for a session: a fit's task context, or the rows its block sums read (pooledProblems). */
export type WorkerContext = TaskContext | { rows: RowsForSums };

/** The checked options and everything built before the first path is solved. */
export interface SetUp {
  data: Prepared;
  warnings: FitWarning[];
  fixed: number | null;
  plan: FoldPlan | null;
  problems: Problems;
  repeats: number;
  honestError: boolean;
  constantColumns: string[];
}

function setUp(predictors: ArrayLike<ArrayLike<number>> | ColumnMatrix, target: ArrayLike<number>, options: FitOptions): SetUp {
  const step = setUpSteps(predictors, target, options, null).next();
  if (!step.done) throw new Error("setUp: a set-up without a pool yields no tasks");
  return step.value;
}

/** setUp; on a pool the pass of block sums may be shared with the workers (pooledProblems). */
function* setUpSteps(predictors: ArrayLike<ArrayLike<number>> | ColumnMatrix, target: ArrayLike<number>, options: FitOptions, pool: TaskPool | null): Generator<TaskBatch, SetUp, void> {
  const outcome = options.outcome ?? "number";
  if (outcome !== "number" && outcome !== "two-class") {
    throw new InputError("setting", `the outcome must be number or two-class; got ${String(outcome)}`);
  }
  checkMeasure(options.measure, outcome);
  const repeats = checkRepeats(options.repeats);
  const honestError = options.honestError ?? false;
  if (typeof honestError !== "boolean") throw new InputError("setting", `honest error must be yes or no; got ${String(honestError)}`);
  const data = prepare(predictors, target, options);
  const warnings: FitWarning[] = [];
  const fixed = options.strength ?? null;
  if (fixed !== null) {
    if (typeof fixed !== "number" || !Number.isFinite(fixed) || fixed < 0) {
      throw new InputError("strength", `strength ${String(fixed)} is not allowed: give a strength of 0 or more`);
    }
    if (data.mixes.length !== 1) {
      throw new InputError("mix", `a fixed strength is fitted at one mix, but ${data.mixes.length} mixes were given: give a single mix`);
    }
    // Both options assess or repeat a choice; a fixed strength makes none (no cross-validation).
    if (honestError) {
      throw new InputError(
        "setting",
        "honest error assesses the whole procedure that chooses the strength (and mix) by cross-validation, and a fixed strength chooses nothing: leave the strength blank to cross-validate, or turn honest error off",
      );
    }
    if (repeats > 1) {
      throw new InputError("setting", `repeats deal the cross-validation folds again, and a fixed strength is fitted without cross-validation: leave the strength blank, or set repeats to 1 (got ${repeats})`);
    }
  }
  const plan = fixed === null ? makePlan(data, options) : null;
  if (plan && repeats > 1 && plan.scheme !== "random") {
    throw new InputError(
      "setting",
      `repeats need random folds: ${plan.scheme === "labels" ? "fold labels give" : "time-ordered folds give"} one split of the rows only, so dealing it ${repeats} times would repeat the same folds; set repeats to 1, or use random folds`,
    );
  }
  throwIfCancelled(data.settings.signal);
  const problems = pool ? yield* pooledProblems(data, plan, pool) : buildProblems(data, plan);
  const full = problems.full;
  const constantColumns: string[] = [];
  for (let j = 0; j < full.p; j++) if (full.std.frozen[j]) constantColumns.push(data.names[j]);
  if (constantColumns.length === full.p) {
    throw new InputError("no-predictors", `every predictor is constant (${constantColumns.join(", ")}): there is nothing to fit with`);
  }
  if (constantColumns.length > 0) {
    warnings.push({
      code: "constant-column",
      message: `${constantColumns.join(", ")} ${constantColumns.length === 1 ? "is" : "are"} constant and left out (coefficient 0)`,
    });
  }
  return { data, warnings, fixed, plan, problems, repeats, honestError, constantColumns };
}

/**
 * A pool worker's context for a fit (parallel.ts createTaskHost): the fit's set-up rebuilt from
 * the inputs it was sent (the checked data and the options without callbacks), the same
 * arithmetic as the fit's own, so every task computes the same numbers in either place.
 */
export function openTaskContext(input: FitTaskInput): WorkerContext {
  if (input.rows) return { rows: input.rows as RowsForSums };
  if (input.snapshot) return contextFromSnapshot(input.snapshot as TaskSnapshot);
  const options = input.options as FitOptions;
  const s = setUp(input.predictors, input.target, options);
  if (s.plan === null) throw new Error("openTaskContext: a fit at a fixed strength has no tasks");
  return {
    data: s.data,
    problems: s.problems,
    plan: s.plan,
    deals: dealSource(s.data, options, s.plan, s.problems, s.repeats),
    measure: checkMeasure(options.measure, s.data.outcome),
    repeats: s.repeats,
    spectral: new Map(),
    options,
  };
}

/**
 * What a gram-form fit scored by squared error sends its workers instead of the rows: the
 * prepared settings (rows left out: its folds' problems and held-out errors come from sums) and
 * every deal's plan and problems as the fit built them, so a worker's tasks read the very same
 * numbers without a pass over the data of their own.
 */
interface TaskSnapshot {
  data: Prepared;
  plans: FoldPlan[];
  problems: { full: TrainingProblem; folds: TrainingProblem[]; heldOutSums: BlockSums[] | null; shiftX: Float64Array; shiftY: number }[];
}

/**
 * Most doubles a snapshot may hold (every deal's full and fold problems and held-out sums, about
 * repeats × (2K + 1) × p²): beyond both this and twice the data's size, workers get the rows and
 * build their problems themselves. Decides the cost only, never the result.
 */
const SNAPSHOT_DOUBLES = 1 << 21;

/** What a pool worker is sent (parallel.ts FitTaskInput): the checked inputs (or a snapshot), and options without callbacks or the extra fits that run in the coordinator. */
function taskInput(context: TaskContext, options: FitOptions): FitTaskInput {
  const { data } = context;
  const plain: Record<string, unknown> = {};
  for (const [key, value] of Object.entries(options)) {
    if (key === "onProgress" || key === "signal" || key === "stability" || key === "honestError" || typeof value === "function") continue;
    plain[key] = value;
  }
  plain.weights = data.original.weights;
  const n = data.x.rows;
  const p = data.x.columns;
  const K = context.plan.trainBlocks.length;
  const snapshotSize = context.repeats * (2 * K + 1) * p * p;
  // The honest error's outer folds fit rows: workers need them then. A fit from sums has no rows
  // to send: its workers always get the snapshot (the problems the fit itself holds).
  const fromSums = data.totalSums !== null;
  if (!options.honestError && data.gram && data.outcome === "number" && context.measure === "mse" && (fromSums || snapshotSize <= Math.max(2 * n * p, SNAPSHOT_DOUBLES))) {
    const none = new Float64Array(0);
    const noRows: ColumnMatrix = { rows: n, columns: p, data: none };
    const deals = Array.from({ length: context.repeats }, (_, d) => context.deals(d));
    const snapshot: TaskSnapshot = {
      data: { ...data, x: noRows, inPlace: null, y: none, original: { x: noRows, y: none, weights: null }, settings: { ...data.settings, signal: undefined } },
      plans: deals.map((deal) => deal.plan),
      problems: deals.map(({ problems }) => ({
        full: problems.full,
        folds: Array.from({ length: K }, (_, f) => problems.fold(f)),
        heldOutSums: problems.heldOutSums,
        shiftX: problems.shiftX,
        shiftY: problems.shiftY,
      })),
    };
    return { predictors: noRows, target: none, options: plain, snapshot };
  }
  return { predictors: data.original.x, target: data.original.y, options: plain };
}

/** A worker's context from a snapshot (see TaskSnapshot). */
function contextFromSnapshot(snapshot: TaskSnapshot): TaskContext {
  const data = snapshot.data;
  const deals = snapshot.problems.map((problems, d) =>
    makeDeal(data, snapshot.plans[d], { ...problems, fold: (f) => problems.folds[f] }),
  );
  return { data, problems: deals[0].problems, plan: snapshot.plans[0], deals: (d) => deals[d], measure: "mse", repeats: deals.length, spectral: new Map(), options: {} };
}

/** The whole fit as a plan (see FitPlan): fitSteps runs its batches in this thread, fitAsync with a pool in workers. */
function* fitPlan(
  predictors: ArrayLike<ArrayLike<number>> | ColumnMatrix,
  target: ArrayLike<number>,
  options: FitOptions,
  pool: TaskPool | null = null,
): FitPlan {
  return yield* planFromSetUp(yield* setUpSteps(predictors, target, options, pool), options);
}

/**
 * The fit after its set-up (fitPlan; a fit from sums builds its own set-up: fitSums.ts). Runs
 * sequentially through `runPlan`.
 */
export function* planFromSetUp(s: SetUp, options: FitOptions): FitPlan {
  const { data, warnings, fixed, plan, problems, repeats, honestError, constantColumns } = s;
  const full = problems.full;
  // Stability selection (stability.ts): its settings are checked before any fitting.
  if (options.stability) {
    if (fixed !== null) {
      throw new InputError("setting", "stability selection needs the path of the mix that cross-validation chooses, and a fixed strength skips cross-validation: remove the fixed strength, or leave stability selection off");
    }
    stabilityTerms(data, full, options);
  }
  if (fixed !== null) {
    if (data.outcome === "two-class") return fixedTwoClass(data, full, fixed, constantColumns, warnings);
    if (fixed === 0 && !data.bounded) {
      return leastSquaresResult(data, full, constantColumns, warnings);
    }
    return fixedResult(data, full, fixed, constantColumns, warnings);
  }
  if (data.strengthCount === 1) {
    throw new InputError(
      "setting",
      "the number of strengths is 1: a grid of one strength leaves cross-validation nothing to choose (its one point is the top of the grid, the strongest penalty); use 2 or more (by default the grid has 20 per tenfold drop), or fit one point with a fixed strength",
    );
  }
  const activePlan = plan as FoldPlan;
  const measure = checkMeasure(options.measure, data.outcome);
  const rule = typeof options.rule === "string" ? parseRule(options.rule) : options.rule == null ? "lowest" : null;
  if (rule === null) throw new InputError("setting", `the rule must be lowest or one-se; got ${String(options.rule)}`);
  const context: TaskContext = {
    data,
    problems,
    plan: activePlan,
    deals: dealSource(data, options, activePlan, problems, repeats),
    measure,
    repeats,
    spectral: new Map(),
    options,
  };
  if (data.outcome === "two-class") {
    return yield* twoClassSteps(context, rule, options, constantColumns, warnings, honestError);
  }
  const K = activePlan.trainBlocks.length;
  const honest = honestError ? honestSetup(data, options, activePlan, repeats) : null;
  const cvUnits = data.mixes.length * (repeats * K + 1);
  // Stability selection's units (2 per pair) come last: after cross-validation and the honest error.
  const totalUnits = cvUnits + (honest?.units ?? 0) + stabilityUnits(options.stability);
  let done = 0;
  const unitDone = (): void => options.onProgress?.(++done, totalUnits);
  const M = data.mixes.length;
  let allKkt = 0;
  let allConverged = true;
  let sweeps = 0;
  // Every mix's full-data path first (each fixes the strengths its folds solve), in parallel.
  const paths: { top: number; run: PathRun }[] = [];
  const pathResults: FitTaskResult[] = new Array(M);
  yield { tasks: data.mixes.map((_, m) => ({ kind: "path", mix: m })), context, consume: (m, result) => (pathResults[m] = result), finished: unitDone };
  for (let m = 0; m < M; m++) {
    const result = pathResults[m];
    if (result.kind === "failed") throw new InputError(result.code, result.message);
    if (result.kind !== "path") throw new Error("fit: a path task returned another kind of result");
    paths.push({ top: result.top, run: result.run });
    sweeps += result.run.sweeps;
    allKkt = Math.max(allKkt, result.run.maxKktViolation);
    if (result.run.notConverged.length > 0) allConverged = false;
  }
  // Then every (mix, deal, fold), merged in that order whatever order they finish in.
  const outcomes: MixOutcome[] = [];
  // The fold paths of the mix holding the lowest error so far (the chosen mix at the end, as the
  // choice below takes the first mix reaching the lowest error): CV+ intervals need each fold's
  // model at the chosen point. At most two mixes' fold paths are held at once. With repeats, these
  // are the first deal's (CV+ needs one partition of the rows); the kept shares count signs over
  // every deal's folds (SignTally, repeats.ts), a few counts per strength and term.
  let chosenFolds: FoldPoints[] = [];
  let chosenMix = 0;
  let chosenTally = null as SignTally | null;
  let lowestSoFar = Infinity;
  const foldTasks: FitTask[] = [];
  for (let m = 0; m < M; m++) {
    for (let d = 0; d < repeats; d++) {
      for (let f = 0; f < K; f++) {
        foldTasks.push({ kind: "fold", mix: m, deal: d, fold: f, strengths: paths[m].run.strengths, keepPath: d === 0, keepSigns: repeats > 1 });
      }
    }
  }
  // The mix being merged.
  let foldPoints: FoldPoints[] = [];
  let errors: Float64Array[] = [];
  let weightsOfFolds: number[] = [];
  let dealSes: Float64Array[] = [];
  let dealErrors: Float64Array[] = [];
  let tally = null as SignTally | null;
  const consumeFold = (index: number, result: FitTaskResult): void => {
    const task = foldTasks[index] as Extract<FitTask, { kind: "fold" }>;
    if (result.kind !== "fold") throw new Error("fit: a fold task returned another kind of result");
    const { mix: m, deal: d, fold: f } = task;
    const run = paths[m].run;
    if (d === 0 && f === 0) {
      foldPoints = [];
      errors = [];
      weightsOfFolds = [];
      dealSes = [];
      tally = repeats > 1 ? new SignTally(run.strengths.length, full.p) : null;
    }
    if (f === 0) dealErrors = [];
    sweeps += result.sweeps;
    allKkt = Math.max(allKkt, result.maxKktViolation);
    if (!result.converged) allConverged = false;
    dealErrors.push(result.errors);
    if (d === 0) foldPoints.push({ std: result.std as Standardization, p: full.p, path: result.path });
    if (tally && result.signs) tally.addSigns(result.signs);
    if (f < K - 1) return;
    const deal = context.deals(d);
    errors.push(...dealErrors);
    weightsOfFolds.push(...deal.foldWeights);
    if (repeats > 1) dealSes.push(summarise(dealErrors, deal.foldWeights, run.strengths.length).se);
    if (d < repeats - 1) return;
    // Repeated CV: the mean pools all repeats × K held-out folds (fold-weighted); the SE is the
    // average of each deal's own SE (see FitOptions.repeats and averageOfDeals in repeats.ts).
    const summary = summarise(errors, weightsOfFolds, run.strengths.length);
    const mean = summary.mean;
    const se = repeats > 1 ? averageOfDeals(dealSes) : summary.se;
    outcomes.push({ mix: data.mixes[m], top: paths[m].top, run, mean, se });
    let lowest = Infinity;
    for (let k = 0; k < mean.length; k++) lowest = Math.min(lowest, mean[k]);
    if (chosenFolds.length === 0 || lowest < lowestSoFar) {
      chosenFolds = foldPoints;
      chosenMix = m;
      chosenTally = tally;
      lowestSoFar = lowest;
    }
  };
  yield { tasks: foldTasks, context, consume: consumeFold, finished: unitDone };
  // Choices: lowest mean error over every mix and strength (ties go to the larger strength,
  // then the earlier mix); one-SE: the largest strength of that mix within one SE of it.
  let best = outcomes[0];
  let bestIndex = 0;
  for (const outcome of outcomes) {
    for (let k = 0; k < outcome.mean.length; k++) {
      if (outcome.mean[k] < best.mean[bestIndex]) {
        best = outcome;
        bestIndex = k;
      }
    }
  }
  const limit = best.mean[bestIndex] + best.se[bestIndex];
  let oneSeIndex = bestIndex;
  for (let k = 0; k < bestIndex; k++) {
    if (best.mean[k] <= limit) {
      oneSeIndex = k;
      break;
    }
  }
  // The choice was made on the working copy's errors; the reported ones are in the target's units.
  const units = errorUnits(data, measure);
  const point = (outcome: MixOutcome, index: number): ChoicePoint => ({
    mix: outcome.mix,
    strength: outcome.run.strengths[index],
    strengthFraction: outcome.run.strengths[index] / outcome.top,
    index,
    error: units.convert(outcome.mean[index]),
    se: units.convert(outcome.se[index]),
    termsKept: outcome.run.nonzero[index],
  });
  const choices = { lowest: point(best, bestIndex), oneSe: point(best, oneSeIndex) };
  const chosen = rule === "lowest" ? choices.lowest : choices.oneSe;
  const table: CvRow[] = [];
  for (const outcome of outcomes) {
    for (let k = 0; k < outcome.mean.length; k++) {
      table.push({
        mix: outcome.mix,
        strength: outcome.run.strengths[k],
        error: units.convert(outcome.mean[k]),
        se: units.convert(outcome.se[k]),
        termsKept: outcome.run.nonzero[k],
      });
    }
  }
  const unshown = units.warning();
  if (unshown) warnings.push(unshown);
  if (bestIndex === best.run.strengths.length - 1 && best.run.earlyStop === null) {
    warnings.push({
      code: "grid-edge",
      message: `the lowest cross-validated error is at the weakest strength tried (${formatNumber(best.run.strengths[bestIndex])}): a smaller low-end ratio may find a better model`,
    });
  }
  if (!allConverged) {
    warnings.push({ code: "not-converged", message: "some fits hit the sweep cap before converging: raise the sweep cap or loosen the tolerance; results near those strengths are approximate" });
  }
  // The in-sample score is formed in heldOutModels' pass over the rows (below).
  const result = assemble(data, full, best.run, best.top, chosen.index, best.mix, constantColumns, warnings, true);
  result.rule = rule;
  result.strengthFraction = chosen.strengthFraction;
  result.choices = choices;
  result.cv = {
    measure,
    scheme: activePlan.scheme,
    folds: K,
    seed: activePlan.scheme === "random" ? (options.seed ?? 1) : null,
    repeats,
    table,
  };
  result.diagnostics.sweeps = sweeps;
  result.diagnostics.maxKktViolationAllFits = allKkt;
  result.diagnostics.converged = allConverged;
  // Exact-ridge folds in kernel form keep no path: their coefficients at the chosen strength.
  const pointTasks: FitTask[] = [];
  const pointFolds: number[] = [];
  chosenFolds.forEach((points, f) => {
    if (points.path === null) {
      pointTasks.push({ kind: "fold-point", mix: chosenMix, fold: f, strength: best.run.strengths[chosen.index] });
      pointFolds.push(f);
    }
  });
  const pointAt = new Map<number, Float64Array>();
  if (pointTasks.length > 0) {
    yield {
      tasks: pointTasks,
      context,
      consume: (i, point) => {
        if (point.kind !== "fold-point") throw new Error("fit: a fold-point task returned another kind of result");
        pointAt.set(pointFolds[i], point.coefficients);
      },
      finished: () => undefined,
    };
  }
  const kept = heldOutModels(data, activePlan, chosenFolds, chosen.index, pointAt, result.model);
  if (kept.fitted) result.fit = score(data.original.y, kept.fitted, data.original.weights);
  result.foldModels = kept.foldModels;
  result.heldOut = kept.heldOut;
  result.keptShare = chosenTally
    ? chosenTally.keptShares(result.terms, result.coefficients, chosen.index)
    : keptShares(
        result.terms,
        result.coefficients,
        kept.foldModels.map((model) => model.coefficients),
      );
  if (honest) result.honest = yield* honestPhase(context, honest, result, (units) => options.onProgress?.(cvUnits + units, totalUnits));
  if (options.stability) {
    let halvesDone = cvUnits + (honest?.units ?? 0);
    result.stability = yield* stabilitySelection(stabilityInput(data, full, options, best.mix, best.run, () => options.onProgress?.(++halvesDone, totalUnits)), warnings);
  }
  return result;
}

/** Runs one task of a fit on `context` (parallel.ts): a pure function of the two. An InputError becomes a "failed" result. */
export function runFitTask(context: WorkerContext, task: FitTask): FitTaskResult {
  if ("rows" in context) {
    if (task.kind !== "block-sums") throw new Error("runFitTask: a session of rows runs block-sums tasks only");
    return blockSumsTask(context.rows, task);
  }
  if (task.kind === "block-sums") throw new Error("runFitTask: a block-sums task needs a session of rows");
  try {
    if (task.kind === "path") return context.data.outcome === "two-class" ? twoClassPathTask(context, task.mix) : pathTask(context, task.mix);
    if (task.kind === "fold") return context.data.outcome === "two-class" ? twoClassFoldTask(context, task) : foldTask(context, task);
    if (task.kind === "honest") return honestTask(context, task.outer);
    return foldPointTask(context, task);
  } catch (error) {
    if (error instanceof InputError) return { kind: "failed", code: error.code, message: error.message };
    throw error;
  }
}

/** A mix's full-data path (number outcome): the grid's top, or why nothing can be chosen, and the path down the grid. */
function pathTask(context: TaskContext, m: number): FitTaskResult {
  const { data, problems } = context;
  const full = problems.full;
  const mix = data.mixes[m];
  const penalty = penaltyFor(full, data, mix);
  const factorization = ridgeFactorization(full, penalty, data.settings.exactRidge, data.settings.signal);
  const top = topStrength(full, penalty, data.settings, factorization);
  if (!(top > 0) || explainedExactly(data, full, penalty)) throw nothingToChoose(data, full, penalty);
  const grid = strengthGrid(top, data.strengthCount, data.lowEndRatio);
  const run = runPath(full, penalty, grid, { ...data.settings, stopWhenExact: true, stopWhenFlat: data.stopEarly }, factorization);
  return { kind: "path", top, run, warnings: [] };
}

/** Signs of a fold path's coefficients, strengths × terms, 0 where the column is constant in the fold (SignTally's count). */
function signsOf(frozen: Uint8Array, points: number, at: (index: number) => ArrayLike<number>, signal: CancelSignal | undefined): Int8Array {
  const p = frozen.length;
  const signs = new Int8Array(points * p);
  for (let k = 0; k < points; k++) {
    if ((k & 15) === 0) throwIfCancelled(signal);
    const b = at(k);
    for (let j = 0; j < p; j++) if (!frozen[j]) signs[k * p + j] = b[j] > 0 ? 1 : b[j] < 0 ? -1 : 0;
  }
  return signs;
}

/** One fold of one deal (number outcome) solved down the mix's strengths and scored on its held-out rows. */
function foldTask(context: TaskContext, task: Extract<FitTask, { kind: "fold" }>): FitTaskResult {
  const { data, measure } = context;
  const signal = data.settings.signal;
  const deal = context.deals(task.deal);
  const f = task.fold;
  const problem = deal.problems.fold(f);
  const foldPenalty = penaltyFor(problem, data, data.mixes[task.mix]);
  const heldOut = (): HeldOut => deal.heldOut(f);
  const strengths = task.strengths;
  if (problem.kind === "naive" && data.settings.exactRidge && spectralApplies(problem, foldPenalty)) {
    // Exact ridge in kernel form: score held-out rows straight from the factorization.
    const spectral = new SpectralRidge(problem, foldPenalty.multipliers, signal);
    const errors = spectralFoldErrors(problem, spectral, strengths, heldOut(), measure, signal);
    if (task.deal === 0 && task.keepPath) context.spectral.set(`${task.mix}:${f}`, spectral);
    const at = (index: number): Float64Array => {
      const out = new Float64Array(problem.p);
      spectral.coefficientsAt(strengths[index], out);
      return out;
    };
    return {
      kind: "fold",
      errors,
      sweeps: 0,
      stepHalvings: 0,
      maxKktViolation: 0,
      converged: true,
      std: task.keepPath ? problem.std : null,
      path: null,
      signs: task.keepSigns ? signsOf(problem.std.frozen, strengths.length, at, signal) : null,
    };
  }
  // Every fold solves exactly the strengths the full-data path computed (a fold's path
  // never ends on its own), so each strength's error averages all K folds.
  const foldRun = runPath(problem, foldPenalty, strengths, { ...data.settings, stopWhenExact: false, stopWhenFlat: false });
  const errors = foldErrors(data, problem, foldRun, measure, deal.problems.heldOutSums ? deal.problems.heldOutSums[f] : null, heldOut, deal.problems.shiftX, deal.problems.shiftY);
  return {
    kind: "fold",
    errors,
    sweeps: foldRun.sweeps,
    stepHalvings: 0,
    maxKktViolation: foldRun.maxKktViolation,
    converged: foldRun.notConverged.length === 0,
    std: task.keepPath ? problem.std : null,
    path: task.keepPath ? foldRun.coefficients : null,
    signs: task.keepSigns ? signsOf(problem.std.frozen, strengths.length, (k) => foldRun.coefficients[k], signal) : null,
  };
}

/** An exact-ridge fold of the first deal in kernel form: its coefficients at one strength (from the factorization its fold task kept, or built again: the same numbers). */
function foldPointTask(context: TaskContext, task: Extract<FitTask, { kind: "fold-point" }>): FitTaskResult {
  const { data } = context;
  const problem = context.deals(0).problems.fold(task.fold);
  const key = `${task.mix}:${task.fold}`;
  const spectral = context.spectral.get(key) ?? new SpectralRidge(problem, penaltyFor(problem, data, data.mixes[task.mix]).multipliers, data.settings.signal);
  const coefficients = new Float64Array(problem.p);
  spectral.coefficientsAt(task.strength, coefficients);
  return { kind: "fold-point", coefficients };
}

/** A mix's full-data path (two-class outcome): the grid's top, or why nothing can be chosen, and the path; warnings the path adds. */
function twoClassPathTask(context: TaskContext, m: number): FitTaskResult {
  const { data, problems } = context;
  const full = problems.full;
  const warnings: FitWarning[] = [];
  const penalty = penaltyFor(full, data, data.mixes[m]);
  const { solver, start } = startTwoClass(data, full, data.y, penalty, true, warnings);
  const top = twoClassTop(data, full, penalty, solver);
  const grid = strengthGrid(top, data.strengthCount, data.lowEndRatio);
  const run = runLogisticPath(solver, start, grid, { stopWhenSaturated: true, stopWhenFlat: data.stopEarly, signal: data.settings.signal });
  return { kind: "path", top, run, warnings };
}

/** One fold of one deal (two-class outcome) solved down the mix's strengths and scored on its held-out rows. */
function twoClassFoldTask(context: TaskContext, task: Extract<FitTask, { kind: "fold" }>): FitTaskResult {
  const { data, measure } = context;
  const signal = data.settings.signal;
  const deal = context.deals(task.deal);
  const f = task.fold;
  const problem = deal.problems.fold(f);
  const foldPenalty = penaltyFor(problem, data, data.mixes[task.mix]);
  const fold = startTwoClass(data, problem, deal.trainingOutcomes(f), foldPenalty, false, []);
  // Every fold solves exactly the strengths the full-data path computed.
  const foldRun = runLogisticPath(fold.solver, fold.start, task.strengths, { stopWhenSaturated: false, stopWhenFlat: false, skipLoss: true, signal });
  return {
    kind: "fold",
    errors: twoClassFoldErrors(data, problem, foldRun, measure, deal.heldOut(f)),
    sweeps: foldRun.sweeps,
    stepHalvings: foldRun.stepHalvings,
    maxKktViolation: foldRun.maxKktViolation,
    converged: foldRun.notConverged.length === 0,
    std: task.keepPath ? problem.std : null,
    path: task.keepPath ? foldRun.coefficients : null,
    signs: task.keepSigns ? signsOf(problem.std.frozen, task.strengths.length, (k) => foldRun.coefficients[k], signal) : null,
  };
}

/**
 * Each fold's model at the chosen strength index in the data's units, and every held-out row's
 * residual from the model that did not see it (computed from the rows, O(n·p) once, in the
 * centred form foldErrors uses so a large offset costs no digits). Rows of weight 0 are left out.
 */
function heldOutModels(
  data: Prepared,
  plan: FoldPlan,
  folds: FoldPoints[],
  index: number,
  pointAt: ReadonlyMap<number, Float64Array>,
  model: LinearModel,
): { foldModels: FoldModel[]; heldOut: { row: number[]; fold: number[]; residual: number[] } | null; fitted: Float64Array | null } {
  const foldModels: FoldModel[] = [];
  const n = data.x.rows;
  const p = data.x.columns;
  const K = folds.length;
  const signal = data.settings.signal;
  // Each fold's working coefficients and centre parts, and which fold holds each row out (K: none,
  // a slot whose coefficients stay 0, so the pass below needs no test per row).
  const slopes = new Float64Array(K * p);
  const anchors = new Float64Array(K * p);
  const offsets = new Float64Array(K * p);
  const foldOf = new Int32Array(n).fill(K);
  const prediction = new Float64Array(n);
  for (let f = 0; f < K; f++) {
    throwIfCancelled(signal);
    const problem = folds[f];
    const standardized = problem.path ? problem.path[index] : pointAt.get(f);
    if (!standardized) throw new Error(`fit: fold ${f} has no point at the chosen strength`);
    const working = toOriginal(problem, standardized);
    const coefficients: number[] = [];
    for (let j = 0; j < p; j++) coefficients.push(pathValueInDataUnits(data, j, working.coefficients[j]));
    foldModels.push({ intercept: pathValueInDataUnits(data, -1, working.intercept), coefficients });
    // A fit from sums has no rows to score: the fold models only.
    if (data.totalSums) continue;
    slopes.set(working.coefficients, f * p);
    anchors.set(problem.std.xAnchor, f * p);
    offsets.set(problem.std.xOffset, f * p);
    markHeldOut(plan.blocks[plan.validateBlock[f]], data.weights, f, problem.std.yOffset, foldOf, prediction);
  }
  if (data.totalSums) return { foldModels, heldOut: null, fitted: null };
  // One pass over the data, column by column in row order (each cache line read once, where a
  // pass per fold over its shuffled rows reads most lines of every column once per fold; four
  // columns at a time it goes window by window of rows, each window's rows fold by fold while
  // they are in cache: addFourColumns); each
  // row's prediction adds the same terms in the same order as row by row: yOffset, then
  // b_j ((x_j − anchor_j) − offset_j) for j = 0, 1, … Without a branch per row: the folds' row
  // assignment is random, so a test of b_j ≠ 0 (zero in some folds' models, not in others)
  // mispredicted often and the loop ran at half speed (measured, 100,000 × 20: 19–21 ms → 9–10 ms
  // CPU). A fold whose b_j is 0 adds 0·(finite) = ±0, which leaves the sum unchanged (only a
  // −0 sum could become +0, the same number). Per column, the folds' (b, anchor, offset) sit
  // side by side in `terms` (3 values per fold, the spare slot K all zeros); a column that no
  // fold's model uses is skipped.
  // In place: x_ij × factors[j] formed per value (the working copy's value; × 1 is exact).
  const { x: read, factors } = readX(data);
  const values = read.data;
  // Up to four used columns a pass (addColumnTerms): each row's prediction still adds their
  // terms one column after another in column order, and the prediction is read and written
  // once per pass instead of once per column.
  // terms[12f + 3c …]: fold f's (b, anchor, offset) for the group's column c, so one row's
  // terms sit side by side (slot K, rows no fold holds out, stays all zeros).
  const terms = new Float64Array(12 * (K + 1));
  // The same pass forms the chosen model's in-sample predictions from the data as given (what
  // model.ts linearScore computes: the intercept, then b_j x_ij for each nonzero b_j in column
  // order, a left-to-right sum, so grouping columns by four changes nothing), one pass over the
  // rows fewer. A column only the folds use adds 0·x_ij = ±0 to it, which leaves the sum the same
  // number (only the sign of a zero sum can change, and score() treats ±0 alike); a column only
  // the full model uses adds 0 to the held-out predictions likewise.
  const b = model.coefficients;
  const raw = data.original.x.data;
  const fitted = new Float64Array(n).fill(model.intercept);
  const used: number[] = [];
  for (let j = 0; j < p; j++) {
    let any = b[j] !== 0;
    for (let f = 0; f < K && !any; f++) any = slopes[f * p + j] !== 0;
    if (any) used.push(j);
  }
  const offs = new Int32Array(4);
  const scale = new Float64Array(4);
  const full = new Float64Array(4);
  const reading = heldOutOrder(foldOf, K, n);
  for (let u = 0; u < used.length; u += 4) {
    throwIfCancelled(signal);
    const count = Math.min(4, used.length - u);
    for (let c = 0; c < count; c++) {
      const j = used[u + c];
      for (let f = 0; f < K; f++) {
        terms[12 * f + 3 * c] = slopes[f * p + j];
        terms[12 * f + 3 * c + 1] = anchors[f * p + j];
        terms[12 * f + 3 * c + 2] = offsets[f * p + j];
      }
      offs[c] = j * n;
      scale[c] = factors ? factors[j] : 1;
      full[c] = b[j];
    }
    if (count === 4) addFourColumns(prediction, values, offs, scale, terms, n, fitted, raw, full, reading.order, reading.segments, K);
    else addColumnTerms(prediction, values, offs, scale, count, foldOf, terms, n, fitted, raw, full);
  }
  // The lists at their final length, filled by index: every row some fold holds out (foldOf < K)
  // is listed once. Growing them by push re-copied them as they grew (100,000 rows: about 3×
  // the time of filling them, measured stand-alone).
  let count = 0;
  for (let i = 0; i < n; i++) if (foldOf[i] !== K) count++;
  const row = new Array<number>(count);
  const fold = new Array<number>(count);
  // Filled with a double first: the list then holds doubles from the start, where the first
  // residual stored into an empty list converted its whole storage (100,000 rows: listing
  // 2.6 -> 2.1 ms stand-alone). Every entry is overwritten below.
  const residual = new Array<number>(count).fill(0.5);
  let at = 0;
  // Back to the target's units: a multiplication by 2^−yExponent, the power built once rather
  // than per row (scaleByPowerOfTwo does exactly this product when the power is a normal double,
  // and steps through it otherwise).
  const exponent = -data.yExponent;
  const unit = Math.abs(exponent) <= 1022 ? powerOfTwo(exponent) : NaN;
  for (let f = 0; f < K; f++) {
    at = listResiduals(plan.blocks[plan.validateBlock[f]], f, foldOf, data.y, folds[f].std.yAnchor, prediction, unit, exponent, row, fold, residual, at);
  }
  if (at !== count) throw new Error(`heldOutModels: ${at} held-out rows listed, ${count} expected`);
  return { foldModels, heldOut: { row, fold, residual }, fitted };
}

// heldOutModels' passes over the rows, each a small function of its own: called once per fold or
// column, each is optimized as a whole after its first calls, where the same loops inside the one
// large heldOutModels ran unoptimized (boxing every double) while it compiled and after its
// on-stack compilation left for code it had not yet run (first fit of a process: measured by
// V8's --trace-opt --trace-deopt and a sampling allocation profile). Same operations, same order.

/** Rows of `block` with positive weight: held out by fold f, their predictions start at yOffset. */
function markHeldOut(block: Int32Array, weights: Float64Array | null, f: number, yOffset: number, foldOf: Int32Array, prediction: Float64Array): void {
  for (let t = 0; t < block.length; t++) {
    const i = block[t];
    if (weights && !(weights[i] > 0)) continue;
    foldOf[i] = f;
    prediction[i] = yOffset;
  }
}

/**
 * Rows per window of the held-out prediction pass for four columns (addFourColumns): a window's
 * four columns, 32 KB, stay in the core's cache while each fold's rows of it are read.
 */
const HELD_OUT_WINDOW = 1024;

/**
 * addFourColumns' reading order: window by window (HELD_OUT_WINDOW consecutive rows), each fold's
 * held-out rows of the window (foldOf[i] = f < K) in increasing order, fold after fold. Window
 * v's fold f occupies order[segments[v(K + 1) + f] … segments[v(K + 1) + f + 1]). Cost O(n).
 */
function heldOutOrder(foldOf: Int32Array, K: number, n: number): { order: Int32Array; segments: Int32Array } {
  const windows = Math.ceil(n / HELD_OUT_WINDOW);
  const segments = new Int32Array(windows * (K + 1) + 1);
  let held = 0;
  for (let i = 0; i < n; i++) if (foldOf[i] < K) held++;
  const order = new Int32Array(held);
  const next = new Int32Array(K + 1);
  let start = 0;
  for (let v = 0; v < windows; v++) {
    const i0 = v * HELD_OUT_WINDOW;
    const i1 = Math.min(n, i0 + HELD_OUT_WINDOW);
    next.fill(0);
    for (let i = i0; i < i1; i++) next[foldOf[i]]++;
    for (let f = 0; f < K; f++) {
      const size = next[f];
      segments[v * (K + 1) + f] = start;
      next[f] = start;
      start += size;
    }
    segments[v * (K + 1) + K] = start;
    for (let i = i0; i < i1; i++) {
      const f = foldOf[i];
      if (f < K) order[next[f]++] = i;
    }
  }
  segments[windows * (K + 1)] = start;
  return { order, segments };
}

/**
 * addColumnTerms for four columns, window by window of rows: the full model's terms for the
 * window's rows in row order (addFittedFour), then each fold's held-out rows of the window with
 * that fold's twelve terms held in registers (addFoldFour), where a pass in row order looked up
 * the terms of each row's fold (the folds' rows are shuffled). Every row's prediction and fitted
 * value take the same terms in the same order as addColumnTerms forms them, so the same numbers.
 * Rows no fold holds out get no prediction terms (their predictions are not used).
 */
function addFourColumns(
  prediction: Float64Array,
  values: Float64Array,
  offs: Int32Array,
  scale: Float64Array,
  terms: Float64Array,
  n: number,
  fitted: Float64Array,
  raw: Float64Array,
  full: Float64Array,
  order: Int32Array,
  segments: Int32Array,
  K: number,
): void {
  const windows = Math.ceil(n / HELD_OUT_WINDOW);
  for (let v = 0; v < windows; v++) {
    const i0 = v * HELD_OUT_WINDOW;
    addFittedFour(fitted, raw, offs, full, i0, Math.min(n, i0 + HELD_OUT_WINDOW));
    for (let f = 0; f < K; f++) {
      const s0 = segments[v * (K + 1) + f];
      const s1 = segments[v * (K + 1) + f + 1];
      if (s1 > s0) addFoldFour(prediction, values, offs, scale, terms, 12 * f, order, s0, s1);
    }
  }
}

/** fitted_i += full[0]·raw[offs[0] + i] + … + full[3]·raw[offs[3] + i], left to right, for rows i0 ≤ i < i1. */
function addFittedFour(fitted: Float64Array, raw: Float64Array, offs: Int32Array, full: Float64Array, i0: number, i1: number): void {
  const o0 = offs[0];
  const o1 = offs[1];
  const o2 = offs[2];
  const o3 = offs[3];
  const g0 = full[0];
  const g1 = full[1];
  const g2 = full[2];
  const g3 = full[3];
  for (let i = i0; i < i1; i++) fitted[i] = fitted[i] + g0 * raw[o0 + i] + g1 * raw[o1 + i] + g2 * raw[o2 + i] + g3 * raw[o3 + i];
}

/** One fold's rows order[s0 … s1): prediction_i += its four columns' terms (at terms[t …]), left to right, as addColumnTerms adds them. */
function addFoldFour(
  prediction: Float64Array,
  values: Float64Array,
  offs: Int32Array,
  scale: Float64Array,
  terms: Float64Array,
  t: number,
  order: Int32Array,
  s0: number,
  s1: number,
): void {
  const o0 = offs[0];
  const o1 = offs[1];
  const o2 = offs[2];
  const o3 = offs[3];
  const f0 = scale[0];
  const f1 = scale[1];
  const f2 = scale[2];
  const f3 = scale[3];
  const b0 = terms[t];
  const a0 = terms[t + 1];
  const c0 = terms[t + 2];
  const b1 = terms[t + 3];
  const a1 = terms[t + 4];
  const c1 = terms[t + 5];
  const b2 = terms[t + 6];
  const a2 = terms[t + 7];
  const c2 = terms[t + 8];
  const b3 = terms[t + 9];
  const a3 = terms[t + 10];
  const c3 = terms[t + 11];
  for (let s = s0; s < s1; s++) {
    const i = order[s];
    prediction[i] =
      prediction[i] +
      b0 * (values[o0 + i] * f0 - a0 - c0) +
      b1 * (values[o1 + i] * f1 - a1 - c1) +
      b2 * (values[o2 + i] * f2 - a2 - c2) +
      b3 * (values[o3 + i] * f3 - a3 - c3);
  }
}

/**
 * prediction_i += b_f · ((x_ij × factor_j − anchor_f) − offset_f) for the fold f = foldOf[i],
 * for `count` (1 to 3) columns j in turn: column c at values[offs[c] …], scaled by scale[c], its
 * terms for fold f at terms[12f + 3c …]. In the same pass fitted_i += full[c] · raw[offs[c] + i]
 * for the same columns in turn (the full model on the data as given; raw is values itself when
 * the fit reads the data in place). Four columns: addFourColumns.
 */
function addColumnTerms(
  prediction: Float64Array,
  values: Float64Array,
  offs: Int32Array,
  scale: Float64Array,
  count: number,
  foldOf: Int32Array,
  terms: Float64Array,
  n: number,
  fitted: Float64Array,
  raw: Float64Array,
  full: Float64Array,
): void {
  for (let c = 0; c < count; c++) {
    const o = offs[c];
    const f = scale[c];
    const g = full[c];
    const base = 3 * c;
    for (let i = 0; i < n; i++) {
      const t = base + 12 * foldOf[i];
      prediction[i] += terms[t] * (values[o + i] * f - terms[t + 1] - terms[t + 2]);
      fitted[i] += g * raw[o + i];
    }
  }
}

/** Lists fold f's held-out rows of `block` from `at` on (row, fold, residual in the target's units); returns the next free index. */
function listResiduals(
  block: Int32Array,
  f: number,
  foldOf: Int32Array,
  y: Float64Array,
  yAnchor: number,
  prediction: Float64Array,
  unit: number,
  exponent: number,
  row: number[],
  fold: number[],
  residual: number[],
  at: number,
): number {
  for (let t = 0; t < block.length; t++) {
    const i = block[t];
    if (foldOf[i] !== f) continue;
    const held = y[i] - yAnchor - prediction[i];
    row[at] = i;
    fold[at] = f;
    residual[at++] = Number.isNaN(unit) ? scaleByPowerOfTwo(held, exponent) : held * unit;
  }
  return at;
}

/** As coefficientInDataUnits, but a value below the normal range is returned rounded (it only loses digits); overflow still throws. */
function pathValueInDataUnits(data: Prepared, j: number, value: number): number {
  const out = scaleByPowerOfTwo(value, (j >= 0 ? data.xExponent[j] : 0) - data.yExponent);
  return Number.isFinite(out) ? out : coefficientInDataUnits(data, j, value);
}

/**
 * Moves cross-validated errors from the working copy to the target's units (MSE × 2^(−2·yExponent),
 * MAE × 2^(−yExponent)). An error that can't be represented there (a target near 1e200 squares
 * past 1.8e308; one near 1e-200 below 2.2e-308) becomes Infinity (too large) or NaN (too small),
 * so it shows as non-finite (#NUM! in a cell, null in JSON), never as a wrong number, and
 * `warning()` says why. The choice is unaffected: it compares the working copy's errors, which
 * order exactly as the true ones do.
 */
function errorUnits(data: Prepared, measure: ErrorMeasure): { convert: (value: number) => number; warning: () => FitWarning | null } {
  const exponent = (measure === "mse" ? -2 : -1) * data.yExponent;
  let tooLarge = false;
  let tooSmall = false;
  return {
    convert: (value: number): number => {
      if (value === 0 || !Number.isFinite(value)) return value;
      const out = scaleByPowerOfTwo(value, exponent);
      if (!Number.isFinite(out)) {
        tooLarge = true;
        return Infinity;
      }
      if (Math.abs(out) < SMALLEST_NORMAL) {
        tooSmall = true;
        return NaN;
      }
      return out;
    },
    warning: (): FitWarning | null => {
      if (!tooLarge && !tooSmall) return null;
      const name = measure === "mse" ? "mean squared errors" : "mean absolute errors";
      const range = tooLarge ? "above 1.8e308" : "below 2.2e-308";
      return {
        code: "out-of-range",
        message: `some cross-validated ${name} are ${range} in the target's units and can't be shown as numbers (they are left non-finite); the choice compared them exactly on the target scaled by a power of two, so it is unaffected: to see them, record the target in other units (e.g. divide it by a power of ten)`,
      };
    },
  };
}

/**
 * True when unpenalized predictors (m_j = 0) leave a residual whose SD is below 1e-12 of the
 * target's: the fit is exact up to rounding, and the "top of the grid" would be a gradient of
 * rounding noise. False at once when every multiplier is positive.
 */
function explainedExactly(data: Prepared, full: TrainingProblem, penalty: PenaltySpec): boolean {
  let unpenalized = false;
  for (let j = 0; j < full.p; j++) if (!full.std.frozen[j] && !(data.multipliers[j] > 0)) unpenalized = true;
  if (!unpenalized) return false;
  const solver = new CoordinateDescent(full, penalty, data.settings);
  solver.fitUnpenalized();
  return solver.residualMeanSquare() <= 1e-24 * full.std.yVariance;
}

/**
 * Why the top of the grid is 0 (no penalized term would leave 0 at any strength), in words:
 * every penalized term is held at 0 by bounds of 0 and 0; or the bounds allow each one to move
 * only the way the target doesn't pull it; or the unpenalized predictors (with the intercept)
 * already explain the target exactly.
 */
function nothingToChoose(data: Prepared, full: TrainingProblem, penalty: PenaltySpec): InputError {
  const solver = new CoordinateDescent(full, penalty, data.settings);
  solver.fitUnpenalized();
  return nothingToChooseFrom(data, full, penalty, solver.grad, () => explainedExactly(data, full, penalty), () =>
    new InputError("constant-target", "the unpenalized predictors already explain the target exactly: there is nothing left for the penalty to choose"),
  );
}

/**
 * nothingToChoose from the gradient at the unpenalized fit (`gradient`), `exact()` telling
 * whether that fit is already exact and `exactError()` the error to give then (or when nothing
 * else explains a top of 0).
 */
function nothingToChooseFrom(
  data: Prepared,
  full: TrainingProblem,
  penalty: PenaltySpec,
  gradient: Float64Array,
  exact: () => boolean,
  exactError: () => InputError,
): InputError {
  const fixed: string[] = [];
  const blocked: string[] = [];
  let free = 0;
  for (let j = 0; j < full.p; j++) {
    if (full.std.frozen[j] || !(data.multipliers[j] > 0)) continue;
    const lower = penalty.lower[j];
    const upper = penalty.upper[j];
    if (lower === 0 && upper === 0) {
      fixed.push(`'${data.names[j]}'`);
      continue;
    }
    free++;
    const g = gradient[j];
    if ((g > 0 && !(upper > 0)) || (g < 0 && !(lower < 0))) {
      blocked.push(`'${data.names[j]}' (${g > 0 ? "upper" : "lower"} bound 0, the target pulls it ${g > 0 ? "above" : "below"} 0)`);
    }
  }
  const list = (names: string[]): string => (names.length > 6 ? `${names.slice(0, 6).join(", ")}, …` : names.join(", "));
  if (free === 0) {
    return new InputError(
      "bounds",
      `every penalized term is held at 0 by its bounds (lower 0 and upper 0: ${list(fixed)}): there is nothing for the penalty to choose; loosen the bounds of the terms that should enter the model`,
    );
  }
  if (blocked.length > 0 && blocked.length === free && !exact()) {
    return new InputError(
      "bounds",
      `no penalized term can move from 0 at any strength: the bounds allow each one only the direction the target doesn't pull it (${list(blocked)})${fixed.length > 0 ? ` or hold it at 0 (${list(fixed)})` : ""}; loosen those bounds, or check their signs`,
    );
  }
  return exactError();
}

/** The measure to use for this outcome (its default when none is given); refuses the other outcome's measures with a message. */
export function checkMeasure(measure: ErrorMeasure | undefined | null, outcome: OutcomeKind): ErrorMeasure {
  const allowed = MEASURES[outcome];
  if (measure === undefined || measure === null) return allowed[0];
  if (allowed.includes(measure)) return measure;
  const other: OutcomeKind = outcome === "number" ? "two-class" : "number";
  if (MEASURES[other].includes(measure)) {
    throw new InputError(
      "setting",
      outcome === "number"
        ? `the error measure ${measure} is for yes/no (two-class) outcomes, and this target is a number: use mse or mae`
        : `the error measure ${measure} is for number outcomes, and this target is yes/no (two-class): use deviance, misclassified or auc`,
    );
  }
  throw new InputError("setting", `the error measure must be one of ${allowed.join(", ")}; got ${String(measure)}`);
}

function makePlan(data: Prepared, options: FitOptions): FoldPlan {
  const labels = options.foldLabels ?? null;
  const timeOrdered = options.timeOrdered ?? false;
  if (labels && timeOrdered) {
    throw new InputError("setting", "fold labels and time-ordered folds can't be used together: choose one");
  }
  const scheme: FoldScheme = labels ? "labels" : timeOrdered ? "time" : "random";
  const folds = checkInteger(options.folds ?? 10, "folds", 2, 1000, "folds");
  const seed = options.seed ?? 1;
  if (typeof seed !== "number" || !Number.isInteger(seed) || Math.abs(seed) > 4294967295) {
    throw new InputError("setting", `seed must be a whole number from -4294967295 to 4294967295; got ${String(seed)}`);
  }
  // Two-class random folds are stratified by class (each fold gets its share of events; rows of
  // weight 0 form a stratum of their own, so they don't upset the classes' balance).
  let strata: Float64Array | null = null;
  if (data.outcome === "two-class" && scheme === "random") {
    strata = Float64Array.from(data.y, (value, i) => (data.weights && !(data.weights[i] > 0) ? -1 : value));
  }
  const plan = planFolds(data.x.rows, data.weights, { scheme, folds, seed, labels, strata });
  if (data.outcome === "two-class") checkFoldClasses(data, plan);
  return plan;
}

/**
 * The outer split of the honest error (honest.ts) and the work of each inner fit. Random folds:
 * a fresh deal with seed + HONEST_SEED_OFFSET (seed − the offset when that would pass the largest
 * seed), K = the folds setting, stratified by class for two-class outcomes; fold labels: the
 * labels themselves (each inner fit then cross-validates over the remaining labels); time order:
 * the same time blocks (each inner fit is time-ordered on the earlier rows, with the folds setting).
 */
function honestSetup(data: Prepared, options: FitOptions, plan: FoldPlan, repeats: number): HonestPlan {
  const seed = options.seed ?? 1;
  const outer =
    plan.scheme === "random"
      ? makePlan(data, { ...options, seed: seed + HONEST_SEED_OFFSET <= 4294967295 ? seed + HONEST_SEED_OFFSET : seed - HONEST_SEED_OFFSET })
      : plan;
  const labels = options.foldLabels ?? null;
  const innerUnits = outer.trainBlocks.map((blocks) => {
    let innerFolds = plan.trainBlocks.length;
    if (plan.scheme === "labels" && labels) {
      const seen = new Set<string>();
      for (const i of rowsOfBlocks(outer, blocks)) seen.add(String(labels[i]));
      innerFolds = seen.size;
    }
    return data.mixes.length * (repeats * innerFolds + 1);
  });
  let units = 0;
  for (const u of innerUnits) units += u;
  return { plan: outer, innerUnits, units };
}

/** What the honest error's outer folds read (honest.ts OuterInput), from a fit's context. */
function outerInput(context: TaskContext): Parameters<typeof outerFoldFit<FitOptions>>[0] {
  const { data } = context;
  const honest = (context.honest ??= honestSetup(data, context.options, context.plan, context.repeats));
  return {
    x: data.original.x,
    y: data.original.y,
    weights: data.original.weights,
    measure: context.measure,
    cutoff: data.cutoff,
    options: { ...context.options, names: data.names },
    honest,
  };
}

/**
 * The honest error of `result`'s procedure (honest.ts), reporting its units through `progress`:
 * one task per outer fold (its whole inner fit) on a pool; in this thread, nestedCrossValidation
 * with the same pieces, yielding inside the inner fits.
 */
function* honestPhase(context: TaskContext, honest: HonestPlan, result: FitResult, progress: (units: number) => void): Generator<TaskBatch | void, HonestError, void> {
  context.honest = honest;
  const choices = result.choices as { lowest: ChoicePoint; oneSe: ChoicePoint };
  const input = {
    ...outerInput(context),
    optimistic: result.rule === "one-se" ? choices.oneSe.error : choices.lowest.error,
    warnings: result.warnings,
    progress,
  };
  const K = honest.plan.trainBlocks.length;
  const perFold: HonestFold[] = new Array(K);
  let inlineResult = null as HonestError | null;
  let units = 0;
  yield {
    tasks: Array.from({ length: K }, (_, k): FitTask => ({ kind: "honest", outer: k })),
    context,
    consume: (k, outcome) => {
      if (outcome.kind === "failed") throw new InputError(outcome.code, outcome.message);
      if (outcome.kind !== "honest") throw new Error("fit: an honest task returned another kind of result");
      perFold[k] = outcome.fold;
    },
    finished: (k) => {
      units += honest.innerUnits[k];
      progress(units);
    },
    inline: function* () {
      inlineResult = yield* nestedCrossValidation({ ...input, fitSteps });
    },
  };
  if (inlineResult) return inlineResult;
  return honestSummary(input, perFold);
}

/** One outer fold of the honest error (honest.ts): its whole inner fit on the outer training rows, scored on the outer held-out rows. */
function honestTask(context: TaskContext, k: number): FitTaskResult {
  const input = outerInput(context);
  const fold = outerFoldFit(input, k);
  let inner: FitResult;
  try {
    inner = fit(fold.x, fold.y, fold.options);
  } catch (error) {
    if (error instanceof InputError) throw outerFoldError(input.honest.plan, k, error);
    throw error;
  }
  return { kind: "honest", fold: outerFoldRecord(input, k, inner) };
}

/**
 * Two-class: every fold must train on rows of both classes (with one, its log-odds would run to
 * infinity). Stratified random folds manage that whenever each class has 2 or more rows.
 */
function checkFoldClasses(data: Prepared, plan: FoldPlan): void {
  for (let k = 0; k < plan.trainBlocks.length; k++) {
    let events = 0;
    let others = 0;
    for (const b of plan.trainBlocks[k]) {
      for (const i of plan.blocks[b]) {
        if (data.weights && !(data.weights[i] > 0)) continue;
        if (data.y[i] === 1) events++;
        else others++;
      }
    }
    if (events === 0 || others === 0) {
      const label = plan.scheme === "labels" ? `holding out fold label '${plan.names[k]}'` : `fold ${plan.names[k]}`;
      throw new InputError(
        "folds",
        `${label} leaves training rows of one class only (${events === 0 ? "no events" : "no non-events"}), and a two-class fit needs both: ${plan.scheme === "labels" ? "merge groups or check the fold column" : "use fewer folds"}, or add rows of the rarer class`,
      );
    }
  }
}

function formatNumber(value: number): string {
  return Number(value.toPrecision(4)).toString();
}

/** Result for a single fixed strength: the path from the top of the grid down to it. */
function fixedResult(data: Prepared, full: TrainingProblem, strength: number, constantColumns: string[], warnings: FitWarning[]): FitResult {
  const mix = data.mixes[0];
  const penalty = penaltyFor(full, data, mix);
  const factorization = ridgeFactorization(full, penalty, data.settings.exactRidge, data.settings.signal);
  const top = topStrength(full, penalty, data.settings, factorization);
  const grid = top > 0 ? strengthGrid(top, data.strengthCount, data.lowEndRatio).filter((s) => s > strength) : [];
  grid.push(strength);
  const run = runPath(full, penalty, grid, { ...data.settings, stopWhenExact: false, stopWhenFlat: false }, factorization);
  if (run.notConverged.length > 0) {
    warnings.push({ code: "not-converged", message: "the fit hit the sweep cap before converging: raise the sweep cap or loosen the tolerance" });
  }
  const result = assemble(data, full, run, top, run.strengths.length - 1, mix, constantColumns, warnings);
  result.rule = "fixed";
  result.strengthFraction = top > 0 ? strength / top : 0;
  return result;
}

/** Shared result assembly from the full-data path and the chosen point on it. */
function assemble(
  data: Prepared,
  full: TrainingProblem,
  run: PathRun,
  top: number,
  index: number,
  mix: number,
  constantColumns: string[],
  warnings: FitWarning[],
  scoreLater = false,
): FitResult {
  const intercepts: number[] = [];
  const coefficientRows: number[][] = [];
  for (let k = 0; k < run.coefficients.length; k++) {
    const work = toOriginal(full, run.coefficients[k]);
    // The chosen point must be exact to the last digit; along the path a value that falls below
    // the normal range only loses digits it can't show, so only the chosen point refuses that.
    const convert = (j: number, value: number): number => (k === index ? coefficientInDataUnits(data, j, value) : pathValueInDataUnits(data, j, value));
    intercepts.push(convert(-1, work.intercept));
    coefficientRows.push(Array.from(work.coefficients, (b, j) => convert(j, b)));
  }
  const coefficients = coefficientRows[index];
  const intercept = intercepts[index];
  const model = linearModel(data.names, intercept, coefficients);
  const chosenWork = toOriginal(full, run.coefficients[index]).coefficients;
  if (run.earlyStop) {
    const last = run.strengths.length - 1;
    const where = `the path stopped at strength ${formatNumber(run.strengths[last])} (point ${last + 1} of ${data.strengthCount})`;
    warnings.push({
      code: "early-stop",
      message:
        run.earlyStop === "exact-fit"
          ? `${where}: the fit reproduces the training rows exactly there, so weaker strengths can't fit them any better`
          : `${where}, as 'stop early' allows: over the last tenfold drop in strength the fit improved by less than 1%`,
    });
  }
  return {
    kind: "shrinkwise-fit",
    outcome: "number",
    terms: data.names.slice(),
    intercept,
    coefficients,
    standardizedCoefficients: Array.from(chosenWork, (b, j) => scaleByPowerOfTwo(b * full.std.xSpread[j], -data.yExponent)),
    predictorSpreads: Array.from(full.std.xSpread, (spread, j) => scaleByPowerOfTwo(spread, -data.xExponent[j])),
    targetSpread: scaleByPowerOfTwo(full.std.yScale, -data.yExponent),
    mix,
    strength: run.strengths[index],
    strengthFraction: top > 0 ? run.strengths[index] / top : 0,
    rule: "fixed",
    choices: null,
    cv: null,
    path: {
      mix,
      top,
      strengths: run.strengths.slice(),
      intercepts,
      coefficients: coefficientRows,
      termsKept: run.nonzero.slice(),
      r2: run.r2.slice(),
    },
    // scoreLater: the caller scores the rows' predictions from its own pass over them (heldOutModels).
    fit: data.totalSums
      ? scoreOfSums(data, full, chosenWork)
      : scoreLater
        ? { mae: NaN, rmse: NaN, r2: NaN, bias: NaN, count: 0 }
        : score(data.original.y, predict(model, data.original.x), data.original.weights),
    classFit: null,
    baseline: null,
    rowsUsed: data.totalSums ? data.totalSums.sums.rows : data.x.rows,
    constantColumns,
    diagnostics: {
      updates: full.kind === "gram" ? "gram" : "residual",
      solver: run.solver,
      sweeps: run.sweeps,
      maxKktViolation: run.maxKktViolation,
      maxKktViolationAllFits: run.maxKktViolation,
      converged: run.notConverged.length === 0,
      strongRuleMisses: run.strongRuleMisses,
      earlyStop: run.earlyStop
        ? { index: run.strengths.length - 1, strength: run.strengths[run.strengths.length - 1], reason: run.earlyStop }
        : null,
      lowEndRatio: data.lowEndRatio,
      strengthCount: data.strengthCount,
      gridDensity: gridDensity(data.strengthCount, data.lowEndRatio),
      stepHalvings: 0,
    },
    warnings,
    model,
  };
}

/**
 * Strength 0 without bounds: the exact least-squares baseline (Householder QR on the rows; from
 * a sums table, leastSquares.ts leastSquaresOfSums: the normal equations on the centred sums).
 * Both on the working copy, with the same conventions (weighted residuals, df = rows of
 * positive weight − terms kept − intercept), so the result has the same shape either way.
 */
function leastSquaresResult(data: Prepared, full: TrainingProblem, constantColumns: string[], warnings: FitWarning[]): FitResult {
  const total = data.totalSums;
  const baseline: LeastSquaresOfSumsResult = total
    ? leastSquaresOfSums(total.sums, total.shiftX, total.shiftY, { intercept: data.intercept, rows: total.weighedRows, signal: data.settings.signal })
    : leastSquares(data.x, data.y, { intercept: data.intercept, weights: data.weights ?? undefined, signal: data.settings.signal });
  if (baseline.aliased.length > 0) {
    warnings.push({
      code: "aliased",
      message: `${baseline.aliased.map((j) => data.names[j]).join(", ")} ${baseline.aliased.length === 1 ? "is" : "are"} an exact combination of other predictors: coefficient set to 0`,
    });
  }
  // The baseline was solved on the working copy: move everything back to the data's units.
  const coefficients = baseline.coefficients.map((b, j) => coefficientInDataUnits(data, j, b));
  const intercept = coefficientInDataUnits(data, -1, baseline.intercept);
  const inTargetUnits = (value: number): number => scaleByPowerOfTwo(value, -data.yExponent);
  const model = linearModel(data.names, intercept, coefficients);
  return {
    kind: "shrinkwise-fit",
    outcome: "number",
    terms: data.names.slice(),
    intercept,
    coefficients,
    standardizedCoefficients: baseline.coefficients.map((b, j) => inTargetUnits(b * full.std.xSpread[j])),
    predictorSpreads: Array.from(full.std.xSpread, (spread, j) => scaleByPowerOfTwo(spread, -data.xExponent[j])),
    targetSpread: inTargetUnits(full.std.yScale),
    mix: data.mixes[0],
    strength: 0,
    strengthFraction: 0,
    rule: "fixed",
    choices: null,
    cv: null,
    path: { mix: data.mixes[0], top: 0, strengths: [0], intercepts: [intercept], coefficients: [coefficients], termsKept: [coefficients.filter((b) => b !== 0).length], r2: [baseline.r2] },
    fit: total ? scoreOfSums(data, full, Float64Array.from(baseline.coefficients)) : score(data.original.y, predict(model, data.original.x), data.original.weights),
    classFit: null,
    baseline: {
      standardErrors: baseline.standardErrors.map((se, j) => (se === null ? null : scaleByPowerOfTwo(se, data.xExponent[j] - data.yExponent))),
      interceptStandardError: baseline.interceptStandardError === null ? null : inTargetUnits(baseline.interceptStandardError),
      // σ² = Σw·r² / df with the weights as given: the working weights are ×2^weightExponent, so
      // σ is ×2^(weightExponent/2) there (the standard errors don't depend on the weights' scale).
      residualStandardDeviation: inTargetUnits(baseline.residualStandardDeviation) * Math.sqrt(powerOfTwo(-data.weightExponent)),
      degreesOfFreedom: baseline.degreesOfFreedom,
      r2: baseline.r2,
      aliased: baseline.aliased.map((j) => data.names[j]),
    },
    rowsUsed: total ? total.sums.rows : data.x.rows,
    constantColumns,
    diagnostics: {
      updates: full.kind === "gram" ? "gram" : "residual",
      solver: "least-squares",
      sweeps: 0,
      maxKktViolation: 0,
      maxKktViolationAllFits: 0,
      converged: true,
      strongRuleMisses: 0,
      earlyStop: null,
      lowEndRatio: data.lowEndRatio,
      strengthCount: data.strengthCount,
      gridDensity: gridDensity(data.strengthCount, data.lowEndRatio),
      stepHalvings: 0,
    },
    warnings,
    model,
  };
}

// ---------------------------------------------------------------------------------------------
// Two-class outcomes: penalized logistic regression (logistic.ts), cross-validated the same way.
// ---------------------------------------------------------------------------------------------

/** Solver settings for a two-class problem. */
function logisticSettings(data: Prepared): LogisticSettings {
  return {
    tolerance: data.settings.tolerance,
    maxSweeps: data.settings.maxSweeps,
    intercept: data.intercept,
    covariance: data.covariance,
    signal: data.settings.signal,
  };
}

/** 0/1 outcomes of the listed rows (all rows when null), in the order problemFromRows stores them. */
function outcomesOf(data: Prepared, rows: Int32Array | null): Float64Array {
  return rows ? Float64Array.from(rows, (i) => data.y[i]) : data.y;
}

/**
 * A two-class solver on `problem` at its unpenalized fit, ready to run down a path. On the full
 * data, an unpenalized fit that already separates the classes is refused: the coefficients of the
 * unpenalized terms would run to infinity before any penalized one entered.
 */
function startTwoClass(
  data: Prepared,
  problem: TrainingProblem,
  y: Float64Array,
  penalty: PenaltySpec,
  fullData: boolean,
  warnings: FitWarning[],
): { solver: LogisticDescent; start: LogisticReport } {
  const solver = new LogisticDescent(problem, y, penalty, logisticSettings(data));
  const start = solver.fitUnpenalized();
  const unpenalized: string[] = [];
  for (let j = 0; j < problem.p; j++) if (!problem.std.frozen[j] && !(data.multipliers[j] > 0)) unpenalized.push(`'${data.names[j]}'`);
  if (fullData && !start.converged && !warnings.some((w) => w.code === "separated")) {
    warnings.push({
      code: "separated",
      message: `the fit of the intercept and the unpenalized predictors (${unpenalized.join(", ")}) did not settle: they nearly separate the two classes, so their coefficients keep growing; the path starts from where that fit stopped (give them a penalty multiplier above 0 to keep them finite)`,
    });
  }
  if (fullData && solver.saturated()) {
    throw new InputError(
      "constant-target",
      `the intercept and the unpenalized predictors (${unpenalized.join(", ")}) already separate the two classes: they explain all but 1e-5 of the deviance before any penalized term enters, so there is nothing left for the penalty to choose (and their coefficients have no finite value); give them a penalty multiplier above 0`,
    );
  }
  return { solver, start };
}

/** Top of a two-class grid, or the InputError saying why nothing can enter the model. */
function twoClassTop(data: Prepared, full: TrainingProblem, penalty: PenaltySpec, solver: LogisticDescent): number {
  const top = logisticTopStrength(solver);
  if (top > 0) return top;
  throw nothingToChooseFrom(data, full, penalty, solver.grad, () => false, () =>
    new InputError(
      "constant-target",
      "no penalized predictor is related to the outcome on these rows beyond what the intercept and the unpenalized predictors explain (every gradient is 0 there): there is nothing for the penalty to choose",
    ),
  );
}

/**
 * Intercept and coefficients in the working copy's units from a two-class solution on the
 * standardized scale (b0, b̃): b_j = b̃_j / scale_j, intercept = b0 − Σ b_j x̄_j, the centres'
 * small parts (offsets) taken before their anchors.
 */
function logisticToOriginal(problem: { p: number; std: Standardization }, intercept: number, standardized: Float64Array): { intercept: number; coefficients: Float64Array } {
  const std = problem.std;
  const coefficients = new Float64Array(problem.p);
  let near = intercept;
  let far = 0;
  for (let j = 0; j < problem.p; j++) {
    const b = std.frozen[j] ? 0 : standardized[j] / std.xScale[j];
    coefficients[j] = b;
    if (b === 0) continue;
    near -= b * std.xOffset[j];
    far += b * std.xAnchor[j];
  }
  return { intercept: near - far, coefficients };
}

/**
 * Held-out measure of each point of a two-class fold path: the linear scores of the held-out rows
 * in centred form, η = b0 + Σ b_j ((x_j − anchor_j) − offset_j) (no large intercept cancels against
 * large slopes × values), then the binomial deviance per row (devianceFromScores), the share
 * misclassified at the cutoff, or the AUC (NaN when the held-out rows have one class).
 */
function twoClassFoldErrors(data: Prepared, problem: TrainingProblem, run: LogisticRun, measure: ErrorMeasure, held: HeldOut): Float64Array {
  const errors = new Float64Array(run.strengths.length);
  const m = held.y.length;
  const std = problem.std;
  const eta = new Float64Array(m);
  const probabilities = measure === "misclassified" ? new Float64Array(m) : null;
  for (let k = 0; k < run.strengths.length; k++) {
    throwIfCancelled(data.settings.signal);
    eta.fill(run.intercepts[k]);
    const standardized = run.coefficients[k];
    for (let j = 0; j < problem.p; j++) {
      if (std.frozen[j] || standardized[j] === 0) continue;
      const b = standardized[j] / std.xScale[j];
      const off = j * m;
      const anchor = std.xAnchor[j];
      const offset = std.xOffset[j];
      for (let t = 0; t < m; t++) eta[t] += b * (held.x.data[off + t] - anchor - offset);
    }
    if (measure === "deviance") errors[k] = devianceFromScores(held.y, eta, held.w);
    else if (measure === "auc") errors[k] = areaUnderCurve(held.y, eta, held.w);
    else {
      const probs = probabilities as Float64Array;
      for (let t = 0; t < m; t++) probs[t] = logistic(eta[t]);
      errors[k] = misclassifiedShare(held.y, probs, data.cutoff, held.w);
    }
  }
  return errors;
}

/** Whether a fold's held-out rows (those with positive weight) include both classes. */
function heldOutHasBothClasses(data: Prepared, rows: Int32Array): boolean {
  let events = false;
  let others = false;
  for (const i of rows) {
    if (data.weights && !(data.weights[i] > 0)) continue;
    if (data.y[i] === 1) events = true;
    else others = true;
  }
  return events && others;
}

const MEASURE_NAMES: Record<ErrorMeasure, string> = {
  mse: "mean squared error",
  mae: "mean absolute error",
  deviance: "deviance",
  misclassified: "share misclassified",
  auc: "AUC",
};

interface TwoClassMixOutcome {
  mix: number;
  top: number;
  run: LogisticRun;
  mean: Float64Array;
  se: Float64Array;
}

/** The cross-validated two-class fit (fitPlan from the fold plan on): one unit of work per full path and per fold. */
function* twoClassSteps(
  context: TaskContext,
  rule: ChoiceRule,
  options: FitOptions,
  constantColumns: string[],
  warnings: FitWarning[],
  honestError: boolean,
): FitPlan {
  const { data, problems, plan, measure, repeats, deals } = context;
  const full = problems.full;
  const K = plan.trainBlocks.length;
  const honest = honestError ? honestSetup(data, options, plan, repeats) : null;
  const cvUnits = data.mixes.length * (repeats * K + 1);
  // Stability selection's units (2 per pair) come last: after cross-validation and the honest error.
  const totalUnits = cvUnits + (honest?.units ?? 0) + stabilityUnits(options.stability);
  let done = 0;
  const unitDone = (): void => options.onProgress?.(++done, totalUnits);
  // The AUC needs both classes among a fold's held-out rows: average over the folds that have them
  // (per deal; the stratified random deals give every fold both classes whenever they can).
  const scoredByDeal: number[][] = [];
  let leftOut = 0;
  for (let d = 0; d < repeats; d++) {
    const dealPlan = d === 0 ? plan : deals(d).plan;
    let scored = Array.from({ length: K }, (_, f) => f);
    if (measure === "auc") {
      scored = scored.filter((f) => heldOutHasBothClasses(data, dealPlan.blocks[dealPlan.validateBlock[f]]));
      if (scored.length < 2) {
        throw new InputError(
          "folds",
          `the AUC compares events with non-events among each fold's held-out rows, and only ${scored.length} of the ${K} folds${repeats > 1 ? ` of deal ${d + 1} (seed ${(options.seed ?? 1) + d})` : ""} hold out rows of both classes (at least 2 are needed): use fewer folds, or the deviance or the share misclassified`,
        );
      }
      leftOut += K - scored.length;
    }
    scoredByDeal.push(scored);
  }
  if (leftOut > 0) {
    warnings.push({
      code: "fold-constant",
      message:
        repeats === 1
          ? `${leftOut} of the ${K} folds hold out rows of one class only, which have no AUC: the cross-validated AUC and its standard error are over the other ${K - leftOut} folds`
          : `${leftOut} of the ${repeats * K} folds (${repeats} deals of ${K}) hold out rows of one class only, which have no AUC: the cross-validated AUC and its standard error are over the other ${repeats * K - leftOut} folds`,
    });
  }
  const M = data.mixes.length;
  let allKkt = 0;
  let allConverged = true;
  let sweeps = 0;
  let halvings = 0;
  // Every mix's full-data path first, in parallel; their warnings merged in mix order (one
  // "separated" warning at most, as each path adds it only when none is there yet).
  const paths: { top: number; run: LogisticRun }[] = [];
  const pathResults: FitTaskResult[] = new Array(M);
  yield { tasks: data.mixes.map((_, m) => ({ kind: "path", mix: m })), context, consume: (m, result) => (pathResults[m] = result), finished: unitDone };
  for (let m = 0; m < M; m++) {
    const result = pathResults[m];
    if (result.kind === "failed") throw new InputError(result.code, result.message);
    if (result.kind !== "path") throw new Error("fit: a path task returned another kind of result");
    for (const warning of result.warnings) {
      if (warning.code === "separated" && warnings.some((w) => w.code === "separated")) continue;
      warnings.push(warning);
    }
    const run = result.run as LogisticRun;
    paths.push({ top: result.top, run });
    sweeps += run.sweeps;
    halvings += run.stepHalvings;
    allKkt = Math.max(allKkt, run.maxKktViolation);
    if (run.notConverged.length > 0) allConverged = false;
  }
  const outcomes: TwoClassMixOutcome[] = [];
  // Each fold's path of the mix with the best mean so far (as the number outcome keeps them), for
  // the kept shares at the chosen point: the last of these mixes is the chosen one. With repeats,
  // the signs over every deal's folds are counted instead (SignTally, repeats.ts).
  let chosenFoldPaths = null as FoldPoints[] | null;
  let chosenTally = null as SignTally | null;
  let chosenFoldMix = NaN;
  let bestSoFar = NaN;
  const foldTasks: FitTask[] = [];
  for (let m = 0; m < M; m++) {
    for (let d = 0; d < repeats; d++) {
      for (let f = 0; f < K; f++) {
        foldTasks.push({ kind: "fold", mix: m, deal: d, fold: f, strengths: paths[m].run.strengths, keepPath: repeats === 1, keepSigns: repeats > 1 });
      }
    }
  }
  // The mix being merged.
  let scoredErrors: Float64Array[] = [];
  let scoredWeights: number[] = [];
  let dealSes: Float64Array[] = [];
  let foldPaths: FoldPoints[] = [];
  let tally = null as SignTally | null;
  let dealErrors: Float64Array[] = [];
  const consumeFold = (index: number, result: FitTaskResult): void => {
    const task = foldTasks[index] as Extract<FitTask, { kind: "fold" }>;
    if (result.kind !== "fold") throw new Error("fit: a fold task returned another kind of result");
    const { mix: m, deal: d, fold: f } = task;
    const run = paths[m].run;
    if (d === 0 && f === 0) {
      scoredErrors = [];
      scoredWeights = [];
      dealSes = [];
      foldPaths = [];
      tally = repeats > 1 ? new SignTally(run.strengths.length, full.p) : null;
    }
    if (f === 0) dealErrors = [];
    sweeps += result.sweeps;
    halvings += result.stepHalvings;
    allKkt = Math.max(allKkt, result.maxKktViolation);
    if (!result.converged) allConverged = false;
    dealErrors.push(result.errors);
    if (tally && result.signs) tally.addSigns(result.signs);
    else foldPaths.push({ std: result.std as Standardization, p: full.p, path: result.path });
    if (f < K - 1) return;
    const deal = deals(d);
    const scored = scoredByDeal[d];
    for (const g of scored) {
      scoredErrors.push(dealErrors[g]);
      scoredWeights.push(deal.foldWeights[g]);
    }
    if (repeats > 1) {
      dealSes.push(
        summarise(
          scored.map((g) => dealErrors[g]),
          scored.map((g) => deal.foldWeights[g]),
          run.strengths.length,
        ).se,
      );
    }
    if (d < repeats - 1) return;
    // Repeated CV: pooled fold-weighted mean, SE averaged over the deals (repeats.ts).
    const summary = summarise(scoredErrors, scoredWeights, run.strengths.length);
    const mean = summary.mean;
    const se = repeats > 1 ? averageOfDeals(dealSes) : summary.se;
    outcomes.push({ mix: data.mixes[m], top: paths[m].top, run, mean, se });
    // The same comparison as the choice below (strictly better replaces, so ties keep the earlier mix).
    let mixBest = mean[0];
    for (let k = 1; k < mean.length; k++) if (higherIsBetter(measure) ? mean[k] > mixBest : mean[k] < mixBest) mixBest = mean[k];
    if (Number.isNaN(chosenFoldMix) || (higherIsBetter(measure) ? mixBest > bestSoFar : mixBest < bestSoFar)) {
      chosenFoldPaths = foldPaths;
      chosenTally = tally;
      chosenFoldMix = data.mixes[m];
      bestSoFar = mixBest;
    }
  };
  yield { tasks: foldTasks, context, consume: consumeFold, finished: unitDone };
  // Choices as for the number outcome, with "lowest error" meaning the highest AUC: the best mean
  // over every mix and strength (ties to the larger strength, then the earlier mix); one-SE: the
  // largest strength of that mix whose mean is within one SE of the best (AUC: at least best − SE).
  const higher = higherIsBetter(measure);
  const better = (a: number, b: number): boolean => (higher ? a > b : a < b);
  let best = outcomes[0];
  let bestIndex = 0;
  for (const outcome of outcomes) {
    for (let k = 0; k < outcome.mean.length; k++) {
      if (better(outcome.mean[k], best.mean[bestIndex])) {
        best = outcome;
        bestIndex = k;
      }
    }
  }
  const limit = higher ? best.mean[bestIndex] - best.se[bestIndex] : best.mean[bestIndex] + best.se[bestIndex];
  let oneSeIndex = bestIndex;
  for (let k = 0; k < bestIndex; k++) {
    if (higher ? best.mean[k] >= limit : best.mean[k] <= limit) {
      oneSeIndex = k;
      break;
    }
  }
  const point = (outcome: TwoClassMixOutcome, index: number): ChoicePoint => ({
    mix: outcome.mix,
    strength: outcome.run.strengths[index],
    strengthFraction: outcome.run.strengths[index] / outcome.top,
    index,
    error: outcome.mean[index],
    se: outcome.se[index],
    termsKept: outcome.run.nonzero[index],
  });
  const choices = { lowest: point(best, bestIndex), oneSe: point(best, oneSeIndex) };
  const chosen = rule === "lowest" ? choices.lowest : choices.oneSe;
  const table: CvRow[] = [];
  for (const outcome of outcomes) {
    for (let k = 0; k < outcome.mean.length; k++) {
      table.push({ mix: outcome.mix, strength: outcome.run.strengths[k], error: outcome.mean[k], se: outcome.se[k], termsKept: outcome.run.nonzero[k] });
    }
  }
  if (bestIndex === best.run.strengths.length - 1 && best.run.earlyStop === null) {
    warnings.push({
      code: "grid-edge",
      message: `the ${higher ? "highest" : "lowest"} cross-validated ${MEASURE_NAMES[measure]} is at the weakest strength tried (${formatNumber(best.run.strengths[bestIndex])}): a smaller low-end ratio may find a better model`,
    });
  }
  if (!allConverged) {
    warnings.push({ code: "not-converged", message: "some fits hit the sweep or step cap before converging: raise the sweep cap or loosen the tolerance; results near those strengths are approximate" });
  }
  const result = assembleTwoClass(data, full, best.run, best.top, chosen.index, best.mix, constantColumns, warnings, halvings);
  result.rule = rule;
  result.strengthFraction = chosen.strengthFraction;
  result.choices = choices;
  result.cv = {
    measure,
    scheme: plan.scheme,
    folds: K,
    seed: plan.scheme === "random" ? (options.seed ?? 1) : null,
    repeats,
    table,
  };
  result.diagnostics.sweeps = sweeps;
  result.diagnostics.maxKktViolationAllFits = allKkt;
  result.diagnostics.converged = allConverged;
  // Each fold's coefficients at the chosen point in its working units (a positive multiple of the
  // data units, so the signs are the data units' signs; a column constant in a fold reads 0).
  result.keptShare =
    chosenFoldMix !== best.mix
      ? null
      : chosenTally
        ? chosenTally.keptShares(result.terms, result.coefficients, chosen.index)
        : chosenFoldPaths !== null
          ? keptShares(
              result.terms,
              result.coefficients,
              (chosenFoldPaths as FoldPoints[]).map((fold) => logisticToOriginal(fold, 0, (fold.path as Float64Array[])[chosen.index]).coefficients),
            )
          : null;
  if (honest) result.honest = yield* honestPhase(context, honest, result, (units) => options.onProgress?.(cvUnits + units, totalUnits));
  if (options.stability) {
    let halvesDone = cvUnits + (honest?.units ?? 0);
    result.stability = yield* stabilitySelection(stabilityInput(data, full, options, best.mix, best.run, () => options.onProgress?.(++halvesDone, totalUnits)), warnings);
  }
  return result;
}

/** Two-class result at a single fixed strength: the path from the top of the grid down to it. */
function fixedTwoClass(data: Prepared, full: TrainingProblem, strength: number, constantColumns: string[], warnings: FitWarning[]): FitResult {
  if (strength === 0) {
    if (data.bounded) {
      throw new InputError(
        "strength",
        "bounds apply to penalized fits: a two-class fit with bounds needs a strength above 0; give a small positive strength (e.g. 1e-4), or remove the bounds for the unpenalized fit",
      );
    }
    return twoClassBaselineResult(data, full, constantColumns, warnings);
  }
  const mix = data.mixes[0];
  const penalty = penaltyFor(full, data, mix);
  const { solver, start } = startTwoClass(data, full, data.y, penalty, true, warnings);
  const top = logisticTopStrength(solver);
  const grid = top > 0 ? strengthGrid(top, data.strengthCount, data.lowEndRatio).filter((s) => s > strength) : [];
  grid.push(strength);
  const run = runLogisticPath(solver, start, grid, { stopWhenSaturated: false, stopWhenFlat: false, signal: data.settings.signal });
  if (run.notConverged.length > 0) {
    warnings.push({ code: "not-converged", message: "the fit hit the sweep or step cap before converging: raise the sweep cap or loosen the tolerance" });
  }
  if (solver.saturated()) {
    warnings.push({
      code: "separated",
      message: `the training rows are separated: at strength ${formatNumber(strength)} the model explains all but 1e-5 of the deviance, reproducing the two classes almost exactly, and at weaker strengths its coefficients would only grow without bound`,
    });
  }
  const result = assembleTwoClass(data, full, run, top, run.strengths.length - 1, mix, constantColumns, warnings, run.stepHalvings);
  result.rule = "fixed";
  result.strengthFraction = top > 0 ? strength / top : 0;
  return result;
}

/**
 * Strength 0, two-class: the unpenalized maximum-likelihood fit with its standard errors, z and p
 * values, deviances and separation check (logisticBaseline.ts), on the data as given (it standardizes
 * and returns to the data's units itself).
 */
function twoClassBaselineResult(data: Prepared, full: TrainingProblem, constantColumns: string[], warnings: FitWarning[]): FitResult {
  const original = data.original;
  const baseline = logisticBaseline(original.x, original.y, {
    intercept: data.intercept,
    weights: original.weights ?? undefined,
    names: data.names,
    signal: data.settings.signal,
  });
  if (baseline.aliased.length > 0) {
    warnings.push({
      code: "aliased",
      message: `${baseline.aliased.map((j) => data.names[j]).join(", ")} ${baseline.aliased.length === 1 ? "is" : "are"} an exact combination of other predictors: coefficient set to 0`,
    });
  }
  if (baseline.separation) {
    warnings.push({ code: "separated", message: baseline.separation.message });
  } else if (!baseline.converged) {
    warnings.push({ code: "not-converged", message: "the unpenalized fit did not converge within its step cap: its estimates are approximate" });
  }
  const coefficients = baseline.coefficients.slice();
  const intercept = baseline.intercept;
  const predictorSpreads = Array.from(full.std.xSpread, (spread, j) => scaleByPowerOfTwo(spread, -data.xExponent[j]));
  const share = 1 - baseline.deviance / baseline.nullDeviance;
  const probabilities = baseline.probabilities;
  return {
    kind: "shrinkwise-fit",
    outcome: "two-class",
    terms: data.names.slice(),
    intercept,
    coefficients,
    standardizedCoefficients: coefficients.map((b, j) => b * predictorSpreads[j]),
    predictorSpreads,
    targetSpread: 1,
    mix: data.mixes[0],
    strength: 0,
    strengthFraction: 0,
    rule: "fixed",
    choices: null,
    cv: null,
    path: { mix: data.mixes[0], top: 0, strengths: [0], intercepts: [intercept], coefficients: [coefficients.slice()], termsKept: [coefficients.filter((b) => b !== 0).length], r2: [share] },
    fit: score(original.y, probabilities, original.weights),
    classFit: scoreTwoClass(original.y, probabilities, { cutoff: data.cutoff, weights: original.weights }),
    baseline: {
      standardErrors: baseline.standardErrors.slice(),
      interceptStandardError: baseline.interceptStandardError,
      residualStandardDeviation: NaN,
      degreesOfFreedom: baseline.degreesOfFreedom,
      r2: share,
      aliased: baseline.aliased.map((j) => data.names[j]),
      zValues: baseline.zValues.slice(),
      interceptZ: baseline.interceptZ,
      pValues: baseline.pValues.slice(),
      interceptP: baseline.interceptP,
      deviance: baseline.deviance,
      nullDeviance: baseline.nullDeviance,
      nullDegreesOfFreedom: baseline.nullDegreesOfFreedom,
      separation: baseline.separation
        ? { kind: baseline.separation.kind, terms: baseline.separation.terms.map((j) => data.names[j]), message: baseline.separation.message }
        : null,
    },
    rowsUsed: data.x.rows,
    constantColumns,
    diagnostics: {
      updates: data.covariance ? "gram" : "residual",
      solver: "maximum-likelihood",
      sweeps: 0,
      maxKktViolation: 0,
      maxKktViolationAllFits: 0,
      converged: baseline.converged,
      strongRuleMisses: 0,
      earlyStop: null,
      lowEndRatio: data.lowEndRatio,
      strengthCount: data.strengthCount,
      gridDensity: gridDensity(data.strengthCount, data.lowEndRatio),
      stepHalvings: 0,
    },
    warnings,
    model: linearModel(data.names, intercept, coefficients, "logistic"),
  };
}

/** Shared two-class result assembly from the full-data path and the chosen point on it. */
function assembleTwoClass(
  data: Prepared,
  full: TrainingProblem,
  run: LogisticRun,
  top: number,
  index: number,
  mix: number,
  constantColumns: string[],
  warnings: FitWarning[],
  stepHalvings: number,
): FitResult {
  const intercepts: number[] = [];
  const coefficientRows: number[][] = [];
  for (let k = 0; k < run.coefficients.length; k++) {
    const work = logisticToOriginal(full, run.intercepts[k], run.coefficients[k]);
    const convert = (j: number, value: number): number => (k === index ? coefficientInDataUnits(data, j, value) : pathValueInDataUnits(data, j, value));
    intercepts.push(convert(-1, work.intercept));
    coefficientRows.push(Array.from(work.coefficients, (b, j) => convert(j, b)));
  }
  const coefficients = coefficientRows[index];
  const intercept = intercepts[index];
  const model = linearModel(data.names, intercept, coefficients, "logistic");
  // In-sample probabilities in centred form (see twoClassFoldErrors), from the data as given:
  // the centres' parts move back to the data's units exactly (powers of two).
  const original = data.original;
  const n = original.x.rows;
  const std = full.std;
  const eta = new Float64Array(n).fill(run.intercepts[index]);
  for (let j = 0; j < full.p; j++) {
    const b = coefficients[j];
    if (b === 0) continue;
    const anchor = scaleByPowerOfTwo(std.xAnchor[j], -data.xExponent[j]);
    const offset = scaleByPowerOfTwo(std.xOffset[j], -data.xExponent[j]);
    const off = j * n;
    for (let i = 0; i < n; i++) eta[i] += b * (original.x.data[off + i] - anchor - offset);
  }
  const probabilities = Float64Array.from(eta, logistic);
  const chosenWork = logisticToOriginal(full, run.intercepts[index], run.coefficients[index]).coefficients;
  if (run.earlyStop) {
    const last = run.strengths.length - 1;
    const where = `point ${last + 1} of ${data.strengthCount}`;
    warnings.push({
      code: "early-stop",
      message:
        run.earlyStop === "saturated"
          ? `the training rows are separated: from strength ${formatNumber(run.strengths[last])} down the model explains all but 1e-5 of the deviance, reproducing the two classes almost exactly, so the path stops there (${where}); at weaker strengths its coefficients would only grow without bound`
          : `the path stopped at strength ${formatNumber(run.strengths[last])} (${where}), as 'stop early' allows: over the last tenfold drop in strength the deviance improved by less than 1%`,
    });
  }
  if (stepHalvings > 0) {
    warnings.push({
      code: "step-halved",
      message: `${stepHalvings} time${stepHalvings === 1 ? "" : "s"} a step of the solver would have raised the penalized objective and was halved until it no longer did (usual when probabilities run close to 0 or 1); the fits were still checked against their optimality conditions`,
    });
  }
  return {
    kind: "shrinkwise-fit",
    outcome: "two-class",
    terms: data.names.slice(),
    intercept,
    coefficients,
    // Log-odds per SD of the predictor: b_j × SD_j (the powers of two cancel, so working units serve).
    standardizedCoefficients: Array.from(chosenWork, (b, j) => b * full.std.xSpread[j]),
    predictorSpreads: Array.from(full.std.xSpread, (spread, j) => scaleByPowerOfTwo(spread, -data.xExponent[j])),
    // The log-likelihood has no units: λ is measured against log-odds as they are.
    targetSpread: 1,
    mix,
    strength: run.strengths[index],
    strengthFraction: top > 0 ? run.strengths[index] / top : 0,
    rule: "fixed",
    choices: null,
    cv: null,
    path: {
      mix,
      top,
      strengths: run.strengths.slice(),
      intercepts,
      coefficients: coefficientRows,
      termsKept: run.nonzero.slice(),
      r2: run.r2.slice(),
    },
    fit: score(original.y, probabilities, original.weights),
    classFit: scoreTwoClass(original.y, probabilities, { cutoff: data.cutoff, weights: original.weights }),
    baseline: null,
    rowsUsed: data.x.rows,
    constantColumns,
    diagnostics: {
      updates: data.covariance ? "gram" : "residual",
      solver: "descent",
      sweeps: run.sweeps,
      maxKktViolation: run.maxKktViolation,
      maxKktViolationAllFits: run.maxKktViolation,
      converged: run.notConverged.length === 0,
      strongRuleMisses: run.strongRuleMisses,
      earlyStop: run.earlyStop ? { index: run.strengths.length - 1, strength: run.strengths[run.strengths.length - 1], reason: run.earlyStop } : null,
      lowEndRatio: data.lowEndRatio,
      strengthCount: data.strengthCount,
      gridDensity: gridDensity(data.strengthCount, data.lowEndRatio),
      stepHalvings,
    },
    warnings,
    model,
  };
}

// ---------------------------------------------------------------------------------------------
// Stability selection (stability.ts): the half-sample fits, built as cross-validation folds are.
// ---------------------------------------------------------------------------------------------

/**
 * Which terms stability selection can select (candidates: penalized, not constant, not held at 0
 * by bounds of 0 and 0) and which are in every model (unpenalized, not constant); the settings
 * checked against the candidates (an InputError for bad settings, before any fitting).
 */
function stabilityTerms(data: Prepared, full: TrainingProblem, options: FitOptions): { candidate: boolean[]; unpenalized: boolean[]; settings: ReturnType<typeof stabilitySettings> } {
  const candidate: boolean[] = [];
  const unpenalized: boolean[] = [];
  for (let j = 0; j < full.p; j++) {
    const free = !full.std.frozen[j];
    const penalized = data.multipliers[j] > 0;
    candidate.push(free && penalized && !(data.lower[j] === 0 && data.upper[j] === 0));
    unpenalized.push(free && !penalized);
  }
  const count = candidate.filter(Boolean).length;
  const settings = stabilitySettings(options.stability as StabilityOptions, count, options.seed ?? 1);
  return { candidate, unpenalized, settings };
}

/**
 * Everything stability selection needs from the fit: the chosen mix and its full-data path
 * strengths (unit-free λ), the terms, the rows with positive weight, and the half fitter. A half's
 * problem is built as a fold's training problem is (buildProblems): from its rows, or in gram form
 * from its block sums about the full data's shifts, so it standardizes its own rows; it is then
 * solved down the strengths from its unpenalized fit with warm starts, as runPath /
 * runLogisticPath do for a fold (never stopping early), one strength per call.
 */
function stabilityInput(data: Prepared, full: TrainingProblem, options: FitOptions, mix: number, run: PathRun, onHalf: () => void): StabilityInput {
  const { y, weights } = data;
  const { x, factors } = readX(data);
  const signal = data.settings.signal;
  const strengths = run.strengths;
  const { candidate, unpenalized, settings } = stabilityTerms(data, full, options);
  // First depth (stability.ts firstDepth; it changes the cost, never the result): a half of the rows
  // selects about as many terms at a strength as the full data do (its union down the path, which
  // q bounds, at least as many), so twice the strengths the full-data path takes to hold more than
  // q penalized terms, at least 8.
  const fixedIn = unpenalized.filter(Boolean).length;
  let reach = strengths.length;
  for (let k = 0; k < run.nonzero.length; k++) {
    if (run.nonzero[k] - fixedIn > settings.expectedTerms) {
      reach = k + 1;
      break;
    }
  }
  const eligibleRows: number[] = [];
  for (let i = 0; i < x.rows; i++) if (!weights || weights[i] > 0) eligibleRows.push(i);
  const problemOptions = { intercept: data.intercept, standardize: data.standardize, columnUnits: Float64Array.from(data.xExponent, (e) => powerOfTwo(e)) };
  const { shiftX, shiftY } = fullShift(data);
  const twoClass = data.outcome === "two-class";
  const fitHalf = (rows: Int32Array): HalfPath => {
    let converged = true;
    if (twoClass) {
      const problem = problemFromRows(x, y, weights, rows, problemOptions, signal, factors);
      const { solver, start } = startTwoClass(data, problem, outcomesOf(data, rows), penaltyFor(problem, data, mix), false, []);
      converged = start.converged;
      return {
        at: (k) => {
          if (!solver.solve(strengths[k], k === 0 ? strengths[0] : strengths[k - 1]).converged) converged = false;
          return solver.coef;
        },
        converged: () => converged,
      };
    }
    const problem = data.gram
      ? problemFromSums(blockSums(x, y, weights, rows, shiftX, shiftY, signal, factors), shiftX, shiftY, problemOptions)
      : problemFromRows(x, y, weights, rows, problemOptions, signal, factors);
    const solver = new CoordinateDescent(problem, penaltyFor(problem, data, mix), data.settings);
    converged = solver.fitUnpenalized().converged;
    return {
      at: (k) => {
        if (!solver.solve(strengths[k], k === 0 ? strengths[0] : strengths[k - 1]).converged) converged = false;
        return solver.coef;
      },
      converged: () => converged,
    };
  };
  return {
    settings,
    mix,
    strengths,
    candidate,
    unpenalized,
    eligible: Int32Array.from(eligibleRows),
    strata: twoClass ? data.y : null,
    fitHalf,
    signal,
    onHalf,
    firstDepth: Math.max(8, 2 * reach),
  };
}
