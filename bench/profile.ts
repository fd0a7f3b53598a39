/**
 * One bench case's fit, repeated, for a CPU profile (a script, not a test):
 *   node --cpu-prof --cpu-prof-dir DIR --cpu-prof-interval 200 --import tsx bench/profile.ts 1000x50 [--two-class] [--seconds 4]
 * then `tsx bench/profileSummary.ts DIR/*.cpuprofile` for self time by function and by phase
 * (bench/PROFILE.md holds the summary).
 *
 * The workload is issue 11's pinned one: 10 random folds (seed 1), mixes 0, 0.2, …, 1, exactly
 * 100 strengths down to 1e-4 of the top (1e-2 when predictors ≥ rows), no early stop. A short
 * warm-up fit runs first so compilation is not charged to the case; the fit is then repeated
 * until `--seconds` have passed so short cases give enough samples.
 */
import { fit, FitOptions } from "../engine/fit";
import { makeData, makeTwoClass } from "./data";

function main(): void {
  const args = process.argv.slice(2);
  const name = args[0] ?? "1000x50";
  const [n, p] = name.split("x").map(Number);
  const twoClass = args.includes("--two-class");
  const at = args.indexOf("--seconds");
  const seconds = at >= 0 ? Number(args[at + 1]) : 4;
  const { x, y } = makeData(n, p, 20261201);
  const target = twoClass ? makeTwoClass(x, y, 20261203) : y;
  const options: FitOptions = {
    mixes: [0, 0.2, 0.4, 0.6, 0.8, 1],
    folds: 10,
    seed: 1,
    strengthCount: 100,
    lowEndRatio: p >= n ? 1e-2 : 1e-4,
    stopEarly: false,
    outcome: twoClass ? "two-class" : "number",
  };
  const warm = makeData(200, 10, 1);
  fit(warm.x, twoClass ? makeTwoClass(warm.x, warm.y, 1) : warm.y, { ...options, folds: 3 });
  const start = performance.now();
  let runs = 0;
  let best = Infinity;
  while (runs === 0 || performance.now() - start < seconds * 1000) {
    const t = performance.now();
    fit(x, target, options);
    best = Math.min(best, performance.now() - t);
    runs++;
  }
  console.log(JSON.stringify({ case: name + (twoClass ? "-2c" : ""), runs, bestMs: Number(best.toFixed(1)) }));
}

main();
