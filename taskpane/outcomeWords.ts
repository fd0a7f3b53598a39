/**
 * The pane's words for the two kinds of target, in one place so the pane, its charts and the
 * report sheet say the same thing: the cross-validation measures by name (and which way is
 * better), what a coefficient of a yes/no model is (log-odds of the event), and the line under
 * the target picker that says how the target was read.
 *
 * The command line has its own copy of `measureName` (engine/cli/format.ts): the engine's folder
 * imports nothing from here. Both follow engine/fit.ts `MEASURES` and `higherIsBetter`.
 */
import { higherIsBetter, type ErrorMeasure } from "../engine/fit";
import type { OutcomeKind } from "../engine/outcome";

/** A measure named for people: MSE, MAE, deviance, misclassified share, AUC. */
export function measureName(measure: ErrorMeasure): string {
  if (measure === "mse" || measure === "mae" || measure === "auc") return measure.toUpperCase();
  if (measure === "misclassified") return "misclassified share";
  return measure;
}

/** The measure's name, with "(higher is better)" for the AUC, the one measure where it is. */
export function measureWithDirection(measure: ErrorMeasure): string {
  return higherIsBetter(measure) ? `${measureName(measure)} (higher is better)` : measureName(measure);
}

/**
 * The label of the point the "lowest" rule picks: "lowest error" for every error measure (the
 * rule's own name), "highest AUC" for the AUC, where the rule takes the best, that is highest, value.
 */
export function bestPointLabel(measure: ErrorMeasure): string {
  return higherIsBetter(measure) ? "highest AUC" : "lowest error";
}

/** The one-SE rule's threshold in words: "lowest error + 1 SE", or "highest AUC − 1 SE". */
export function oneSeLineLabel(measure: ErrorMeasure): string {
  return higherIsBetter(measure) ? "highest AUC − 1 SE" : "lowest error + 1 SE";
}

/** What a standardized coefficient is, by outcome: the axis titles of the path chart and the bars. */
export function standardizedTitle(outcome: OutcomeKind): string {
  return outcome === "two-class" ? "standardized coefficient (log-odds per SD)" : "standardized coefficient (per SD)";
}

/** The two classes of a yes/no target as the data layer reports them (functions/dataset.ts). */
export interface ClassCounts {
  event: string;
  other: string;
  eventCount: number;
  otherCount: number;
}

/**
 * One line on how the target reads, for beside the target picker:
 * "yes/no outcome, event 'fail' (73 of 296 rows; the other class is 'pass')" or
 * "number outcome (296 rows)".
 */
export function outcomeLine(outcome: OutcomeKind, classes: ClassCounts | null, rows: number): string {
  if (outcome === "two-class" && classes) {
    const total = classes.eventCount + classes.otherCount;
    return `yes/no outcome, event '${classes.event}' (${classes.eventCount} of ${total} rows; the other class is '${classes.other}')`;
  }
  return `number outcome (${rows} row${rows === 1 ? "" : "s"})`;
}

/** The odds ratio of a log-odds coefficient, e^b: what the odds of the event are multiplied by per unit (for display; the model keeps b). */
export function oddsRatio(logOdds: number): number {
  return Math.exp(logOdds);
}
