/**
 * OfficeSheetHost (taskpane/host/officeSheetHost.ts) against office-addin-mock's OfficeMockObject
 * standing in for Excel: a property reads as "Error, property was not loaded" unless the code
 * loaded it and synced, so each read below also checks the host's load/sync calls. The common
 * API (Office.context: bindings, settings, theme) has no load/sync and is a plain object.
 *
 * Sources of expected values: "Office API contract" (what the documented calls take and
 * return), "common practice" (WCAG relative luminance: white 1, black 0).
 */
import { OfficeMockObject } from "office-addin-mock";
import { luminance, OfficeSheetHost } from "../../../taskpane/host/officeSheetHost";
import { SheetHostError, type ReportSheet } from "../../../taskpane/host/sheetHost";

type Handler = (event: { address: string }) => Promise<void> | void;

interface Recorded {
  rangeCalls: string[];
  sheetNames: string[];
  taken: Set<string>;
  added: string[];
  /** Ranges handed out by the report sheet: what the host wrote on each. */
  written: { address: string; values?: unknown; numberFormat?: unknown; bold?: boolean; autofit?: boolean }[];
  charts: { type: string; source: unknown; seriesBy: string; position?: string }[];
  /** How many series Excel makes from the chart's range (its own guess), and what the host did to each. */
  seriesGuess: number;
  series: { deleted?: boolean; x?: string; values?: string; name?: string }[];
  handlers: Handler[];
  removed: number;
  activated: number;
}

/** A mock worksheet that reads through one loaded range. */
function readSheet(recorded: Recorded, range: Record<string, unknown>, usedAddress = "A1:A1") {
  return {
    name: "Roast log",
    range,
    usedRange: { address: usedAddress, isNullObject: false },
    getRange(this: { range: unknown }, address: string) {
      recorded.rangeCalls.push(address);
      return this.range;
    },
    getUsedRangeOrNullObject(this: { usedRange: unknown }) {
      return this.usedRange;
    },
    onChanged: {
      add(handler: Handler) {
        recorded.handlers.push(handler);
        return {
          context: { marker: "event context" },
          remove() {
            recorded.removed++;
          },
        };
      },
    },
  };
}

