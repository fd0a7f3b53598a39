/**
 * The cell functions of the SHRINK namespace, as pure async functions over raw worksheet
 * values. The Excel registration layer calls these with the arguments it receives (`any[][]`
 * ranges, `null` for an omitted optional argument) and a FitRunner; each returns the 2-D array
 * to spill, or rejects with a `CustomFunctions.Error` (made in errors.ts) whose message says
 * what to fix.
 *
 * | function                                               | returns                                                         |
 * |--------------------------------------------------------|-----------------------------------------------------------------|
 * | SHRINK.COEFS(target, predictors, [mixes], [settings])  | term | coefficient, "intercept" first                           |
 * | SHRINK.CHOICE(target, predictors, [mixes], [settings]) | label | value: the chosen point and how it was chosen          |
 * | SHRINK.PREDICT(target, predictors, new_rows, [mixes], [settings]) | one prediction per new row (with `interval`: prediction | low | high) |
 * | SHRINK.APPLY(coefficient_table, new_rows)              | one prediction per new row, from a table, without refitting     |
 * | SHRINK.PATH(target, predictors, [mix], [settings])     | strength | terms kept | intercept | terms…, one per strength  |
 * | SHRINK.CVCURVE(target, predictors, [mixes], [settings])| mix | strength | CV MSE | ± SE | terms kept                    |
 * | SHRINK.KEPT(target, predictors, [mixes], [settings])   | term | coefficient | kept in folds | same sign, most kept first (`stability=yes`: + stable share | stable, and a bound row) |
 * | SHRINK.SCORE(actual, predicted, [settings])            | label | value: MAE, RMSE, R², mean error, pairs used/skipped   |
 * | SHRINK.BASELINE(target, predictors, [settings])        | term | coefficient | standard error, residual SD, R²            |
 *
 * A yes/no target (two values: TRUE/FALSE, 0/1 or two labels; setting `outcome`, rules in
 * engine/outcome.ts) is fitted by penalized logistic regression, and the same functions say so:
 *
 * | function | yes/no target                                                                                   |
 * |----------|-------------------------------------------------------------------------------------------------|
 * | COEFS    | term | coefficient (log-odds of 'fail') | odds ratio (e^coefficient; blank for the intercept)    |
 * | CHOICE   | outcome, event ('fail' (62 of 300 rows used; …)), cutoff first, then the rows above; CV deviance… |
 * | PREDICT  | probability of 'fail' per row; `predict=class`: the class at the cutoff, header `predicted class (cutoff 0.5)` |
 * | APPLY    | a coefficient header saying log-odds: probability of the event, header `probability of 'fail'` |
 * | PATH     | the intercept's header reads `intercept (log-odds of 'fail')`                                   |
 * | CVCURVE  | CV deviance, CV misclassified share or CV AUC (higher is better), by `error`                    |
 * | KEPT     | the coefficient header reads `coefficient (log-odds of 'fail')`                                 |
 * | SCORE    | event, log loss, Brier score, AUC, cutoff, accuracy, sensitivity, specificity, events caught, events missed, false alarms, correct all-clear, pairs used/skipped, notes |
 * | BASELINE | term | coefficient (log-odds of 'fail') | standard error | z | p-value, then deviances (a separation row on top when no estimate exists) |
 *
 * COEFS, CHOICE, PREDICT, PATH (with its mix omitted), CVCURVE and KEPT build the same FitRequest for
 * the same ranges, mixes and settings, so a caching runner fits once for all of them.
 * APPLY and SCORE fit nothing and take no runner.
 */
