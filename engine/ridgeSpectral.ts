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
import { symmetricEigen } from "./eigen";
import { CancelSignal, throwIfCancelled } from "./errors";
import { portableExp, portableLog } from "./portableMath";
import { choleskyRows } from "./activeFactor";
import { dotRange, TrainingProblem } from "./problem";

/**
 * out = Σ_u weights[u] · vectors[offsets[u] .. offsets[u] + size), u = 0 … count − 1, four vectors
 * per pass over `out`: each entry takes the same additions in the same order (u increasing) as one
 * vector per pass, so the same bits, with a quarter of the loads and stores of `out`.
 */
function combineVectors(vectors: Float64Array, size: number, offsets: Int32Array, weights: Float64Array, count: number, out: Float64Array): void {
  for (let i = 0; i < size; i++) out[i] = 0;
  let u = 0;
  for (; u + 3 < count; u += 4) {
    const o0 = offsets[u];
    const o1 = offsets[u + 1];
    const o2 = offsets[u + 2];
    const o3 = offsets[u + 3];
    const w0 = weights[u];
    const w1 = weights[u + 1];
    const w2 = weights[u + 2];
    const w3 = weights[u + 3];
    for (let i = 0; i < size; i++) {
      let v = out[i];
      v += w0 * vectors[o0 + i];
      v += w1 * vectors[o1 + i];
      v += w2 * vectors[o2 + i];
      v += w3 * vectors[o3 + i];
      out[i] = v;
    }
  }
  for (; u < count; u++) {
    const off = offsets[u];
    const w = weights[u];
    for (let i = 0; i < size; i++) out[i] += w * vectors[off + i];
  }
}

/**
 * One eigendecomposition per training problem and multipliers, shared by the exact ridge path
 * and the other mixes' Newton steps (SpectralRidge.shiftedSolve): built on first use, the same
 * numbers whichever asks first.
 */
const shared = new WeakMap<TrainingProblem, { multipliers: Float64Array; spectral: SpectralRidge }>();
export function sharedSpectralRidge(problem: TrainingProblem, multipliers: Float64Array, signal?: CancelSignal): SpectralRidge {
  const hit = shared.get(problem);
  if (hit && hit.multipliers.length === multipliers.length && hit.multipliers.every((v, j) => Object.is(v, multipliers[j]))) return hit.spectral;
  const spectral = new SpectralRidge(problem, multipliers, signal);
  shared.set(problem, { multipliers: Float64Array.from(multipliers), spectral });
  return spectral;
}

/**
 * Eigenvalues of a symmetric matrix (row-major, size × size), rounding negatives clipped to 0
 * (eigen.ts: the same bits ml-matrix's decomposition gave, with cancel checkpoints).
 */
function symmetricEigenvalues(symmetric: Float64Array, size: number, signal?: CancelSignal): Float64Array {
  const out = new Float64Array(size);
  if (size === 0) return out;
  const values = symmetricEigen(symmetric, size, signal).values;
  for (let t = 0; t < size; t++) out[t] = Math.max(values[t], 0);
  return out;
}

/**
 * Eigenvalues d_t² of the penalized part of the ridge problem, as the objective scales it:
 * those of D⁻¹ S D⁻¹, where D = diag(√m_j) over the penalized free predictors and S is their
 * block of G̃ = X̃ᵀΩX̃ (Ω = w/Σw) with the unpenalized free predictors (m_j = 0) projected out,
 * S = G̃_PP − G̃_PU G̃_UU⁺ G̃_UP. The ridge fit at strength λ is then the unpenalized fit plus
 * Σ_t d_t²/(d_t² + λ) × (component t of what is left), so these values give its effective
 * degrees of freedom (Hastie, Tibshirani & Friedman, ESL 2nd ed. eq. 3.50) without the
 * unpenalized terms, which are fitted at every strength and do not count.
 *
 * Works for any multipliers and bounds (the bounds don't enter: this describes the
 * unconstrained ridge problem). Gram form: eigen-decompositions of G̃_UU (u × u) and of the
 * |P| × |P| matrix. Naive form: the projection is applied to the rows Ω^½ X̃_P D⁻¹ (n × |P|),
 * whose smaller Gram matrix (|P| × |P| or the n × n kernel) has the same nonzero eigenvalues.
 * Cost O(min(n, |P|)³ + n·|P|·min(n, |P|)) in naive form, O(|P|³ + |P|²·u) in gram form.
 */
