/**
 * The settings form: the cell functions' settings in plain words, the same names underneath
 * (a field's value becomes `name=value` in the formulas' settings text). Every field is checked
 * as the user types by the cell functions' own parser (paneState.checkSettings); a bad value
 * gets its reason right under it (aria-describedby, aria-invalid), and the Fit button stays off
 * until the form reads cleanly.
 *
 * The common settings are shown; the rest sit under "More settings" (a <details>). Fields that
 * name a predictors column (fold column, and the weights column shown with the ranges) offer
 * the predictors' header names.
 *
 * The target's kind (setOutcome, from the pane's reading of the target: paneState.detectOutcome)
 * decides what the form offers: the error measures of that kind (MSE/MAE for numbers;
 * deviance/misclassified/AUC for yes/no), and, for a yes/no target, the event (a choice of its
 * two labels), the cutoff and what SHRINK.PREDICT returns. Those three stay hidden for a number
 * target unless they hold a value (which the cells would refuse: the field says why).
 *
 * "How sure is it" (a third group, its own <details>, testid sure-settings): the interval level
 * (CV+ prediction intervals, number targets), repeats of the fold deal, the honest error
 * (nested cross-validation, a checkbox) and stability selection (a checkbox) with its draws, q
 * and threshold π, which show only while stability is on (or hold a value, so the cells'
 * refusal is seen). A field whose setting the cell functions don't know (an older functions
 * build) is not offered at all: its value could not reach the fit.
 */
import type { OutcomeKind } from "../../engine/outcome";
import { higherIsBetter, type ErrorMeasure } from "../../engine/fit";
import { parseSettings, SETTING_NAMES } from "../../functions/settings";
import { checkSettings, measureChoices, type PaneInputs, type SettingsCheck } from "./paneState";

export interface Choice {
  value: string;
  label: string;
}

export interface FieldSpec {
  /** The setting name (SETTING_NAMES), or "mixes". */
  name: string;
  label: string;
  hint: string;
  kind: "text" | "choice" | "column" | "label" | "check";
  choices?: Choice[];
  placeholder?: string;
  /** Under "More settings". */
  more?: boolean;
  /** inputmode for text fields. */
  inputMode?: "numeric" | "decimal" | "text";
  /** Shown for a yes/no target only (or when it holds a value). */
  twoClassOnly?: boolean;
  /** Under "How sure is it". */
  sure?: boolean;
  /** Shown only while stability selection is on (or when it holds a value). */
  stabilityOnly?: boolean;
}

/** The error measure choices of each kind of target; the empty value is the kind's default (the first). */
export const MEASURE_CHOICES: Readonly<Record<ErrorMeasure, string>> = {
  mse: "Mean squared error, MSE",
  mae: "Mean absolute error, MAE",
  deviance: "Deviance (how far the probabilities are from what happened)",
  misclassified: "Share misclassified at the cutoff",
  auc: "AUC, area under the ROC curve (higher is better)",
};

/** The error field's choices for a target of this kind (number when not known). */
export function errorChoices(outcome: OutcomeKind | null): Choice[] {
  const measures = measureChoices(outcome);
  return measures.map((measure, k) => (k === 0 ? { value: "", label: `${MEASURE_CHOICES[measure]} (default)` } : { value: measure, label: MEASURE_CHOICES[measure] }));
}

const YES_DEFAULT: Choice[] = [
  { value: "", label: "Yes (default)" },
  { value: "no", label: "No" },
];

/** Yes/no settings whose default is no (the empty value leaves the cells' default). */
const NO_DEFAULT: Choice[] = [
  { value: "", label: "No (default)" },
  { value: "yes", label: "Yes" },
];