async function makeExcel(options: { range?: Record<string, unknown>; used?: string; syncError?: unknown } = {}) {
  const recorded: Recorded = { rangeCalls: [], sheetNames: [], taken: new Set(), added: [], written: [], charts: [], seriesGuess: 0, series: [], handlers: [], removed: 0, activated: 0 };
  const range = options.range ?? { address: "x", values: [[1]], valueTypes: [["Double"]], formulas: [[1]] };
  const seriesRecord = (index: number) => {
    const entry = (recorded.series[index] ??= {});
    return {
      delete() {
        entry.deleted = true;
      },
      setXAxisValues(range: { address: string }) {
        entry.x = range.address;
      },
      setValues(range: { address: string }) {
        entry.values = range.address;
      },
      set name(v: string) {
        entry.name = v;
      },
    };
  };
  const reportSheet = {
    getRange(address: string) {
      const entry: Recorded["written"][number] = { address };
      recorded.written.push(entry);
      const target = {
        address,
        set values(v: unknown) {
          entry.values = v;
        },
        set numberFormat(v: unknown) {
          entry.numberFormat = v;
        },
        format: {
          font: {
            set bold(v: boolean) {
              entry.bold = v;
            },
          },
          autofitColumns() {
            entry.autofit = true;
          },
        },
      };
      return target;
    },
    charts: {
      chart: {
        title: { text: "" },
        axes: { categoryAxis: { scaleType: "Linear", title: { text: "" } }, valueAxis: { title: { text: "" } } },
        width: 0,
        height: 0,
        series: {
          getCount() {
            return { value: recorded.seriesGuess };
          },
          getItemAt(index: number) {
            return seriesRecord(index);
          },
          add() {
            return seriesRecord(recorded.series.length);
          },
        },
        setPosition(at: string) {
          recorded.charts[recorded.charts.length - 1].position = at;
        },
      },
      add(this: { chart: unknown }, type: string, source: unknown, seriesBy: string) {
        recorded.charts.push({ type, source, seriesBy });
        return this.chart;
      },
    },
    activate() {
      recorded.activated++;
    },
  };
  const context: Record<string, unknown> = {
    workbook: {
      selected: { address: "'Roast log'!B1:L121" },
      getSelectedRange(this: { selected: unknown }) {
        return this.selected;
      },
      bindings: {
        bound: { range: { address: "'Roast log'!M1:M121" }, getRange(this: { range: unknown }) { return this.range; } },
        getItem(this: { bound: unknown }, id: string) {
          recorded.sheetNames.push(`binding:${id}`);
          return this.bound;
        },
      },
      worksheets: {
        active: readSheet(recorded, range, options.used),
        named: readSheet(recorded, range, options.used),
        report: reportSheet,
        existing: { name: "taken", isNullObject: false },
        missing: { name: "", isNullObject: true },
        getActiveWorksheet(this: { active: unknown }) {
          recorded.sheetNames.push("(active)");
          return this.active;
        },
        getItem(this: { named: unknown }, name: string) {
          recorded.sheetNames.push(name);
          return this.named;
        },
        getItemOrNullObject(this: { existing: unknown; missing: unknown }, name: string) {
          return recorded.taken.has(name) ? this.existing : this.missing;
        },
        add(this: { report: unknown }, name: string) {
          recorded.added.push(name);
          return this.report;
        },
      },
    },
  };
  if (options.syncError) {
    context.sync = async () => {
      throw options.syncError;
    };
  }
  const mock = new OfficeMockObject({
    context,
    run: async function (this: { context: unknown }, first: unknown, second?: unknown) {
      const batch = (typeof first === "function" ? first : second) as (context: unknown) => Promise<unknown>;
      return batch(this.context);
    },
  } as never) as unknown as Record<string, unknown> & { context: { workbook: { worksheets: { report: typeof reportSheet } } } };
  await preloadNullFlags(mock);
  (globalThis as unknown as { Excel: unknown }).Excel = mock;
  return { mock, recorded };
}

/**
 * Excel fills `isNullObject` in at the sync after a *OrNullObject call without a load of it; the
 * mock only serves loaded properties, so the flags are loaded here, up front.
 */
async function preloadNullFlags(mock: unknown): Promise<void> {
  const sheets = (mock as { context: { workbook: { worksheets: Record<string, { load(p: string): void; sync(): Promise<void>; usedRange?: { load(p: string): void; sync(): Promise<void> } }> } } }).context.workbook.worksheets;
  for (const item of [sheets.existing, sheets.missing, sheets.active.usedRange, sheets.named.usedRange]) {
    item?.load("isNullObject");
    await item?.sync();
  }
}

/** The common API: bindings, settings, requirements, theme. */
function makeOffice(options: { prompt?: { status: string; value?: { id: string }; error?: { code: number; message: string } }; saveFails?: boolean; background?: string } = {}) {
  const store = new Map<string, unknown>();
  const released: string[] = [];
  const promptCalls: { type: unknown; options: { id?: string; promptText?: string } }[] = [];
  const office = {
    BindingType: { Matrix: "matrix" },
    AsyncResultStatus: { Succeeded: "succeeded", Failed: "failed" },
    context: {
      requirements: { isSetSupported: (name: string) => name === "MatrixBindings" },
      officeTheme: options.background === undefined ? undefined : { bodyBackgroundColor: options.background },
      document: {
        bindings: {
          addFromPromptAsync(type: unknown, opts: { id?: string; promptText?: string }, callback: (result: unknown) => void) {
            promptCalls.push({ type, options: opts });
            const answer = options.prompt ?? { status: "succeeded", value: { id: opts.id ?? "" } };
            callback({ ...answer, value: answer.value ? { id: opts.id } : undefined });
          },
          releaseByIdAsync(id: string, callback: () => void) {
            released.push(id);
            callback();
          },
        },
        settings: {
          get: (key: string) => store.get(key),
          set: (key: string, value: unknown) => void store.set(key, value),
          remove: (key: string) => void store.delete(key),
          saveAsync(callback: (result: unknown) => void) {
            callback(options.saveFails ? { status: "failed", error: { message: "the file is read-only" } } : { status: "succeeded" });
          },
        },
      },
    },
  };
  (globalThis as unknown as { Office: unknown }).Office = office;
  return { store, released, promptCalls };
}

