/**
 * "What the cells return", part of the standalone preview (taskpane.html opened outside Office,
 * under the stand-in sheet). For the invented roastery data (addin/demo) it shows, for each
 * SHRINK function, the formula a user would type and the array it spills,
 * computed now by functions/api.ts through the runner it is given (the add-in's shared fit cache
 * in front of its Web Worker), exactly as in Excel. Errors appear as the cell would show them: the
 * error text (#VALUE!, #N/A, …) and its message.
 *
 * The worksheet assumed by the formulas (stated on the page):
 *   A1:M121    the demo data: header row, 120 batches (A roast_id, B:L predictors, M score)
 *   A124:L132  the new batches: header row, 8 batches without a score
 *   O1         =SHRINK.COEFS(...), so O1# is its spilled coefficient table
 *
 * Shown under the stand-in sheet as a closed "What the cells return" section, computed when first
 * opened. DOM work is confined to `renderPreview`; the examples and the number formatting are plain
 * functions, so tests can run them without a browser.
 */
import * as api from "../../functions/api";
import type { Spill, SpillCell } from "../../functions/api";
import { isCellError } from "../../functions/errors";
import type { FitProgress, FitRunner } from "../../functions/runner";
import { roasteryColumns, roasteryNewRows, roasteryNewRowsExpected, roasteryRows } from "../../addin/demo/roasteryData";
import { qualityColumns, qualityNewRows, qualityNewRowsFailProbability, qualityRows } from "../../addin/demo/qualityData";
import type { FunctionHelp } from "../functionHelp";

/** The worksheet ranges the examples use, as Excel would pass them (rows of cells; blanks null). */
export interface DemoSheet {
  /** M1:M121: the header "score", then one score per batch. */
  target: unknown[][];
  /** B1:L121: the header row, then the predictors of each batch. */
  predictors: unknown[][];
  /** B124:L132: the header row, then the new batches. */
  newRows: unknown[][];
}

export function demoSheet(): DemoSheet {
  const last = roasteryColumns.length - 1;
  return {
    target: [[roasteryColumns[last]], ...roasteryRows.map((row) => [row[last]])],
    predictors: [roasteryColumns.slice(1, last), ...roasteryRows.map((row) => row.slice(1, last))],
    newRows: [roasteryColumns.slice(1, last), ...roasteryNewRows.map((row) => row.slice(1, last))],
  };
}

export const RANGES = { target: "M1:M121", predictors: "B1:L121", newRows: "B124:L132", coefs: "O1#" } as const;

/** One example: a formula as typed in a cell, and how to compute what it spills. */
export interface Example {
  /** The function id (COEFS, …). */
  id: string;
  /** The formula as a user would type it on the demo sheet. */
  formula: string;
  /** A short name for the result table. */
  caption: string;
  /** A sentence on what the example shows. */
  note: string;
  /** Computes the spilled array (rejects with the cell's error value, as in Excel). */
  run(runner: FitRunner, sheet: DemoSheet): Promise<Spill>;
}

const { target: T, predictors: P, newRows: N, coefs: C } = RANGES;

