/**
 * Fitting from a sums table (sumsTable.ts): the same cross-validated squared-error elastic net as
 * fit.ts, with the rows replaced by their per-block sums, so data of any size fit in O(blocks·p²)
 * once a query engine (or sums.ts sumsOfRows) has summed them.
 *
 * Objective and conventions: those of fit.ts (unit-free strength on the standardized target and
 * predictors). Squared error needs only the weights' total, the means and the centred
 * cross-products of the predictors and the target (Friedman, Hastie & Tibshirani 2010, J. Stat.
 * Software 33(1) §2.2, "covariance updates"): the engine's gram form already builds every fold's
 * problem and scores its held-out block from block sums (fit.ts problemsFromBlockSums,
 * squaredErrorOfSums); here those sums come from the table instead of a pass over rows.
 *
 * - Folds: each block is one fold, scored by a fit on all the other blocks. `folds: K` (2 to the
 *   number of blocks) merges blocks first: block b (in table order) joins fold b mod K. A table
 *   marked time-ordered (SumsTable.timeOrdered) forward-chains instead: fold k trains on blocks
 *   0 … k−1 and is scored on block k (blocks − 1 folds); `folds: K` then first merges consecutive
 *   blocks into K + 1 groups of near-equal count (block b joins group ⌊b·(K + 1)/blocks⌋).
 * - Scaling: the table's values are brought near 1 by powers of two (scale.ts), as fit.ts does
 *   with rows: each term by the largest |value| (the blocks' `largest`, or when a table lacks it,
 *   |centre + offset| + √(Σw(x − c)²/Σw), an upper estimate of the typical size), the target
 *   likewise, the weights by the heaviest block. Powers of two are exact, so the choice changes
 *   no digit of the result; it only keeps sums far from overflow and underflow.
 * - The result is fit.ts's FitResult. Without rows: `fit.mae` is NaN (the absolute errors need
 *   the rows; RMSE, R² and bias come from the sums), `fit.count` and `rowsUsed` are the rows the
 *   sums cover (rows of weight 0 included), `heldOut` is null (no held-out residuals, so no CV+
 *   prediction intervals), `foldModels` and `keptShare` are there as usual.
 * - Refused with a message: two-class outcomes and the MAE (they need passes over the rows),
 *   repeats, honest error and stability selection (they re-deal the rows), residual updates (they
 *   keep rows), fold labels, time order or a seed given as options (the table's blocks are the
 *   folds), weights (they are summed into the table). Cross-validation also needs 2 or more
 *   blocks, each of positive weight.
 * - A fixed strength is fitted from the whole table's sums (any number of blocks). Strength 0
 *   without bounds is least squares (leastSquares.ts leastSquaresOfSums: the weighted normal
 *   equations on the centred sums, with standard errors and aliased terms as fit.ts reports them
 *   from rows). Its residual variance is Σw·r² / df with df = rows − terms kept − 1 (without an
 *   intercept − 0), the convention of the rows' route; the rows counted are those of the blocks
 *   of positive weight. Blocks of weight 0 are left out with the warning `weight-zero-rows`. A
 *   table's block counts every row (rows of weight 0 too), so with a weights column whose rows
 *   of weight 0 share blocks with rows that weigh more, df counts them and the standard errors
 *   come out smaller than the rows' route gives (by √((n₊ − k)/(n − k))); without weights, or
 *   when every row weighs more than 0, the two agree.
 */
import { InputError } from "./errors";
import {
  checkOwnUnits,
  checkSettings,
  FitOptions,
  FitResult,
  FitPlan,
  MAX_GRAM_PREDICTORS,
  planFromSetUp,
  Prepared,
  Problems,
  problemsFromBlockSums,
  runPlan,
  runPlanAsync,
  RunOptions,
  SetUp,
  workingBounds,
} from "./fit";
import { FoldPlan, MIN_TRAINING_ROWS } from "./folds";
import { accumulateSums, BlockSums, emptySums, problemFromSums } from "./problem";
import { powerOfTwo, scaleByPowerOfTwo, unitExponent } from "./scale";
import { checkSums } from "./sums";
import { SumsTable, upperIndex } from "./sumsTable";

/** Options of fitFromSums: fit.ts's FitOptions, of which the row-bound ones are refused (see the module comment). */
export type SumsFitOptions = FitOptions;

