/**
 * The optional `settings` argument of the cell functions, and the `mixes` argument.
 *
 * Two forms, the same names:
 * - text: `folds=5; rule=one-se; seed=7` (settings separated by `;` or line breaks,
 *   each `name=value`);
 * - a range of two columns, name | value (one setting per row; a row with a blank value
 *   is ignored; a first row reading `setting | value` is taken as a header), or one column
 *   of `name=value` texts.
 * Names ignore case, spaces, `_` and `-` (`Grid_Size`, `grid size`, `gridsize` are one name).
 *
 * | setting          | also accepted                      | value                                                     | default                  |
 * |------------------|------------------------------------|-----------------------------------------------------------|--------------------------|
 * | `folds`          | `fold count`                       | whole number 2 to 1000                                    | 10                       |
 * | `seed`           | `random seed`                      | whole number −4294967295 to 4294967295                    | 1                        |
 * | `rule`           | `choice rule`                      | `lowest` / `lowest error`, or `one-se` / `one-SE rule` / `one standard error` | lowest error |
 * | `error`          | `error measure`, `measure`         | number target: `mse` / `squared`, `mae` / `absolute`; yes/no target: `deviance`, `misclassified` (`misclassification`, `error rate`), `auc` (`area under the curve`) | mse; deviance for yes/no |
 * | `standardize`    | `standardise`                      | yes / no (also true/false, on/off, 1/0)                   | yes                      |
 * | `intercept`      |                                    | yes / no                                                  | yes                      |
 * | `grid density`   | `strengths per decade`, `strengths per tenfold drop` | whole number 1 to 1000: strengths per tenfold drop in strength | 20           |
 * | `grid size`      | `strength count`                   | whole number 1 to 10000, instead of a density             | from the density         |
 * | `low end`        | `low end ratio`                    | number strictly between 0 and 1                           | 1e-5 (1e-2 when predictors ≥ rows) |
 * | `stop early`     | `early stop`                       | yes / no: end a path once a tenfold drop in strength improves the fit by < 1% | no |
 * | `strength`       | `fixed strength`, `lambda`         | number ≥ 0: fit this strength only, no cross-validation   | (cross-validate)         |
 * | `fold column`    | `fold labels`                      | a predictors column name: its values label the folds     | (random folds)           |
 * | `time order`     | `time ordered`                     | yes / no: rows are in time order                          | no                       |
 * | `weights column` | `weights`, `weight column`         | a predictors column name: row weights (≥ 0)              | (all 1)                  |
 * | `penalty`        | `penalties`                        | `term:value, term:value` penalty multipliers ≥ 0          | all 1                    |
 * | `no penalty`     | `unpenalized`, `unpenalised`       | `term, term`: these are never penalized (multiplier 0)    | –                        |
 * | `lower`          | `lower bound`, `lower bounds`      | a number ≤ 0 for every term, or `term:value, …`; `none`   | none                     |
 * | `upper`          | `upper bound`, `upper bounds`      | a number ≥ 0 for every term, or `term:value, …`; `none`   | none                     |
 * | `header`         | `headers`                          | yes / no / auto                                           | auto                     |
 * | `zero is missing`| `zeros are missing`, `zeros missing` | `all`, or column names: their zeros are blank cells     | –                        |
 * | `outcome`        | `target kind`, `outcome kind`      | `auto`, `number` (`numeric`), `two-class` (`yes/no`, `binary`) | auto              |
 * | `event`          | `event class`, `positive class`    | the target value whose probability a yes/no model gives (TRUE, 1, fail, …) | TRUE, else 1, else the rarer label |
 * | `cutoff`         | `threshold`, `probability cutoff`  | a probability strictly between 0 and 1 (`0.3` or `30%`): a row is flagged as the event at or above it | 0.5 |
 * | `predict`        | `prediction`, `predictions`        | `probability` or `class`: what SHRINK.PREDICT returns for a yes/no target | probability |
 * | `interval`       | `interval level`, `prediction interval` | a level strictly between 0 and 1 (`0.9` or `90%`): SHRINK.PREDICT adds CV+ prediction intervals at it (number targets) | (none) |
 * | `repeats`        | `fold deals`, `repeated cv`        | whole number 1 to 50: deal the random folds this many times (seeds seed, seed+1, …) and choose on the averaged curve | 1 |
 * | `honest error`   | `nested cv`, `nested cross-validation`, `whole-procedure error` | yes / no: also estimate the error of the whole choosing procedure by nested cross-validation (SHRINK.CHOICE shows it) | no |
 * | `stability`      | `stability selection`              | yes / no: run stability selection at the chosen mix (SHRINK.KEPT shows it) | no |
 * | `draws`          | `pairs`, `half-sample pairs`       | whole number 1 to 1000: pairs of complementary half-samples (stability=yes only) | 50 |
 * | `q`              | `expected terms`                   | whole number ≥ 1: the largest average number of terms selected at a strength that still counts (stability=yes only) | round(√(0.8·p)), p = terms that can be selected |
 * | `stability threshold` | `pi`, `π`                    | a share strictly between 0.5 and 1 (`0.75` or `75%`): terms selected at least this often are stable (stability=yes only) | 0.75 |
 *
 * A term is a predictor column name (a text column's name covers all its indicator terms) or
 * an indicator term such as `Region: North`. In `term:value` lists the value follows the last
 * colon, so `Region: North:0` is the term `Region: North` with value 0.
 *
 * `outcome=auto` reads a target with exactly two distinct values that are TRUE/FALSE, 0/1 or two
 * texts as a yes/no (two-class) outcome, anything else as numbers (engine/outcome.ts). `event`,
 * `cutoff` and `predict` apply to yes/no targets only: on a number target they are refused (they
 * say the user expects a yes/no target, so silence would hide a mistake); so are the yes/no error
 * measures, and mse/mae on a yes/no target (the engine's checkMeasure messages).
 *
 * `threshold` alone stays an alias of `cutoff` (a yes/no setting, as it always was); the threshold of
 * stability selection is `stability threshold` (or `π`). `draws`, `q` and `stability threshold`
 * without `stability=yes` are refused (they would do nothing, and silence would hide a mistake).
 * `repeats` above 1, `honest error` and `stability` need cross-validation, so a fixed `strength` refuses
 * them; `repeats` above 1 re-deals random folds, so `fold column` and `time order` (one deal) refuse it.
 * They apply to number and yes/no targets alike.
 *
 * SHRINK.SCORE and SHRINK.BASELINE take a few of these only (`parseSettings(raw, scope)`):
 * SCORE outcome, event, cutoff; BASELINE outcome, event, header, zero is missing.
 *
 * Every mistake is a SettingError (→ #VALUE!) saying what is allowed; an unknown name lists
 * the valid names.
 */
