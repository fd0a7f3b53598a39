/**
 * The Shrinkwise side pane: choose ranges, set the fit up, fit (in the Web Worker, through the
 * fit cache the cell functions share), look at the results, put SHRINK formulas on the sheet,
 * write a report sheet. It talks to the workbook only through a SheetHost (Excel, or the
 * stand-in workbook of the standalone preview), so the same pane runs in both.
 *
 * The fit sends exactly the request the cell functions send for the same ranges, mixes and
 * settings (functions/api.ts `prepare`), so formulas inserted afterwards find the fit in the
 * cache and return at once.
 *
 * Fit states (paneState.ts): idle → fitting (progress) → done | failed | cancelled; done → stale
 * when a chosen range's cells, a range, the header toggle or a setting change. Results of the
 * last finished fit stay on screen, under a banner, while stale, failed or cancelled.
 *
 * A yes/no target (two classes: TRUE/FALSE, 0/1, pass/fail…) works as a number target does. The
 * pane reads the target as the cells will (paneState.detectOutcome) whenever the ranges or the
 * settings that decide it change, says how it reads under the target picker ("yes/no outcome,
 * event 'fail' (73 of 296 rows; …)"), and tells the settings form, which then offers that kind's
 * error measures and, for yes/no, the event, cutoff and predictions. Results then show the
 * outcome, the in-sample log loss, Brier score and AUC and the table at the cutoff; the charts,
 * the coefficient table (with odds ratios) and the report follow the outcome.
 *
 * Data source (when the pane is given `sumsRoutes`): a choice at the top between worksheet ranges
 * (everything below), a local CSV or Parquet file, and a sums table on the sheet. The last two
 * are the panel of taskpane/sources/sumsPane.ts (its own test ids, listed there), loaded with its
 * routes and DuckDB on the first switch; the worksheet sections are hidden meanwhile.
 *
 * Stable test ids (`data-testid`), for the browser tests:
 *   Source      source-choice (the radio group), source-sheet, source-file, source-sums
 *   Ranges      target-address, target-use-selection, target-prompt (only where the host has a
 *               range prompt); the same for predictors-*, new-rows-* (+ new-rows-clear);
 *               target-outcome (how the target reads: "yes/no outcome, event 'fail' …",
 *               "number outcome (…)", or why it can't be read; data-kind = number | two-class | "");
 *               header-toggle (select: auto / yes / no); setting-weights-column (select of the
 *               predictors' column names)
 *   Settings    setting-outcome, setting-event, setting-cutoff, setting-predict (the last three
 *               shown for a yes/no target), setting-mixes, setting-folds, setting-rule, setting-error, setting-seed,
 *               setting-standardize, setting-intercept, setting-strength, setting-grid-density,
 *               setting-grid-size, setting-low-end, setting-stop-early, setting-time-order, setting-fold-column, setting-penalty,
 *               setting-no-penalty, setting-lower, setting-upper, setting-zero-is-missing;
 *               each message under a field: <field id>-error (e.g. setting-folds-error);
 *               settings-problem (a clash between settings); more-settings (the <details>)
 *   Fit         fit-button, cancel-button (disabled unless fitting), fit-progress (<progress>,
 *               max = fits to do, value = fits done; its wrapper is hidden unless fitting),
 *               fit-progress-label ("12 of 55 fits done"), status (the fit's live status line:
 *               starts "Fitted" when done), stale-banner (+ stale-fit-button)
 *   Results     results (section), chosen-strength (text = the strength as shown, data-value =
 *               full precision), chosen-mix, chosen-error, chosen-rule, chosen-nonzero (terms kept),
 *               chosen-rows, fit-notes; yes/no fits also chosen-outcome, chosen-class-fit
 *               (in-sample log loss, Brier, AUC) and chosen-cutoff (the table at the cutoff);
 *               chart-path, chart-cv, chart-bars (chart containers; role img, aria-label = the
 *               chart's describe()), chart-path-caption, chart-cv-caption, chart-bars-caption,
 *               cv-axis (the CV chart's x-axis choice, a radio group: cv-axis-strength,
 *               cv-axis-fraction; hidden with the CV chart),
 *               save-png-path, save-svg-path, save-png-cv, save-svg-cv, save-png-bars,
 *               save-svg-bars; results-table, copy-button, copy-status;
 *               "how sure is it": chart-held-out, chart-kept (containers, role img), their
 *               -caption (the text summary), -note (shown in place of the chart when it does not
 *               apply: a yes/no target, a fixed strength), save-png-held-out, save-svg-held-out,
 *               save-png-kept, save-svg-kept; chosen-repeats (fold deals), chosen-honest (the
 *               nested CV error beside the optimistic one; hidden unless honest error ran)
 *   How sure    sure-settings (the <details>), setting-interval, setting-repeats,
 *               setting-honest-error and setting-stability (checkboxes), setting-draws,
 *               setting-q, setting-stability-threshold (shown while stability is on)
 *   Formulas    destination-address, destination-use-selection, destination-prompt,
 *               formula-preview (list of the formulas), insert-button, insert-status,
 *               confirm-panel (hidden until cells would be overwritten), confirm-cells (a list, one
 *               line per formula area in use), confirm-overwrite, confirm-cancel
 *   Report      report-button, report-status ("Report written to the sheet '…'"; data-sheet = name)
 *   Other       pane-message (last range pick / action message)
 * In the standalone preview, `window.__shrinkwisePreview` = { host, pane, view } (taskpane.ts).
 */
import { CancelledError } from "../../engine/errors";
import type { FitResult } from "../../engine/fit";
import { errorWithSe, MIX_LABEL, RULE_WORDS } from "../../engine/words";
import { bestPointLabel, outcomeLine } from "../outcomeWords";
import { prepare } from "../../functions/api";
import { sharedRunner } from "../../functions/functions";
import { cancelSource, type FitRunner } from "../../functions/runner";
import { formatAddress, parseAddress } from "../host/address";
import type { ChartHandle } from "../charts/charts";
import type { AssuranceChartHandle, AssuranceKind, AssuranceView } from "../charts/assuranceCharts";
import { CV_AXES, CV_AXIS_NAMES, DEFAULT_CV_AXIS, type CvAxis } from "../charts/chartNames";
import { chartLibraryNow, loadChartLibrary, type ChartLibrary } from "../charts/chartLibrary";
import { heldOutPoints, type HeldOutPoints } from "../charts/assuranceData";
import {
  filledLines,
  findFilledCells,
  formulaIds,
  formulaText,
  planPlacements,
  spillShapes,
  writePlacements,
  type Placement,
} from "./insertFormulas";
import {
  columnNames,
  detectOutcome,
  emptyInputs,
  fitStatusText,
  formatNumber,
  IDLE,
  INPUTS_KEY,
  measureSummary,
  mixesText,
  progressText,
  reduceFit,
  restoreInputs,
  settingPairs,
  settingsText,
  shownOutcome,
  type FitEvent,
  type FitOutcome,
  type FitState,
  type OutcomeDetection,
  type PaneInputs,
  type PaneRanges,
} from "./paneState";
import { renderRangePicker, type RangePicker, type RangePickerSpec } from "./rangePickers";
import { buildReport } from "../report/report";
import { coefficientRows, coefficientTsv, copyText, renderCoefficientTable } from "./resultsTable";
import { renderSettingsForm } from "./settingsForm";
import type { SheetHost } from "../host/sheetHost";
import type { FileSumsReader } from "../sources/fileSums";
import { SOURCE_KINDS, type SourceKind } from "../sources/sumsInputs";
import type { SumsPaneHandle, SumsRoutes } from "../sources/sumsPane";