import { scoreTwoClass } from "../engine/classMetrics";
import { checkMeasure, type FitResult } from "../engine/fit";
import { predictionIntervals } from "../engine/conformal";
import { fromRows, type ColumnMatrix } from "../engine/matrix";
import { score as scoreValues } from "../engine/metrics";
import { numberFromText } from "../engine/numberText";
import { linearModel, predict as predictWithModel, type ModelLink } from "../engine/model";
import { readOutcome, type OutcomeReading, type OutcomeValue } from "../engine/outcome";
import { Cell, classifyCell, isNumeric, numericValue, storedAsTextHint, textKey, toGrid } from "./cells";
import {
  applyCoefficientTable,
  buildDataset,
  Dataset,
  datasetRequest,
  EncodedRows,
  encodeNewRows,
  reserveMatrix,
  listNames,
  readCoefficientTable,
  TargetClasses,
  termIndices,
} from "./dataset";
import { DataError, SettingError, toCellError } from "./errors";
import type { AnyFitRequest, CancelToken, FitRunner, PlainFitOptions } from "./runner";
import { BASELINE_SETTINGS, DEFAULT_CUTOFF, parseMixes, parseSettings, SCORE_SETTINGS, Settings } from "./settings";
import {
  baselineSpill,
  choiceSpill,
  coefficientSpill,
  cvCurveSpill,
  pathSpill,
  PredictionOutput,
  predictionSpill,
  intervalSpill,
  keptSpill,
  scoreSpill,
  Spill,
  twoClassBaselineSpill,
  twoClassScoreSpill,
} from "./spill";

export type { Spill, SpillCell } from "./spill";

/** Runs `work`, turning anything it throws into the cell's error value. */
async function guard(work: () => Promise<Spill> | Spill): Promise<Spill> {
  try {
    return await work();
  } catch (e) {
    throw toCellError(e);
  }
}

/**
 * Starts the request's fit, then (while it runs: in the add-in the worker fits and this thread
 * waits) reserves the matrix buffer the next reading of a grid this size will write into
 * (dataset.ts reserveMatrix), so the next recalculation does not pay for fresh memory.
 */
function fitPrepared(runner: FitRunner, request: AnyFitRequest, cancel: CancelToken | null | undefined): Promise<FitResult> {
  const run = runner.fit(request, cancel ?? undefined);
  if (!Array.isArray(request.predictors)) reserveMatrix(request.predictors.data.length);
  return run;
}

/** Per-term multipliers from `penalty` and `no penalty`, or null when neither is given. */
function multipliers(dataset: Dataset, settings: Settings): number[] | null {
  if (settings.penalty === null && settings.noPenalty === null) return null;
  const values = new Array<number>(dataset.names.length).fill(1);
  const setBy = new Array<string | null>(dataset.names.length).fill(null);
  const set = (indices: number[], value: number, by: string): void => {
    for (const j of indices) {
      if (setBy[j] !== null) {
        throw new SettingError(`'${dataset.names[j]}' is given a penalty twice (by ${setBy[j]} and by ${by}): give it once`);
      }
      setBy[j] = by;
      values[j] = value;
    }
  };
  for (const name of settings.noPenalty ?? []) set(termIndices(dataset, name, "no penalty"), 0, `'no penalty' ${name}`);
  for (const item of settings.penalty ?? []) set(termIndices(dataset, item.name, "penalty"), item.value, `'penalty' ${item.name}`);
  return values;
}

function bounds(dataset: Dataset, setting: Settings["lower"], name: "lower" | "upper"): number[] | null {
  if (setting === null) return null;
  const none = name === "lower" ? -Infinity : Infinity;
  if ("all" in setting) return new Array<number>(dataset.names.length).fill(setting.all);
  const values = new Array<number>(dataset.names.length).fill(none);
  const seen = new Set<number>();
  for (const item of setting.terms) {
    for (const j of termIndices(dataset, item.name, name)) {
      if (seen.has(j)) throw new SettingError(`'${name}' gives '${dataset.names[j]}' two bounds: give it once`);
      seen.add(j);
      values[j] = item.value;
    }
  }
  return values;
}