import { MAX_DRAWS, MAX_REPEATS } from "../engine/assurance";
import { parseRule, type ChoiceRule, type ErrorMeasure } from "../engine/fit";
import { outcomeLabel, parseOutcome, type OutcomeSetting } from "../engine/outcome";
import { classifyCell, describeCell, parseNumberText, toGrid } from "./cells";
import { SettingError } from "./errors";

export type HeaderMode = "yes" | "no" | "auto";

/** The probability at or above which a row counts as the event when `cutoff` isn't given (the engine's default, FitOptions.cutoff). */
export const DEFAULT_CUTOFF = 0.5;

/** What SHRINK.PREDICT returns for a yes/no target: the event's probability, or the predicted label. */
export type PredictOutput = "probability" | "class";

export interface TermValue {
  /** As the user wrote it. */
  name: string;
  value: number;
}

/** A bound for every term, or per term. */
export type BoundSetting = { all: number } | { terms: TermValue[] };

/** Parsed settings; `null` means not given (the default applies). */
export interface Settings {
  folds: number | null;
  seed: number | null;
  rule: ChoiceRule | null;
  measure: ErrorMeasure | null;
  standardize: boolean | null;
  intercept: boolean | null;
  gridDensity: number | null;
  gridSize: number | null;
  lowEnd: number | null;
  stopEarly: boolean | null;
  strength: number | null;
  foldColumn: string | null;
  timeOrdered: boolean | null;
  weightsColumn: string | null;
  penalty: TermValue[] | null;
  noPenalty: string[] | null;
  lower: BoundSetting | null;
  upper: BoundSetting | null;
  header: HeaderMode;
  zeroIsMissing: "all" | string[] | null;
  /** How the target is read; null means auto. */
  outcome: OutcomeSetting | null;
  /** The event's label as typed (TRUE, 1, fail); null for the default. */
  event: string | null;
  /** Probability at or above which a row is the event; null for 0.5. */
  cutoff: number | null;
  /** SHRINK.PREDICT's output for a yes/no target; null for probability. */
  predictOutput: PredictOutput | null;
  /** SHRINK.PREDICT: the level of CV+ prediction intervals (number targets); null for none. Does not change the fit. */
  interval: number | null;
  /** Deals of the random folds (1 to 50); null for 1. */
  repeats: number | null;
  /** Nested cross-validation of the whole procedure; null for no. */
  honestError: boolean | null;
  /** Stability selection at the chosen mix; null for no. */
  stability: boolean | null;
  /** Stability selection: pairs of complementary halves B; null for the engine's default (50). */
  draws: number | null;
  /** Stability selection: q, the largest average number of terms selected at a counted strength; null for the default. */
  expectedTerms: number | null;
  /** Stability selection: the threshold π; null for the default (0.75). */
  stabilityThreshold: number | null;
}

