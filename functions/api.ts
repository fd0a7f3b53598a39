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
 * | SHRINK.PREDICT(target, predictors, new_rows, [mixes], [settings]) | one prediction per new row                           |
 * | SHRINK.APPLY(coefficient_table, new_rows)              | one prediction per new row, from a table, without refitting     |
 * | SHRINK.PATH(target, predictors, [mix], [settings])     | strength | terms kept | intercept | terms…, one per strength  |
 * | SHRINK.CVCURVE(target, predictors, [mixes], [settings])| mix | strength | CV MSE | ± SE | terms kept                    |
 * | SHRINK.SCORE(actual, predicted)                        | label | value: MAE, RMSE, R², mean error, pairs used/skipped   |
 * | SHRINK.BASELINE(target, predictors)                    | term | coefficient | standard error, residual SD, R²            |
 *
 * COEFS, CHOICE, PREDICT, PATH (with its mix omitted) and CVCURVE build the same FitRequest for
 * the same ranges, mixes and settings, so a caching runner fits once for all of them.
 * APPLY and SCORE fit nothing and take no runner.
 */
import { score as scoreValues } from "../engine/metrics";
import { numberFromText } from "../engine/numberText";
import { linearModel, predict as predictWithModel } from "../engine/model";
import { Cell, classifyCell, isNumeric, numericValue, storedAsTextHint, toGrid } from "./cells";
import {
  applyCoefficientTable,
  buildDataset,
  Dataset,
  EncodedRows,
  encodeNewRows,
  listNames,
  readCoefficientTable,
  termIndices,
} from "./dataset";
import { DataError, SettingError, toCellError } from "./errors";
import type { CancelToken, FitRequest, FitRunner, PlainFitOptions } from "./runner";
import { defaultSettings, parseMixes, parseSettings, Settings } from "./settings";
import {
  baselineSpill,
  choiceSpill,
  coefficientSpill,
  cvCurveSpill,
  pathSpill,
  predictionSpill,
  scoreSpill,
  Spill,
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
  if (lower && upper && lower.every((l, j) => l === 0 && upper[j] === 0)) {
    throw new SettingError(
      "'lower' and 'upper' are both 0 for every term, which fixes every coefficient at 0: nothing is left to fit; keep one of them (lower=0 alone keeps coefficients from going negative, upper=0 alone from going positive)",
    );
  }
  return options;
}

export interface Prepared {
  dataset: Dataset;
  settings: Settings;
  request: FitRequest;
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
  const options = fitOptions(dataset, settings, mixList, mixes !== undefined ? "mix" : "mixes");
  return { dataset, settings, request: { predictors: dataset.predictors, target: dataset.target, options } };
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
    const result = await runner.fit(prepared.request, cancel ?? undefined);
    return coefficientSpill(result, prepared.dataset);
  });
}

/**
 * SHRINK.CHOICE: how the model was chosen (strength, mix, CV error and SE, rule, rows, folds…).
 * Returns [["label", "value"], ["strength", λ], …].
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
    const result = await runner.fit(prepared.request, cancel ?? undefined);
    return choiceSpill(result, prepared.dataset);
  });
}

function predictRows(encoded: EncodedRows, terms: string[], intercept: number, coefficients: number[]): Spill {
  const valueRows: number[][] = [];
  for (const row of encoded.rows) if (row.kind === "values") valueRows.push(row.values);
  const predictions = predictWithModel(linearModel(terms, intercept, coefficients), valueRows);
  return predictionSpill(encoded.header, encoded.rows, predictions);
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
    const result = await runner.fit(prepared.request, cancel ?? undefined);
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
    const result = await runner.fit(prepared.request, cancel ?? undefined);
    return pathSpill(result);
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
    const result = await runner.fit(prepared.request, cancel ?? undefined);
    if (!result.cv) throw new DataError("no cross-validation ran for this fit", "n/a");
    return cvCurveSpill(result);
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
 * either side; the values below the headers must pair up one to one. Returns [["label", "value"],
 * ["MAE", …], ["RMSE", …], ["R²", …], ["mean error (predicted − actual)", …], ["pairs used", n],
 * ["pairs skipped", m]].
 */
export function score(actual: unknown, predicted: unknown): Promise<Spill> {
  return guard(() => {
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
    const headerOf = (v: Vector): string | null => {
      const c = v.cells[0];
      return c.kind === "text" && numberFromText(c.value) === null ? c.value : null;
    };
    const aHeader = headerOf(av);
    const pHeader = headerOf(pv);
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
    const actualValues: number[] = [];
    const predictedValues: number[] = [];
    let skipped = 0;
    for (let k = 0; k < n; k++) {
      const x = av.cells[aStart + k];
      const y = pv.cells[pStart + k];
      for (const [c, vector, at] of [
        [x, av, aStart + k],
        [y, pv, pStart + k],
      ] as const) {
        if (c.kind === "text") {
          throw new DataError(`${vector.where(at)} has text '${c.value}'${storedAsTextHint(c.value)}: SHRINK.SCORE needs numbers (clear the cell to skip it)`);
        }
      }
      if (!isNumeric(x) || !isNumeric(y)) {
        skipped++;
        continue;
      }
      actualValues.push(numericValue(x));
      predictedValues.push(numericValue(y));
    }
    if (actualValues.length === 0) {
      throw new DataError(`nothing to score: every pair has a blank or error cell (${skipped} pairs)`);
    }
    return scoreSpill(scoreValues(actualValues, predictedValues), skipped);
  });
}

/**
 * SHRINK.BASELINE: the exact least-squares fit (strength 0) with standard errors.
 * Returns [["term", "coefficient", "standard error"], ["intercept", b0, se0], …, ["", "", ""],
 * ["residual SD", s, ""], ["residual degrees of freedom", df, ""], ["R²", r2, ""], ["rows used", n, ""]].
 */
export function baseline(runner: FitRunner, target: unknown, predictors: unknown, cancel?: CancelToken | null): Promise<Spill> {
  return guard(async () => {
    const dataset = buildDataset(target, predictors, defaultSettings());
    const request: FitRequest = {
      predictors: dataset.predictors,
      target: dataset.target,
      options: { names: dataset.names.slice(), mixes: [1], strength: 0 },
    };
    const result = await runner.fit(request, cancel ?? undefined);
    if (!result.baseline) throw new Error("the least-squares fit returned no standard errors");
    return baselineSpill(result, dataset);
  });
}