/** Engine options from the settings, in a fixed key order (requests are hashed for the cache). */
function fitOptions(dataset: Dataset, settings: Settings, mixes: number[] | null, mixLabel: string): PlainFitOptions {
  const options: PlainFitOptions = { names: dataset.names.slice() };
  if (mixes) options.mixes = mixes;
  if (settings.strength !== null) {
    if (!mixes) {
      throw new SettingError(`a fixed strength is fitted at one mix: give that mix (0 ridge … 1 lasso) as the ${mixLabel} argument`);
    }
    if (mixes.length !== 1) {
      throw new SettingError(`a fixed strength is fitted at one mix, but ${mixes.length} mixes were given: give a single mix`);
    }
    options.strength = settings.strength;
  }
  if (settings.gridDensity !== null) options.gridDensity = settings.gridDensity;
  if (settings.gridSize !== null) {
    if (settings.gridSize === 1 && settings.strength === null) {
      throw new SettingError(
        "'grid size' is 1: cross-validation would try only the top of the grid, where every penalized coefficient is 0, so the model would be the intercept alone; use 2 or more (by default the grid has 20 per tenfold drop), or give a fixed 'strength'",
      );
    }
    options.strengthCount = settings.gridSize;
  }
  if (settings.lowEnd !== null) options.lowEndRatio = settings.lowEnd;
  if (settings.stopEarly !== null) options.stopEarly = settings.stopEarly;
  if (settings.folds !== null) {
    if (dataset.foldLabels) {
      const groups = [...new Set(dataset.foldLabels)];
      if (groups.length !== settings.folds) {
        throw new SettingError(
          `'folds' is ${settings.folds} but 'fold column' makes one fold per group of '${dataset.foldColumn ?? ""}', and it has ${groups.length} (${listNames(groups.map(String), 6)}): remove 'folds' from settings`,
        );
      }
    }
    options.folds = settings.folds;
  }
  if (settings.seed !== null) options.seed = settings.seed;
  if (dataset.foldLabels) options.foldLabels = dataset.foldLabels;
  if (settings.timeOrdered !== null) options.timeOrdered = settings.timeOrdered;
  if (dataset.outcome === "two-class") {
    options.outcome = "two-class";
    if (settings.cutoff !== null) options.cutoff = settings.cutoff;
  }
  if (settings.measure !== null) options.measure = settings.measure;
  if (settings.rule !== null) options.rule = settings.rule;
  if (settings.standardize !== null) options.standardize = settings.standardize;
  if (settings.intercept !== null) options.intercept = settings.intercept;
  if (dataset.weights) options.weights = dataset.weights;
  const penalty = multipliers(dataset, settings);
  if (penalty) options.penaltyMultipliers = penalty;
  const lower = bounds(dataset, settings.lower, "lower");
  if (lower) options.lowerBounds = lower;
  const upper = bounds(dataset, settings.upper, "upper");
  if (upper) options.upperBounds = upper;
  // Repeats, honest error and stability: only when they change the fit (the defaults stay out of
  // the request, so a fit asked for with `repeats=1` is the same cache entry as one without it).
  // Every option given is part of the cache key (cache.ts), so a fit with stability is never
  // served from one without it.
  if (settings.repeats !== null && settings.repeats > 1) options.repeats = settings.repeats;
  if (settings.honestError) options.honestError = true;
  if (settings.stability) {
    const stability: NonNullable<PlainFitOptions["stability"]> = {};
    if (settings.draws !== null) stability.draws = settings.draws;
    if (settings.expectedTerms !== null) stability.expectedTerms = settings.expectedTerms;
    if (settings.stabilityThreshold !== null) stability.threshold = settings.stabilityThreshold;
    options.stability = stability;
  }
  if (lower && upper && lower.every((l, j) => l === 0 && upper[j] === 0)) {
    throw new SettingError(
      "'lower' and 'upper' are both 0 for every term, which fixes every coefficient at 0: nothing is left to fit; keep one of them (lower=0 alone keeps coefficients from going negative, upper=0 alone from going positive)",
    );
  }
  return options;
}

/**
 * Settings that only a yes/no target uses are refused on a number target (they say the user
 * expects a yes/no target); an error measure of the other kind of target is refused with the
 * engine's own message (checkMeasure).
 */
function checkOutcomeSettings(dataset: Dataset, settings: Settings): void {
  checkMeasure(settings.measure, dataset.outcome);
  if (dataset.outcome === "two-class") return;
  const given = [
    settings.event !== null ? `event=${settings.event}` : null,
    settings.cutoff !== null ? `cutoff=${settings.cutoff}` : null,
    settings.predictOutput !== null ? `predict=${settings.predictOutput}` : null,
  ].filter((g): g is string => g !== null);
  if (given.length === 0) return;
  const why =
    settings.outcome === "number" ? "settings say outcome=number" : "only TRUE/FALSE, 0/1 or two labels are read as yes/no, or any two values with outcome=two-class";
  throw new SettingError(
    `${given.join(" and ")} ${given.length === 1 ? "applies" : "apply"} to a yes/no target, but the target '${dataset.targetName}' is read as numbers (${why}): remove ${given.length === 1 ? "it" : "them"}, or give a target with two classes`,
  );
}