export function defaultSettings(): Settings {
  return {
    folds: null,
    seed: null,
    rule: null,
    measure: null,
    standardize: null,
    intercept: null,
    gridDensity: null,
    gridSize: null,
    lowEnd: null,
    stopEarly: null,
    strength: null,
    foldColumn: null,
    timeOrdered: null,
    weightsColumn: null,
    penalty: null,
    noPenalty: null,
    lower: null,
    upper: null,
    header: "auto",
    zeroIsMissing: null,
    outcome: null,
    event: null,
    cutoff: null,
    predictOutput: null,
    interval: null,
    repeats: null,
    honestError: null,
    stability: null,
    draws: null,
    expectedTerms: null,
    stabilityThreshold: null,
  };
}

/** A setting's value as it arrived: a cell (range form) or the text after `=` (text form). */
type RawValue = { kind: "text"; text: string } | { kind: "number"; value: number } | { kind: "boolean"; value: boolean };

interface SettingSpec {
  /** Canonical name, shown in messages. */
  name: string;
  aliases: string[];
  apply(settings: Settings, value: RawValue): void;
}

function show(value: RawValue): string {
  if (value.kind === "text") return `'${value.text}'`;
  if (value.kind === "boolean") return value.value ? "TRUE" : "FALSE";
  return String(value.value);
}

function numberOf(name: string, value: RawValue, what: string): number {
  if (value.kind === "number") return value.value;
  if (value.kind === "text") {
    const n = parseNumberText(value.text);
    if (n !== null) return n;
  }
  throw new SettingError(`'${name}' must be ${what}; got ${show(value)}`);
}

function wholeNumber(name: string, value: RawValue, min: number, max: number): number {
  const what = `a whole number from ${min} to ${max}`;
  const n = numberOf(name, value, what);
  if (!Number.isInteger(n) || n < min || n > max) throw new SettingError(`'${name}' must be ${what}; got ${show(value)}`);
  return n;
}

/** Lower-case letters and digits only: how names and word values are compared. */
export function squash(text: string): string {
  return text.toLowerCase().replace(/[\s_\-.]+/g, "");
}

function yesNo(name: string, value: RawValue): boolean {
  if (value.kind === "boolean") return value.value;
  if (value.kind === "number" && (value.value === 0 || value.value === 1)) return value.value === 1;
  if (value.kind === "text") {
    const word = squash(value.text);
    if (["yes", "y", "true", "on", "1"].includes(word)) return true;
    if (["no", "n", "false", "off", "0"].includes(word)) return false;
  }
  throw new SettingError(`'${name}' must be yes or no; got ${show(value)}`);
}

function word(name: string, value: RawValue, choices: Record<string, string>, allowed: string): string {
  if (value.kind === "text") {
    const found = choices[squash(value.text)];
    if (found !== undefined) return found;
  }
  if (value.kind === "boolean" && choices[value.value ? "true" : "false"] !== undefined) return choices[value.value ? "true" : "false"];
  throw new SettingError(`'${name}' must be ${allowed}; got ${show(value)}`);
}

function textValue(name: string, value: RawValue, what: string): string {
  if (value.kind === "text") return value.text.trim();
  if (value.kind === "number") return String(value.value);
  throw new SettingError(`'${name}' must be ${what}; got ${show(value)}`);
}

function nameList(name: string, value: RawValue): string[] {
  const text = textValue(name, value, "a list of column names separated by commas");
  const items = text.split(",").map((item) => item.trim());
  if (items.some((item) => item === "")) {
    throw new SettingError(`'${name}' has an empty item in '${text}': separate names with single commas`);
  }
  return items;
}