/**
 * Fits from a sums table (checked first: checkSums). Synchronous; see fitFromSumsSteps and
 * fitFromSumsAsync to yield between units of work. Throws InputError for a table or options it
 * can't fit, CancelledError when the signal is raised.
 */
export function fitFromSums(sums: SumsTable | unknown, options: SumsFitOptions = {}): FitResult {
  const steps = fitFromSumsSteps(sums, options);
  for (;;) {
    const step = steps.next();
    if (step.done) return step.value;
  }
}

/** As fitFromSums, as a generator: yields after each unit of work (progress already reported). */
export function* fitFromSumsSteps(sums: SumsTable | unknown, options: SumsFitOptions = {}): Generator<void, FitResult, void> {
  return yield* runPlan(sumsPlan(sums, options), options);
}

/**
 * As fitFromSums, awaiting a fresh macrotask between units of work (fit.ts nextTask) so a cancel
 * gets through. With `run.pool` the mixes' paths and the folds run on the pool's workers, as
 * fit.ts fitAsync runs them (each worker gets the fit's own problems, no rows): the same result
 * bit for bit.
 */
export async function fitFromSumsAsync(sums: SumsTable | unknown, options: SumsFitOptions = {}, run: RunOptions = {}): Promise<FitResult> {
  return runPlanAsync(sumsPlan(sums, options), options, run.pool ?? null);
}

function* sumsPlan(sums: SumsTable | unknown, options: SumsFitOptions): FitPlan {
  return yield* planFromSetUp(setUpFromSums(sums, options), options);
}

/** Refuses the options that need rows (module comment), each with what to do instead. */
function refuseRowOptions(options: SumsFitOptions): void {
  const refuse = (message: string): never => {
    throw new InputError("setting", message);
  };
  if ((options.outcome ?? "number") !== "number") {
    refuse("a two-class (yes/no) target can't be fitted from sums: its log-likelihood needs a pass over the rows at every step; fit the rows, or use a number target");
  }
  if (options.measure !== undefined && options.measure !== null && options.measure !== "mse") {
    refuse(`the error measure ${options.measure} can't be computed from sums (only squared error can): use mse, or fit the rows`);
  }
  if (options.repeats !== undefined && options.repeats !== null && options.repeats !== 1) {
    refuse("repeats deal the rows into folds again, and a sums table's blocks are fixed: set repeats to 1, or fit the rows");
  }
  if (options.honestError) refuse("honest error refits on the rows of each outer fold, which a sums table doesn't keep: turn honest error off, or fit the rows");
  if (options.stability) refuse("stability selection fits half-samples of the rows, which a sums table doesn't keep: leave it off, or fit the rows");
  if (options.updates === "residual") refuse("residual updates work on the rows, and a sums table holds only their sums: use gram (covariance) updates, the default here");
  if (options.foldLabels) refuse("fold labels can't be given with a sums table: its blocks are the folds (use folds to merge them)");
  if (options.timeOrdered) refuse("time order can't be set with a sums table: the table says whether its blocks are in time order");
  if (options.weights) refuse("weights can't be given with a sums table: they were summed into it (its weights column); leave them out");
  if (options.seed !== undefined && options.seed !== null) refuse("a seed deals rows into random folds, and a sums table's blocks are already the folds: leave the seed out");
}

/** Largest magnitude of each term and of the target, from the blocks' `largest` or an upper estimate of the typical size (module comment). */
function sizes(table: SumsTable): { terms: Float64Array; target: number } {
  const p = table.terms.length;
  const terms = new Float64Array(p);
  let target = 0;
  const known = table.blocks.every((b) => b.largest && b.largestY !== undefined && b.largestY !== null);
  for (const block of table.blocks) {
    for (let j = 0; j < p; j++) {
      const size = known
        ? (block.largest as number[])[j]
        : Math.abs(table.centre.terms[j] + block.offset[j]) + Math.sqrt(Math.max(block.cross[upperIndex(p, j, j)], 0) / block.weight);
      if (size > terms[j]) terms[j] = size;
    }
    const sizeY = known ? (block.largestY as number) : Math.abs(table.centre.target + block.offsetY) + Math.sqrt(Math.max(block.yy, 0) / block.weight);
    if (sizeY > target) target = sizeY;
  }
  return { terms, target };
}

