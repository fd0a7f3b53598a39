/**
 * The sums table: everything a squared-error elastic net needs from a data set, per block of
 * rows (one block per fold label), computed wherever the data live (DuckDB, ClickHouse, or the
 * engine's own pass) and fitted later without the rows (`fitFromSums`).
 *
 * Our own format, versioned (`format` + `version`). Two forms carry the same numbers:
 * - JSON: the `SumsTable` object below (`--sums-out`, `--sums`).
 * - Long: rows `block | term_a | term_b | value`, which a query can return and a worksheet can
 *   hold (the long form's reader and writer document its keywords).
 *
 * Precision: every block's sums are about one global centre (the weighted means of the whole
 * data, found by a first pass) and the block's own offset from that centre is stored as computed
 * (Σw(x − c)/Σw), not as a difference of two rounded means. Data whose mean is 1e8 or more times
 * their spread (dates, timestamps, IDs near 1e12) keep their digits: the large part cancels once,
 * inside the query, in exact-or-near-exact subtractions of values close to the centre.
 *
 * Conventions for one block b with rows i, weights w_i ≥ 0, terms x_a and target y, centre c:
 * - weight    = Σ w_i,                       rows = number of rows counted (w_i > 0 or not)
 * - mean[a]   = Σ w_i x_ia / Σ w_i            (informative; the fit uses `offset`)
 * - offset[a] = Σ w_i (x_ia − c_a) / Σ w_i    (the same mean, about the centre)
 * - cross     = Σ w_i (x_ia − c_a)(x_ib − c_b), upper triangle a ≤ b, row by row:
 *               index(a, b) = a·p − a(a−1)/2 + (b − a)
 * - crossY[a] = Σ w_i (x_ia − c_a)(y_i − c_y)
 * - yy        = Σ w_i (y_i − c_y)²
 * - largest[a] = max |x_ia| over the block's rows with w_i > 0 (optional: lets the fit tell a
 *   column that is constant up to rounding; without it the spread test alone decides).
 * The target's `meanY`, `offsetY` and `largestY` follow the same rules.
 * A block whose rows all weigh 0 (weight 0) is valid, with its means, offsets and sums 0: least
 * squares from sums leaves it out (a warning), the cross-validated fit refuses it (it has nothing
 * to score). A table needs one block of positive weight; cross-validation needs two.
 * Cross-products are about the global centre, not the block's own mean; the block-centred
 * versions follow as cross − weight·offset·offsetᵀ.
 */

/** The format's name, in every JSON sums table. */
export const SUMS_FORMAT = "shrinkwise-sums";
/** The format's version. Readers refuse any other with a message. */
export const SUMS_VERSION = 1;

export interface SumsBlock {
  /** The fold label (as text) this block holds. */
  label: string;
  /** Σw over the block's rows. */
  weight: number;
  /** Rows counted in the block. */
  rows: number;
  /** Weighted means of the terms (p). */
  mean: number[];
  /** Weighted means less the centre, Σw(x − c)/Σw (p). */
  offset: number[];
  /** Weighted mean of the target. */
  meanY: number;
  /** Σw(y − c_y)/Σw. */
  offsetY: number;
  /** Upper triangle (a ≤ b) of Σw(x_a − c_a)(x_b − c_b), p(p+1)/2 values, row by row. */
  cross: number[];
  /** Σw(x_a − c_a)(y − c_y) (p). */
  crossY: number[];
  /** Σw(y − c_y)². */
  yy: number;
  /** Largest |x_a| over rows with positive weight (p), when known. */
  largest?: number[] | null;
  /** Largest |y| over rows with positive weight, when known. */
  largestY?: number | null;
}

export interface SumsTable {
  format: typeof SUMS_FORMAT;
  version: typeof SUMS_VERSION;
  /** Term names, in the order of every per-term array. */
  terms: string[];
  /** Target name. */
  target: string;
  /** Weights column, or null when every row weighs 1. */
  weights: string | null;
  /** The global centre every block's sums are about. */
  centre: { terms: number[]; target: number };
  /** Rows left out because a used cell was blank (NULL), counted over the whole source. */
  skippedRows: number;
  /** How the rows were dealt into blocks, in words (e.g. "column 'batch'", "hash of 'id' into 10", "time blocks by 'ts'"). */
  blocking: string;
  /** One block per fold label, in a stable order (labels sorted as text, or time order). */
  blocks: SumsBlock[];
  /** Where the sums were computed, for the report (e.g. "duckdb 1.x on sensor.parquet"). */
  source?: string;
  /**
   * True when the blocks are in time order (block 0 earliest; e.g. time blocks by an ordering
   * column): fitFromSums then trains each fold on the blocks before the one it scores, as
   * time-ordered folds do. Absent or false: every block is scored by a fit on all the others.
   * (Added with the sums engine; readers of version 1 treat it as optional.)
   */
  timeOrdered?: boolean;
}

/** Index of (a, b), a ≤ b, in an upper triangle of a p × p matrix stored row by row. */
export function upperIndex(p: number, a: number, b: number): number {
  if (a > b) [a, b] = [b, a];
  return a * p - (a * (a - 1)) / 2 + (b - a);
}

/** Number of values in the upper triangle of a p × p matrix. */
export function upperSize(p: number): number {
  return (p * (p + 1)) / 2;
}