export function penalizedSpectrum(problem: TrainingProblem, multipliers: ArrayLike<number>, signal?: CancelSignal): Float64Array {
  const frozen = problem.std.frozen;
  const penalized: number[] = [];
  const unpenalized: number[] = [];
  for (let j = 0; j < problem.p; j++) {
    if (frozen[j]) continue;
    if (multipliers[j] > 0) penalized.push(j);
    else unpenalized.push(j);
  }
  const f = penalized.length;
  const u = unpenalized.length;
  const root = penalized.map((j) => Math.sqrt(multipliers[j]));
  // Orthonormal eigenvectors and eigenvalues of G̃_UU, keeping the numerically nonzero ones
  // (a relative cut of 1e-12 drops exact collinearity among the unpenalized columns).
  const cross = (a: number, b: number): number => {
    if (problem.kind === "gram") return (problem.gram as Float64Array)[a * problem.p + b];
    const xs = (problem.xs as { data: Float64Array }).data;
    const omega = problem.omega as Float64Array;
    const n = problem.n;
    let s = 0;
    for (let i = 0; i < n; i++) s += omega[i] * xs[a * n + i] * xs[b * n + i];
    return s;
  };
  const basis: { vector: Float64Array; value: number }[] = [];
  if (u > 0) {
    const guu = new Float64Array(u * u);
    for (let a = 0; a < u; a++) {
      throwIfCancelled(signal);
      for (let b = a; b < u; b++) guu[a * u + b] = guu[b * u + a] = cross(unpenalized[a], unpenalized[b]);
    }
    const decomposition = symmetricEigen(guu, u, signal);
    const values = decomposition.values;
    let largest = -Infinity;
    for (let t = 0; t < u; t++) largest = Math.max(largest, values[t]);
    for (let t = 0; t < u; t++) {
      if (values[t] > 1e-12 * largest) basis.push({ vector: decomposition.vectors.slice(t * u, (t + 1) * u), value: values[t] });
    }
  }
  if (problem.kind === "gram") {
    const p = problem.p;
    const gram = problem.gram as Float64Array;
    const symmetric = new Float64Array(f * f);
    for (let a = 0; a < f; a++) for (let b = 0; b < f; b++) symmetric[a * f + b] = gram[penalized[a] * p + penalized[b]];
    // S = G̃_PP − Σ_t r_t r_tᵀ with r_t = G̃_PU q_t / √μ_t over the kept eigenpairs (q_t, μ_t) of G̃_UU.
    const r = new Float64Array(f);
    for (const { vector, value } of basis) {
      throwIfCancelled(signal);
      const scale = 1 / Math.sqrt(value);
      for (let a = 0; a < f; a++) {
        let s = 0;
        for (let c = 0; c < u; c++) s += gram[penalized[a] * p + unpenalized[c]] * vector[c];
        r[a] = s * scale;
      }
      for (let a = 0; a < f; a++) for (let b = 0; b < f; b++) symmetric[a * f + b] -= r[a] * r[b];
    }
    for (let a = 0; a < f; a++) for (let b = 0; b < f; b++) symmetric[a * f + b] /= root[a] * root[b];
    return symmetricEigenvalues(symmetric, f, signal);
  }
  const n = problem.n;
  const xs = (problem.xs as { data: Float64Array }).data;
  const omega = problem.omega as Float64Array;
  const rootOmega = new Float64Array(n);
  for (let i = 0; i < n; i++) rootOmega[i] = Math.sqrt(omega[i]);
  // Z = Ω^½ X̃_P D⁻¹, column-major n × f.
  const z = new Float64Array(n * f);
  for (let a = 0; a < f; a++) {
    const off = penalized[a] * n;
    for (let i = 0; i < n; i++) z[a * n + i] = (rootOmega[i] * xs[off + i]) / root[a];
  }
  // Project out span(Ω^½ X̃_U): its orthonormal basis is b_t = Ω^½ X̃_U q_t / √μ_t.
  const direction = new Float64Array(n);
  for (const { vector, value } of basis) {
    throwIfCancelled(signal);
    direction.fill(0);
    for (let c = 0; c < u; c++) {
      const off = unpenalized[c] * n;
      const weight = vector[c] / Math.sqrt(value);
      for (let i = 0; i < n; i++) direction[i] += weight * rootOmega[i] * xs[off + i];
    }
    for (let a = 0; a < f; a++) {
      const along = dotRange(direction, 0, z, a * n, n);
      for (let i = 0; i < n; i++) z[a * n + i] -= along * direction[i];
    }
  }
  if (f <= n) {
    const symmetric = new Float64Array(f * f);
    for (let a = 0; a < f; a++) {
      throwIfCancelled(signal);
      for (let b = a; b < f; b++) symmetric[a * f + b] = symmetric[b * f + a] = dotRange(z, a * n, z, b * n, n);
    }
    return symmetricEigenvalues(symmetric, f, signal);
  }
  // The n × n kernel Z Zᵀ, from rows copied out once so each entry is one stride-1 dot product.
  const rows = new Float64Array(n * f);
  for (let a = 0; a < f; a++) for (let i = 0; i < n; i++) rows[i * f + a] = z[a * n + i];
  const kernel = new Float64Array(n * n);
  for (let i = 0; i < n; i++) {
    throwIfCancelled(signal);
    for (let k = i; k < n; k++) kernel[i * n + k] = kernel[k * n + i] = dotRange(rows, i * f, rows, k * f, f);
  }
  return symmetricEigenvalues(kernel, n, signal);
}

