/**
 * SheetHost for Excel, through the Office JavaScript API (Excel.run batches and the common API's
 * bindings and document settings). Needs only what ReadWriteDocument allows: reading ranges,
 * writing formulas, adding a worksheet with a chart, and per-document settings.
 *
 * Requirement sets used: ExcelApi 1.1 (ranges, selection, bindings.getItem), 1.4
 * (getItemOrNullObject, series count), 1.7 (chart series ranges, axis scale type, worksheet
 * onChanged), MatrixBindings (the range prompt), Settings (document settings).
 *
 * Every Office failure becomes a SheetHostError whose message the pane can show as it is.
 */
import {
  cellName,
  cleanSheetName,
  formatAddress,
  intersect,
  MAX_SHEET_NAME,
  numberedName,
  parseAddress,
  RangeAddress,
  rangeSize,
  sameSheetName,
  splitAreas,
} from "./address";
import { blockArea, blockRows } from "../report/report";
import { CellValue, ReportSheet, SheetHost, SheetHostError } from "./sheetHost";

/** How many numbered report names ("Shrinkwise report 2", …) are tried before a time stamp is used. */
const NAME_TRIES = 50;
/** Chart size in points. */
const CHART_WIDTH = 540;
const CHART_HEIGHT = 320;

/** Office's own error text, or the thrown value as text. */
function messageOf(error: unknown): string {
  if (error && typeof error === "object" && typeof (error as { message?: unknown }).message === "string") return (error as { message: string }).message;
  return String(error);
}

function codeOf(error: unknown): string {
  if (error && typeof error === "object" && typeof (error as { code?: unknown }).code === "string") return (error as { code: string }).code;
  return "";
}

/** Runs an Excel batch; any failure that isn't already a SheetHostError is reworded as `what: message`. */
async function excel<T>(what: string, batch: (context: Excel.RequestContext) => Promise<T>): Promise<T> {
  try {
    return await Excel.run(batch);
  } catch (error) {
    if (error instanceof SheetHostError) throw error;
    if (codeOf(error) === "ItemNotFound") throw new SheetHostError(`${what}: a sheet or range it names does not exist (${messageOf(error)})`);
    throw new SheetHostError(`${what}: ${messageOf(error)}`);
  }
}

/** The worksheet a parsed address is on (its sheet, or the active one). */
function worksheetOf(context: Excel.RequestContext, range: RangeAddress): Excel.Worksheet {
  return range.sheet === null ? context.workbook.worksheets.getActiveWorksheet() : context.workbook.worksheets.getItem(range.sheet);
}

/** Relative luminance of a #rgb / #rrggbb colour (0 black … 1 white), or null if it can't be read. */
export function luminance(colour: string): number | null {
  const m = /^#?([0-9a-f]{3}|[0-9a-f]{6})$/i.exec(colour.trim());
  if (!m) return null;
  const hex = m[1].length === 3 ? m[1].replace(/./g, (c) => c + c) : m[1];
  const channel = (k: number): number => {
    const c = parseInt(hex.slice(k, k + 2), 16) / 255;
    return c <= 0.03928 ? c / 12.92 : Math.pow((c + 0.055) / 1.055, 2.4);
  };
  return 0.2126 * channel(0) + 0.7152 * channel(2) + 0.0722 * channel(4);
}

let bindingCount = 0;

export class OfficeSheetHost implements SheetHost {
  readonly kind = "office" as const;

  /** True where Excel offers its range prompt (MatrixBindings). */
  get canPromptForRange(): boolean {
    try {
      const requirements = Office.context.requirements;
      if (requirements && typeof requirements.isSetSupported === "function" && !requirements.isSetSupported("MatrixBindings", "1.1")) return false;
      return typeof Office.context.document?.bindings?.addFromPromptAsync === "function";
    } catch {
      return false;
    }
  }

