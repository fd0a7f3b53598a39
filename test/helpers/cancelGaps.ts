/**
 * Measures how often a fit reads its cancel signal, in plain Node (test/engine/cancelGaps.test.ts
 * runs this file with tsx in a child process: inside jest's sandbox every global lookup such as
 * Math.abs is many times slower than in a browser or in Node, so times measured there would not be
 * the engine's).
 *
 * For each case: a fit whose signal records the time between reads and raises itself once a
 * budget is spent. Prints one JSON line: per case the longest gap between reads (seconds), the
 * reads, whether the fit was cancelled, the time from raising to CancelledError, and the total.
 * Pass case names after the budget to measure only those.
 */
import { CancelledError } from "../../engine/errors";
import { fit, FitOptions } from "../../engine/fit";
import type { ColumnMatrix } from "../../engine/matrix";
import { mulberry32 } from "../../engine/random";

export interface GapCase {
  name: string;
  rows: number;
  columns: number;
  options: FitOptions;
}

export interface GapReport {
  name: string;
  worst: number;
  reads: number;
  cancelled: boolean;
  latency: number;
  total: number;
  error: string | null;
}

function data(rows: number, columns: number): { x: ColumnMatrix; y: Float64Array } {
  const uniform = mulberry32(7);
  const x = new Float64Array(rows * columns);
  for (let t = 0; t < x.length; t++) x[t] = uniform() - 0.5;
  const y = new Float64Array(rows);
  for (let i = 0; i < rows; i++) y[i] = x[i] - 2 * x[rows + i] + x[2 * rows + i] + 0.3 * (uniform() - 0.5);
  return { x: { rows, columns, data: x }, y };
}

export function measure(c: GapCase, budgetSeconds: number): GapReport {
  const { x, y: values } = data(c.rows, c.columns);
  // Two-class cases: the event is a response above 0.
  const y = c.options.outcome === "two-class" ? Float64Array.from(values, (v) => (v > 0 ? 1 : 0)) : values;
  const start = performance.now();
  let last = start;
  let worst = 0;
  let reads = 0;
  const signal = {
    get aborted(): boolean {
      const now = performance.now();
      worst = Math.max(worst, now - last);
      last = now;
      reads++;
      return now - start > budgetSeconds * 1000;
    },
  };
  let cancelled = false;
  let error: string | null = null;
  try {
    fit(x, y, { ...c.options, signal });
  } catch (caught) {
    if (caught instanceof CancelledError) cancelled = true;
    else error = String(caught);
  }
  const end = performance.now();
  worst = Math.max(worst, end - last);
  return {
    name: c.name,
    worst: worst / 1000,
    reads,
    cancelled,
    latency: cancelled ? Math.max(0, end - (start + budgetSeconds * 1000)) / 1000 : 0,
    total: (end - start) / 1000,
    error,
  };
}

export const CASES: GapCase[] = [
  { name: "300 × 2000, default settings", rows: 300, columns: 2000, options: {} },
  { name: "100000 × 20, default settings", rows: 100000, columns: 20, options: {} },
  { name: "100000 × 20, residual updates", rows: 100000, columns: 20, options: { updates: "residual" } },
  { name: "20000 × 100, two-class", rows: 20000, columns: 100, options: { outcome: "two-class" } },
  { name: "200 × 2000, two-class", rows: 200, columns: 2000, options: { outcome: "two-class" } },
  // Repeats build each later deal's folds, and the honest error runs whole inner fits: one mix, so
  // the budget reaches them.
  { name: "300 × 2000, lasso, repeats 5, honest error", rows: 300, columns: 2000, options: { mixes: [1], repeats: 5, honestError: true } },
  { name: "20000 × 100, lasso, repeats 3, honest error", rows: 20000, columns: 100, options: { mixes: [1], repeats: 3, honestError: true } },
  // The lasso's cross-validation takes about 0.5 s here, so the budget runs out among the half-sample fits.
  { name: "300 × 2000, lasso, stability selection", rows: 300, columns: 2000, options: { mixes: [1], folds: 3, stability: {} } },
];

if (require.main === module) {
  const budget = Number(process.argv[2] ?? "1.5");
  const names = process.argv.slice(3);
  console.log(JSON.stringify(CASES.filter((c) => names.length === 0 || names.includes(c.name)).map((c) => measure(c, budget))));
}