/** The preview's examples, in page order. Default settings everywhere except the last. */
export const EXAMPLES: readonly Example[] = [
  {
    id: "COEFS",
    formula: `=SHRINK.COEFS(${T}, ${P})`,
    caption: "coefficients",
    note: "Tries ridge, three elastic-net mixes and lasso (mixes 0, 0.25, 0.5, 0.75, 1), picks mix and strength by 10-fold cross-validation, and lists the coefficients in the data's own units. origin becomes one 0/1 term per region, against the most common one (Coastal).",
    run: (runner, sheet) => api.coefs(runner, sheet.target, sheet.predictors, null, null),
  },
  {
    id: "CHOICE",
    formula: `=SHRINK.CHOICE(${T}, ${P})`,
    caption: "how the model was chosen",
    note: "The same fit (it is computed once and shared): how the strength and mix were chosen, and which rows were left out for blanks.",
    run: (runner, sheet) => api.choice(runner, sheet.target, sheet.predictors, null, null),
  },
  {
    id: "PREDICT",
    formula: `=SHRINK.PREDICT(${T}, ${P}, ${N})`,
    caption: "predictions for the new batches",
    note: "Predicted scores for the eight new batches. Because the data are invented, their true mean scores are known: " +
      roasteryNewRowsExpected.map((value) => value.toFixed(2)).join(", ") +
      ".",
    run: (runner, sheet) => api.predict(runner, sheet.target, sheet.predictors, sheet.newRows, null, null),
  },
  {
    id: "APPLY",
    formula: `=SHRINK.APPLY(${C}, ${N})`,
    caption: "predictions from the coefficient table",
    note: "The coefficient table spilled by SHRINK.COEFS in O1, applied to the new batches without fitting again: the same predictions.",
    run: async (runner, sheet) => api.apply(await api.coefs(runner, sheet.target, sheet.predictors, null, null), sheet.newRows),
  },
  {
    id: "PATH",
    formula: `=SHRINK.PATH(${T}, ${P})`,
    caption: "coefficient path",
    note: "The coefficients of the chosen mix at every strength, from the strongest penalty (all zero) down to the grid's low end: one row per strength.",
    run: (runner, sheet) => api.path(runner, sheet.target, sheet.predictors, null, null),
  },
  {
    id: "CVCURVE",
    formula: `=SHRINK.CVCURVE(${T}, ${P})`,
    caption: "cross-validation table",
    note: "The cross-validation table behind the choice: one row per mix and strength.",
    run: (runner, sheet) => api.cvcurve(runner, sheet.target, sheet.predictors, null, null),
  },
  {
    id: "KEPT",
    formula: `=SHRINK.KEPT(${T}, ${P})`,
    caption: "kept in folds",
    note: "For each term, the share of the ten fold models (each fitted without one fold's batches, at the chosen mix and strength) that keep it, and the share that agree with its sign: a stability indication, not a significance test.",
    run: (runner, sheet) => api.kept(runner, sheet.target, sheet.predictors, null, null),
  },
  {
    id: "SCORE",
    formula: `=SHRINK.SCORE(${T}, SHRINK.PREDICT(${T}, ${P}, ${P}))`,
    caption: "in-sample accuracy",
    note: "In-sample accuracy: the scores against the model's predictions for the same batches. Pairs with a blank (a missing score, or a prediction that is #N/A because a moisture or humidity reading is blank) are skipped and counted.",
    run: async (runner, sheet) => api.score(sheet.target, await api.predict(runner, sheet.target, sheet.predictors, sheet.predictors, null, null)),
  },
  {
    id: "BASELINE",
    formula: `=SHRINK.BASELINE(${T}, ${P})`,
    caption: "least-squares baseline",
    note: "Plain least squares with standard errors: compare with SHRINK.COEFS to see how much the penalty shrank and which terms it set to zero.",
    run: (runner, sheet) => api.baseline(runner, sheet.target, sheet.predictors),
  },
  {
    id: "COEFS",
    formula: `=SHRINK.COEFS(${T}, ${P}, 2)`,
    caption: "a mix of 2",
    note: "A mistake, to show how errors look: a mix must lie between 0 (ridge) and 1 (lasso). The cell shows #VALUE! and Excel shows the message beside it.",
    run: (runner, sheet) => api.coefs(runner, sheet.target, sheet.predictors, [[2]], null),
  },
];

/** The quality-check sheet's ranges as Excel would pass them (same shape as DemoSheet: the target is the pass/fail column). */
export function qualitySheet(): DemoSheet {
  const last = qualityColumns.length - 1;
  return {
    target: [[qualityColumns[last]], ...qualityRows.map((row) => [row[last]])],
    predictors: [qualityColumns.slice(1, last), ...qualityRows.map((row) => row.slice(1, last))],
    newRows: [qualityColumns.slice(1, last), ...qualityNewRows.map((row) => row.slice(1, last))],
  };
}

