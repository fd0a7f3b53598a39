/**
 * What stability selection costs (a script, not a test): `npm run bench:stability [-- --repeat 3] [-- --draws 50]`.
 *
 * On the benchmark's 1000 × 50 case (bench/data.ts: AR(1) predictors, ten true terms) it times a
 * plain cross-validated fit (10 folds × 100 strengths, the benchmark's mixes, and the lasso alone)
 * and the same fit with stability selection at its defaults (50 pairs: 100 half-sample paths),
 * number and two-class outcomes, best of `repeat` runs each; and it counts, against the known true
 * terms, how many stable terms are false, beside the bound q²/((2π − 1)·p) (Meinshausen &
 * Bühlmann 2010, JRSS-B 72(4), Theorem 1; a bound on the expectation, so one data set can exceed it).
 * The machine is shared: compare `extra` (stability time / plain time), not absolute times.
 */
import { fit, FitOptions, FitResult } from "../engine/fit";
import { makeData, makeTwoClass } from "./data";

const args = process.argv.slice(2);
const option = (name: string, fallback: number): number => {
  const at = args.indexOf(name);
  return at >= 0 ? Number(args[at + 1]) : fallback;
};
const repeat = Math.max(1, option("--repeat", 3));
const draws = option("--draws", 50);

function best(run: () => FitResult): { ms: number; result: FitResult } {
  let ms = Infinity;
  let result: FitResult | null = null;
  for (let r = 0; r < repeat; r++) {
    const start = performance.now();
    result = run();
    ms = Math.min(ms, performance.now() - start);
  }
  return { ms, result: result as FitResult };
}

const n = 1000;
const p = 50;
const { x, y } = makeData(n, p, 20261201);
const events = makeTwoClass(x, y, 20261203);
// The true terms of makeData: columns ⌊t·p/10⌋, t = 0..9.
const truth = new Set(Array.from({ length: 10 }, (_, t) => Math.floor((t * p) / 10)));
const warm = makeData(200, 10, 1);
fit(warm.x, warm.y, { mixes: [0.5], folds: 3, stability: { draws: 2 } });

const rows: string[][] = [["case", "mixes", "plain ms", "stability ms", "extra", "chosen mix", "counted strengths", "stable", "false stable", "bound"]];
const cases: { name: string; target: ArrayLike<number>; options: FitOptions }[] = [
  { name: "1000x50", target: y, options: { mixes: [0, 0.2, 0.4, 0.6, 0.8, 1] } },
  { name: "1000x50", target: y, options: { mixes: [1] } },
  { name: "1000x50-2c", target: events, options: { mixes: [0, 0.2, 0.4, 0.6, 0.8, 1], outcome: "two-class" } },
  { name: "1000x50-2c", target: events, options: { mixes: [1], outcome: "two-class" } },
];
for (const c of cases) {
  const options: FitOptions = { ...c.options, folds: 10, strengthCount: 100, seed: 1 };
  const plain = best(() => fit(x, c.target, options));
  const withStability = best(() => fit(x, c.target, { ...options, stability: { draws } }));
  const stability = withStability.result.stability;
  if (!stability) throw new Error("no stability result");
  const stable = stability.stable.map((s, j) => (s ? j : -1)).filter((j) => j >= 0);
  rows.push([
    c.name,
    (c.options.mixes ?? []).join(" "),
    plain.ms.toFixed(0),
    withStability.ms.toFixed(0),
    (withStability.ms / plain.ms).toFixed(2),
    String(stability.mix),
    String(stability.strengths.length),
    String(stable.length),
    String(stable.filter((j) => !truth.has(j)).length),
    stability.falseSelectionBound.toFixed(2),
  ]);
}
const widths = rows[0].map((_, k) => Math.max(...rows.map((r) => r[k].length)));
for (const r of rows) console.log(r.map((cell, k) => cell.padStart(widths[k])).join("  "));
