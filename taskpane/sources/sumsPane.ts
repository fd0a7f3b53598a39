/**
 * The pane's two routes that fit from a sums table instead of worksheet ranges (issue 12):
 *
 * - **A local file**: the user picks a CSV or Parquet file; DuckDB (WebAssembly, in its own
 *   worker, fileSums.ts) reads its header, the user chooses the target, predictors, optional
 *   weights and the fold rule among its columns, and Fit computes the sums in the browser (the
 *   file never leaves the machine), then fits from them.
 * - **A sums table**: a range holding the long form of a sums table (e.g. what the user's own
 *   database query returned, pasted into a sheet) is read and fitted the same way.
 *
 * Both end in the usual results: the chosen strength and mix, the cross-validated error, the
 * three charts and the coefficient table, and a button that writes the coefficient table into
 * the sheet as values (coefficientSheet.ts), ready for SHRINK.APPLY, asking in the pane before
 * it overwrites anything. Nothing is written to the sheet when a step fails.
 *
 * The panel runs the fit state machine of the worksheet route (paneState.reduceFit): progress,
 * cancel (for a file: the DuckDB worker is terminated, and the next fit opens a new one), a
 * "stale" banner when a choice changes after a fit, the last results kept on screen under it.
 *
 * Stable test ids (`data-testid`), for the browser tests:
 *   File        file-input, file-status (what was read: "sensor.csv: 12 columns"), file-target,
 *               file-predictors (the fieldset; one checkbox per column, data-column = its name),
 *               file-weights, file-fold-rule, file-fold-column, file-folds; each field's message
 *               <id>-error (file-target-error, …)
 *   Sums table  sums-range-address, sums-range-use-selection (+ -prompt where the host has one)
 *   Settings    sums-mixes, sums-rule, sums-merge-folds, sums-standardize, sums-intercept
 *               (+ sums-mixes-error, sums-merge-folds-error)
 *   Fit         sums-fit-button, sums-cancel-button, sums-progress (<progress>), sums-progress-label,
 *               sums-status (starts "Fitted" when done), sums-stale-banner
 *   Results     sums-results, sums-chosen-strength (data-value full precision), sums-chosen-mix,
 *               sums-chosen-error, sums-chosen-rule, sums-chosen-nonzero, sums-chosen-rows,
 *               sums-chosen-source, sums-chart-path, sums-chart-cv, sums-chart-bars (+ -caption),
 *               sums-results-table (data-coefficients = the coefficients as JSON, full precision)
 *   Write       sums-destination-address, sums-destination-use-selection, sums-write-button,
 *               sums-confirm-panel, sums-confirm-overwrite, sums-confirm-cancel, sums-write-status
 */
import type { FitResult } from "../../engine/fit";
import type { SumsTable } from "../../engine/sumsTable";
import { errorWithSe, MIX_LABEL, RULE_WORDS } from "../../engine/words";
import type { ChartHandle } from "../charts/charts";
import { chartLibraryNow, loadChartLibrary } from "../charts/chartLibrary";
import type { CellValue, SheetHost } from "../host/sheetHost";
import { formatNumber, IDLE, measureSummary, progressText, reduceFit, shownOutcome, type FitEvent, type FitState } from "../pane/paneState";
import { renderRangePicker } from "../pane/rangePickers";
import { renderCoefficientTable } from "../pane/resultsTable";
import { bestPointLabel } from "../outcomeWords";
import { applyFormula, coefficientValues, filledInArea, planCoefficientWrite, writeCoefficients, type CoefficientWrite } from "./coefficientSheet";
import type { FileColumn, FileProgress, FileSumsReader } from "./fileSums";
import {
  checkFileChoice,
  checkSumsFit,
  defaultFileChoice,
  defaultSumsFit,
  emptyFileChoice,
  FOLD_RULES,
  type FileChoice,
  type FileSpec,
  type FoldRuleKind,
  type SumsFitSettings,
} from "./sumsInputs";

/** A cancel flag with a callback, as the routes read it. */
export interface RouteSignal {
  readonly aborted: boolean;
  onAbort(callback: () => void): void;
}

/** What the panel needs from the engine and the SQL side (pane.ts passes the real ones; tests may pass their own). */
export interface SumsRoutes {
  /** The sums table of `file` for `spec`, computed by DuckDB; progress per query. Absent: the pane offers no file route. */
  fileSums?(reader: FileSumsReader, file: File, spec: FileSpec, onProgress: (progress: FileProgress) => void, signal: RouteSignal): Promise<SumsTable>;
  /** A long-form sums table read from a worksheet range (checked). */
  sumsFromLong(rows: CellValue[][]): SumsTable;
  /** The cross-validated fit from the sums. */
  fitFromSums(sums: SumsTable, settings: SumsFitSettings, onProgress: (done: number, total: number) => void, signal: RouteSignal): Promise<FitResult>;
}

