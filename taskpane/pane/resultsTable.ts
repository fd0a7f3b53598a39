/**
 * The coefficient table of the pane: term, coefficient in the data's own units, and the
 * standardized coefficient (per unit of spread, so terms can be compared), the intercept first,
 * then the terms by size of effect (largest standardized magnitude first). Terms the penalty set
 * to zero are kept, muted, at the end. "Copy" puts the table on the clipboard as tab-separated
 * text (full precision), ready to paste into a sheet.
 *
 * A yes/no (two-class) fit's coefficients are log-odds of the event: the table then reads term,
 * log-odds, odds ratio (e^log-odds: what the odds of the event are multiplied by per unit of the
 * predictor) and log-odds per SD, and so does the copied text.
 */
import type { FitResult } from "../../engine/fit";
import { INTERCEPT_LABEL } from "../../engine/words";
import { oddsRatio } from "../outcomeWords";
import { formatNumber } from "./paneState";

export interface CoefficientRow {
  term: string;
  coefficient: number;
  /** Null for the intercept. */
  standardized: number | null;
  zero: boolean;
  /** Yes/no fits only: e^coefficient (null for the intercept). Absent for a number fit. */
  oddsRatio?: number | null;
}

/** Rows in display order: intercept, then by |standardized| (ties by |coefficient|, then by name order). */
export function coefficientRows(result: FitResult): CoefficientRow[] {
  const terms = result.terms.map((term, j) => ({
    term,
    coefficient: result.coefficients[j],
    standardized: result.standardizedCoefficients[j] ?? 0,
    zero: result.coefficients[j] === 0,
    order: j,
  }));
  terms.sort(
    (a, b) =>
      Math.abs(b.standardized) - Math.abs(a.standardized) || Math.abs(b.coefficient) - Math.abs(a.coefficient) || a.order - b.order,
  );
  const twoClass = result.outcome === "two-class";
  const rows: CoefficientRow[] = [{ term: INTERCEPT_LABEL, coefficient: result.intercept, standardized: null, zero: result.intercept === 0 }];
  if (twoClass) rows[0].oddsRatio = null;
  for (const t of terms) {
    const row: CoefficientRow = { term: t.term, coefficient: t.coefficient, standardized: t.standardized, zero: t.zero };
    if (twoClass) row.oddsRatio = oddsRatio(t.coefficient);
    rows.push(row);
  }
  return rows;
}

export const TABLE_HEADER = ["term", "coefficient", "standardized coefficient"] as const;
/** The header of a yes/no fit's table. */
export const TWO_CLASS_TABLE_HEADER = ["term", "log-odds", "odds ratio", "log-odds per SD"] as const;

function isTwoClass(rows: readonly CoefficientRow[]): boolean {
  return rows.some((row) => row.oddsRatio !== undefined);
}

/** Tab-separated text with a header line; numbers at full precision, no standardized value (or odds ratio) for the intercept. */
export function coefficientTsv(rows: readonly CoefficientRow[]): string {
  const twoClass = isTwoClass(rows);
  const lines = [(twoClass ? TWO_CLASS_TABLE_HEADER : TABLE_HEADER).join("\t")];
  const text = (value: number | null | undefined): string => (value === null || value === undefined ? "" : String(value));
  for (const row of rows) {
    lines.push((twoClass ? [row.term, String(row.coefficient), text(row.oddsRatio), text(row.standardized)] : [row.term, String(row.coefficient), text(row.standardized)]).join("\t"));
  }
  return lines.join("\n");
}

// ---------------------------------------------------------------------------------------------
// DOM

function cell(tag: "td" | "th", text: string, className?: string): HTMLTableCellElement {
  const node = document.createElement(tag);
  node.textContent = text;
  if (className) node.className = className;
  return node;
}

/** The table element (caption, header, one row per term); rows of zero terms carry class "zero". */
export function renderCoefficientTable(result: FitResult, caption: string): HTMLTableElement {
  const table = document.createElement("table");
  table.className = "coefs";
  table.dataset.testid = "results-table";
  const cap = document.createElement("caption");
  cap.textContent = caption;
  table.append(cap);
  const rows = coefficientRows(result);
  const twoClass = isTwoClass(rows);
  const head = document.createElement("thead");
  const hr = document.createElement("tr");
  for (const name of twoClass ? TWO_CLASS_TABLE_HEADER : TABLE_HEADER) {
    const th = cell("th", name);
    th.scope = "col";
    hr.append(th);
  }
  head.append(hr);
  const body = document.createElement("tbody");
  for (const row of rows) {
    const tr = document.createElement("tr");
    if (row.zero && row.standardized !== null) tr.className = "zero";
    const th = cell("th", row.term);
    th.scope = "row";
    tr.append(th);
    tr.append(cell("td", formatNumber(row.coefficient), "num"));
    if (twoClass) tr.append(cell("td", row.oddsRatio === null || row.oddsRatio === undefined ? "—" : formatNumber(row.oddsRatio), "num"));
    tr.append(cell("td", row.standardized === null ? "—" : formatNumber(row.standardized), "num"));
    if (row.zero && row.standardized !== null) {
      // Said in words too, not by colour alone.
      const note = document.createElement("span");
      note.className = "visually-hidden";
      note.textContent = " (set to zero)";
      th.append(note);
    }
    body.append(tr);
  }
  table.append(head, body);
  return table;
}

/**
 * Copies `text` to the clipboard where the browser allows it; otherwise selects `fallback`'s
 * text so Ctrl+C copies it. Resolves to what happened, for the status line.
 */
export async function copyText(text: string, fallback: HTMLElement): Promise<"copied" | "selected"> {
  const clipboard = typeof navigator !== "undefined" ? navigator.clipboard : undefined;
  if (clipboard && typeof clipboard.writeText === "function") {
    try {
      await clipboard.writeText(text);
      return "copied";
    } catch {
      // Blocked (no permission, or the page lacks focus): fall back to selecting.
    }
  }
  const selection = window.getSelection();
  if (selection) {
    const range = document.createRange();
    range.selectNodeContents(fallback);
    selection.removeAllRanges();
    selection.addRange(range);
  }
  return "selected";
}
