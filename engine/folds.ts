/**
 * Cross-validation fold plans: which rows each fold trains on and validates on.
 *
 * - "random": rows shuffled by the seeded generator in random.ts, dealt round-robin into
 *   K folds; fold k validates its own rows and trains on the rest. With strata (two-class
 *   outcomes: the class), each stratum is dealt in turn, so every fold gets its share of each.
 * - "labels": one fold per distinct label (grouped CV, e.g. one fold per batch or site),
 *   in order of first appearance.
 * - "time": rows are in time order; they are cut into K + 1 contiguous blocks of near-equal
 *   size, and fold k (k = 1..K) trains on blocks 0..k−1 (all earlier rows) and validates on
 *   block k, so no fold ever trains on rows later than the ones it is scored on.
 */
import { InputError } from "./errors";
import { randomFolds, stratifiedFolds } from "./random";

export type FoldScheme = "random" | "labels" | "time";

export interface FoldPlan {
  scheme: FoldScheme;
  /** Row lists of the disjoint blocks the data are cut into. */
  blocks: Int32Array[];
  /** For each fold: the blocks it trains on. */
  trainBlocks: number[][];
  /** For each fold: the block it is scored on. */
  validateBlock: number[];
  /** Display names of the folds (labels as given, or 1..K). */
  names: string[];
}

/** Fewest positively weighted rows a fold may train on. */
export const MIN_TRAINING_ROWS = 3;

export function planFolds(
  rows: number,
  weights: Float64Array | null,
  options: {
    scheme: FoldScheme;
    folds: number;
    seed: number;
    labels: ArrayLike<number | string> | null;
    /**
     * Random folds only: one stratum value per row (e.g. the class of a two-class outcome); each
     * fold then gets its share of every stratum (random.ts stratifiedFolds). Null or absent: the
     * plain shuffle, the folds every number outcome has always had.
     */
    strata?: ArrayLike<number> | null;
  },
): FoldPlan {
  let plan: FoldPlan;
  if (options.scheme === "labels") plan = labelPlan(rows, options.labels);
  else if (options.scheme === "time") plan = timePlan(rows, options.folds);
  else plan = randomPlan(rows, options.folds, options.seed, options.strata ?? null);
  checkPlan(plan, weights);
  return plan;
}

function randomPlan(rows: number, folds: number, seed: number, strata: ArrayLike<number> | null): FoldPlan {
  if (rows < 2 * folds) {
    throw new InputError(
      "too-few-rows",
      `${folds} folds need at least ${2 * folds} rows (2 per fold) but there are ${rows}: use fewer folds`,
    );
  }
  const labels = strata ? stratifiedFolds(rows, folds, seed, strata) : randomFolds(rows, folds, seed);
  const blocks = groupRows(labels, folds);
  return {
    scheme: "random",
    blocks,
    trainBlocks: blocks.map((_, k) => blocks.map((__, b) => b).filter((b) => b !== k)),
    validateBlock: blocks.map((_, k) => k),
    names: blocks.map((_, k) => String(k + 1)),
  };
}

function labelPlan(rows: number, labels: ArrayLike<number | string> | null): FoldPlan {
  if (!labels || labels.length !== rows) {
    throw new InputError("shape", `predictors has ${rows} rows but fold labels has ${labels ? labels.length : 0}`);
  }
  const index = new Map<string, number>();
  const names: string[] = [];
  const assigned = new Int32Array(rows);
  for (let i = 0; i < rows; i++) {
    const raw = labels[i];
    if (raw === null || raw === undefined || (typeof raw === "number" && !Number.isFinite(raw)) || String(raw).trim() === "") {
      throw new InputError("fold-labels", `fold labels row ${i + 1} is blank: give every row a fold label`);
    }
    const key = typeof raw === "number" ? `n:${raw}` : `s:${String(raw).trim()}`;
    let k = index.get(key);
    if (k === undefined) {
      k = names.length;
      index.set(key, k);
      names.push(String(raw).trim());
    }
    assigned[i] = k;
  }
  if (names.length < 2) {
    throw new InputError(
      "fold-labels",
      `fold labels has a single group ('${names[0]}'): cross-validation needs at least 2 groups`,
    );
  }
  const blocks = groupRows(assigned, names.length);
  return {
    scheme: "labels",
    blocks,
    trainBlocks: blocks.map((_, k) => blocks.map((__, b) => b).filter((b) => b !== k)),
    validateBlock: blocks.map((_, k) => k),
    names,
  };
}

