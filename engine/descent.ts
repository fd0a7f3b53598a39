/**
 * Cyclic coordinate descent for the elastic-net objective at one penalty strength,
 * with warm starts, the sequential strong rule and a KKT check on every screened-out
 * predictor.
 *
 * Objective (standardized coefficients b̃, see problem.ts for the conventions):
 *   (1/2) Σ ω_i (ỹ_i − x̃_i·b̃)²  +  λ Σ_j m_j [ α |b̃_j| + (1 − α)/2 · b̃_j² ],   l̃_j <= b̃_j <= ũ_j
 *
 * Coordinate update (Friedman, Hastie & Tibshirani 2010, J. Stat. Software 33(1), eq. 5):
 *   z_j = g_j + d_j b̃_j,   b̃_j <- clip( S(z_j, λ α m_j) / (d_j + λ (1 − α) m_j), l̃_j, ũ_j )
 * where g_j = Σ ω x̃_j r is the current gradient of the fit term, d_j = Σ ω x̃_j², S the soft
 * threshold. Clipping after the unconstrained coordinate minimiser is the exact coordinate
 * minimiser over the box because the one-dimensional problem is convex.
 *
 * Gradient bookkeeping:
 * - gram form ("covariance updates", same paper §2.2): g = c̃ − G̃ b̃ is kept for every j; a
 *   change Δ in b̃_j costs O(p) (g −= Δ G̃_j·). The KKT check needs no extra pass.
 * - naive form ("residual updates"): the residual r is kept; g_j costs O(n) when needed.
 *
 * Convergence: a sweep converges when max_j (d_j + λ(1−α)m_j)·|Δb̃_j| <= tol · max(λ, 1e-6·sd(ỹ)),
 * i.e. no coordinate's own optimality residual exceeded tol relative to λ during the sweep. The
 * target is standardized (problem.ts: sd(ỹ) = 1), so the test and the KKT figure are unit-free.
 * Each strength has a sweep cap; hitting it is reported (converged = false), never silent.
 * Moves below 1e-3 of that threshold (rounding after an exact Newton step) are not applied:
 * their O(p) or O(n) update is skipped (20000×100 paths about 0.8× the time).
 *
 * Active-set Newton step: when coordinate descent crawls (strongly correlated active
 * predictors, or more active predictors than rows) and the active set and its signs have
 * stopped changing, the optimality conditions restricted to that set are linear:
 *   (G̃_AA + λ(1−α)M_A) δ_A = g_A − λ(1−α)M_A b̃_A − λαM_A sign(b̃_A)
 * One Cholesky solve gives the exact minimiser for that sign pattern; it is accepted only if
 * every sign is kept and every bound respected (otherwise descent simply continues), so the
 * result is the same solution, reached in far fewer sweeps. The usual KKT check still
 * certifies it. (Active-set/sign-pattern solution of the lasso: Osborne, Presnell & Turlach
 * 2000, IMA J. Numer. Anal. 20(3).) When a strength needed a Newton step, the next one starts
 * with one (from the extrapolated warm start, on the carried-over active set) rather than
 * sweeping first: measured on the benchmark shapes, this halves the sweeps of elastic-net paths.
 * The Cholesky factor is kept and edited as the active set changes (solveCached, activeFactor.ts).
 * When the shift λ(1−α) has changed (every strength of an elastic-net path) and most free
 * predictors are active, gram-form systems are solved through the problem's eigendecomposition
 * instead of a new factorization (spectralSolve: SpectralRidge.shiftedSolve, a Schur complement).
 *
 * Screening: the sequential strong rule (Tibshirani et al. 2012, JRSS-B 74(2), eq. 7) keeps
 * j when |g_j(λ_prev)| >= α m_j (2λ − λ_prev); after convergence on the kept set every
 * discarded predictor's KKT condition is checked and violators are added back. In residual form
 * that check skips the predictors a sphere bound certifies (refreshCertified).
 *
 * Measured and not adopted (issue 11; bench shapes, pinned workload, side by side in one process):
 * - Duality-gap stop (Massias, Gramfort & Salmon 2018, ICML; Ndiaye et al. 2017, JMLR 18). The
 *   gap is second order in the optimality residual: along plain sweeps on 1000×50, α = 0.6, at
 *   λ = 3.5e-4 (top ≈ 1), KKT/λ = 1.1e-7 came with gap = 7e-17 × the null objective
 *   (gap/null ≈ 0.006 (KKT/λ)² there, and the factor shrinks with λ²). A gap tolerance that
 *   guarantees KKT <= 1e-7·λ at every point is at or below the rounding of the objective, so the
 *   stop stays the coordinate rule above, certified by the KKT check.
 * - Working sets chosen by dual-constraint violation (Johnson & Guestrin 2015, ICML; Massias et
 *   al. 2018): the strong set is already a tight working set here — on 200×2000 paths it holds
 *   1.35–1.4× the active predictors on average with no strong-rule misses at all, below the
 *   doubling schedule's 2× — so there is nothing to gain in the sweeps.
 * - Gap safe sequential screening (Ndiaye et al. 2017): from the previous solution it discards
 *   ~70% of the 200×2000 lasso's predictors at the low end but none for α <= 0.8 there (the
 *   warm start's gap at the new λ is large in the ridge part); the sphere bound of
 *   refreshCertified skips ~60% of the KKT products for every mix instead.
 * - Anderson acceleration of the active-set sweeps (Bertrand & Massias 2021, AISTATS; K = 5,
 *   accepted only when the objective falls): without the Newton step it cut sweeps 3–6× on
 *   200×2000 and ~11% on 1000×50, but the paths stayed 2–9× slower than with the Newton step;
 *   with it, the Newton step comes first and Anderson never fires.
 */
import { ActiveFactor, choleskyRows, StoredMatrix } from "./activeFactor";
import { CancelSignal, throwIfCancelled } from "./errors";
import { portableLog } from "./portableMath";
import { dotRange, TrainingProblem } from "./problem";
import { sharedSpectralRidge, SpectralRidge } from "./ridgeSpectral";

export interface PenaltySpec {
  /** α in [0, 1]: 0 ridge, 1 lasso. */
  mix: number;
  /** m_j >= 0, one per predictor (0 = never penalized). */
  multipliers: Float64Array;
  /** Bounds on the standardized coefficients (l̃_j <= 0 <= ũ_j); ±Infinity when free. */
  lower: Float64Array;
  upper: Float64Array;
}

export interface SolveReport {
  sweeps: number;
  converged: boolean;
  /** Largest KKT violation over all predictors, relative to λ (see kktViolation). */
  kktViolation: number;
  /** Predictors added back after the strong rule discarded them wrongly. */
  strongRuleMisses: number;
}

export interface DescentSettings {
  tolerance: number;
  maxSweeps: number;
  /**
   * Read at the start of every sweep, and every CHECK_EVERY coordinates or columns inside the
   * longer loops (sweeps, gradient refreshes, Newton-step set-up); when raised, CancelledError.
   */
  signal?: CancelSignal;
}

/**
 * Smallest λ at which every penalized coefficient is zero, from the gradient g at the fit of the
 * unpenalized terms: max over penalized, unfrozen j of the gradient in a direction its bounds
 * allow, / (mix · m_j). Shared by the squared-error and the logistic solvers (their gradients differ).
 */
export function topFromGradient(grad: ArrayLike<number>, penalty: PenaltySpec, frozen: ArrayLike<boolean | number>, mixForTop: number): number {
  const { multipliers, lower, upper } = penalty;
  let top = 0;
  for (let j = 0; j < multipliers.length; j++) {
    const m = multipliers[j];
    if (frozen[j] || m === 0) continue;
    const g = grad[j];
    let push = 0;
    if (g > 0 && upper[j] > 0) push = g;
    else if (g < 0 && lower[j] < 0) push = -g;
    const value = push / (mixForTop * m);
    if (value > top) top = value;
  }
  return top;
}