/** `term:value, term:value`; the value follows the last colon. */
function termValues(name: string, value: RawValue, example: string): TermValue[] {
  const text = textValue(name, value, `a list like ${example}`);
  const out: TermValue[] = [];
  for (const item of text.split(",").map((part) => part.trim())) {
    if (item === "") throw new SettingError(`'${name}' has an empty item in '${text}': separate items with single commas, like ${example}`);
    const colon = item.lastIndexOf(":");
    if (colon <= 0) throw new SettingError(`'${name}' item '${item}' needs a term and a value: write term:value, like ${example}`);
    const term = item.slice(0, colon).trim();
    const valueText = item.slice(colon + 1).trim();
    const n = parseBoundWord(valueText) ?? parseNumberText(valueText);
    if (n === null || term === "") throw new SettingError(`'${name}' item '${item}' needs a term and a number: write term:value, like ${example}`);
    out.push({ name: term, value: n });
  }
  return out;
}

/** `none`, `inf`, `-inf`, `infinity` in bounds: no bound (the caller gives it the side's sign). */
function parseBoundWord(text: string): number | null {
  const w = squash(text.replace(/^[+-]/, ""));
  return w === "none" || w === "inf" || w === "infinity" ? Infinity : null;
}

function bound(name: string, value: RawValue, side: "lower" | "upper"): BoundSetting {
  const example = side === "lower" ? "Age:0, Price:-5" : "Age:10, Price:0";
  const check = (term: string, n: number): number => {
    if (Number.isNaN(n)) throw new SettingError(`'${name}' for ${term} is not a number`);
    if (n === Infinity || n === -Infinity) return side === "lower" ? -Infinity : Infinity;
    if (side === "lower" && n > 0) {
      throw new SettingError(`'${name}' for ${term} is ${n}: lower bounds must be 0 or below (0 keeps a coefficient from going negative)`);
    }
    if (side === "upper" && n < 0) {
      throw new SettingError(`'${name}' for ${term} is ${n}: upper bounds must be 0 or above (0 keeps a coefficient from going positive)`);
    }
    return n;
  };
  if (value.kind === "number") return { all: check("every term", value.value) };
  if (value.kind === "text") {
    const w = parseBoundWord(value.text);
    if (w !== null) return { all: check("every term", w) };
    const n = parseNumberText(value.text);
    if (n !== null) return { all: check("every term", n) };
    return { terms: termValues(name, value, example).map((t) => ({ name: t.name, value: check(`'${t.name}'`, t.value) })) };
  }
  throw new SettingError(`'${name}' must be a number or a list like ${example}; got ${show(value)}`);
}


const MEASURES: Record<string, ErrorMeasure> = {
  mse: "mse",
  squared: "mse",
  meansquarederror: "mse",
  mae: "mae",
  absolute: "mae",
  meanabsoluteerror: "mae",
  deviance: "deviance",
  binomialdeviance: "deviance",
  misclassified: "misclassified",
  misclassification: "misclassified",
  misclassifiedshare: "misclassified",
  errorrate: "misclassified",
  auc: "auc",
  areaunderthecurve: "auc",
  areaundercurve: "auc",
};

const PREDICT_WORDS: Record<string, PredictOutput> = {
  probability: "probability",
  probabilities: "probability",
  prob: "probability",
  class: "class",
  classes: "class",
  label: "class",
  labels: "class",
};

/** `cutoff`: a probability strictly between 0 and 1, as a number or text (`0.3`, `30%`). */
function cutoffValue(value: RawValue): number {
  return shareValue("cutoff", value, "a probability between 0 and 1 (not 0 or 1), like 0.5 or 50%");
}

/** A share strictly between 0 and 1, as a number or text (`0.3`, `30%`). */
function shareValue(name: string, value: RawValue, what: string): number {
  let n: number | null = null;
  if (value.kind === "number") n = value.value;
  else if (value.kind === "text") {
    const text = value.text.trim();
    if (text.endsWith("%")) {
      const percent = parseNumberText(text.slice(0, -1));
      n = percent === null ? null : percent / 100;
    } else n = parseNumberText(text);
  }
  if (n === null || !(n > 0 && n < 1)) throw new SettingError(`'${name}' must be ${what}; got ${show(value)}`);
  return n;
}