/**
 * Effective degrees of freedom of the ridge fit at strength λ over the penalized terms,
 * df(λ) = Σ_t d_t² / (d_t² + λ) (ESL 2nd ed. eq. 3.50), from `penalizedSpectrum`'s values.
 */
export function ridgeDegreesOfFreedom(values: ArrayLike<number>, lambda: number): number {
  let df = 0;
  for (let t = 0; t < values.length; t++) if (values[t] > 0) df += values[t] / (values[t] + lambda);
  return df;
}

/**
 * The strength λ > 0 at which df(λ) = `target`, or 0 when every value is 0. `target` must be
 * positive and below the rank (the number of positive values). df falls strictly from the rank
 * at λ = 0 to 0, so the root is unique. Its bracket: λ_hi = Σd²/target (df ≤ Σd²/λ = target
 * there) and, for target < 1, λ_lo = d_max²(1 − target)/target (the largest term alone gives
 * df ≥ target there), a ratio of at most rank/(1 − target); for larger targets λ_lo steps down
 * from λ_hi tenfold until df ≥ target. Newton steps on u = log λ (df is smooth and monotone
 * there, slope −Σ s_t(1 − s_t) with s_t = d_t²/(d_t² + λ)) fall back to bisection when a step
 * leaves the bracket. Converges to rounding in a handful of steps; cost O(values) a step.
 */