/** The fields in page order. `weights column` is drawn with the ranges (see `renderColumnField`). */
export const FIELDS: readonly FieldSpec[] = [
  {
    name: "outcome",
    label: "Target kind",
    hint: "Detect reads a target with exactly two values (TRUE/FALSE, 0/1, or two labels such as pass/fail) as yes/no, and anything else as numbers. A yes/no target gets a penalized logistic regression: the model gives the probability of the event.",
    kind: "choice",
    choices: [
      { value: "", label: "Detect from the values (default)" },
      { value: "number", label: "Number" },
      { value: "two-class", label: "Yes/no (two classes)" },
    ],
  },
  {
    name: "mixes",
    label: "Mix α (lasso share): values to try",
    hint: "0 is ridge, 1 is lasso, values between are elastic net. Separate with commas. Empty: 0, 0.25, 0.5, 0.75, 1.",
    kind: "text",
    placeholder: "0, 0.25, 0.5, 0.75, 1",
    inputMode: "decimal",
  },
  { name: "folds", label: "Folds", hint: "Parts the rows are split into for cross-validation, 2 to 1000. Empty: 10.", kind: "text", placeholder: "10", inputMode: "numeric" },
  {
    name: "rule",
    label: "How to pick the strength",
    hint: "The one-SE rule takes the strongest penalty whose error is within one standard error of the lowest: a simpler model.",
    kind: "choice",
    choices: [
      { value: "", label: "Lowest error (default)" },
      { value: "one-se", label: "One-SE rule" },
    ],
  },
  {
    name: "error",
    label: "Error measure",
    hint: "How cross-validation scores each strength.",
    kind: "choice",
    choices: errorChoices(null),
  },
  {
    name: "event",
    label: "Event (yes/no target)",
    hint: "The class whose probability the model gives; coefficients are log-odds of it. Default: TRUE, else 1, else the rarer label.",
    kind: "label",
    twoClassOnly: true,
  },
  {
    name: "cutoff",
    label: "Cutoff probability (yes/no target)",
    hint: "A row is flagged as the event when its probability is at least this: for the misclassified share, the table of events caught and false alarms, and predicted classes. Weigh what a missed event costs against a false alarm. Empty: 0.5.",
    kind: "text",
    placeholder: "0.5",
    inputMode: "decimal",
    twoClassOnly: true,
  },
  {
    name: "predict",
    label: "Predictions (yes/no target)",
    hint: "What SHRINK.PREDICT returns for each new row.",
    kind: "choice",
    choices: [
      { value: "", label: "Probability of the event (default)" },
      { value: "class", label: "Class at the cutoff" },
    ],
    twoClassOnly: true,
  },
  { name: "seed", label: "Seed", hint: "Decides how rows are dealt into folds: the same seed gives the same folds. Empty: 1.", kind: "text", placeholder: "1", inputMode: "numeric" },
  { name: "standardize", label: "Standardize predictors", hint: "Penalize every predictor on the same scale (coefficients are still reported in the data's units).", kind: "choice", choices: YES_DEFAULT, more: true },
  { name: "intercept", label: "Fit an intercept", hint: "No forces the model through zero.", kind: "choice", choices: YES_DEFAULT, more: true },
  {
    name: "strength",
    label: "Fixed strength λ",
    hint: "Fits this one strength, without cross-validation; needs a single mix. Empty: chosen by cross-validation.",
    kind: "text",
    placeholder: "chosen by cross-validation",
    inputMode: "decimal",
    more: true,
  },
  {
    name: "grid density",
    label: "Grid density (strengths per tenfold drop)",
    hint: "How many strengths are tried per tenfold drop in strength, 1 to 1000. Empty: 20 (101 strengths down to a low end of 0.00001).",
    kind: "text",
    placeholder: "20",
    inputMode: "numeric",
    more: true,
  },
  {
    name: "grid size",
    label: "Strengths on the grid",
    hint: "How many strengths are tried, 1 to 10000, instead of a density (give one or the other). Empty: set by the density.",
    kind: "text",
    placeholder: "set by the density",
    inputMode: "numeric",
    more: true,
  },
  {
    name: "low end",
    label: "Weakest strength (fraction of the strongest)",
    hint: "The weakest strength tried, as a fraction of the strongest (between 0 and 1). Empty: 0.00001, or 0.01 when there are at least as many predictors as rows.",
    kind: "text",
    placeholder: "0.00001",
    inputMode: "decimal",
    more: true,
  },
  {
    name: "stop early",
    label: "Stop paths early",
    hint: "Yes ends each path once a tenfold drop in strength improves the fit by less than 1% (faster; fewer rows in the path). No covers the whole grid.",
    kind: "choice",
    choices: NO_DEFAULT,
    more: true,
  },
  {
    name: "time order",
    label: "Rows are in time order",
    hint: "Yes validates each fold on later rows only, never on the past.",
    kind: "choice",
    choices: NO_DEFAULT,
    more: true,
  },
  { name: "fold column", label: "Fold column", hint: "A predictors column whose values say which fold each row belongs to. It is not used as a predictor.", kind: "column", more: true },
  { name: "penalty", label: "Penalty multipliers", hint: "term:value pairs, e.g. moisture:2, origin:0.5 (0 never penalized, 1 normal).", kind: "text", more: true },
  { name: "no penalty", label: "Never penalize", hint: "Column names separated by commas; these are fitted without shrinkage.", kind: "text", more: true },
  { name: "lower", label: "Lower bounds", hint: "A number of 0 or below for every term (0 keeps coefficients from going negative), or term:value pairs.", kind: "text", more: true },
  { name: "upper", label: "Upper bounds", hint: "A number of 0 or above for every term, or term:value pairs.", kind: "text", more: true },
  { name: "zero is missing", label: "Zeros mean blank", hint: "all, or column names separated by commas: their zeros count as empty cells (for hosts that pass blanks as 0).", kind: "text", more: true },
  {
    name: "interval",
    label: "Prediction interval level (number target)",
    hint: "With a level such as 0.9 or 90% (strictly between 0 and 1), SHRINK.PREDICT adds a low and a high end per row, and the held-out chart shows each row's interval: a CV+ prediction interval from the cross-validation's held-out errors (no extra fits). Empty: predictions only.",
    kind: "text",
    placeholder: "none",
    inputMode: "decimal",
    sure: true,
  },
  {
    name: "repeats",
    label: "Repeats of the fold deal",
    hint: "Deal the rows into folds this many times (1 to 50; seeds seed, seed+1, …) and choose on the averaged curve: a steadier choice, at that many times the fits. Random folds only. Empty: 1.",
    kind: "text",
    placeholder: "1",
    inputMode: "numeric",
    sure: true,
  },
  {
    name: "honest error",
    label: "Honest error (nested cross-validation)",
    hint: "Also measure the error of the whole choosing procedure: each outer fold re-runs every mix, strength and the rule on the rest and scores its pick on the fold. The usual CV error chose the model, so it is optimistic. Costs about one more whole fit per fold.",
    kind: "check",
    sure: true,
  },
  {
    name: "stability",
    label: "Stability selection",
    hint: "Refit the chosen mix's path on many pairs of half-samples and count how often each term is selected: terms selected at least π of the time are stable, with a bound on how many of them are expected to be false. Costs 2 × draws path fits.",
    kind: "check",
    sure: true,
  },
  {
    name: "draws",
    label: "Pairs of half-samples (draws)",
    hint: "How many pairs of complementary half-samples, 1 to 1000. Empty: 50 (100 path fits).",
    kind: "text",
    placeholder: "50",
    inputMode: "numeric",
    sure: true,
    stabilityOnly: true,
  },
  {
    name: "q",
    label: "Terms selected on average (q)",
    hint: "Strengths count while the halves select at most q terms on average: a whole number of 1 or more. Empty: round(√(0.8 × terms)).",
    kind: "text",
    placeholder: "default",
    inputMode: "numeric",
    sure: true,
    stabilityOnly: true,
  },
  {
    name: "stability threshold",
    label: "Stability threshold π",
    hint: "A term is stable when its selection share is at least this: strictly between 0.5 and 1 (0.75 or 75%). Empty: 0.75.",
    kind: "text",
    placeholder: "0.75",
    inputMode: "decimal",
    sure: true,
    stabilityOnly: true,
  },
];

