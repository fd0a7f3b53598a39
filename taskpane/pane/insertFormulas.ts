/**
 * "Put formulas on the sheet": the SHRINK formulas over the chosen ranges, where each goes, and
 * which cells they would cover. Pure planning (formula text, placement, spill areas) plus one
 * host call (`findFilledCells`) that asks which of those cells already hold something; the pane
 * writes nothing until the user has seen that list and chosen Overwrite.
 *
 * Layout from the chosen cell: SHRINK.COEFS, one blank column, SHRINK.CHOICE, one blank column,
 * SHRINK.PREDICT (only when new rows are chosen). Each formula's area is the array it spills,
 * sized from the spill functions' own output on the fitted result:
 *   COEFS   = (header + intercept + terms, reference levels included) rows × 2 columns
 *   CHOICE  = its label rows × 2 columns
 *   PREDICT = the rows of new_rows × 1 column
 */
import { choiceSpill, coefficientSpill } from "../../functions/spill";
import { formatAddress, parseAddress, rangeOf, spillArea } from "../host/address";
import type { SheetHost } from "../host/sheetHost";
import { mixesText, settingsText, type FitOutcome, type PaneInputs } from "./paneState";

export type FormulaId = "COEFS" | "CHOICE" | "PREDICT";

// ---------------------------------------------------------------------------------------------
// Formula text

/** Text as an Excel string literal: in double quotes, inner quotes doubled. */
export function excelString(text: string): string {
  return `"${text.replace(/"/g, '""')}"`;
}

/** `, mixes, settings` as the optional arguments: left out when default, an empty argument when only settings are set. */
function optionalArguments(inputs: PaneInputs): string {
  const mixes = mixesText(inputs);
  const settings = settingsText(inputs);
  if (settings !== "") return `, ${mixes !== "" ? excelString(mixes) : ""}, ${excelString(settings)}`;
  if (mixes !== "") return `, ${excelString(mixes)}`;
  return "";
}

/**
 * The formula for one function over the chosen ranges, e.g.
 * `=SHRINK.COEFS('Roast log'!M1:M121, 'Roast log'!B1:L121, , "folds=5")`.
 * Throws when a range it needs is not chosen.
 */
export function formulaText(id: FormulaId, inputs: PaneInputs): string {
  const { target, predictors, newRows } = inputs.ranges;
  if (!target || !predictors) throw new Error("choose the target and the predictors first");
  const tail = optionalArguments(inputs);
  if (id === "PREDICT") {
    if (!newRows) throw new Error("choose the new rows first");
    return `=SHRINK.PREDICT(${target}, ${predictors}, ${newRows}${tail})`;
  }
  return `=SHRINK.${id}(${target}, ${predictors}${tail})`;
}

// ---------------------------------------------------------------------------------------------
// Placement

export interface SpillShape {
  id: FormulaId;
  rows: number;
  columns: number;
}

export interface Placement extends SpillShape {
  formula: string;
  /** The cell the formula goes in. */
  anchor: string;
  /** The cells its result covers (anchor included). */
  area: string;
}

/** The functions to insert: COEFS and CHOICE, and PREDICT when new rows are chosen. */
export function formulaIds(inputs: PaneInputs): FormulaId[] {
  return inputs.ranges.newRows ? ["COEFS", "CHOICE", "PREDICT"] : ["COEFS", "CHOICE"];
}

/** Spill sizes from the spill functions' own output on the fitted result. */
export function spillShapes(outcome: FitOutcome, ids: readonly FormulaId[]): SpillShape[] {
  const { result, prepared, values } = outcome;
  return ids.map((id) => {
    if (id === "COEFS") {
      const spill = coefficientSpill(result, prepared.dataset);
      return { id, rows: spill.length, columns: spill[0]?.length ?? 2 };
    }
    if (id === "CHOICE") {
      const spill = choiceSpill(result, prepared.dataset);
      return { id, rows: spill.length, columns: spill[0]?.length ?? 2 };
    }
    // One prediction per row of new_rows (a header row gives a "prediction" header).
    return { id, rows: Math.max(1, values.newRows?.length ?? 1), columns: 1 };
  });
}

/**
 * Side by side from `destination`'s top-left cell, one blank column between. Throws (with a
 * message for the user) on an unreadable address or when a result would run off the sheet.
 */
export function planPlacements(destination: string, shapes: readonly SpillShape[], inputs: PaneInputs): Placement[] {
  const start = parseAddress(destination);
  const placements: Placement[] = [];
  let column = start.left;
  for (const shape of shapes) {
    const anchor = rangeOf(start.sheet, start.top, column);
    placements.push({
      ...shape,
      formula: formulaText(shape.id, inputs),
      anchor: formatAddress(anchor),
      area: formatAddress(spillArea(anchor, shape.rows, shape.columns)),
    });
    column += shape.columns + 1;
  }
  return placements;
}

/** The filled cells inside one placement's area. */
export interface FilledArea {
  id: FormulaId;
  area: string;
  /** Cells of the area that hold something (as the host names them). */
  cells: string[];
  /** How many cells the area has. */
  size: number;
}

/** The placements whose areas hold something already (none: safe to write). */
export async function findFilledCells(host: SheetHost, placements: readonly Placement[]): Promise<FilledArea[]> {
  const filled: FilledArea[] = [];
  for (const placement of placements) {
    const cells = await host.filledCells(placement.area);
    if (cells.length > 0) filled.push({ id: placement.id, area: placement.area, cells, size: placement.rows * placement.columns });
  }
  return filled;
}

/** One line per area for the confirmation panel: "SHRINK.COEFS over O1:P15: all 30 cells are in use". */
export function filledLines(filled: readonly FilledArea[], limit = 12): string[] {
  return filled.map((f) => {
    const what = f.cells.length === f.size ? `all ${f.size} cells are in use` : `${listCells(f.cells, limit)} ${f.cells.length === 1 ? "is" : "are"} in use`;
    return `SHRINK.${f.id} over ${f.area}: ${what}`;
  });
}

/** Writes every formula at its anchor. */
export async function writePlacements(host: SheetHost, placements: readonly Placement[]): Promise<void> {
  for (const placement of placements) await host.writeFormulas(placement.anchor, [[placement.formula]]);
}

/** "A1, A2, A3 and 12 more" for the confirmation panel. */
export function listCells(cells: readonly string[], limit = 12): string {
  if (cells.length <= limit) return cells.join(", ");
  return `${cells.slice(0, limit).join(", ")} and ${cells.length - limit} more`;
}