/** `event`: a label as the target shows it (a number or TRUE/FALSE typed in a cell reads as its label). */
function eventValue(value: RawValue): string {
  const label = value.kind === "text" ? value.text.trim() : outcomeLabel(value.value);
  if (label === "") throw new SettingError("'event' is empty: name the class whose probability the model gives, like event=fail");
  return label;
}

const HEADERS: Record<string, string> = { yes: "yes", true: "yes", on: "yes", no: "no", false: "no", off: "no", auto: "auto" };

const SPECS: SettingSpec[] = [
  { name: "folds", aliases: ["fold count"], apply: (s, v) => (s.folds = wholeNumber("folds", v, 2, 1000)) },
  { name: "seed", aliases: ["random seed"], apply: (s, v) => (s.seed = wholeNumber("seed", v, -4294967295, 4294967295)) },
  {
    name: "rule",
    aliases: ["choice rule"],
    apply: (s, v) => {
      // The engine's own reading of rule words (older tokens min, onese, 1se included).
      const rule = v.kind === "text" ? parseRule(v.text) : null;
      if (rule === null) throw new SettingError(`'rule' must be lowest (lowest error) or one-se (one-SE rule); got ${show(v)}`);
      s.rule = rule;
    },
  },
  {
    name: "error",
    aliases: ["error measure", "measure"],
    apply: (s, v) => (s.measure = word("error", v, MEASURES, "mse or mae (number target), or deviance, misclassified or auc (yes/no target)") as ErrorMeasure),
  },
  { name: "standardize", aliases: ["standardise"], apply: (s, v) => (s.standardize = yesNo("standardize", v)) },
  { name: "intercept", aliases: [], apply: (s, v) => (s.intercept = yesNo("intercept", v)) },
  {
    name: "grid density",
    aliases: ["strengths per decade", "strengths per tenfold drop"],
    apply: (s, v) => (s.gridDensity = wholeNumber("grid density", v, 1, 1000)),
  },
  { name: "grid size", aliases: ["strength count"], apply: (s, v) => (s.gridSize = wholeNumber("grid size", v, 1, 10000)) },
  {
    name: "low end",
    aliases: ["low end ratio"],
    apply: (s, v) => {
      const what = "a number between 0 and 1 (not 0 or 1), the bottom of the strength grid as a fraction of its top";
      const n = numberOf("low end", v, what);
      if (!(n > 0 && n < 1)) throw new SettingError(`'low end' must be ${what}; got ${show(v)}`);
      s.lowEnd = n;
    },
  },
  { name: "stop early", aliases: ["early stop"], apply: (s, v) => (s.stopEarly = yesNo("stop early", v)) },
  {
    name: "strength",
    aliases: ["fixed strength", "lambda"],
    apply: (s, v) => {
      const what = "a number of 0 or more (0 is plain least squares)";
      const n = numberOf("strength", v, what);
      if (!(n >= 0)) throw new SettingError(`'strength' must be ${what}; got ${show(v)}`);
      s.strength = n;
    },
  },
  { name: "fold column", aliases: ["fold labels"], apply: (s, v) => (s.foldColumn = textValue("fold column", v, "the name of a predictors column")) },
  { name: "time order", aliases: ["time ordered"], apply: (s, v) => (s.timeOrdered = yesNo("time order", v)) },
  {
    name: "weights column",
    aliases: ["weights", "weight column"],
    apply: (s, v) => (s.weightsColumn = textValue("weights column", v, "the name of a predictors column")),
  },
  {
    name: "penalty",
    aliases: ["penalties"],
    apply: (s, v) => {
      const items = termValues("penalty", v, "Age:2, Region:0.5");
      for (const item of items) {
        if (!(item.value >= 0) || !Number.isFinite(item.value)) {
          throw new SettingError(`'penalty' for '${item.name}' is ${item.value}: penalty multipliers must be 0 or more (0 never penalized, 1 normal)`);
        }
      }
      s.penalty = items;
    },
  },
  { name: "no penalty", aliases: ["unpenalized", "unpenalised"], apply: (s, v) => (s.noPenalty = nameList("no penalty", v)) },
  { name: "lower", aliases: ["lower bound", "lower bounds"], apply: (s, v) => (s.lower = bound("lower", v, "lower")) },
  { name: "upper", aliases: ["upper bound", "upper bounds"], apply: (s, v) => (s.upper = bound("upper", v, "upper")) },
  { name: "header", aliases: ["headers"], apply: (s, v) => (s.header = word("header", v, HEADERS, "yes, no or auto") as HeaderMode) },
  {
    name: "zero is missing",
    aliases: ["zeros are missing", "zeros missing"],
    apply: (s, v) => {
      const list = nameList("zero is missing", v);
      s.zeroIsMissing = list.length === 1 && squash(list[0]) === "all" ? "all" : list;
    },
  },
  {
    name: "outcome",
    aliases: ["target kind", "outcome kind"],
    apply: (s, v) => {
      const outcome = v.kind === "text" ? parseOutcome(v.text) : null;
      if (outcome === null) throw new SettingError(`'outcome' must be auto, number or two-class (also yes/no); got ${show(v)}`);
      s.outcome = outcome;
    },
  },
  { name: "event", aliases: ["event class", "positive class"], apply: (s, v) => (s.event = eventValue(v)) },
  { name: "cutoff", aliases: ["threshold", "probability cutoff"], apply: (s, v) => (s.cutoff = cutoffValue(v)) },
  {
    name: "predict",
    aliases: ["prediction", "predictions"],
    apply: (s, v) => (s.predictOutput = word("predict", v, PREDICT_WORDS, "probability or class") as PredictOutput),
  },
  {
    name: "interval",
    aliases: ["interval level", "prediction interval"],
    apply: (s, v) => (s.interval = shareValue("interval", v, "a coverage level between 0 and 1 (not 0 or 1), like 0.9 or 90%")),
  },
  { name: "repeats", aliases: ["fold deals", "repeated cv"], apply: (s, v) => (s.repeats = wholeNumber("repeats", v, 1, MAX_REPEATS)) },
  {
    name: "honest error",
    aliases: ["nested cv", "nested cross validation", "whole procedure error"],
    apply: (s, v) => (s.honestError = yesNo("honest error", v)),
  },
  { name: "stability", aliases: ["stability selection"], apply: (s, v) => (s.stability = yesNo("stability", v)) },
  { name: "draws", aliases: ["pairs", "half sample pairs"], apply: (s, v) => (s.draws = wholeNumber("draws", v, 1, MAX_DRAWS)) },
  {
    name: "q",
    aliases: ["expected terms"],
    apply: (s, v) => {
      const what = "a whole number of 1 or more: the largest average number of terms selected at a strength that still counts";
      const n = numberOf("q", v, what);
      if (!Number.isInteger(n) || n < 1) throw new SettingError(`'q' must be ${what}; got ${show(v)}`);
      s.expectedTerms = n;
    },
  },
  {
    name: "stability threshold",
    aliases: ["pi", "π"],
    apply: (s, v) => {
      const what = "a share between 0.5 and 1 (not 0.5 or 1), like 0.75 or 75%: the bound on false selections needs more than 0.5";
      const n = shareValue("stability threshold", v, what);
      if (!(n > 0.5)) throw new SettingError(`'stability threshold' must be ${what}; got ${show(v)}`);
      s.stabilityThreshold = n;
    },
  },
];

