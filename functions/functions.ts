/* eslint-disable @typescript-eslint/no-explicit-any -- Excel's metadata generator reads these
   TypeScript types: `any[][]` is "a range of cells of any kind", `any` "one value of any kind". */
/**
 * The SHRINK cell functions as Excel registers them. Each body is a thin adapter: it turns
 * Excel's cancel notice into a CancelToken, calls the matching function in api.ts with the one
 * shared runner; api.ts turns anything thrown into a cell error, in its one guard (errors.ts). The JSDoc here is what
 * Excel shows while the user types (functions.json is generated from it at build time).
 *
 * Parameter types: data ranges, mixes and settings are `any[][]` (dimensionality "matrix"), so
 * a single cell, a number, a text or a whole range all arrive as rows of cells, and Excel does
 * not call the function once per cell of a range given where one value was expected. PATH's
 * `mix` is one value (`any`, scalar). With `allowErrorForDataTypeAny` (set in functions.json by
 * the build) error cells inside ranges arrive as values, so one bad row is skipped instead of
 * the whole call failing. Omitted optional arguments arrive as null.
 *
 * The shared runner: one fit cache (cache.ts) in front of a Web Worker (workerRunner.ts), or in
 * front of the in-process engine where `Worker` is missing. The task pane gets the same cache
 * through `sharedRunner()`.
 */
import * as api from "./api";
import { FitCache } from "./cache";
import { InProcessRunner } from "./inProcessRunner";
import { cancelSource, CancelToken, FitRunner } from "./runner";
import { browserWorkerFactory, workersAvailable, WorkerRunner } from "./workerRunner";

/**
 * Fits a penalized regression (ridge, lasso or a mix of the two), picks the penalty strength
 * by cross-validation, and returns each term with its coefficient, the intercept first. For a yes/no target the coefficients are log-odds of the event, with a column of odds ratios.
 * @customfunction COEFS
 * @param target The column to predict, one value per row: numbers, or a yes/no outcome (two values: TRUE/FALSE, 0/1 or two labels such as pass/fail). A header cell on top is fine; rows with a blank or error are skipped.
 * @param predictors The columns that predict the target, one row per target row, with a header row of names if you have one. Numbers stored as text count as numbers; other text columns become one 0/1 column per level.
 * @param [mixes] The mixes to try: 0 is ridge, 1 is lasso, between is elastic net. A number, a range of numbers or text like "0, 0.5, 1". Leave out to try 0, 0.25, 0.5, 0.75 and 1.
 * @param [settings] Optional settings as text, like "folds=5; seed=7; rule=one-se", or a two-column range of setting names and values. Yes/no targets: outcome, event (e.g. event=fail), error=deviance|misclassified|auc, cutoff.
 * @param invocation Supplied by Excel.
 * @returns A table of term and coefficient (yes/no target: term, coefficient in log-odds of the event, odds ratio e^coefficient per unit; the intercept's odds ratio is left blank, as e^intercept is the odds where every predictor is 0, not a ratio).
 */
export async function coefs(
  target: any[][],
  predictors: any[][],
  mixes: any[][],
  settings: any[][],
  invocation: CustomFunctions.CancelableInvocation,
): Promise<any[][]> {
  return api.coefs(sharedRunner(), target, predictors, mixes, settings, cancelOn(invocation));
}

/**
 * Shows how the model was chosen: the strength and mix picked, their cross-validated error and
 * its standard error, the rule (lowest error or one-SE rule), the terms kept, the folds, and the
 * rows used and skipped. For a yes/no target it first names the outcome, the event and the cutoff.
 * Then the repeats of the fold deal (repeats=5 chooses on the curve averaged over 5 deals) and, with
 * honest error=yes, the honest error of the whole procedure by nested cross-validation and its SE.
 * @customfunction CHOICE
 * @param target The column to predict, one value per row: numbers, or a yes/no outcome (two values: TRUE/FALSE, 0/1 or two labels such as pass/fail). A header cell on top is fine; rows with a blank or error are skipped.
 * @param predictors The columns that predict the target, one row per target row, with a header row of names if you have one.
 * @param [mixes] The mixes to try: 0 is ridge, 1 is lasso, between is elastic net. A number, a range of numbers or text like "0, 0.5, 1". Leave out for 0, 0.25, 0.5, 0.75 and 1.
 * @param [settings] Optional settings as text, like "folds=5; rule=one-se", or a two-column range of setting names and values. repeats=5 deals the folds 5 times; honest error=yes adds the nested cross-validation error.
 * @param invocation Supplied by Excel.
 * @returns A table of label and value.
 */
