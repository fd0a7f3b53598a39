/**
 * Accuracy of probabilities for a two-class outcome (actual values 0 or 1, 1 = the event).
 * Optional weights make every measure the weighted version (Σ w·loss / Σ w; counts become sums of
 * weights). Pairs where either value is not finite, or the weight is not positive, are skipped;
 * `count` reports how many rows were used.
 *
 * - Binomial deviance per row: −2 Σ w [y log p + (1 − y) log(1 − p)] / Σ w (common practice;
 *   the log-likelihood of Friedman, Hastie & Tibshirani 2010, J. Stat. Software 33(1) §3, × −2).
 *   From linear scores η it is −2 Σ w [y η − log(1 + e^η)] / Σ w, which needs no clamping of p.
 * - Log loss: half the deviance per row (the mean negative log-likelihood).
 * - Brier score: Σ w (p − y)² / Σ w (Brier 1950, Monthly Weather Review 78(1)).
 * - AUC: the area under the ROC curve, equal to the Mann–Whitney statistic: the (weighted) share
 *   of (event, non-event) pairs in which the event has the higher probability, ties counted ½
 *   (Hanley & McNeil 1982, Radiology 143(1)). O(n log n) by sorting.
 * - At a cutoff c: a row is predicted to be the event when p ≥ c. Accuracy = share on the right
 *   side; sensitivity = events caught / events; specificity = correct all-clears / non-events.
 *
 * A probability of exactly 0 for an event (or 1 for a non-event) gives an infinite deviance and
 * log loss: reported as Infinity, never clamped to a made-up finite value.
 */
import { portableLog, tableExp, tableLog1p } from "./portableMath";

export interface TwoClassScore {
  /** Mean negative log-likelihood per row (natural log). */
  logLoss: number;
  /** Binomial deviance per row (2 × log loss). */
  deviance: number;
  brier: number;
  /** NaN when only one class is present. */
  auc: number;
  cutoff: number;
  accuracy: number;
  /** Share of events caught (NaN without events). */
  sensitivity: number;
  /** Share of non-events correctly cleared (NaN without non-events). */
  specificity: number;
  /** Events predicted as events. */
  eventsCaught: number;
  /** Events predicted as non-events. */
  eventsMissed: number;
  /** Non-events predicted as events. */
  falseAlarms: number;
  /** Non-events predicted as non-events. */
  correctAllClear: number;
  /** Rows used. */
  count: number;
}

/**
 * log(1 + e^η) without overflow or loss of digits (common practice): η + e^−η above 36, e^η below
 * −36, else max(η, 0) + log(1 + e^−|η|). The exponential and log are portableMath.ts's table-driven
 * ones (the two-class solver evaluates this once per row at every step).
 */
export function softplus(eta: number): number {
  return softplusFrom(eta, tableExp(eta > 0 ? -eta : eta));
}

/**
 * softplus(η) given e = tableExp(−|η|), the same value model.ts logisticFrom needs: one
 * exponential serves both. Identical to softplus(η).
 */
export function softplusFrom(eta: number, e: number): number {
  if (eta > 36) return eta + e;
  if (eta < -36) return e;
  return (eta > 0 ? eta : 0) + tableLog1p(e);
}

function usable(actual: ArrayLike<number>, other: ArrayLike<number>, weights: ArrayLike<number> | null | undefined, i: number): boolean {
  const a = actual[i];
  return (a === 0 || a === 1) && Number.isFinite(other[i]) && (weights ? weights[i] > 0 : true);
}

function checkLengths(actual: ArrayLike<number>, other: ArrayLike<number>, weights: ArrayLike<number> | null | undefined): void {
  if (actual.length !== other.length || (weights && weights.length !== actual.length)) {
    throw new RangeError(`two-class measures need equally long inputs; got ${actual.length} actual and ${other.length} predicted`);
  }
}

/**
 * Binomial deviance per row from linear scores η (log-odds): −2 Σ w [y η − log(1 + e^η)] / Σ w.
 * NaN when no row is usable.
 */
export function devianceFromScores(actual: ArrayLike<number>, scores: ArrayLike<number>, weights?: ArrayLike<number> | null): number {
  checkLengths(actual, scores, weights);
  let total = 0;
  let sum = 0;
  for (let i = 0; i < actual.length; i++) {
    if (!usable(actual, scores, weights, i)) continue;
    const w = weights ? weights[i] : 1;
    // y η − log(1 + e^η) = −log(1 + e^−η) for an event, −log(1 + e^η) for a non-event.
    sum += w * softplus(actual[i] === 1 ? -scores[i] : scores[i]);
    total += w;
  }
  return total > 0 ? (2 * sum) / total : NaN;
}