/** The rule's hint when the measure is the AUC (higher is better). */
const RULE_HINT_AUC = "The one-SE rule takes the strongest penalty whose AUC is within one standard error of the highest: a simpler model.";

/** The measure an error field's value names, read by the cells' parser (null: default or unreadable). */
function measureOf(text: string): ErrorMeasure | null {
  if (text.trim() === "") return null;
  try {
    return parseSettings(`error=${text.trim()}`).measure;
  } catch {
    return null;
  }
}

/** Whether a yes/no setting's text reads as yes (the cells' words: yes, true, on, 1). */
export function isYes(text: string): boolean {
  return ["yes", "y", "true", "on", "1"].includes(text.trim().toLowerCase());
}

/** The weights column field (drawn with the ranges). */
export const WEIGHTS_FIELD: FieldSpec = {
  name: "weights column",
  label: "Weights (optional)",
  hint: "A predictors column of row weights (0 or more). It is not used as a predictor.",
  kind: "column",
};

/** Stable id / data-testid stem of a field: `setting-grid-size`. */
export function fieldId(name: string): string {
  return `setting-${name.replace(/\s+/g, "-")}`;
}

function readValue(inputs: PaneInputs, name: string): string {
  return name === "mixes" ? inputs.mixes : (inputs.settings[name] ?? "");
}