export const QUALITY_EXAMPLE_RANGES = { target: "N1:N301", predictors: "B1:M301", newRows: "B304:M312", coefs: "P1#" } as const;

const { target: QT, predictors: QP, newRows: QN, coefs: QC } = QUALITY_EXAMPLE_RANGES;

/** Yes/no examples on the quality-check sheet (default settings: the event is the rarer label, 'fail'). */
export const QUALITY_EXAMPLES: readonly Example[] = [
  {
    id: "COEFS",
    formula: `=SHRINK.COEFS(${QT}, ${QP})`,
    caption: "log-odds of failing the check",
    note: "The target holds two labels, so the fit is penalized logistic regression: coefficients are log-odds of 'fail' per unit, with odds ratios beside them.",
    run: (runner, sheet) => api.coefs(runner, sheet.target, sheet.predictors, null, null),
  },
  {
    id: "CHOICE",
    formula: `=SHRINK.CHOICE(${QT}, ${QP})`,
    caption: "how the yes/no model was chosen",
    note: "The outcome, the event and the cutoff come first; the strength and mix were chosen by the cross-validated deviance.",
    run: (runner, sheet) => api.choice(runner, sheet.target, sheet.predictors, null, null),
  },
  {
    id: "PREDICT",
    formula: `=SHRINK.PREDICT(${QT}, ${QP}, ${QN})`,
    caption: "probability that each new batch fails",
    note:
      "The probability of 'fail' for the eight new batches. The data are invented, so their true probabilities are known: " +
      qualityNewRowsFailProbability.map((value) => value.toFixed(2)).join(", ") +
      ".",
    run: (runner, sheet) => api.predict(runner, sheet.target, sheet.predictors, sheet.newRows, null, null),
  },
  {
    id: "APPLY",
    formula: `=SHRINK.APPLY(${QC}, ${QN})`,
    caption: "probabilities from the coefficient table",
    note: "The log-odds header tells SHRINK.APPLY to turn scores into probabilities: the same values as SHRINK.PREDICT.",
    run: async (runner, sheet) => api.apply(await api.coefs(runner, sheet.target, sheet.predictors, null, null), sheet.newRows),
  },
  {
    id: "SCORE",
    formula: `=SHRINK.SCORE(${QT}, SHRINK.PREDICT(${QT}, ${QP}, ${QP}))`,
    caption: "in-sample accuracy of the probabilities",
    note: "Log loss, Brier score and AUC of the in-sample probabilities, and the table at the 0.5 cutoff in words.",
    run: async (runner, sheet) => api.score(sheet.target, await api.predict(runner, sheet.target, sheet.predictors, sheet.predictors, null, null)),
  },
  {
    id: "BASELINE",
    formula: `=SHRINK.BASELINE(${QT}, ${QP})`,
    caption: "unpenalized logistic baseline",
    note: "The unpenalized logistic fit by Newton's method, with standard errors, z values and p-values, and the deviances.",
    run: (runner, sheet) => api.baseline(runner, sheet.target, sheet.predictors),
  },
];

/** A number as the preview shows it: integers as they are, others to 6 significant digits. */
export function formatNumber(x: number): string {
  if (Number.isInteger(x)) return String(x);
  const magnitude = Math.abs(x);
  if (magnitude < 1e-4 || magnitude >= 1e9) return x.toExponential(3);
  return String(Number(x.toPrecision(6)));
}

