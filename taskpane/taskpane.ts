/**
 * Starts the Shrinkwise page. taskpane.html is also the shared runtime of the cell functions: the
 * functions bundle (functions/functions.ts) loads first on the same page and registers the SHRINK
 * functions; this bundle draws the side pane (pane.ts).
 *
 * `Office.onReady` tells where we are running:
 * - inside Excel (`info.host` set): the pane on the open workbook (OfficeSheetHost);
 * - anywhere else (`info.host` null, e.g. https://localhost:3000/taskpane.html in a browser, or
 *   office.js missing altogether): the standalone preview. The SAME pane runs on a stand-in
 *   workbook holding the demo data (StandInSheetHost), drawn beside the pane (standInView.ts) so
 *   ranges are picked by selecting its cells; formulas and reports written by the pane appear
 *   there, computed by the same code and fit cache the cells use. The demo ranges are filled in,
 *   so Fit works at once. Below the sheet, "What the cells return" (preview.ts).
 * Both end with a short guide to the cell functions (`#help`, where the manifest's help links point).
 *
 * In the standalone preview `window.__shrinkwisePreview` = { host (the StandInSheetHost), pane
 * (PaneHandle), view } for browser tests, e.g. `__shrinkwisePreview.host.setCell("M2", 90)`.
 */
import { sharedRunner } from "../functions/functions";
import { FUNCTION_HELP, type FunctionHelp } from "./functionHelp";
import { formatAddress, parseAddress } from "./host/address";
import { OfficeSheetHost } from "./host/officeSheetHost";
import { mountPane } from "./pane/pane";
import { renderPreview } from "./standalone/preview";
import type { SheetHost } from "./host/sheetHost";
import { createDemoWorkbook, DEMO_RANGES, DEMO_SHEET, StandInSheetHost } from "./standalone/standInSheetHost";
import { renderStandInView } from "./standalone/standInView";

function element<K extends keyof HTMLElementTagNameMap>(tag: K, text?: string, className?: string): HTMLElementTagNameMap[K] {
  const node = document.createElement(tag);
  if (text !== undefined) node.textContent = text;
  if (className) node.className = className;
  return node;
}

/** The list of functions: a term per signature, its summary as the description. */
export function functionList(help: readonly FunctionHelp[] = FUNCTION_HELP): HTMLDListElement {
  const list = element("dl", undefined, "functions");
  for (const fn of help) {
    const term = element("dt");
    term.append(element("code", `SHRINK.${fn.id}(${fn.signature})`));
    list.append(term, element("dd", fn.summary));
  }
  return list;
}

/** The guide to the cell functions, collapsed (`#help`). */
export function helpSection(): HTMLElement {
  const section = element("section", undefined, "help");
  section.setAttribute("aria-labelledby", "help");
  const heading = element("h2", "Cell functions");
  heading.id = "help"; // manifest.xml's SupportUrl and LearnMoreUrl point here
  const intro = element("p", undefined, "hint");
  intro.append(
    "Type ",
    element("code", "=SHRINK."),
    " in a cell to pick a function. Formulas over the same ranges, mixes and settings share one fit, and Excel recalculates them when a cell they read changes.",
  );
  const details = element("details");
  details.append(element("summary", "Show the functions"), functionList());
  details.append(
    element(
      "p",
      "Blank cells skip their row. Where a host hands blanks over as 0, add the setting zero is missing (for example \"zero is missing=moisture\") so those zeros count as blank.",
      "hint",
    ),
  );
  section.append(heading, intro, details);
  return section;
}

/** The demo ranges on the stand-in's demo sheet, with the sheet name. */
export function demoRanges(): { target: string; predictors: string; newRows: string; destination: string } {
  const on = (address: string): string => formatAddress({ ...parseAddress(address), sheet: DEMO_SHEET });
  return { target: on(DEMO_RANGES.target), predictors: on(DEMO_RANGES.predictors), newRows: on(DEMO_RANGES.newRows), destination: on("O1") };
}

async function startExcel(root: HTMLElement): Promise<void> {
  const host: SheetHost = new OfficeSheetHost();
  const layout = element("div", undefined, "layout");
  const pane = element("div");
  layout.append(pane);
  root.replaceChildren(layout);
  await mountPane(pane, host);
  pane.append(helpSection());
}

async function startStandalone(root: HTMLElement): Promise<void> {
  const host = new StandInSheetHost(createDemoWorkbook());
  const layout = element("div", undefined, "layout standalone");
  const pane = element("div");
  const side = element("section", undefined, "sheet-side");
  side.setAttribute("aria-labelledby", "sheet-title");
  const sheetTitle = element("h2", "Demo workbook");
  sheetTitle.id = "sheet-title";
  const note = element(
    "p",
    "Not running inside Excel, so the pane works on this stand-in workbook: an invented coffee roastery's 120 batches (score in column M, predictors in B:L) and eight new batches below. Select cells here and press Use selection in the pane; formulas and reports the pane writes appear here, computed in this browser.",
    "hint",
  );
  const sheetBox = element("div", undefined, "sheet-view");
  side.append(sheetTitle, note, sheetBox);
  layout.append(pane, side);
  root.replaceChildren(layout);
  const view = renderStandInView(sheetBox, host);
  const handle = await mountPane(pane, host, { defaults: demoRanges(), onSheetWritten: () => view.refresh() });
  renderPreview(side, { runner: sharedRunner(), help: FUNCTION_HELP });
  pane.append(helpSection());
  // For the browser tests and for poking around in the console: the stand-in workbook and the pane.
  (globalThis as { __shrinkwisePreview?: unknown }).__shrinkwisePreview = { host, pane: handle, view };
}

async function start(): Promise<void> {
  const root = document.getElementById("app");
  if (!root) return;
  let inExcel = false;
  // Outside Office office.js resolves onReady with host null; without office.js there is no Office.
  if (typeof Office !== "undefined" && typeof Office.onReady === "function") {
    const info = await Office.onReady();
    inExcel = Boolean(info.host);
  }
  if (inExcel) await startExcel(root);
  else await startStandalone(root);
  root.setAttribute("aria-busy", "false");
}

if (typeof document !== "undefined") {
  start().catch((error: unknown) => {
    const root = document.getElementById("app");
    if (root) {
      root.setAttribute("aria-busy", "false");
      const failed = element("p", `Shrinkwise could not start: ${error instanceof Error ? error.message : String(error)}`, "status failed");
      failed.setAttribute("role", "alert");
      root.replaceChildren(failed);
    }
  });
}
