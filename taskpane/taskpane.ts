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
 *   so Fit works at once. Two demo data sets, one sheet each: the roast scores (a number target,
 *   the default) and the quality check (pass or fail: a yes/no target); a choice above the sheet
 *   puts either one's ranges in the pane (test ids demo-choice, demo-choice-roast,
 *   demo-choice-quality). Below the sheet, "What the cells return" (preview.ts).
 * Both end with a short guide to the cell functions (`#help`, where the manifest's help links point).
 *
 * In the standalone preview `window.__shrinkwisePreview` = { host (the StandInSheetHost), pane
 * (PaneHandle), view } for browser tests, e.g. `__shrinkwisePreview.host.setCell("M2", 90)`.
 */
import { sharedRunner } from "../functions/functions";
import type { FitRunner } from "../functions/runner";
import { aboutLine } from "./about";
import { FUNCTION_HELP, type FunctionHelp } from "./functionHelp";
import { formatAddress, parseAddress } from "./host/address";
import { OfficeSheetHost } from "./host/officeSheetHost";
import { mountPane } from "./pane/pane";
import { renderPreview } from "./standalone/preview";
import type { SheetHost } from "./host/sheetHost";
import { createDemoWorkbook, DEMO_RANGES, DEMO_SHEET, QUALITY_RANGES, QUALITY_SHEET, StandInSheetHost } from "./standalone/standInSheetHost";
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

/** The two demo data sets of the standalone preview. */
export type DemoSet = "roast" | "quality";

export const DEMO_SETS: readonly { id: DemoSet; sheet: string; label: string }[] = [
  { id: "roast", sheet: DEMO_SHEET, label: "Roast scores (a number target)" },
  { id: "quality", sheet: QUALITY_SHEET, label: "Quality check, pass or fail (a yes/no target)" },
];

/** A demo set's ranges on its stand-in sheet, with the sheet name (default: the roast scores). */
export function demoRanges(set: DemoSet = "roast"): { target: string; predictors: string; newRows: string; destination: string } {
  const sheet = set === "quality" ? QUALITY_SHEET : DEMO_SHEET;
  const layout = set === "quality" ? QUALITY_RANGES : DEMO_RANGES;
  const on = (address: string): string => formatAddress({ ...parseAddress(address), sheet });
  // The formulas go to the right of the data, one column clear of it.
  return { target: on(layout.target), predictors: on(layout.predictors), newRows: on(layout.newRows), destination: on(set === "quality" ? "P1" : "O1") };
}

/** The choice of demo data for the pane: a labelled radio group; `onChoose` gets the set picked. */
export function demoChoice(current: DemoSet, onChoose: (set: DemoSet) => void): HTMLFieldSetElement {
  const group = element("fieldset", undefined, "segmented demo-choice");
  group.dataset.testid = "demo-choice";
  group.append(element("legend", "Demo data in the pane"));
  for (const set of DEMO_SETS) {
    const label = element("label");
    const input = element("input");
    input.type = "radio";
    input.name = "demo-choice";
    input.value = set.id;
    input.id = `demo-choice-${set.id}`;
    input.dataset.testid = `demo-choice-${set.id}`;
    input.checked = set.id === current;
    input.addEventListener("change", () => {
      if (input.checked) onChoose(set.id);
    });
    label.append(input, element("span", set.label));
    group.append(label);
  }
  return group;
}

/**
 * The pane's fits from sums (taskpane/sources/): the panel and its routes are a chunk loaded on
 * the first switch away from worksheet ranges (DuckDB, for a file, on the first file read).
 */
const SUMS_OPTIONS = {
  // The fit from sums runs in the pane's fit worker (the runner mountPane uses).
  sumsRoutes: (runner: FitRunner) => import(/* webpackChunkName: "sums-pane" */ "./sources/routes").then((m) => m.routesFor(runner)),
};

async function startExcel(root: HTMLElement): Promise<void> {
  const host: SheetHost = new OfficeSheetHost();
  const layout = element("div", undefined, "layout");
  const pane = element("div");
  layout.append(pane);
  root.replaceChildren(layout);
  await mountPane(pane, host, SUMS_OPTIONS);
  pane.append(helpSection(), aboutLine());
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
    "Not running inside Excel, so the pane works on this stand-in workbook: an invented coffee roastery's 120 batches (score in column M, predictors in B:L) and eight new batches below, and on the sheet 'Quality check' 300 batches that passed or failed the quality check (column N). Select cells here and press Use selection in the pane; formulas and reports the pane writes appear here, computed in this browser.",
    "hint",
  );
  const sheetBox = element("div", undefined, "sheet-view");
  const choiceBox = element("div");
  side.append(sheetTitle, note, choiceBox, sheetBox);
  layout.append(pane, side);
  root.replaceChildren(layout);
  const view = renderStandInView(sheetBox, host);
  const handle = await mountPane(pane, host, { defaults: demoRanges(), onSheetWritten: () => view.refresh(), ...SUMS_OPTIONS });
  const onQuality = ((): boolean => {
    try {
      return parseAddress(handle.inputs().ranges.target).sheet === QUALITY_SHEET;
    } catch {
      return false; // no target yet, or one typed elsewhere
    }
  })();
  choiceBox.append(
    demoChoice(onQuality ? "quality" : "roast", (set) => {
      handle.setRanges(demoRanges(set));
      host.activateSheet(set === "quality" ? QUALITY_SHEET : DEMO_SHEET);
    }),
  );
  renderPreview(side, { runner: sharedRunner(), help: FUNCTION_HELP });
  pane.append(helpSection(), aboutLine());
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