function writeValue(inputs: PaneInputs, name: string, value: string): void {
  if (name === "mixes") inputs.mixes = value;
  else if (value.trim() === "") delete inputs.settings[name];
  else inputs.settings[name] = value;
}

interface Field {
  spec: FieldSpec;
  control: HTMLInputElement | HTMLSelectElement;
  error: HTMLElement;
  hintId: string;
  wrap: HTMLElement;
}

export interface SettingsForm {
  /** The section's content (append where wanted). */
  element: HTMLElement;
  /** The weights field, to be placed with the ranges. */
  weightsElement: HTMLElement;
  /** New header names for the column fields (keeps a chosen name that is no longer there, marked). */
  setColumns(names: readonly string[]): void;
  /** Re-reads `inputs` into the controls (after a restore). */
  load(): void;
  /** Checks every field and shows the messages; returns the check. */
  check(): SettingsCheck;
  /**
   * The target's kind as read (null: not known), its two labels and the default event (yes/no
   * targets): sets the error choices, the event choices, and which yes/no fields show.
   */
  setOutcome(kind: OutcomeKind | null, labels?: readonly string[], defaultEvent?: string | null): void;
}

function fillColumnChoices(select: HTMLSelectElement, names: readonly string[], current: string, noneLabel: string): void {
  select.replaceChildren();
  const none = document.createElement("option");
  none.value = "";
  none.textContent = noneLabel;
  select.append(none);
  const all = [...names];
  if (current && !names.includes(current)) all.push(current);
  for (const name of all) {
    const option = document.createElement("option");
    option.value = name;
    option.textContent = names.includes(name) ? name : `${name} (not in the predictors' header)`;
    select.append(option);
  }
  select.value = current;
}

/**
 * Builds the form over `inputs` (edited in place). `onChange(name)` runs after every edit, with
 * the field's setting name.
 */