/** Soft threshold S(z, t) = sign(z) · max(|z| − t, 0), the proximal map of t|·|. */
export function softThreshold(value: number, threshold: number): number {
  if (value > threshold) return value - threshold;
  if (value < -threshold) return value + threshold;
  return 0;
}

/**
 * Distance of the coordinate's stationarity residual from the set the optimality conditions
 * allow (the subdifferential of the penalty plus the normal cone of the bounds):
 *   h_j = g_j − λ(1−α) m_j b̃_j   must lie in   λ α m_j ∂|b̃_j| + N_[l̃,ũ](b̃_j).
 * Zero exactly at a solution (Friedman et al. 2010 §2.1; bounds: standard convex optimality).
 */
export function coordinateViolation(
  gradient: number,
  coefficient: number,
  lambda: number,
  mix: number,
  multiplier: number,
  lower: number,
  upper: number,
): number {
  const h = gradient - lambda * (1 - mix) * multiplier * coefficient;
  const t = lambda * mix * multiplier;
  let lo: number;
  let hi: number;
  if (coefficient > 0) {
    lo = t;
    hi = t;
  } else if (coefficient < 0) {
    lo = -t;
    hi = -t;
  } else {
    lo = -t;
    hi = t;
  }
  if (coefficient >= upper) hi = Infinity;
  if (coefficient <= lower) lo = -Infinity;
  if (h < lo) return lo - h;
  if (h > hi) return h - hi;
  return 0;
}

/**
 * Coordinates (or columns) between cancellation checkpoints inside one loop: at O(n) work each
 * (residual form, n up to 1e5 rows) 64 of them take a few milliseconds.
 */
const CHECK_EVERY = 64;

/** Sweeps of an unchanged active set before an active-set Newton step is tried. */
const NEWTON_AFTER_SWEEPS = 2;
/** Largest active set for which the Newton step's O(m³) solve is tried. */
const NEWTON_MAX_ACTIVE = 600;
/** Column updates of the dual running sum between rebuilds from scratch. */
const DUAL_REBUILD = 2000;
/** The Newton step is tried when the sweeps it would save cost this many times its price. */
const NEWTON_PAYOFF = 1;
/**
 * Start each strength with a Newton step when the last one needed one (see solve). Switches for
 * side-by-side measurement (old vs new behaviour in one process); always on in the engine.
 */
export let NEWTON_FIRST = true;
export function setNewtonFirst(on: boolean): void {
  NEWTON_FIRST = on;
}
/** Trust the kept predictors' gradients after a sweep that moved nothing (see refreshCertified); switch as above. */
export let SETTLED_SKIP = true;
export function setSettledSkip(on: boolean): void {
  SETTLED_SKIP = on;
}
/** Coordinate moves below this fraction of the convergence threshold are not applied (see sweep). */
export let NEGLIGIBLE = 1e-3;
export function setNegligible(v: number): void {
  NEGLIGIBLE = v;
}
/** Residual form: KKT passes whose residuals are kept for certifying gradients by a bound. */
const SNAPSHOTS = 6;
/** Certify the KKT conditions of far-from-entering predictors by a bound (see refreshCertified); switch as above. */
export let CERTIFIED_CHECK = true;
export function setCertifiedCheck(on: boolean): void {
  CERTIFIED_CHECK = on;
}
/** After a full Newton step go straight to the strong-set sweep (see solve); switch as above. */
export let SKIP_AFTER_FULL = true;
export function setSkipAfterFull(on: boolean): void {
  SKIP_AFTER_FULL = on;
}
/** Keep the Newton system's Cholesky factor for reuse (see solveCached); switch as above. */
export let FACTOR_CACHE = true;
export function setFactorCache(on: boolean): void {
  FACTOR_CACHE = on;
}

/** Newton-first steps from the previous solution, the extrapolation's smooth moves held back (see solve); switch as above. */
export let STEP_FROM_PREVIOUS = true;
export function setStepFromPrevious(on: boolean): void {
  STEP_FROM_PREVIOUS = on;
}
/** Newton systems with a new shift through the eigendecomposition (spectralSolve); switch as above. */
export let SPECTRAL_NEWTON = true;
export function setSpectralNewton(on: boolean): void {
  SPECTRAL_NEWTON = on;
}
/** Largest relative residual accepted from spectralSolve (see there). */
const SPECTRAL_RESIDUAL = 1e-13;
/** Condition number of G̃ + cM (M's metric) up to which spectralSolve's result is taken unchecked. */
const SPECTRAL_TRUSTED = 1e3;
/** spectralSolve's solves and, of those, the ones its residual check sent back to factorization (counters, for measurement). */
export const spectralCounts = [0, 0];

/**
 * Solver state for one training problem and one mix: coefficients, gradient (and residual in
 * naive form) persist between strengths, which is what makes warm starts free.
 */
export class CoordinateDescent {
  readonly problem: TrainingProblem;
  readonly penalty: PenaltySpec;
  readonly settings: DescentSettings;
  /** Standardized coefficients b̃. */
  readonly coef: Float64Array;
  /** g_j = Σ ω x̃_j r (exact for every j after each solve). */
  readonly grad: Float64Array;
  private readonly residual: Float64Array | null;
  private readonly strong: Uint8Array;
  private readonly setBuffer: Int32Array;
  private readonly activeBuffer: Int32Array;
  private readonly floor: number;
  private readonly memberBuffer: Int32Array;
  private readonly rhsBuffer: Float64Array;
  private readonly rowBuffer: Float64Array;
  /** Scratch for applyChanges: the columns that moved and by how much. */
  private readonly changedColumns: Int32Array;
  private readonly changedDeltas: Float64Array;
  private systemBuffer: Float64Array;
  /** The problem's eigendecomposition for Newton systems with a new shift (spectralSolve), once asked for. */
  private spectral: SpectralRidge | null = null;
  /** 0 not yet decided, 1 not usable (a free multiplier is 0), 2 usable (see spectralShiftWanted). */
  private spectralState = 0;
  private freeCount = 0;
  private readonly spectralRhs: Float64Array;
  /** The extrapolation's moves held back for a Newton step (see solve). */
  private readonly deferredColumns: Int32Array;
  private readonly deferredValues: Float64Array;
  private readonly spectralSpread: Float64Array;
  /** The last Newton system's Cholesky factor (see solveCached). */
  private factor: ActiveFactor | null = null;
  /** Where the factor reads B (see solveCached); filled on the first Newton step. */
  private readonly storedSystem: StoredMatrix = { values: new Float64Array(0), stride: 0, slot: new Int32Array(0) };
  /** The solution before the current one, and the strengths of both (NaN until solved). */
  private history: Float64Array;
  private historySpare: Float64Array;
  private historyLambda = NaN;
  private solvedLambda = NaN;
  /**
   * Residual form: cache of Σ ω x̃_j x̃_k among the columns that have taken part in a Newton
   * step (a "slot" each), so each pair is computed once per path rather than once per step.
   */
  private productCache = new Float64Array(0);
  private productCapacity = 0;
  private productCount = 0;
  private readonly slotOf: Int32Array;
  private slotColumn = new Int32Array(0);
  private readonly slotBuffer: Int32Array;
  /** Residual form, more active predictors than rows: running Σ z_j z_jᵀ / m_j (see dualSolve). */
  private dualSum: Float64Array | null = null;
  private dualIn: Uint8Array | null = null;
  private rootOmega: Float64Array | null = null;
  private dualUpdates = 0;
  private readonly dualWanted: Uint8Array;
  private readonly dualVector: Float64Array;
  /** ω when every row has the same weight (naive form), else 0. */
  private readonly equalWeight: number;
  /** No predictor has a finite bound (the usual case): kktViolation's shorter loop. */
  private readonly unbounded: boolean;
  /**
   * Residual form: the residuals at the last SNAPSHOTS KKT passes (a ring), and for each
   * predictor the gradient last computed exactly and the pass it was computed at (see
   * refreshCertified).
   */
  private snapshots: Float64Array[] = [];
  private snapshotCount = 0;
  private anchorGrad: Float64Array | null = null;
  private anchorPass: Int32Array | null = null;
  private readonly snapshotDistance = new Float64Array(SNAPSHOTS);
  /** Columns whose gradient a KKT pass computed, and those it certified without (counters). */
  columnsComputed = 0;
  columnsCertified = 0;
  totalSweeps = 0;
  /** Set by a sweep when a coefficient entered, left, changed sign or reached a bound. */
  private patternChanged = false;
  /** Accepted active-set Newton steps (see newtonStep). */
  newtonSteps = 0;
  newtonTries = 0;
  /** The last sweep applied at least one move (else r did not change during it). */
  private sweepMoved = false;
  /** The last accepted Newton step went all the way (no coefficient stopped at 0 or a bound). */
  private lastStepFull = false;
  /** The last solve accepted a Newton step: the next one starts with one (see solve). */
  private newtonFirst = false;