export function strengthForDegreesOfFreedom(values: ArrayLike<number>, target: number): number {
  let trace = 0;
  let largest = 0;
  let rank = 0;
  for (let t = 0; t < values.length; t++) {
    if (values[t] > 0) {
      trace += values[t];
      rank++;
    }
    if (values[t] > largest) largest = values[t];
  }
  if (!(largest > 0)) return 0;
  if (!(target > 0 && target < rank)) throw new Error(`degrees of freedom ${target} must be between 0 and the rank ${rank}`);
  // portableExp/portableLog: the same top in every JavaScript engine.
  let hi = portableLog(trace / target);
  let lo: number;
  if (target < 1) {
    lo = portableLog((largest * (1 - target)) / target);
  } else {
    lo = hi;
    while (ridgeDegreesOfFreedom(values, portableExp(lo)) < target) lo -= Math.LN10;
  }
  let u = hi;
  for (let step = 0; step < 200; step++) {
    const lambda = portableExp(u);
    let df = 0;
    let slope = 0;
    for (let t = 0; t < values.length; t++) {
      if (!(values[t] > 0)) continue;
      const s = values[t] / (values[t] + lambda);
      df += s;
      slope -= s * (1 - s);
    }
    const gap = df - target;
    if (gap === 0) return lambda;
    if (gap > 0) lo = u;
    else hi = u;
    let next = u - gap / slope;
    if (!(next > lo && next < hi)) next = 0.5 * (lo + hi);
    if (Math.abs(next - u) <= 4 * Number.EPSILON * Math.max(1, Math.abs(u)) || hi - lo <= 4 * Number.EPSILON * Math.max(1, Math.abs(u))) {
      return portableExp(next);
    }
    u = next;
  }
  return portableExp(u);
}

export class SpectralRidge {
  private readonly problem: TrainingProblem;
  private readonly signal: CancelSignal | undefined;
  private readonly free: Int32Array;
  private readonly rootMultiplier: Float64Array;
  private readonly values: Float64Array;
  /** Eigenvectors, column-major: vector t is vectors[t * size .. (t + 1) * size). */
  private readonly vectors: Float64Array;
  private readonly projected: Float64Array;
  private readonly size: number;
  private readonly scratch: Float64Array;
  /** coefficientsAt's scratch: offsets and weights of the eigenvectors with a nonzero weight. */
  private readonly usedVectors: Int32Array;
  private readonly usedWeights: Float64Array;
  /** Σω ỹ² less the part of it the factorization's range holds (the part no λ can fit). */
  private readonly unreachable: number;