afterEach(() => {
  delete (globalThis as { Excel?: unknown }).Excel;
  delete (globalThis as { Office?: unknown }).Office;
});

describe("selection and the range prompt", () => {
  test("the selected range's address, loaded and synced", async () => {
    await makeExcel();
    await expect(new OfficeSheetHost().selectionAddress()).resolves.toBe("'Roast log'!B1:L121");
  });

  test("a selection of several areas: 'select one rectangular range'", async () => {
    await makeExcel({ syncError: { code: "InvalidSelection", message: "The current selection is invalid for this operation." } });
    const failure = new OfficeSheetHost().selectionAddress();
    await expect(failure).rejects.toThrow(SheetHostError);
    await expect(failure).rejects.toThrow(/select one rectangular range/);
  });

  test("prompt: a matrix binding from Excel's prompt, read for its address, then released", async () => {
    await makeExcel();
    const office = makeOffice();
    const host = new OfficeSheetHost();
    expect(host.canPromptForRange).toBe(true);
    await expect(host.promptForRange("Select the target column")).resolves.toBe("'Roast log'!M1:M121");
    expect(office.promptCalls).toHaveLength(1);
    expect(office.promptCalls[0].type).toBe("matrix");
    expect(office.promptCalls[0].options.promptText).toBe("Select the target column");
    expect(office.released).toEqual([office.promptCalls[0].options.id]);
  });

  test("prompt dismissed: null, nothing to release; several areas: a SheetHostError", async () => {
    await makeExcel();
    const dismissed = makeOffice({ prompt: { status: "failed", error: { code: 5001, message: "The operation was cancelled by the user." } } });
    await expect(new OfficeSheetHost().promptForRange("target")).resolves.toBeNull();
    expect(dismissed.released).toEqual([]);
    makeOffice({ prompt: { status: "failed", error: { code: 3003, message: "Noncontiguous selections are not supported." } } });
    await expect(new OfficeSheetHost().promptForRange("target")).rejects.toThrow(/one rectangular range/);
  });
});

describe("reading", () => {
  test("values with blanks as \"\" and error cells as their text (valueTypes tell them apart)", async () => {
    const { recorded } = await makeExcel({
      range: {
        values: [[1, "", "#N/A", true, "x", "#DIV/0!", null]],
        valueTypes: [["Double", "Empty", "Error", "Boolean", "String", "Error", "Error"]],
        formulas: [[]],
      },
    });
    const values = await new OfficeSheetHost().readValues("'Roast log'!B2:H2");
    // Office API contract: error cells have valueType "Error"; one whose value is missing still reads as an error.
    expect(values).toEqual([[1, "", "#N/A", true, "x", "#DIV/0!", "#VALUE!"]]);
    expect(recorded.sheetNames).toEqual(["Roast log"]);
    expect(recorded.rangeCalls).toEqual(["B2:H2"]);
  });

  test("no sheet named: the active sheet; whole columns cut to the used range", async () => {
    const { recorded } = await makeExcel({ used: "A1:D10", range: { values: [["a"]], valueTypes: [["String"]], formulas: [[]] } });
    await new OfficeSheetHost().readValues("B:C");
    expect(recorded.sheetNames).toEqual(["(active)", "(active)"]);
    expect(recorded.rangeCalls).toEqual(["B1:C10"]);
  });

  test("filled cells: a value or a formula, as cell names", async () => {
    await makeExcel({
      range: {
        values: [
          ["a", ""],
          ["", ""],
        ],
        valueTypes: [[]],
        formulas: [
          ["a", "=SHRINK.COEFS(M1:M121, B1:L121)"],
          ["", ""],
        ],
      },
    });
    await expect(new OfficeSheetHost().filledCells("O1:P2")).resolves.toEqual(["O1", "P1"]);
  });

  test("a bad address is a SheetHostError before Excel is asked", async () => {
    const { recorded } = await makeExcel();
    await expect(new OfficeSheetHost().readValues("M1:")).rejects.toThrow(SheetHostError);
    expect(recorded.rangeCalls).toEqual([]);
  });
});