/** What one spilled cell shows: its text, the kind of cell, and an error's message. */
export function describeSpillCell(cell: SpillCell | null | undefined): { text: string; kind: "number" | "text" | "blank" | "error"; message?: string } {
  if (cell === null || cell === undefined || cell === "") return { text: "", kind: "blank" };
  if (typeof cell === "number") return { text: formatNumber(cell), kind: "number" };
  if (typeof cell === "boolean") return { text: cell ? "TRUE" : "FALSE", kind: "text" };
  if (typeof cell === "string") return { text: cell, kind: "text" };
  if (isCellError(cell) || (typeof cell === "object" && typeof (cell as { code?: unknown }).code === "string")) {
    const error = cell as { code: string; message?: string };
    return { text: String(error.code), kind: "error", message: error.message || undefined };
  }
  return { text: String(cell), kind: "text" };
}

// ---------------------------------------------------------------------------------------------
// DOM

function element<K extends keyof HTMLElementTagNameMap>(tag: K, text?: string, className?: string): HTMLElementTagNameMap[K] {
  const node = document.createElement(tag);
  if (text !== undefined) node.textContent = text;
  if (className) node.className = className;
  return node;
}

let tableCount = 0;

/**
 * A table in a keyboard-scrollable region. `header` becomes the column headings; `rows` the body.
 * Numbers are right-aligned; blank cells read "blank"; error cells show the error and its message.
 */
function table(caption: string, header: readonly string[] | null, rows: readonly (readonly unknown[])[], options: { blankText?: string; short?: boolean } = {}): HTMLElement {
  const id = `table-${++tableCount}`;
  const region = element("div", undefined, options.short ? "scroll short" : "scroll");
  region.setAttribute("role", "region");
  region.setAttribute("aria-labelledby", `${id}-caption`);
  region.tabIndex = 0;
  const t = element("table");
  t.id = id;
  const cap = element("caption", caption);
  cap.id = `${id}-caption`;
  t.append(cap);
  if (header) {
    const head = element("thead");
    const tr = element("tr");
    for (const name of header) {
      const th = element("th", name);
      th.scope = "col";
      tr.append(th);
    }
    head.append(tr);
    t.append(head);
  }
  const body = element("tbody");
  for (const row of rows) {
    const tr = element("tr");
    for (const cell of row) {
      const shown = describeSpillCell(cell as SpillCell);
      const td = element("td");
      if (shown.kind === "number") td.className = "num";
      if (shown.kind === "blank") {
        td.className = "blank";
        td.textContent = options.blankText ?? "";
      } else if (shown.kind === "error") {
        td.className = "error";
        td.append(shown.text);
        if (shown.message) td.append(element("span", shown.message, "message"));
      } else {
        td.textContent = shown.text;
        // Long texts (CHOICE's notes) wrap instead of widening the column past the screen.
        if (shown.text.length > 48) td.className = "long";
      }
      tr.append(td);
    }
    body.append(tr);
  }
  t.append(body);
  region.append(t);
  return region;
}

/** The first row of a spill is its header when every cell of it is non-empty text. */
function splitHeader(spill: Spill): { header: string[] | null; body: Spill } {
  const first = spill[0];
  if (spill.length > 1 && first && first.every((cell) => typeof cell === "string" && cell !== "")) {
    return { header: first as string[], body: spill.slice(1) };
  }
  return { header: null, body: spill };
}

/** A FitRunner that reports the progress of every fit it passes on. */
function reporting(inner: FitRunner, report: (progress: FitProgress) => void): FitRunner {
  return {
    fit: (request, cancel, onProgress) =>
      inner.fit(request, cancel, (progress) => {
        report(progress);
        onProgress?.(progress);
      }),
  };
}

function seconds(ms: number): string {
  return `${(ms / 1000).toFixed(2)} s`;
}