export interface PaneOptions {
  /** Ranges to start with when the workbook has none saved (the demo workbook's). */
  defaults?: Partial<PaneRanges>;
  /** Runs the fits; default the shared fit cache of the cell functions. */
  runner?: FitRunner;
  /** Called after the pane wrote to the sheet (formulas, a report), e.g. to redraw a stand-in view. */
  onSheetWritten?: () => void;
  /** The clock for the report's time stamp. */
  now?: () => Date;
  /**
   * Loads the engine and SQL behind "Fit from a file" and "Fit from a sums table"
   * (taskpane/sources/), on the first switch to either: the panel, the routes and DuckDB are
   * separate chunks the worksheet route never fetches. Without it the pane offers worksheet
   * ranges only (no "Data source" choice). It is given the pane's runner, so the fit from sums
   * can run where the pane's other fits do (the fit worker: routes.ts routesFor).
   */
  sumsRoutes?: (runner: FitRunner) => Promise<SumsRoutes>;
  /** Which of the two routes to offer beside worksheet ranges (default both). */
  sumsSources?: readonly ("file" | "sums")[];
  /** Reads local files with DuckDB; default one opening DuckDB from the add-in's own origin on first use. */
  fileReader?: FileSumsReader;
}

export interface PaneHandle {
  /** Starts a fit as the Fit button does; resolves with the outcome, or null if it failed or was cancelled. */
  fit(): Promise<FitOutcome | null>;
  state(): FitState;
  inputs(): PaneInputs;
  /** Re-reads the host's theme (light/dark) and applies it. */
  applyTheme(): void;
  /** Sets ranges as the pickers would (e.g. the standalone preview's choice of demo data); the others stay. */
  setRanges(ranges: Partial<PaneRanges>): void;
  /** Where the data come from now: worksheet ranges, a local file, or a sums table. */
  source(): SourceKind;
  /** Switches the data source as the "Data source" choice does; resolves once its panel is shown. */
  setSource(kind: SourceKind): Promise<void>;
  /** The panel of the routes that fit from sums, once loaded (null before the first switch, or without routes). */
  sums(): SumsPaneHandle | null;
  dispose(): void;
}

type ChartKind = "path" | "cv" | "bars";

/** Settings that change how the target reads (its kind, its event, which rows it keeps). */
const OUTCOME_SETTINGS: readonly string[] = ["outcome", "event", "zero is missing", "weights column", "fold column"];

const CHARTS: readonly { kind: ChartKind; title: string; file: string }[] = [
  { kind: "path", title: "Coefficient path", file: "shrinkwise-path" },
  { kind: "cv", title: "Cross-validation curve", file: "shrinkwise-cv-curve" },
  { kind: "bars", title: "Coefficients of the chosen model", file: "shrinkwise-coefficients" },
];

/** The "how sure is it" charts (assuranceCharts.ts), after the three above; `id` is the test id stem. */
const ASSURANCE_CHARTS: readonly { kind: AssuranceKind; id: string; title: string; file: string }[] = [
  { kind: "heldOut", id: "held-out", title: "Held-out predictions vs actual", file: "shrinkwise-held-out" },
  { kind: "kept", id: "kept", title: "Kept share of each term", file: "shrinkwise-kept-share" },
];

// ---------------------------------------------------------------------------------------------
// Small DOM helpers

function el<K extends keyof HTMLElementTagNameMap>(tag: K, props: { text?: string; className?: string; id?: string; testid?: string } = {}): HTMLElementTagNameMap[K] {
  const node = document.createElement(tag);
  if (props.text !== undefined) node.textContent = props.text;
  if (props.className) node.className = props.className;
  if (props.id) node.id = props.id;
  if (props.testid) node.dataset.testid = props.testid;
  return node;
}

function button(text: string, testid: string, className = "secondary"): HTMLButtonElement {
  const b = el("button", { text, testid, className });
  b.type = "button";
  return b;
}

function section(id: string, title: string): { section: HTMLElement; heading: HTMLHeadingElement } {
  const s = el("section", { className: "pane-section" });
  s.setAttribute("aria-labelledby", id);
  const heading = el("h2", { text: title, id });
  s.append(heading);
  return { section: s, heading };
}

function messageOf(error: unknown): string {
  if (error && typeof error === "object" && typeof (error as { message?: unknown }).message === "string") return (error as { message: string }).message;
  return String(error);
}

function isCancelled(error: unknown): boolean {
  return error instanceof CancelledError || (!!error && typeof error === "object" && (error as { name?: unknown }).name === "CancelledError");
}

/** Downloads `href` (a data: or blob: URL) as `file`, through a temporary <a download>. */
function download(href: string, file: string): void {
  const a = document.createElement("a");
  a.href = href;
  a.download = file;
  a.hidden = true;
  document.body.append(a);
  a.click();
  a.remove();
}

/** An SVG export as a URL: a data URL as it is, markup through a Blob URL (released a little later). */
function svgUrl(svg: string): { url: string; release: () => void } {
  if (svg.startsWith("data:")) return { url: svg, release: () => undefined };
  const url = URL.createObjectURL(new Blob([svg], { type: "image/svg+xml" }));
  return { url, release: () => URL.revokeObjectURL(url) };
}

function stamp(date: Date): string {
  const two = (n: number): string => String(n).padStart(2, "0");
  return `${date.getFullYear()}-${two(date.getMonth() + 1)}-${two(date.getDate())} ${two(date.getHours())}:${two(date.getMinutes())}`;
}

function copyInputs(inputs: PaneInputs): PaneInputs {
  return { ranges: { ...inputs.ranges }, header: inputs.header, mixes: inputs.mixes, settings: { ...inputs.settings } };
}

/** The first row of a range's address (`B1:L121` → `B1:L1`), or null if it can't be read. */
function firstRowAddress(address: string): string | null {
  try {
    const range = parseAddress(address);
    if (range.whole === "rows") return null;
    return formatAddress({ sheet: range.sheet, top: range.top, left: range.left, bottom: range.top, right: range.right });
  } catch {
    return null;
  }
}

// ---------------------------------------------------------------------------------------------