export async function choice(
  target: any[][],
  predictors: any[][],
  mixes: any[][],
  settings: any[][],
  invocation: CustomFunctions.CancelableInvocation,
): Promise<any[][]> {
  return api.choice(sharedRunner(), target, predictors, mixes, settings, cancelOn(invocation));
}

/**
 * Fits the same model as SHRINK.COEFS and predicts the target for each row of new_rows. For a yes/no target it gives the probability of the event, or with predict=class the predicted class. For a number target, interval=0.9 (or 90%) adds the low and high ends of a CV+ prediction interval at that level.
 * @customfunction PREDICT
 * @param target The column to predict, one value per row: numbers, or a yes/no outcome (two values: TRUE/FALSE, 0/1 or two labels such as pass/fail). A header cell on top is fine; rows with a blank or error are skipped.
 * @param predictors The columns that predict the target, one row per target row, with a header row of names if you have one.
 * @param new_rows The rows to predict: the same columns as predictors, in the same order, or with a header row naming them.
 * @param [mixes] The mixes to try: 0 is ridge, 1 is lasso, between is elastic net. Leave out for 0, 0.25, 0.5, 0.75 and 1.
 * @param [settings] Optional settings as text, like "folds=5; seed=7", or a two-column range of setting names and values. Yes/no targets: predict=probability (default) or predict=class, cutoff=0.5. Number targets: interval=0.9 adds prediction intervals.
 * @param invocation Supplied by Excel.
 * @returns One prediction per row of new_rows (yes/no target: the event's probability, or the predicted class); with interval=0.9, prediction | low (90%) | high (90%).
 */
export async function predict(
  target: any[][],
  predictors: any[][],
  new_rows: any[][],
  mixes: any[][],
  settings: any[][],
  invocation: CustomFunctions.CancelableInvocation,
): Promise<any[][]> {
  return api.predict(sharedRunner(), target, predictors, new_rows, mixes, settings, cancelOn(invocation));
}

/**
 * Predicts from a coefficient table (the output of SHRINK.COEFS or SHRINK.BASELINE, or typed
 * in) without fitting again. A coefficient header containing "log-odds" (like coefficient (log-odds of 'fail')) marks a yes/no model: the results are then probabilities of the event.
 * @customfunction APPLY
 * @param coefficient_table Two columns, term and coefficient, with an intercept row (write intercept and 0 for a model without one). A header whose coefficient cell says log-odds gives probabilities; the event in quotes is optional; further columns (odds ratio) are not read.
 * @param new_rows The rows to predict, with a header row naming the terms' columns (or the columns in the table's order).
 * @returns One prediction per row of new_rows (a probability for a log-odds table).
 */
export async function apply(coefficient_table: any[][], new_rows: any[][]): Promise<any[][]> {
  return api.apply(coefficient_table, new_rows);
}

/**
 * Lists the coefficients at every penalty strength for one mix, from the strongest penalty
 * (everything zero) down to the weakest: one row per strength. For a yes/no target the coefficients are log-odds of the event, as the intercept's header says.
 * @customfunction PATH
 * @param target The column to predict, one value per row: numbers, or a yes/no outcome (two values: TRUE/FALSE, 0/1 or two labels such as pass/fail). A header cell on top is fine; rows with a blank or error are skipped.
 * @param predictors The columns that predict the target, one row per target row, with a header row of names if you have one.
 * @param [mix] One mix: 0 is ridge, 1 is lasso, between is elastic net. Leave out for the mix that cross-validation picks.
 * @param [settings] Optional settings as text, like "folds=5; seed=7", or a two-column range of setting names and values.
 * @param invocation Supplied by Excel.
 * @returns A table: strength, terms kept, intercept, then one column per term.
 */
