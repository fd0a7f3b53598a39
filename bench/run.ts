/**
 * Benchmark of the cross-validated fit (a script, not a test): `npm run bench`.
 *
 * For each case it times one full `fit` (10 folds × 100 strengths × 6 mixes on correlated
 * predictors) and, in the same process, one full XᵀX pass over the same data (`gramMs`, the
 * engine's own block-sum routine over all rows). `ratio = ms / gramMs` is the figure to
 * compare between runs: this machine is shared and noisy, absolute times are not.
 * Prints a table, then one JSON line per case.
 *
 * Usage: npm run bench [-- --only 1000x50,200x2000] [-- --repeat 3]
 */
import { fit } from "../engine/fit";
import { ColumnMatrix, zeroMatrix } from "../engine/matrix";
import { blockSums } from "../engine/problem";
import { mulberry32 } from "../engine/random";

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
const MIXES = [0, 0.2, 0.4, 0.6, 0.8, 1];
const FOLDS = 10;
const GRID = 100;

/** Standard normal deviates by the Box–Muller transform over Mulberry32. */
function normalSource(seed: number): () => number {
  const uniform = mulberry32(seed);
  return () => {
    const u = Math.max(uniform(), 1e-300);
    return Math.sqrt(-2 * Math.log(u)) * Math.cos(2 * Math.PI * uniform());
  };
}

/**
 * AR(1)-correlated predictors (corr(x_j, x_k) = 0.6^|j−k|), ten true nonzero coefficients,
 * noise giving a signal-to-noise ratio near 3.
 */
function makeData(n: number, p: number, seed: number): { x: ColumnMatrix; y: Float64Array } {
  const normal = normalSource(seed);
  const x = zeroMatrix(n, p);
  const rho = 0.6;
  const scale = Math.sqrt(1 - rho * rho);
  for (let i = 0; i < n; i++) {
    let previous = normal();
    x.data[i] = previous;
    for (let j = 1; j < p; j++) {
      previous = rho * previous + scale * normal();
      x.data[j * n + i] = previous;
    }
  }
  const truth = new Float64Array(p);
  for (let t = 0; t < Math.min(10, p); t++) truth[Math.floor((t * p) / 10)] = t % 2 === 0 ? 1.5 : -1;
  const y = new Float64Array(n);
  for (let i = 0; i < n; i++) {
    let s = 2;
    for (let j = 0; j < p; j++) if (truth[j] !== 0) s += truth[j] * x.data[j * n + i];
    y[i] = s + 1.5 * normal();
  }
  return { x, y };
}

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
  const widths = rows[0].map((_, k) => Math.max(...rows.map((r) => r[k].length)));
  for (const r of rows) console.log(r.map((cell, k) => cell.padStart(widths[k])).join("  "));
  for (const line of lines) console.log(line);
}

main();
