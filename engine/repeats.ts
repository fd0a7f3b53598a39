/**
 * Repeated cross-validation: pieces fit.ts uses when the random folds are dealt r times
 * (FitOptions.repeats; seeds seed, seed + 1, …).
 *
 * The curve's mean at each strength pools all r·K held-out folds, fold-weighted (with random
 * folds every deal holds out each row once, so this is also the average of the r deals' means).
 * Its standard error is NOT the pooled SD over r·K folds divided by √(rK): the r deals reuse the
 * same rows, so their folds' errors are strongly dependent and that formula would shrink the SE
 * as r grows without any new information, which would tilt the one-standard-error rule toward
 * weaker penalties. The SE reported is the average over the deals of each deal's own SE (the
 * usual K-fold formula, fit.ts summarise), an SE of the same kind a single deal gives, whose
 * deal-to-deal noise the averaging removes (common practice; compare Hastie, Tibshirani &
 * Friedman, ESL 2nd ed. §7.10, on the K-fold SE being itself only approximate).
 */
import { throwIfCancelled, type CancelSignal } from "./errors";
import type { KeptShare } from "./keptShare";

/** Point-by-point average of the deals' standard errors (all of one length). */
export function averageOfDeals(ses: readonly Float64Array[]): Float64Array {
  if (ses.length === 0) throw new Error("averageOfDeals: no deals");
  const points = ses[0].length;
  const out = new Float64Array(points);
  for (const se of ses) {
    if (se.length !== points) throw new Error("averageOfDeals: deals of different lengths");
    for (let k = 0; k < points; k++) out[k] += se[k];
  }
  for (let k = 0; k < points; k++) out[k] /= ses.length;
  return out;
}

/**
 * Signs of every fold model's coefficients at every strength of one mix, counted over all deals:
 * for the kept shares over r·K folds (keptShare.ts semantics) without holding r·K fold paths.
 * Memory 2 × strengths × terms counts; cost O(strengths × terms) per fold added.
 */
export class SignTally {
  private readonly positive: Int32Array;
  private readonly negative: Int32Array;
  private folds = 0;

  constructor(
    private readonly points: number,
    private readonly terms: number,
  ) {
    this.positive = new Int32Array(points * terms);
    this.negative = new Int32Array(points * terms);
  }

  /**
   * Adds one fold's path: `at(k)` its standardized coefficients at strength index k (a positive
   * multiple of the data-unit ones, so the same signs), `frozen[j]` a column constant in the fold
   * (coefficient 0 whatever `at` holds).
   */
  add(frozen: ArrayLike<boolean | number>, at: (index: number) => ArrayLike<number>, signal?: CancelSignal): void {
    for (let k = 0; k < this.points; k++) {
      if ((k & 15) === 0) throwIfCancelled(signal);
      const b = at(k);
      const off = k * this.terms;
      for (let j = 0; j < this.terms; j++) {
        if (frozen[j]) continue;
        if (b[j] > 0) this.positive[off + j]++;
        else if (b[j] < 0) this.negative[off + j]++;
      }
    }
    this.folds++;
  }

  /**
   * Adds one fold's path given as its signs (strengths × terms, −1, 0 or 1; 0 for a column
   * constant in the fold): the same counts `add` makes from the coefficients (a pool worker
   * sends the signs, an eighth of the path's size).
   */
  addSigns(signs: Int8Array): void {
    if (signs.length !== this.points * this.terms) throw new Error("SignTally: one sign per strength and term is needed");
    for (let t = 0; t < signs.length; t++) {
      if (signs[t] > 0) this.positive[t]++;
      else if (signs[t] < 0) this.negative[t]++;
    }
    this.folds++;
  }

  /** Fold models counted. */
  get count(): number {
    return this.folds;
  }

  /** Kept shares at strength index `index` against the full-data coefficients `full` (keptShare.ts rules). */
  keptShares(names: readonly string[], full: ArrayLike<number>, index: number): KeptShare[] {
    if (this.folds === 0) throw new Error("SignTally: no fold models");
    if (names.length !== this.terms || full.length !== this.terms) throw new Error("SignTally: one name and coefficient per term is needed");
    const off = index * this.terms;
    const out: KeptShare[] = [];
    for (let j = 0; j < this.terms; j++) {
      const positive = this.positive[off + j];
      const negative = this.negative[off + j];
      const kept = positive + negative;
      const sign = Math.sign(full[j]);
      const agree = sign > 0 ? positive : sign < 0 ? negative : this.folds - kept;
      out.push({ term: names[j], kept: kept / this.folds, sameSign: agree / this.folds });
    }
    return out;
  }
}