  /** `signal` is read between rows of the kernel, inside the eigen-decomposition (eigen.ts) and between rows of held-out set-up. */
  constructor(problem: TrainingProblem, multipliers: Float64Array, signal?: CancelSignal) {
    this.problem = problem;
    this.signal = signal;
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
      // K = Ω^½ X̃ D⁻² X̃ᵀ Ω^½. Rows of X̃ D⁻¹ are copied out row-major once (O(n·p)) so each
      // entry is one stride-1 dot product of length p kept in registers, instead of n² partial
      // sums streamed through memory p times.
      const rowsMajor = new Float64Array(n * f);
      for (let t = 0; t < f; t++) {
        const off = this.free[t] * n;
        const inverse = 1 / this.rootMultiplier[t];
        for (let i = 0; i < n; i++) rowsMajor[i * f + t] = xs[off + i] * inverse;
      }
      const rootOmega = new Float64Array(n);
      for (let i = 0; i < n; i++) rootOmega[i] = Math.sqrt(omega[i]);
      for (let i = 0; i < n; i++) {
        // Row i of the kernel costs (n − i)·p: a checkpoint per row.
        throwIfCancelled(signal);
        for (let k = i; k < n; k++) {
          const v = dotRange(rowsMajor, i * f, rowsMajor, k * f, f) * rootOmega[i] * rootOmega[k];
          symmetric[i * n + k] = v;
          symmetric[k * n + i] = v;
        }
      }
      rhs = new Float64Array(n);
      const yc = problem.yc as Float64Array;
      for (let i = 0; i < n; i++) rhs[i] = rootOmega[i] * yc[i];
    }
    const size = this.size;
    const decomposition = symmetricEigen(symmetric, size, signal);
    this.values = decomposition.values;
    this.vectors = decomposition.vectors;
    // Tiny negative eigenvalues are rounding; the matrix is positive semidefinite.
    for (let t = 0; t < size; t++) this.values[t] = Math.max(this.values[t], 0);
    this.projected = new Float64Array(size);
    for (let t = 0; t < size; t++) {
      let s = 0;
      const off = t * size;
      for (let i = 0; i < size; i++) s += this.vectors[off + i] * rhs[i];
      this.projected[t] = s;
    }
    this.scratch = new Float64Array(size);
    this.usedVectors = new Int32Array(size);
    this.usedWeights = new Float64Array(size);
    // In gram form the target's squared size is yVariance; in the kernel form it is ‖Ω^½ỹ‖².
    // The part outside the eigenvectors' span is a floor every fit leaves in the residual.
    let projectedSquare = 0;
    for (let t = 0; t < size; t++) projectedSquare += this.projected[t] * this.projected[t];
    this.unreachable = problem.kind === "gram" ? NaN : Math.max(problem.std.yVariance - projectedSquare, 0);
  }

  /** Eigenvalues of the factorized matrix (penalizedSpectrum's values, as no multiplier is 0 here). */
  get eigenvalues(): Float64Array {
    return this.values;
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

  /**
   * Predictions on held-out rows at any strength without forming the coefficients, for
   * cross-validation in the kernel form (p > n), where forming them costs O(n·p) a strength.
   * With x̂ the held-out rows standardized by this problem's centres and scales,
   * prediction = ȳ + s_y · x̂ D⁻² X̃ᵀ Ω^½ U s(λ), s_t = q_t/(σ_t + λ) (s_y: the target's scale,
   * problem.ts); the n_v × n matrix in front of s(λ) is built once (O(n_v·n·p)), then each
   * strength costs O(n_v·n). Predictions are written less the target's centre anchor
   * (std.yAnchor), and held-out values centred in two parts ((x − anchor) − offset), so a large
   * offset in the data costs no digits.
   * Gram form: forms the coefficients (O(p²)) and applies them.
   */
  heldOutPredictor(heldOut: { rows: number; columns: number; data: Float64Array }): (lambda: number, out: Float64Array) => void {
    const problem = this.problem;
    const std = problem.std;
    const rows = heldOut.rows;
    if (problem.kind === "gram") {
      const coefficients = new Float64Array(problem.p);
      return (lambda, out) => {
        this.coefficientsAt(lambda, coefficients);
        out.fill(std.yOffset);
        for (let j = 0; j < problem.p; j++) {
          const b = coefficients[j];
          if (b === 0) continue;
          const scaled = (std.yScale * b) / std.xScale[j];
          const off = j * rows;
          const anchor = std.xAnchor[j];
          const offset = std.xOffset[j];
          for (let t = 0; t < rows; t++) out[t] += scaled * (heldOut.data[off + t] - anchor - offset);
        }
      };
    }
    const n = problem.n;
    const size = this.size;
    const xs = (problem.xs as { data: Float64Array }).data;
    const omega = problem.omega as Float64Array;
    // cross = x̂ D⁻² X̃ᵀ (rows × n), accumulated one free column at a time.
    const cross = new Float64Array(rows * n);
    const standardized = new Float64Array(rows);
    for (let a = 0; a < this.free.length; a++) {
      // Each free column adds rows · n products: checkpoints every 64 columns.
      if (a % 64 === 63) throwIfCancelled(this.signal);
      const j = this.free[a];
      const inverse = 1 / (this.rootMultiplier[a] * this.rootMultiplier[a]);
      const off = j * rows;
      const anchor = std.xAnchor[j];
      const offset = std.xOffset[j];
      for (let t = 0; t < rows; t++) standardized[t] = ((heldOut.data[off + t] - anchor - offset) / std.xScale[j]) * inverse;
      const col = j * n;
      for (let t = 0; t < rows; t++) {
        const v = standardized[t];
        if (v === 0) continue;
        const row = t * n;
        for (let i = 0; i < n; i++) cross[row + i] += v * xs[col + i];
      }
    }
    // projector = cross Ω^½ U (rows × size), eigenvector t stored as vectors[t * size ..].
    const projector = new Float64Array(rows * size);
    const weighted = new Float64Array(n);
    for (let t = 0; t < rows; t++) {
      throwIfCancelled(this.signal);
      for (let i = 0; i < n; i++) weighted[i] = cross[t * n + i] * Math.sqrt(omega[i]);
      for (let e = 0; e < size; e++) projector[t * size + e] = dotRange(weighted, 0, this.vectors, e * size, n);
    }
    const shrink = new Float64Array(size);
    return (lambda, out) => {
      for (let e = 0; e < size; e++) shrink[e] = this.projected[e] / (this.values[e] + lambda);
      for (let t = 0; t < rows; t++) out[t] = std.yOffset + std.yScale * dotRange(projector, t * size, shrink, 0, size);
    };
  }

  /**
   * Gram form: rhs (over `members`, free predictors) ← (G̃_AA + c·M_A)⁻¹ rhs for any shift c > 0,
   * from this eigendecomposition instead of a Cholesky factorization of the block. With the
   * whole free set F = A ∪ R and W = (G̃_FF + c·M_F)⁻¹ = D⁻¹ V (Λ + c)⁻¹ Vᵀ D⁻¹ (an O(f²) apply),
   * the block's inverse is W's Schur complement (Golub & Van Loan, Matrix Computations, §3.2.11
   * and the inverse of a partitioned matrix, e.g. Horn & Johnson, Matrix Analysis, §0.7.3):
   *   (G̃_AA + c·M_A)⁻¹ = W_AA − W_AR W_RR⁻¹ W_RA,
   * so a solve costs O(f² + r²f + r³/6) with r = |R|, against O(q³/6) to factorize a q × q block:
   * a clear saving when most free predictors are active. False when W_RR is not numerically
   * positive definite (the caller then factorizes). `work` needs 4f + 2r·f entries.
   */
  shiftedSolve(members: Int32Array, m: number, shift: number, rhs: Float64Array): boolean {
    const f = this.size;
    const V = this.vectors;
    const d = this.rootMultiplier;
    if (!this.freeIndex) {
      this.freeIndex = new Int32Array(this.problem.p).fill(-1);
      for (let a = 0; a < f; a++) this.freeIndex[this.free[a]] = a;
      this.inSet = new Uint8Array(f);
      this.everyVector = new Int32Array(f);
      for (let t = 0; t < f; t++) this.everyVector[t] = t * f;
    }
    const freeIndex = this.freeIndex;
    const inSet = this.inSet as Uint8Array;
    const r = f - m;
    if (this.shiftWork.length < 6 * f + 2 * r * f + r * r) this.shiftWork = new Float64Array(6 * f + 2 * r * f + r * r);
    if (this.shiftIndex.length < f) this.shiftIndex = new Int32Array(f);
    const work = this.shiftWork;
    const index = this.shiftIndex;
    // index[0..m) the members' free positions, index[m..f) the rest (R), in increasing order.
    for (let a = 0; a < m; a++) {
      const i = freeIndex[members[a]];
      index[a] = i;
      inSet[i] = 1;
    }
    let rest = m;
    for (let i = 0; i < f; i++) {
      if (inSet[i]) inSet[i] = 0;
      else index[rest++] = i;
    }
    const scaled = work.subarray(0, f);
    const u = work.subarray(f, 2 * f);
    const y = work.subarray(2 * f, 3 * f);
    const z = work.subarray(3 * f, 4 * f);
    const inverse = work.subarray(4 * f, 5 * f);
    for (let t = 0; t < f; t++) inverse[t] = 1 / (this.values[t] + shift);
    // u = (Λ + c)⁻¹ Vᵀ D⁻¹ rhs (rhs zero outside A): stride-1 products over every free position.
    for (let k = m; k < f; k++) scaled[index[k]] = 0;
    for (let a = 0; a < m; a++) scaled[index[a]] = rhs[a] / d[index[a]];
    for (let t = 0; t < f; t++) u[t] = dotRange(V, t * f, scaled, 0, f) * inverse[t];
    if (r > 0) {
      // P = D_R⁻¹ V_Rᵀ (r × f, row-major), Q = P (Λ + c)⁻¹; W_RR = P Qᵀ and (W rhs)_R = P u.
      const P = work.subarray(5 * f, 5 * f + r * f);
      const Q = work.subarray(5 * f + r * f, 5 * f + 2 * r * f);
      const Wrr = work.subarray(5 * f + 2 * r * f, 5 * f + 2 * r * f + r * r);
      for (let k = 0; k < r; k++) {
        const i = index[m + k];
        const scale = 1 / d[i];
        const row = k * f;
        for (let t = 0; t < f; t++) {
          const v = V[t * f + i] * scale;
          P[row + t] = v;
          Q[row + t] = v * inverse[t];
        }
      }
      let largest = 0;
      for (let k = 0; k < r; k++) {
        for (let l = 0; l <= k; l++) Wrr[k * r + l] = dotRange(P, k * f, Q, l * f, f);
        if (Wrr[k * r + k] > largest) largest = Wrr[k * r + k];
      }
      if (!choleskyRows(Wrr, r, r, 1e-12 * largest)) return false;
      // z = W_RR⁻¹ (W rhs)_R.
      for (let k = 0; k < r; k++) {
        const row = k * r;
        z[k] = (dotRange(P, k * f, u, 0, f) - dotRange(Wrr, row, z, 0, k)) / Wrr[row + k];
      }
      for (let k = r - 1; k >= 0; k--) {
        let s = z[k];
        for (let l = k + 1; l < r; l++) s -= Wrr[l * r + k] * z[l];
        z[k] = s / Wrr[k * r + k];
      }
      // u ← u − (Λ + c)⁻¹ V_R D_R⁻¹ z, so that D⁻¹ V u below is W rhs − W_·R z.
      for (let k = 0; k < r; k++) {
        const zk = z[k];
        const row = k * f;
        for (let t = 0; t < f; t++) u[t] -= Q[row + t] * zk;
      }
    }
    // y = V u over every free position (D⁻¹ applied below).
    combineVectors(V, f, this.everyVector as Int32Array, u, f, y);
    for (let a = 0; a < m; a++) rhs[a] = y[index[a]] / d[index[a]];
    return true;
  }

  /** Largest and smallest eigenvalue (after clipping at 0). */
  get largestValue(): number {
    if (Number.isNaN(this.extremes[0])) this.findExtremes();
    return this.extremes[0];
  }
  get smallestValue(): number {
    if (Number.isNaN(this.extremes[0])) this.findExtremes();
    return this.extremes[1];
  }
  private findExtremes(): void {
    let largest = 0;
    let smallest = Infinity;
    for (let t = 0; t < this.size; t++) {
      if (this.values[t] > largest) largest = this.values[t];
      if (this.values[t] < smallest) smallest = this.values[t];
    }
    this.extremes[0] = largest;
    this.extremes[1] = this.size > 0 ? smallest : 0;
  }
  private readonly extremes = [NaN, NaN];

  private freeIndex: Int32Array | null = null;
  private inSet: Uint8Array | null = null;
  /** shiftedSolve's offsets of every eigenvector (t · size). */
  private everyVector: Int32Array | null = null;
  private shiftWork = new Float64Array(0);
  private shiftIndex = new Int32Array(0);

  /** Writes the ridge solution at strength λ > 0 into `out` (length p; frozen entries 0). */
  coefficientsAt(lambda: number, out: Float64Array): void {
    const size = this.size;
    const f = this.free.length;
    const combined = this.scratch;
    // Σ_t weight_t · vector_t over the nonzero weights.
    const used = this.usedVectors;
    const weights = this.usedWeights;
    let count = 0;
    for (let t = 0; t < size; t++) {
      const weight = this.projected[t] / (this.values[t] + lambda);
      if (weight === 0) continue;
      used[count] = t * size;
      weights[count++] = weight;
    }
    combineVectors(this.vectors, size, used, weights, count, combined);
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