  constructor(problem: TrainingProblem, penalty: PenaltySpec, settings: DescentSettings) {
    this.problem = problem;
    this.penalty = penalty;
    this.settings = settings;
    const p = problem.p;
    // The p-long scratch arrays carved from one buffer: a typed array of its own costs an
    // allocation of its backing store each (about 20 per path; at p = 20 they showed as 3% of a
    // fold path's time beside the garbage collector's share, bench/PROFILE.md "tall20").
    const naive = problem.kind === "naive";
    const store = new ArrayBuffer(8 * p * 9 + 4 * p * (naive ? 7 : 6) + p * (naive ? 2 : 1));
    let at = 0;
    const doubles = (): Float64Array => {
      const v = new Float64Array(store, at, p);
      at += 8 * p;
      return v;
    };
    const ints = (): Int32Array => {
      const v = new Int32Array(store, at, p);
      at += 4 * p;
      return v;
    };
    const bytes = (): Uint8Array => {
      const v = new Uint8Array(store, at, p);
      at += p;
      return v;
    };
    this.coef = doubles();
    this.grad = doubles();
    this.grad.set(problem.cross);
    this.history = doubles();
    this.historySpare = doubles();
    this.rhsBuffer = doubles();
    this.spectralRhs = doubles();
    this.deferredValues = doubles();
    this.spectralSpread = doubles();
    this.changedDeltas = doubles();
    this.setBuffer = ints();
    this.activeBuffer = ints();
    this.memberBuffer = ints();
    this.slotBuffer = ints();
    this.changedColumns = ints();
    this.deferredColumns = ints();
    this.slotOf = naive ? ints().fill(-1) : new Int32Array(0);
    this.strong = bytes();
    this.dualWanted = naive ? bytes() : new Uint8Array(0);
    this.residual = naive ? Float64Array.from(problem.yc as Float64Array) : null;
    this.floor = 1e-6 * Math.sqrt(problem.std.yVariance);
    this.dualVector = new Float64Array(problem.n);
    this.rowBuffer = new Float64Array(problem.n);
    // Only the residual form's dual solve uses it (and grows it to n × n there).
    this.systemBuffer = new Float64Array(naive ? Math.min(p, 64) ** 2 : 0);
    let equal = 0;
    if (problem.kind === "naive") {
      const omega = problem.omega as Float64Array;
      equal = omega[0];
      for (let i = 1; i < omega.length; i++) {
        if (omega[i] !== equal) {
          equal = 0;
          break;
        }
      }
    }
    this.equalWeight = equal;
    let unbounded = true;
    for (let j = 0; j < p; j++) if (penalty.lower[j] !== -Infinity || penalty.upper[j] !== Infinity) unbounded = false;
    this.unbounded = unbounded;
    // The gradient used for the top of the grid must be summed exactly as the sweeps sum it,
    // or a rounding-sized coefficient could slip through the threshold at λ_max.
    this.refreshGradient();
  }

  /** Converged-sweep threshold at strength λ (see module comment). */
  private threshold(lambda: number): number {
    return this.settings.tolerance * Math.max(lambda, this.floor);
  }

  /** Gradient of coordinate j from the residual (naive form). Cost O(n). */
  private residualGradient(j: number): number {
    const problem = this.problem;
    const n = problem.n;
    const xs = (problem.xs as { data: Float64Array }).data;
    const r = this.residual as Float64Array;
    const off = j * n;
    // Equal weights (the usual case): one stride-1 dot product, ω applied once.
    if (this.equalWeight > 0) return this.equalWeight * dotRange(xs, off, r, 0, n);
    const omega = problem.omega as Float64Array;
    let s0 = 0;
    let s1 = 0;
    let i = 0;
    const end2 = n - (n % 2);
    for (; i < end2; i += 2) {
      s0 += omega[i] * xs[off + i] * r[i];
      s1 += omega[i + 1] * xs[off + i + 1] * r[i + 1];
    }
    if (i < n) s0 += omega[i] * xs[off + i] * r[i];
    return s0 + s1;
  }

  /** Records a change Δ of coefficient j in the gradient (gram) or residual (naive). */
  private applyChange(j: number, delta: number): void {
    const problem = this.problem;
    const p = problem.p;
    if (problem.kind === "gram") {
      const gram = problem.gram as Float64Array;
      const g = this.grad;
      const off = j * p;
      for (let k = 0; k < p; k++) g[k] -= delta * gram[off + k];
    } else {
      const n = problem.n;
      const xs = (problem.xs as { data: Float64Array }).data;
      const r = this.residual as Float64Array;
      const off = j * n;
      for (let i = 0; i < n; i++) r[i] -= delta * xs[off + i];
    }
  }

  /**
   * applyChange for each listed (column, Δ) in turn, four columns per pass over g (or r): each
   * entry takes the same subtractions in the same order as four separate calls, so the result is
   * the same bit for bit, with a quarter of the loads and stores of g (or r).
   */
  private applyChanges(columns: Int32Array, deltas: Float64Array, count: number): void {
    const problem = this.problem;
    const gramForm = problem.kind === "gram";
    const length = gramForm ? problem.p : problem.n;
    const source = gramForm ? (problem.gram as Float64Array) : (problem.xs as { data: Float64Array }).data;
    const target = gramForm ? this.grad : (this.residual as Float64Array);
    let t = 0;
    for (; t + 3 < count; t += 4) {
      const o0 = columns[t] * length;
      const o1 = columns[t + 1] * length;
      const o2 = columns[t + 2] * length;
      const o3 = columns[t + 3] * length;
      const d0 = deltas[t];
      const d1 = deltas[t + 1];
      const d2 = deltas[t + 2];
      const d3 = deltas[t + 3];
      for (let k = 0; k < length; k++) {
        let v = target[k];
        v -= d0 * source[o0 + k];
        v -= d1 * source[o1 + k];
        v -= d2 * source[o2 + k];
        v -= d3 * source[o3 + k];
        target[k] = v;
      }
    }
    for (; t < count; t++) this.applyChange(columns[t], deltas[t]);
  }

