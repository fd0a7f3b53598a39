/**
 * How text that looks like a number is read: the one convention shared by the cell functions
 * (numbers stored as text in a worksheet) and the command line (cells of a CSV file).
 *
 * ## The convention (fixed, whatever the workbook's or the machine's locale)
 *
 * A text is a number when, after removing surrounding spaces (any Unicode space, including the
 * no-break space a web page leaves behind), it is
 * - an optional sign `+` or `-`;
 * - digits with an optional `.` decimal part (`12`, `-0.5`, `.5`, `3.`), and an optional
 *   exponent (`1e-3`, `2.5E+4`); or
 * - digits grouped in threes by `,` with an optional `.` decimal part (`1,234`, `-12,345.67`);
 *   no exponent with grouping.
 * Nothing else is a number: no currency signs, no `%`, no parentheses for negatives, no `Infinity`,
 * no hexadecimal.
 *
 * Locale: a custom function can't see which decimal separator the workbook's user has, and a
 * text such as `1,234` means 1234 in one convention and 1.234 in another. Shrinkwise reads
 * `.` as the decimal point and `,` as the thousands separator everywhere (the convention of
 * CSV files and of the numbers the functions return), and says so: the note that reports a column
 * read from text shows how a grouped value was read ("'1,234' is 1234"). Texts that only make
 * sense in another convention (`0,5`, `1.234,5`, `1.234.567`, `12 345`, `1'234`) are never
 * numbers and never silently become text levels: they are reported as "foreign" so the caller
 * can say "a decimal comma?".
 *
 * Dates written as text (`2024-02-01`, `2024/2/1`, `01/02/2024`, `1.2.2024`, `1 Feb 2024`,
 * `Feb 1, 2024`, ISO date-times) are reported as "date": their day/month order is ambiguous
 * and a worksheet date is a serial number, so callers ask for real dates instead of guessing.
 *
 * Cost O(length of the text).
 */

export type NumberTextReading =
  /** A number in the convention above; `grouped` when it used `,` thousands separators. */
  | { kind: "number"; value: number; grouped: boolean }
  /** Written like a number but too large for a double (`1e400`). */
  | { kind: "too-large" }
  /** Looks like a number in another convention (decimal comma, `.` or space thousands). */
  | { kind: "foreign" }
  /** Looks like a date written as text. */
  | { kind: "date" }
  /** Any other text. */
  | { kind: "text" };

const PLAIN = /^[+-]?(\d+\.?\d*|\.\d+)([eE][+-]?\d+)?$/;
const GROUPED = /^[+-]?\d{1,3}(,\d{3})+(\.\d+)?$/;
const FOREIGN = [
  /^[+-]?\d+,\d+([eE][+-]?\d+)?$/, // 0,5   12,75   1,5e3 (a decimal comma)
  /^[+-]?\d{1,3}(\.\d{3})+,\d+$/, // 1.234,5
  /^[+-]?\d{1,3}(\.\d{3}){2,}$/, // 1.234.567
  /^[+-]?\d{1,3}([ \u00a0\u202f']\d{3})+([.,]\d+)?$/, // 12 345   1'234.5
];
const MONTH = "(jan|feb|mar|apr|may|jun|jul|aug|sep|sept|oct|nov|dec)[a-z]*\\.?";
const DATE = [
  /^\d{4}-\d{1,2}-\d{1,2}([T ]\d{1,2}:\d{2}(:\d{2}(\.\d+)?)?(Z|[+-]\d{2}:?\d{2})?)?$/, // 2024-02-01, 2024-02-01T10:30
  /^\d{4}\/\d{1,2}\/\d{1,2}$/, // 2024/2/1
  /^\d{1,2}[/.-]\d{1,2}[/.-](\d{2}|\d{4})$/, // 01/02/2024, 1.2.2024, 1-2-24
  new RegExp(`^\\d{1,2}[ -]${MONTH}[ ,-]*(\\d{2}|\\d{4})$`, "i"), // 1 Feb 2024, 01-feb-24
  new RegExp(`^${MONTH} \\d{1,2},? \\d{4}$`, "i"), // Feb 1, 2024
];

/**
 * Reads one text under the convention above.
 * Examples: " 12 " → number 12; "1,234.5" → number 1234.5 (grouped); "0,5" → foreign;
 * "2024-02-01" → date; "North" → text.
 */
export function readNumberText(text: string): NumberTextReading {
  const trimmed = text.trim();
  if (trimmed === "") return { kind: "text" };
  const grouped = GROUPED.test(trimmed);
  if (grouped || PLAIN.test(trimmed)) {
    const value = Number(grouped ? trimmed.replace(/,/g, "") : trimmed);
    return Number.isFinite(value) ? { kind: "number", value, grouped } : { kind: "too-large" };
  }
  if (FOREIGN.some((pattern) => pattern.test(trimmed))) return { kind: "foreign" };
  if (DATE.some((pattern) => pattern.test(trimmed))) return { kind: "date" };
  return { kind: "text" };
}

/** The number a text stands for under the convention above, or null. */
export function numberFromText(text: string): number | null {
  const reading = readNumberText(text);
  return reading.kind === "number" ? reading.value : null;
}

/**
 * A short parenthesized hint about a text that is not a usable number but looks like one
 * (" (a number stored as text?)", " (a decimal comma? …)", " (a date stored as text? …)"),
 * or "" for ordinary text. `source` says where the text came from: a worksheet cell (dates can
 * become real dates there) or a delimited file (the command line reads numbers only).
 */
export function numberTextHint(text: string, source: "sheet" | "file" = "sheet"): string {
  switch (readNumberText(text).kind) {
    case "number":
      return " (a number stored as text?)";
    case "too-large":
      return " (a number too large to use)";
    case "foreign":
      return " (a decimal comma or another digit grouping? numbers are read with '.' as the decimal point and ',' between groups of three digits)";
    case "date":
      return source === "sheet"
        ? " (a date stored as text? convert it to a real date, which is a number to Excel)"
        : " (a date? the command line reads numbers only: write dates as numbers, such as days since a start date)";
    default:
      return "";
  }
}
