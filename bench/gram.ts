/**
 * The XᵀX pass, blocked kernel against the plain loop (a script, not a test): `npx tsx bench/gram.ts [--reps 15] [--weights]`.
 *
 * For each tall bench case (bench/data.ts's generator, 10 random folds of seed 1, as fit.ts cuts
 * them) it forms every fold block's sums twice in the same process: with the engine's
 * `blockSumsOf` (engine/problem.ts: one windowed pass, packed panels, 4 × 4 register tiles) and
 * with `plainBlockSums` below, the loop the engine used before (kept here verbatim as the
 * reference: a gather per block, then one four-accumulator dot product per pair of columns).
 * The two run interleaved, best of `--reps`, and the ratio new/old is the figure to read on this
 * shared machine. It also reports each one's largest error in XᵀX against a compensated
 * (Neumaier) summation of the same products, relative to √(xx_jj · xx_kk).
 */
import { ColumnMatrix } from "../engine/matrix";
import { planFolds } from "../engine/folds";
import { BlockSums, blockSumsOf, dotRange, emptySums } from "../engine/problem";
import { makeData } from "./data";

/** The engine's block sums before the blocked kernel (engine/problem.ts at 4f231bb). */
export function plainBlockSums(
  x: ColumnMatrix,
  y: ArrayLike<number>,
  weights: ArrayLike<number> | null,
  rows: ArrayLike<number>,
  shiftX: Float64Array,
  shiftY: number,
): BlockSums {
  const p = x.columns;
  const n = x.rows;
  const m = rows.length;
  const out = emptySums(p);
  out.rows = m;
  const shifted = new Float64Array(m * p);
  const weighted = weights ? new Float64Array(m * p) : shifted;
  const ys = new Float64Array(m);
  const ws = new Float64Array(m);
  let largestY = 0;
  for (let t = 0; t < m; t++) {
    const i = rows[t];
    ws[t] = weights ? weights[i] : 1;
    ys[t] = y[i] - shiftY;
    if (ws[t] > 0 && Math.abs(y[i]) > largestY) largestY = Math.abs(y[i]);
  }
  out.largestY = largestY;
  for (let j = 0; j < p; j++) {
    const src = j * n;
    const dst = j * m;
    const shift = shiftX[j];
    let largest = 0;
    for (let t = 0; t < m; t++) {
      const v = x.data[src + rows[t]];
      shifted[dst + t] = v - shift;
      if (ws[t] > 0 && Math.abs(v) > largest) largest = Math.abs(v);
    }
    out.largest[j] = largest;
    if (weights) for (let t = 0; t < m; t++) weighted[dst + t] = ws[t] * shifted[dst + t];
  }
  let weight = 0;
  let sumY = 0;
  let yy = 0;
  for (let t = 0; t < m; t++) {
    weight += ws[t];
    sumY += ws[t] * ys[t];
    yy += ws[t] * ys[t] * ys[t];
  }
  out.weight = weight;
  out.sumY = sumY;
  out.yy = yy;
  const wy = weights ? new Float64Array(m) : ys;
  if (weights) for (let t = 0; t < m; t++) wy[t] = ws[t] * ys[t];
  for (let j = 0; j < p; j++) {
    let sx = 0;
    const off = j * m;
    for (let t = 0; t < m; t++) sx += weighted[off + t];
    out.sumX[j] = sx;
    out.xy[j] = dotRange(shifted, off, wy, 0, m);
    for (let k = j; k < p; k++) {
      const v = dotRange(weighted, off, shifted, k * m, m);
      out.xx[j * p + k] = v;
      out.xx[k * p + j] = v;
    }
  }
  return out;
}