  async selectionAddress(): Promise<string> {
    return excel("could not read the selection", async (context) => {
      const range = context.workbook.getSelectedRange();
      range.load("address");
      try {
        await context.sync();
      } catch (error) {
        // getSelectedRange fails when the selection has several areas (or isn't cells at all).
        if (codeOf(error) === "InvalidSelection") throw new SheetHostError("select one rectangular range (the selection has several areas or is not cells)");
        throw error;
      }
      return range.address;
    });
  }

  /**
   * Excel's own range prompt (a matrix binding made from the prompt, read for its address and
   * released at once). Resolves null when the user dismisses it.
   */
  promptForRange(label: string): Promise<string | null> {
    const bindings = Office.context.document.bindings;
    const id = `shrinkwise-prompt-${Date.now()}-${++bindingCount}`;
    return new Promise<Office.Binding | null>((resolve, reject) => {
      bindings.addFromPromptAsync(Office.BindingType.Matrix, { id, promptText: label.slice(0, 200) }, (result) => {
        if (result.status === Office.AsyncResultStatus.Succeeded) {
          resolve(result.value);
          return;
        }
        const code = result.error?.code;
        if (code === 3003) reject(new SheetHostError("select one rectangular range"));
        else if (code === 3000 || code === 3004) reject(new SheetHostError(`that selection can't be used: ${result.error.message}`));
        else resolve(null); // dismissed (Excel reports a cancelled prompt as a failure)
      });
    }).then(async (binding) => {
      if (!binding) return null;
      try {
        return await excel("could not read the chosen range", async (context) => {
          const range = context.workbook.bindings.getItem(binding.id).getRange();
          range.load("address");
          await context.sync();
          return range.address;
        });
      } finally {
        await new Promise<void>((resolve) => bindings.releaseByIdAsync(binding.id, () => resolve()));
      }
    });
  }

  /**
   * Loads a range, first cutting whole columns or rows down to the sheet's used range. Returns
   * null when nothing of a whole-column range is in use.
   */
  private async usedPart(context: Excel.RequestContext, range: RangeAddress): Promise<RangeAddress | null> {
    if (!range.whole) return range;
    const used = worksheetOf(context, range).getUsedRangeOrNullObject(true);
    used.load("address");
    await context.sync();
    if (used.isNullObject) return null;
    const usedArea = parseAddress(used.address);
    const part = intersect(range, usedArea);
    return part ? { ...part, sheet: range.sheet } : null;
  }

  async readValues(address: string): Promise<CellValue[][]> {
    const wanted = parseAddress(address);
    return excel(`could not read ${address}`, async (context) => {
      const part = await this.usedPart(context, wanted);
      if (!part) return [];
      const range = worksheetOf(context, part).getRange(formatAddress(part, false));
      range.load(["values", "valueTypes"]);
      await context.sync();
      const types = range.valueTypes;
      return range.values.map((row, i) =>
        row.map((value: unknown, j): CellValue => {
          const type = types[i][j];
          // An error cell never reads as a blank or a number, whatever its value arrives as.
          if (type === "Error") return typeof value === "string" && value.startsWith("#") ? value : "#VALUE!";
          if (type === "Empty" || value === null || value === undefined) return "";
          if (typeof value === "number" || typeof value === "boolean" || typeof value === "string") return value;
          return String(value);
        }),
      );
    });
  }

  /** Cells of `address` holding a value or a formula, as plain cell names ("O2"), row by row. */
  async filledCells(address: string): Promise<string[]> {
    const wanted = parseAddress(address);
    return excel(`could not check ${address}`, async (context) => {
      const part = await this.usedPart(context, wanted);
      if (!part) return [];
      const range = worksheetOf(context, part).getRange(formatAddress(part, false));
      range.load(["values", "formulas"]);
      await context.sync();
      const filled: string[] = [];
      const values = range.values;
      const formulas = range.formulas;
      for (let i = 0; i < values.length; i++) {
        for (let j = 0; j < values[i].length; j++) {
          const value = values[i][j];
          const formula = formulas[i][j];
          const hasValue = value !== "" && value !== null && value !== undefined;
          const hasFormula = formula !== "" && formula !== null && formula !== undefined;
          if (hasValue || hasFormula) filled.push(cellName(part.top + i, part.left + j));
        }
      }
      return filled;
    });
  }