function timePlan(rows: number, folds: number): FoldPlan {
  const count = folds + 1;
  if (rows < 2 * count) {
    throw new InputError(
      "too-few-rows",
      `${folds} time-ordered folds need at least ${2 * count} rows (2 per block, ${count} blocks) but there are ${rows}: use fewer folds`,
    );
  }
  const blocks: Int32Array[] = [];
  for (let b = 0; b < count; b++) {
    const start = Math.floor((b * rows) / count);
    const end = Math.floor(((b + 1) * rows) / count);
    const list = new Int32Array(end - start);
    for (let i = start; i < end; i++) list[i - start] = i;
    blocks.push(list);
  }
  const trainBlocks: number[][] = [];
  const validateBlock: number[] = [];
  const names: string[] = [];
  for (let k = 1; k < count; k++) {
    trainBlocks.push(Array.from({ length: k }, (_, b) => b));
    validateBlock.push(k);
    names.push(String(k));
  }
  return { scheme: "time", blocks, trainBlocks, validateBlock, names };
}

function groupRows(labels: Int32Array, groups: number): Int32Array[] {
  const sizes = new Int32Array(groups);
  for (let i = 0; i < labels.length; i++) sizes[labels[i]]++;
  const blocks = Array.from(sizes, (size) => new Int32Array(size));
  const fill = new Int32Array(groups);
  for (let i = 0; i < labels.length; i++) blocks[labels[i]][fill[labels[i]]++] = i;
  return blocks;
}

function positiveRows(rows: Int32Array, weights: Float64Array | null): number {
  if (!weights) return rows.length;
  let count = 0;
  for (let t = 0; t < rows.length; t++) if (weights[rows[t]] > 0) count++;
  return count;
}

/**
 * Every fold must score at least one positively weighted row and train on at least
 * MIN_TRAINING_ROWS. Messages suggest what can help: fewer folds for random and time-ordered
 * folds; for fold labels (whose count the labels fix) merging small groups or checking the labels,
 * with each label as it was given.
 */
function checkPlan(plan: FoldPlan, weights: Float64Array | null): void {
  const labels = plan.scheme === "labels";
  for (let k = 0; k < plan.validateBlock.length; k++) {
    const validate = plan.blocks[plan.validateBlock[k]];
    if (positiveRows(validate, weights) === 0) {
      throw new InputError(
        "folds",
        labels
          ? `fold label '${plan.names[k]}' has no rows with a positive weight to score: give some of its rows a weight above 0, merge it into another group, or check the fold column`
          : `fold ${plan.names[k]} has no rows with a positive weight to score: use fewer folds or other fold labels`,
      );
    }
    let training = 0;
    for (const b of plan.trainBlocks[k]) training += positiveRows(plan.blocks[b], weights);
    if (training < MIN_TRAINING_ROWS) {
      throw new InputError(
        "too-few-rows",
        labels
          ? `holding out fold label '${plan.names[k]}' leaves only ${training} row${training === 1 ? "" : "s"} to train on (at least ${MIN_TRAINING_ROWS} needed): the other groups are too small; merge small groups into larger ones, or check the fold column`
          : `fold ${plan.names[k]} would train on only ${training} rows (at least ${MIN_TRAINING_ROWS} needed): use fewer folds or add rows`,
      );
    }
  }
}

/** All rows of the listed blocks, in block order. */
export function rowsOfBlocks(plan: FoldPlan, blockList: readonly number[]): Int32Array {
  let size = 0;
  for (const b of blockList) size += plan.blocks[b].length;
  const out = new Int32Array(size);
  let at = 0;
  for (const b of blockList) {
    out.set(plan.blocks[b], at);
    at += plan.blocks[b].length;
  }
  return out;
}
