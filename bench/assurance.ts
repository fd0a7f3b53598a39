/**
 * Figures for repeated cross-validation and the honest error (a script, not a test):
 * `npm run bench:assurance [-- --seeds 20] [-- --skip-timing]`.
 *
 * 1. The demo roastery (encoded as the cell functions encode it), default settings (and the lasso
 *    alone, mix 1, where the strength's spread isn't mixed up with the mix's): the chosen
 *    strength, its fraction of the grid's top, the terms kept and the mix over fold seeds
 *    1 … S, with repeats = 1 and repeats = 5. Spread: the SD of log10 of the strength fraction
 *    (the fraction compares across mixes; the strength itself too when the mix doesn't move),
 *    min–max, and how many distinct choices; the ratio of the SDs is the figure to quote.
 * 2. The honest (nested CV) error against the optimistic CV error on the demo, fold seed 1.
 * 3. Time of one fit on the bench's 1,000 × 50 case (bench/data.ts; 10 folds, 6 mixes, 100
 *    strengths, as bench/run.ts): plain, repeats = 5, honest error; best of 3. The machine is
 *    shared: ratios to the plain fit are the figures to compare, not the milliseconds.
 */
import { fit, FitOptions, FitResult } from "../engine/fit";
import { prepare } from "../functions/api";
import { demoSheet } from "../taskpane/standalone/preview";
import { makeData } from "./data";

function argument(name: string, fallback: number): number {
  const at = process.argv.indexOf(name);
  return at >= 0 ? Number(process.argv[at + 1]) : fallback;
}

function spread(values: number[]): { sd: number; min: number; max: number } {
  const mean = values.reduce((a, b) => a + b, 0) / values.length;
  const sd = Math.sqrt(values.reduce((a, b) => a + (b - mean) ** 2, 0) / (values.length - 1));
  return { sd, min: Math.min(...values), max: Math.max(...values) };
}

function choices(x: number[][], y: number[], seeds: number, repeats: number, options: FitOptions = {}): FitResult[] {
  return Array.from({ length: seeds }, (_, s) => fit(x, y, { ...options, seed: s + 1, repeats }));
}

function describe(label: string, fits: FitResult[]): number {
  const fractions = fits.map((f) => Math.log10(f.strengthFraction));
  const strengths = fits.map((f) => Math.log10(f.strength));
  const terms = fits.map((f) => f.coefficients.filter((b) => b !== 0).length);
  const mixes = new Map<number, number>();
  for (const f of fits) mixes.set(f.mix, (mixes.get(f.mix) ?? 0) + 1);
  const distinct = new Set(fits.map((f) => `${f.mix}/${f.strength}`)).size;
  const a = spread(fractions);
  const b = spread(strengths);
  const t = spread(terms);
  console.log(
    `${label}: SD log10(strength fraction) ${a.sd.toFixed(3)} (fraction ${(10 ** a.min).toPrecision(3)}–${(10 ** a.max).toPrecision(3)}); ` +
      `SD log10(strength) ${b.sd.toFixed(3)} (strength ${(10 ** b.min).toPrecision(3)}–${(10 ** b.max).toPrecision(3)}); ` +
      `terms kept ${t.min}–${t.max} (SD ${t.sd.toFixed(2)}); mixes ${[...mixes].map(([m, c]) => `${m}×${c}`).join(", ")}; ${distinct} distinct choices`,
  );
  return a.sd;
}

function best(times: number, run: () => void): number {
  let out = Infinity;
  for (let r = 0; r < times; r++) {
    const start = performance.now();
    run();
    out = Math.min(out, performance.now() - start);
  }
  return out;
}

function main(): void {
  const seeds = argument("--seeds", 20);
  const sheet = demoSheet();
  const { request } = prepare(sheet.target, sheet.predictors, null, null);
  const x = request.predictors as number[][];
  const y = request.target as number[];
  console.log(`demo roastery: ${x.length} rows × ${x[0].length} predictors, default settings, fold seeds 1…${seeds}`);
  const single = describe("repeats = 1", choices(x, y, seeds, 1));
  const five = describe("repeats = 5", choices(x, y, seeds, 5));
  console.log(`ratio of SDs of log10(strength fraction), repeats 5 / repeats 1: ${(five / single).toFixed(3)}`);
  // The mix moves between seeds, and strengths of different mixes don't compare: the lasso alone
  // (mix 1) shows the strength's own spread.
  const lassoSingle = describe("lasso only, repeats = 1", choices(x, y, seeds, 1, { mixes: [1] }));
  const lassoFive = describe("lasso only, repeats = 5", choices(x, y, seeds, 5, { mixes: [1] }));
  console.log(`lasso only: ratio of SDs of log10(strength), repeats 5 / repeats 1: ${(lassoFive / lassoSingle).toFixed(3)}`);

  const start = performance.now();
  const honest = fit(x, y, { honestError: true });
  const ms = performance.now() - start;
  const h = honest.honest;
  if (h) {
    console.log(
      `honest error (nested CV, ${h.folds} outer folds): MSE ${h.error.toPrecision(4)} ± ${h.se.toPrecision(3)} (SE); optimistic CV MSE at the chosen point ${h.optimistic.toPrecision(4)} ± ${(honest.choices?.lowest.se ?? NaN).toPrecision(3)}; honest / optimistic ${(h.error / h.optimistic).toFixed(3)}; ${ms.toFixed(0)} ms`,
    );
    console.log(`  per outer fold: ${h.perFold.map((f) => `${f.error.toPrecision(3)} (mix ${f.mix}, ${f.termsKept} terms)`).join("; ")}`);
  }

  if (process.argv.includes("--skip-timing")) return;
  const data = makeData(1000, 50, 20261201);
  const options: FitOptions = { mixes: [0, 0.2, 0.4, 0.6, 0.8, 1], folds: 10, strengthCount: 100, seed: 1 };
  fit(data.x, data.y, { ...options, folds: 3 });
  const plain = best(3, () => fit(data.x, data.y, options));
  const repeated = best(3, () => fit(data.x, data.y, { ...options, repeats: 5 }));
  const nested = best(3, () => fit(data.x, data.y, { ...options, honestError: true }));
  console.log(`1000 × 50 (10 folds, 6 mixes, 100 strengths), best of 3: plain ${plain.toFixed(0)} ms; repeats = 5 ${repeated.toFixed(0)} ms (×${(repeated / plain).toFixed(2)}); honest error ${nested.toFixed(0)} ms (×${(nested / plain).toFixed(2)})`);
}

main();