  /** One pass over the listed coordinates; returns the largest scaled change. Residual form here, gram form in sweepGram. */
  private sweep(set: Int32Array, count: number, lambda: number): number {
    if (this.problem.kind === "gram") return this.sweepGram(set, count, lambda);
    const { mix, multipliers, lower, upper } = this.penalty;
    const curvature = this.problem.curvature;
    const coef = this.coef;
    const grad = this.grad;
    const l1 = lambda * mix;
    const l2 = lambda * (1 - mix);
    const signal = this.settings.signal;
    throwIfCancelled(signal);
    const negligible = NEGLIGIBLE * this.threshold(lambda);
    this.sweepMoved = false;
    let largest = 0;
    for (let t = 0; t < count; t++) {
      if (t % CHECK_EVERY === CHECK_EVERY - 1) throwIfCancelled(signal);
      const j = set[t];
      const g = this.residualGradient(j);
      grad[j] = g;
      const d = curvature[j];
      const old = coef[j];
      const m = multipliers[j];
      const denominator = d + l2 * m;
      let value = softThreshold(g + d * old, l1 * m) / denominator;
      if (value < lower[j]) value = lower[j];
      else if (value > upper[j]) value = upper[j];
      const delta = value - old;
      if (delta !== 0) {
        const edge = Math.sign(value) !== Math.sign(old) || value === lower[j] || value === upper[j];
        // A move far below the convergence threshold (rounding after an exact Newton step) is
        // not worth its O(n) update: leaving it changes j's KKT residual by less than
        // NEGLIGIBLE × tolerance × λ.
        if (!edge && denominator * Math.abs(delta) <= negligible) continue;
        if (edge) this.patternChanged = true;
        this.sweepMoved = true;
        coef[j] = value;
        this.applyChange(j, delta);
        grad[j] = g - d * delta;
        const change = denominator * Math.abs(delta);
        if (change > largest) largest = change;
      }
    }
    this.totalSweeps++;
    return largest;
  }

  /**
   * sweep in gram form, with the gradient updates of up to four moves held back and applied in
   * one pass over g (applyChanges). A coordinate's gradient is read as g_j less the held-back
   * moves' terms, subtracted in the order the moves were made: exactly the value g_j would hold
   * had each move been applied at once, so every iterate is the same bit for bit.
   */
  private sweepGram(set: Int32Array, count: number, lambda: number): number {
    const { mix, multipliers, lower, upper } = this.penalty;
    const curvature = this.problem.curvature;
    const gram = this.problem.gram as Float64Array;
    const p = this.problem.p;
    const coef = this.coef;
    const grad = this.grad;
    const l1 = lambda * mix;
    const l2 = lambda * (1 - mix);
    const signal = this.settings.signal;
    throwIfCancelled(signal);
    const negligible = NEGLIGIBLE * this.threshold(lambda);
    const held = this.changedColumns;
    const deltas = this.changedDeltas;
    let pending = 0;
    this.sweepMoved = false;
    let largest = 0;
    for (let t = 0; t < count; t++) {
      if (t % CHECK_EVERY === CHECK_EVERY - 1) {
        this.applyChanges(held, deltas, pending);
        pending = 0;
        throwIfCancelled(signal);
      }
      const j = set[t];
      let g = grad[j];
      for (let h = 0; h < pending; h++) g -= deltas[h] * gram[held[h] * p + j];
      const d = curvature[j];
      const old = coef[j];
      const m = multipliers[j];
      const denominator = d + l2 * m;
      let value = softThreshold(g + d * old, l1 * m) / denominator;
      if (value < lower[j]) value = lower[j];
      else if (value > upper[j]) value = upper[j];
      const delta = value - old;
      if (delta !== 0) {
        const edge = Math.sign(value) !== Math.sign(old) || value === lower[j] || value === upper[j];
        // As in sweep: a negligible move is not applied.
        if (!edge && denominator * Math.abs(delta) <= negligible) continue;
        if (edge) this.patternChanged = true;
        this.sweepMoved = true;
        coef[j] = value;
        held[pending] = j;
        deltas[pending++] = delta;
        if (pending === 4) {
          this.applyChanges(held, deltas, 4);
          pending = 0;
        }
        const change = denominator * Math.abs(delta);
        if (change > largest) largest = change;
      }
    }
    this.applyChanges(held, deltas, pending);
    this.totalSweeps++;
    return largest;
  }

  /** Recomputes g for every free predictor from the residual (naive form). Cost O(n·p). */
  private refreshGradient(): void {
    if (this.problem.kind !== "naive") return;
    const frozen = this.problem.std.frozen;
    const signal = this.settings.signal;
    for (let j = 0; j < this.problem.p; j++) {
      if (j % CHECK_EVERY === CHECK_EVERY - 1) throwIfCancelled(signal);
      this.grad[j] = frozen[j] ? 0 : this.residualGradient(j);
    }
  }

  /**
   * The KKT pass of the residual form without computing every gradient. For a predictor j whose
   * gradient g_j⁰ = Σω x̃_j r⁰ was computed exactly at an earlier pass (residual r⁰, one of the
   * last SNAPSHOTS), Cauchy–Schwarz in the ω inner product bounds today's gradient:
   *   |g_j| <= |g_j⁰| + ‖x̃_j‖_ω ‖r − r⁰‖_ω,   ‖x̃_j‖_ω² = d_j,
   * so when that bound is below λα m_j, j's coefficient 0 meets its KKT condition and the O(n)
   * product is skipped. This is the sphere test of El Ghaoui, Viallon & Rabbani 2012 (Pacific J.
   * Optim. 8(4), "Safe feature elimination in sparse supervised learning"), with the ball around
   * the earlier residual whose radius is the residual's movement since: the same bound that gap
   * safe rules apply to a ball from the duality gap (Ndiaye, Fercoq, Gramfort & Salmon 2017,
   * JMLR 18(128)); it needs no gap and holds for every mix and multiplier. Every predictor the
   * strong rule kept (unless `settled`: the last sweep computed all of them at the current
   * residual and applied no move), every nonzero one and every one whose bound fails is computed
   * exactly (and becomes its own anchor). A certified predictor keeps g_j⁰ in `grad`: |g_j⁰| is below the
   * threshold too, so every KKT verdict and the reported violation (0) are the exact ones.
   * Rounding: the bound is widened by 1e-9 of itself and 1e-14·max(λ, floor).
   */
  private refreshCertified(lambda: number, settled: boolean): void {
    const problem = this.problem;
    if (problem.kind !== "naive") return;
    const n = problem.n;
    const p = problem.p;
    const frozen = problem.std.frozen;
    const { mix, multipliers } = this.penalty;
    const omega = problem.omega as Float64Array;
    const r = this.residual as Float64Array;
    const signal = this.settings.signal;
    if (!this.anchorGrad) {
      this.anchorGrad = new Float64Array(p);
      this.anchorPass = new Int32Array(p).fill(-1);
      for (let k = 0; k < SNAPSHOTS; k++) this.snapshots.push(new Float64Array(n));
    }
    const anchorGrad = this.anchorGrad;
    const anchorPass = this.anchorPass as Int32Array;
    const pass = this.snapshotCount++;
    const oldest = pass - SNAPSHOTS + 1;
    // Distances from the kept residuals (pass − 1, …, oldest) to the current one.
    const distance = this.snapshotDistance;
    for (let q = Math.max(oldest, 0); q < pass; q++) {
      const old = this.snapshots[q % SNAPSHOTS];
      let s = 0;
      for (let i = 0; i < n; i++) {
        const d = r[i] - old[i];
        s += omega[i] * d * d;
      }
      distance[q % SNAPSHOTS] = Math.sqrt(s);
    }
    this.snapshots[pass % SNAPSHOTS].set(r);
    const l1 = lambda * mix;
    const slack = 1e-14 * Math.max(lambda, this.floor);
    const curvature = problem.curvature;
    const strong = this.strong;
    const coef = this.coef;
    const grad = this.grad;
    let computed = 0;
    for (let j = 0; j < p; j++) {
      if (frozen[j]) {
        grad[j] = 0;
        continue;
      }
      if (settled && strong[j]) {
        // Computed by the last sweep at the current residual (see solve): exact already.
        anchorGrad[j] = grad[j];
        anchorPass[j] = pass;
        continue;
      }
      const at = anchorPass[j];
      if (!strong[j] && coef[j] === 0 && at >= oldest && at >= 0 && at < pass) {
        const reach = Math.sqrt(curvature[j]) * distance[at % SNAPSHOTS];
        const bound = Math.abs(anchorGrad[j]) + reach * (1 + 1e-9) + slack;
        if (bound < l1 * multipliers[j]) {
          grad[j] = anchorGrad[j];
          this.columnsCertified++;
          continue;
        }
      }
      if (++computed % CHECK_EVERY === 0) throwIfCancelled(signal);
      const g = this.residualGradient(j);
      grad[j] = g;
      anchorGrad[j] = g;
      anchorPass[j] = pass;
    }
    this.columnsComputed += computed;
  }