describe("writing formulas", () => {
  test("range.formulas gets the rows as given", async () => {
    const { mock, recorded } = await makeExcel();
    const formulas = [["=SHRINK.COEFS('Roast log'!M1:M121, 'Roast log'!B1:L121)"]];
    await new OfficeSheetHost().writeFormulas("'Roast log'!O1", formulas);
    expect(recorded.rangeCalls).toEqual(["O1"]);
    const range = (mock as unknown as { context: { workbook: { worksheets: { named: { range: { formulas: unknown } } } } } }).context.workbook.worksheets.named.range;
    expect(range.formulas).toEqual(formulas);
  });

  test("rows that don't match the range's shape are refused", async () => {
    await makeExcel();
    await expect(new OfficeSheetHost().writeFormulas("O1:O2", [["=1"]])).rejects.toThrow(/2 × 1 cells/);
  });
});

describe("writing values", () => {
  test("range.values gets the rows as given: numbers keep every bit (no text round trip)", async () => {
    const { mock, recorded } = await makeExcel();
    const values = [
      ["term", "coefficient"],
      ["intercept", 0.1 + 0.2],
    ];
    await new OfficeSheetHost().writeValues("'Roast log'!O1:P2", values);
    expect(recorded.rangeCalls).toEqual(["O1:P2"]);
    const range = (mock as unknown as { context: { workbook: { worksheets: { named: { range: { values: unknown } } } } } }).context.workbook.worksheets.named.range;
    expect(range.values).toEqual(values);
    expect((range.values as number[][])[1][1]).toBe(0.30000000000000004);
  });

  test("rows that don't match the range's shape are refused before Excel is asked", async () => {
    const { recorded } = await makeExcel();
    await expect(new OfficeSheetHost().writeValues("O1:P2", [["a", 1]])).rejects.toThrow(/2 × 2 cells but 1 row/);
    expect(recorded.rangeCalls).toEqual([]);
  });
});