/** A finished fit from sums. */
export interface SumsOutcome {
  result: FitResult;
  sums: SumsTable;
  /** Where the sums came from, in words: "sensor.parquet (DuckDB in this browser)", "the sums table in Sums!A1:D200". */
  source: string;
  elapsedMs: number;
}

export interface SumsPaneHandle {
  element: HTMLElement;
  /** Shows the file route's or the sums-table route's inputs. */
  setKind(kind: "file" | "sums"): void;
  fit(): Promise<SumsOutcome | null>;
  state(): FitState<SumsOutcome>;
  setTheme(theme: "light" | "dark"): void;
  dispose(): void;
}

export interface SumsPaneOptions {
  host: SheetHost;
  reader: FileSumsReader;
  routes: SumsRoutes;
  /** After the table was written (e.g. to redraw a stand-in view). */
  onSheetWritten?: () => void;
  /** Where the pane says things outside the fit's status (range picks). */
  say: (text: string, failed?: boolean) => void;
}

// ---------------------------------------------------------------------------------------------
// Small DOM helpers (the pane's own look: pane.ts)

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

function section(id: string, title: string): HTMLElement {
  const s = el("section", { className: "pane-section" });
  s.setAttribute("aria-labelledby", id);
  s.append(el("h2", { text: title, id }));
  return s;
}

function messageOf(error: unknown): string {
  if (error && typeof error === "object" && typeof (error as { message?: unknown }).message === "string") return (error as { message: string }).message;
  return String(error);
}

function isCancelled(error: unknown): boolean {
  return !!error && typeof error === "object" && (error as { name?: unknown }).name === "CancelledError";
}

/** A labelled field: label, control, hint, and a message line tied to the control. */
function field(id: string, label: string, control: HTMLElement, hint?: string): { wrap: HTMLElement; error: HTMLElement } {
  const wrap = el("div", { className: "field" });
  const labelNode = el("label", { text: label });
  labelNode.htmlFor = id;
  control.id = id;
  control.dataset.testid = id;
  const error = el("p", { className: "field-error", id: `${id}-error`, testid: `${id}-error` });
  error.hidden = true;
  const described = [error.id];
  wrap.append(labelNode, control);
  if (hint) {
    const hintNode = el("p", { className: "hint", id: `${id}-hint`, text: hint });
    wrap.append(hintNode);
    described.unshift(hintNode.id);
  }
  wrap.append(error);
  control.setAttribute("aria-describedby", described.join(" "));
  return { wrap, error };
}

function showProblem(control: HTMLElement, error: HTMLElement, problem: string | undefined): void {
  error.textContent = problem ?? "";
  error.hidden = !problem;
  if (problem) control.setAttribute("aria-invalid", "true");
  else control.removeAttribute("aria-invalid");
}

function fillSelect(select: HTMLSelectElement, options: { value: string; label: string }[], value: string): void {
  select.replaceChildren(
    ...options.map((o) => {
      const option = el("option", { text: o.label });
      option.value = o.value;
      return option;
    }),
  );
  select.value = options.some((o) => o.value === value) ? value : (options[0]?.value ?? "");
}

const CHARTS = [
  { kind: "path", title: "Coefficient path" },
  { kind: "cv", title: "Cross-validation curve" },
  { kind: "bars", title: "Coefficients of the chosen model" },
] as const;

// ---------------------------------------------------------------------------------------------