  /**
   * Tries the active-set Newton step described in the module comment on the nonzero
   * coordinates of `set` that are strictly inside their bounds. Returns true if accepted.
   * Cost O(m²·n) (naive) or O(m²) (gram) to form the system, O(m³) to solve it.
   */
  private newtonStep(set: Int32Array, count: number, lambda: number): boolean {
    const problem = this.problem;
    const { mix, multipliers, lower, upper } = this.penalty;
    const coef = this.coef;
    const members = this.memberBuffer;
    let m = 0;
    for (let t = 0; t < count; t++) {
      const j = set[t];
      const b = coef[j];
      if (b !== 0 && b !== lower[j] && b !== upper[j]) members[m++] = j;
    }
    if (m === 0) return false;
    const l1 = lambda * mix;
    const l2 = lambda * (1 - mix);
    const rhs = this.rhsBuffer;
    for (let a = 0; a < m; a++) {
      const j = members[a];
      const g = problem.kind === "gram" ? this.grad[j] : this.residualGradient(j);
      rhs[a] = g - l2 * multipliers[j] * coef[j] - l1 * multipliers[j] * Math.sign(coef[j]);
    }
    let dual = problem.kind === "naive" && m > problem.n && l2 > 0;
    for (let a = 0; dual && a < m; a++) if (!(multipliers[members[a]] > 0)) dual = false;
    if (dual) {
      if (!this.dualSolve(members, m, l2, rhs)) return false;
    } else {
      if (!this.solveCached(members, m, l2, rhs)) return false;
    }
    return this.applyStep(members, m, rhs);
  }

  /**
   * Solves (B + λ(1−α)M_A) δ = rhs in place, B = G̃_AA (gram) or the cached products (naive),
   * with the factor kept from the previous Newton step and edited to the new members when the
   * shift λ(1−α) is the same (activeFactor.ts): along a lasso path (shift 0) and between the
   * steps at one strength, a changed active set costs O(m²) per column instead of O(m³/6).
   * False when the system is not positive definite.
   */
  private solveCached(members: Int32Array, m: number, l2: number, rhs: Float64Array): boolean {
    const multipliers = this.penalty.multipliers;
    const factor = (this.factor ??= new ActiveFactor(this.problem.p));
    const source = this.storedSystem;
    if (this.problem.kind === "gram") {
      if (source.slot.length === 0) {
        // G̃ itself, read in place: the identity map, row stride p.
        source.values = this.problem.gram as Float64Array;
        source.stride = this.problem.p;
        source.slot = new Int32Array(this.problem.p);
        for (let j = 0; j < this.problem.p; j++) source.slot[j] = j;
      }
    } else {
      this.productSlots(members, m);
      // (The cache may have grown: its array and stride are read after productSlots.)
      source.values = this.productCache;
      source.stride = this.productCapacity;
      source.slot = this.slotOf;
    }
    let ok = false;
    if (FACTOR_CACHE && factor.count > 0 && factor.shift === l2) ok = factor.update(members, m, Math.max(2, m >> 3), multipliers, source);
    else if (SPECTRAL_NEWTON && this.problem.kind === "gram" && l2 > 0 && this.spectralShiftWanted(m) && this.spectralSolve(members, m, l2, rhs)) return true;
    if (!ok) ok = factor.rebuild(members, m, l2, multipliers, source);
    if (!ok) return false;
    factor.solve(members, m, rhs);
    if (!FACTOR_CACHE) factor.clear();
    return true;
  }

  /**
   * Whether a Newton system of m members whose factor would have to be built afresh (the shift
   * changed) is cheaper through the problem's eigendecomposition (SpectralRidge.shiftedSolve):
   * gram form, every free multiplier positive, and 2f² + r²f/2 + r³/6 + 3rf + m² (the solve,
   * r = f − m, and the copies around it) below m³/6. (Measured on the bench shapes: weighting
   * the solve's cost by 0.7 or 1.5 instead made no difference beyond the noise.)
   */
  private spectralShiftWanted(m: number): boolean {
    if (this.spectralState === 0) {
      this.spectralState = 2;
      const { multipliers } = this.penalty;
      const frozen = this.problem.std.frozen;
      let free = 0;
      for (let j = 0; j < this.problem.p; j++) {
        if (frozen[j]) continue;
        free++;
        if (!(multipliers[j] > 0)) this.spectralState = 1;
      }
      this.freeCount = free;
    }
    if (this.spectralState !== 2) return false;
    const f = this.freeCount;
    const r = f - m;
    return 2 * f * f + (r * r * f) / 2 + (r * r * r) / 6 + 3 * r * f + m * m < (m * m * m) / 6;
  }

  /**
   * The Newton system solved through the eigendecomposition (see spectralShiftWanted), accepted
   * when the whole system's condition number is at most SPECTRAL_TRUSTED, or else when its residual ‖rhs − (G̃_AA + λ(1−α)M_A) δ‖∞ is within SPECTRAL_RESIDUAL of
   * ‖rhs‖∞ + max_a S_aa·‖δ‖∞ (a factorization's backward error is of that order); otherwise rhs
   * is left as it was and the caller factorizes.
   */
  private spectralSolve(members: Int32Array, m: number, l2: number, rhs: Float64Array): boolean {
    const problem = this.problem;
    const multipliers = this.penalty.multipliers;
    const spectral = (this.spectral ??= sharedSpectralRidge(problem, multipliers, this.settings.signal));
    const original = this.spectralRhs;
    for (let a = 0; a < m; a++) original[a] = rhs[a];
    if (!spectral.shiftedSolve(members, m, l2, rhs)) {
      for (let a = 0; a < m; a++) rhs[a] = original[a];
      return false;
    }
    spectralCounts[0]++;
    // A well-conditioned whole system needs no check: the solve's error is then of the order of
    // a factorization's, ≈ ε · cond(G̃ + cM) (in M's metric: (Λ_max + c)/(Λ_min + c)).
    if (spectral.largestValue + l2 <= SPECTRAL_TRUSTED * (spectral.smallestValue + l2)) return true;
    const gram = problem.gram as Float64Array;
    const p = problem.p;
    // δ spread over all p predictors (0 off the members), so each row's product is stride 1.
    const spread = this.spectralSpread;
    spread.fill(0);
    for (let a = 0; a < m; a++) spread[members[a]] = rhs[a];
    let residual = 0;
    let size = 0;
    let scale = 0;
    let diagonal = 0;
    for (let a = 0; a < m; a++) {
      const j = members[a];
      const off = j * p;
      const s = original[a] - l2 * multipliers[j] * rhs[a] - dotRange(gram, off, spread, 0, p);
      if (Math.abs(s) > residual) residual = Math.abs(s);
      if (Math.abs(rhs[a]) > size) size = Math.abs(rhs[a]);
      if (Math.abs(original[a]) > scale) scale = Math.abs(original[a]);
      const dj = gram[off + j] + l2 * multipliers[j];
      if (dj > diagonal) diagonal = dj;
    }
    if (residual <= SPECTRAL_RESIDUAL * (scale + diagonal * size)) return true;
    spectralCounts[1]++;
    for (let a = 0; a < m; a++) rhs[a] = original[a];
    return false;
  }

