/**
 * Side-by-side timing of two engines in one process (a script, not a test): the worktree's engine
 * against an older copy of it, on the pinned bench workload (bench/run.ts: 10 folds seed 1, mixes
 * 0, 0.2, …, 1, 100 strengths to 1e-4 of the top, 1e-2 when predictors ≥ rows, no early stop).
 * The two fits alternate, `repeat` times each, and the best process CPU time of each counts
 * (CPU time, not wall time: the machine is shared). Prints one JSON line per case: both times,
 * their ratio, both choices (lowest and one-SE: mix and grid index), the largest coefficient
 * difference, and sweeps and largest KKT violation over all fits.
 *
 * Usage:
 *   mkdir -p /tmp/old && git archive <ref> engine | tar -x -C /tmp/old
 *   npx tsx bench/solverSideBySide.ts /tmp/old 1000x50,20000x100,200x2000,100000x20 3
 */
import { fit } from "../engine/fit";
import type { FitOptions, FitResult } from "../engine/fit";
import type { ColumnMatrix } from "../engine/matrix";
import { makeData } from "./data";

type Fit = (x: ColumnMatrix, y: ArrayLike<number>, options: FitOptions) => FitResult;

async function main(): Promise<void> {
  const [oldRoot, list, repeatText] = process.argv.slice(2);
  if (!oldRoot) throw new Error("usage: solverSideBySide.ts <old root holding engine/> [cases] [repeat]");
  const old = (await import(`${oldRoot}/engine/fit`)) as { fit: Fit };
  const names = (list ?? "1000x50,20000x100,200x2000,100000x20").split(",");
  const repeat = Math.max(1, Number(repeatText ?? 3));
  const cpu = (): number => {
    const u = process.cpuUsage();
    return (u.user + u.system) / 1000;
  };
  const warm = makeData(200, 10, 1);
  fit(warm.x, warm.y, { mixes: [0.5], folds: 3 });
  old.fit(warm.x, warm.y, { mixes: [0.5], folds: 3 });
  for (const name of names) {
    const [n, p] = name.split("x").map(Number);
    const { x, y } = makeData(n, p, 20261201);
    const options: FitOptions = { mixes: [0, 0.2, 0.4, 0.6, 0.8, 1], folds: 10, seed: 1, strengthCount: 100, lowEndRatio: p >= n ? 1e-2 : 1e-4, stopEarly: false };
    let bestOld = Infinity;
    let bestNew = Infinity;
    let before: FitResult | null = null;
    let after: FitResult | null = null;
    for (let r = 0; r < repeat; r++) {
      let start = cpu();
      before = old.fit(x, y, options);
      bestOld = Math.min(bestOld, cpu() - start);
      start = cpu();
      after = fit(x, y, options);
      bestNew = Math.min(bestNew, cpu() - start);
    }
    if (!before || !after) continue;
    const a = before;
    const b = after;
    const choice = (f: FitResult): (number | undefined)[] => [f.choices?.lowest.mix, f.choices?.lowest.index, f.choices?.oneSe.mix, f.choices?.oneSe.index];
    let maxDiff = 0;
    for (let j = 0; j < a.coefficients.length; j++) maxDiff = Math.max(maxDiff, Math.abs(a.coefficients[j] - b.coefficients[j]));
    console.log(
      JSON.stringify({
        case: name,
        oldMs: Math.round(bestOld),
        newMs: Math.round(bestNew),
        ratio: Number((bestNew / bestOld).toFixed(3)),
        oldChoice: choice(a),
        newChoice: choice(b),
        maxCoefDiff: maxDiff,
        sweeps: [a.diagnostics.sweeps, b.diagnostics.sweeps],
        maxKkt: [a.diagnostics.maxKktViolationAllFits, b.diagnostics.maxKktViolationAllFits],
      }),
    );
  }
}

void main();