/**
 * A block's sums in the working units (x × 2^xExponent, y × 2^yExponent, w × 2^weightExponent),
 * about the shifts: the centre with an intercept, 0 without one (sums about 0 from those about the
 * centre: Σw·x_a·x_b = cross + c_a·W·o_b + c_b·W·o_a + W·c_a·c_b, o the block's offsets).
 */
function workingSums(table: SumsTable, b: number, xExponent: Int32Array, yExponent: number, weightExponent: number, intercept: boolean, sizeOf: { terms: Float64Array; target: number }): BlockSums {
  const block = table.blocks[b];
  const p = table.terms.length;
  const out = emptySums(p);
  const W = scaleByPowerOfTwo(block.weight, weightExponent);
  out.weight = W;
  out.rows = block.rows;
  const offset = block.offset.map((o, j) => scaleByPowerOfTwo(o, xExponent[j]));
  const offsetY = scaleByPowerOfTwo(block.offsetY, yExponent);
  const centre = table.centre.terms.map((c, j) => (intercept ? 0 : scaleByPowerOfTwo(c, xExponent[j])));
  const centreY = intercept ? 0 : scaleByPowerOfTwo(table.centre.target, yExponent);
  for (let a = 0; a < p; a++) {
    for (let c = a; c < p; c++) {
      let v = scaleByPowerOfTwo(block.cross[upperIndex(p, a, c)], xExponent[a] + xExponent[c] + weightExponent);
      if (!intercept) v += centre[a] * (W * offset[c]) + centre[c] * (W * offset[a]) + W * centre[a] * centre[c];
      out.xx[a * p + c] = v;
      out.xx[c * p + a] = v;
    }
    let xy = scaleByPowerOfTwo(block.crossY[a], xExponent[a] + yExponent + weightExponent);
    if (!intercept) xy += centre[a] * (W * offsetY) + centreY * (W * offset[a]) + W * centre[a] * centreY;
    out.xy[a] = xy;
    out.sumX[a] = W * (centre[a] + offset[a]);
    out.largest[a] = scaleByPowerOfTwo(block.largest ? block.largest[a] : sizeOf.terms[a], xExponent[a]);
  }
  let yy = scaleByPowerOfTwo(block.yy, 2 * yExponent + weightExponent);
  if (!intercept) yy += 2 * centreY * (W * offsetY) + W * centreY * centreY;
  out.yy = yy;
  out.sumY = W * (centreY + offsetY);
  out.largestY = scaleByPowerOfTwo(block.largestY ?? sizeOf.target, yExponent);
  return out;
}

/** The folds: which merged blocks each trains on and is scored on (module comment). */
function foldGroups(table: SumsTable, folds: number | undefined): { group: Int32Array; count: number; time: boolean } {
  const B = table.blocks.length;
  const time = table.timeOrdered === true;
  const most = time ? B - 1 : B;
  let K = most;
  if (folds !== undefined && folds !== null) {
    if (typeof folds !== "number" || !Number.isInteger(folds) || folds < 2 || folds > most) {
      throw new InputError(
        "folds",
        `folds is ${String(folds)}, but this sums table has ${B} blocks${time ? " in time order" : ""}: give a whole number from 2 to ${most} (blocks are merged into that many folds), or leave folds out for one fold per ${time ? "later block" : "block"}`,
      );
    }
    K = folds;
  }
  if (time && K < 1) throw new InputError("folds", "a time-ordered sums table needs at least 2 blocks");
  const group = new Int32Array(B);
  const groups = time ? K + 1 : K;
  for (let b = 0; b < B; b++) group[b] = time ? Math.floor((b * groups) / B) : b % K;
  return { group, count: groups, time };
}

/**
 * The fit's set-up from a sums table: the checked settings, a Prepared without rows (its
 * totalSums stand in for them), the fold plan over the (merged) blocks and the problems built
 * from their sums by fit.ts's own gram-form machinery.
 */
