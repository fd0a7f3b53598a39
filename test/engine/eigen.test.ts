/**
 * engine/eigen.ts: the symmetric eigen-decomposition with cancellation checkpoints.
 * Reference: ml-matrix's EigenvalueDecomposition (a general-purpose library computing the same
 * Householder + implicit QL procedures); ours performs the same operations in the same order, so
 * values and vectors must agree bit for bit, which keeps every fit bit-identical to what it was.
 * Also checked against the definition (A v = λ v, VᵀV = I) to 1e-12 relative (common practice).
 */
import { EigenvalueDecomposition, Matrix } from "ml-matrix";
import { CancelledError } from "../../engine/errors";
import { symmetricEigen } from "../../engine/eigen";
import { TestRandom } from "../helpers/random";

function randomSymmetric(size: number, seed: number, kind: "general" | "kernel" | "repeated" | "zeroRow" | "ulpApart"): Float64Array {
  const random = new TestRandom(seed);
  const a = new Float64Array(size * size);
  if (kind === "kernel") {
    // Z Zᵀ with fewer columns than rows: positive semidefinite, rank-deficient (the kernel form's case)
    const k = Math.max(1, Math.floor(size / 3));
    const z = Array.from({ length: size * k }, () => random.normal());
    for (let i = 0; i < size; i++) {
      for (let j = i; j < size; j++) {
        let s = 0;
        for (let t = 0; t < k; t++) s += z[i * k + t] * z[j * k + t];
        a[i * size + j] = s;
        a[j * size + i] = s;
      }
    }
    return a;
  }
  for (let i = 0; i < size; i++) {
    for (let j = i; j < size; j++) {
      const value = kind === "repeated" ? (i === j ? 2 : 0) : random.normal();
      a[i * size + j] = value;
      a[j * size + i] = value;
    }
  }
  if (kind === "zeroRow" && size > 1) for (let j = 0; j < size; j++) a[j] = a[j * size] = 0;
  // A Gram matrix scaled entry by entry can differ from its transpose in the last bit: read as ml-matrix reads it.
  if (kind === "ulpApart" && size > 1) a[1] *= 1 + Number.EPSILON;
  return a;
}

describe("symmetricEigen", () => {
  test.each([
    [1, "general"],
    [2, "general"],
    [7, "general"],
    [40, "general"],
    [30, "kernel"],
    [12, "repeated"],
    [9, "zeroRow"],
    [8, "ulpApart"],
  ] as const)("size %p (%s): bit for bit what ml-matrix's EigenvalueDecomposition returns", (size, kind) => {
    const a = randomSymmetric(size, 100 + size, kind);
    const ours = symmetricEigen(a, size);
    const theirs = new EigenvalueDecomposition(Matrix.from1DArray(size, size, a), { assumeSymmetric: true });
    expect(Array.from(ours.values)).toEqual(theirs.realEigenvalues); // ml-matrix, same procedure (bit for bit)
    const vectors = theirs.eigenvectorMatrix;
    for (let t = 0; t < size; t++) {
      for (let i = 0; i < size; i++) expect(ours.vectors[t * size + i]).toBe(vectors.get(i, t)); // ml-matrix, bit for bit
    }
    // The definition: A v_t = λ_t v_t and orthonormal vectors (common practice), 1e-12 relative to ‖A‖.
    let norm = 0;
    for (const value of a) norm = Math.max(norm, Math.abs(value));
    for (let t = 0; t < size; t++) {
      for (let i = 0; i < size; i++) {
        let s = 0;
        for (let j = 0; j < size; j++) s += a[i * size + j] * ours.vectors[t * size + j];
        expect(Math.abs(s - ours.values[t] * ours.vectors[t * size + i])).toBeLessThanOrEqual(1e-12 * Math.max(norm, 1) * size);
      }
      for (let u = 0; u < size; u++) {
        let s = 0;
        for (let i = 0; i < size; i++) s += ours.vectors[t * size + i] * ours.vectors[u * size + i];
        expect(Math.abs(s - (t === u ? 1 : 0))).toBeLessThanOrEqual(1e-12 * size);
      }
    }
    for (let t = 1; t < size; t++) expect(ours.values[t]).toBeGreaterThanOrEqual(ours.values[t - 1]);
  });

  test("reads the cancel signal once per Householder step and QL iteration, and stops with CancelledError", () => {
    const size = 60;
    const a = randomSymmetric(size, 5, "general");
    let reads = 0;
    symmetricEigen(a, size, {
      get aborted() {
        reads++;
        return false;
      },
    });
    // 2(size − 1) Householder steps plus at least one QL iteration per eigenvalue but the last
    expect(reads).toBeGreaterThanOrEqual(2 * (size - 1) + size - 1);
    let left = 50;
    expect(() =>
      symmetricEigen(a, size, {
        get aborted() {
          return --left < 0;
        },
      }),
    ).toThrow(CancelledError);
  });
});