/** Draws the pane into `root` for `host`; resolves once the saved inputs are restored. */
export async function mountPane(root: HTMLElement, host: SheetHost, options: PaneOptions = {}): Promise<PaneHandle> {
  const runner = options.runner ?? sharedRunner();
  const now = options.now ?? (() => new Date());
  const saved = await host.loadSetting<unknown>(INPUTS_KEY).catch(() => null);
  const inputs: PaneInputs = saved ? restoreInputs(saved) : emptyInputs();
  if (!saved && options.defaults) inputs.ranges = { ...inputs.ranges, ...options.defaults };

  let state: FitState = IDLE;
  let run = 0;
  let cancelRun: (() => void) | null = null;
  let unwatch: (() => void) | null = null;
  let saveTimer: ReturnType<typeof setTimeout> | undefined;
  let disposed = false;
  const cleanups: (() => void)[] = [];

  root.classList.add("pane");

  // A general message line (range picks, failures outside the fit).
  const message = el("p", { className: "message", testid: "pane-message", id: "pane-message" });
  message.setAttribute("role", "status");
  const say = (text: string, failed = false): void => {
    message.textContent = text;
    message.classList.toggle("failed", failed);
  };

  // ---- Ranges -------------------------------------------------------------------------------
  const ranges = section("pane-ranges", "Ranges");
  ranges.section.append(
    el("p", {
      className: "hint",
      text: "Select cells on the sheet, then press Use selection. Include the header row if your columns have names.",
    }),
  );
  const pickerSpecs: (RangePickerSpec & { field: keyof PaneRanges })[] = [
    { field: "target", key: "target", label: "Target", hint: "One column: the values to predict.", optional: false, emptyText: "not chosen", promptLabel: "Select the target column" },
    {
      field: "predictors",
      key: "predictors",
      label: "Predictors",
      hint: "The columns that predict the target, one row per target row. Text columns become 0/1 terms.",
      optional: false,
      emptyText: "not chosen",
      promptLabel: "Select the predictor columns",
    },
    {
      field: "newRows",
      key: "new-rows",
      label: "New rows (optional)",
      hint: "Rows to predict, with the predictors' columns (header row optional).",
      optional: true,
      emptyText: "none",
      promptLabel: "Select the rows to predict",
    },
  ];
  const pickers: Partial<Record<keyof PaneRanges, RangePicker>> = {};
  for (const spec of pickerSpecs) {
    pickers[spec.field] = renderRangePicker(
      spec,
      host,
      inputs.ranges[spec.field],
      (address) => {
        inputs.ranges[spec.field] = address;
        changed(true);
        if (spec.field === "predictors") void refreshColumns();
        if (spec.field !== "newRows") scheduleOutcome();
        renderFormulaPreview();
      },
      say,
    );
    ranges.section.append(pickers[spec.field]!.element);
  }

  // How the target reads (number or yes/no, its event), under the target picker.
  const outcomeNote = el("p", { className: "hint outcome-line", testid: "target-outcome", id: "target-outcome" });
  outcomeNote.setAttribute("aria-live", "polite");
  pickers.target!.element.after(outcomeNote);

  // Header toggle.
  const headerField = el("div", { className: "field" });
  const headerLabel = el("label", { text: "Header row in predictors" });
  headerLabel.htmlFor = "header-toggle";
  const headerSelect = el("select", { id: "header-toggle", testid: "header-toggle" });
  for (const [value, label] of [
    ["auto", "Detect (default)"],
    ["yes", "Yes: the first row holds names"],
    ["no", "No: every row is data"],
  ] as const) {
    const option = el("option", { text: label });
    option.value = value;
    headerSelect.append(option);
  }
  headerSelect.value = inputs.header;
  const headerHint = el("p", { className: "hint", id: "header-toggle-hint", text: "Without names, columns are called x1, x2, …" });
  headerSelect.setAttribute("aria-describedby", headerHint.id);
  headerSelect.addEventListener("change", () => {
    inputs.header = headerSelect.value === "yes" || headerSelect.value === "no" ? headerSelect.value : "auto";
    changed(true);
    void refreshColumns();
    scheduleOutcome();
    renderFormulaPreview();
  });
  headerField.append(headerLabel, headerSelect, headerHint);

  // ---- Settings -----------------------------------------------------------------------------
  const form = renderSettingsForm(inputs, (name) => {
    changed(true);
    renderFormulaPreview();
    renderButtons();
    if (OUTCOME_SETTINGS.includes(name)) scheduleOutcome();
  });
  ranges.section.insertBefore(headerField, pickers.newRows!.element);
  ranges.section.append(form.weightsElement);
  const settings = section("pane-settings", "Settings");
  settings.section.append(form.element);

  // ---- Fit ----------------------------------------------------------------------------------
  const fitting = section("pane-fit", "Fit");
  const fitButton = button("Fit", "fit-button", "primary");
  const cancelButton = button("Cancel", "cancel-button");
  cancelButton.setAttribute("aria-label", "Cancel the fit");
  const fitButtons = el("div", { className: "buttons" });
  fitButtons.append(fitButton, cancelButton);
  const progressWrap = el("div", { className: "progress" });
  const progress = el("progress", { id: "fit-progress", testid: "fit-progress" });
  const progressLabel = el("span", { id: "fit-progress-label", testid: "fit-progress-label" });
  progress.setAttribute("aria-labelledby", "fit-progress-label");
  progress.max = 1;
  progressWrap.append(progress, progressLabel);
  progressWrap.hidden = true;
  const status = el("p", { className: "status", id: "fit-status", testid: "status" });
  status.setAttribute("role", "status");
  const staleBanner = el("div", { className: "banner", testid: "stale-banner" });
  const staleText = el("p", { text: "Inputs changed — fit again to update the results." });
  const staleFit = button("Fit again", "stale-fit-button");
  staleBanner.append(staleText, staleFit);
  staleBanner.hidden = true;
  fitting.section.append(fitButtons, progressWrap, status, staleBanner);

  // ---- Results ------------------------------------------------------------------------------
  const results = section("pane-results", "Results");
  results.section.dataset.testid = "results";
  const resultsEmpty = el("p", { className: "hint", text: "Results appear here after a fit." });
  const resultsBody = el("div", { className: "results-body" });
  resultsBody.hidden = true;
  results.section.append(resultsEmpty, resultsBody);

  const summary = el("dl", { className: "summary" });
  const summaryItem = (label: string, testid: string): HTMLElement => {
    const dt = el("dt", { text: label });
    const dd = el("dd");
    const value = el("span", { testid });
    dd.append(value);
    summary.append(dt, dd);
    return value;
  };
  const chosenStrength = summaryItem("Strength λ", "chosen-strength");
  const chosenMix = summaryItem(MIX_LABEL, "chosen-mix");
  const chosenError = summaryItem("Cross-validated error", "chosen-error");
  const chosenRule = summaryItem("Chosen by", "chosen-rule");
  const chosenNonzero = summaryItem("Terms kept", "chosen-nonzero");
  const chosenRows = summaryItem("Rows", "chosen-rows");
  // Yes/no fits only (hidden, with their labels, for a number target).
  const chosenOutcome = summaryItem("Outcome", "chosen-outcome");
  const chosenClassFit = summaryItem("In-sample", "chosen-class-fit");
  const chosenCutoff = summaryItem("At the cutoff", "chosen-cutoff");
  const twoClassRows = [chosenOutcome, chosenClassFit, chosenCutoff];
  // With cross-validation: the deals of the folds; with honest error=yes: the nested CV error.
  const chosenRepeats = summaryItem("Fold deals (repeats)", "chosen-repeats");
  const chosenHonest = summaryItem("Honest error (whole procedure)", "chosen-honest");
  const notes = el("ul", { className: "notes", testid: "fit-notes" });
  notes.setAttribute("aria-label", "Notes on the fit");

  const chartArea = el("div", { className: "charts" });
  const charts: Partial<
    Record<ChartKind, { handle: ChartHandle | null; box: HTMLElement; caption: HTMLElement; png: HTMLButtonElement; svg: HTMLButtonElement; note: HTMLElement; control: HTMLElement | null }>
  > = {};
  // The CV chart's x axis: λ itself, or each mix's λ over the top of its own grid (charts.ts
  // CvAxis). Kept while the pane is open, across fits.
  let cvAxis: CvAxis = DEFAULT_CV_AXIS;
  for (const chart of CHARTS) {
    const figure = el("figure", { className: "chart" });
    const heading = el("h3", { text: chart.title, id: `chart-${chart.kind}-title` });
    const control = chart.kind === "cv" ? cvAxisControl() : null;
    const box = el("div", { className: "chart-box", testid: `chart-${chart.kind}`, id: `chart-${chart.kind}` });
    // mountChart makes the box an image labelled with its description (describe()).
    const note = el("p", { className: "hint" });
    note.hidden = true;
    const caption = el("figcaption", { testid: `chart-${chart.kind}-caption`, id: `chart-${chart.kind}-caption` });
    const png = button("Save PNG", `save-png-${chart.kind}`);
    png.setAttribute("aria-label", `Save PNG of the ${chart.title.toLowerCase()}`);
    const svg = button("Save SVG", `save-svg-${chart.kind}`);
    svg.setAttribute("aria-label", `Save SVG of the ${chart.title.toLowerCase()}`);
    const saveButtons = el("div", { className: "buttons" });
    saveButtons.append(png, svg);
    figure.setAttribute("aria-labelledby", heading.id);
    figure.append(heading, ...(control ? [control] : []), box, note, caption, saveButtons);
    chartArea.append(figure);
    charts[chart.kind] = { handle: null, box, caption, png, svg, note, control };
    png.addEventListener("click", () => {
      const handle = charts[chart.kind]?.handle;
      if (!handle) return;
      try {
        download(handle.exportPng(), `${chart.file}.png`);
        say(`Saved ${chart.file}.png`);
      } catch (error) {
        say(`Could not save the picture: ${messageOf(error)}`, true);
      }
    });
    svg.addEventListener("click", () => {
      const handle = charts[chart.kind]?.handle;
      if (!handle) return;
      try {
        const { url, release } = svgUrl(handle.exportSvg());
        download(url, `${chart.file}.svg`);
        setTimeout(release, 10_000);
        say(`Saved ${chart.file}.svg`);
      } catch (error) {
        say(`Could not save the picture: ${messageOf(error)}`, true);
      }
    });
  }

  const sureCharts: Partial<
    Record<AssuranceKind, { handle: AssuranceChartHandle | null; box: HTMLElement; caption: HTMLElement; png: HTMLButtonElement; svg: HTMLButtonElement; note: HTMLElement }>
  > = {};
  for (const chart of ASSURANCE_CHARTS) {
    const figure = el("figure", { className: "chart" });
    const heading = el("h3", { text: chart.title, id: `chart-${chart.id}-title` });
    const box = el("div", { className: "chart-box", testid: `chart-${chart.id}`, id: `chart-${chart.id}` });
    const note = el("p", { className: "hint", testid: `chart-${chart.id}-note` });
    note.hidden = true;
    const caption = el("figcaption", { testid: `chart-${chart.id}-caption`, id: `chart-${chart.id}-caption` });
    const png = button("Save PNG", `save-png-${chart.id}`);
    png.setAttribute("aria-label", `Save PNG of the ${chart.title.toLowerCase()} chart`);
    const svg = button("Save SVG", `save-svg-${chart.id}`);
    svg.setAttribute("aria-label", `Save SVG of the ${chart.title.toLowerCase()} chart`);
    const saveButtons = el("div", { className: "buttons" });
    saveButtons.append(png, svg);
    figure.setAttribute("aria-labelledby", heading.id);
    figure.append(heading, box, note, caption, saveButtons);
    chartArea.append(figure);
    sureCharts[chart.kind] = { handle: null, box, caption, png, svg, note };
    png.addEventListener("click", () => {
      const handle = sureCharts[chart.kind]?.handle;
      if (!handle) return;
      try {
        download(handle.exportPng(), `${chart.file}.png`);
        say(`Saved ${chart.file}.png`);
      } catch (error) {
        say(`Could not save the picture: ${messageOf(error)}`, true);
      }
    });
    svg.addEventListener("click", () => {
      const handle = sureCharts[chart.kind]?.handle;
      if (!handle) return;
      try {
        const { url, release } = svgUrl(handle.exportSvg());
        download(url, `${chart.file}.svg`);
        setTimeout(release, 10_000);
        say(`Saved ${chart.file}.svg`);
      } catch (error) {
        say(`Could not save the picture: ${messageOf(error)}`, true);
      }
    });
  }

  /**
   * Two radio buttons shown as a segmented switch: a labelled group (fieldset and legend), each
   * option a real radio input (Tab to the group, arrow keys to choose), visible focus ring.
   */
  function cvAxisControl(): HTMLElement {
    const group = el("fieldset", { className: "segmented", testid: "cv-axis" });
    group.append(el("legend", { text: "X axis" }));
    for (const axis of CV_AXES) {
      const label = el("label");
      const input = el("input", { testid: `cv-axis-${axis}`, id: `cv-axis-${axis}` });
      input.type = "radio";
      input.name = "cv-axis";
      input.value = axis;
      input.checked = axis === cvAxis;
      input.addEventListener("change", () => {
        if (!input.checked) return;
        cvAxis = axis;
        const slot = charts.cv;
        if (!slot?.handle) return;
        try {
          slot.handle.setCvAxis(axis);
          slot.caption.textContent = slot.handle.describe();
        } catch (error) {
          slot.caption.textContent = `The chart could not be drawn: ${messageOf(error)}`;
        }
      });
      label.append(input, el("span", { text: CV_AXIS_NAMES[axis] }));
      group.append(label);
    }
    return group;
  }

  const tableHeading = el("h3", { text: "Coefficients", id: "coefficients-title" });
  const tableHolder = el("div", { className: "table-scroll" });
  tableHolder.setAttribute("role", "region");
  tableHolder.setAttribute("aria-labelledby", tableHeading.id);
  tableHolder.tabIndex = 0;
  const copyButton = button("Copy", "copy-button");
  copyButton.setAttribute("aria-label", "Copy the coefficient table");
  const copyStatus = el("span", { className: "inline-status", testid: "copy-status" });
  copyStatus.setAttribute("role", "status");
  const copyRow = el("div", { className: "buttons" });
  copyRow.append(copyButton, copyStatus);
  resultsBody.append(summary, notes, chartArea, tableHeading, tableHolder, copyRow);

  // ---- Formulas on the sheet ----------------------------------------------------------------
  const formulas = section("pane-formulas", "Formulas on the sheet");
  formulas.section.append(
    el("p", {
      className: "hint",
      text: "Puts SHRINK.COEFS and SHRINK.CHOICE (and SHRINK.PREDICT when new rows are chosen) side by side from the chosen cell. They reuse this fit, and update when the data change.",
    }),
  );
  const destination = renderRangePicker(
    {
      key: "destination",
      label: "Top-left cell for the formulas",
      hint: "The top-left cell; each result spills down and to the right.",
      optional: false,
      emptyText: "not chosen",
      promptLabel: "Select the cell for the formulas",
      singleCell: true,
    },
    host,
    inputs.ranges.destination,
    (address) => {
      inputs.ranges.destination = address;
      hideConfirm();
      scheduleSave();
      renderFormulaPreview();
    },
    say,
  );
  const formulaList = el("ul", { className: "formula-list", testid: "formula-preview" });
  formulaList.setAttribute("aria-label", "Formulas to insert");
  const insertButton = button("Insert formulas", "insert-button", "primary");
  const insertStatus = el("p", { className: "status", testid: "insert-status" });
  insertStatus.setAttribute("role", "status");
  const confirmPanel = el("div", { className: "confirm", testid: "confirm-panel", id: "confirm-panel" });
  confirmPanel.setAttribute("role", "group");
  confirmPanel.setAttribute("aria-labelledby", "confirm-title");
  confirmPanel.setAttribute("aria-describedby", "confirm-text");
  confirmPanel.tabIndex = -1;
  const confirmTitle = el("h3", { text: "Some of those cells are not empty", id: "confirm-title" });
  const confirmText = el("div", { id: "confirm-text" });
  const confirmCells = el("ul", { testid: "confirm-cells", className: "cells" });
  const confirmOverwrite = button("Overwrite", "confirm-overwrite", "danger");
  confirmOverwrite.setAttribute("aria-label", "Overwrite those cells");
  const confirmCancel = button("Cancel", "confirm-cancel");
  confirmCancel.setAttribute("aria-label", "Cancel: write nothing");
  const confirmButtons = el("div", { className: "buttons" });
  confirmButtons.append(confirmOverwrite, confirmCancel);
  confirmPanel.append(confirmTitle, confirmText, confirmButtons);
  confirmPanel.hidden = true;
  formulas.section.append(destination.element, formulaList, insertButton, confirmPanel, insertStatus);

  // ---- Report -------------------------------------------------------------------------------
  const report = section("pane-report", "Report sheet");
  report.section.append(
    el("p", {
      className: "hint",
      text: "Adds a new sheet with the inputs, settings, the chosen model, how sure it is (repeats, honest error, interval widths, kept shares and stability), the cross-validation table and a chart of the coefficient path.",
    }),
  );
  const reportButton = button("Write report sheet", "report-button", "primary");
  const reportStatus = el("p", { className: "status", testid: "report-status" });
  reportStatus.setAttribute("role", "status");
  report.section.append(reportButton, reportStatus);

  // ---- Data source: worksheet ranges (the sections above), a local file or a sums table ------
  // The file and sums-table panel (taskpane/sources/sumsPane.ts) is loaded on the first switch.
  const sheetSections = [ranges.section, settings.section, fitting.section, results.section, formulas.section, report.section];
  let source: SourceKind = "sheet";
  let sums: SumsPaneHandle | null = null;
  let sumsLoading: Promise<SumsPaneHandle> | null = null;
  const sumsHolder = el("div", { className: "sums-holder" });
  const sourceChoice = el("fieldset", { className: "segmented source-choice", testid: "source-choice" });
  const sourceRadios = new Map<SourceKind, HTMLInputElement>();
  const loadRoutes = options.sumsRoutes;
  if (loadRoutes) {
    sourceChoice.append(el("legend", { text: "Data source" }));
    const offered = options.sumsSources ?? ["file", "sums"];
    for (const kind of SOURCE_KINDS.filter((k) => k.id === "sheet" || offered.includes(k.id))) {
      const label = el("label");
      const input = el("input", { testid: `source-${kind.id}`, id: `source-${kind.id}` });
      input.type = "radio";
      input.name = "source-choice";
      input.value = kind.id;
      input.checked = kind.id === source;
      input.addEventListener("change", () => {
        if (input.checked) void showSource(kind.id);
      });
      sourceRadios.set(kind.id, input);
      label.append(input, el("span", { text: kind.label }));
      sourceChoice.append(label);
    }
  }

  function sumsPanel(routesOf: (runner: FitRunner) => Promise<SumsRoutes>): Promise<SumsPaneHandle> {
    sumsLoading ??= (async () => {
      const [{ mountSumsPane }, { FileSumsReader }, routes] = await Promise.all([
        import(/* webpackChunkName: "sums-pane" */ "../sources/sumsPane"),
        import(/* webpackChunkName: "sums-pane" */ "../sources/fileSums"),
        routesOf(runner),
      ]);
      const handle = mountSumsPane({ host, reader: options.fileReader ?? new FileSumsReader(), routes, onSheetWritten: options.onSheetWritten, say });
      handle.setTheme(host.theme());
      sumsHolder.replaceChildren(handle.element);
      sums = handle;
      return handle;
    })();
    sumsLoading.catch(() => (sumsLoading = null));
    return sumsLoading;
  }

  async function showSource(next: SourceKind): Promise<void> {
    source = next;
    const radio = sourceRadios.get(next);
    if (radio && !radio.checked) radio.checked = true;
    for (const part of sheetSections) part.hidden = next !== "sheet";
    sumsHolder.hidden = next === "sheet";
    if (next === "sheet" || !loadRoutes) return;
    try {
      const panel = await sumsPanel(loadRoutes);
      if (source === next) panel.setKind(next);
    } catch (error) {
      say(`The file and sums-table fits could not be loaded: ${messageOf(error)}`, true);
    }
  }

  root.append(
    ...(loadRoutes ? [sourceChoice] : []),
    ranges.section,
    settings.section,
    fitting.section,
    sumsHolder,
    message,
    results.section,
    formulas.section,
    report.section,
  );
  void showSource("sheet");

  // ---------------------------------------------------------------------------------------------
  // Behaviour

  function scheduleSave(): void {
    clearTimeout(saveTimer);
    saveTimer = setTimeout(() => {
      host.saveSetting(INPUTS_KEY, inputs).catch((error: unknown) => say(`Could not remember the choices in this workbook: ${messageOf(error)}`, true));
    }, 400);
  }

  const ready = (): boolean => inputs.ranges.target !== "" && inputs.ranges.predictors !== "";

  /** An input of the fit changed: remember it, and mark a shown result stale. */
  function changed(affectsFit: boolean): void {
    scheduleSave();
    if (affectsFit) dispatch({ type: "inputsChanged" });
    if (state.phase === "idle") status.textContent = fitStatusText(state, ready());
  }

  async function refreshColumns(): Promise<void> {
    const address = inputs.ranges.predictors ? firstRowAddress(inputs.ranges.predictors) : null;
    if (!address) {
      form.setColumns([]);
      return;
    }
    try {
      const rows = await host.readValues(address);
      form.setColumns(columnNames(rows[0], inputs.header));
    } catch {
      form.setColumns([]);
    }
  }

  // ---- How the target reads --------------------------------------------------------------
  let outcomeTimer: ReturnType<typeof setTimeout> | undefined;
  let outcomeRun = 0;

  /** Reads the target again shortly (ranges or the settings that decide its kind changed). */
  function scheduleOutcome(): void {
    clearTimeout(outcomeTimer);
    outcomeTimer = setTimeout(() => void refreshOutcome(), 250);
  }

  function showOutcome(detection: OutcomeDetection | null): void {
    outcomeNote.textContent = detection ? detection.line : inputs.ranges.target ? "Choose the predictors to see how the target reads." : "";
    outcomeNote.dataset.kind = detection?.ok ? detection.kind : "";
    outcomeNote.classList.toggle("failed", detection !== null && !detection.ok);
    if (detection?.ok) form.setOutcome(detection.kind, detection.labels, detection.defaultEvent);
    else form.setOutcome(null);
  }

  async function refreshOutcome(): Promise<void> {
    const mine = ++outcomeRun;
    if (!inputs.ranges.target || !inputs.ranges.predictors) {
      showOutcome(null);
      return;
    }
    try {
      const [target, predictors] = await Promise.all([host.readValues(inputs.ranges.target), host.readValues(inputs.ranges.predictors)]);
      if (mine !== outcomeRun || disposed) return;
      showOutcome(detectOutcome(target, predictors, inputs));
    } catch (error) {
      if (mine !== outcomeRun || disposed) return;
      showOutcome({ ok: false, message: messageOf(error), line: `The target can't be read yet: ${messageOf(error)}` });
    }
  }

  let renderedOutcome: FitOutcome | null = null;

  function dispatch(event: FitEvent): void {
    const before = state;
    state = reduceFit(state, event);
    if (state !== before) render(before);
  }

  function renderButtons(): void {
    const busy = state.phase === "fitting";
    fitButton.disabled = busy;
    cancelButton.disabled = !busy;
  }

  function render(before: FitState): void {
    renderButtons();
    const busy = state.phase === "fitting";
    progressWrap.hidden = !busy;
    root.setAttribute("aria-busy", String(busy));
    if (state.phase === "fitting") {
      const total = state.total;
      if (total > 0) {
        progress.max = total;
        progress.value = Math.min(state.done, total);
      } else {
        progress.removeAttribute("value");
      }
      progressLabel.textContent = progressText(state.done, total);
      // The live status changes at the start and every quarter, not at every step.
      const text = fitStatusText(state);
      if (before.phase !== "fitting" || text !== status.textContent) status.textContent = text;
    } else {
      status.textContent = fitStatusText(state, ready());
    }
    status.classList.toggle("failed", state.phase === "failed");
    const outcome = shownOutcome(state);
    // Results that don't answer the current inputs stay visible, dimmed, under a banner.
    const old = state.phase === "stale" || ((state.phase === "failed" || state.phase === "cancelled") && outcome !== null);
    staleBanner.hidden = !old;
    staleText.textContent =
      state.phase === "stale" ? "Inputs changed — fit again to update the results." : "The results below are from the last fit that finished.";
    resultsBody.classList.toggle("is-stale", old);
    if (outcome !== renderedOutcome) renderResults(outcome);
    if (state.phase !== before.phase) renderFormulaPreview();
  }

  function renderResults(outcome: FitOutcome | null): void {
    renderedOutcome = outcome;
    resultsEmpty.hidden = outcome !== null;
    resultsBody.hidden = outcome === null;
    if (!outcome) return;
    const r = outcome.result;
    chosenStrength.textContent = formatNumber(r.strength);
    chosenStrength.dataset.value = String(r.strength);
    chosenMix.textContent = r.mix === 0 ? "0 (ridge)" : r.mix === 1 ? "1 (lasso)" : `${formatNumber(r.mix)} (elastic net)`;
    chosenMix.dataset.value = String(r.mix);
    const chosen = r.choices ? (r.rule === "one-se" ? r.choices.oneSe : r.choices.lowest) : null;
    chosenError.textContent = chosen && r.cv ? measureSummary(r.cv.measure, errorWithSe(chosen.error, chosen.se)) : "none (fixed strength)";
    chosenRule.textContent = r.rule === "fixed" ? "fixed strength" : r.rule === "lowest" && r.cv ? bestPointLabel(r.cv.measure) : RULE_WORDS[r.rule];
    const termsKept = r.coefficients.filter((b) => b !== 0).length;
    chosenNonzero.textContent = `${termsKept} of ${r.terms.length}`;
    chosenRows.textContent = `${r.rowsUsed} used, ${outcome.prepared.dataset.rowsSkipped} skipped`;
    const dataset = outcome.prepared.dataset;
    const classFit = r.outcome === "two-class" ? r.classFit : null;
    for (const value of twoClassRows) {
      const dd = value.parentElement as HTMLElement;
      dd.hidden = classFit === null;
      (dd.previousElementSibling as HTMLElement).hidden = classFit === null;
    }
    if (classFit) {
      chosenOutcome.textContent = outcomeLine("two-class", dataset.classes, r.rowsUsed);
      chosenClassFit.textContent = `log loss ${formatNumber(classFit.logLoss)}, Brier ${formatNumber(classFit.brier)}, AUC ${formatNumber(classFit.auc)}`;
      const event = dataset.classes ? `'${dataset.classes.event}'` : "event";
      chosenCutoff.textContent =
        `${formatNumber(classFit.cutoff)}: ${formatNumber(classFit.eventsCaught)} events caught, ${formatNumber(classFit.eventsMissed)} missed, ` +
        `${formatNumber(classFit.falseAlarms)} false alarms, ${formatNumber(classFit.correctAllClear)} correct all-clear (a row is flagged as ${event} at or above the cutoff)`;
    }
    const noteTexts = [...outcome.prepared.dataset.notes, ...r.warnings.map((w) => w.message)];
    notes.replaceChildren(...noteTexts.map((text) => el("li", { text })));
    notes.hidden = noteTexts.length === 0;
    const cv = r.cv;
    for (const value of [chosenRepeats]) {
      (value.parentElement as HTMLElement).hidden = cv === null;
      ((value.parentElement as HTMLElement).previousElementSibling as HTMLElement).hidden = cv === null;
    }
    chosenRepeats.textContent = cv ? (cv.repeats > 1 ? `${cv.repeats} (the choice is made on the averaged curve)` : "1") : "";
    const honest = r.honest ?? null;
    (chosenHonest.parentElement as HTMLElement).hidden = honest === null;
    ((chosenHonest.parentElement as HTMLElement).previousElementSibling as HTMLElement).hidden = honest === null;
    chosenHonest.textContent = honest
      ? `${measureSummary(honest.measure, errorWithSe(honest.error, honest.se))}, over ${honest.folds} outer folds; the CV error above (${errorWithSe(honest.optimistic, chosen?.se ?? NaN)}) chose the model, so it is optimistic`
      : "";
    renderCharts(r, r.predictorSpreads.map((spread) => (spread > 0 ? spread : null)));
    renderAssurance(outcome);
    const caption =
      r.outcome === "two-class"
        ? `${r.terms.length} terms, largest effect first: log-odds of ${dataset.classes ? `'${dataset.classes.event}'` : "the event"} per unit, the odds ratio (what the odds are multiplied by per unit), and log-odds per standard deviation of the predictor`
        : `${r.terms.length} terms, largest effect first (standardized: per standard deviation of the predictor)`;
    tableHolder.replaceChildren(renderCoefficientTable(r, caption));
  }

  /**
   * The chart library, or null while its chunk loads (charts.ts is loaded on first use,
   * chartLibrary.ts): then the captions say so and the outcome's charts are drawn when it
   * arrives, if that outcome is still the one shown. fit() starts the load with the fit, so
   * this is rare.
   */
  function chartsOrLater(outcome: FitOutcome): ChartLibrary | null {
    const library = chartLibraryNow();
    if (library) return library;
    const captions = [...CHARTS.map((c) => charts[c.kind]?.caption), ...ASSURANCE_CHARTS.map((c) => sureCharts[c.kind]?.caption)];
    for (const caption of captions) if (caption) caption.textContent = "Loading the charts…";
    loadChartLibrary().then(
      () => {
        if (!disposed && renderedOutcome === outcome) {
          renderCharts(outcome.result, outcome.result.predictorSpreads.map((spread) => (spread > 0 ? spread : null)));
          renderAssurance(outcome);
        }
      },
      (error: unknown) => {
        for (const caption of captions) if (caption) caption.textContent = `The charts could not be loaded from the add-in's server: ${messageOf(error)}`;
      },
    );
    return null;
  }

  function renderCharts(result: FitResult, spreads: (number | null)[]): void {
    const library = renderedOutcome ? chartsOrLater(renderedOutcome) : chartLibraryNow();
    if (!library) return;
    for (const chart of CHARTS) {
      const slot = charts[chart.kind];
      if (!slot) continue;
      const unavailable = chart.kind === "cv" && !result.cv;
      slot.note.hidden = !unavailable;
      slot.note.textContent = unavailable ? "No cross-validation ran: the strength was fixed in the settings." : "";
      slot.box.hidden = unavailable;
      if (slot.control) slot.control.hidden = unavailable;
      slot.png.disabled = unavailable;
      slot.svg.disabled = unavailable;
      if (unavailable) {
        slot.caption.textContent = "";
        continue;
      }
      try {
        if (slot.handle) slot.handle.update(result, spreads);
        else slot.handle = library.mountChart(slot.box, chart.kind, result, { theme: host.theme(), spreads, cvAxis });
        slot.caption.textContent = slot.handle.describe();
      } catch (error) {
        slot.caption.textContent = `The chart could not be drawn: ${messageOf(error)}`;
      }
    }
  }

  /** The held-out points of the outcome shown (computed once per outcome: CV+ intervals cost O(rows²)). */
  let heldOutFor: { outcome: FitOutcome; points: HeldOutPoints | null; problem: string | null } | null = null;

  function heldOutOf(outcome: FitOutcome): { points: HeldOutPoints | null; problem: string | null } {
    if (heldOutFor?.outcome === outcome) return heldOutFor;
    let points: HeldOutPoints | null = null;
    let problem: string | null = null;
    try {
      const dataset = outcome.prepared.dataset;
      points = heldOutPoints(outcome.result, dataset.target, dataset.predictors, outcome.prepared.settings.interval);
    } catch (error) {
      problem = messageOf(error);
    }
    heldOutFor = { outcome, points, problem };
    return heldOutFor;
  }

  function renderAssurance(outcome: FitOutcome): void {
    const library = chartLibraryNow();
    if (!library) return; // renderCharts has asked for it and draws both when it arrives
    const result = outcome.result;
    const { points, problem } = heldOutOf(outcome);
    const view: AssuranceView = { result, heldOut: points };
    for (const chart of ASSURANCE_CHARTS) {
      const slot = sureCharts[chart.kind];
      if (!slot) continue;
      let unavailable: string | null = null;
      if (chart.kind === "heldOut") {
        if (result.outcome === "two-class") {
          unavailable =
            "Held-out predictions vs actual are for number targets. For a yes/no target see the cross-validated measure above (deviance, misclassified share or AUC), which scores the held-out probabilities.";
        } else if (problem) unavailable = `The held-out predictions could not be worked out: ${problem}`;
        else if (!points) unavailable = "No cross-validation ran (the strength was fixed in the settings), so no row was held out.";
      } else if (!result.keptShare || result.keptShare.length === 0) {
        unavailable = "No cross-validation ran (the strength was fixed in the settings), so there are no fold models to count.";
      }
      slot.note.hidden = unavailable === null;
      slot.note.textContent = unavailable ?? "";
      slot.box.hidden = unavailable !== null;
      slot.png.disabled = unavailable !== null;
      slot.svg.disabled = unavailable !== null;
      if (unavailable !== null) {
        slot.caption.textContent = "";
        continue;
      }
      try {
        if (slot.handle) slot.handle.update(view);
        else slot.handle = library.mountAssuranceChart(slot.box, chart.kind, view, host.theme());
        slot.caption.textContent = slot.handle.describe();
      } catch (error) {
        slot.caption.textContent = `The chart could not be drawn: ${messageOf(error)} (${library.describeAssuranceChart(chart.kind, view)})`;
      }
    }
  }

  async function fit(): Promise<FitOutcome | null> {
    const check = form.check();
    if (!check.ok) {
      say("Fix the settings marked above first.", true);
      const bad = settings.section.querySelector<HTMLElement>("[aria-invalid='true']");
      bad?.focus();
      return null;
    }
    if (!inputs.ranges.target || !inputs.ranges.predictors) {
      say("Choose the target and the predictors first.", true);
      return null;
    }
    cancelRun?.();
    const myRun = ++run;
    const source = cancelSource();
    cancelRun = () => {
      source.cancel();
      dispatch({ type: "cancelled", run: myRun });
    };
    const used = copyInputs(inputs);
    dispatch({ type: "start", run: myRun });
    // The results will want the charts: fetch their chunk while the fit runs (chartLibrary.ts).
    const chartsReady = loadChartLibrary().catch(() => null);
    const started = performance.now();
    // Watch the ranges from now on: a change during the fit already makes its result stale.
    unwatch?.();
    unwatch = null;
    const watched = [used.ranges.target, used.ranges.predictors, used.ranges.newRows].filter((a) => a !== "");
    host.watch(watched, () => dispatch({ type: "inputsChanged" })).then(
      (stop) => {
        if (run === myRun && !disposed) unwatch = stop;
        else stop();
      },
      () => undefined, // no change notices from this host: results just won't be marked stale by sheet edits
    );
    try {
      const [target, predictors, newRows] = await Promise.all([
        host.readValues(used.ranges.target),
        host.readValues(used.ranges.predictors),
        used.ranges.newRows ? host.readValues(used.ranges.newRows) : Promise.resolve(null),
      ]);
      if (source.token.cancelled) throw new CancelledError();
      const prepared = prepare(target, predictors, mixesText(used) || null, settingsText(used) || null);
      const result = await runner.fit(prepared.request, source.token, (p) => dispatch({ type: "progress", run: myRun, done: p.done, total: p.total }));
      const outcome: FitOutcome = { result, prepared, inputs: used, values: { target, predictors, newRows }, elapsedMs: performance.now() - started };
      // Results and charts together ("Fitted" means drawn); a chunk that fails to load leaves a
      // caption saying so (renderCharts) and the results without charts.
      await chartsReady;
      if (source.token.cancelled) throw new CancelledError();
      dispatch({ type: "succeeded", run: myRun, outcome });
      return state.phase === "done" && state.outcome === outcome ? outcome : null;
    } catch (error) {
      if (isCancelled(error) || source.token.cancelled) dispatch({ type: "cancelled", run: myRun });
      else dispatch({ type: "failed", run: myRun, message: messageOf(error) });
      return null;
    } finally {
      if (run === myRun) cancelRun = null;
    }
  }

  /** The current result when it matches the inputs; otherwise a new fit. */
  async function currentOutcome(): Promise<FitOutcome | null> {
    if (state.phase === "done") return state.outcome;
    if (state.phase === "fitting") {
      say("Wait for the fit to finish (or cancel it) first.", true);
      return null;
    }
    return fit();
  }

  function renderFormulaPreview(): void {
    const items: HTMLElement[] = [];
    if (!inputs.ranges.target || !inputs.ranges.predictors) {
      items.push(el("li", { className: "hint", text: "Choose the target and predictors to see the formulas." }));
    } else {
      const outcome = state.phase === "done" ? state.outcome : null;
      let placements: Placement[] | null = null;
      if (outcome && inputs.ranges.destination) {
        try {
          placements = planPlacements(inputs.ranges.destination, spillShapes(outcome, formulaIds(outcome.inputs)), outcome.inputs);
        } catch {
          placements = null;
        }
      }
      for (const id of formulaIds(inputs)) {
        const li = el("li");
        li.append(el("code", { text: formulaText(id, inputs) }));
        const at = placements?.find((p) => p.id === id);
        if (at) li.append(el("span", { className: "hint", text: ` in ${at.anchor}, spilling over ${at.area}` }));
        items.push(li);
      }
    }
    formulaList.replaceChildren(...items);
  }

  let pendingPlacements: Placement[] | null = null;

  function hideConfirm(): void {
    confirmPanel.hidden = true;
    pendingPlacements = null;
  }

  async function write(placements: Placement[]): Promise<void> {
    try {
      await writePlacements(host, placements);
      insertStatus.classList.remove("failed");
      insertStatus.textContent = `Wrote ${placements.map((p) => `SHRINK.${p.id} in ${p.anchor}`).join(", ")}.`;
      options.onSheetWritten?.();
    } catch (error) {
      insertStatus.classList.add("failed");
      insertStatus.textContent = `Could not write the formulas: ${messageOf(error)}`;
    }
  }

  async function insert(): Promise<void> {
    hideConfirm();
    insertStatus.classList.remove("failed");
    if (!inputs.ranges.destination) {
      insertStatus.classList.add("failed");
      insertStatus.textContent = "Choose the cell for the formulas first (select it, then Use selection).";
      return;
    }
    const outcome = await currentOutcome();
    if (!outcome) {
      insertStatus.classList.add("failed");
      insertStatus.textContent = "Nothing written: the fit has to succeed first.";
      return;
    }
    insertButton.disabled = true;
    try {
      const placements = planPlacements(inputs.ranges.destination, spillShapes(outcome, formulaIds(outcome.inputs)), outcome.inputs);
      insertStatus.textContent = "Checking the cells…";
      const filled = await findFilledCells(host, placements);
      if (filled.length === 0) {
        await write(placements);
        return;
      }
      pendingPlacements = placements;
      confirmCells.replaceChildren(...filledLines(filled).map((line) => el("li", { text: line })));
      const count = filled.reduce((n, f) => n + f.cells.length, 0);
      confirmText.replaceChildren(
        el("p", { text: `Writing the formulas would replace what ${count === 1 ? "1 cell holds" : `${count} cells hold`} now:` }),
        confirmCells,
        el("p", { text: "Overwrite them, or cancel and choose another cell?" }),
      );
      insertStatus.textContent = "";
      confirmPanel.hidden = false;
      confirmPanel.focus();
    } catch (error) {
      insertStatus.classList.add("failed");
      insertStatus.textContent = `Nothing written: ${messageOf(error)}`;
    } finally {
      insertButton.disabled = false;
    }
  }

  async function writeReport(): Promise<void> {
    reportStatus.classList.remove("failed");
    const outcome = await currentOutcome();
    if (!outcome) {
      reportStatus.classList.add("failed");
      reportStatus.textContent = "No report written: the fit has to succeed first.";
      return;
    }
    reportButton.disabled = true;
    reportStatus.textContent = "Writing the report…";
    try {
      const used = outcome.inputs;
      const rangeList = [
        { label: "target", address: used.ranges.target },
        { label: "predictors", address: used.ranges.predictors },
        ...(used.ranges.newRows ? [{ label: "new rows", address: used.ranges.newRows }] : []),
      ];
      const sheet = buildReport({
        result: outcome.result,
        dataset: outcome.prepared.dataset,
        settings: settingPairs(used),
        ranges: rangeList,
        timestamp: stamp(now()),
        interval: outcome.prepared.settings.interval,
        heldOut: heldOutOf(outcome).points,
      });
      const name = await host.writeReport(sheet);
      reportStatus.textContent = `Report written to the sheet '${name}'.`;
      reportStatus.dataset.sheet = name;
      options.onSheetWritten?.();
    } catch (error) {
      reportStatus.classList.add("failed");
      reportStatus.textContent = `Could not write the report: ${messageOf(error)}`;
    } finally {
      reportButton.disabled = false;
    }
  }

  fitButton.addEventListener("click", () => void fit());
  staleFit.addEventListener("click", () => {
    fitButton.focus();
    void fit();
  });
  cancelButton.addEventListener("click", () => {
    cancelRun?.();
    fitButton.focus();
  });
  copyButton.addEventListener("click", () => {
    const outcome = shownOutcome(state);
    const table = tableHolder.querySelector("table");
    if (!outcome || !table) return;
    copyText(coefficientTsv(coefficientRows(outcome.result)), table).then(
      (how) => (copyStatus.textContent = how === "copied" ? "Copied (tab-separated)." : "Selected: press Ctrl+C (⌘C on a Mac) to copy."),
      (error: unknown) => (copyStatus.textContent = `Could not copy: ${messageOf(error)}`),
    );
  });
  insertButton.addEventListener("click", () => void insert());
  confirmOverwrite.addEventListener("click", () => {
    const placements = pendingPlacements;
    hideConfirm();
    insertButton.focus();
    if (placements) void write(placements);
  });
  confirmCancel.addEventListener("click", () => {
    hideConfirm();
    insertStatus.textContent = "Nothing written.";
    insertButton.focus();
  });
  confirmPanel.addEventListener("keydown", (event) => {
    if (event.key === "Escape") confirmCancel.click();
  });
  reportButton.addEventListener("click", () => void writeReport());

  function applyTheme(): void {
    const theme = host.theme();
    document.documentElement.dataset.theme = theme;
    for (const chart of CHARTS) charts[chart.kind]?.handle?.setTheme(theme);
    for (const chart of ASSURANCE_CHARTS) sureCharts[chart.kind]?.handle?.setTheme(theme);
    sums?.setTheme(theme);
  }
  applyTheme();
  if (typeof window !== "undefined" && typeof window.matchMedia === "function") {
    const query = window.matchMedia("(prefers-color-scheme: dark)");
    const onTheme = (): void => applyTheme();
    query.addEventListener?.("change", onTheme);
    cleanups.push(() => query.removeEventListener?.("change", onTheme));
  }
  if (typeof ResizeObserver !== "undefined" && typeof requestAnimationFrame === "function") {
    // A chart's height follows its width (suggestedHeight), so resizing the charts inside the
    // observer's callback changes chartArea's size again before the browser has delivered the
    // first change: Chromium then reports "ResizeObserver loop completed with undelivered
    // notifications" as a window error (the dev server's overlay shows it). So the callback only
    // asks for one redraw in the next animation frame (notifications until then share it), and
    // the redraw skips when the width is the one last drawn: the height change the redraw itself
    // causes notifies the observer once more, and that notification must not redraw again.
    let frame = 0;
    let drawnWidth = -1;
    const resizeCharts = (): void => {
      frame = 0;
      const width = chartArea.clientWidth;
      if (width === drawnWidth) return;
      drawnWidth = width;
      for (const chart of CHARTS) charts[chart.kind]?.handle?.resize();
      for (const chart of ASSURANCE_CHARTS) sureCharts[chart.kind]?.handle?.resize();
    };
    const observer = new ResizeObserver(() => {
      if (frame === 0) frame = requestAnimationFrame(resizeCharts);
    });
    observer.observe(chartArea);
    cleanups.push(() => {
      observer.disconnect();
      if (frame !== 0) cancelAnimationFrame(frame);
    });
  }

  form.load();
  render(state);
  void refreshColumns();
  void refreshOutcome();
  if (!saved && options.defaults) scheduleSave();

  return {
    fit,
    state: () => state,
    inputs: () => inputs,
    applyTheme,
    source: () => source,
    setSource: showSource,
    sums: () => sums,
    setRanges(next: Partial<PaneRanges>) {
      for (const field of ["target", "predictors", "newRows", "destination"] as const) {
        const address = next[field];
        if (address === undefined) continue;
        inputs.ranges[field] = address;
        if (field === "destination") destination.show(address);
        else pickers[field]?.show(address);
      }
      hideConfirm();
      changed(true);
      void refreshColumns();
      scheduleOutcome();
      renderFormulaPreview();
    },
    dispose() {
      disposed = true;
      clearTimeout(outcomeTimer);
      cancelRun?.();
      unwatch?.();
      clearTimeout(saveTimer);
      for (const cleanup of cleanups) cleanup();
      for (const chart of CHARTS) charts[chart.kind]?.handle?.dispose();
      for (const chart of ASSURANCE_CHARTS) sureCharts[chart.kind]?.handle?.dispose();
      sums?.dispose();
    },
  };
}
