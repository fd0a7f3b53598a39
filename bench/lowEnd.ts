/**
 * Where does the cross-validated error bottom out? A measurement (a script, not a test) behind
 * the default low end of the strength grid: `npx tsx bench/lowEnd.ts [--seeds 5] [--only <data set>] [--no-density | --density-only] [--json]`
 * (about half an hour at 5 seeds on one core, most of it the predictors ≥ rows blocks).
 *
 * For each data set and each default mix it cross-validates (10 folds, 8 for Longley's 16 rows;
 * fold seeds 1…S) over a
 * grid reaching far below any default (1e-8 of the top; 20 strengths per tenfold drop) and
 * reports, as fractions of that mix's top:
 * - `lowest`: where the mean CV error is lowest (the smallest and the median over the seeds);
 * - `one-se`: the largest strength within one standard error of that mix's lowest error;
 * - `cost(r)`: for a candidate low end r, how much higher the lowest error found on the grid
 *   cut at r·top is than the lowest on the deep grid, in standard errors of the latter (the
 *   largest over the seeds; 0 when the lowest point lies above r·top).
 * The same folds serve every mix, as in the engine. A second table measures the grid density:
 * how much higher the lowest error is at 10, 20 or 40 strengths per tenfold drop than on a grid
 * five times denser. Data sets: the demo roastery (as the cell
 * functions encode it), the reference fixtures (diabetes, prostate, Longley) and, for
 * predictors ≥ rows, the quadratic diabetes model (Efron, Hastie, Johnstone & Tibshirani 2004,
 * §(quadratic model): 10 columns, 45 products, 9 squares (not the two-level SEX): 64 terms)
 * on consecutive blocks of 50 rows, and the quadratic prostate model (8 columns, 28 products,
 * 7 squares (not the 0/1 svi): 43 terms) on consecutive blocks of 40 rows.
 */
import { readFileSync } from "fs";
import { join } from "path";
import { readFitTable } from "../engine/cli/table";
import { DEFAULT_MIXES, fit, FitResult } from "../engine/fit";
import { prepare } from "../functions/api";
import { demoSheet } from "../taskpane/standalone/preview";

interface DataSet {
  name: string;
  x: number[][];
  y: number[];
}

const FIXTURES = join(__dirname, "..", "test", "fixtures");
/** Candidate low ends: every half tenfold drop from 10^-1 to 10^-8. */
const CANDIDATES = Array.from({ length: 15 }, (_, k) => 10 ** (-1 - k / 2));
/** Cutting the grid may cost at most this many standard errors of the lowest error (see `needs`). */
const TOLERATED_COST = 0.1;

function fixture(file: string, target: string, exclude: string[] = []): DataSet {
  const table = readFitTable(readFileSync(join(FIXTURES, file), "utf8"), { target, predictors: null, exclude, weightsColumn: null, foldColumn: null });
  return { name: file.replace(/\.tsv$/, ""), x: table.predictors, y: table.targetValues };
}

/** Columns, their pairwise products and the squares of the columns with more than two values. */
function quadratic(x: number[][]): number[][] {
  const p = x[0].length;
  const twoLevel = Array.from({ length: p }, (_, j) => new Set(x.map((row) => row[j])).size <= 2);
  return x.map((row) => {
    const out = row.slice();
    for (let a = 0; a < p; a++) for (let b = a + 1; b < p; b++) out.push(row[a] * row[b]);
    for (let a = 0; a < p; a++) if (!twoLevel[a]) out.push(row[a] * row[a]);
    return out;
  });
}

function blocks(base: DataSet, size: number, count: number): DataSet[] {
  const wide = quadratic(base.x);
  return Array.from({ length: count }, (_, b) => ({
    name: `${base.name} quadratic, rows ${b * size + 1}–${(b + 1) * size}`,
    x: wide.slice(b * size, (b + 1) * size),
    y: base.y.slice(b * size, (b + 1) * size),
  }));
}

function roastery(): DataSet {
  const sheet = demoSheet();
  const { dataset } = prepare(sheet.target, sheet.predictors, null, null);
  return { name: "roastery (demo)", x: dataset.predictors, y: dataset.target };
}

interface MixCurve {
  strengths: number[];
  error: number[];
  se: number[];
}

function curves(result: FitResult): Map<number, MixCurve> {
  const out = new Map<number, MixCurve>();
  for (const row of (result.cv as NonNullable<FitResult["cv"]>).table) {
    const curve = out.get(row.mix) ?? { strengths: [], error: [], se: [] };
    curve.strengths.push(row.strength);
    curve.error.push(row.error);
    curve.se.push(row.se);
    out.set(row.mix, curve);
  }
  return out;
}