export async function path(
  target: any[][],
  predictors: any[][],
  mix: any,
  settings: any[][],
  invocation: CustomFunctions.CancelableInvocation,
): Promise<any[][]> {
  return api.path(sharedRunner(), target, predictors, mix, settings, cancelOn(invocation));
}

/**
 * Lists the cross-validated error, its standard error and the number of terms kept for every
 * mix and strength tried: the data behind the choice. Yes/no targets: CV deviance, misclassified share or AUC (higher is better), by the error setting.
 * @customfunction CVCURVE
 * @param target The column to predict, one value per row: numbers, or a yes/no outcome (two values: TRUE/FALSE, 0/1 or two labels such as pass/fail). A header cell on top is fine; rows with a blank or error are skipped.
 * @param predictors The columns that predict the target, one row per target row, with a header row of names if you have one.
 * @param [mixes] The mixes to try: 0 is ridge, 1 is lasso, between is elastic net. Leave out for 0, 0.25, 0.5, 0.75 and 1.
 * @param [settings] Optional settings as text, like "folds=5; seed=7", or a two-column range of setting names and values.
 * @param invocation Supplied by Excel.
 * @returns A table: mix, strength, CV error, its standard error, terms kept.
 */
export async function cvcurve(
  target: any[][],
  predictors: any[][],
  mixes: any[][],
  settings: any[][],
  invocation: CustomFunctions.CancelableInvocation,
): Promise<any[][]> {
  return api.cvcurve(sharedRunner(), target, predictors, mixes, settings, cancelOn(invocation));
}

/**
 * Shows how steadily each term is kept over the cross-validation folds: for every term, the
 * chosen model's coefficient, the share of the fold models (each fitted without one fold's rows,
 * at the chosen mix and strength) that keep the term, and the share whose sign agrees with the
 * chosen model's. Most kept first. A stability indication, not a significance test. With
 * stability=yes, stability selection over pairs of half-samples adds each term's stable share and
 * whether it is stable (TRUE/FALSE), and a last row with the bound on the expected number of
 * falsely selected terms.
 * @customfunction KEPT
 * @param target The column to predict, one value per row: numbers, or a yes/no outcome (two values: TRUE/FALSE, 0/1 or two labels such as pass/fail). A header cell on top is fine; rows with a blank or error are skipped.
 * @param predictors The columns that predict the target, one row per target row, with a header row of names if you have one.
 * @param [mixes] The mixes to try: 0 is ridge, 1 is lasso, between is elastic net. Leave out for 0, 0.25, 0.5, 0.75 and 1.
 * @param [settings] Optional settings as text, like "folds=10; seed=7", or a two-column range of setting names and values. A fixed strength runs no cross-validation, so it has no kept shares. stability=yes runs stability selection (draws=50, q, stability threshold=0.75).
 * @param invocation Supplied by Excel.
 * @returns A table: term, coefficient, kept in folds (share of fold models with a nonzero coefficient), same sign (share agreeing with the chosen model's sign; for a term the model drops, the share of folds that drop it too); with stability=yes also stable share and stable (TRUE/FALSE), then a row with the bound on expected false selections.
 */
export async function kept(
  target: any[][],
  predictors: any[][],
  mixes: any[][],
  settings: any[][],
  invocation: CustomFunctions.CancelableInvocation,
): Promise<any[][]> {
  return api.kept(sharedRunner(), target, predictors, mixes, settings, cancelOn(invocation));
}

/**
 * Measures how close predictions are to actual values: mean absolute error, root mean squared
 * error, R², mean error, and the pairs used and skipped. When the actual values are yes/no (two classes) and the predictions are probabilities from 0 to 1: log loss, Brier score, AUC, and at the cutoff accuracy, sensitivity, specificity and the counts of events caught, events missed, false alarms and correct all-clear.
 * @customfunction SCORE
 * @param actual The actual values, one column: numbers, or two classes (TRUE/FALSE, 0/1 or two labels). Pairs with a blank or error cell are skipped.
 * @param predicted The predicted values, one column the same length as actual (a text header on top of either is dropped); for yes/no actual values, the probabilities of the event.
 * @param [settings] Optional: outcome=number to score 0/1 values as numbers, event=fail to name the event, cutoff=0.5 for the table of caught and missed events.
 * @returns A table of label and value.
 */
