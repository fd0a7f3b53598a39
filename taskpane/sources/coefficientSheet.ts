/**
 * The coefficient table of a fit from sums (a file or a sums table), written into the sheet as
 * values: the layout SHRINK.APPLY reads (functions/dataset.ts readCoefficientTable), the same
 * header and intercept row SHRINK.COEFS spills:
 *
 *   term        | coefficient
 *   intercept   | b0
 *   roast_temp  | b1
 *   origin: Kenya | b2        (a text column's level, as the sums generator names it)
 *
 * Values, not a formula: the model came from data outside the workbook, so there is nothing for
 * Excel to recompute. `=SHRINK.APPLY(<this table>, <new rows with a header row>)` predicts.
 * Nothing is written when a number can't be shown (NaN, ±∞) or a term would read as a formula,
 * and the pane asks before overwriting a cell that holds something (`planCoefficientWrite`).
 */
import type { FitResult } from "../../engine/fit";
import { INTERCEPT_LABEL } from "../../engine/words";
import { formatAddress, parseAddress, spillArea } from "../host/address";
import type { CellValue, SheetHost } from "../host/sheetHost";

/** The header SHRINK.COEFS uses for a number target (functions/spill.ts coefficientSpill). */
export const COEFFICIENT_HEADER = ["term", "coefficient"] as const;

/** The table's rows: header, intercept, one row per term in the result's order. Throws (one line) when it can't be written as values. */
export function coefficientValues(result: Pick<FitResult, "terms" | "coefficients" | "intercept">): CellValue[][] {
  const rows: CellValue[][] = [[...COEFFICIENT_HEADER], [INTERCEPT_LABEL, result.intercept]];
  result.terms.forEach((term, t) => rows.push([term, result.coefficients[t]]));
  for (const [term, value] of rows.slice(1)) {
    if (typeof value === "number" && !Number.isFinite(value)) {
      throw new Error(`the coefficient of '${String(term)}' is ${String(value)}, which a cell can't hold: nothing was written (fit again with a larger strength)`);
    }
    if (typeof term === "string" && /^[=+\-@]/.test(term)) {
      throw new Error(`the term '${term}' would read as a formula in a cell: nothing was written (rename the column in the file)`);
    }
  }
  return rows;
}

/** Where the table goes: its area from the top-left cell `anchor`. */
export interface CoefficientWrite {
  anchor: string;
  /** The whole area, with its sheet: `Data!O1:P14`. */
  area: string;
  values: CellValue[][];
}

/** The area `values` covers from `anchor`'s top-left cell. Throws when it runs past the sheet's edge. */
export function planCoefficientWrite(anchor: string, values: CellValue[][]): CoefficientWrite {
  const start = parseAddress(anchor);
  const area = spillArea(start, values.length, values[0]?.length ?? 0);
  return { anchor: formatAddress({ ...area, bottom: area.top, right: area.left }), area: formatAddress(area), values };
}

/** Cells of the area that hold something now (empty: safe to write without asking). */
export async function filledInArea(host: SheetHost, plan: CoefficientWrite): Promise<string[]> {
  return host.filledCells(plan.area);
}

/** Writes the table (after the pane has asked, when cells were in use). */
export async function writeCoefficients(host: SheetHost, plan: CoefficientWrite): Promise<void> {
  await host.writeValues(plan.area, plan.values);
}

/** The formula that predicts from the written table, for the status line: =SHRINK.APPLY(Data!O1:P14, new rows). */
export function applyFormula(plan: CoefficientWrite, newRows = "new rows"): string {
  return `=SHRINK.APPLY(${plan.area}, ${newRows})`;
}
