/**
 * Exact ridge path (α = 0) from one symmetric eigendecomposition shared by every strength.
 *
 * With D = diag(√m_j) over the free predictors the ridge normal equations are
 *   (X̃ᵀΩX̃ + λ D²) b̃ = X̃ᵀΩỹ.
 * - p <= n (gram form): A = D⁻¹ G̃ D⁻¹ = V Λ Vᵀ, then b̃(λ) = D⁻¹ V (Vᵀ D⁻¹ c̃) / (Λ + λ).
 *   One O(p³) factorization, O(p²) per strength.
 * - p > n (naive form): Z = Ω^½ X̃ D⁻¹ (n × p), K = Z Zᵀ = U Σ Uᵀ (the n × n kernel), then
 *   b̃(λ) = D⁻¹ Zᵀ U (Uᵀ Ω^½ ỹ) / (Σ + λ) (push-through identity). O(n²p) once, O(n p) per strength.
 * Both are the closed form written with a factorization instead of a fresh solve per strength
 * (Hastie, Tibshirani & Friedman, The Elements of Statistical Learning, 2nd ed., §3.4.1 and
 * §18.3.5). Usable only when every free multiplier is positive and no bound is finite; the
 * caller falls back to coordinate descent otherwise.
 */
import { EigenvalueDecomposition, Matrix } from "ml-matrix";
import type { TrainingProblem } from "./problem";

export class SpectralRidge {
  private readonly problem: TrainingProblem;
  private readonly free: Int32Array;
  private readonly rootMultiplier: Float64Array;
  private readonly values: Float64Array;
  /** Eigenvectors, column-major: vector t is vectors[t * size .. (t + 1) * size). */
  private readonly vectors: Float64Array;
  private readonly projected: Float64Array;
  private readonly size: number;
  private readonly scratch: Float64Array;
  /** Σω ỹ² less the part of it the factorization's range holds (the part no λ can fit). */
  private readonly unreachable: number;

  constructor(problem: TrainingProblem, multipliers: Float64Array) {
    this.problem = problem;
    const frozen = problem.std.frozen;
    const freeList: number[] = [];
    for (let j = 0; j < problem.p; j++) if (!frozen[j]) freeList.push(j);
    this.free = Int32Array.from(freeList);
    const f = this.free.length;
    this.rootMultiplier = new Float64Array(f);
    for (let t = 0; t < f; t++) this.rootMultiplier[t] = Math.sqrt(multipliers[this.free[t]]);
    let symmetric: Float64Array;
    let rhs: Float64Array;
    if (problem.kind === "gram") {
      const p = problem.p;
      const gram = problem.gram as Float64Array;
      this.size = f;
      symmetric = new Float64Array(f * f);
      rhs = new Float64Array(f);
      for (let a = 0; a < f; a++) {
        const ja = this.free[a];
        rhs[a] = problem.cross[ja] / this.rootMultiplier[a];
        for (let b = 0; b < f; b++) {
          symmetric[a * f + b] = gram[ja * p + this.free[b]] / (this.rootMultiplier[a] * this.rootMultiplier[b]);
        }
      }
    } else {
      const n = problem.n;
      const xs = (problem.xs as { data: Float64Array }).data;
      const omega = problem.omega as Float64Array;
      this.size = n;
      symmetric = new Float64Array(n * n);
      // K = Σ_j x̃_j x̃_jᵀ / m_j, accumulated one column at a time (stride-1 inner loop over
      // the upper triangle's row), then scaled by √ω on both sides.
      for (let t = 0; t < f; t++) {
        const off = this.free[t] * n;
        const inverse = 1 / (this.rootMultiplier[t] * this.rootMultiplier[t]);
        for (let i = 0; i < n; i++) {
          const a = xs[off + i] * inverse;
          if (a === 0) continue;
          const row = i * n;
          for (let k = i; k < n; k++) symmetric[row + k] += a * xs[off + k];
        }
      }
      const rootOmega = new Float64Array(n);
      for (let i = 0; i < n; i++) rootOmega[i] = Math.sqrt(omega[i]);
      for (let i = 0; i < n; i++) {
        for (let k = i; k < n; k++) {
          const v = symmetric[i * n + k] * rootOmega[i] * rootOmega[k];
          symmetric[i * n + k] = v;
          symmetric[k * n + i] = v;
        }
      }
      rhs = new Float64Array(n);
      const yc = problem.yc as Float64Array;
      for (let i = 0; i < n; i++) rhs[i] = rootOmega[i] * yc[i];
    }
    const size = this.size;
    const decomposition = new EigenvalueDecomposition(Matrix.from1DArray(size, size, symmetric), {
      assumeSymmetric: true,
    });
    const eigenvalues = decomposition.realEigenvalues;
    const vectorMatrix = decomposition.eigenvectorMatrix;
    this.values = new Float64Array(size);
    this.vectors = new Float64Array(size * size);
    for (let t = 0; t < size; t++) {
      // Tiny negative eigenvalues are rounding; the matrix is positive semidefinite.
      this.values[t] = Math.max(eigenvalues[t], 0);
      for (let i = 0; i < size; i++) this.vectors[t * size + i] = vectorMatrix.get(i, t);
    }
    this.projected = new Float64Array(size);
    for (let t = 0; t < size; t++) {
      let s = 0;
      const off = t * size;
      for (let i = 0; i < size; i++) s += this.vectors[off + i] * rhs[i];
      this.projected[t] = s;
    }
    this.scratch = new Float64Array(size);
    // In gram form the target's squared size is yVariance; in the kernel form it is ‖Ω^½ỹ‖².
    // The part outside the eigenvectors' span is a floor every fit leaves in the residual.
    let projectedSquare = 0;
    for (let t = 0; t < size; t++) projectedSquare += this.projected[t] * this.projected[t];
    this.unreachable = problem.kind === "gram" ? NaN : Math.max(problem.std.yVariance - projectedSquare, 0);
  }