/** The canonical setting names, in the order of the table above. */
export const SETTING_NAMES: readonly string[] = SPECS.map((spec) => spec.name);

const BY_NAME = new Map<string, SettingSpec>();
for (const spec of SPECS) for (const name of [spec.name, ...spec.aliases]) BY_NAME.set(squash(name), spec);

function unknownName(name: string): SettingError {
  return new SettingError(`unknown setting '${name}': the settings are ${SETTING_NAMES.join(", ")}`);
}

/** A name = value pair from either form, with where it came from (for messages). */
interface Entry {
  name: string;
  value: RawValue;
}

function textEntries(text: string): Entry[] {
  const entries: Entry[] = [];
  for (const part of text.split(/[;\r\n]+/)) {
    const item = part.trim();
    if (item === "") continue;
    const equals = item.indexOf("=");
    if (equals < 0) {
      throw new SettingError(`setting '${item}' has no value: write name=value, with settings separated by ';' (e.g. folds=5; seed=7)`);
    }
    const name = item.slice(0, equals).trim();
    const value = item.slice(equals + 1).trim();
    if (name === "") throw new SettingError(`'${item}' has no setting name before '='`);
    if (value.includes("=")) {
      throw new SettingError(`the value of '${name}' contains '=' ('${value}'): separate settings with ';' (e.g. folds=5; seed=7)`);
    }
    if (value === "") throw new SettingError(`setting '${name}' has no value after '='`);
    entries.push({ name, value: { kind: "text", text: value } });
  }
  return entries;
}