export interface Prepared {
  dataset: Dataset;
  settings: Settings;
  request: AnyFitRequest;
}

/**
 * Settings, mixes and data → the request every fitting function sends. Exported for the side
 * pane, so a fit started there is the same cache entry as the cells' over the same ranges.
 * Throws DataError / SettingError (see errors.ts) for bad input.
 */
export function prepare(target: unknown, predictors: unknown, mixesRaw: unknown, settingsRaw: unknown, mixes?: number[] | null): Prepared {
  const settings = parseSettings(settingsRaw);
  const mixList = mixes !== undefined ? mixes : parseMixes(mixesRaw);
  const dataset = buildDataset(target, predictors, settings);
  checkOutcomeSettings(dataset, settings);
  const options = fitOptions(dataset, settings, mixList, mixes !== undefined ? "mix" : "mixes");
  return { dataset, settings, request: datasetRequest(dataset, options) };
}

/**
 * SHRINK.COEFS: the chosen model's coefficients in original units.
 * Returns [["term", "coefficient"], ["intercept", b0], [term, b], …].
 */
export function coefs(
  runner: FitRunner,
  target: unknown,
  predictors: unknown,
  mixes: unknown,
  settings: unknown,
  cancel?: CancelToken | null,
): Promise<Spill> {
  return guard(async () => {
    const prepared = prepare(target, predictors, mixes, settings);
    const result = await fitPrepared(runner, prepared.request, cancel);
    return coefficientSpill(result, prepared.dataset);
  });
}

/**
 * SHRINK.CHOICE: how the model was chosen (strength, mix, CV error and SE, rule, rows, folds…).
 * Returns [["label", "value"], ["strength", λ], …], ending with `repeats` (and a note when above
 * 1) and, with `honest error=yes`, the honest error of the whole procedure, its SE and a note.
 */
export function choice(
  runner: FitRunner,
  target: unknown,
  predictors: unknown,
  mixes: unknown,
  settings: unknown,
  cancel?: CancelToken | null,
): Promise<Spill> {
  return guard(async () => {
    const prepared = prepare(target, predictors, mixes, settings);
    const result = await fitPrepared(runner, prepared.request, cancel);
    return choiceSpill(result, prepared.dataset);
  });
}

function predictRows(
  encoded: EncodedRows,
  terms: string[],
  intercept: number,
  coefficients: number[],
  link: ModelLink = "identity",
  output?: PredictionOutput,
): Spill {
  const valueRows: number[][] = [];
  for (const row of encoded.rows) if (row.kind === "values") valueRows.push(row.values);
  const predictions = predictWithModel(linearModel(terms, intercept, coefficients, link), valueRows);
  return predictionSpill(encoded.header, encoded.rows, predictions, output);
}

/**
 * PREDICT with `interval`: prediction | low | high per row, the CV+ interval at the level
 * (engine/conformal.ts; a yes/no model, a fixed strength and time-ordered folds are refused there).
 */
function predictWithIntervals(encoded: EncodedRows, result: FitResult, level: number, cancel?: CancelToken): Spill {
  const valueRows: number[][] = [];
  for (const row of encoded.rows) if (row.kind === "values") valueRows.push(row.values);
  const rows: ColumnMatrix = valueRows.length > 0 ? fromRows(valueRows) : { rows: 0, columns: result.terms.length, data: new Float64Array(0) };
  // The cell's cancel reaches the interval loop's checkpoints (many new rows × many training rows).
  const signal = {
    get aborted(): boolean {
      return cancel?.cancelled ?? false;
    },
  };
  const { low, high } = predictionIntervals(result, rows, level, signal);
  const predictions = predictWithModel(linearModel(result.terms, result.intercept, result.coefficients), valueRows);
  return intervalSpill(encoded.header, encoded.rows, predictions, low, high, level);
}