  /** Steps along δ (in `step`) as far as signs and bounds allow; see newtonStep. */
  private applyStep(members: Int32Array, m: number, step: Float64Array): boolean {
    const { lower, upper } = this.penalty;
    const coef = this.coef;
    // Along b + tδ the objective is exactly the quadratic model until the first coefficient
    // reaches zero or a bound, so stepping to min(1, that t) always lowers the objective; the
    // coefficient that got there is set exactly onto it and descent takes over again.
    let fraction = 1;
    let stopper = -1;
    let stopValue = 0;
    for (let a = 0; a < m; a++) {
      const j = members[a];
      const b = coef[j];
      const d = step[a];
      if (!Number.isFinite(d)) return false;
      if (d === 0) continue;
      const edge = d < 0 ? Math.max(b > 0 ? 0 : -Infinity, lower[j]) : Math.min(b < 0 ? 0 : Infinity, upper[j]);
      const t = (edge - b) / d;
      if (t < fraction) {
        fraction = t;
        stopper = j;
        stopValue = edge;
      }
    }
    if (!(fraction > 0)) return false;
    // Apply the step member by member (O(m·p) gram, O(m·n) naive) rather than rebuilding g.
    const changed = this.changedColumns;
    const deltas = this.changedDeltas;
    let changes = 0;
    for (let a = 0; a < m; a++) {
      const j = members[a];
      const value = j === stopper ? stopValue : coef[j] + fraction * step[a];
      const delta = value - coef[j];
      if (delta === 0) continue;
      coef[j] = value;
      changed[changes] = j;
      deltas[changes++] = delta;
    }
    this.applyChanges(changed, deltas, changes);
    this.newtonSteps++;
    this.lastStepFull = stopper < 0;
    return true;
  }

  /**
   * The Newton system (ZᵀZ + Λ) δ = r for more active predictors than rows (residual form,
   * α < 1, positive multipliers), solved in the n × n row space by the Woodbury identity
   * (Golub & Van Loan, Matrix Computations, §2.1.4):
   *   δ = Λ⁻¹r − Λ⁻¹Zᵀ (I + ZΛ⁻¹Zᵀ)⁻¹ Z Λ⁻¹ r,   Z = Ω^½ X̃_A, Λ = λ(1−α) M_A.
   * ZΛ⁻¹Zᵀ = (1/λ(1−α)) Σ_{j∈A} z_j z_jᵀ / m_j is kept as a running sum over the active set
   * (a column joining or leaving costs O(n²)), so a step costs O(n³/6 + n·m) instead of the
   * primal O(m³/6). The sum is rebuilt from scratch every DUAL_REBUILD updates so rounding
   * cannot accumulate. Overwrites `rhs` with δ; false if the system is not positive definite.
   */
  private dualSolve(members: Int32Array, m: number, l2: number, rhs: Float64Array): boolean {
    const problem = this.problem;
    const n = problem.n;
    const xs = (problem.xs as { data: Float64Array }).data;
    const multipliers = this.penalty.multipliers;
    if (!this.dualSum) {
      this.dualSum = new Float64Array(n * n);
      this.dualIn = new Uint8Array(problem.p);
      this.rootOmega = new Float64Array(n);
      const omega = problem.omega as Float64Array;
      for (let i = 0; i < n; i++) this.rootOmega[i] = Math.sqrt(omega[i]);
    }
    const sum = this.dualSum;
    const inSum = this.dualIn as Uint8Array;
    const root = this.rootOmega as Float64Array;
    const wanted = this.dualWanted;
    wanted.fill(0);
    for (let a = 0; a < m; a++) wanted[members[a]] = 1;
    let changes = 0;
    for (let j = 0; j < problem.p; j++) if (inSum[j] !== wanted[j]) changes++;
    if (this.dualUpdates + changes > DUAL_REBUILD) {
      sum.fill(0);
      inSum.fill(0);
      this.dualUpdates = 0;
    }
    const z = this.rowBuffer;
    for (let j = 0; j < problem.p; j++) {
      if (inSum[j] === wanted[j]) continue;
      // Each column added to or taken from the running sum costs O(n²).
      throwIfCancelled(this.settings.signal);
      const sign = wanted[j] ? 1 : -1;
      const off = j * n;
      const scale = sign / multipliers[j];
      for (let i = 0; i < n; i++) z[i] = root[i] * xs[off + i];
      // Lower triangle only: row i, columns 0..i.
      for (let i = 0; i < n; i++) {
        const a = scale * z[i];
        if (a === 0) continue;
        const row = i * n;
        for (let k = 0; k <= i; k++) sum[row + k] += a * z[k];
      }
      inSum[j] = wanted[j];
      this.dualUpdates++;
    }
    if (this.systemBuffer.length < n * n) this.systemBuffer = new Float64Array(n * n);
    const system = this.systemBuffer;
    const inverseL2 = 1 / l2;
    for (let i = 0; i < n; i++) {
      const row = i * n;
      for (let k = 0; k <= i; k++) system[row + k] = sum[row + k] * inverseL2;
      system[row + i] += 1;
    }
    // u = Λ⁻¹ r (kept in rhs), v = Z u.
    const v = this.dualVector;
    v.fill(0);
    for (let a = 0; a < m; a++) {
      const j = members[a];
      const u = rhs[a] / (l2 * multipliers[j]);
      rhs[a] = u;
      const off = j * n;
      for (let i = 0; i < n; i++) v[i] += xs[off + i] * u;
    }
    for (let i = 0; i < n; i++) v[i] *= root[i];
    if (!choleskySolveInPlace(system, v, n)) return false;
    for (let i = 0; i < n; i++) v[i] *= root[i];
    for (let a = 0; a < m; a++) {
      const j = members[a];
      rhs[a] -= dotRange(xs, j * n, v, 0, n) / (l2 * multipliers[j]);
    }
    return true;
  }

  /**
   * Slots of the listed columns in the product cache, adding missing ones (each new column's
   * products with every cached column cost O(slots · n), once). Residual form only.
   */
  private productSlots(members: Int32Array, m: number): Int32Array {
    const problem = this.problem;
    const n = problem.n;
    const xs = (problem.xs as { data: Float64Array }).data;
    const omega = problem.omega as Float64Array;
    const weighted = this.rowBuffer;
    const slots = this.slotBuffer;
    for (let a = 0; a < m; a++) {
      const j = members[a];
      let slot = this.slotOf[j];
      if (slot < 0) {
        // A new column's products with every cached one cost O(slots · n).
        throwIfCancelled(this.settings.signal);
        slot = this.productCount;
        if (slot >= this.productCapacity) this.growProducts(Math.max(64, 2 * this.productCapacity));
        this.productCount++;
        this.slotOf[j] = slot;
        this.slotColumn[slot] = j;
        const offJ = j * n;
        for (let i = 0; i < n; i++) weighted[i] = omega[i] * xs[offJ + i];
        const stride = this.productCapacity;
        for (let t = 0; t <= slot; t++) {
          const v = dotRange(weighted, 0, xs, this.slotColumn[t] * n, n);
          this.productCache[slot * stride + t] = v;
          this.productCache[t * stride + slot] = v;
        }
      }
      slots[a] = slot;
    }
    return slots;
  }

  private growProducts(capacity: number): void {
    const old = this.productCache;
    const oldCapacity = this.productCapacity;
    const cache = new Float64Array(capacity * capacity);
    for (let a = 0; a < this.productCount; a++) {
      for (let b = 0; b < this.productCount; b++) cache[a * capacity + b] = old[a * oldCapacity + b];
    }
    const columns = new Int32Array(capacity);
    columns.set(this.slotColumn.subarray(0, this.productCount));
    this.productCache = cache;
    this.productCapacity = capacity;
    this.slotColumn = columns;
  }

  /**
   * Fits the unpenalized predictors (m_j = 0) with every penalized coefficient at zero: the
   * model at the top of the path. Returns the report of that solve.
   */
  fitUnpenalized(): SolveReport {
    const p = this.problem.p;
    const frozen = this.problem.std.frozen;
    let count = 0;
    for (let j = 0; j < p; j++) {
      if (!frozen[j] && this.penalty.multipliers[j] === 0) this.setBuffer[count++] = j;
    }
    let sweeps = 0;
    let converged = true;
    if (count > 0) {
      const limit = this.threshold(0);
      converged = false;
      while (sweeps < this.settings.maxSweeps) {
        sweeps++;
        if (this.sweep(this.setBuffer, count, 0) <= limit) {
          converged = true;
          break;
        }
      }
      this.refreshGradient();
    }
    return { sweeps, converged, kktViolation: 0, strongRuleMisses: 0 };
  }

