/**
 * The edited Cholesky factor of the Newton system (engine/activeFactor.ts) solves the same system
 * as a fresh LU solve of it computed another way with ml-matrix (`solve`), after any sequence of
 * columns joining and leaving (Golub & Van Loan, Matrix Computations §6.5.4: the edited factor is
 * a Cholesky factor of the edited matrix, so its solve must agree).
 */
import fc from "fast-check";
import { Matrix, solve } from "ml-matrix";
import { ActiveFactor, choleskyRows, StoredMatrix } from "../../engine/activeFactor";
import { dotRange } from "../../engine/problem";
import { TestRandom } from "../helpers/random";

/** A p × p Gram matrix XᵀX / n of random columns (positive definite for n > p). */
function gramOf(p: number, random: TestRandom): Float64Array {
  const n = p + 5;
  const x = Array.from({ length: n * p }, () => random.normal());
  const g = new Float64Array(p * p);
  for (let a = 0; a < p; a++) {
    for (let b = 0; b < p; b++) {
      let s = 0;
      for (let i = 0; i < n; i++) s += x[a * n + i] * x[b * n + i];
      g[a * p + b] = s / n;
    }
  }
  return g;
}

/** The p × p matrix read in place (identity slots), as descent.ts does in gram form. */
function storedGram(gram: Float64Array, p: number): StoredMatrix {
  return { values: gram, stride: p, slot: Int32Array.from({ length: p }, (_, j) => j) };
}

describe("ActiveFactor", () => {
  test("after joins and leaves, solves agree with an LU solve of the edited system (ml-matrix)", () => {
    fc.assert(
      fc.property(fc.integer({ min: 0, max: 0x7fffffff }), fc.boolean(), (seed, shifted) => {
        const random = new TestRandom(seed);
        const p = 12;
        const gram = gramOf(p, random);
        const shift = shifted ? 0.3 : 0;
        const multipliers = Float64Array.from({ length: p }, () => 0.5 + random.uniform());
        const diagonal = (j: number): number => shift * multipliers[j];
        const entry = (a: number, b: number): number => gram[a * p + b];
        const source = storedGram(gram, p);
        const factor = new ActiveFactor(p);
        let members = [0, 3, 5, 7];
        expect(factor.rebuild(Int32Array.from(members), members.length, shift, multipliers, source)).toBe(true);
        for (let step = 0; step < 8; step++) {
          // Drop one member, add up to two new ones (in a shuffled order).
          const drop = Math.floor(random.uniform() * members.length);
          members = members.filter((_, t) => t !== drop);
          for (let k = 0; k < 2; k++) {
            const j = Math.floor(random.uniform() * p);
            if (!members.includes(j)) members.splice(Math.floor(random.uniform() * (members.length + 1)), 0, j);
          }
          const m = members.length;
          const list = Int32Array.from(members);
          if (!factor.update(list, m, p, multipliers, source)) expect(factor.rebuild(list, m, shift, multipliers, source)).toBe(true);
          const rhs = Float64Array.from({ length: m }, () => random.normal());
          const system = Matrix.zeros(m, m);
          for (let a = 0; a < m; a++) for (let b = 0; b < m; b++) system.set(a, b, entry(members[a], members[b]) + (a === b ? diagonal(members[a]) : 0));
          const reference = solve(system, Matrix.columnVector(Array.from(rhs))).getColumn(0);
          factor.solve(list, m, rhs);
          for (let a = 0; a < m; a++) expect(Math.abs(rhs[a] - reference[a])).toBeLessThanOrEqual(1e-9 * (1 + Math.abs(reference[a])));
        }
      }),
      { numRuns: 40 },
    );
  });

  test("refuses more edits than allowed, and a singular system", () => {
    const p = 4;
    const gram = new Float64Array(p * p);
    // Columns 0 and 1 identical: B restricted to {0, 1} is singular without a shift.
    for (let a = 0; a < p; a++) gram[a * p + a] = 1;
    gram[1] = gram[4] = 1;
    const source = storedGram(gram, p);
    const ones = new Float64Array(p).fill(1);
    const factor = new ActiveFactor(p);
    expect(factor.rebuild(Int32Array.of(0, 2), 2, 0, ones, source)).toBe(true);
    expect(factor.update(Int32Array.of(1, 3), 2, 2, ones, source)).toBe(false);
    expect(factor.count).toBe(0);
    expect(factor.rebuild(Int32Array.of(0, 1), 2, 0, ones, source)).toBe(false);
    expect(factor.rebuild(Int32Array.of(0), 1, 0, ones, source)).toBe(true);
    expect(factor.update(Int32Array.of(0, 1), 2, 4, ones, source)).toBe(false);
  });

  test("choleskyRows in 2 × 2 blocks gives the one-column loop's factor bit for bit, and L·Lᵀ = S (Golub & Van Loan Alg. 4.2.1)", () => {
    fc.assert(
      fc.property(fc.integer({ min: 0, max: 41 }), fc.integer({ min: 0, max: 3 }), fc.integer({ min: 1, max: 1e9 }), (m, pad, seed) => {
        const random = new TestRandom(seed);
        const stride = Math.max(m + pad, 1);
        const gram = gramOf(Math.max(m, 1), random);
        const L = new Float64Array(stride * stride);
        for (let a = 0; a < m; a++) for (let b = 0; b <= a; b++) L[a * stride + b] = gram[a * Math.max(m, 1) + b];
        const reference = L.slice();
        const ok = choleskyRows(L, stride, m, 1e-12);
        expect(oneColumnCholesky(reference, stride, m, 1e-12)).toBe(ok);
        expect(ok).toBe(true);
        expect(Buffer.from(L.buffer).equals(Buffer.from(reference.buffer))).toBe(true);
        // Another route: L·Lᵀ reproduces S (common practice).
        for (let a = 0; a < m; a++) {
          for (let b = 0; b <= a; b++) {
            let s = 0;
            for (let k = 0; k <= b; k++) s += L[a * stride + k] * L[b * stride + k];
            const entry = gram[a * Math.max(m, 1) + b];
            expect(Math.abs(s - entry)).toBeLessThanOrEqual(1e-12 * (1 + Math.abs(entry)) * m);
          }
        }
      }),
      { numRuns: 60 },
    );
  });

  test("choleskyRows refuses a singular matrix as the one-column loop does", () => {
    for (let m = 2; m < 12; m++) {
      // Rank 1: every pivot after the first is zero up to rounding.
      const L = new Float64Array(m * m);
      for (let a = 0; a < m; a++) for (let b = 0; b <= a; b++) L[a * m + b] = (a + 1) * (b + 1);
      const reference = L.slice();
      expect(choleskyRows(L, m, m, 1e-12 * m * m)).toBe(false);
      expect(oneColumnCholesky(reference, m, m, 1e-12 * m * m)).toBe(false);
    }
  });
});

