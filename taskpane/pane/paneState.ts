/**
 * The side pane's logic without the DOM: what the user has chosen (`PaneInputs`, remembered per
 * workbook), the settings and mixes as the cell functions read them (validated by the same
 * parser, so a message here is word for word what the cell would show), and the fit's state
 * machine.
 *
 * Fit states (`FitState.phase`) and the events that move between them (`reduceFit`):
 *
 *   idle ──start──▶ fitting ──progress──▶ fitting (done/total updated)
 *                      │──succeeded──▶ done        (or stale, when an input changed meanwhile)
 *                      │──failed─────▶ failed      (the message says what to fix)
 *                      └──cancelled──▶ cancelled   (the Cancel button; the run is stopped)
 *   done ──inputsChanged──▶ stale   (the results stay visible under a "fit again" banner)
 *   any  ──start──▶ fitting         (a new run; events of older runs are ignored)
 *
 * Every event carries the run number it belongs to, so a late message from a superseded run
 * (a progress report after Cancel, a result after a new start) changes nothing.
 */
import { checkMeasure, higherIsBetter, MEASURES, parseRule, type ErrorMeasure, type FitResult } from "../../engine/fit";
import type { OutcomeKind } from "../../engine/outcome";
import type { Prepared } from "../../functions/api";
import { buildDataset } from "../../functions/dataset";
import { defaultSettings, parseMixes, parseSettings, SETTING_NAMES, type Settings } from "../../functions/settings";
import { measureName, outcomeLine } from "../outcomeWords";

// ---------------------------------------------------------------------------------------------
// What the user chose

/** The header toggle, mapped to the `header` setting (auto = leave it out). */
export type HeaderChoice = "auto" | "yes" | "no";

/** The ranges the pane works on (A1 addresses with their sheet, or "" when not chosen). */
export interface PaneRanges {
  target: string;
  predictors: string;
  /** Optional: rows to predict (SHRINK.PREDICT). */
  newRows: string;
  /** Where the formulas go (top-left cell). */
  destination: string;
}

export interface PaneInputs {
  ranges: PaneRanges;
  header: HeaderChoice;
  /** Mixes as typed ("0, 0.5, 1"); "" = the default mixes. */
  mixes: string;
  /**
   * Setting name (as in SETTING_NAMES) → value as typed; "" or missing = default. `header` is
   * not kept here (see `header`); `weights column` and `fold column` hold a predictors column name.
   */
  settings: Record<string, string>;
}

/** The key under which the pane keeps its inputs in the workbook's settings. */
export const INPUTS_KEY = "shrinkwise.pane.inputs";

export function emptyInputs(): PaneInputs {
  return { ranges: { target: "", predictors: "", newRows: "", destination: "" }, header: "auto", mixes: "", settings: {} };
}

/** Names the settings form offers (every setting but `header`, which the range section sets). */
export const FORM_SETTING_NAMES: readonly string[] = SETTING_NAMES.filter((name) => name !== "header");

function text(value: unknown): string {
  return typeof value === "string" ? value : "";
}

/**
 * Inputs read back from the workbook's settings: anything missing or of the wrong type falls
 * back to empty, unknown setting names are dropped (a newer or older pane may have saved them).
 */
export function restoreInputs(saved: unknown): PaneInputs {
  const inputs = emptyInputs();
  if (!saved || typeof saved !== "object") return inputs;
  const s = saved as Partial<Record<keyof PaneInputs, unknown>>;
  if (s.ranges && typeof s.ranges === "object") {
    const r = s.ranges as Partial<Record<keyof PaneRanges, unknown>>;
    inputs.ranges = { target: text(r.target), predictors: text(r.predictors), newRows: text(r.newRows), destination: text(r.destination) };
  }
  if (s.header === "yes" || s.header === "no" || s.header === "auto") inputs.header = s.header;
  inputs.mixes = text(s.mixes);
  if (s.settings && typeof s.settings === "object") {
    for (const [name, value] of Object.entries(s.settings as Record<string, unknown>)) {
      if (FORM_SETTING_NAMES.includes(name) && typeof value === "string" && value.trim() !== "") {
        if (name === "rule") {
          // Older panes saved "min" / "onese": read them as today's tokens; the lowest error is the default (empty).
          const rule = parseRule(value);
          if (rule === "one-se") inputs.settings[name] = rule;
          continue;
        }
        inputs.settings[name] = value;
      }
    }
  }
  return inputs;
}

