/**
 * engine/problem.ts blockSumsOf / blockSums: the one-pass, tiled XᵀX kernel behind every gram-form
 * fold problem.
 * Reference: ml-matrix (a general-purpose linear-algebra library) forms AᵀWA for A = [x − shift,
 * y − shift, 1] another way (its own matrix product); the sums must agree to 1e-13 relative to
 * √(diagonal × diagonal) (common practice for two summation orders over a few thousand terms).
 * Properties: sums of several blocks in one pass equal each block's own pass bit for bit; the
 * order a block lists its rows in does not matter; repeating a call gives the same bits.
 */
import { Matrix } from "ml-matrix";
import { CancelledError } from "../../engine/errors";
import { ColumnMatrix } from "../../engine/matrix";
import { blockSums, blockSumsOf, BlockSums } from "../../engine/problem";
import { TestRandom } from "../helpers/random";

function data(n: number, p: number, seed: number): { x: ColumnMatrix; y: Float64Array; w: Float64Array } {
  const random = new TestRandom(seed);
  const x = { rows: n, columns: p, data: Float64Array.from({ length: n * p }, () => 3 + random.normal()) };
  const y = Float64Array.from({ length: n }, () => -2 + random.normal());
  // Weights with some zeros: rows of weight 0 must add nothing.
  const w = Float64Array.from({ length: n }, () => (random.uniform() < 0.1 ? 0 : 0.25 + random.uniform()));
  return { x, y, w };
}

function shuffled(rows: number[], random: TestRandom): Int32Array {
  const out = Int32Array.from(rows);
  for (let i = out.length - 1; i > 0; i--) {
    const k = Math.floor(random.uniform() * (i + 1));
    [out[i], out[k]] = [out[k], out[i]];
  }
  return out;
}

/** AᵀWA by ml-matrix, A = [x − shift, y − shiftY, 1] over the rows. */
function reference(x: ColumnMatrix, y: Float64Array, w: Float64Array | null, rows: ArrayLike<number>, shift: Float64Array, shiftY: number): Matrix {
  const p = x.columns;
  const a = new Matrix(rows.length, p + 2);
  const wa = new Matrix(rows.length, p + 2);
  for (let t = 0; t < rows.length; t++) {
    const i = rows[t];
    const weight = w ? w[i] : 1;
    for (let j = 0; j < p; j++) {
      a.set(t, j, x.data[j * x.rows + i] - shift[j]);
      wa.set(t, j, weight * (x.data[j * x.rows + i] - shift[j]));
    }
    a.set(t, p, y[i] - shiftY);
    wa.set(t, p, weight * (y[i] - shiftY));
    a.set(t, p + 1, 1);
    wa.set(t, p + 1, weight);
  }
  return wa.transpose().mmul(a);
}

function expectAgrees(sums: BlockSums, ref: Matrix, p: number): void {
  const at = (j: number, k: number): number => ref.get(j, k);
  const size = (j: number, k: number): number => Math.sqrt(at(j, j) * at(k, k));
  for (let j = 0; j < p; j++) {
    for (let k = 0; k < p; k++) expect(Math.abs(sums.xx[j * p + k] - at(j, k))).toBeLessThanOrEqual(1e-13 * size(j, k));
    expect(Math.abs(sums.xy[j] - at(j, p))).toBeLessThanOrEqual(1e-13 * size(j, p));
    expect(Math.abs(sums.sumX[j] - at(j, p + 1))).toBeLessThanOrEqual(1e-13 * size(j, p + 1));
  }
  expect(Math.abs(sums.yy - at(p, p))).toBeLessThanOrEqual(1e-13 * at(p, p));
  expect(Math.abs(sums.sumY - at(p, p + 1))).toBeLessThanOrEqual(1e-13 * size(p, p + 1));
  expect(Math.abs(sums.weight - at(p + 1, p + 1))).toBeLessThanOrEqual(1e-13 * at(p + 1, p + 1));
}

describe("blockSumsOf", () => {
  // Column counts around the kernel's panels of four (p + 2 columns: y and the ones ride along),
  // row counts within one window and across several.
  const shapes: [number, number][] = [
    [7, 1],
    [40, 2],
    [333, 3],
    [50, 5],
    [3000, 6],
    [500, 13],
    [2500, 30],
  ];
  for (const [n, p] of shapes) {
    for (const weighted of [false, true]) {
      test(`${n} × ${p}${weighted ? ", weighted" : ""}: agrees with ml-matrix's AᵀWA and with one block at a time`, () => {
        const { x, y, w } = data(n, p, n * 31 + p);
        const weights = weighted ? w : null;
        const random = new TestRandom(p);
        // Three blocks of shuffled rows, as random folds cut them.
        const order = Array.from(shuffled([...Array(n).keys()], random));
        const cut = [0, Math.floor(n / 3), Math.floor((2 * n) / 3), n];
        const blocks = [0, 1, 2].map((b) => Int32Array.from(order.slice(cut[b], cut[b + 1])));
        const shift = Float64Array.from({ length: p }, (_, j) => x.data[j * n]);
        const shiftY = y[0];
        const together = blockSumsOf(x, y, weights, blocks, shift, shiftY);
        blocks.forEach((rows, b) => {
          if (rows.length === 0) return;
          expectAgrees(together[b], reference(x, y, weights, rows, shift, shiftY), p);
          // One pass over all blocks gives each block exactly what its own pass gives, in whatever order it lists its rows.
          const alone = blockSums(x, y, weights, shuffled(Array.from(rows), random), shift, shiftY);
          expect(alone).toEqual(together[b]);
          expect(alone.rows).toBe(rows.length);
          for (let j = 0; j < p; j++) {
            let largest = 0;
            for (const i of rows) if (!weights || weights[i] > 0) largest = Math.max(largest, Math.abs(x.data[j * n + i]));
            expect(alone.largest[j]).toBe(largest);
          }
        });
        expect(blockSumsOf(x, y, weights, blocks, shift, shiftY)).toEqual(together);
      });
    }
  }

  test("rows of weight 0 add nothing: the sums equal those of the other rows alone", () => {
    const { x, y, w } = data(800, 9, 5);
    const all = Int32Array.from({ length: 800 }, (_, i) => i);
    const positive = all.filter((i) => w[i] > 0);
    const shift = new Float64Array(9).fill(3);
    const withZeros = blockSums(x, y, w, all, shift, -2);
    const without = blockSums(x, y, w, positive, shift, -2);
    const ref = reference(x, y, w, positive, shift, -2);
    expectAgrees(withZeros, ref, 9);
    expect(withZeros.largest).toEqual(without.largest);
    expect(withZeros.largestY).toBe(without.largestY);
  });

  test("a row out of range is refused, and a raised cancel signal stops the pass", () => {
    const { x, y } = data(100, 4, 9);
    const shift = new Float64Array(4);
    expect(() => blockSums(x, y, null, Int32Array.of(0, 100), shift, 0)).toThrow(/out of range/);
    expect(() => blockSums(x, y, null, Int32Array.of(-1, 3), shift, 0)).toThrow(/out of range/);
    expect(() => blockSums(x, y, null, Int32Array.of(1, 2), shift, 0, { aborted: true })).toThrow(CancelledError);
  });
});