/** Lowest error on the part of the curve at or above r × its top (Infinity when none). */
function lowestAbove(curve: MixCurve, r: number): { error: number; index: number } {
  const floor = r * curve.strengths[0] * (1 - 1e-9);
  let index = -1;
  for (let k = 0; k < curve.error.length; k++) if (curve.strengths[k] >= floor && (index < 0 || curve.error[k] < curve.error[index])) index = k;
  return { error: index < 0 ? Infinity : curve.error[index], index };
}

interface Measure {
  /** Where the lowest error sits, as a fraction of the top. */
  lowest: number;
  /** The one-standard-error point of this mix alone, as a fraction of the top. */
  oneSe: number;
  /** Per candidate: (lowest error on the grid cut there − lowest on the deep grid) / its SE. */
  cost: number[];
  /** Per candidate: true when the lowest point lies a full tenfold drop above it, or cutting there costs ≤ TOLERATED_COST. */
  fine: boolean[];
}

function measure(curve: MixCurve): Measure {
  const top = curve.strengths[0];
  const { index: best } = lowestAbove(curve, 0);
  const lowest = curve.strengths[best] / top;
  const limit = curve.error[best] + curve.se[best];
  const oneSe = curve.error.findIndex((e) => e <= limit);
  const cost = CANDIDATES.map((r) => (curve.se[best] > 0 ? (lowestAbove(curve, r).error - curve.error[best]) / curve.se[best] : 0));
  const fine = CANDIDATES.map((r, c) => r <= lowest / 10 || cost[c] <= TOLERATED_COST);
  return { lowest, oneSe: curve.strengths[oneSe] / top, cost, fine };
}

/** The whole choice (every mix): cost per candidate of cutting every mix's grid there. */
function overallCost(all: Map<number, MixCurve>): { mix: number; fraction: number; cost: number[] } {
  let bestMix = -1;
  let best = { error: Infinity, index: -1 };
  for (const [mix, curve] of all) {
    const here = lowestAbove(curve, 0);
    if (here.error < best.error) {
      best = here;
      bestMix = mix;
    }
  }
  const chosen = all.get(bestMix) as MixCurve;
  const se = chosen.se[best.index];
  const cost = CANDIDATES.map((r) => {
    let cut = Infinity;
    for (const curve of all.values()) cut = Math.min(cut, lowestAbove(curve, r).error);
    return se > 0 ? (cut - best.error) / se : 0;
  });
  return { mix: bestMix, fraction: chosen.strengths[best.index] / chosen.strengths[0], cost };
}

/**
 * Grid density: the lowest CV error over every mix on a grid of `density` strengths per
 * tenfold drop, above the lowest on a fivefold denser grid (same folds, same low end), in
 * standard errors of the latter. The largest over the seeds.
 */
function densityCost(set: DataSet, density: number, seeds: number, lowEnd: number): number {
  const n = set.y.length;
  let worst = 0;
  for (let seed = 1; seed <= seeds; seed++) {
    const options = { folds: Math.min(10, Math.floor(n / 2)), seed, lowEndRatio: lowEnd };
    const coarse = fit(set.x, set.y, { ...options, gridDensity: density });
    const fine = fit(set.x, set.y, { ...options, gridDensity: 5 * density });
    const best = (fine.choices as NonNullable<FitResult["choices"]>).lowest;
    worst = Math.max(worst, ((coarse.choices as NonNullable<FitResult["choices"]>).lowest.error - best.error) / best.se);
  }
  return worst;
}