// ---------------------------------------------------------------------------------------------
// Settings and mixes, as the cell functions read them

function messageOf(error: unknown): string {
  return error instanceof Error ? error.message : String(error);
}

/** Settings the cells accept only beside another one: the field's own value is checked with it. */
const SETTING_CONTEXT: Readonly<Record<string, string>> = {
  draws: "stability=yes",
  q: "stability=yes",
  "stability threshold": "stability=yes",
};

/**
 * Why one setting's value can't be used, or null when it can (or is empty: the default).
 * The value is checked exactly as the cells will receive it: as `name=value` inside the
 * settings text, read by the cell functions' own parser.
 */
export function settingProblem(name: string, value: string): string | null {
  const v = value.trim();
  if (v === "") return null;
  if (/[;\r\n]/.test(v)) return `'${name}' can't contain ';' or a line break: separate items with commas`;
  if (v.includes("=")) return `'${name}' can't contain '=': write just the value`;
  // A setting that only works beside another is checked with it (the pairing itself is checked
  // with all the settings together: checkSettings' overall message).
  const context = SETTING_CONTEXT[name] !== undefined && SETTING_NAMES.includes(SETTING_CONTEXT[name].split("=")[0]) ? `${SETTING_CONTEXT[name]}; ` : "";
  try {
    parseSettings(`${context}${name}=${v}`);
    return null;
  } catch (error) {
    return messageOf(error);
  }
}

/** Why the mixes can't be used, or null ("" is fine: the default mixes). */
export function mixesProblem(mixes: string): string | null {
  if (mixes.includes('"')) return "mixes can't contain quotation marks: give numbers like 0, 0.5, 1";
  try {
    parseMixes(mixes.trim() === "" ? null : mixes);
    return null;
  } catch (error) {
    return messageOf(error);
  }
}

/** The settings that differ from the defaults, as `name=value` items in SETTING_NAMES order. */
export function settingItems(inputs: PaneInputs): string[] {
  const items: string[] = [];
  for (const name of SETTING_NAMES) {
    if (name === "header") {
      if (inputs.header !== "auto") items.push(`header=${inputs.header}`);
      continue;
    }
    const value = (inputs.settings[name] ?? "").trim();
    if (value !== "") items.push(`${name}=${value}`);
  }
  return items;
}

/** The settings text the cells receive ("" when everything is default): `folds=5; rule=one-se`. */
export function settingsText(inputs: PaneInputs): string {
  return settingItems(inputs).join("; ");
}

/** The mixes text the cells receive ("" for the default mixes), tidied: `0, 0.5, 1`. */
export function mixesText(inputs: PaneInputs): string {
  return inputs.mixes
    .split(/[,;\s]+/)
    .filter((part) => part !== "")
    .join(", ");
}

/**
 * The mixes and settings as name/value pairs for the report sheet (numbers as numbers):
 * [{ name: "mixes", value: "0, 1" }, { name: "folds", value: 5 }, …]; empty when all are default.
 */
export function settingPairs(inputs: PaneInputs): { name: string; value: string | number }[] {
  const pairs: { name: string; value: string | number }[] = [];
  const mixes = mixesText(inputs);
  if (mixes !== "") pairs.push({ name: "mixes", value: /^[^,]+$/.test(mixes) && Number.isFinite(Number(mixes)) ? Number(mixes) : mixes });
  for (const item of settingItems(inputs)) {
    const at = item.indexOf("=");
    const name = item.slice(0, at);
    const value = item.slice(at + 1);
    pairs.push({ name, value: /^[+-]?(\d+\.?\d*|\.\d+)([eE][+-]?\d+)?$/.test(value) ? Number(value) : value });
  }
  return pairs;
}

/** Every problem with the settings and mixes: per field, then the whole (e.g. two settings that clash). */
export interface SettingsCheck {
  fields: Record<string, string>;
  mixes: string | null;
  /** A problem of the settings taken together, when every field is fine on its own. */
  overall: string | null;
  ok: boolean;
}

