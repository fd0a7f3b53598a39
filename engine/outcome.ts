/**
 * Which kind of outcome a target column holds, and which of two classes is the event.
 * Shared by the cell functions and the command line, so both read a target the same way.
 *
 * Rules (setting `outcome`):
 * - `auto` (default): two-class when the target has exactly two distinct values and they are
 *   TRUE/FALSE, 0/1, or two texts (yes/no, pass/fail, any two labels); anything else is a number.
 * - `two-class`: any two distinct values (more, or fewer, is an error that lists them).
 * - `number`: every value must be a number; two text labels are an error that says to use two-class.
 *
 * The event (setting `event`) is named by its label, matched ignoring case and surrounding spaces
 * (TRUE/FALSE as those words, numbers as written). Without it: TRUE, else 1, else the less frequent
 * of the two values; on a tie, the one first in alphabetical order (case-insensitive), and `note`
 * says so.
 */
import { InputError } from "./errors";

export type OutcomeKind = "number" | "two-class";
export type OutcomeSetting = "auto" | OutcomeKind;
/** One target cell's value, blanks already removed by the caller. */
export type OutcomeValue = number | string | boolean;

export type OutcomeReading =
  | { kind: "number"; values: Float64Array }
  | {
      kind: "two-class";
      /** 1 where the row is the event, else 0. */
      values: Float64Array;
      /** The event's label as shown (TRUE, 1, fail, …). */
      event: string;
      /** The other class's label. */
      other: string;
      /** Rows of each class. */
      eventCount: number;
      otherCount: number;
      /** Set when the event was picked by a tie-break, in words. */
      note: string | null;
    };

/** A value's label: TRUE/FALSE for booleans, numbers as JavaScript writes them, text trimmed. */
export function outcomeLabel(value: OutcomeValue): string {
  if (typeof value === "boolean") return value ? "TRUE" : "FALSE";
  if (typeof value === "number") return String(value);
  return value.trim();
}

function key(value: OutcomeValue): string {
  if (typeof value === "boolean") return `b:${value}`;
  if (typeof value === "number") return `n:${value}`;
  return `t:${value.trim().toLowerCase()}`;
}

/** Reads the outcome setting as typed (`auto`, `number`/`numeric`, `two-class`/`two class`/`yes/no`/`binary`), or null. */
export function parseOutcome(text: string): OutcomeSetting | null {
  const k = text.toLowerCase().replace(/[\s_/-]+/g, "");
  if (k === "auto" || k === "") return "auto";
  if (k === "number" || k === "numeric" || k === "numbers") return "number";
  if (k === "twoclass" || k === "twoclasses" || k === "yesno" || k === "binary") return "two-class";
  return null;
}

/**
 * True when the rules above make `values` a number outcome without looking further: every value
 * is a number and the setting is `number`, or it is `auto` and the distinct values are not exactly
 * 0 and 1. One pass and no text key per value (the general reading below keys every value, which
 * cost a 50,000-row worksheet target as much as the rest of its reading). Any other case (text,
 * booleans, 0/1 targets, `two-class`) is left to the general reading, which gives the same answer.
 */
function plainNumberOutcome(values: readonly OutcomeValue[], setting: OutcomeSetting): boolean {
  if (setting === "two-class") return false;
  let zero = false;
  let one = false;
  let other = false;
  for (let i = 0; i < values.length; i++) {
    const v = values[i];
    if (typeof v !== "number") return false;
    if (v === 0) zero = true;
    else if (v === 1) one = true;
    else other = true;
  }
  return setting === "number" || other || !(zero && one);
}

/**
 * Reads a target column (blanks removed) as a number outcome or a two-class one (see the file
 * comment). `name` is the target's name for messages. Throws InputError with what to fix.
 */