async function runExample(example: Example, index: number, runner: FitRunner, sheet: DemoSheet, section: HTMLElement): Promise<void> {
  const status = element("p", "Waiting…", "status");
  status.setAttribute("role", "status");
  const output = element("div");
  section.append(status, output);
  const started = performance.now();
  status.textContent = "Fitting…";
  const progressRunner = reporting(runner, (p) => {
    status.textContent = `Fitting: ${p.done} of ${p.total} steps done…`;
  });
  try {
    const spill = await example.run(progressRunner, sheet);
    const { header, body } = splitHeader(spill);
    const width = spill[0]?.length ?? 0;
    status.textContent = `Spills ${spill.length} row${spill.length === 1 ? "" : "s"} × ${width} column${width === 1 ? "" : "s"} (computed in ${seconds(performance.now() - started)}).`;
    output.append(table(`Result ${index + 1}: ${example.caption}`, header, body, { short: spill.length <= 25 }));
  } catch (error) {
    const shown = describeSpillCell(error as SpillCell);
    status.textContent = "The cell shows an error:";
    status.classList.add("failed");
    const cell = shown.kind === "error" ? [error] : [`${error instanceof Error ? error.message : String(error)}`];
    output.append(table(`Result ${index + 1}: ${example.caption}`, null, [cell], { short: true }));
  }
}

export interface PreviewOptions {
  /** Runs the fits: the add-in's shared runner, or an in-process one. */
  runner: FitRunner;
  /** One line per function, for each example's signature. */
  help: readonly FunctionHelp[];
  /** Heading level of the section's title (its examples are one level below). Default 2. */
  level?: 2 | 3;
}

/**
 * Draws the "What the cells return" section into `root`: a closed <details>; on first opening,
 * every example is computed (resolves the returned promise's `computed` once all are done).
 */
export function renderPreview(root: HTMLElement, options: PreviewOptions): { computed: Promise<void> } {
  const sheet = demoSheet();
  const level = options.level ?? 2;
  const section = element("section", undefined, "cell-returns");
  section.setAttribute("aria-labelledby", "cell-returns-title");
  const heading = element(level === 2 ? "h2" : "h3", "What the cells return");
  heading.id = "cell-returns-title";
  section.append(heading);
  const intro = element("p", undefined, "hint");
  intro.append(
    "Each SHRINK function typed on the demo sheet, with the array it spills, computed in this browser by the same code and fit cache the cells use. The formulas assume the demo layout: data in ",
    element("code", "A1:M121"),
    ", new batches in ",
    element("code", "A124:L132"),
    ", SHRINK.COEFS in ",
    element("code", "O1"),
    ".",
  );
  const details = element("details");
  details.dataset.testid = "cell-returns";
  const summary = element("summary", "Show every function's result on the demo data");
  const body = element("div");
  details.append(summary, body);
  section.append(intro, details);
  root.append(section);

  let resolveComputed: () => void = () => undefined;
  const computed = new Promise<void>((resolve) => (resolveComputed = resolve));
  let started = false;
  details.addEventListener("toggle", () => {
    if (!details.open || started) return;
    started = true;
    body.setAttribute("aria-busy", "true");
    const sections = EXAMPLES.map((example, k) => {
      const part = element("section", undefined, "example");
      const id = `example-${k + 1}`;
      part.setAttribute("aria-labelledby", id);
      const isMistake = k === EXAMPLES.length - 1;
      const title = element(level === 2 ? "h3" : "h4", isMistake ? "When an input is wrong" : `SHRINK.${example.id}`);
      title.id = id;
      part.append(title);
      const help = options.help.find((h) => h.id === example.id);
      if (help && !isMistake) {
        const signature = element("p");
        signature.append(element("code", `SHRINK.${help.id}(${help.signature})`), `: ${help.summary}`);
        part.append(signature);
      }
      const formula = element("p");
      formula.append("Formula: ", element("span", example.formula, "formula"));
      part.append(formula, element("p", example.note, "muted"));
      body.append(part);
      return part;
    });
    // All examples at once, as Excel would calculate them: the fits they share run once.
    Promise.all(EXAMPLES.map((example, k) => runExample(example, k, options.runner, sheet, sections[k]))).then(() => {
      body.setAttribute("aria-busy", "false");
      resolveComputed();
    }, resolveComputed);
  });
  return { computed };
}
