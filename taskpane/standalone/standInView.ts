/**
 * Draws the stand-in workbook (standInSheetHost.ts) in the page, for the standalone preview
 * and the browser tests: a bar with the selection's address and the active cell's content, a
 * scrollable grid with column letters and row numbers, the sheet tabs, and the charts of a
 * report sheet (drawn as SVG from the sheet's cells).
 *
 * Selecting: click a cell; shift-click or drag to select a rectangle. Keyboard: the grid is one
 * tab stop; arrow keys move the active cell, shift+arrows extend the selection, Home / End go
 * to the row's first / last used column (with Ctrl: A1 / the last used cell), Page Up / Page
 * Down move 20 rows, Ctrl+A selects the used range. The selection goes to the host (so the
 * pane sees it) and comes back from it (a selection set by code shows here).
 *
 * Accessibility: role="grid" with aria-rowcount / aria-colcount / aria-rowindex /
 * aria-colindex, aria-selected on cells, column and row headers, a roving tabindex, a visible
 * focus ring; sheet tabs are a tablist operated with the arrow keys; a chart is an image with
 * a text description and a legend list. Colours follow the host's theme (light or dark) with
 * text contrast of at least 4.5:1.
 */
import { cellName, columnLetters, formatAddress, MAX_COLUMNS, MAX_ROWS, parseAddress, RangeAddress, rangeOf } from "../host/address";
import { loadChartLibrary } from "../charts/chartLibrary";
import type { StandInCell, StandInChart, StandInSheet, StandInSheetHost } from "./standInSheetHost";

/** Grid size drawn: at least this, and a margin past the used cells and the selection. */
const MIN_ROWS = 40;
const MIN_COLUMNS = 16;
const MARGIN_ROWS = 8;
const MARGIN_COLUMNS = 3;
/** Most rows / columns drawn at once (a selection past them is still kept). */
const MAX_DRAWN_ROWS = 3000;
const MAX_DRAWN_COLUMNS = 100;
const PAGE_ROWS = 20;

const STYLE_ID = "sw-standin-style";

let viewCount = 0;

// ---------------------------------------------------------------------------------------------
// What a cell shows (pure; exported for tests)

/** A number in the sheet's General style: integers as they are, up to 8 significant digits, E notation for very small or large. */
export function generalNumber(x: number): string {
  if (!Number.isFinite(x)) return "#NUM!";
  if (Number.isInteger(x) && Math.abs(x) < 1e11) return String(x);
  const magnitude = Math.abs(x);
  if (magnitude !== 0 && (magnitude < 1e-4 || magnitude >= 1e11)) return scientific(x, 4);
  return String(Number(x.toPrecision(8)));
}

/** 1.234E-02 style with `decimals` digits after the point. */
function scientific(x: number, decimals: number): string {
  const [mantissa, exponent] = x.toExponential(decimals).split("e");
  const power = Number(exponent);
  return `${mantissa}E${power < 0 ? "-" : "+"}${String(Math.abs(power)).padStart(2, "0")}`;
}

/** A number under a format: "0", "0.00", "0.000E+00" and the like; anything else General. */
export function formatNumber(x: number, format?: string): string {
  if (!Number.isFinite(x)) return "#NUM!";
  const fixed = format ? /^0(?:\.(0+))?$/.exec(format) : null;
  if (fixed) return x.toFixed(fixed[1]?.length ?? 0);
  const sci = format ? /^0(?:\.(0+))?E\+00$/i.exec(format) : null;
  if (sci) return scientific(x, sci[1]?.length ?? 0);
  return generalNumber(x);
}

/** The text a cell shows. */
export function displayValue(cell: StandInCell | undefined): string {
  if (!cell) return "";
  const value = cell.value;
  if (typeof value === "number") return formatNumber(value, cell.format);
  if (typeof value === "boolean") return value ? "TRUE" : "FALSE";
  return value;
}

function isErrorText(value: unknown): boolean {
  return typeof value === "string" && /^#[A-Z0-9/_]+[!?]?$|^#N\/A$/.test(value);
}

// ---------------------------------------------------------------------------------------------
// DOM helpers

