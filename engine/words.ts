/**
 * The product's vocabulary for people, in one place so every surface (command line, cells,
 * pane, report sheet, charts) says the same thing: the two choice rules in words, and how a
 * cross-validated error is written beside its standard error.
 */
/** The two choice rules: lowest cross-validated error, or the one-SE rule. */
export type ChoiceRule = "lowest" | "one-se";

/** The rules in words, as every surface prints them. Tokens: `lowest`, `one-se`. */
export const RULE_WORDS: Record<ChoiceRule, string> = { lowest: "lowest error", "one-se": "one-SE rule" };

/** The label of the intercept's row in every table. */
export const INTERCEPT_LABEL = "intercept";

/** The mix α named for people: what share of the penalty is lasso. */
export const MIX_LABEL = "Mix α (lasso share)";

/** A number to `digits` significant digits, exponent form when very large or very small. */
export function significant(value: number, digits: number): string {
  if (value === 0) return "0";
  const size = Math.abs(value);
  if (size >= 1e9 || size < 1e-4) {
    const [mantissa, exponent] = value.toExponential(digits - 1).split("e");
    return `${mantissa.replace(/\.?0+$/, "")}e${exponent}`;
  }
  return String(Number(value.toPrecision(digits)));
}

/**
 * A cross-validated error and its standard error for people: the error to 3 significant
 * digits and the SE to the same decimal places (at least 2 significant digits of the SE),
 * e.g. "0.537 ± 0.064" or "1235 ± 46". Very large or very small errors fall back to 3
 * significant digits each.
 */
export function errorWithSe(error: number, se: number): string {
  if (!Number.isFinite(error)) return "n/a";
  const seText = (digits: number): string => (Number.isFinite(se) ? significant(se, digits) : "n/a");
  const size = Math.abs(error);
  if (error !== 0 && (size >= 1e9 || size < 1e-4)) return `${significant(error, 3)} ± ${seText(2)}`;
  const magnitude = error === 0 ? 0 : Math.floor(Math.log10(size));
  let decimals = Math.max(0, 2 - magnitude);
  if (Number.isFinite(se) && se > 0) decimals = Math.max(decimals, 1 - Math.floor(Math.log10(se)));
  if (decimals > 12) return `${significant(error, 3)} ± ${seText(2)}`;
  return `${error.toFixed(decimals)} ± ${Number.isFinite(se) ? se.toFixed(decimals) : "n/a"}`;
}

/**
 * Cross-validation measures. Numeric outcomes: mean squared or absolute error. Two-class outcomes
 * (classMetrics.ts): binomial deviance per row (the default), the share misclassified at the
 * cutoff, or the AUC, which is the one measure where higher is better (see higherIsBetter).
 */
export type ErrorMeasure = "mse" | "mae" | "deviance" | "misclassified" | "auc";
/** The measures each outcome accepts; the first is its default. */
/** True for the AUC: "lowest error" then means the highest AUC, and the one-SE rule looks one SE below the best. */
export function higherIsBetter(measure: ErrorMeasure): boolean {
  return measure === "auc";
}

/** A measure's short name: MSE, MAE, deviance, misclassified share, AUC. */
export function measureName(measure: ErrorMeasure): string {
  if (measure === "mse" || measure === "mae" || measure === "auc") return measure.toUpperCase();
  if (measure === "misclassified") return "misclassified share";
  return measure;
}

/** The measure's name, with "(higher is better)" for the AUC, the one measure where it is. */
export function measureWithDirection(measure: ErrorMeasure): string {
  return higherIsBetter(measure) ? `${measureName(measure)} (higher is better)` : measureName(measure);
}

/** The cross-validated measure as a heading: "CV MSE", "CV deviance", "CV AUC (higher is better)". */
export function cvMeasureLabel(measure: ErrorMeasure): string {
  return `CV ${measureWithDirection(measure)}`;
}

/**
 * The label of the point the "lowest" rule picks: "lowest error" for every error measure (the
 * rule's own name), "highest AUC" for the AUC, where the rule takes the best, that is highest, value.
 */
export function bestPointLabel(measure: ErrorMeasure): string {
  return higherIsBetter(measure) ? "highest AUC" : RULE_WORDS.lowest;
}

/** The one-SE rule's threshold in words: "lowest error + 1 SE", or "highest AUC − 1 SE". */
export function oneSeLineLabel(measure: ErrorMeasure): string {
  return higherIsBetter(measure) ? "highest AUC − 1 SE" : `${RULE_WORDS.lowest} + 1 SE`;
}

/** The label of the bound beside a stability selection (Meinshausen & Bühlmann 2010, Theorem 1). */
export const FALSE_SELECTION_LABEL = "expected false selections at most";

/**
 * What a stability selection's bound was computed from, in words: "q = 3 (the average number of
 * terms selected at a counted strength, at most), π = 0.75, p = 10 terms that can be selected,
 * 50 pairs of half-samples (100 fits) at mix 1".
 */
export function stabilityBasisWords(s: { expectedTerms: number; threshold: number; candidates: number; draws: number; mix: number }): string {
  const pairs = `${s.draws} pair${s.draws === 1 ? "" : "s"} of half-samples (${2 * s.draws} fits)`;
  return (
    `q = ${s.expectedTerms} (the average number of terms selected at a counted strength, at most), π = ${significant(s.threshold, 6)} (the share that makes a term stable), ` +
    `p = ${s.candidates} term${s.candidates === 1 ? "" : "s"} that can be selected, ${pairs} at mix ${significant(s.mix, 6)}`
  );
}

/** In place of a stable share: a term stability selection can't select because it is never penalized (in every model). */
export const NEVER_PENALIZED = "in every model (never penalized)";
/** In place of a stable share: a term that is constant or held at 0 by its bounds (in no model). */
export const CANNOT_BE_SELECTED = "in no model (constant or held at 0)";

/** The label of the nested cross-validation's estimate. */
export const HONEST_LABEL = "honest CV error (whole procedure)";

/** Why the honest error stands beside the cross-validated one: the latter chose the model. */
export function honestNote(cvLabel: string, outerFolds: number): string {
  return (
    `the ${cvLabel} above is the one that chose the model, so it is optimistic for it; the honest error reruns the whole choice ` +
    `(every mix, every strength and the rule) inside each of ${outerFolds} outer folds and scores it on rows that choice never saw`
  );
}

/** The repeats in words: how the choice used them. */
export function repeatsNote(repeats: number, seed: number | null): string {
  if (repeats <= 1) return "one deal of the folds";
  const seeds = seed === null ? "" : ` (seeds ${seed} to ${seed + repeats - 1})`;
  return `the choice used the curve averaged over ${repeats} deals of the folds${seeds}: the CV error above is the mean over all their held-out folds, its ± SE the average of the deals' own SEs`;
}
