/**
 * What the side pane needs from the workbook, behind one small interface with two
 * implementations: `OfficeSheetHost` (Excel, through the Office JavaScript API) and
 * `StandInSheetHost` (an in-memory stand-in workbook holding the demo data, used by the
 * standalone preview and the browser tests). The pane talks only to this interface.
 *
 * Addresses are A1-style with an optional sheet name: `Data!B1:L121`, `'Roast log'!A1`.
 * Every method may reject with `SheetHostError`, whose message the pane shows as is.
 */

/** A cell value as the pane sees it: numbers, text, booleans, blanks (""), errors ("#N/A" text). */
export type CellValue = number | string | boolean;

export class SheetHostError extends Error {
  constructor(message: string) {
    super(message);
    this.name = "SheetHostError";
  }
}

/** A block of values written on the report sheet, top-left at `at` (A1 address on that sheet). */
export interface ReportBlock {
  at: string;
  /** Rows of values; the first row is a header when `header` is true (drawn bold). */
  rows: CellValue[][];
  header?: boolean;
  /** Number format per column (e.g. "0.0000", "0.00E+00"), or null to leave General. */
  formats?: (string | null)[];
}

/** A native chart on the report sheet: one line series per column of `block` after the first. */
export interface ReportChart {
  title: string;
  /** The block holding the data: first column x, one series per further column. */
  block: ReportBlock;
  /** Logarithmic x axis. */
  logX: boolean;
  xTitle: string;
  yTitle: string;
  /** Top-left cell of the chart's position. */
  at: string;
}

export interface ReportSheet {
  /** Wanted sheet name; the host makes it unique (e.g. "Shrinkwise report 2"). */
  name: string;
  blocks: ReportBlock[];
  charts: ReportChart[];
}

export interface SheetHost {
  readonly kind: "office" | "stand-in";
  /** Address of the current selection (one rectangular area), with its sheet name. */
  selectionAddress(): Promise<string>;
  /**
   * The host's own range prompt where it has one (Excel's binding prompt); resolves to the
   * chosen address, or null if the user dismissed it. `available` is false where no prompt exists.
   */
  readonly canPromptForRange: boolean;
  promptForRange(label: string): Promise<string | null>;
  /** Values of a range, rows of cells; blanks as "". */
  readValues(address: string): Promise<CellValue[][]>;
  /**
   * Which cells of `address` are not empty (hold a value or a formula). The pane checks the
   * target cell and the area a result would spill into before writing.
   */
  filledCells(address: string): Promise<string[]>;
  /** Writes formulas (rows of formula text, e.g. "=SHRINK.COEFS(M1:M121, B1:L121)") at `address`. */
  writeFormulas(address: string, formulas: string[][]): Promise<void>;
  /**
   * Writes constants (numbers, text, booleans; "" clears a cell) at `address`, whose size must
   * match `values`. Numbers keep every bit (no round trip through text). As in Excel, a text
   * starting with "=" would be read as a formula: callers write no such text.
   */
  writeValues(address: string, values: CellValue[][]): Promise<void>;
  /** Adds a new worksheet with the report; resolves to the sheet's actual name. */
  writeReport(report: ReportSheet): Promise<string>;
  /** Calls `listener` when any cell in one of the addresses changes; returns a function that stops listening. */
  watch(addresses: string[], listener: () => void): Promise<() => void>;
  /** Per-workbook settings (Excel: document settings), JSON-serialisable values. */
  loadSetting<T>(key: string): Promise<T | null>;
  saveSetting(key: string, value: unknown): Promise<void>;
  /** "dark" when the host's theme has a dark background. */
  theme(): "light" | "dark";
}