  async writeFormulas(address: string, formulas: string[][]): Promise<void> {
    const target = parseAddress(address);
    const size = rangeSize(target);
    if (formulas.length !== size.rows || formulas.some((row) => row.length !== size.columns)) {
      throw new SheetHostError(`${address} is ${size.rows} × ${size.columns} cells but ${formulas.length} row(s) of formulas were given`);
    }
    await excel(`could not write to ${address}`, async (context) => {
      const range = worksheetOf(context, target).getRange(formatAddress(target, false));
      range.formulas = formulas;
      await context.sync();
    });
  }

  async writeValues(address: string, values: CellValue[][]): Promise<void> {
    const target = parseAddress(address);
    const size = rangeSize(target);
    if (values.length !== size.rows || values.some((row) => row.length !== size.columns)) {
      throw new SheetHostError(`${address} is ${size.rows} × ${size.columns} cells but ${values.length} row(s) of values were given`);
    }
    await excel(`could not write to ${address}`, async (context) => {
      const range = worksheetOf(context, target).getRange(formatAddress(target, false));
      range.values = values;
      await context.sync();
    });
  }

  /** A sheet name not yet in the workbook: the cleaned wanted name, then numbered ones. */
  private async uniqueName(context: Excel.RequestContext, wanted: string): Promise<string> {
    const base = cleanSheetName(wanted);
    const candidates: string[] = [];
    for (let n = 1; n <= NAME_TRIES; n++) candidates.push(numberedName(base, n));
    const lookups = candidates.map((name) => {
      // isNullObject is filled in by the sync itself; "name" is loaded so the lookup is sent.
      const sheet = context.workbook.worksheets.getItemOrNullObject(name);
      sheet.load("name");
      return sheet;
    });
    await context.sync();
    const free = lookups.findIndex((sheet) => sheet.isNullObject);
    if (free >= 0) return candidates[free];
    const stamp = new Date().toISOString().replace(/[-:T]/g, "").slice(0, 14);
    return `${base.slice(0, MAX_SHEET_NAME - stamp.length - 1).trimEnd()} ${stamp}`;
  }

  async writeReport(report: ReportSheet): Promise<string> {
    return excel("could not add the report sheet", async (context) => {
      const name = await this.uniqueName(context, report.name);
      const sheet = context.workbook.worksheets.add(name);
      const blocks = [...report.blocks];
      for (const chart of report.charts) {
        if (!blocks.some((block) => block === chart.block || block.at === chart.block.at)) blocks.push(chart.block);
      }
      for (const block of blocks) {
        const area = blockArea(block);
        const { rows, width } = blockRows(block);
        if (rows.length === 0) continue;
        const range = sheet.getRange(formatAddress(area, false));
        range.values = rows;
        const firstData = block.header ? 1 : 0;
        if (block.formats && block.formats.some((f) => f) && rows.length > firstData) {
          const formats = rows.slice(firstData).map(() => Array.from({ length: width }, (_, j) => block.formats?.[j] ?? "General"));
          sheet.getRange(formatAddress({ ...area, top: area.top + firstData }, false)).numberFormat = formats;
        }
        if (block.header) {
          sheet.getRange(formatAddress({ ...area, bottom: area.top }, false)).format.font.bold = true;
          if (width > 1) range.format.autofitColumns();
        }
      }
      for (const spec of report.charts) {
        const area = blockArea(spec.block);
        const { rows, width } = blockRows(spec.block);
        const dataTop = area.top + (spec.block.header ? 1 : 0);
        if (width < 2 || dataTop > area.bottom) continue; // no x column or no data rows: nothing to draw
        const chart = sheet.charts.add("XYScatterLines", sheet.getRange(formatAddress(area, false)), "Columns");
        // Excel guesses which column holds x (a text top-left cell can make it plot x as a series):
        // say it outright, one series per column after the first, named by the header.
        const count = chart.series.getCount();
        await context.sync();
        for (let k = count.value - 1; k >= width - 1; k--) chart.series.getItemAt(k).delete();
        const column = (j: number): Excel.Range =>
          sheet.getRange(formatAddress({ sheet: null, top: dataTop, bottom: area.bottom, left: area.left + j, right: area.left + j }, false));
        const xValues = column(0);
        for (let k = 0; k < width - 1; k++) {
          const series = k < count.value ? chart.series.getItemAt(k) : chart.series.add();
          series.setXAxisValues(xValues);
          series.setValues(column(k + 1));
          if (spec.block.header) series.name = String(rows[0][k + 1]);
        }
        chart.title.text = spec.title;
        const x = chart.axes.categoryAxis;
        const y = chart.axes.valueAxis;
        if (spec.logX) x.scaleType = "Logarithmic";
        x.title.text = spec.xTitle;
        y.title.text = spec.yTitle;
        chart.setPosition(spec.at);
        chart.width = CHART_WIDTH;
        chart.height = CHART_HEIGHT;
      }
      sheet.activate();
      await context.sync();
      return name;
    });
  }