  /**
   * Σ ω r² at strength λ without forming the fit.
   * Kernel form: r_w = u − U diag(σ/(σ+λ)) Uᵀu, so ‖r_w‖² = ‖u_⊥‖² + Σ_t (λ q_t / (σ_t + λ))².
   * Gram form: Σωr² = yVar − 2 b̃ᵀc̃ + b̃ᵀG̃b̃ with b̃ = D⁻¹V s, s_t = q_t/(Λ_t+λ), which is
   * yVar − Σ_t q_t² (Λ_t + 2λ) / (Λ_t + λ)². Cost O(size).
   */
  residualMeanSquareAt(lambda: number): number {
    let total = 0;
    if (this.problem.kind === "gram") {
      for (let t = 0; t < this.size; t++) {
        const q = this.projected[t];
        const v = this.values[t];
        total += (q * q * (v + 2 * lambda)) / ((v + lambda) * (v + lambda));
      }
      return Math.max(this.problem.std.yVariance - total, 0);
    }
    for (let t = 0; t < this.size; t++) {
      const shrunk = (lambda * this.projected[t]) / (this.values[t] + lambda);
      total += shrunk * shrunk;
    }
    return this.unreachable + total;
  }

  /** Writes the ridge solution at strength λ > 0 into `out` (length p; frozen entries 0). */
  coefficientsAt(lambda: number, out: Float64Array): void {
    const size = this.size;
    const f = this.free.length;
    const combined = this.scratch;
    combined.fill(0);
    for (let t = 0; t < size; t++) {
      const weight = this.projected[t] / (this.values[t] + lambda);
      if (weight === 0) continue;
      const off = t * size;
      for (let i = 0; i < size; i++) combined[i] += weight * this.vectors[off + i];
    }
    out.fill(0);
    const problem = this.problem;
    if (problem.kind === "gram") {
      for (let a = 0; a < f; a++) out[this.free[a]] = combined[a] / this.rootMultiplier[a];
      return;
    }
    const n = problem.n;
    const xs = (problem.xs as { data: Float64Array }).data;
    const omega = problem.omega as Float64Array;
    for (let i = 0; i < n; i++) combined[i] *= Math.sqrt(omega[i]);
    for (let a = 0; a < f; a++) {
      const off = this.free[a] * n;
      let s = 0;
      for (let i = 0; i < n; i++) s += xs[off + i] * combined[i];
      out[this.free[a]] = s / (this.rootMultiplier[a] * this.rootMultiplier[a]);
    }
  }
}