/**
 * The previous form of choleskyRows (two rows, one earlier column at a time), kept as the reference
 * the blocked form must reproduce bit for bit: each entry sums even and odd k apart, in increasing
 * k, an odd tail last; the pair's diagonal entries and a last odd row through dotRange.
 */
function oneColumnCholesky(L: Float64Array, S: number, m: number, floor: number): boolean {
  let a = 0;
  for (; a + 1 < m; a += 2) {
    const r0 = a * S;
    const r1 = r0 + S;
    for (let b = 0; b < a; b++) {
      const rb = b * S;
      let s0 = 0;
      let s1 = 0;
      let t0 = 0;
      let t1 = 0;
      let k = 0;
      const end = b - (b % 2);
      for (; k < end; k += 2) {
        s0 += L[r0 + k] * L[rb + k];
        t0 += L[r0 + k + 1] * L[rb + k + 1];
        s1 += L[r1 + k] * L[rb + k];
        t1 += L[r1 + k + 1] * L[rb + k + 1];
      }
      if (k < b) {
        s0 += L[r0 + k] * L[rb + k];
        s1 += L[r1 + k] * L[rb + k];
      }
      L[r0 + b] = (L[r0 + b] - (s0 + t0)) / L[rb + b];
      L[r1 + b] = (L[r1 + b] - (s1 + t1)) / L[rb + b];
    }
    const s = L[r0 + a] - dotRange(L, r0, L, r0, a);
    if (!(s > floor)) return false;
    L[r0 + a] = Math.sqrt(s);
    L[r1 + a] = (L[r1 + a] - dotRange(L, r1, L, r0, a)) / L[r0 + a];
    const s2 = L[r1 + a + 1] - dotRange(L, r1, L, r1, a + 1);
    if (!(s2 > floor)) return false;
    L[r1 + a + 1] = Math.sqrt(s2);
  }
  if (a < m) {
    const r0 = a * S;
    for (let b = 0; b < a; b++) L[r0 + b] = (L[r0 + b] - dotRange(L, r0, L, b * S, b)) / L[b * S + b];
    const s = L[r0 + a] - dotRange(L, r0, L, r0, a);
    if (!(s > floor)) return false;
    L[r0 + a] = Math.sqrt(s);
  }
  return true;
}
