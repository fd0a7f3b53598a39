/**
 * Benchmark of the cross-validated fit (a script, not a test): `npm run bench`.
 *
 * For each case it times one full `fit` (10 folds × 100 strengths × 6 mixes on correlated
 * predictors) and, in the same process, one full XᵀX pass over the same data (`gramMs`, the
 * engine's own block-sum routine over all rows). `ratio = ms / gramMs` is the figure to
 * compare between runs: this machine is shared and noisy, absolute times are not.
 * Prints a table, then one JSON line per case.
 *
 * Two-class cases (names ending in "-2c"): the same predictors with a yes/no outcome drawn from
 * the logistic model on the same true coefficients, fitted as penalized logistic regression
 * (10 folds × the default grid × 6 mixes). In the same run the numeric fit of the same predictors
 * with the same settings is timed too, and `vsNumber = ms / numberMs` is the figure to compare
 * (goal: within 5×).
 *
 * Usage: npm run bench [-- --only 1000x50,200x2000-2c] [-- --repeat 3]
 */
import { fit } from "../engine/fit";
import { ColumnMatrix } from "../engine/matrix";
import { blockSums } from "../engine/problem";
import { makeData, makeTwoClass } from "./data";

interface Case {
  name: string;
  n: number;
  p: number;
  target?: string;
}

const CASES: Case[] = [
  { name: "1000x50", n: 1000, p: 50, target: "< 100 ms" },
  { name: "20000x100", n: 20000, p: 100, target: "ratio <= 4" },
  { name: "200x2000", n: 200, p: 2000, target: "< 5000 ms" },
  { name: "100000x20", n: 100000, p: 20, target: "< 2000 ms" },
];
/** Two-class cases: the predictors of the numeric case of the same size. */
const TWO_CLASS_CASES: Case[] = [
  { name: "1000x50-2c", n: 1000, p: 50, target: "<= 5x number" },
  { name: "20000x100-2c", n: 20000, p: 100, target: "<= 5x number" },
  { name: "200x2000-2c", n: 200, p: 2000, target: "<= 5x number" },
];
const MIXES = [0, 0.2, 0.4, 0.6, 0.8, 1];
const FOLDS = 10;
const GRID = 100;

function timeGram(x: ColumnMatrix, y: Float64Array): number {
  const rows = new Int32Array(x.rows);
  for (let i = 0; i < x.rows; i++) rows[i] = i;
  const shift = new Float64Array(x.columns);
  const start = performance.now();
  blockSums(x, y, null, rows, shift, 0);
  return performance.now() - start;
}

function main(): void {
  const args = process.argv.slice(2);
  const onlyAt = args.indexOf("--only");
  const only = onlyAt >= 0 ? new Set(args[onlyAt + 1].split(",")) : null;
  const repeatAt = args.indexOf("--repeat");
  const repeat = repeatAt >= 0 ? Math.max(1, Number(args[repeatAt + 1])) : 1;
  const lines: string[] = [];
  const rows: string[][] = [["case", "n", "p", "ms", "gram ms", "ratio", "chosen mix", "strength", "terms kept", "sweeps", "max KKT", "target"]];
  for (const c of CASES) {
    if (only && !only.has(c.name)) continue;
    const { x, y } = makeData(c.n, c.p, 20261201);
    // Warm the JIT on a small problem so the first case is not charged for compilation.
    const warm = makeData(200, 10, 1);
    fit(warm.x, warm.y, { mixes: [0.5], folds: 3 });
    let best = Infinity;
    let gram = Infinity;
    let result = null;
    for (let r = 0; r < repeat; r++) {
      gram = Math.min(gram, timeGram(x, y));
      const start = performance.now();
      result = fit(x, y, { mixes: MIXES, folds: FOLDS, strengthCount: GRID, seed: 1 });
      best = Math.min(best, performance.now() - start);
    }
    if (!result) continue;
    const ratio = best / gram;
    rows.push([
      c.name,
      String(c.n),
      String(c.p),
      best.toFixed(0),
      gram.toFixed(1),
      ratio.toFixed(2),
      String(result.mix),
      result.strength.toPrecision(4),
      String(result.coefficients.filter((b) => b !== 0).length),
      String(result.diagnostics.sweeps),
      result.diagnostics.maxKktViolationAllFits.toExponential(1),
      c.target ?? "",
    ]);
    lines.push(
      JSON.stringify({ case: c.name, n: c.n, p: c.p, folds: FOLDS, mixes: MIXES.length, grid: GRID, ms: Number(best.toFixed(1)), gramMs: Number(gram.toFixed(2)), ratio: Number(ratio.toFixed(3)) }),
    );
  }
  const twoClassRows: string[][] = [["case", "n", "p", "ms", "number ms", "vs number", "event share", "chosen mix", "strength", "terms kept", "CV deviance", "max KKT", "halvings", "target"]];
  for (const c of TWO_CLASS_CASES) {
    if (only && !only.has(c.name)) continue;
    const { x, y } = makeData(c.n, c.p, 20261201);
    const events = makeTwoClass(x, y, 20261203);
    const warm = makeData(200, 10, 1);
    fit(warm.x, makeTwoClass(warm.x, warm.y, 1), { mixes: [0.5], folds: 3, outcome: "two-class" });
    let best = Infinity;
    let numberBest = Infinity;
    let gram = Infinity;
    let result = null;
    for (let r = 0; r < repeat; r++) {
      gram = Math.min(gram, timeGram(x, y));
      let start = performance.now();
      fit(x, y, { mixes: MIXES, folds: FOLDS, seed: 1 });
      numberBest = Math.min(numberBest, performance.now() - start);
      start = performance.now();
      result = fit(x, events, { mixes: MIXES, folds: FOLDS, seed: 1, outcome: "two-class" });
      best = Math.min(best, performance.now() - start);
    }
    if (!result || !result.choices) continue;
    let share = 0;
    for (let i = 0; i < events.length; i++) share += events[i] / events.length;
    const vsNumber = best / numberBest;
    twoClassRows.push([
      c.name,
      String(c.n),
      String(c.p),
      best.toFixed(0),
      numberBest.toFixed(0),
      vsNumber.toFixed(2),
      share.toFixed(3),
      String(result.mix),
      result.strength.toPrecision(4),
      String(result.coefficients.filter((b) => b !== 0).length),
      result.choices.lowest.error.toPrecision(4),
      result.diagnostics.maxKktViolationAllFits.toExponential(1),
      String(result.diagnostics.stepHalvings),
      c.target ?? "",
    ]);
    lines.push(
      JSON.stringify({
        case: c.name,
        n: c.n,
        p: c.p,
        folds: FOLDS,
        mixes: MIXES.length,
        grid: result.diagnostics.strengthCount,
        ms: Number(best.toFixed(1)),
        gramMs: Number(gram.toFixed(2)),
        ratio: Number((best / gram).toFixed(3)),
        numberMs: Number(numberBest.toFixed(1)),
        vsNumber: Number(vsNumber.toFixed(3)),
        outcome: "two-class",
      }),
    );
  }
  const widths = rows[0].map((_, k) => Math.max(...rows.map((r) => r[k].length)));
  for (const r of rows) console.log(r.map((cell, k) => cell.padStart(widths[k])).join("  "));
  if (twoClassRows.length > 1) {
    const twoWidths = twoClassRows[0].map((_, k) => Math.max(...twoClassRows.map((r) => r[k].length)));
    console.log("");
    for (const r of twoClassRows) console.log(r.map((cell, k) => cell.padStart(twoWidths[k])).join("  "));
  }
  for (const line of lines) console.log(line);
}

main();