function rawValue(name: string, cell: unknown): RawValue | null {
  const c = classifyCell(cell);
  switch (c.kind) {
    case "blank":
      return null;
    case "text":
      return { kind: "text", text: c.value };
    case "number":
      return { kind: "number", value: c.value };
    case "boolean":
      return { kind: "boolean", value: c.value };
    case "error":
      throw new SettingError(`setting '${name}' has the error ${c.text} as its value: fix that cell`);
  }
}

function rangeEntries(grid: unknown[][]): Entry[] {
  const width = grid[0].length;
  if (width === 1) {
    const entries: Entry[] = [];
    grid.forEach((row, i) => {
      const c = classifyCell(row[0]);
      if (c.kind === "blank") return;
      if (c.kind !== "text") {
        throw new SettingError(`settings row ${i + 1} is ${describeCell(c)}: each cell of a one-column settings range must read name=value`);
      }
      entries.push(...textEntries(c.value));
    });
    return entries;
  }
  const entries: Entry[] = [];
  grid.forEach((row, i) => {
    for (let j = 2; j < row.length; j++) {
      if (classifyCell(row[j]).kind !== "blank") {
        throw new SettingError(`settings has ${width} columns: give two columns, name | value (row ${i + 1} has something in column ${j + 1})`);
      }
    }
    const nameCell = classifyCell(row[0]);
    if (nameCell.kind === "blank") {
      if (classifyCell(row[1]).kind !== "blank") throw new SettingError(`settings row ${i + 1} has a value but no setting name`);
      return;
    }
    if (nameCell.kind !== "text") {
      throw new SettingError(`settings row ${i + 1} starts with ${describeCell(nameCell)}: the first column holds setting names such as folds or rule`);
    }
    if (i === 0 && ["setting", "settings", "name"].includes(squash(nameCell.value))) {
      const second = classifyCell(row[1]);
      if (second.kind === "blank" || (second.kind === "text" && ["value", "values"].includes(squash(second.value)))) return;
    }
    const value = rawValue(nameCell.value, row[1]);
    if (value === null) return;
    entries.push({ name: nameCell.value, value });
  });
  return entries;
}

/** The settings a function that fits no cross-validated model accepts, and its name for messages. */
export interface SettingScope {
  /** SHRINK.SCORE, SHRINK.BASELINE. */
  fn: string;
  /** Canonical names (as in SETTING_NAMES) it accepts. */
  names: readonly string[];
}

export const SCORE_SETTINGS: SettingScope = { fn: "SHRINK.SCORE", names: ["outcome", "event", "cutoff"] };
export const BASELINE_SETTINGS: SettingScope = { fn: "SHRINK.BASELINE", names: ["outcome", "event", "header", "zero is missing"] };

/**
 * Reads the settings argument (text, range, or null when omitted). Throws SettingError. With a
 * `scope`, a setting outside it is refused naming the ones the function takes.
 * Example: parseSettings("folds=5; rule=one-se") → folds 5, rule "one-se", everything else default.
 */
export function parseSettings(raw: unknown, scope?: SettingScope): Settings {
  const settings = defaultSettings();
  const grid = toGrid(raw);
  if (grid.length === 0 || grid[0].length === 0) return settings;
  let entries: Entry[];
  if (grid.length === 1 && grid[0].length === 1) {
    const c = classifyCell(grid[0][0]);
    if (c.kind === "blank") return settings;
    if (c.kind === "error") throw new SettingError(`settings is the error ${c.text}: fix the cell it comes from`);
    if (c.kind !== "text") {
      throw new SettingError(
        `settings is ${describeCell(c)}: give text like folds=5; seed=7, or a two-column range of setting names and values`,
      );
    }
    entries = textEntries(c.value);
  } else {
    entries = rangeEntries(grid);
  }
  const seen = new Set<SettingSpec>();
  for (const entry of entries) {
    const spec = BY_NAME.get(squash(entry.name));
    if (!spec) throw unknownName(entry.name);
    if (scope && !scope.names.includes(spec.name)) {
      throw new SettingError(`'${spec.name}' doesn't apply to ${scope.fn}: its settings are ${scope.names.join(", ")}`);
    }
    if (seen.has(spec)) throw new SettingError(`'${spec.name}' is given twice: give each setting once`);
    seen.add(spec);
    spec.apply(settings, entry.value);
  }
  if (settings.gridDensity !== null && settings.gridSize !== null) {
    throw new SettingError("'grid density' and 'grid size' both set how many strengths the grid has: give one");
  }
  if (settings.foldColumn !== null && settings.timeOrdered) {
    throw new SettingError("'fold column' and 'time order' can't be used together: choose one way to form the folds");
  }
  checkAssuranceSettings(settings);
  return settings;
}