export async function score(actual: any[][], predicted: any[][], settings: any[][]): Promise<any[][]> {
  return api.score(actual, predicted, settings);
}

/**
 * Fits ordinary least squares (no penalty) with standard errors, to compare with the penalized
 * model and see how much it shrinks. For a yes/no target: the unpenalized logistic fit with standard errors, z and p-values, and the deviances (or a note when the classes are separated and no estimate exists).
 * @customfunction BASELINE
 * @param target The column to predict, one value per row: numbers, or a yes/no outcome (two values: TRUE/FALSE, 0/1 or two labels such as pass/fail). A header cell on top is fine; rows with a blank or error are skipped.
 * @param predictors The columns that predict the target, one row per target row, with a header row of names if you have one.
 * @param [settings] Optional: outcome, event (e.g. event=fail), header, zero is missing, as text like "event=fail" or a two-column range.
 * @param invocation Supplied by Excel.
 * @returns A table: term, coefficient, standard error, then residual SD, residual degrees of freedom, R² and rows used (yes/no target: z and p-value columns, then deviances).
 */
export async function baseline(
  target: any[][],
  predictors: any[][],
  settings: any[][],
  invocation: CustomFunctions.CancelableInvocation,
): Promise<any[][]> {
  return api.baseline(sharedRunner(), target, predictors, settings, cancelOn(invocation));
}

// ---------------------------------------------------------------------------------------------
// The shared runner and registration

/** A token cancelled when Excel cancels this call (an input changed, or a recalculation). */
function cancelOn(invocation: CustomFunctions.CancelableInvocation | undefined): CancelToken | undefined {
  if (!invocation) return undefined;
  const source = cancelSource();
  invocation.onCanceled = () => source.cancel();
  return source.token;
}

/**
 * Where the shared cache lives. A global rather than a module variable, so that even two copies
 * of this module on one page (two bundles) find the same cache.
 */
const SHARED_KEY = "__shrinkwiseSharedRunner";

type Holder = { [SHARED_KEY]?: FitCache };

/** The engine runner behind the cache: a Web Worker when the host has them, else in-process. */
export function createEngineRunner(): FitRunner {
  return workersAvailable() ? new WorkerRunner(browserWorkerFactory()) : new InProcessRunner();
}

/**
 * The one fit cache that the cell functions and the task pane share, created on first use.
 * Its `stats()` show hits, misses and runs.
 */
export function sharedRunner(): FitCache {
  const holder = globalThis as Holder;
  let cache = holder[SHARED_KEY];
  if (!cache) {
    cache = new FitCache(createEngineRunner());
    holder[SHARED_KEY] = cache;
  }
  return cache;
}

/** Replaces the shared cache (tests, or the pane resetting); the next call uses `cache`. */
export function setSharedRunner(cache: FitCache | undefined): void {
  (globalThis as Holder)[SHARED_KEY] = cache;
}

/** Function ids (as in functions.json) → implementations. */
export const FUNCTIONS = {
  COEFS: coefs,
  CHOICE: choice,
  PREDICT: predict,
  APPLY: apply,
  PATH: path,
  CVCURVE: cvcurve,
  KEPT: kept,
  SCORE: score,
  BASELINE: baseline,
} as const;

/**
 * Registers every function with Excel. Returns false (and does nothing) where the
 * CustomFunctions global is missing, e.g. a page loaded outside Office without office.js.
 */
export function registerFunctions(): boolean {
  const host = (globalThis as { CustomFunctions?: { associate?: (id: string, fn: unknown) => void } }).CustomFunctions;
  if (!host || typeof host.associate !== "function") return false;
  for (const [id, fn] of Object.entries(FUNCTIONS)) host.associate(id, fn);
  return true;
}

/**
 * Once registered (inside Excel), the fit worker starts and warms up while the runtime is idle:
 * the first recalculation of a session otherwise waits for the worker to load and V8 to compile
 * the engine (first 1,000 × 50 COEFS through the worker 600–820 → 300–340 ms measured in Node,
 * bench/PROFILE.md). A real fit stops the warm-up at once; no result depends on it.
 */
if (registerFunctions() && workersAvailable()) setTimeout(() => sharedRunner().warmUp(), 0);