export function readOutcome(
  values: readonly OutcomeValue[],
  options: { outcome?: OutcomeSetting; event?: string | null; name?: string } = {},
): OutcomeReading {
  const setting = options.outcome ?? "auto";
  if (plainNumberOutcome(values, setting)) return { kind: "number", values: Float64Array.from(values as number[]) };
  const name = options.name ? `'${options.name}'` : "the target";
  const distinct = new Map<string, { value: OutcomeValue; count: number; first: number }>();
  for (let i = 0; i < values.length; i++) {
    const k = key(values[i]);
    const seen = distinct.get(k);
    if (seen) seen.count++;
    else distinct.set(k, { value: values[i], count: 1, first: i });
  }
  const kinds = [...distinct.values()];
  const allNumbers = values.every((v) => typeof v === "number");
  const shown = (limit: number): string =>
    kinds
      .slice(0, limit)
      .map((k) => `'${outcomeLabel(k.value)}'`)
      .join(", ") + (kinds.length > limit ? `, … (${kinds.length} in all)` : "");
  const twoLike =
    kinds.length === 2 &&
    (kinds.every((k) => typeof k.value === "boolean") ||
      kinds.every((k) => k.value === 0 || k.value === 1) ||
      kinds.every((k) => typeof k.value === "string"));
  if (setting === "number" || (setting === "auto" && !twoLike)) {
    if (!allNumbers) {
      const text = values.find((v) => typeof v !== "number") as OutcomeValue;
      if (kinds.length === 2 && kinds.every((k) => typeof k.value !== "number")) {
        throw new InputError(
          "setting",
          `${name} holds two labels (${shown(2)}), not numbers: it is a yes/no outcome; use outcome=two-class (or auto)`,
        );
      }
      throw new InputError(
        "setting",
        `${name} holds ${typeof text === "boolean" ? "TRUE/FALSE" : `text ('${outcomeLabel(text)}')`} among numbers: a number outcome needs numbers in every row${kinds.length === 2 ? "" : "; a yes/no outcome needs exactly two distinct values"}`,
      );
    }
    return { kind: "number", values: Float64Array.from(values as number[]) };
  }
  if (kinds.length < 2) {
    const only = kinds.length === 1 ? `'${outcomeLabel(kinds[0].value)}'` : "nothing";
    throw new InputError("constant-target", `${name} has only one class (${only}): a yes/no outcome needs rows of both classes`);
  }
  if (kinds.length > 2) {
    throw new InputError(
      "setting",
      `${name} has ${kinds.length} distinct values (${shown(4)}): a yes/no outcome needs exactly two; use outcome=number for a numeric target`,
    );
  }
  const [a, b] = kinds;
  let eventIndex: 0 | 1;
  let note: string | null = null;
  const wanted = options.event?.trim();
  if (wanted) {
    const match = kinds.findIndex((k) => outcomeLabel(k.value).toLowerCase() === wanted.toLowerCase());
    if (match < 0) {
      throw new InputError("setting", `event '${wanted}' is not one of ${name}'s two values (${shown(2)}): name one of them`);
    }
    eventIndex = match as 0 | 1;
  } else if (typeof a.value === "boolean") {
    eventIndex = a.value === true ? 0 : 1;
  } else if (typeof a.value === "number" && typeof b.value === "number" && (a.value === 1 || b.value === 1) && (a.value === 0 || b.value === 0)) {
    eventIndex = a.value === 1 ? 0 : 1;
  } else if (a.count !== b.count) {
    eventIndex = a.count < b.count ? 0 : 1;
  } else {
    const la = outcomeLabel(a.value).toLowerCase();
    const lb = outcomeLabel(b.value).toLowerCase();
    eventIndex = la <= lb ? 0 : 1;
    const chosen = outcomeLabel(kinds[eventIndex].value);
    note = `both classes have ${a.count} rows, so the event is '${chosen}' (first in alphabetical order); name another with event=…`;
  }
  const event = kinds[eventIndex];
  const other = kinds[1 - eventIndex];
  const eventKey = key(event.value);
  return {
    kind: "two-class",
    values: Float64Array.from(values, (v) => (key(v) === eventKey ? 1 : 0)),
    event: outcomeLabel(event.value),
    other: outcomeLabel(other.value),
    eventCount: event.count,
    otherCount: other.count,
    note,
  };
}