/**
 * Combinations of repeats, honest error and stability that would do nothing or can't run: refused
 * with what to change (silence would hide a mistake).
 */
function checkAssuranceSettings(settings: Settings): void {
  const stabilityParts = [
    settings.draws !== null ? `draws=${settings.draws}` : null,
    settings.expectedTerms !== null ? `q=${settings.expectedTerms}` : null,
    settings.stabilityThreshold !== null ? `stability threshold=${settings.stabilityThreshold}` : null,
  ].filter((part): part is string => part !== null);
  if (stabilityParts.length > 0 && settings.stability !== true) {
    const one = stabilityParts.length === 1;
    throw new SettingError(
      `${stabilityParts.join(" and ")} ${one ? "sets" : "set"} up stability selection, which runs only with stability=yes: add stability=yes, or remove ${one ? "it" : "them"}`,
    );
  }
  if (settings.strength !== null) {
    const needCv = [
      settings.repeats !== null && settings.repeats > 1 ? `repeats=${settings.repeats}` : null,
      settings.honestError ? "honest error=yes" : null,
      settings.stability ? "stability=yes" : null,
    ].filter((part): part is string => part !== null);
    if (needCv.length > 0) {
      throw new SettingError(
        `${needCv.join(" and ")} ${needCv.length === 1 ? "works" : "work"} on the cross-validated choice, and a fixed strength runs no cross-validation: remove 'strength', or remove ${needCv.length === 1 ? "it" : "them"}`,
      );
    }
  }
  if (settings.repeats !== null && settings.repeats > 1) {
    if (settings.foldColumn !== null) {
      throw new SettingError(
        `repeats=${settings.repeats} deals random folds again with new seeds, but 'fold column' fixes the folds (one deal): remove 'repeats', or 'fold column'`,
      );
    }
    if (settings.timeOrdered) {
      throw new SettingError(
        `repeats=${settings.repeats} deals random folds again with new seeds, but 'time order' fixes the folds (one deal): remove 'repeats', or 'time order'`,
      );
    }
  }
}

const MIX_WORDS: Record<string, number> = { ridge: 0, lasso: 1 };

function mixFromText(label: string, text: string): number[] {
  const out: number[] = [];
  for (const part of text.split(/[,;\s]+/)) {
    if (part === "") continue;
    const known = MIX_WORDS[squash(part)];
    const n = known ?? parseNumberText(part);
    if (n === null) throw new SettingError(`${label} '${text}' has '${part}', which is not a number: give mixes from 0 (ridge) to 1 (lasso), like 0, 0.5, 1`);
    out.push(n);
  }
  return out;
}

/**
 * Reads a mixes argument: a number, a range of numbers, or text like "0, 0.5, 1" (the words
 * ridge = 0 and lasso = 1 are accepted). Null (omitted, or all blank) means the engine's default.
 * Throws SettingError for text that isn't a number, an error cell, a mix outside 0 to 1, or a
 * mix listed twice.
 */
export function parseMixes(raw: unknown, label = "mixes"): number[] | null {
  const grid = toGrid(raw);
  const mixes: number[] = [];
  for (const row of grid) {
    for (const cell of row) {
      const c = classifyCell(cell);
      if (c.kind === "blank") continue;
      if (c.kind === "number") mixes.push(c.value);
      else if (c.kind === "text") mixes.push(...mixFromText(label, c.value));
      else if (c.kind === "error") throw new SettingError(`${label} has the error ${c.text}: fix the cell it comes from`);
      else throw new SettingError(`${label} has ${describeCell(c)}: give mixes from 0 (ridge) to 1 (lasso)`);
    }
  }
  if (mixes.length === 0) return null;
  const seen = new Set<number>();
  for (const mix of mixes) {
    if (!(mix >= 0 && mix <= 1)) throw new SettingError(`mix ${mix} is outside 0 to 1: use 0 for ridge, 1 for lasso, or a value between`);
    if (seen.has(mix)) throw new SettingError(`mix ${mix} is listed twice: list each mix once`);
    seen.add(mix);
  }
  return mixes;
}