function main(): void {
  const argv = process.argv.slice(2);
  const seedsAt = argv.indexOf("--seeds");
  const seeds = seedsAt >= 0 ? Number(argv[seedsAt + 1]) : 5;
  const json = argv.includes("--json");
  const only = argv.includes("--only") ? argv[argv.indexOf("--only") + 1] : null;
  const diabetes = fixture("diabetes.tsv", "Y");
  const prostate = fixture("prostate.tsv", "lpsa", ["id", "train"]);
  let sets: DataSet[] = [
    roastery(),
    diabetes,
    prostate,
    fixture("longley_nist.tsv", "y"),
    ...blocks({ ...diabetes, name: "diabetes" }, 50, 4),
    ...blocks({ ...prostate, name: "prostate" }, 40, 2),
  ];
  if (only !== null) sets = sets.filter((set) => set.name.startsWith(only));
  const f = (v: number): string => (v === 0 ? "0" : v >= 0.01 ? v.toFixed(3) : v.toExponential(1));
  const shownCandidates = [1e-2, 1e-3, 1e-4, 1e-5, 1e-6];
  const at = (values: readonly number[], r: number): number => values[CANDIDATES.findIndex((c) => Math.abs(c / r - 1) < 1e-9)];
  if (!json) {
    console.log(`fold seeds 1–${seeds}; fractions of each mix's top; cost in SEs of the lowest error when the grid is cut at the low end shown`);
    console.log(["data", "n×p", "mix", "lowest (smallest)", "lowest (median)", "one-se (median)", ...shownCandidates.map((r) => `cost@${f(r)}`), "needs"].join(" | "));
  }
  for (const set of argv.includes("--density-only") ? [] : sets) {
    const n = set.y.length;
    const p = set.x[0].length;
    // Predictors ≥ rows: the lasso end is slow and not unique far down (the fit interpolates), so the deep grid stops at 1e-5.
    const deep = n > p ? 1e-8 : 1e-5;
    const perMix = new Map<number, Measure[]>();
    const overall: ReturnType<typeof overallCost>[] = [];
    const started = Date.now();
    for (let seed = 1; seed <= seeds; seed++) {
      const result = fit(set.x, set.y, { folds: Math.min(10, Math.floor(n / 2)), seed, lowEndRatio: deep, gridDensity: 20 });
      const all = curves(result);
      for (const [mix, curve] of all) perMix.set(mix, [...(perMix.get(mix) ?? []), measure(curve)]);
      overall.push(overallCost(all));
    }
    const ms = Date.now() - started;
    const usable = CANDIDATES.map((r) => r >= deep * 10 ** 0.5);
    for (const mix of DEFAULT_MIXES) {
      const list = perMix.get(mix) ?? [];
      const lowest = list.map((m) => m.lowest).sort((a, b) => a - b);
      const oneSe = list.map((m) => m.oneSe).sort((a, b) => a - b);
      const cost = CANDIDATES.map((_, c) => Math.max(...list.map((m) => m.cost[c])));
      // The coarsest candidate at which every seed is fine (and every deeper usable one too).
      let needs = NaN;
      for (let c = 0; c < CANDIDATES.length && usable[c]; c++) {
        if (list.every((m) => m.fine.slice(c).every((ok, d) => ok || !usable[c + d]))) {
          needs = CANDIDATES[c];
          break;
        }
      }
      const row = { data: set.name, rows: n, terms: p, mix, lowestSmallest: lowest[0], lowestMedian: lowest[Math.floor(lowest.length / 2)], oneSeMedian: oneSe[Math.floor(oneSe.length / 2)], cost, needs, ms };
      if (json) {
        console.log(JSON.stringify({ ...row, candidates: CANDIDATES }));
        continue;
      }
      console.log(
        [set.name, `${n}×${p}`, mix, f(row.lowestSmallest), f(row.lowestMedian), f(row.oneSeMedian), ...shownCandidates.map((r) => (r >= deep ? at(cost, r).toFixed(2) : "–")), Number.isNaN(needs) ? "deeper" : f(needs)].join(" | "),
      );
    }
    const overallCostMax = CANDIDATES.map((_, c) => Math.max(...overall.map((o) => o.cost[c])));
    const summary = { data: set.name, rows: n, terms: p, mix: "all", chosen: overall.map((o) => `${o.mix}@${f(o.fraction)}`).join(" "), cost: overallCostMax, ms };
    if (json) console.log(JSON.stringify({ ...summary, candidates: CANDIDATES }));
    else console.log([set.name, `${n}×${p}`, "all", summary.chosen, "", "", ...shownCandidates.map((r) => (r >= deep ? at(overallCostMax, r).toFixed(2) : "–")), `${ms} ms`].join(" | "));
  }
  if (argv.includes("--no-density")) return;
  // Grid density: what 10, 20 and 40 strengths per tenfold drop give up against 5 times as many.
  if (!json) console.log(`\ngrid density: lowest CV error (all mixes) above that of a 5× denser grid, in SEs, worst of seeds 1–${seeds}`);
  for (const set of sets.filter((s) => s.y.length > s.x[0].length)) {
    const costs = [10, 20, 40].map((d) => densityCost(set, d, seeds, 1e-5));
    if (json) console.log(JSON.stringify({ data: set.name, density: [10, 20, 40], cost: costs }));
    else console.log([set.name, ...costs.map((c, k) => `${[10, 20, 40][k]}: ${c.toFixed(3)}`)].join(" | "));
  }
}

main();