/** Largest |xx − reference| / √(ref_jj ref_kk) over the block, the reference by Neumaier's compensated sum. */
function xxError(x: ColumnMatrix, weights: Float64Array | null, rows: ArrayLike<number>, shift: Float64Array, sums: BlockSums): number {
  const p = x.columns;
  const n = x.rows;
  const reference = new Float64Array(p * p);
  for (let j = 0; j < p; j++) {
    for (let k = j; k < p; k++) {
      let s = 0;
      let c = 0;
      for (let t = 0; t < rows.length; t++) {
        const i = rows[t];
        const v = (weights ? weights[i] : 1) * (x.data[j * n + i] - shift[j]) * (x.data[k * n + i] - shift[k]);
        const next = s + v;
        c += Math.abs(s) >= Math.abs(v) ? s - next + v : v - next + s;
        s = next;
      }
      reference[j * p + k] = s + c;
    }
  }
  let worst = 0;
  for (let j = 0; j < p; j++) {
    for (let k = j; k < p; k++) {
      const size = Math.sqrt(reference[j * p + j] * reference[k * p + k]);
      worst = Math.max(worst, Math.abs(sums.xx[j * p + k] - reference[j * p + k]) / size);
    }
  }
  return worst;
}

function main(): void {
  const args = process.argv.slice(2);
  const repsAt = args.indexOf("--reps");
  const reps = repsAt >= 0 ? Number(args[repsAt + 1]) : 15;
  const weighted = args.includes("--weights");
  const lines: string[] = [];
  for (const [n, p] of [
    [100000, 20],
    [20000, 100],
    [1000, 50],
  ]) {
    const { x, y } = makeData(n, p, 20261201);
    const weights = weighted ? Float64Array.from({ length: n }, (_, i) => 0.5 + ((i * 7919) % 13) / 8) : null;
    const plan = planFolds(n, weights, { scheme: "random", folds: 10, seed: 1, labels: null });
    // Shifts as fit.ts takes them (values near the means); the generator's means are near 0.
    const shift = new Float64Array(p);
    for (let j = 0; j < p; j++) shift[j] = x.data[j * n];
    let oldBest = Infinity;
    let newBest = Infinity;
    let oldSums: BlockSums[] = [];
    let newSums: BlockSums[] = [];
    for (let r = 0; r < reps; r++) {
      let start = performance.now();
      oldSums = plan.blocks.map((rows) => plainBlockSums(x, y, weights, rows, shift, y[0]));
      oldBest = Math.min(oldBest, performance.now() - start);
      start = performance.now();
      newSums = blockSumsOf(x, y, weights, plan.blocks, shift, y[0]);
      newBest = Math.min(newBest, performance.now() - start);
    }
    let oldError = 0;
    let newError = 0;
    let agree = 0;
    for (let b = 0; b < plan.blocks.length; b++) {
      oldError = Math.max(oldError, xxError(x, weights, plan.blocks[b], shift, oldSums[b]));
      newError = Math.max(newError, xxError(x, weights, plan.blocks[b], shift, newSums[b]));
      const o = oldSums[b];
      const m = newSums[b];
      const scale = Math.sqrt(o.yy * o.weight);
      agree = Math.max(agree, Math.abs(o.weight - m.weight) / o.weight, Math.abs(o.sumY - m.sumY) / scale, Math.abs(o.yy - m.yy) / o.yy);
      for (let j = 0; j < p; j++) {
        if (o.largest[j] !== m.largest[j] || o.largestY !== m.largestY) throw new Error("largest magnitudes differ");
        agree = Math.max(agree, Math.abs(o.xy[j] - m.xy[j]) / Math.sqrt(o.yy * o.xx[j * p + j]), Math.abs(o.sumX[j] - m.sumX[j]) / Math.sqrt(o.weight * o.xx[j * p + j]));
      }
    }
    const line = {
      case: `${n}x${p}`,
      weights: weighted,
      reps,
      oldMs: Number(oldBest.toFixed(2)),
      newMs: Number(newBest.toFixed(2)),
      ratio: Number((newBest / oldBest).toFixed(3)),
      oldXxError: Number(oldError.toExponential(2)),
      newXxError: Number(newError.toExponential(2)),
      otherSumsDiffer: Number(agree.toExponential(2)),
    };
    lines.push(JSON.stringify(line));
    console.log(`${line.case}${weighted ? " weighted" : ""}: plain ${line.oldMs} ms, blocked ${line.newMs} ms, new/old ${line.ratio}; XᵀX error plain ${line.oldXxError}, blocked ${line.newXxError}`);
  }
  for (const l of lines) console.log(l);
}

main();