/** How PREDICT shows a yes/no model's predictions: the event's probability, or the predicted class. */
function twoClassOutput(dataset: Dataset, settings: Settings): PredictionOutput {
  const classes = dataset.classes as TargetClasses;
  if (settings.predictOutput === "class") {
    const cutoff = settings.cutoff ?? DEFAULT_CUTOFF;
    return {
      header: `predicted class (cutoff ${cutoff})`,
      // The classes as the target's cells hold them (TRUE/FALSE stay booleans, 0/1 numbers).
      cell: (p) => (p >= cutoff ? classes.eventValue : classes.otherValue),
    };
  }
  return { header: `probability of '${classes.event}'` };
}

/**
 * SHRINK.PREDICT: fits (as SHRINK.COEFS) and predicts each row of new_rows.
 * Returns one column: a prediction per row ("" for a blank row, #N/A for a row missing a
 * value), headed "prediction" when new_rows has a header row.
 */
export function predict(
  runner: FitRunner,
  target: unknown,
  predictors: unknown,
  newRows: unknown,
  mixes: unknown,
  settings: unknown,
  cancel?: CancelToken | null,
): Promise<Spill> {
  return guard(async () => {
    const prepared = prepare(target, predictors, mixes, settings);
    const encoded = encodeNewRows(prepared.dataset.encoder, newRows);
    const result = await fitPrepared(runner, prepared.request, cancel);
    if (prepared.settings.interval !== null) return predictWithIntervals(encoded, result, prepared.settings.interval, cancel ?? undefined);
    if (prepared.dataset.outcome === "two-class") {
      return predictRows(encoded, result.terms, result.intercept, result.coefficients, "logistic", twoClassOutput(prepared.dataset, prepared.settings));
    }
    return predictRows(encoded, result.terms, result.intercept, result.coefficients);
  });
}

/**
 * SHRINK.APPLY: predictions from a coefficient table (SHRINK.COEFS output, or typed by hand),
 * with no refit. Columns of new_rows are matched to terms by header name.
 */
export function apply(coefficientTable: unknown, newRows: unknown): Promise<Spill> {
  return guard(() => {
    const table = readCoefficientTable(coefficientTable);
    const { encoded, terms, intercept, coefficients } = applyCoefficientTable(table, newRows);
    if (table.link === "logistic") {
      const header = table.event === null ? "probability of the event" : `probability of '${table.event}'`;
      return predictRows(encoded, terms, intercept, coefficients, "logistic", { header });
    }
    return predictRows(encoded, terms, intercept, coefficients);
  });
}

/**
 * SHRINK.PATH: the coefficient path of one mix (given, or the mix cross-validation chooses when
 * omitted). Returns [["strength", "terms kept", "intercept", terms…], one row per strength].
 */
export function path(
  runner: FitRunner,
  target: unknown,
  predictors: unknown,
  mix: unknown,
  settings: unknown,
  cancel?: CancelToken | null,
): Promise<Spill> {
  return guard(async () => {
    const mixes = parseMixes(mix, "mix");
    if (mixes !== null && mixes.length > 1) {
      throw new SettingError(
        `SHRINK.PATH draws one mix but ${mixes.length} were given: give a single mix, or leave it out for the mix cross-validation chooses`,
      );
    }
    const prepared = prepare(target, predictors, null, settings, mixes);
    const result = await fitPrepared(runner, prepared.request, cancel);
    return pathSpill(result, prepared.dataset);
  });
}

/**
 * SHRINK.CVCURVE: the cross-validation table. Returns [["mix", "strength", "CV MSE", "± SE",
 * "terms kept"], one row per mix and strength] ("CV MAE" with error=mae). #N/A with a fixed
 * strength (no cross-validation runs).
 */
export function cvcurve(
  runner: FitRunner,
  target: unknown,
  predictors: unknown,
  mixes: unknown,
  settings: unknown,
  cancel?: CancelToken | null,
): Promise<Spill> {
  return guard(async () => {
    const prepared = prepare(target, predictors, mixes, settings);
    if (prepared.settings.strength !== null) {
      throw new DataError("no cross-validation runs with a fixed strength: remove 'strength' from settings to see the curve", "n/a");
    }
    const result = await fitPrepared(runner, prepared.request, cancel);
    if (!result.cv) throw new DataError("no cross-validation ran for this fit", "n/a");
    return cvCurveSpill(result);
  });
}