export function setUpFromSums(input: SumsTable | unknown, options: SumsFitOptions): SetUp {
  const table = checkSums(input);
  refuseRowOptions(options);
  const fixed = options.strength ?? null;
  if (fixed === null) checkBlocksForFolds(table);
  const p = table.terms.length;
  const names = table.terms.slice();
  if (options.names && (options.names.length !== p || options.names.some((name, j) => name !== names[j]))) {
    throw new InputError("shape", `the names given (${options.names.join(", ")}) are not the sums table's terms (${names.join(", ")}): leave names out with a sums table`);
  }
  if (p > MAX_GRAM_PREDICTORS) {
    throw new InputError("setting", `a sums table of ${p} terms is beyond the ${MAX_GRAM_PREDICTORS} that gram (covariance) updates allow: fit fewer terms`);
  }
  const rows = table.blocks.reduce((n, b) => n + b.rows, 0);
  const settings = checkSettings({ ...options, updates: options.updates ?? "gram" }, rows, p, names);
  const { intercept, standardize } = settings;
  // Working units (module comment).
  const size = sizes(table);
  const xExponent = Int32Array.from(size.terms, (v) => unitExponent(v));
  const yExponent = unitExponent(size.target);
  const weightExponent = table.weights === null ? 0 : unitExponent(Math.max(...table.blocks.map((b) => b.weight)));
  if (!standardize) checkOwnUnits(xExponent, names);
  const blockSums = table.blocks.map((_, b) => workingSums(table, b, xExponent, yExponent, weightExponent, intercept, size));
  const shiftX = intercept ? Float64Array.from(table.centre.terms, (c, j) => scaleByPowerOfTwo(c, xExponent[j])) : new Float64Array(p);
  const shiftY = intercept ? scaleByPowerOfTwo(table.centre.target, yExponent) : 0;
  const problemOptions = { intercept, standardize, columnUnits: Float64Array.from(xExponent, (e) => powerOfTwo(e)) };
  let problems: Problems;
  let plan: FoldPlan | null = null;
  if (fixed === null) {
    // Folds: merged blocks, then the plan over them (its row lists are empty: there are no rows).
    const { group, count, time } = foldGroups(table, options.folds);
    const merged = Array.from({ length: count }, () => emptySums(p));
    table.blocks.forEach((_, b) => accumulateSums(merged[group[b]], blockSums[b], 1));
    const labelsOf = Array.from({ length: count }, () => [] as string[]);
    table.blocks.forEach((block, b) => labelsOf[group[b]].push(block.label));
    const folds = time ? count - 1 : count;
    plan = {
      scheme: time ? "time" : "labels",
      blocks: merged.map(() => new Int32Array(0)),
      trainBlocks: time
        ? Array.from({ length: folds }, (_, k) => Array.from({ length: k + 1 }, (__, g) => g))
        : Array.from({ length: folds }, (_, k) => Array.from({ length: count }, (__, g) => g).filter((g) => g !== k)),
      validateBlock: Array.from({ length: folds }, (_, k) => (time ? k + 1 : k)),
      names: Array.from({ length: folds }, (_, k) => labelsOf[time ? k + 1 : k].join("+")),
    };
    checkTraining(plan, merged, labelsOf);
    problems = problemsFromBlockSums(merged, plan, shiftX, shiftY, problemOptions);
    problems.heldOutWeights = plan.validateBlock.map((g) => merged[g].weight);
  } else {
    const total = emptySums(p);
    for (const s of blockSums) accumulateSums(total, s, 1);
    problems = {
      full: problemFromSums(total, shiftX, shiftY, problemOptions),
      fold: () => {
        throw new Error("a fit at a fixed strength has no folds");
      },
      heldOutSums: null,
      shiftX,
      shiftY,
    };
  }
  const total = emptySums(p);
  for (const s of blockSums) accumulateSums(total, s, 1);
  const full = problems.full;
  if (full.std.yVariance === 0) {
    throw new InputError("constant-target", `the target '${table.target}' has the same value in every row the sums cover: there is nothing to predict`);
  }
  const { workLower, workUpper } = workingBounds(settings.lower, settings.upper, xExponent, yExponent);
  const none = new Float64Array(0);
  const noRows = { rows: 0, columns: p, data: none };
  const data: Prepared = {
    x: noRows,
    inPlace: null,
    y: none,
    weights: null,
    original: { x: noRows, y: none, weights: null },
    xExponent,
    yExponent,
    weightExponent,
    names,
    multipliers: settings.multipliers,
    lower: workLower,
    upper: workUpper,
    bounded: settings.lower.some(Number.isFinite) || settings.upper.some(Number.isFinite),
    mixes: settings.mixes,
    intercept,
    standardize,
    gram: true,
    strengthCount: settings.strengthCount,
    lowEndRatio: settings.lowEndRatio,
    settings: { tolerance: settings.tolerance, maxSweeps: settings.maxSweeps, exactRidge: options.exactRidge ?? true, signal: options.signal },
    stopEarly: options.stopEarly ?? false,
    outcome: "number",
    covariance: false,
    cutoff: 0.5,
    // Least squares' degrees of freedom count the rows of the blocks of positive weight.
    totalSums: { sums: total, shiftX, shiftY, weighedRows: table.blocks.reduce((n, b) => n + (b.weight > 0 ? b.rows : 0), 0) },
  };
  const warnings: SetUp["warnings"] = [];
  const constantColumns: string[] = [];
  for (let j = 0; j < p; j++) if (full.std.frozen[j]) constantColumns.push(names[j]);
  if (constantColumns.length === p) {
    throw new InputError("no-predictors", `every predictor is constant (${constantColumns.join(", ")}): there is nothing to fit with`);
  }
  if (constantColumns.length > 0) {
    warnings.push({
      code: "constant-column",
      message: `${constantColumns.join(", ")} ${constantColumns.length === 1 ? "is" : "are"} constant and left out (coefficient 0)`,
    });
  }
  const weightless = table.blocks.filter((b) => !(b.weight > 0));
  if (weightless.length > 0) {
    const count = weightless.reduce((n, b) => n + b.rows, 0);
    warnings.push({
      code: "weight-zero-rows",
      message: `block${weightless.length === 1 ? "" : "s"} ${weightless.map((b) => `'${b.label}'`).join(", ")} ${weightless.length === 1 ? "weighs" : "weigh"} 0 in total: ${count} row${count === 1 ? "" : "s"} of weight 0 left out of the fit and of the degrees of freedom`,
    });
  }
  if (table.skippedRows > 0) {
    warnings.push({
      code: "rows-skipped",
      message: `${table.skippedRows} row${table.skippedRows === 1 ? "" : "s"} with a blank cell ${table.skippedRows === 1 ? "was" : "were"} left out when the sums were computed`,
    });
  }
  if (fixed !== null) {
    if (typeof fixed !== "number" || !Number.isFinite(fixed) || fixed < 0) {
      throw new InputError("strength", `strength ${String(fixed)} is not allowed: give a strength of 0 or more`);
    }
    if (data.mixes.length !== 1) {
      throw new InputError("mix", `a fixed strength is fitted at one mix, but ${data.mixes.length} mixes were given: give a single mix`);
    }
  }
  return { data, warnings, fixed, plan, problems, repeats: 1, honestError: false, constantColumns };
}