  /**
   * Smallest λ at which every penalized coefficient is zero, given the current (unpenalized)
   * fit: max over penalized j of the gradient in a direction its bounds allow, / (α m_j).
   * Uses `mixForTop` in place of α (the caller passes a small positive value for ridge).
   */
  topStrength(mixForTop: number): number {
    return topFromGradient(this.grad, this.penalty, this.problem.std.frozen, mixForTop);
  }

  /**
   * Warm start by linear extrapolation along the path: between the strengths where the
   * active set changes, lasso coefficients are linear in λ and elastic-net coefficients
   * smooth (Efron et al. 2004, Ann. Statist. 32(2); Zou & Hastie 2005), so stepping each
   * coefficient that was nonzero at both previous strengths along its last slope lands
   * close to the new solution. A step that would cross zero stops at zero; bounds clip.
   * Descent then corrects it, so this changes the work, never the answer.
   */
  private extrapolate(lambda: number, deferSmooth: boolean): number {
    const previous = this.solvedLambda;
    const before = this.historyLambda;
    if (!(previous > 0 && before > previous && lambda < previous)) return 0;
    let held = 0;
    const ratio = (lambda - previous) / (previous - before);
    const { lower, upper } = this.penalty;
    const coef = this.coef;
    const history = this.history;
    const changed = this.changedColumns;
    const deltas = this.changedDeltas;
    let changes = 0;
    for (let j = 0; j < this.problem.p; j++) {
      const now = coef[j];
      const then = history[j];
      if (now === 0 || then === 0 || now === lower[j] || now === upper[j]) continue;
      let value = now + ratio * (now - then);
      if (value * now <= 0) value = 0;
      if (value < lower[j]) value = lower[j];
      else if (value > upper[j]) value = upper[j];
      const delta = value - now;
      if (delta === 0) continue;
      if (deferSmooth && value !== 0 && value !== lower[j] && value !== upper[j]) {
        this.deferredColumns[held] = j;
        this.deferredValues[held++] = value;
        continue;
      }
      coef[j] = value;
      changed[changes] = j;
      deltas[changes++] = delta;
    }
    this.applyChanges(changed, deltas, changes);
    return held;
  }

  /** Applies the extrapolation's held-back moves (see solve). */
  private applyDeferred(held: number): void {
    const coef = this.coef;
    const changed = this.changedColumns;
    const deltas = this.changedDeltas;
    let changes = 0;
    for (let t = 0; t < held; t++) {
      const j = this.deferredColumns[t];
      const delta = this.deferredValues[t] - coef[j];
      if (delta === 0) continue;
      coef[j] = this.deferredValues[t];
      changed[changes] = j;
      deltas[changes++] = delta;
    }
    this.applyChanges(changed, deltas, changes);
  }

  /**
   * Solves at strength λ, warm-started from the current state. `previousLambda` feeds the
   * strong rule (pass λ itself, or Infinity, to keep every predictor in play).
   */
  solve(lambda: number, previousLambda: number): SolveReport {
    const p = this.problem.p;
    const { mix, multipliers, lower, upper } = this.penalty;
    const frozen = this.problem.std.frozen;
    const strong = this.strong;
    const set = this.setBuffer;
    const active = this.activeBuffer;
    const coef = this.coef;
    const grad = this.grad;
    const cut = Number.isFinite(previousLambda) ? mix * (2 * lambda - previousLambda) : -Infinity;
    let count = 0;
    for (let j = 0; j < p; j++) {
      const keep =
        !frozen[j] &&
        (coef[j] !== 0 || multipliers[j] * mix === 0 || Math.abs(grad[j]) >= cut * multipliers[j]);
      strong[j] = keep ? 1 : 0;
      if (keep) set[count++] = j;
    }
    this.historySpare.set(coef);
    const stepFirst = this.newtonFirst && NEWTON_FIRST && (mix < 1 || this.problem.kind === "naive");
    // Before a Newton step on the carried-over set, only the extrapolation's moves onto zero or a
    // bound are applied (they decide the step's members); the others are held back, since the
    // step lands on the same point from either start, and applied only if no step is taken.
    const deferred = this.extrapolate(lambda, stepFirst && STEP_FROM_PREVIOUS && this.problem.kind === "gram");
    const limit = this.threshold(lambda);
    const cap = this.settings.maxSweeps;
    let sweeps = 0;
    let converged = true;
    let misses = 0;
    const l1 = lambda * mix;
    const l2 = lambda * (1 - mix);
    /** kktViolation's figure when the last KKT check computed it (see there), else −1. */
    let kkt = -1;
    const stepsBefore = this.newtonSteps;
    if (stepFirst) {
      // The previous strength needed a Newton step: its active set and signs usually carry over,
      // so step at once from the extrapolated start instead of sweeping towards it first
      // (the sweeps below then confirm the result, or carry on if a sign changed).
      let activeCount = 0;
      for (let t = 0; t < count; t++) if (coef[set[t]] !== 0) active[activeCount++] = set[t];
      let stepped = false;
      if (activeCount > 0 && (activeCount <= NEWTON_MAX_ACTIVE || (this.problem.kind === "naive" && this.problem.n <= NEWTON_MAX_ACTIVE && mix < 1))) {
        this.newtonTries++;
        stepped = this.newtonStep(active, activeCount, lambda);
      }
      if (!stepped && deferred > 0) this.applyDeferred(deferred);
    }
    let settled = false;
    outer: for (;;) {
      // Converge on the strong set, cycling on its nonzero members between full passes.
      for (;;) {
        if (sweeps >= cap) {
          converged = false;
          break outer;
        }
        sweeps++;
        if (this.sweep(set, count, lambda) <= limit) {
          // No move applied: r is the one every kept predictor's gradient was just computed at.
          settled = SETTLED_SKIP && !this.sweepMoved;
          break;
        }
        let activeCount = 0;
        for (let t = 0; t < count; t++) if (coef[set[t]] !== 0) active[activeCount++] = set[t];
        let sinceNewton = 0;
        let previousChange = Infinity;
        for (;;) {
          if (sweeps >= cap) {
            converged = false;
            break outer;
          }
          sweeps++;
          this.patternChanged = false;
          const change = this.sweep(active, activeCount, lambda);
          if (change <= limit) break;
          sinceNewton++;
          if (!this.patternChanged && sinceNewton >= NEWTON_AFTER_SWEEPS && (activeCount <= NEWTON_MAX_ACTIVE || (this.problem.kind === "naive" && this.problem.n <= NEWTON_MAX_ACTIVE && mix < 1))) {
            // Linear convergence: the sweeps still needed are about log(limit/change)/log(rate).
            // Try the Newton step only when those sweeps would cost more than the solve.
            const rate = change / previousChange;
            // (portableLog: the same decision, so the same iterates, in every JavaScript engine.)
            const remaining = rate < 1 ? portableLog(limit / change) / portableLog(rate) : Infinity;
            // Costs in multiply-adds: a sweep updates the gradient (gram: p per coordinate) or
            // computes and applies it (residual: 2n per coordinate); the step copies the cached
            // products (m²), factorizes (m³/6) and applies itself (one sweep's worth).
            const gramForm = this.problem.kind === "gram";
            const sweepCost = activeCount * (gramForm ? this.problem.p : 2 * this.problem.n);
            const n = this.problem.n;
            const factorCost = !gramForm && activeCount > n && mix < 1 ? (n * n * n) / 6 + 2 * n * activeCount : (activeCount * activeCount * activeCount) / 6 + activeCount * activeCount;
            const newtonCost = factorCost + sweepCost;
            if (remaining * sweepCost > NEWTON_PAYOFF * newtonCost) {
              sinceNewton = 0;
              this.newtonTries++;
              // A full step solved the active set's conditions exactly: confirm on the strong set
              // at once rather than with one more sweep of the active set first.
              if (this.newtonStep(active, activeCount, lambda) && this.lastStepFull && SKIP_AFTER_FULL) break;
            }
          }
          previousChange = change;
        }
      }
      // KKT check on everything the strong rule set aside.
      if (CERTIFIED_CHECK) this.refreshCertified(lambda, settled);
      else this.refreshGradient();
      let added = 0;
      if (this.unbounded) {
        // The check and kktViolation's figure in one pass (the same expressions as there; a
        // discarded predictor's coefficient is 0, so its h is g itself): the figure stands when
        // nothing was added, as nothing moves after.
        let worst = 0;
        for (let j = 0; j < p; j++) {
          if (frozen[j]) continue;
          const b = coef[j];
          const m = multipliers[j];
          const g = grad[j];
          const h = g - l2 * m * b;
          const t = l1 * m;
          const v = b > 0 ? Math.abs(h - t) : b < 0 ? Math.abs(h + t) : Math.abs(h) - t;
          if (v > worst) worst = v;
          if (!strong[j] && (g > t || g < -t)) {
            strong[j] = 1;
            set[count++] = j;
            added++;
          }
        }
        if (added === 0) {
          kkt = worst / Math.max(lambda, this.floor);
          break;
        }
      } else {
        for (let j = 0; j < p; j++) {
          if (strong[j] || frozen[j]) continue;
          const g = grad[j];
          const t = l1 * multipliers[j];
          if ((g > t && upper[j] > 0) || (g < -t && lower[j] < 0)) {
            strong[j] = 1;
            set[count++] = j;
            added++;
          }
        }
        if (added === 0) break;
      }
      misses += added;
    }
    if (!converged) this.refreshGradient();
    this.newtonFirst = this.newtonSteps > stepsBefore;
    const spare = this.history;
    this.history = this.historySpare;
    this.historySpare = spare;
    this.historyLambda = this.solvedLambda;
    this.solvedLambda = lambda;
    return { sweeps, converged, kktViolation: kkt >= 0 ? kkt : this.kktViolation(lambda), strongRuleMisses: misses };
  }