/**
 * SHRINK.KEPT: how steadily each term is kept over the cross-validation folds at the chosen mix
 * and strength. Returns [["term", "coefficient", "kept in folds", "same sign"], one row per term,
 * most kept first]. #N/A with a fixed strength (no cross-validation runs, so no fold models).
 * With `stability=yes`: also `stable share` and `stable` columns, and a footer row with the bound
 * on the expected number of falsely selected terms (keptSpill).
 */
export function kept(
  runner: FitRunner,
  target: unknown,
  predictors: unknown,
  mixes: unknown,
  settings: unknown,
  cancel?: CancelToken | null,
): Promise<Spill> {
  return guard(async () => {
    const prepared = prepare(target, predictors, mixes, settings);
    if (prepared.settings.strength !== null) {
      throw new DataError("kept shares count the cross-validation fold models, and a fixed strength runs no cross-validation: remove 'strength' from settings", "n/a");
    }
    const result = await fitPrepared(runner, prepared.request, cancel);
    if (!result.keptShare) throw new DataError("no cross-validation ran for this fit, so there are no fold models to count", "n/a");
    return keptSpill(result, prepared.dataset);
  });
}

/** One-dimensional values of a SCORE argument, with a way to name each position. */
interface Vector {
  cells: Cell[];
  where: (k: number) => string;
}

function vectorOf(raw: unknown, label: string): { grid: unknown[][]; vector: Vector | null } {
  const grid = toGrid(raw);
  if (grid.length === 0 || grid[0].length === 0) throw new DataError(`${label} is empty: select the ${label} values`);
  if (grid[0].length === 1) return { grid, vector: { cells: grid.map((r) => classifyCell(r[0])), where: (k) => `${label} row ${k + 1}` } };
  if (grid.length === 1) return { grid, vector: { cells: grid[0].map(classifyCell), where: (k) => `${label} column ${k + 1}` } };
  return { grid, vector: null };
}

function flatten(grid: unknown[][], label: string): Vector {
  const width = grid[0].length;
  return {
    cells: grid.flat().map(classifyCell),
    where: (k) => `${label} row ${Math.floor(k / width) + 1} column ${(k % width) + 1}`,
  };
}

/**
 * SHRINK.SCORE: accuracy of predictions. Pairs with a blank or error cell are skipped (and
 * counted); a first cell of text (not a number stored as text) is a header and is dropped, on
 * either side — on the actual side unless it is a class label: the same text appears again
 * below it, or other labels follow it and taking it for a header would leave one prediction
 * unpaired; the values below the headers must pair up one to one.
 *
 * Number scoring returns [["label", "value"], ["MAE", …], ["RMSE", …], ["R²", …],
 * ["mean error (predicted − actual)", …], ["pairs used", n], ["pairs skipped", m]].
 *
 * Yes/no scoring (`twoClassScoreSpill`): when the actual values used hold two classes (TRUE/FALSE,
 * 0/1 or two labels, read by engine/outcome.ts with setting `outcome`, default auto) and every
 * prediction lies in [0, 1] (probabilities of the event): the event, log loss, Brier score, AUC,
 * the cutoff and the table at it (engine/classMetrics.ts), pairs used and skipped, notes. Actual
 * labels (texts) need probabilities: a prediction outside [0, 1] is then an error; 0/1 or
 * TRUE/FALSE actual values beside predictions outside [0, 1] are scored as numbers, as before.
 * Settings (optional): outcome, event, cutoff.
 */