/** Binomial deviance per row from probabilities (see the file comment). */
export function binomialDeviance(actual: ArrayLike<number>, probabilities: ArrayLike<number>, weights?: ArrayLike<number> | null): number {
  checkLengths(actual, probabilities, weights);
  let total = 0;
  let sum = 0;
  for (let i = 0; i < actual.length; i++) {
    if (!usable(actual, probabilities, weights, i)) continue;
    const w = weights ? weights[i] : 1;
    const p = probabilities[i];
    sum -= w * portableLog(actual[i] === 1 ? p : 1 - p);
    total += w;
  }
  return total > 0 ? (2 * sum) / total : NaN;
}

/** Weighted share of rows on the wrong side of the cutoff (event predicted when p ≥ cutoff). */
export function misclassifiedShare(
  actual: ArrayLike<number>,
  probabilities: ArrayLike<number>,
  cutoff = 0.5,
  weights?: ArrayLike<number> | null,
): number {
  checkLengths(actual, probabilities, weights);
  let total = 0;
  let wrong = 0;
  for (let i = 0; i < actual.length; i++) {
    if (!usable(actual, probabilities, weights, i)) continue;
    const w = weights ? weights[i] : 1;
    total += w;
    if ((probabilities[i] >= cutoff ? 1 : 0) !== actual[i]) wrong += w;
  }
  return total > 0 ? wrong / total : NaN;
}

/**
 * Area under the ROC curve as the weighted Mann–Whitney statistic (ties ½; Hanley & McNeil 1982).
 * Any scores that order rows as the probabilities do (log-odds, say) give the same value.
 * NaN when either class is absent.
 */
export function areaUnderCurve(actual: ArrayLike<number>, scores: ArrayLike<number>, weights?: ArrayLike<number> | null): number {
  checkLengths(actual, scores, weights);
  const rows: number[] = [];
  for (let i = 0; i < actual.length; i++) if (usable(actual, scores, weights, i)) rows.push(i);
  rows.sort((a, b) => scores[a] - scores[b] || a - b);
  let events = 0;
  let nonEvents = 0;
  let pairs = 0;
  // Walk groups of tied scores upward: each event in a group beats every non-event below the
  // group and ties with every non-event inside it.
  let below = 0;
  for (let start = 0; start < rows.length; ) {
    let end = start;
    let groupEvents = 0;
    let groupNon = 0;
    while (end < rows.length && scores[rows[end]] === scores[rows[start]]) {
      const i = rows[end];
      const w = weights ? weights[i] : 1;
      if (actual[i] === 1) groupEvents += w;
      else groupNon += w;
      end++;
    }
    pairs += groupEvents * (below + groupNon / 2);
    below += groupNon;
    events += groupEvents;
    nonEvents += groupNon;
    start = end;
  }
  return events > 0 && nonEvents > 0 ? pairs / (events * nonEvents) : NaN;
}

/** Every two-class measure in one call (see the file comment). Cost O(n log n). */
export function scoreTwoClass(
  actual: ArrayLike<number>,
  probabilities: ArrayLike<number>,
  options: { cutoff?: number; weights?: ArrayLike<number> | null } = {},
): TwoClassScore {
  const weights = options.weights ?? null;
  const cutoff = options.cutoff ?? 0.5;
  checkLengths(actual, probabilities, weights);
  let count = 0;
  let total = 0;
  let brier = 0;
  let caught = 0;
  let missed = 0;
  let alarms = 0;
  let clear = 0;
  for (let i = 0; i < actual.length; i++) {
    if (!usable(actual, probabilities, weights, i)) continue;
    const w = weights ? weights[i] : 1;
    const p = probabilities[i];
    const y = actual[i];
    count++;
    total += w;
    brier += w * (p - y) * (p - y);
    const flagged = p >= cutoff;
    if (y === 1) {
      if (flagged) caught += w;
      else missed += w;
    } else if (flagged) alarms += w;
    else clear += w;
  }
  const deviance = binomialDeviance(actual, probabilities, weights);
  return {
    logLoss: deviance / 2,
    deviance,
    brier: total > 0 ? brier / total : NaN,
    auc: areaUnderCurve(actual, probabilities, weights),
    cutoff,
    accuracy: total > 0 ? (caught + clear) / total : NaN,
    sensitivity: caught + missed > 0 ? caught / (caught + missed) : NaN,
    specificity: alarms + clear > 0 ? clear / (alarms + clear) : NaN,
    eventsCaught: caught,
    eventsMissed: missed,
    falseAlarms: alarms,
    correctAllClear: clear,
    count,
  };
}