/** Draws the panel (hidden until the pane's data source is a file or a sums table). */
export function mountSumsPane(options: SumsPaneOptions): SumsPaneHandle {
  const { host, reader, routes, say } = options;
  const root = el("div", { className: "sums-pane", testid: "sums-pane" });
  let kind: "file" | "sums" = "file";
  let state: FitState<SumsOutcome> = IDLE;
  let run = 0;
  let cancelRun: (() => void) | null = null;
  let theme = host.theme();
  let disposed = false;

  // ---- File ---------------------------------------------------------------------------------
  const fileSection = section("sums-file-title", "File");
  fileSection.append(
    el("p", {
      className: "hint",
      text: "A CSV or Parquet file of any size on this computer, read inside this pane (CSV by DuckDB, Parquet one row group at a time): the file is not uploaded anywhere, and only its sums (per fold: means and cross-products) are kept.",
    }),
  );
  const fileInput = el("input");
  fileInput.type = "file";
  fileInput.accept = ".csv,.tsv,.txt,.parquet,.pq";
  const fileField = field("file-input", "CSV or Parquet file", fileInput);
  const fileStatus = el("p", { className: "status", testid: "file-status", id: "file-status" });
  fileStatus.setAttribute("role", "status");
  fileField.wrap.append(fileStatus);

  const columnsBox = el("div");
  columnsBox.hidden = true;
  const targetSelect = el("select");
  const targetField = field("file-target", "Target", targetSelect, "A number column: the values to predict.");
  const predictorsSet = el("fieldset", { className: "column-checks", testid: "file-predictors", id: "file-predictors" });
  predictorsSet.append(el("legend", { text: "Predictors" }));
  const predictorsList = el("div", { className: "checks" });
  const predictorsError = el("p", { className: "field-error", id: "file-predictors-error", testid: "file-predictors-error" });
  predictorsError.hidden = true;
  predictorsSet.setAttribute("aria-describedby", "file-predictors-hint file-predictors-error");
  predictorsSet.append(
    el("p", { className: "hint", id: "file-predictors-hint", text: "Text columns become one 0/1 term per level (up to the generator's cap)." }),
    predictorsList,
    predictorsError,
  );
  const weightsSelect = el("select");
  const weightsField = field("file-weights", "Weights (optional)", weightsSelect, "A number column of row weights; none = every row counts once.");
  const ruleSelect = el("select");
  fillSelect(
    ruleSelect,
    FOLD_RULES.map((r) => ({ value: r.id, label: r.label })),
    "hash",
  );
  const ruleField = field("file-fold-rule", "Folds from", ruleSelect);
  const foldColumnSelect = el("select");
  const foldColumnField = field("file-fold-column", "Key column", foldColumnSelect);
  const foldColumnLabel = foldColumnField.wrap.querySelector("label") as HTMLLabelElement;
  const foldsInput = el("input");
  foldsInput.type = "text";
  foldsInput.inputMode = "numeric";
  foldsInput.placeholder = "10";
  const foldsField = field("file-folds", "Number of folds", foldsInput, "2 to 100; empty = 10.");
  columnsBox.append(targetField.wrap, predictorsSet, weightsField.wrap, ruleField.wrap, foldColumnField.wrap, foldsField.wrap);
  fileSection.append(fileField.wrap, columnsBox);

  let file: File | null = null;
  let columns: FileColumn[] = [];
  let choice: FileChoice = emptyFileChoice();

  function renderColumns(): void {
    columnsBox.hidden = columns.length === 0;
    const names = columns.map((c) => ({ value: c.name, label: `${c.name} (${c.type.toLowerCase()})` }));
    fillSelect(targetSelect, [{ value: "", label: "(choose)" }, ...names], choice.target);
    fillSelect(weightsSelect, [{ value: "", label: "(none)" }, ...names], choice.weights);
    fillSelect(foldColumnSelect, [{ value: "", label: "(choose)" }, ...names], choice.foldColumn);
    ruleSelect.value = choice.foldRule;
    foldsInput.value = choice.folds;
    predictorsList.replaceChildren(
      ...columns.map((c, i) => {
        const row = el("div", { className: "field check-field" });
        const box = el("input", { id: `file-predictor-${i}` });
        box.type = "checkbox";
        box.dataset.column = c.name;
        box.checked = choice.predictors.includes(c.name);
        box.addEventListener("change", () => {
          const checked = new Set(choice.predictors);
          if (box.checked) checked.add(c.name);
          else checked.delete(c.name);
          choice.predictors = columns.map((col) => col.name).filter((name) => checked.has(name));
          inputsChanged();
        });
        const label = el("label", { text: `${c.name}` });
        label.htmlFor = box.id;
        row.append(box, label);
        return row;
      }),
    );
    renderFoldRule();
    checkFile(false);
  }

  function renderFoldRule(): void {
    foldColumnLabel.textContent = choice.foldRule === "hash" ? "Key column (whole numbers, e.g. an ID)" : choice.foldRule === "column" ? "Fold column" : "Order by (a date, time or counter)";
    foldsField.wrap.hidden = choice.foldRule === "column";
  }

  /** Checks the file choice; shows the messages when `show` (after a Fit press or an edit). */
  function checkFile(show: boolean): FileSpec | null {
    if (!file || columns.length === 0) return null;
    const check = checkFileChoice(choice, columns);
    if (show || !check.spec) {
      showProblem(targetSelect, targetField.error, show ? check.fields.target : undefined);
      showProblem(weightsSelect, weightsField.error, check.fields.weights);
      showProblem(foldColumnSelect, foldColumnField.error, show ? check.fields["fold-column"] : undefined);
      showProblem(foldsInput, foldsField.error, check.fields.folds);
      predictorsError.textContent = show ? (check.fields.predictors ?? "") : "";
      predictorsError.hidden = !(show && check.fields.predictors);
    }
    if (check.spec) {
      for (const [control, error] of [
        [targetSelect, targetField.error],
        [foldColumnSelect, foldColumnField.error],
      ] as const)
        showProblem(control, error, undefined);
      predictorsError.hidden = true;
    }
    return check.spec;
  }

  let readRun = 0;
  async function readFile(picked: File): Promise<void> {
    const mine = ++readRun;
    file = picked;
    columns = [];
    renderColumns();
    fileStatus.classList.remove("failed");
    fileStatus.textContent = `Reading the columns of ${picked.name}…`;
    inputsChanged();
    try {
      const read = await reader.columns(picked);
      if (mine !== readRun || disposed) return;
      columns = read;
      choice = defaultFileChoice(read, choice);
      fileStatus.textContent = `${picked.name}: ${read.length} columns (${read.filter((c) => c.numeric).length} of numbers).`;
      renderColumns();
      inputsChanged();
    } catch (error) {
      if (mine !== readRun || disposed) return;
      columns = [];
      renderColumns();
      fileStatus.classList.add("failed");
      fileStatus.textContent = messageOf(error);
    }
  }

  fileInput.addEventListener("change", () => {
    const picked = fileInput.files?.[0];
    if (picked) void readFile(picked);
  });
  targetSelect.addEventListener("change", () => {
    choice.target = targetSelect.value;
    choice.predictors = choice.predictors.filter((p) => p !== choice.target);
    renderColumns();
    inputsChanged();
  });
  weightsSelect.addEventListener("change", () => {
    choice.weights = weightsSelect.value;
    inputsChanged();
    checkFile(true);
  });
  ruleSelect.addEventListener("change", () => {
    choice.foldRule = ruleSelect.value as FoldRuleKind;
    renderFoldRule();
    inputsChanged();
  });
  foldColumnSelect.addEventListener("change", () => {
    choice.foldColumn = foldColumnSelect.value;
    inputsChanged();
    checkFile(true);
  });
  foldsInput.addEventListener("input", () => {
    choice.folds = foldsInput.value;
    inputsChanged();
    checkFile(false);
  });

  // ---- Sums table ---------------------------------------------------------------------------
  const tableSection = section("sums-table-title", "Sums table");
  tableSection.append(
    el("p", {
      className: "hint",
      text: "A sums table in its long form (columns block | term_a | term_b | value, header row included), as the command line's --print-sql queries return it from your own database. Select all of it.",
    }),
  );
  let sumsRange = "";
  const sumsPicker = renderRangePicker(
    { key: "sums-range", label: "Sums table range", hint: "The whole long table, header row included.", optional: false, emptyText: "not chosen", promptLabel: "Select the sums table" },
    host,
    "",
    (address) => {
      sumsRange = address;
      inputsChanged();
    },
    say,
  );
  tableSection.append(sumsPicker.element);

  // ---- Settings -----------------------------------------------------------------------------
  const settingsSection = section("sums-settings-title", "Settings");
  let fitChoice = defaultSumsFit();
  const mixesInput = el("input");
  mixesInput.type = "text";
  mixesInput.placeholder = "default mixes";
  const mixesField = field("sums-mixes", `Mixes to try (${MIX_LABEL.toLowerCase()})`, mixesInput, "0 is ridge, 1 is lasso, between is elastic net: e.g. 0, 0.5, 1.");
  const ruleChoice = el("select");
  fillSelect(
    ruleChoice,
    [
      { value: "lowest", label: "Lowest cross-validated error" },
      { value: "one-se", label: "One-SE rule (the simplest model within one SE)" },
    ],
    "lowest",
  );
  const ruleChoiceField = field("sums-rule", "Choose the strength by", ruleChoice);
  const mergeInput = el("input");
  mergeInput.type = "text";
  mergeInput.inputMode = "numeric";
  mergeInput.placeholder = "one per block";
  const mergeField = field("sums-merge-folds", "Merge blocks into folds (optional)", mergeInput, "Empty: each block of the sums is one fold. K: block k goes to fold k mod K.");
  const checkRow = (id: string, label: string, checked: boolean): HTMLInputElement => {
    const wrap = el("div", { className: "field check-field" });
    const box = el("input", { id, testid: id });
    box.type = "checkbox";
    box.checked = checked;
    const labelNode = el("label", { text: label });
    labelNode.htmlFor = id;
    wrap.append(box, labelNode);
    settingsSection.append(wrap);
    return box;
  };
  settingsSection.append(mixesField.wrap, ruleChoiceField.wrap, mergeField.wrap);
  const standardizeBox = checkRow("sums-standardize", "Standardize the predictors (penalize per standard deviation)", true);
  const interceptBox = checkRow("sums-intercept", "Fit an intercept", true);

  function readFitChoice(): void {
    fitChoice = {
      mixes: mixesInput.value,
      rule: ruleChoice.value === "one-se" ? "one-se" : "lowest",
      folds: mergeInput.value,
      standardize: standardizeBox.checked,
      intercept: interceptBox.checked,
    };
  }
  function checkFit(): SumsFitSettings | null {
    readFitChoice();
    const check = checkSumsFit(fitChoice);
    showProblem(mixesInput, mixesField.error, check.fields.mixes);
    showProblem(mergeInput, mergeField.error, check.fields.folds);
    return check.settings;
  }
  for (const control of [mixesInput, mergeInput]) {
    control.addEventListener("input", () => {
      checkFit();
      inputsChanged();
    });
  }
  for (const control of [ruleChoice, standardizeBox, interceptBox]) control.addEventListener("change", () => inputsChanged());

  // ---- Fit ----------------------------------------------------------------------------------
  const fitSection = section("sums-fit-title", "Fit");
  const fitButton = button("Fit", "sums-fit-button", "primary");
  const cancelButton = button("Cancel", "sums-cancel-button");
  cancelButton.setAttribute("aria-label", "Cancel the fit");
  const fitButtons = el("div", { className: "buttons" });
  fitButtons.append(fitButton, cancelButton);
  const progressWrap = el("div", { className: "progress" });
  const progress = el("progress", { id: "sums-progress", testid: "sums-progress" });
  const progressLabel = el("span", { id: "sums-progress-label", testid: "sums-progress-label" });
  progress.setAttribute("aria-labelledby", "sums-progress-label");
  progressWrap.append(progress, progressLabel);
  progressWrap.hidden = true;
  const status = el("p", { className: "status", id: "sums-status", testid: "sums-status" });
  status.setAttribute("role", "status");
  const staleBanner = el("div", { className: "banner", testid: "sums-stale-banner" });
  const staleText = el("p", { text: "Choices changed — fit again to update the results." });
  staleBanner.append(staleText);
  staleBanner.hidden = true;
  fitSection.append(fitButtons, progressWrap, status, staleBanner);
  let stage = "";
  /** What the progress counts while the sums are computed: "queries done" (DuckDB) or "row groups read" (Parquet). */
  let progressUnit = "queries done";

  // ---- Results ------------------------------------------------------------------------------
  const resultsSection = section("sums-results-title", "Results");
  resultsSection.dataset.testid = "sums-results";
  const resultsEmpty = el("p", { className: "hint", text: "Results appear here after a fit." });
  const resultsBody = el("div", { className: "results-body" });
  resultsBody.hidden = true;
  const summary = el("dl", { className: "summary" });
  const summaryItem = (label: string, testid: string): HTMLElement => {
    const value = el("span", { testid });
    const dd = el("dd");
    dd.append(value);
    summary.append(el("dt", { text: label }), dd);
    return value;
  };
  const chosenSource = summaryItem("Data", "sums-chosen-source");
  const chosenStrength = summaryItem("Strength λ", "sums-chosen-strength");
  const chosenMix = summaryItem(MIX_LABEL, "sums-chosen-mix");
  const chosenError = summaryItem("Cross-validated error", "sums-chosen-error");
  const chosenRule = summaryItem("Chosen by", "sums-chosen-rule");
  const chosenNonzero = summaryItem("Terms kept", "sums-chosen-nonzero");
  const chosenRows = summaryItem("Rows", "sums-chosen-rows");
  const notes = el("ul", { className: "notes", testid: "sums-fit-notes" });
  notes.setAttribute("aria-label", "Notes on the fit from sums");
  const chartArea = el("div", { className: "charts" });
  const charts = CHARTS.map((chart) => {
    const figure = el("figure", { className: "chart" });
    const heading = el("h3", { text: chart.title, id: `sums-chart-${chart.kind}-title` });
    const box = el("div", { className: "chart-box", testid: `sums-chart-${chart.kind}`, id: `sums-chart-${chart.kind}` });
    const caption = el("figcaption", { testid: `sums-chart-${chart.kind}-caption` });
    figure.setAttribute("aria-labelledby", heading.id);
    figure.append(heading, box, caption);
    chartArea.append(figure);
    return { kind: chart.kind, box, caption, handle: null as ChartHandle | null };
  });
  const tableHeading = el("h3", { text: "Coefficients", id: "sums-coefficients-title" });
  const tableHolder = el("div", { className: "table-scroll" });
  tableHolder.setAttribute("role", "region");
  tableHolder.setAttribute("aria-labelledby", tableHeading.id);
  tableHolder.tabIndex = 0;
  resultsBody.append(summary, notes, chartArea, tableHeading, tableHolder);
  resultsSection.append(resultsEmpty, resultsBody);

  // ---- Write the coefficient table ----------------------------------------------------------
  const writeSection = section("sums-write-title", "Coefficient table on the sheet");
  writeSection.append(
    el("p", {
      className: "hint",
      text: "Writes term | coefficient as values from the chosen cell: the table SHRINK.APPLY(table, new rows) predicts from.",
    }),
  );
  let destination = "";
  const destinationPicker = renderRangePicker(
    {
      key: "sums-destination",
      label: "Top-left cell for the table",
      hint: "The table fills two columns down from this cell.",
      optional: false,
      emptyText: "not chosen",
      promptLabel: "Select the cell for the coefficient table",
      singleCell: true,
    },
    host,
    "",
    (address) => {
      destination = address;
      hideConfirm();
    },
    say,
  );
  const writeButton = button("Write coefficient table", "sums-write-button", "primary");
  const writeStatus = el("p", { className: "status", testid: "sums-write-status" });
  writeStatus.setAttribute("role", "status");
  const confirmPanel = el("div", { className: "confirm", testid: "sums-confirm-panel", id: "sums-confirm-panel" });
  confirmPanel.setAttribute("role", "group");
  confirmPanel.setAttribute("aria-labelledby", "sums-confirm-title");
  confirmPanel.setAttribute("aria-describedby", "sums-confirm-text");
  confirmPanel.tabIndex = -1;
  const confirmText = el("p", { id: "sums-confirm-text" });
  const confirmOverwrite = button("Overwrite", "sums-confirm-overwrite", "danger");
  confirmOverwrite.setAttribute("aria-label", "Overwrite those cells with the coefficient table");
  const confirmCancel = button("Cancel", "sums-confirm-cancel");
  confirmCancel.setAttribute("aria-label", "Cancel: write nothing");
  const confirmButtons = el("div", { className: "buttons" });
  confirmButtons.append(confirmOverwrite, confirmCancel);
  confirmPanel.append(el("h3", { text: "Some of those cells are not empty", id: "sums-confirm-title" }), confirmText, confirmButtons);
  confirmPanel.hidden = true;
  writeSection.append(destinationPicker.element, writeButton, confirmPanel, writeStatus);

  root.append(fileSection, tableSection, settingsSection, fitSection, resultsSection, writeSection);

  // ---------------------------------------------------------------------------------------------
  // Behaviour

  function inputsChanged(): void {
    dispatch({ type: "inputsChanged" });
    if (state.phase === "idle") status.textContent = readyText();
  }

  function readyText(): string {
    if (kind === "file") return file ? (columns.length > 0 ? "Ready: press Fit." : "Reading the file's columns…") : "Choose a file, then press Fit.";
    return sumsRange ? "Ready: press Fit." : "Choose the sums table's range, then press Fit.";
  }

  function dispatch(event: FitEvent<SumsOutcome>): void {
    const before = state;
    state = reduceFit(state, event);
    if (state !== before) render();
  }

  function statusText(): string {
    switch (state.phase) {
      case "idle":
        return readyText();
      case "fitting":
        return stage || "Starting…";
      case "done": {
        const r = state.outcome.result;
        const kept = r.coefficients.filter((b) => b !== 0).length;
        return `Fitted from sums at strength ${formatNumber(r.strength)}, mix ${formatNumber(r.mix)}: ${kept} of ${r.terms.length} terms kept, ${r.rowsUsed} rows (${(state.outcome.elapsedMs / 1000).toFixed(1)} s).`;
      }
      case "stale":
        return "Choices changed since the last fit: fit again to update the results.";
      case "cancelled":
        return "Fit cancelled. Press Fit to run it again.";
      case "failed":
        return `The fit could not run: ${state.message}`;
    }
  }

  let rendered: SumsOutcome | null = null;
  function render(): void {
    const busy = state.phase === "fitting";
    fitButton.disabled = busy;
    cancelButton.disabled = !busy;
    progressWrap.hidden = !busy;
    root.setAttribute("aria-busy", String(busy));
    if (state.phase === "fitting") {
      if (state.total > 0) {
        progress.max = state.total;
        progress.value = Math.min(state.done, state.total);
      } else progress.removeAttribute("value");
      progressLabel.textContent = stage.startsWith("Computing") ? `${Math.min(state.done, state.total)} of ${state.total} ${progressUnit}` : progressText(state.done, state.total);
    }
    const text = statusText();
    if (status.textContent !== text) status.textContent = text;
    status.classList.toggle("failed", state.phase === "failed");
    const outcome = shownOutcome(state);
    const old = state.phase === "stale" || ((state.phase === "failed" || state.phase === "cancelled") && outcome !== null);
    staleBanner.hidden = !old;
    staleText.textContent = state.phase === "stale" ? "Choices changed — fit again to update the results." : "The results below are from the last fit that finished.";
    resultsBody.classList.toggle("is-stale", old);
    if (outcome !== rendered) renderResults(outcome);
  }

  function renderResults(outcome: SumsOutcome | null): void {
    rendered = outcome;
    resultsEmpty.hidden = outcome !== null;
    resultsBody.hidden = outcome === null;
    if (!outcome) return;
    const r = outcome.result;
    chosenSource.textContent = outcome.source;
    chosenStrength.textContent = formatNumber(r.strength);
    chosenStrength.dataset.value = String(r.strength);
    chosenMix.textContent = r.mix === 0 ? "0 (ridge)" : r.mix === 1 ? "1 (lasso)" : `${formatNumber(r.mix)} (elastic net)`;
    chosenMix.dataset.value = String(r.mix);
    const chosen = r.choices ? (r.rule === "one-se" ? r.choices.oneSe : r.choices.lowest) : null;
    chosenError.textContent = chosen && r.cv ? measureSummary(r.cv.measure, errorWithSe(chosen.error, chosen.se)) : "none (fixed strength)";
    chosenRule.textContent = r.rule === "fixed" ? "fixed strength" : r.rule === "lowest" && r.cv ? bestPointLabel(r.cv.measure) : RULE_WORDS[r.rule];
    chosenNonzero.textContent = `${r.coefficients.filter((b) => b !== 0).length} of ${r.terms.length}`;
    chosenRows.textContent = `${r.rowsUsed} used, ${outcome.sums.skippedRows} skipped (a blank in a used column), ${outcome.sums.blocks.length} blocks (${outcome.sums.blocking})`;
    const noteTexts = r.warnings.map((w) => w.message);
    notes.replaceChildren(...noteTexts.map((text) => el("li", { text })));
    notes.hidden = noteTexts.length === 0;
    const spreads = r.predictorSpreads.map((s) => (s > 0 ? s : null));
    // The chart chunk loads on first use (chartLibrary.ts); fit() waits for it, so it is here
    // unless its load failed.
    const library = chartLibraryNow();
    for (const chart of charts) {
      const unavailable = chart.kind === "cv" && !r.cv;
      chart.box.hidden = unavailable;
      if (unavailable) {
        chart.caption.textContent = "No cross-validation ran.";
        continue;
      }
      try {
        if (!library) throw new Error("the chart library did not load from the add-in's server");
        if (chart.handle) chart.handle.update(r, spreads);
        else chart.handle = library.mountChart(chart.box, chart.kind, r, { theme, spreads });
        chart.caption.textContent = chart.handle.describe();
      } catch (error) {
        chart.caption.textContent = `The chart could not be drawn: ${messageOf(error)}`;
      }
    }
    const table = renderCoefficientTable(r, `${r.terms.length} terms, largest effect first (standardized: per standard deviation of the predictor)`);
    table.dataset.testid = "sums-results-table";
    table.dataset.coefficients = JSON.stringify({ terms: r.terms, intercept: r.intercept, coefficients: r.coefficients });
    tableHolder.replaceChildren(table);
  }

  function signalOf(flag: { aborted: boolean }, callbacks: (() => void)[]): RouteSignal {
    return {
      get aborted() {
        return flag.aborted;
      },
      onAbort(callback) {
        if (flag.aborted) callback();
        else callbacks.push(callback);
      },
    };
  }

  async function fit(): Promise<SumsOutcome | null> {
    const settings = checkFit();
    if (!settings) {
      say("Fix the settings marked above first.", true);
      return null;
    }
    let spec: FileSpec | null = null;
    if (kind === "file") {
      if (!file) {
        say("Choose a CSV or Parquet file first.", true);
        fileInput.focus();
        return null;
      }
      spec = checkFile(true);
      if (!spec) {
        say("Fix the choices marked above first.", true);
        (columnsBox.querySelector<HTMLElement>("[aria-invalid='true']") ?? targetSelect).focus();
        return null;
      }
    } else if (!sumsRange) {
      say("Choose the range holding the sums table first.", true);
      return null;
    }
    cancelRun?.();
    const myRun = ++run;
    const flag = { aborted: false };
    const callbacks: (() => void)[] = [];
    const signal = signalOf(flag, callbacks);
    cancelRun = () => {
      if (flag.aborted) return;
      flag.aborted = true;
      for (const callback of callbacks.splice(0)) callback();
      dispatch({ type: "cancelled", run: myRun });
    };
    hideConfirm();
    stage = kind === "file" ? "Computing the sums in this browser…" : "Reading the sums table…";
    dispatch({ type: "start", run: myRun });
    const started = performance.now();
    // The results will want the charts: fetch their chunk while the sums are computed.
    const chartsReady = loadChartLibrary().catch(() => null);
    try {
      let sums: SumsTable;
      let source: string;
      if (kind === "file" && file && spec) {
        if (!routes.fileSums) throw new Error("fitting from a file is not available in this build");
        const picked = file;
        sums = await routes.fileSums(reader, picked, spec, (p) => {
          if (run !== myRun) return;
          stage = `Computing the sums: ${p.step}`;
          progressUnit = p.unit ?? "queries done";
          dispatch({ type: "progress", run: myRun, done: p.done, total: p.total });
        }, signal);
        source = `${picked.name} (sums computed in this browser${sums.source ? `: ${sums.source}` : ""})`;
      } else {
        const address = sumsRange;
        const rows = await host.readValues(address);
        sums = routes.sumsFromLong(rows);
        source = `the sums table in ${address}`;
      }
      if (flag.aborted) return null;
      stage = "Fitting from the sums…";
      dispatch({ type: "progress", run: myRun, done: 0, total: 0 });
      const result = await routes.fitFromSums(sums, settings, (done, total) => dispatch({ type: "progress", run: myRun, done, total }), signal);
      const outcome: SumsOutcome = { result, sums, source, elapsedMs: performance.now() - started };
      await chartsReady;
      if (flag.aborted) return null;
      dispatch({ type: "succeeded", run: myRun, outcome });
      return state.phase === "done" && state.outcome === outcome ? outcome : null;
    } catch (error) {
      if (isCancelled(error) || flag.aborted) dispatch({ type: "cancelled", run: myRun });
      else dispatch({ type: "failed", run: myRun, message: messageOf(error) });
      return null;
    } finally {
      if (run === myRun) cancelRun = null;
    }
  }

  let pending: CoefficientWrite | null = null;
  function hideConfirm(): void {
    confirmPanel.hidden = true;
    pending = null;
  }

  async function write(plan: CoefficientWrite): Promise<void> {
    try {
      await writeCoefficients(host, plan);
      writeStatus.classList.remove("failed");
      writeStatus.textContent = `Wrote the coefficient table in ${plan.area}. Predict with ${applyFormula(plan)}.`;
      options.onSheetWritten?.();
    } catch (error) {
      writeStatus.classList.add("failed");
      writeStatus.textContent = `Could not write the table: ${messageOf(error)}`;
    }
  }

  async function writeTable(): Promise<void> {
    hideConfirm();
    writeStatus.classList.remove("failed");
    const outcome = state.phase === "done" ? state.outcome : null;
    if (!outcome) {
      writeStatus.classList.add("failed");
      writeStatus.textContent = state.phase === "stale" ? "Nothing written: the choices changed since the fit; fit again first." : "Nothing written: the fit has to succeed first.";
      return;
    }
    if (!destination) {
      writeStatus.classList.add("failed");
      writeStatus.textContent = "Choose the cell for the table first (select it, then Use selection).";
      return;
    }
    writeButton.disabled = true;
    try {
      const plan = planCoefficientWrite(destination, coefficientValues(outcome.result));
      writeStatus.textContent = "Checking the cells…";
      const filled = await filledInArea(host, plan);
      if (filled.length === 0) {
        await write(plan);
        return;
      }
      pending = plan;
      const shown = filled.length > 12 ? `${filled.slice(0, 12).join(", ")} and ${filled.length - 12} more` : filled.join(", ");
      confirmText.textContent = `The table covers ${plan.area}, where ${filled.length === 1 ? "1 cell holds" : `${filled.length} cells hold`} something now (${shown}). Overwrite them, or cancel and choose another cell?`;
      writeStatus.textContent = "";
      confirmPanel.hidden = false;
      confirmPanel.focus();
    } catch (error) {
      writeStatus.classList.add("failed");
      writeStatus.textContent = `Nothing written: ${messageOf(error)}`;
    } finally {
      writeButton.disabled = false;
    }
  }

  fitButton.addEventListener("click", () => void fit());
  cancelButton.addEventListener("click", () => {
    cancelRun?.();
    fitButton.focus();
  });
  writeButton.addEventListener("click", () => void writeTable());
  confirmOverwrite.addEventListener("click", () => {
    const plan = pending;
    hideConfirm();
    writeButton.focus();
    if (plan) void write(plan);
  });
  confirmCancel.addEventListener("click", () => {
    hideConfirm();
    writeStatus.textContent = "Nothing written.";
    writeButton.focus();
  });
  confirmPanel.addEventListener("keydown", (event) => {
    if (event.key === "Escape") confirmCancel.click();
  });

  function setKind(next: "file" | "sums"): void {
    if (next !== kind) {
      kind = next;
      inputsChanged();
    }
    fileSection.hidden = kind !== "file";
    tableSection.hidden = kind !== "sums";
    render();
  }

  // Charts follow the panel's width, redrawn once per animation frame (see pane.ts for why).
  let observer: ResizeObserver | null = null;
  let frame = 0;
  if (typeof ResizeObserver !== "undefined" && typeof requestAnimationFrame === "function") {
    let drawnWidth = -1;
    observer = new ResizeObserver(() => {
      if (frame !== 0) return;
      frame = requestAnimationFrame(() => {
        frame = 0;
        const width = chartArea.clientWidth;
        if (width === drawnWidth) return;
        drawnWidth = width;
        for (const chart of charts) chart.handle?.resize();
      });
    });
    observer.observe(chartArea);
  }

  setKind("file");
  render();

  return {
    element: root,
    setKind,
    fit,
    state: () => state,
    setTheme(next) {
      theme = next;
      for (const chart of charts) chart.handle?.setTheme(next);
    },
    dispose() {
      disposed = true;
      cancelRun?.();
      observer?.disconnect();
      if (frame !== 0) cancelAnimationFrame(frame);
      for (const chart of charts) chart.handle?.dispose();
    },
  };
}