export function score(actual: unknown, predicted: unknown, settingsRaw?: unknown): Promise<Spill> {
  return guard(() => {
    const settings = parseSettings(settingsRaw ?? null, SCORE_SETTINGS);
    const a = vectorOf(actual, "actual");
    const p = vectorOf(predicted, "predicted");
    let av: Vector;
    let pv: Vector;
    if (a.vector && p.vector) {
      av = a.vector;
      pv = p.vector;
    } else {
      if (a.grid.length !== p.grid.length || a.grid[0].length !== p.grid[0].length) {
        throw new DataError(
          `actual is ${a.grid.length}×${a.grid[0].length} but predicted is ${p.grid.length}×${p.grid[0].length}: give two ranges of the same shape (or two single columns)`,
        );
      }
      av = flatten(a.grid, "actual");
      pv = flatten(p.grid, "predicted");
    }
    // Headers: a first cell of text that isn't a number (a number stored as text is a value, refused below).
    const headerOf = (v: Vector, labels: boolean): string | null => {
      const c = v.cells[0];
      if (c.kind !== "text" || numberFromText(c.value) !== null) return null;
      // On the actual side a text that appears again below is a class label, not a header.
      if (labels && settings.outcome !== "number") {
        const key = textKey(c.value);
        if (v.cells.slice(1).some((other) => other.kind === "text" && textKey(other.value) === key)) return null;
      }
      return c.value;
    };
    let aHeader = headerOf(av, true);
    const pHeader = headerOf(pv, false);
    // A first label that only a header would leave unpaired is a value too, when labels follow it.
    if (aHeader !== null && settings.outcome !== "number" && av.cells.length === pv.cells.length - (pHeader === null ? 0 : 1)) {
      if (av.cells.slice(1).some((c) => c.kind === "text" && numberFromText(c.value) === null)) aHeader = null;
    }
    const aStart = aHeader === null ? 0 : 1;
    const pStart = pHeader === null ? 0 : 1;
    const n = av.cells.length - aStart;
    if (n !== pv.cells.length - pStart) {
      const values = (count: number): string => `${count} value${count === 1 ? "" : "s"}`;
      const side = (label: string, count: number, header: string | null, noun: boolean): string =>
        header === null ? `${label} has ${noun ? values(count) : count}` : `${label} has ${values(count)} below its header '${header}'`;
      throw new DataError(
        `${side("actual", n, aHeader, true)} but ${side("predicted", pv.cells.length - pStart, pHeader, false)}: give one prediction per actual value`,
      );
    }
    const actualValues: OutcomeValue[] = [];
    const predictedValues: number[] = [];
    // Labels (texts that aren't numbers) among the actual values, and where the first one sits.
    let labelCount = 0;
    let numberCount = 0;
    let firstLabel = -1;
    for (let k = 0; k < n; k++) {
      const x = av.cells[aStart + k];
      if (x.kind === "text") {
        if (numberFromText(x.value) !== null || settings.outcome === "number") {
          throw new DataError(`${av.where(aStart + k)} has text '${x.value}'${storedAsTextHint(x.value)}: SHRINK.SCORE needs numbers (clear the cell to skip it)`);
        }
        labelCount++;
        if (firstLabel < 0) firstLabel = aStart + k;
      } else if (isNumeric(x)) numberCount++;
    }
    const labels = labelCount > 0;
    if (labels && settings.outcome !== "two-class" && numberCount >= labelCount) {
      // A stray text among numbers: the message it always had.
      const x = av.cells[firstLabel] as { kind: "text"; value: string };
      throw new DataError(`${av.where(firstLabel)} has text '${x.value}': SHRINK.SCORE needs numbers (clear the cell to skip it)`);
    }
    let skipped = 0;
    /** Where each pair used sits in predicted, for messages. */
    const usedAt: number[] = [];
    for (let k = 0; k < n; k++) {
      const x = av.cells[aStart + k];
      const y = pv.cells[pStart + k];
      if (y.kind === "text") {
        const hint = numberFromText(y.value) === null && labels ? " (SHRINK.SCORE scores probabilities of the event: use predict=probability)" : storedAsTextHint(y.value);
        throw new DataError(`${pv.where(pStart + k)} has text '${y.value}'${hint}: SHRINK.SCORE needs numbers (clear the cell to skip it)`);
      }
      if (!isNumeric(y) || (x.kind !== "text" && !isNumeric(x))) {
        skipped++;
        continue;
      }
      actualValues.push((x as { value: OutcomeValue }).value);
      predictedValues.push(numericValue(y));
      usedAt.push(pStart + k);
    }
    if (actualValues.length === 0) {
      throw new DataError(`nothing to score: every pair has a blank or error cell (${skipped} pairs)`);
    }
    const reading = scoreReading(actualValues, predictedValues, labels, settings, (i) => pv.where(usedAt[i]));
    if (reading !== null) return twoClassScoreSpill(scoreTwoClass(reading.values, predictedValues, { cutoff: settings.cutoff ?? DEFAULT_CUTOFF }), reading, skipped);
    if (settings.event !== null || settings.cutoff !== null) {
      throw new SettingError(
        `${settings.event !== null ? "'event'" : "'cutoff'"} applies to yes/no scoring, but these pairs are scored as numbers (the actual values ${settings.outcome === "number" ? "are read as numbers: settings say outcome=number" : "don't hold exactly two classes, or a prediction lies outside 0 to 1"}): remove it`,
      );
    }
    const numbers = actualValues.map((v) => (typeof v === "boolean" ? (v ? 1 : 0) : (v as number)));
    return scoreSpill(scoreValues(numbers, predictedValues), skipped);
  });
}