/**
 * Checks every field, then the settings together. With `outcome` (the target's kind, when the
 * pane has read it: detectOutcome) the settings of the other kind of target are refused as the
 * cells will refuse them: an error measure of the other kind (the engine's checkMeasure words),
 * and event, cutoff or predict on a number target.
 */
export function checkSettings(inputs: PaneInputs, outcome: OutcomeKind | null = null): SettingsCheck {
  const fields: Record<string, string> = {};
  for (const name of FORM_SETTING_NAMES) {
    const problem = settingProblem(name, inputs.settings[name] ?? "");
    if (problem) fields[name] = problem;
  }
  if (outcome !== null) {
    for (const [name, problem] of Object.entries(outcomeProblems(inputs, outcome))) fields[name] ??= problem;
  }
  const mixes = mixesProblem(inputs.mixes);
  let overall: string | null = null;
  if (Object.keys(fields).length === 0) {
    try {
      parseSettings(settingsText(inputs) || null);
      const strength = (inputs.settings.strength ?? "").trim();
      if (strength !== "" && mixes === null) {
        const list = parseMixes(mixesText(inputs) || null);
        if (!list || list.length !== 1) {
          overall = "a fixed strength is fitted at one mix: type a single mix (0 ridge … 1 lasso) under Mixes to try";
        }
      }
    } catch (error) {
      overall = messageOf(error);
    }
  }
  return { fields, mixes, overall, ok: Object.keys(fields).length === 0 && mixes === null && overall === null };
}

/** The settings a yes/no target alone uses (the cells refuse them on a number target). */
export const TWO_CLASS_SETTINGS: readonly string[] = ["event", "cutoff", "predict"];

/** The interval field's message for a yes/no target. */
export const INTERVAL_TWO_CLASS =
  "prediction intervals are for number targets, and this target reads as yes/no (its model gives probabilities): clear the interval level";

/** Per field, why a setting doesn't fit a target of this kind (see checkSettings). */
export function outcomeProblems(inputs: PaneInputs, outcome: OutcomeKind): Record<string, string> {
  const problems: Record<string, string> = {};
  let settings: Settings;
  try {
    settings = parseSettings(settingsText(inputs) || null);
  } catch {
    return problems; // the fields' own messages say what is wrong first
  }
  try {
    checkMeasure(settings.measure, outcome);
  } catch (error) {
    problems.error = messageOf(error);
  }
  if (outcome === "two-class" && (inputs.settings.interval ?? "").trim() !== "") {
    problems.interval = INTERVAL_TWO_CLASS;
  }
  if (outcome === "number") {
    for (const name of TWO_CLASS_SETTINGS) {
      if ((inputs.settings[name] ?? "").trim() !== "") problems[name] = `'${name}' applies to a yes/no target, and this target reads as numbers: clear it, or choose a target with two classes`;
    }
  }
  return problems;
}

/** The error measures offered for a target of this kind, default first (engine/fit.ts MEASURES); both kinds' when it isn't known. */
export function measureChoices(outcome: OutcomeKind | null): readonly ErrorMeasure[] {
  return outcome === null ? MEASURES.number : MEASURES[outcome];
}

/** How the target reads (the cells' rules: functions/dataset.ts buildDataset with the pane's settings). */
export type OutcomeDetection =
  | {
      ok: true;
      kind: OutcomeKind;
      /** Rows the fit would use. */
      rows: number;
      /** Yes/no targets: the event as set (or the default one), the other class, and their rows. */
      classes: { event: string; other: string; eventCount: number; otherCount: number } | null;
      /** The event readOutcome picks when none is named, and both labels (for the event choice). */
      defaultEvent: string | null;
      labels: string[];
      /** The line shown under the target picker. */
      line: string;
    }
  | { ok: false; message: string; line: string };

/**
 * Reads the target as the cells will (header detection, blanks, the `outcome`, `event`, `header`,
 * `zero is missing`, `weights column` and `fold column` settings): its kind, its classes, and
 * the line for under the target picker. Never throws: a target the cells would refuse gives
 * their message. Settings that don't parse are left out (their fields show why).
 */