  /** Largest coordinateViolation over free predictors, divided by max(λ, floor). */
  kktViolation(lambda: number): number {
    const { mix, multipliers, lower, upper } = this.penalty;
    const frozen = this.problem.std.frozen;
    let worst = 0;
    if (this.unbounded) {
      // coordinateViolation without bounds, its products in its order (λ(1−α)·m_j·b̃_j and
      // λα·m_j), so the same value: |h − t| for b̃_j > 0, |h + t| for b̃_j < 0 (t − h = −(h − t)
      // exactly), |h| − t for b̃_j = 0 (where it is positive). One of the per-point O(p) passes
      // that dominate small-p paths (bench/PROFILE.md "tall20").
      const coef = this.coef;
      const grad = this.grad;
      const l2 = lambda * (1 - mix);
      const l1 = lambda * mix;
      for (let j = 0; j < this.problem.p; j++) {
        if (frozen[j]) continue;
        const b = coef[j];
        const m = multipliers[j];
        const h = grad[j] - l2 * m * b;
        const t = l1 * m;
        const v = b > 0 ? Math.abs(h - t) : b < 0 ? Math.abs(h + t) : Math.abs(h) - t;
        if (v > worst) worst = v;
      }
      return worst / Math.max(lambda, this.floor);
    }
    for (let j = 0; j < this.problem.p; j++) {
      if (frozen[j]) continue;
      const v = coordinateViolation(this.grad[j], this.coef[j], lambda, mix, multipliers[j], lower[j], upper[j]);
      if (v > worst) worst = v;
    }
    return worst / Math.max(lambda, this.floor);
  }

  /** Σ ω r² at the current coefficients (gram form: from g and c̃, no pass over the data). */
  residualMeanSquare(): number {
    const problem = this.problem;
    if (problem.kind === "naive") {
      const r = this.residual as Float64Array;
      const omega = problem.omega as Float64Array;
      let s = 0;
      for (let i = 0; i < problem.n; i++) s += omega[i] * r[i] * r[i];
      return s;
    }
    // r = ỹ − X̃b̃: Σωr² = yVar − 2 b̃·c̃ + b̃ᵀG̃b̃ and b̃ᵀG̃b̃ = b̃·c̃ − b̃·g.
    let bc = 0;
    let bg = 0;
    for (let j = 0; j < problem.p; j++) {
      bc += this.coef[j] * problem.cross[j];
      bg += this.coef[j] * this.grad[j];
    }
    return Math.max(problem.std.yVariance - bc - bg, 0);
  }

  /**
   * Replaces the coefficients (e.g. with an exact ridge solution) and recomputes g (and r)
   * from scratch rather than by increments, so no rounding drifts along a path. Cost O(p²)
   * (gram) or O(n·p) (naive).
   */
  setCoefficients(values: Float64Array): void {
    const problem = this.problem;
    const p = problem.p;
    this.coef.set(values);
    if (problem.kind === "gram") {
      const gram = problem.gram as Float64Array;
      const cross = problem.cross;
      const grad = this.grad;
      // Four rows at a time: each row's sum is its own chain in increasing k, as one row at a
      // time, so the same bits; the four chains run side by side and share each value's load.
      let j = 0;
      for (; j + 3 < p; j += 4) {
        let s0 = cross[j];
        let s1 = cross[j + 1];
        let s2 = cross[j + 2];
        let s3 = cross[j + 3];
        const o0 = j * p;
        const o1 = o0 + p;
        const o2 = o1 + p;
        const o3 = o2 + p;
        for (let k = 0; k < p; k++) {
          const v = values[k];
          s0 -= gram[o0 + k] * v;
          s1 -= gram[o1 + k] * v;
          s2 -= gram[o2 + k] * v;
          s3 -= gram[o3 + k] * v;
        }
        grad[j] = s0;
        grad[j + 1] = s1;
        grad[j + 2] = s2;
        grad[j + 3] = s3;
      }
      for (; j < p; j++) {
        let s = cross[j];
        const off = j * p;
        for (let k = 0; k < p; k++) s -= gram[off + k] * values[k];
        grad[j] = s;
      }
      return;
    }
    const n = problem.n;
    const xs = (problem.xs as { data: Float64Array }).data;
    const r = this.residual as Float64Array;
    r.set(problem.yc as Float64Array);
    for (let j = 0; j < p; j++) {
      if (j % CHECK_EVERY === CHECK_EVERY - 1) throwIfCancelled(this.settings.signal);
      const b = values[j];
      if (b === 0) continue;
      const off = j * n;
      for (let i = 0; i < n; i++) r[i] -= b * xs[off + i];
    }
    this.refreshGradient();
  }
}

/**
 * Solves S x = b in place for a symmetric positive definite S (m × m, row-major, only the
 * lower triangle read) by Cholesky factorization (Golub & Van Loan, Matrix Computations,
 * Alg. 4.2.1): S's lower triangle is overwritten by the factor L and b by x. Returns false
 * when S is not numerically positive definite (e.g. more active lasso predictors than rows).
 */
export function choleskySolveInPlace(system: Float64Array, rhs: Float64Array, m: number): boolean {
  let largestDiagonal = 0;
  for (let a = 0; a < m; a++) largestDiagonal = Math.max(largestDiagonal, system[a * m + a]);
  // Two rows at a time, stride-1 inner products (activeFactor.ts choleskyRows).
  if (!choleskyRows(system, m, m, 1e-12 * largestDiagonal)) return false;
  for (let a = 0; a < m; a++) {
    let s = rhs[a];
    const rowA = a * m;
    for (let k = 0; k < a; k++) s -= system[rowA + k] * rhs[k];
    rhs[a] = s / system[rowA + a];
  }
  for (let a = m - 1; a >= 0; a--) {
    let s = rhs[a];
    for (let k = a + 1; k < m; k++) s -= system[k * m + a] * rhs[k];
    rhs[a] = s / system[a * m + a];
  }
  return true;
}
