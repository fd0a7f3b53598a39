/**
 * The Newton system solved through the problem's eigendecomposition (SpectralRidge.shiftedSolve,
 * the Schur complement of W = (G̃ + c·M)⁻¹ on the inactive predictors) agrees with a direct LU
 * solve of (G̃_AA + c·M_A) (ml-matrix), and whole fits with it on and off agree: every point
 * certified (KKT ≤ 1e-7·λ) and the same cross-validated curves to rounding, also on nearly
 * collinear columns, where the residual check hands ill-conditioned systems back to the factorization.
 */
import fc from "fast-check";
import { Matrix, solve } from "ml-matrix";
import { setSpectralNewton, spectralCounts } from "../../engine/descent";
import { fit } from "../../engine/fit";
import type { TrainingProblem } from "../../engine/problem";
import { SpectralRidge } from "../../engine/ridgeSpectral";
import { TestRandom } from "../helpers/random";

/** A gram-form problem carrying only what SpectralRidge reads. */
function gramProblem(p: number, random: TestRandom, collinear: boolean): TrainingProblem {
  const n = p + 8;
  const x = Array.from({ length: n * p }, () => random.normal());
  if (collinear) for (let i = 0; i < n; i++) x[1 * n + i] = x[0 * n + i] + 1e-6 * random.normal();
  const gram = new Float64Array(p * p);
  for (let a = 0; a < p; a++) {
    for (let b = 0; b < p; b++) {
      let s = 0;
      for (let i = 0; i < n; i++) s += x[a * n + i] * x[b * n + i];
      gram[a * p + b] = s / n;
    }
  }
  const cross = Float64Array.from({ length: p }, () => random.normal());
  return { kind: "gram", n, p, gram, cross, std: { frozen: new Uint8Array(p), yVariance: 1 } } as unknown as TrainingProblem;
}

describe("Newton systems through the eigendecomposition", () => {
  test("shiftedSolve agrees with an LU solve of (G̃_AA + c·M_A) for any active set and shift", () => {
    fc.assert(
      fc.property(fc.integer({ min: 0, max: 0x7fffffff }), fc.integer({ min: 1, max: 14 }), fc.double({ min: 1e-4, max: 10, noNaN: true }), (seed, m, shift) => {
        const random = new TestRandom(seed);
        const p = 14;
        const problem = gramProblem(p, random, false);
        const multipliers = Float64Array.from({ length: p }, () => 0.5 + random.uniform());
        const spectral = new SpectralRidge(problem, multipliers);
        const order = Array.from({ length: p }, (_, j) => j).sort(() => random.uniform() - 0.5);
        const members = Int32Array.from(order.slice(0, m));
        const rhs = Float64Array.from({ length: m }, () => random.normal());
        const system = Matrix.zeros(m, m);
        const gram = (problem as unknown as { gram: Float64Array }).gram;
        for (let a = 0; a < m; a++) {
          for (let b = 0; b < m; b++) system.set(a, b, gram[members[a] * p + members[b]] + (a === b ? shift * multipliers[members[a]] : 0));
        }
        const expected = solve(system, Matrix.columnVector(Array.from(rhs))).getColumn(0);
        const got = Float64Array.from(rhs);
        expect(spectral.shiftedSolve(members, m, shift, got)).toBe(true);
        const size = Math.max(...expected.map(Math.abs));
        for (let a = 0; a < m; a++) expect(Math.abs(got[a] - expected[a])).toBeLessThanOrEqual(1e-9 * size);
      }),
      { numRuns: 200 },
    );
  });

  test("whole fits with and without it: certified, the same curves to rounding (nearly collinear columns too)", () => {
    const random = new TestRandom(7);
    const n = 300;
    const p = 40;
    for (const collinear of [false, true]) {
      const data = new Float64Array(n * p);
      for (let i = 0; i < n; i++) {
        let previous = random.normal();
        for (let j = 0; j < p; j++) {
          previous = 0.7 * previous + 0.7 * random.normal();
          data[j * n + i] = previous;
        }
      }
      if (collinear) {
        for (let i = 0; i < n; i++) {
          data[5 * n + i] = data[4 * n + i] + 1e-4 * random.normal();
          data[9 * n + i] = 2 * data[8 * n + i] - data[7 * n + i] + 1e-5 * random.normal();
        }
      }
      const y = Float64Array.from({ length: n }, (_, i) => data[i] - 0.5 * data[3 * n + i] + 0.3 * data[20 * n + i] + random.normal());
      const x = { rows: n, columns: p, data };
      const options = { mixes: [0, 0.3, 0.7, 1], folds: 5, seed: 3, strengthCount: 60, lowEndRatio: 1e-4, stopEarly: false, outcome: "number" as const };
      const [solves, sentBack] = spectralCounts;
      const on = fit(x, y, options);
      expect(spectralCounts[0]).toBeGreaterThan(solves);
      // Nearly collinear columns: some systems fail the residual check and are factorized instead.
      if (collinear) expect(spectralCounts[1]).toBeGreaterThan(sentBack);
      setSpectralNewton(false);
      let off;
      try {
        off = fit(x, y, options);
      } finally {
        setSpectralNewton(true);
      }
      for (const result of [on, off]) expect(result.diagnostics.maxKktViolationAllFits).toBeLessThanOrEqual(1e-7);
      const tableOn = on.cv?.table ?? [];
      const tableOff = off.cv?.table ?? [];
      expect(tableOn.length).toBeGreaterThan(0);
      expect(tableOn.length).toBe(tableOff.length);
      for (let t = 0; t < tableOn.length; t++) {
        const a = tableOn[t];
        const b = tableOff[t];
        expect([a.mix, a.strength]).toEqual([b.mix, b.strength]);
        expect(Math.abs(a.error - b.error)).toBeLessThanOrEqual(1e-9 * Math.abs(b.error));
      }
    }
  });
});
