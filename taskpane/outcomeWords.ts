/**
 * The pane's words for the two kinds of target, in one place so the pane, its charts and the
 * report sheet say the same thing: the cross-validation measures by name (and which way is
 * better), what a coefficient of a yes/no model is (log-odds of the event), and the line under
 * the target picker that says how the target was read.
 *
 * The measures' names come from engine/words.ts, which the command line and the cells use too.
 */
export { measureName, measureWithDirection, bestPointLabel, oneSeLineLabel } from "../engine/words";
import type { OutcomeKind } from "../engine/outcome";

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
