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
