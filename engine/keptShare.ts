/**
 * Kept share: how steadily each term is kept over the cross-validation folds.
 *
 * The K fold models at the chosen mix and strength (each fitted without one fold's rows) are
 * already made by cross-validation; counting over them costs O(K·p) and no extra fit. For each
 * term:
 *  - kept: the share of fold models whose coefficient is nonzero;
 *  - sameSign: the share of fold models that agree with the full-data fit about the term's
 *    sign. For a term the full-data fit keeps (coefficient ≠ 0), a fold agrees when its
 *    coefficient is nonzero with the same sign (a fold that drops the term does not agree).
 *    For a term the full-data fit drops (coefficient 0), a fold agrees when it drops the term
 *    too, so sameSign = 1 − kept there.
 *
 * This is a stability indication over resamples of the data (in the spirit of the selection
 * frequencies of Meinshausen & Bühlmann 2010, JRSS-B 72(4), though over the K overlapping fold
 * training sets at one strength, without their error bound), not a significance test: K is
 * small (shares move in steps of 1/K) and the fold training sets share most of their rows.
 *
 * Signs only are compared, so the units the coefficients are given in do not matter as long as
 * both sides use positive multiples of the same scale (data units, or standardized).
 */

export interface KeptShare {
  term: string;
  /** Share of the fold models in which the coefficient is nonzero (0 to 1). */
  kept: number;
  /** Share of the fold models agreeing with the full-data fit's sign (see the module comment). */
  sameSign: number;
}

/**
 * Kept shares of `terms` from the full-data coefficients and each fold's coefficients (same
 * order and length as `terms`). Throws on a length mismatch or no folds (a programming error).
 */
export function keptShares(terms: readonly string[], full: ArrayLike<number>, folds: readonly ArrayLike<number>[]): KeptShare[] {
  const p = terms.length;
  const K = folds.length;
  if (full.length !== p) throw new Error("keptShares: one full-data coefficient per term is needed");
  if (K === 0) throw new Error("keptShares: no fold models");
  for (const fold of folds) if (fold.length !== p) throw new Error("keptShares: one fold coefficient per term is needed");
  const out: KeptShare[] = [];
  for (let j = 0; j < p; j++) {
    const sign = Math.sign(full[j]);
    let kept = 0;
    let agree = 0;
    for (const fold of folds) {
      const s = Math.sign(fold[j]);
      if (s !== 0) kept++;
      // Math.sign(-0) is -0, and -0 === 0: a signed zero counts as zero on both sides.
      if (s === sign || (s === 0 && sign === 0)) agree++;
    }
    out.push({ term: terms[j], kept: kept / K, sameSign: agree / K });
  }
  return out;
}
