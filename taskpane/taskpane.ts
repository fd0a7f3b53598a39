/**
 * The Shrinkwise task pane. taskpane.html is also the shared runtime of the cell functions: the
 * functions bundle (functions/functions.ts) loads first on the same page and registers the SHRINK
 * functions; this bundle only draws the pane.
 *
 * `Office.onReady` tells where we are running:
 * - inside Excel (`info.host` set): a short guide to the functions;
 * - anywhere else (`info.host` null, e.g. https://localhost:3000/taskpane.html in a browser, or
 *   office.js missing altogether): the standalone preview (preview.ts), which computes every
 *   function's result on the demo data with the same shared fit cache the cells use.
 *
 * The side-pane issue builds the full pane on `Host`: what the pane needs from its surroundings.
 */
import { sharedRunner } from "../functions/functions";
import { renderPreview } from "./preview";

/** Where the pane runs. Later work adds range reading and formula writing for the Excel host. */
export interface Host {
  kind: "excel" | "standalone";
  /** Office's platform name (PC, Mac, OfficeOnline, …), or null outside Office. */
  platform: string | null;
}

/** One SHRINK function as the pane and the preview describe it. */
export interface FunctionHelp {
  /** Function id as registered (COEFS, …); users type SHRINK.<id>. */
  id: string;
  /** Arguments as typed, optional ones in brackets. */
  signature: string;
  /** What it returns, in one line. */
  summary: string;
}

export const FUNCTION_HELP: readonly FunctionHelp[] = [
  { id: "COEFS", signature: "target, predictors, [mixes], [settings]", summary: "the chosen model's coefficients, intercept first, one row per term." },
  { id: "CHOICE", signature: "target, predictors, [mixes], [settings]", summary: "how the model was chosen: strength, mix, cross-validated error and SE, rule, rows used and skipped." },
  { id: "PREDICT", signature: "target, predictors, new_rows, [mixes], [settings]", summary: "fits the same model and predicts one value per row of new_rows." },
  { id: "APPLY", signature: "coefficient_table, new_rows", summary: "predictions from a coefficient table (e.g. a COEFS result), without fitting again." },
  { id: "PATH", signature: "target, predictors, [mix], [settings]", summary: "every coefficient at every penalty strength of one mix, strongest first." },
  { id: "CVCURVE", signature: "target, predictors, [mixes], [settings]", summary: "cross-validated error, its SE and the nonzero count for every mix and strength tried." },
  { id: "SCORE", signature: "actual, predicted", summary: "accuracy of predictions: MAE, RMSE, R², mean error, pairs used and skipped." },
  { id: "BASELINE", signature: "target, predictors", summary: "plain least squares (no penalty) with standard errors, to compare with." },
];

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

/** The pane inside Excel: what the functions do and how they behave. */
export function renderExcelPane(root: HTMLElement, host: Host): void {
  root.replaceChildren();
  const heading = element("h2", "Cell functions");
  heading.id = "help"; // manifest.xml's SupportUrl and LearnMoreUrl point here
  root.append(heading);
  const intro = element("p");
  intro.append("Type ", element("code", "=SHRINK."), " in a cell to pick a function. Give it the target column and the predictor columns (with their header row, if any); the result spills into the cells below and to the right.");
  root.append(intro, functionList());
  root.append(element("h2", "Results refresh when the inputs change"));
  root.append(
    element(
      "p",
      "Excel recalculates a SHRINK formula whenever a cell it refers to changes. Formulas over the same ranges, mixes and settings share one fit, so COEFS, CHOICE, PREDICT, PATH and CVCURVE side by side cost a single cross-validated fit, computed on this computer.",
    ),
  );
  root.append(
    element(
      "p",
      "Blank cells skip their row. Where a host hands blanks over as 0, add the setting zero is missing (for example \"zero is missing=Moisture\") so those zeros count as blank.",
      "muted",
    ),
  );
  root.append(element("p", `Running in Excel (${host.platform ?? "unknown platform"}).`, "muted"));
}

async function start(): Promise<void> {
  const root = document.getElementById("app");
  if (!root) return;
  let host: Host = { kind: "standalone", platform: null };
  // Outside Office office.js resolves onReady with host null; without office.js there is no Office.
  if (typeof Office !== "undefined" && typeof Office.onReady === "function") {
    const info = await Office.onReady();
    if (info.host) host = { kind: "excel", platform: info.platform ? String(info.platform) : null };
  }
  if (host.kind === "excel") {
    renderExcelPane(root, host);
    root.setAttribute("aria-busy", "false");
  } else {
    await renderPreview(root, { runner: sharedRunner(), help: FUNCTION_HELP });
  }
}

if (typeof document !== "undefined") {
  start().catch((error: unknown) => {
    const root = document.getElementById("app");
    if (root) {
      root.setAttribute("aria-busy", "false");
      root.replaceChildren(element("p", `Shrinkwise could not start: ${error instanceof Error ? error.message : String(error)}`, "status failed"));
    }
  });
}