export function renderSettingsForm(inputs: PaneInputs, onChange: (name: string) => void): SettingsForm {
  const fields: Field[] = [];
  let columns: readonly string[] = [];
  let outcome: OutcomeKind | null = null;
  let labels: readonly string[] = [];
  let defaultEvent: string | null = null;
  const eventNone = (): string => (defaultEvent ? `Default: '${defaultEvent}'` : "Default (TRUE, else 1, else the rarer label)");

  const makeField = (spec: FieldSpec): HTMLElement => {
    const id = fieldId(spec.name);
    const wrap = document.createElement("div");
    wrap.className = "field";
    const label = document.createElement("label");
    label.htmlFor = id;
    label.textContent = spec.label;
    let control: HTMLInputElement | HTMLSelectElement;
    if (spec.kind === "check") {
      // A yes/no setting as a checkbox: checked writes "yes", unchecked leaves the default (no).
      const box = document.createElement("input");
      box.type = "checkbox";
      box.checked = isYes(readValue(inputs, spec.name));
      box.addEventListener("change", () => {
        writeValue(inputs, spec.name, box.checked ? "yes" : "");
        check();
        onChange(spec.name);
      });
      control = box;
      wrap.classList.add("check-field");
    } else if (spec.kind === "text") {
      const input = document.createElement("input");
      input.type = "text";
      input.autocomplete = "off";
      input.spellcheck = false;
      if (spec.inputMode) input.inputMode = spec.inputMode;
      if (spec.placeholder) input.placeholder = spec.placeholder;
      input.addEventListener("input", () => {
        writeValue(inputs, spec.name, input.value);
        check();
        onChange(spec.name);
      });
      control = input;
    } else {
      const select = document.createElement("select");
      if (spec.kind === "choice") {
        fillChoices(select, spec.choices ?? [], readValue(inputs, spec.name));
      } else if (spec.kind === "label") {
        fillLabelChoices(select, labels, readValue(inputs, spec.name), eventNone());
      } else {
        fillColumnChoices(select, columns, readValue(inputs, spec.name), "None");
      }
      select.addEventListener("change", () => {
        writeValue(inputs, spec.name, select.value);
        check();
        onChange(spec.name);
      });
      control = select;
    }
    control.id = id;
    control.name = spec.name;
    control.dataset.testid = id;
    const hint = document.createElement("p");
    hint.className = "hint";
    hint.id = `${id}-hint`;
    hint.textContent = spec.hint;
    const error = document.createElement("p");
    error.className = "field-error";
    error.id = `${id}-error`;
    error.dataset.testid = `${id}-error`;
    error.hidden = true;
    control.setAttribute("aria-describedby", `${id}-hint`);
    // A checkbox goes before its label, on one line.
    if (spec.kind === "check") wrap.append(control, label, error, hint);
    else wrap.append(label, control, error, hint);
    // Not offered when the cell functions don't know the setting (it could not reach the fit).
    if (!SETTING_NAMES.includes(spec.name) && spec.name !== "mixes") {
      wrap.hidden = true;
      control.disabled = true;
    }
    fields.push({ spec, control, error, hintId: hint.id, wrap });
    return wrap;
  };

  const element = document.createElement("div");
  element.className = "settings";
  const basic = document.createElement("div");
  basic.className = "field-grid";
  const more = document.createElement("details");
  more.className = "more";
  more.dataset.testid = "more-settings";
  const summary = document.createElement("summary");
  summary.textContent = "More settings";
  const moreGrid = document.createElement("div");
  moreGrid.className = "field-grid";
  more.append(summary, moreGrid);
  const sure = document.createElement("details");
  sure.className = "more";
  sure.dataset.testid = "sure-settings";
  const sureSummary = document.createElement("summary");
  sureSummary.textContent = "How sure is it: intervals, repeats, honest error, stability";
  const sureGrid = document.createElement("div");
  sureGrid.className = "field-grid";
  sure.append(sureSummary, sureGrid);
  for (const spec of FIELDS) (spec.sure ? sureGrid : spec.more ? moreGrid : basic).append(makeField(spec));
  const overall = document.createElement("p");
  overall.className = "field-error overall";
  overall.id = "settings-overall-error";
  overall.dataset.testid = "settings-problem";
  overall.hidden = true;
  element.append(basic, sure, more, overall);
  const weightsElement = makeField(WEIGHTS_FIELD);

  function showError(field: Field, message: string | null): void {
    const bad = message !== null;
    field.error.hidden = !bad;
    field.error.textContent = bad ? message : "";
    if (bad) {
      field.control.setAttribute("aria-invalid", "true");
      field.control.setAttribute("aria-describedby", `${field.error.id} ${field.hintId}`);
    } else {
      field.control.removeAttribute("aria-invalid");
      field.control.setAttribute("aria-describedby", field.hintId);
    }
  }

  /** The yes/no fields show for a yes/no target, when the settings say two-class, or when they hold a value. */
  function showTwoClassFields(): void {
    const wanted = outcome === "two-class" || (inputs.settings.outcome ?? "").trim() === "two-class";
    for (const field of fields) {
      if (!field.spec.twoClassOnly) continue;
      field.wrap.hidden = !(wanted || readValue(inputs, field.spec.name).trim() !== "");
    }
  }

  /** Draws, q and π show while stability selection is on, or when they hold a value (the cells refuse them without it). */
  function showStabilityFields(): void {
    const on = isYes(readValue(inputs, "stability"));
    for (const field of fields) {
      if (!field.spec.stabilityOnly || !SETTING_NAMES.includes(field.spec.name)) continue;
      const shown = on || readValue(inputs, field.spec.name).trim() !== "";
      field.wrap.hidden = !shown;
      field.control.disabled = !shown;
    }
  }

  /** The rule's words follow the measure: for the AUC the default rule takes the highest value, and the one-SE rule looks below it. */
  function nameRules(): void {
    const field = fields.find((f) => f.spec.name === "rule");
    if (!field || !(field.control instanceof HTMLSelectElement)) return;
    const measure = measureOf(readValue(inputs, "error"));
    const auc = measure !== null && higherIsBetter(measure);
    const first = field.control.options[0];
    if (first && first.value === "") first.textContent = auc ? "Highest AUC (default)" : "Lowest error (default)";
    const hint = document.getElementById(field.hintId);
    if (hint) hint.textContent = auc ? RULE_HINT_AUC : field.spec.hint;
  }

  function check(): SettingsCheck {
    const result = checkSettings(inputs, outcome);
    showTwoClassFields();
    showStabilityFields();
    nameRules();
    for (const field of fields) {
      const message = field.spec.name === "mixes" ? result.mixes : (result.fields[field.spec.name] ?? null);
      showError(field, message);
      // A problem hidden under "More settings" (or "How sure is it") opens it, so the message is seen.
      if (message && field.spec.more) more.open = true;
      if (message && field.spec.sure) sure.open = true;
    }
    overall.hidden = result.overall === null;
    overall.textContent = result.overall ?? "";
    return result;
  }

  function load(): void {
    for (const field of fields) {
      const value = readValue(inputs, field.spec.name);
      if (field.spec.kind === "column") {
        fillColumnChoices(field.control as HTMLSelectElement, columns, value, "None");
        continue;
      }
      if (field.spec.kind === "label") {
        fillLabelChoices(field.control as HTMLSelectElement, labels, value, eventNone());
        continue;
      }
      if (field.spec.kind === "check") {
        (field.control as HTMLInputElement).checked = isYes(value);
        continue;
      }
      const select = field.control;
      if (select instanceof HTMLSelectElement && value !== "" && !Array.from(select.options).some((o) => o.value === value)) {
        // A value typed elsewhere (an older pane, another spelling): keep it selectable.
        const option = document.createElement("option");
        option.value = value;
        option.textContent = value;
        select.append(option);
      }
      field.control.value = value;
    }
    check();
  }

  function setColumns(names: readonly string[]): void {
    columns = [...names];
    for (const field of fields) {
      if (field.spec.kind === "column") fillColumnChoices(field.control as HTMLSelectElement, columns, readValue(inputs, field.spec.name), "None");
    }
  }

  function setOutcome(kind: OutcomeKind | null, newLabels: readonly string[] = [], newDefault: string | null = null): void {
    outcome = kind;
    labels = [...newLabels];
    defaultEvent = newDefault;
    for (const field of fields) {
      const select = field.control;
      if (!(select instanceof HTMLSelectElement)) continue;
      if (field.spec.name === "error") fillChoices(select, errorChoices(kind), readValue(inputs, "error"));
      else if (field.spec.kind === "label") fillLabelChoices(select, labels, readValue(inputs, field.spec.name), eventNone());
    }
    check();
  }

  load();
  return { element, weightsElement, setColumns, load, check, setOutcome };
}