function element<K extends keyof HTMLElementTagNameMap>(doc: Document, tag: K, className?: string, text?: string): HTMLElementTagNameMap[K] {
  const node = doc.createElement(tag);
  if (className) node.className = className;
  if (text !== undefined) node.textContent = text;
  return node;
}

const CSS = `
.sw-standin { --sw-bg: #ffffff; --sw-fg: #1b1b1b; --sw-muted: #4d4d4d; --sw-head-bg: #f0f0f0; --sw-line: #c8c8c8;
  --sw-sel: #d6e6fa; --sw-anchor: #0f5cb8; --sw-focus: #0f5cb8; --sw-error: #a4262c; --sw-spill: #f7faf7; --sw-tab: #e6e6e6;
  color: var(--sw-fg); background: var(--sw-bg); font: 13px/1.35 system-ui, "Segoe UI", sans-serif; border: 1px solid var(--sw-line); }
.sw-standin[data-theme="dark"] { --sw-bg: #1e1e1e; --sw-fg: #f0f0f0; --sw-muted: #c4c4c4; --sw-head-bg: #2d2d2d; --sw-line: #4a4a4a;
  --sw-sel: #264f78; --sw-anchor: #8cc4ff; --sw-focus: #8cc4ff; --sw-error: #ff9c9c; --sw-spill: #232823; --sw-tab: #333333; }
.sw-standin .sw-bar { display: flex; flex-wrap: wrap; gap: 4px 12px; align-items: baseline; padding: 6px 8px; border-bottom: 1px solid var(--sw-line); }
.sw-standin .sw-label { color: var(--sw-muted); font-size: 12px; }
.sw-standin .sw-namebox { font-family: ui-monospace, Consolas, monospace; min-width: 10ch; }
.sw-standin .sw-detail { font-family: ui-monospace, Consolas, monospace; overflow-wrap: anywhere; flex: 1 1 20ch; }
.sw-standin .sw-detail .sw-message { font-family: inherit; color: var(--sw-error); display: block; }
.sw-standin .sw-scroll { overflow: auto; max-height: 420px; position: relative; scroll-padding: 24px 0 0 44px; }
.sw-standin table.sw-grid { border-collapse: separate; border-spacing: 0; table-layout: fixed; user-select: none; width: max-content; }
.sw-standin .sw-grid th, .sw-standin .sw-grid td { border-right: 1px solid var(--sw-line); border-bottom: 1px solid var(--sw-line);
  padding: 1px 4px; height: 20px; width: 64px; min-width: 64px; max-width: 160px; white-space: nowrap; overflow: hidden; text-overflow: ellipsis; }
.sw-standin .sw-grid th { background: var(--sw-head-bg); color: var(--sw-muted); font-weight: normal; position: sticky; z-index: 1; }
.sw-standin .sw-grid thead th { top: 0; text-align: center; }
.sw-standin .sw-grid tbody th { left: 0; text-align: right; min-width: 36px; }
.sw-standin .sw-grid thead th.sw-corner { left: 0; z-index: 2; min-width: 36px; }
.sw-standin .sw-grid th.sw-head-sel { color: var(--sw-fg); font-weight: 600; }
.sw-standin .sw-grid td { background: var(--sw-bg); cursor: cell; }
.sw-standin .sw-grid td.sw-num { text-align: right; font-variant-numeric: tabular-nums; }
.sw-standin .sw-grid td.sw-bool, .sw-standin .sw-grid td.sw-err { text-align: center; }
.sw-standin .sw-grid td.sw-err { color: var(--sw-error); font-weight: 600; }
.sw-standin .sw-grid td.sw-spill { background: var(--sw-spill); }
.sw-standin .sw-grid td.sw-formula { box-shadow: inset 3px 0 0 var(--sw-muted); }
.sw-standin .sw-grid td.sw-bold { font-weight: 700; }
.sw-standin .sw-grid td.sw-sel { background: var(--sw-sel); }
.sw-standin .sw-grid td.sw-anchor { outline: 2px solid var(--sw-anchor); outline-offset: -2px; }
.sw-standin .sw-grid td:focus { outline: none; }
.sw-standin .sw-grid td:focus-visible { outline: 3px solid var(--sw-focus); outline-offset: -3px; }
.sw-standin .sw-tabs { display: flex; gap: 2px; padding: 4px 8px; border-top: 1px solid var(--sw-line); flex-wrap: wrap; }
.sw-standin .sw-tabs button { font: inherit; color: var(--sw-fg); background: var(--sw-tab); border: 1px solid var(--sw-line); padding: 3px 10px; cursor: pointer; }
.sw-standin .sw-tabs button[aria-selected="true"] { background: var(--sw-bg); border-bottom-color: var(--sw-bg); font-weight: 600; }
.sw-standin .sw-tabs button:focus-visible { outline: 3px solid var(--sw-focus); outline-offset: 1px; }
.sw-standin .sw-hidden { position: absolute; width: 1px; height: 1px; overflow: hidden; clip: rect(0 0 0 0); white-space: nowrap; }
.sw-standin .sw-charts:empty { display: none; }
.sw-standin .sw-charts { padding: 8px; border-top: 1px solid var(--sw-line); display: grid; gap: 12px; }
.sw-standin figure { margin: 0; }
.sw-standin figcaption { color: var(--sw-muted); font-size: 12px; }
.sw-standin figcaption strong { color: var(--sw-fg); }
.sw-standin svg text { fill: var(--sw-muted); font-size: 11px; }
`;