describe("report sheet", () => {
  const pathBlock = {
    at: "D2",
    rows: [
      ["strength", "x1", "x2"],
      [1, 0, 0],
      [0.1, 0.4, -0.2],
    ],
    header: true,
    formats: ["0.000E+00", null, null],
  };
  const report: ReportSheet = {
    name: "Shrinkwise report",
    blocks: [{ at: "A1", rows: [["Shrinkwise report"], ["Made today"]], header: true }, pathBlock],
    charts: [{ title: "Coefficient path, Mix α (lasso share) = 1", block: pathBlock, logX: true, xTitle: "penalty strength λ", yTitle: "coefficient (data units)", at: "H2" }],
  };

  test("a unique name, the blocks with formats and bold headers, an XY scatter chart with a log x axis; the sheet is activated", async () => {
    const { mock, recorded } = await makeExcel();
    recorded.taken.add("Shrinkwise report");
    recorded.seriesGuess = 3;
    const name = await new OfficeSheetHost().writeReport(report);
    expect(name).toBe("Shrinkwise report 2");
    expect(recorded.added).toEqual(["Shrinkwise report 2"]);
    const byAddress = (address: string) => recorded.written.filter((w) => w.address === address);
    expect(byAddress("A1:A2")[0].values).toEqual([["Shrinkwise report"], ["Made today"]]);
    expect(byAddress("A1")[0].bold).toBe(true);
    expect(byAddress("D2:F4")[0].values).toEqual(pathBlock.rows);
    expect(byAddress("D2:F4")[0].autofit).toBe(true);
    expect(byAddress("D2:F2")[0].bold).toBe(true);
    expect(byAddress("D3:F4")[0].numberFormat).toEqual([
      ["0.000E+00", "General", "General"],
      ["0.000E+00", "General", "General"],
    ]);
    expect(recorded.charts).toHaveLength(1);
    expect(recorded.charts[0].type).toBe("XYScatterLines");
    expect(recorded.charts[0].seriesBy).toBe("Columns");
    expect(recorded.charts[0].position).toBe("H2");
    expect((recorded.charts[0].source as { address: string }).address).toBe("D2:F4");
    // Excel's own guess made 3 series (x plotted as one): the extra one goes, the others get x and y set.
    expect(recorded.series).toEqual([
      { x: "D3:D4", values: "E3:E4", name: "x1" },
      { x: "D3:D4", values: "F3:F4", name: "x2" },
      { deleted: true },
    ]);
    const chart = mock.context.workbook.worksheets.report.charts.chart;
    expect(chart.title.text).toBe("Coefficient path, Mix α (lasso share) = 1");
    expect(chart.axes.categoryAxis.scaleType).toBe("Logarithmic");
    expect(chart.axes.categoryAxis.title.text).toBe("penalty strength λ");
    expect(chart.axes.valueAxis.title.text).toBe("coefficient (data units)");
    expect(chart.width).toBeGreaterThan(0);
    expect(recorded.activated).toBe(1);
  });

  test("a linear axis when logX is false (the axis is left as Excel made it); series added when Excel made too few", async () => {
    const { mock, recorded } = await makeExcel();
    recorded.seriesGuess = 1;
    await new OfficeSheetHost().writeReport({ ...report, charts: [{ ...report.charts[0], logX: false }] });
    const axis = mock.context.workbook.worksheets.report.charts.chart.axes.categoryAxis;
    expect(axis.scaleType).toBe("Error, property was not loaded"); // never written
    expect(recorded.series.map((entry) => entry.values)).toEqual(["E3:E4", "F3:F4"]);
  });
});

describe("watching", () => {
  test("fires for changes that overlap a watched range, not others; unsubscribing removes the handlers", async () => {
    const { recorded } = await makeExcel();
    let calls = 0;
    const stop = await new OfficeSheetHost().watch(["'Roast log'!M1:M121", "'Roast log'!B1:L121"], () => calls++);
    expect(recorded.handlers).toHaveLength(1); // one handler per sheet
    await recorded.handlers[0]({ address: "M5" });
    await recorded.handlers[0]({ address: "Z9" });
    await recorded.handlers[0]({ address: "A1:B2" });
    expect(calls).toBe(2);
    stop();
    await new Promise((resolve) => setTimeout(resolve, 0));
    expect(recorded.removed).toBe(1);
    await recorded.handlers[0]({ address: "M5" });
    expect(calls).toBe(2);
  });
});

describe("settings and theme", () => {
  test("document settings: set then saveAsync; read back; null removes", async () => {
    await makeExcel();
    const office = makeOffice();
    const host = new OfficeSheetHost();
    await host.saveSetting("ranges", { target: "M1:M121" });
    expect(office.store.get("ranges")).toEqual({ target: "M1:M121" });
    await expect(host.loadSetting("ranges")).resolves.toEqual({ target: "M1:M121" });
    await expect(host.loadSetting("missing")).resolves.toBeNull();
    await host.saveSetting("ranges", null);
    expect(office.store.has("ranges")).toBe(false);
  });

  test("a failed save is a SheetHostError with Office's reason", async () => {
    makeOffice({ saveFails: true });
    await expect(new OfficeSheetHost().saveSetting("k", 1)).rejects.toThrow(/read-only/);
  });

  test("theme from the body background's luminance (common practice: WCAG relative luminance)", () => {
    expect(luminance("#ffffff")).toBe(1);
    expect(luminance("#000")).toBe(0);
    expect(luminance("not a colour")).toBeNull();
    makeOffice({ background: "#1f1f1f" });
    expect(new OfficeSheetHost().theme()).toBe("dark");
    makeOffice({ background: "#F3F3F3" });
    expect(new OfficeSheetHost().theme()).toBe("light");
    makeOffice({});
    expect(new OfficeSheetHost().theme()).toBe("light");
  });
});