/** Cross-validation scores every block: 2 or more, each of positive weight (a fixed strength takes any). */
function checkBlocksForFolds(table: SumsTable): void {
  const B = table.blocks.length;
  if (B < 2) {
    throw new InputError(
      "sums",
      `the sums table has ${B} block${B === 1 ? "" : "s"}: cross-validation needs at least 2 (one per fold label); compute the sums with a fold rule that deals the rows into 2 or more blocks, or fit one strength (e.g. strength 0, least squares)`,
    );
  }
  const empty = table.blocks.find((b) => !(b.weight > 0));
  if (empty) {
    throw new InputError("sums", `block '${empty.label}' has weight 0: cross-validation needs rows of positive weight in every block to score it; leave the block out, check the weights, or fit one strength (e.g. strength 0, least squares)`);
  }
}

/** Every fold trains on at least MIN_TRAINING_ROWS rows (folds.ts checkPlan, counted from the blocks' row counts). */
function checkTraining(plan: FoldPlan, merged: BlockSums[], labelsOf: string[][]): void {
  plan.trainBlocks.forEach((groups, k) => {
    const rows = groups.reduce((n, g) => n + merged[g].rows, 0);
    if (rows < MIN_TRAINING_ROWS) {
      const held = labelsOf[plan.validateBlock[k]].map((l) => `'${l}'`).join(", ");
      throw new InputError(
        "too-few-rows",
        `holding out block ${held} leaves only ${rows} row${rows === 1 ? "" : "s"} to train on (at least ${MIN_TRAINING_ROWS} needed): merge small blocks (fewer folds) or compute the sums with larger blocks`,
      );
    }
  });
}