export function detectOutcome(target: unknown[][], predictors: unknown[][], inputs: PaneInputs): OutcomeDetection {
  let settings: Settings;
  try {
    settings = parseSettings(settingsText(inputs) || null);
  } catch {
    settings = { ...defaultSettings(), header: inputs.header };
  }
  const messageLine = (message: string): OutcomeDetection => ({ ok: false, message, line: `The target can't be read yet: ${message}` });
  try {
    // Read once without the event: the default event and both labels, whatever the user named.
    const dataset = buildDataset(target, predictors, { ...settings, event: null });
    if (dataset.outcome === "number" || !dataset.classes) {
      return { ok: true, kind: "number", rows: dataset.rowsUsed, classes: null, defaultEvent: null, labels: [], line: outcomeLine("number", null, dataset.rowsUsed) };
    }
    const read = dataset.classes;
    let classes = { event: read.event, other: read.other, eventCount: read.eventCount, otherCount: read.otherCount };
    const named = settings.event?.trim().toLowerCase() ?? "";
    if (named !== "") {
      if (named === read.other.toLowerCase()) classes = { event: read.other, other: read.event, eventCount: read.otherCount, otherCount: read.eventCount };
      else if (named !== read.event.toLowerCase()) {
        // Not one of the two: the cells' own message.
        buildDataset(target, predictors, settings);
      }
    }
    return {
      ok: true,
      kind: "two-class",
      rows: dataset.rowsUsed,
      classes,
      defaultEvent: read.event,
      labels: [read.event, read.other],
      line: outcomeLine("two-class", classes, dataset.rowsUsed),
    };
  } catch (error) {
    return messageLine(messageOf(error));
  }
}

/** The chosen point's cross-validated measure for the results summary: "CV AUC 0.843 ± 0.021 (higher is better)". */
export function measureSummary(measure: ErrorMeasure, errorText: string): string {
  return higherIsBetter(measure) ? `CV ${measureName(measure)} ${errorText} (higher is better)` : `CV ${measureName(measure)} ${errorText}`;
}