function ensureStyle(doc: Document): void {
  if (doc.getElementById(STYLE_ID)) return;
  const style = element(doc, "style");
  style.id = STYLE_ID;
  style.textContent = CSS;
  doc.head.append(style);
}


// ---------------------------------------------------------------------------------------------
// The view

export function renderStandInView(container: HTMLElement, host: StandInSheetHost): { refresh(): void } {
  const doc = container.ownerDocument;
  ensureStyle(doc);
  const prefix = `sw-view-${++viewCount}`;

  const root = element(doc, "div", "sw-standin");
  root.setAttribute("role", "region");
  root.setAttribute("aria-label", "Stand-in workbook");
  const bar = element(doc, "div", "sw-bar");
  const nameLabel = element(doc, "span", "sw-label", "Selection");
  nameLabel.id = `${prefix}-name-label`;
  const nameBox = element(doc, "output", "sw-namebox");
  nameBox.setAttribute("aria-labelledby", nameLabel.id);
  nameBox.setAttribute("aria-live", "off");
  const detailLabel = element(doc, "span", "sw-label", "Cell");
  detailLabel.id = `${prefix}-detail-label`;
  const detail = element(doc, "output", "sw-detail");
  detail.id = `${prefix}-detail`;
  detail.setAttribute("aria-labelledby", detailLabel.id);
  detail.setAttribute("aria-live", "off");
  bar.append(nameLabel, nameBox, detailLabel, detail);

  const scroller = element(doc, "div", "sw-scroll");
  scroller.id = `${prefix}-panel`;
  scroller.setAttribute("role", "tabpanel");
  const table = element(doc, "table", "sw-grid");
  table.setAttribute("role", "grid");
  table.setAttribute("aria-multiselectable", "true");
  scroller.append(table);

  const tabs = element(doc, "div", "sw-tabs");
  tabs.setAttribute("role", "tablist");
  tabs.setAttribute("aria-label", "Sheets");
  const charts = element(doc, "div", "sw-charts");
  root.append(bar, scroller, tabs, charts);
  container.replaceChildren(root);

  // Selection state: the fixed corner (the active cell) and the moving corner (keyboard focus).
  let anchor = { row: 1, column: 1 };
  let corner = { row: 1, column: 1 };
  let dragging = false;
  let drawnRows = 0;
  let drawnColumns = 0;
  let cells: HTMLTableCellElement[][] = [];
  let columnHeads: HTMLTableCellElement[] = [];
  let rowHeads: HTMLTableCellElement[] = [];
  let highlighted: HTMLElement[] = [];
  let focusCell: HTMLTableCellElement | null = null;
  let renderQueued = false;

  const sheet = (): StandInSheet => host.workbook.activeSheet;
  const selected = (): RangeAddress => rangeOf(sheet().name, anchor.row, anchor.column, corner.row, corner.column);

  /** Takes the host's selection when it differs from ours (set by code). */
  const adoptHostSelection = (): void => {
    const range = host.selection();
    const ours = selected();
    if (range.top === ours.top && range.left === ours.left && range.bottom === ours.bottom && range.right === ours.right) return;
    anchor = { row: range.top, column: range.left };
    corner = { row: Math.min(range.bottom, MAX_ROWS), column: Math.min(range.right, MAX_COLUMNS) };
  };

  const renderTabs = (): void => {
    tabs.replaceChildren();
    const active = sheet();
    host.workbook.sheets().forEach((s, k) => {
      const tab = element(doc, "button", undefined, s.name);
      tab.type = "button";
      tab.id = `${prefix}-tab-${k}`;
      tab.setAttribute("role", "tab");
      tab.setAttribute("aria-controls", scroller.id);
      const isActive = s === active;
      tab.setAttribute("aria-selected", String(isActive));
      tab.tabIndex = isActive ? 0 : -1;
      if (isActive) scroller.setAttribute("aria-labelledby", tab.id);
      tab.addEventListener("click", () => {
        if (host.workbook.activeSheet !== s) host.activateSheet(s.name);
      });
      tabs.append(tab);
    });
  };

  tabs.addEventListener("keydown", (event) => {
    const list = Array.from(tabs.querySelectorAll<HTMLButtonElement>("[role=tab]"));
    const at = list.findIndex((tab) => tab === doc.activeElement);
    if (at < 0) return;
    let next = -1;
    if (event.key === "ArrowRight") next = (at + 1) % list.length;
    else if (event.key === "ArrowLeft") next = (at - 1 + list.length) % list.length;
    else if (event.key === "Home") next = 0;
    else if (event.key === "End") next = list.length - 1;
    if (next < 0) return;
    event.preventDefault();
    const name = host.workbook.sheets()[next].name;
    host.activateSheet(name);
    tabs.querySelectorAll<HTMLButtonElement>("[role=tab]")[next]?.focus();
  });

  const describeCell = (s: StandInSheet, row: number, column: number): { text: string; label: string; classes: string[]; title: string | null } => {
    const cell = s.get(row, column);
    const text = displayValue(cell);
    const classes: string[] = [];
    let label = text;
    let title: string | null = null;
    if (cell) {
      if (typeof cell.value === "number") classes.push("sw-num");
      else if (typeof cell.value === "boolean") classes.push("sw-bool");
      if (isErrorText(cell.value)) {
        classes.push("sw-err");
        if (cell.message) {
          label = `${text}: ${cell.message}`;
          title = cell.message;
        }
      }
      if (cell.spillFrom) classes.push("sw-spill");
      if (cell.formula) {
        classes.push("sw-formula");
        label = `${label}, formula ${cell.formula}`;
        title = title ? `${cell.formula}\n${title}` : cell.formula;
      }
      if (cell.bold) classes.push("sw-bold");
    }
    return { text, label: label === "" ? "blank" : label, classes, title };
  };

  const renderGrid = (): void => {
    const s = sheet();
    const extent = s.extent();
    drawnRows = Math.min(MAX_DRAWN_ROWS, Math.max(MIN_ROWS, extent.rows + MARGIN_ROWS, Math.max(anchor.row, corner.row) + MARGIN_ROWS));
    drawnColumns = Math.min(MAX_DRAWN_COLUMNS, Math.max(MIN_COLUMNS, extent.columns + MARGIN_COLUMNS, Math.max(anchor.column, corner.column) + MARGIN_COLUMNS));
    table.setAttribute("aria-label", `Sheet ${s.name}`);
    table.setAttribute("aria-rowcount", String(drawnRows + 1));
    table.setAttribute("aria-colcount", String(drawnColumns + 1));
    const head = element(doc, "thead");
    const headRow = element(doc, "tr");
    headRow.setAttribute("role", "row");
    headRow.setAttribute("aria-rowindex", "1");
    const corner0 = element(doc, "th", "sw-corner");
    corner0.setAttribute("role", "columnheader");
    corner0.setAttribute("aria-colindex", "1");
    corner0.append(element(doc, "span", "sw-hidden", "row"));
    headRow.append(corner0);
    columnHeads = [];
    for (let c = 1; c <= drawnColumns; c++) {
      const th = element(doc, "th", undefined, columnLetters(c));
      th.setAttribute("role", "columnheader");
      th.setAttribute("aria-colindex", String(c + 1));
      th.scope = "col";
      headRow.append(th);
      columnHeads.push(th);
    }
    head.append(headRow);
    const body = element(doc, "tbody");
    cells = [];
    rowHeads = [];
    for (let r = 1; r <= drawnRows; r++) {
      const tr = element(doc, "tr");
      tr.setAttribute("role", "row");
      tr.setAttribute("aria-rowindex", String(r + 1));
      const th = element(doc, "th", undefined, String(r));
      th.setAttribute("role", "rowheader");
      th.setAttribute("aria-colindex", "1");
      th.scope = "row";
      tr.append(th);
      rowHeads.push(th);
      const rowCells: HTMLTableCellElement[] = [];
      for (let c = 1; c <= drawnColumns; c++) {
        const td = element(doc, "td");
        td.setAttribute("role", "gridcell");
        td.setAttribute("aria-colindex", String(c + 1));
        td.setAttribute("aria-selected", "false");
        td.tabIndex = -1;
        td.dataset.row = String(r);
        td.dataset.column = String(c);
        const shown = describeCell(s, r, c);
        td.textContent = shown.text;
        if (shown.classes.length > 0) td.className = shown.classes.join(" ");
        if (shown.label !== shown.text) td.setAttribute("aria-label", `${cellName(r, c)} ${shown.label}`);
        if (shown.title) td.title = shown.title;
        tr.append(td);
        rowCells.push(td);
      }
      body.append(tr);
      cells.push(rowCells);
    }
    table.replaceChildren(head, body);
    highlighted = [];
    focusCell = null;
    showSelection(false);
  };

  const cellAt = (row: number, column: number): HTMLTableCellElement | null => cells[row - 1]?.[column - 1] ?? null;

  /** Marks the selection in the grid and the bar; moves the tab stop to the moving corner. */
  const showSelection = (focus: boolean): void => {
    for (const node of highlighted) {
      node.classList.remove("sw-sel", "sw-anchor", "sw-head-sel");
      if (node.tagName === "TD") node.setAttribute("aria-selected", "false");
    }
    highlighted = [];
    const range = selected();
    const bottom = Math.min(range.bottom, drawnRows);
    const right = Math.min(range.right, drawnColumns);
    for (let r = range.top; r <= bottom; r++) {
      for (let c = range.left; c <= right; c++) {
        const td = cellAt(r, c);
        if (!td) continue;
        td.classList.add("sw-sel");
        td.setAttribute("aria-selected", "true");
        highlighted.push(td);
      }
      const rowHead = rowHeads[r - 1];
      if (rowHead) {
        rowHead.classList.add("sw-head-sel");
        highlighted.push(rowHead);
      }
    }
    for (let c = range.left; c <= right; c++) {
      const columnHead = columnHeads[c - 1];
      if (columnHead) {
        columnHead.classList.add("sw-head-sel");
        highlighted.push(columnHead);
      }
    }
    const anchorCell = cellAt(anchor.row, anchor.column);
    if (anchorCell) {
      anchorCell.classList.add("sw-anchor");
      highlighted.push(anchorCell);
    }
    const target = cellAt(corner.row, corner.column) ?? anchorCell ?? cellAt(1, 1);
    if (focusCell && focusCell !== target) focusCell.tabIndex = -1;
    if (target) {
      target.tabIndex = 0;
      focusCell = target;
      if (focus) {
        target.focus({ preventScroll: true });
        target.scrollIntoView?.({ block: "nearest", inline: "nearest" });
      }
    }
    nameBox.textContent = host.workbook.sheets().length > 0 ? formatSelection(range) : "";
    showDetail();
  };

  const formatSelection = (range: RangeAddress): string => formatAddress({ ...range, sheet: sheet().name });

  const showDetail = (): void => {
    const cell = sheet().get(anchor.row, anchor.column);
    const where = cellName(anchor.row, anchor.column);
    detail.replaceChildren();
    if (!cell) {
      detail.append(`${where}: (blank)`);
      return;
    }
    detail.append(`${where}: ${cell.formula ?? displayValue(cell)}`);
    if (cell.formula) detail.append(` → ${displayValue(cell)}`);
    if (cell.spillFrom) detail.append(` (spilled from ${cellName(cell.spillFrom.row, cell.spillFrom.column)})`);
    if (cell.message) detail.append(element(doc, "span", "sw-message", cell.message));
  };

  /** Sends our selection to the host (it answers with a "selection" change). */
  const commit = (focus: boolean): void => {
    const needsMore = Math.max(anchor.row, corner.row) > drawnRows || Math.max(anchor.column, corner.column) > drawnColumns;
    host.setSelection(selected());
    if (needsMore) renderGrid();
    showSelection(focus);
  };

  const positionOf = (target: EventTarget | null): { row: number; column: number } | null => {
    const td = (target as HTMLElement | null)?.closest?.("td[data-row]") as HTMLTableCellElement | null;
    if (!td || !table.contains(td)) return null;
    return { row: Number(td.dataset.row), column: Number(td.dataset.column) };
  };

  table.addEventListener("mousedown", (event) => {
    if (event.button !== 0) return;
    const at = positionOf(event.target);
    if (!at) return;
    event.preventDefault();
    if (event.shiftKey) corner = at;
    else {
      anchor = at;
      corner = at;
    }
    dragging = true;
    commit(true);
  });
  table.addEventListener("mouseover", (event) => {
    if (!dragging) return;
    const at = positionOf(event.target);
    if (!at || (at.row === corner.row && at.column === corner.column)) return;
    corner = at;
    commit(true);
  });
  doc.addEventListener("mouseup", () => {
    dragging = false;
  });

  table.addEventListener("keydown", (event) => {
    const s = sheet();
    const extent = s.extent();
    const control = event.ctrlKey || event.metaKey;
    // Shift moves the selection's far corner; a plain move starts from the active cell.
    const from = event.shiftKey ? corner : anchor;
    let row = from.row;
    let column = from.column;
    switch (event.key) {
      case "ArrowUp":
        row = Math.max(1, row - 1);
        break;
      case "ArrowDown":
        row = Math.min(MAX_ROWS, row + 1);
        break;
      case "ArrowLeft":
        column = Math.max(1, column - 1);
        break;
      case "ArrowRight":
        column = Math.min(MAX_COLUMNS, column + 1);
        break;
      case "PageUp":
        row = Math.max(1, row - PAGE_ROWS);
        break;
      case "PageDown":
        row = Math.min(MAX_ROWS, row + PAGE_ROWS);
        break;
      case "Home":
        column = 1;
        if (control) row = 1;
        break;
      case "End":
        if (control) {
          row = Math.max(1, extent.rows);
          column = Math.max(1, extent.columns);
        } else {
          let last = 1;
          for (let c = 1; c <= extent.columns; c++) if (s.isFilled(row, c)) last = c;
          column = last;
        }
        break;
      case "a":
      case "A":
        if (!control) return;
        event.preventDefault();
        anchor = { row: 1, column: 1 };
        corner = { row: Math.max(1, extent.rows), column: Math.max(1, extent.columns) };
        commit(true);
        return;
      default:
        return;
    }
    event.preventDefault();
    corner = { row, column };
    if (!event.shiftKey) anchor = corner;
    commit(true);
  });

  const renderCharts = (): void => {
    charts.replaceChildren();
    const s = sheet();
    s.charts.forEach((chart, k) => charts.append(chartFigure(doc, s, chart, `${prefix}-chart-${k}`, host.theme())));
  };

  let shownSheet: StandInSheet | null = null;

  const render = (): void => {
    root.dataset.theme = host.theme();
    adoptHostSelection();
    const hadFocus = table.contains(doc.activeElement);
    renderTabs();
    renderGrid();
    renderCharts();
    if (shownSheet !== sheet()) {
      // Another sheet: start from its top-left corner, then bring its selection into view.
      shownSheet = sheet();
      scroller.scrollTop = 0;
      scroller.scrollLeft = 0;
      cellAt(corner.row, corner.column)?.scrollIntoView?.({ block: "nearest", inline: "nearest" });
    }
    if (hadFocus) showSelection(true);
  };

  /** Cells changed: draw again soon (several changes in a row draw once). */
  const queueRender = (): void => {
    if (renderQueued) return;
    renderQueued = true;
    const run = (): void => {
      renderQueued = false;
      render();
    };
    const view = doc.defaultView;
    if (view && typeof view.requestAnimationFrame === "function") view.requestAnimationFrame(run);
    else setTimeout(run, 0);
  };

  host.subscribe((change) => {
    if (change.kind === "cells") {
      if (change.sheet === sheet().name) queueRender();
      return;
    }
    if (change.kind === "sheets") {
      render();
      return;
    }
    const before = selected();
    adoptHostSelection();
    const after = selected();
    if (before.top !== after.top || before.left !== after.left || before.bottom !== after.bottom || before.right !== after.right || after.sheet !== before.sheet) {
      if (Math.max(anchor.row, corner.row) > drawnRows || Math.max(anchor.column, corner.column) > drawnColumns) renderGrid();
      showSelection(false);
    } else {
      nameBox.textContent = formatSelection(after);
      showDetail();
    }
  });

  render();
  return { refresh: render };
}