/**
 * The yes/no reading of SCORE's actual values, or null to score them as numbers (see score).
 * Throws when labels (or outcome=two-class) meet a prediction outside [0, 1].
 */
function scoreReading(
  actual: OutcomeValue[],
  predicted: number[],
  labels: boolean,
  settings: Settings,
  where: (pair: number) => string,
): (OutcomeReading & { kind: "two-class" }) | null {
  const setting = settings.outcome ?? "auto";
  if (setting === "number") return null;
  let kind = setting;
  if (setting === "auto" && !labels) {
    // TRUE/FALSE among numbers are 1/0 (as in any number column); two classes only when the reading says so.
    const allBoolean = actual.every((v) => typeof v === "boolean");
    const asNumbers = allBoolean ? actual : actual.map((v) => (typeof v === "boolean" ? (v ? 1 : 0) : v));
    if (readOutcome(asNumbers, { outcome: "auto", name: "actual" }).kind !== "two-class") return null;
    if (predicted.some((p) => !(p >= 0 && p <= 1))) return null;
    kind = "two-class";
  }
  const outside = predicted.findIndex((p) => !(p >= 0 && p <= 1));
  const reading = readOutcome(actual, { outcome: kind === "auto" ? "two-class" : kind, event: settings.event, name: "actual" });
  if (reading.kind !== "two-class") return null;
  if (outside >= 0) {
    throw new DataError(
      `${where(outside)} is ${predicted[outside]}, outside 0 to 1, but actual holds two classes ('${reading.event}', '${reading.other}'): give the probability of '${reading.event}' for each row${labels ? "" : ", or add outcome=number to settings to score the values as numbers"}`,
    );
  }
  return reading;
}

/**
 * SHRINK.BASELINE: the unpenalized fit (strength 0) with standard errors. A number target gets
 * the exact least-squares fit: [["term", "coefficient", "standard error"], ["intercept", b0, se0],
 * …, ["", "", ""], ["residual SD", s, ""], ["residual degrees of freedom", df, ""], ["R²", r2, ""],
 * ["rows used", n, ""]]. A yes/no target gets the unpenalized logistic fit (twoClassBaselineSpill):
 * term | coefficient (log-odds of the event) | standard error | z | p-value, then deviances.
 * Settings (optional): outcome, event, header, zero is missing.
 */
export function baseline(runner: FitRunner, target: unknown, predictors: unknown, settingsRaw?: unknown, cancel?: CancelToken | null): Promise<Spill> {
  return guard(async () => {
    const settings = parseSettings(settingsRaw ?? null, BASELINE_SETTINGS);
    const dataset = buildDataset(target, predictors, settings);
    checkOutcomeSettings(dataset, settings);
    const options: PlainFitOptions = { names: dataset.names.slice(), mixes: [1], strength: 0 };
    if (dataset.outcome === "two-class") options.outcome = "two-class";
    const request = datasetRequest(dataset, options);
    const result = await fitPrepared(runner, request, cancel);
    if (!result.baseline) throw new Error("the unpenalized fit returned no standard errors");
    return dataset.outcome === "two-class" ? twoClassBaselineSpill(result, dataset) : baselineSpill(result, dataset);
  });
}