/** A select's fixed choices; a value typed elsewhere (an older pane, another spelling) is kept selectable. */
function fillChoices(select: HTMLSelectElement, choices: readonly Choice[], current: string): void {
  select.replaceChildren();
  for (const choice of choices) {
    const option = document.createElement("option");
    option.value = choice.value;
    option.textContent = choice.label;
    select.append(option);
  }
  if (current !== "" && !choices.some((c) => c.value === current)) {
    const option = document.createElement("option");
    option.value = current;
    option.textContent = current;
    select.append(option);
  }
  select.value = current;
}

/** The event's choices: the default, then the target's two labels (a named event not among them kept, marked). */
function fillLabelChoices(select: HTMLSelectElement, labels: readonly string[], current: string, noneLabel: string): void {
  select.replaceChildren();
  const none = document.createElement("option");
  none.value = "";
  none.textContent = noneLabel;
  select.append(none);
  const matched = labels.find((label) => label.toLowerCase() === current.trim().toLowerCase());
  for (const label of labels) {
    const option = document.createElement("option");
    option.value = label;
    option.textContent = label;
    select.append(option);
  }
  if (current !== "" && matched === undefined) {
    const option = document.createElement("option");
    option.value = current;
    option.textContent = labels.length > 0 ? `${current} (not in the target)` : current;
    select.append(option);
  }
  select.value = matched ?? current;
}