// ---------------------------------------------------------------------------------------------
// Charts

/** Text of a header cell, for a series name. */
function headerText(sheet: StandInSheet, row: number, column: number): string {
  const text = displayValue(sheet.get(row, column));
  return text === "" ? `series ${column}` : text;
}

/** A chart drawn from its source cells: lines of the columns after the first against the first. */
function chartFigure(doc: Document, sheet: StandInSheet, chart: StandInChart, id: string, theme: "light" | "dark"): HTMLElement {
  const figure = element(doc, "figure");
  const caption = element(doc, "figcaption");
  caption.id = `${id}-caption`;
  let area: RangeAddress;
  try {
    area = parseAddress(chart.source);
  } catch {
    caption.append(element(doc, "strong", undefined, chart.title), ` (its data range ${chart.source} can't be read)`);
    figure.append(caption);
    return figure;
  }
  const xs: number[] = [];
  const rows: number[] = [];
  for (let r = area.top + 1; r <= area.bottom; r++) {
    const value = sheet.get(r, area.left)?.value;
    if (typeof value === "number" && Number.isFinite(value) && (!chart.logX || value > 0)) {
      xs.push(value);
      rows.push(r);
    }
  }
  const series: { name: string; points: [number, number][] }[] = [];
  for (let c = area.left + 1; c <= area.right; c++) {
    const points: [number, number][] = [];
    rows.forEach((r, k) => {
      const y = sheet.get(r, c)?.value;
      if (typeof y === "number" && Number.isFinite(y)) points.push([xs[k], y]);
    });
    series.push({ name: headerText(sheet, area.top, c), points });
  }
  caption.append(
    element(doc, "strong", undefined, chart.title),
    `: ${series.length} line${series.length === 1 ? "" : "s"} of ${chart.yTitle} against ${chart.xTitle}${chart.logX ? " (log scale)" : ""}, ${xs.length} points each, from ${chart.source}.`,
  );
  figure.append(caption);
  if (xs.length === 0 || series.every((s) => s.points.length === 0)) return figure;
  // Drawn by the same chart library as the pane's charts (no plotting code of our own).
  const holder = element(doc, "div", "sw-chart");
  holder.setAttribute("role", "img");
  holder.setAttribute("aria-labelledby", caption.id);
  figure.append(holder);
  // The chart chunk loads on first use (chartLibrary.ts): the figure is placed now, drawn when it arrives.
  loadChartLibrary().then(
    (library) => library.mountSeriesChart(holder, { title: chart.title, xTitle: chart.xTitle, yTitle: chart.yTitle, logX: chart.logX, series }, theme),
    (error: unknown) => holder.replaceChildren(element(doc, "p", "muted", `The chart could not be loaded from the add-in's server: ${String(error instanceof Error ? error.message : error)}`)),
  );
  return figure;
}