  /**
   * Listens to worksheet changes (one onChanged handler per sheet named) and calls `listener`
   * when a changed area overlaps one of `addresses`. The returned function removes the handlers.
   */
  async watch(addresses: string[], listener: () => void): Promise<() => void> {
    const watched = addresses.map((address) => parseAddress(address));
    const bySheet = new Map<string, RangeAddress[]>();
    for (const range of watched) {
      const key = range.sheet === null ? "" : range.sheet.toLocaleLowerCase();
      const list = bySheet.get(key) ?? [];
      list.push(range);
      bySheet.set(key, list);
    }
    let stopped = false;
    const results = await excel("could not watch the ranges", async (context) => {
      const handlers: OfficeExtension.EventHandlerResult<Excel.WorksheetChangedEventArgs>[] = [];
      for (const ranges of bySheet.values()) {
        const sheet = worksheetOf(context, ranges[0]);
        handlers.push(
          sheet.onChanged.add(async (event: Excel.WorksheetChangedEventArgs) => {
            if (stopped) return;
            const hit = splitAreas(event.address ?? "").some((area) => {
              try {
                const changed = parseAddress(area);
                return ranges.some((range) => intersect(range, changed) !== null && (changed.sheet === null || range.sheet === null || sameSheetName(changed.sheet, range.sheet)));
              } catch {
                return true; // an address we can't read: tell the listener rather than miss a change
              }
            });
            if (hit) listener();
          }),
        );
      }
      await context.sync();
      return handlers;
    });
    return () => {
      if (stopped) return;
      stopped = true;
      for (const result of results) {
        Excel.run(result.context, async (context) => {
          result.remove();
          await context.sync();
        }).catch(() => undefined); // the pane is going away or the context has ended: nothing to undo
      }
    };
  }

  async loadSetting<T>(key: string): Promise<T | null> {
    const value: unknown = Office.context.document.settings.get(key);
    return value === undefined || value === null ? null : (value as T);
  }

  async saveSetting(key: string, value: unknown): Promise<void> {
    const settings = Office.context.document.settings;
    if (value === undefined || value === null) settings.remove(key);
    else settings.set(key, value);
    await new Promise<void>((resolve, reject) => {
      settings.saveAsync((result) => {
        if (result.status === Office.AsyncResultStatus.Failed) reject(new SheetHostError(`could not save the setting: ${result.error?.message ?? "unknown error"}`));
        else resolve();
      });
    });
  }

  theme(): "light" | "dark" {
    try {
      const colour = Office.context.officeTheme?.bodyBackgroundColor;
      const light = typeof colour === "string" ? luminance(colour) : null;
      return light !== null && light < 0.5 ? "dark" : "light";
    } catch {
      return "light";
    }
  }
}