/** Column names for the weights and fold column choices: the header row's texts, or x1, x2, … */
export function columnNames(firstRow: readonly unknown[] | undefined, header: HeaderChoice): string[] {
  if (!firstRow || firstRow.length === 0) return [];
  // As the cell functions name columns: texts in Unicode NFC; numbers (years) when the header is said to be there.
  const texts = firstRow.map((cell) =>
    typeof cell === "string" ? cell.trim().normalize("NFC") : typeof cell === "number" && header === "yes" && Number.isFinite(cell) ? String(cell) : "",
  );
  const allText = texts.every((t) => t !== "" && !/^#[A-Z0-9/!?]+$/i.test(t));
  if (header !== "no" && allText) return texts;
  return firstRow.map((_, j) => `x${j + 1}`);
}


// ---------------------------------------------------------------------------------------------
// The fit

/** What a finished fit leaves: the result, the request it answered, and the inputs it used. */
export interface FitOutcome {
  result: FitResult;
  prepared: Prepared;
  /** The inputs the fit used (a copy), for the formulas and the report. */
  inputs: PaneInputs;
  /** Raw values read from the sheet for the fit (target, predictors, new rows or null). */
  values: { target: unknown[][]; predictors: unknown[][]; newRows: unknown[][] | null };
  /** Milliseconds the fit took, as the user waited for it. */
  elapsedMs: number;
}

/**
 * What any finished fit leaves: its result and how long it took. The worksheet route's outcome is
 * a FitOutcome; the routes that fit from sums (taskpane/sources/) keep their own, and share the
 * state machine below through its type parameter.
 */
export interface AnyOutcome {
  result: FitResult;
  elapsedMs: number;
}

export type FitState<O extends AnyOutcome = FitOutcome> =
  | { phase: "idle" }
  | { phase: "fitting"; run: number; done: number; total: number; changed: boolean; previous: O | null }
  | { phase: "done"; run: number; outcome: O }
  | { phase: "stale"; run: number; outcome: O }
  | { phase: "cancelled"; run: number; previous: O | null }
  | { phase: "failed"; run: number; message: string; previous: O | null };

export type FitEvent<O extends AnyOutcome = FitOutcome> =
  | { type: "start"; run: number }
  | { type: "progress"; run: number; done: number; total: number }
  | { type: "succeeded"; run: number; outcome: O }
  | { type: "failed"; run: number; message: string }
  | { type: "cancelled"; run: number }
  | { type: "inputsChanged" };

export const IDLE: { phase: "idle" } = { phase: "idle" };

function runOf<O extends AnyOutcome>(state: FitState<O>): number | null {
  return state.phase === "idle" ? null : state.run;
}

/** The last successful outcome the state still shows (results stay on screen under a banner). */
export function shownOutcome<O extends AnyOutcome = FitOutcome>(state: FitState<O>): O | null {
  switch (state.phase) {
    case "done":
    case "stale":
      return state.outcome;
    case "fitting":
    case "cancelled":
    case "failed":
      return state.previous;
    default:
      return null;
  }
}

export function reduceFit<O extends AnyOutcome = FitOutcome>(state: FitState<O>, event: FitEvent<O>): FitState<O> {
  if (event.type === "start") {
    return { phase: "fitting", run: event.run, done: 0, total: 0, changed: false, previous: shownOutcome(state) };
  }
  if (event.type === "inputsChanged") {
    if (state.phase === "done") return { phase: "stale", run: state.run, outcome: state.outcome };
    if (state.phase === "fitting") return { ...state, changed: true };
    return state;
  }
  // The rest belong to a run: only the current run's events count.
  if (state.phase !== "fitting" || runOf(state) !== event.run) return state;
  switch (event.type) {
    case "progress":
      return { ...state, done: Math.max(0, event.done), total: Math.max(0, event.total) };
    case "succeeded":
      return state.changed ? { phase: "stale", run: state.run, outcome: event.outcome } : { phase: "done", run: state.run, outcome: event.outcome };
    case "failed":
      return { phase: "failed", run: state.run, message: event.message, previous: state.previous };
    case "cancelled":
      return { phase: "cancelled", run: state.run, previous: state.previous };
  }
}

/** The fit's progress as words: "12 of 55 fits done" (each mix on each fold, plus the full data). */
export function progressText(done: number, total: number): string {
  if (total <= 0) return "Starting the fit…";
  return `${Math.min(done, total)} of ${total} fits done`;
}

/** A number as the pane shows it: integers as they are, others to 6 significant digits. */
export function formatNumber(x: number): string {
  if (!Number.isFinite(x)) return String(x);
  if (Number.isInteger(x)) return String(x);
  const magnitude = Math.abs(x);
  if (magnitude < 1e-4 || magnitude >= 1e9) return x.toExponential(3);
  return String(Number(x.toPrecision(6)));
}

function mixName(mix: number): string {
  if (mix === 0) return "ridge (mix 0)";
  if (mix === 1) return "lasso (mix 1)";
  return `elastic net (mix ${formatNumber(mix)})`;
}

/** One sentence for the status region; `ready` = target and predictors are chosen. */
export function fitStatusText<O extends AnyOutcome = FitOutcome>(state: FitState<O>, ready = false): string {
  switch (state.phase) {
    case "idle":
      return ready ? "Ready: press Fit." : "Choose the target and predictors, then press Fit.";
    case "fitting": {
      // In quarters: the live region speaks at most four times a fit (the bar shows the count).
      const quarter = state.total > 0 ? Math.min(4, Math.floor((4 * state.done) / state.total)) : 0;
      return ["Fitting…", "Fitting: a quarter done.", "Fitting: half done.", "Fitting: three quarters done.", "Fitting: finishing."][quarter];
    }
    case "done": {
      const r = state.outcome.result;
      const termsKept = r.coefficients.filter((b) => b !== 0).length;
      return `Fitted ${mixName(r.mix)} at strength ${formatNumber(r.strength)}: ${termsKept} of ${r.terms.length} terms kept, ${r.rowsUsed} rows used (${(state.outcome.elapsedMs / 1000).toFixed(1)} s).`;
    }
    case "stale":
      return "Inputs changed since the last fit: fit again to update the results.";
    case "cancelled":
      return "Fit cancelled. Press Fit to run it again.";
    case "failed":
      return `The fit could not run: ${state.message}`;
  }
}
