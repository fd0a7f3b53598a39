/**
 * Penalized logistic regression (two-class outcomes): coordinate descent on a sequence of
 * quadratic approximations of the log-likelihood, one strength at a time, warm-started down the
 * grid.
 *
 * Objective, for y ∈ {0, 1} (1 = the event), ω_i = w_i / Σw, mix α and strength λ:
 *
 *   F(b0, b̃) = −Σ_i ω_i [ y_i η_i − log(1 + e^{η_i}) ]  +  λ Σ_j m_j [ α |b̃_j| + (1 − α)/2 · b̃_j² ],
 *   η_i = b0 + x̃_i·b̃,   l̃_j <= b̃_j <= ũ_j,
 *
 * on the standardized predictors of problem.ts (same weights, multipliers, bounds, frozen constant
 * columns, standardization and intercept conventions as the number outcome; the intercept is never
 * penalized). The target is not standardized: the log-likelihood has no units, so λ is unit-free
 * as it stands. The first term is half the binomial deviance per unit weight ("the loss" below).
 *
 * Method (Friedman, Hastie & Tibshirani 2010, J. Stat. Software 33(1), §3):
 * - Outer loop (iteratively reweighted least squares, i.e. Newton's method): at the current fit,
 *   p_i = 1/(1 + e^{−η_i}), the loss is replaced by its quadratic approximation
 *     (1/2) Σ v_i (z_i − b0 − x̃_i·b̃)²,  v_i = ω_i p_i(1 − p_i),  z_i = η_i + (y_i − p_i)/(p_i(1 − p_i)).
 *   p(1 − p) is kept at or above WEIGHT_FLOOR. That changes only the curvature of the
 *   approximation: its gradient at the current fit, Σ v_i x̃_ij (z_i − η_i) = Σ ω_i x̃_ij (y_i − p_i),
 *   is the true one whatever the floor, so the fixed point is the true minimizer.
 * - Inner loop: cyclic coordinate descent on that quadratic plus the penalty (the update of
 *   descent.ts with weights v: b̃_j <- clip(S(g_j + d_j b̃_j, λα m_j) / (d_j + λ(1−α) m_j))), in
 *   residual form: the weighted working residual s_i = v_i (z_i − η_i) is kept, so a coordinate
 *   that stays at zero costs one pass over its column. The intercept is profiled out: it is set
 *   to its optimum first (b0 += Σ s / Σ v, leaving Σ s = 0) and moves with every coordinate, each
 *   update minimizing over b̃_j and b0 together. That is coordinate descent on the columns centred
 *   at their v-weighted means c_j = Σ v x̃_j / Σ v (x̃_j − c_j; d_j = Σ v (x̃_j − c_j)², g_j = Σ x̃_j s
 *   since Σ s = 0; a change Δ moves b0 by −Δ c_j). The standardized columns are centred in the
 *   weights ω, not v, so without this the intercept and every column would trade the same
 *   direction back and forth between sweeps. After each sweep the intercept is re-centred
 *   (b0 += Σ s / Σ v) to clear rounding.
 * - Inexact Newton: each quadratic is solved only to a fraction of the current violation of the
 *   optimality conditions (forcing term min(0.1, violation); Dembo, Eisenstat & Steihaug 1982,
 *   SIAM J. Numer. Anal. 19(2)): early steps are cheap and the convergence stays fast.
 * - Step control: the true penalized objective F must not rise from one outer step to the next
 *   (beyond RISE_SLACK of its value, the rounding of its sum); when it would, the step is halved
 *   toward the previous point until it doesn't (counted in stepHalvings).
 * - Convergence: the optimality (KKT) conditions of F itself, with the true gradient
 *   g_j = Σ ω_i x̃_ij (y_i − p_i): every coordinate's violation (descent.ts coordinateViolation)
 *   and the intercept's, |Σ ω_i (y_i − p_i)|, at most `tolerance` × max(λ, floor) (floor =
 *   1e-6 × the event indicator's SD, as the number outcome's floor is 1e-6 × the target's), or
 *   at most ROUNDING_ALLOWANCE times the rounding a sum over the rows carries, whichever is
 *   larger (below it no step can make progress). The outer loop is capped at MAX_NEWTON_STEPS
 *   per strength and the sweeps at the sweep cap; hitting either is reported (converged = false).
 * - Screening: the sequential strong rule (Tibshirani et al. 2012, JRSS-B 74(2), eq. 7) on the
 *   true gradient at the previous strength; after convergence every discarded predictor's KKT
 *   condition is checked on the true gradient and violators are added back.
 *
 * Separation (a rule of our own): when the classes can be separated, the fitted probabilities
 * run to 0 and 1 as λ falls and the coefficients grow without bound (like log(1/λ)). `saturated`
 * says when every row with positive weight has a probability within SATURATION of its class;
 * the full-data path ends there (fit.ts, early stop "saturated"), as the number outcome's path ends
 * at an exact fit: weaker strengths would only stretch the same separating direction.
 *
 * All exponentials and logarithms are the portable ones (portableMath.ts, via logistic and
 * softplus), so fits are bit-identical in Node and in the browser.
 */
import { softplusFrom } from "./classMetrics";
import { coordinateViolation, CoordinateDescent, DescentSettings, PenaltySpec, softThreshold } from "./descent";
import { CancelSignal, throwIfCancelled } from "./errors";
import { logisticFrom } from "./model";
import type { EarlyStop, PathRun } from "./path";
import { PLATEAU_GAIN, PLATEAU_SPAN, RIDGE_TOP_DF } from "./path";
import { portableLog, tableExp } from "./portableMath";
import { dotRange, TrainingProblem } from "./problem";
import { penalizedSpectrum, strengthForDegreesOfFreedom } from "./ridgeSpectral";

/** Smallest p(1 − p) used as a working weight (the true one falls to 0 as p runs to 0 or 1). */
export const WEIGHT_FLOOR = 1e-5;
/** A row is saturated when its probability is within this of its class (see the module comment). */
export const SATURATION = 1e-5;
/** Most outer (Newton) steps at one strength. Warm-started, a strength typically takes 2 to 5. */
export const MAX_NEWTON_STEPS = 100;
/** Most halvings of one outer step before it is abandoned (2^-30: the step has vanished). */
export const MAX_HALVINGS = 30;
/** Rise of the objective accepted as rounding: its sum over the rows is good to about this relative to its value. */
export const RISE_SLACK = 1e-12;
/**
 * Optimality is certified down to this many times the rounding of a gradient summed over m rows,
 * 2^-52 · √m · (root mean square of its terms): the conditions can't be checked more finely than
 * the sums are computed. It matters only at very weak strengths on many rows.
 */
export const ROUNDING_ALLOWANCE = 4;

/** Coordinates or columns between cancellation checkpoints (as in descent.ts). */
const CHECK_EVERY = 64;
/** Rows between cancellation checkpoints in the O(n) passes (probabilities, objective). */
const ROWS_PER_CHECK = 65536;

export interface LogisticSettings {
  tolerance: number;
  /** Sweep cap per strength (all inner sweeps of all outer steps). */
  maxSweeps: number;
  /** Fit b0 (else η = x̃·b̃). */
  intercept: boolean;
  /**
   * Covariance form: solve each outer step's quadratic on a stored p × p curvature matrix,
   * rebuilt only when the steps stop contracting well (a proximal Newton method with an inexact
   * Hessian, Lee, Sun & Saunders 2014, SIAM J. Optim. 24(3)); for rows ≫ predictors. Else the
   * residual form: fresh weights every step, O(n) per coordinate update.
   */
  covariance?: boolean;
  signal?: CancelSignal;
}

export interface LogisticReport {
  sweeps: number;
  /** Outer (Newton) steps taken. */
  newtonSteps: number;
  converged: boolean;
  /** Largest KKT violation over all predictors and the intercept, relative to max(λ, floor). */
  kktViolation: number;
  strongRuleMisses: number;
  stepHalvings: number;
}

/**
 * Solver state for one two-class training problem (naive form: the standardized rows) and one
 * mix. Coefficients, linear scores, probabilities and the true gradient persist between
 * strengths: warm starts are free.
 */
export class LogisticDescent {
  readonly problem: TrainingProblem;
  readonly penalty: PenaltySpec;
  readonly settings: LogisticSettings;
  /** 0/1 per row of the problem. */
  readonly y: Float64Array;
  /** Standardized coefficients b̃. */
  readonly coef: Float64Array;
  /** b0 on the standardized scale: η = b0 + x̃·b̃ (0 without an intercept). */
  intercept = 0;
  /** Σ ω (y − p)² at the last refreshGradient (for the rounding allowance). */
  private residualSquare = 0;
  /** Scores at the start of the current outer step (step control). */
  private readonly previousEta: Float64Array;
  /** Linear scores and probabilities of the rows at the current coefficients. */
  readonly eta: Float64Array;
  readonly prob: Float64Array;
  /** True gradient g_j = Σ ω x̃_j (y − p), exact for every free j after each solve. */
  readonly grad: Float64Array;
  /** Σ ω (y − p), the intercept's gradient. */
  interceptGrad = 0;
  /** max(λ, floor) is what violations are relative to: floor = 1e-6 × SD of the event indicator. */
  readonly floor: number;
  /** The loss of the null model (intercept only, or η = 0 without one). */
  readonly nullLoss: number;
  totalSweeps = 0;
  totalNewtonSteps = 0;
  stepHalvings = 0;

  private readonly n: number;
  private readonly p: number;
  private readonly xs: Float64Array;
  private readonly omega: Float64Array;
  /** Rows with positive weight (for the rounding allowance). */
  private readonly used: number;
  /** s_i = v_i (z_i − η_i), the weighted working residual (ω_i (y_i − p_i) at the start of a step). */
  private readonly residual: Float64Array;
  /** v_i = ω_i max(p_i(1 − p_i), WEIGHT_FLOOR). */
  private readonly working: Float64Array;
  private sumWorking = 0;
  /** d_j = Σ v (x̃_j − c_j)², computed when first needed in an outer step (stamp = that step's number). */
  private readonly curvature: Float64Array;
  /** c_j = Σ v x̃_j / Σ v (0 without an intercept), computed with d_j. */
  private readonly centre: Float64Array;
  private readonly curvatureStamp: Int32Array;
  private stamp = 0;
  private readonly previous: Float64Array;
  private readonly spare: Float64Array;
  /** The solution at the strength before the last one solved, with its intercept and strength (NaN until then). */
  private readonly history: Float64Array;
  private historyIntercept = 0;
  private historyLambda = NaN;
  private solvedLambda = NaN;
  private readonly strong: Uint8Array;
  /** Covariance form (settings.covariance): the stored curvature and the gram-form solver on it. */
  private hessian: Float64Array | null = null;
  private columnSums: Float64Array | null = null;
  private residualSpare: Float64Array | null = null;
  private inner: CoordinateDescent | null = null;
  private innerSettings: DescentSettings | null = null;
  private hessianStale = true;
  /** Covariance form: how many times the curvature was rebuilt. */
  hessianBuilds = 0;
  private readonly setBuffer: Int32Array;
  private readonly activeBuffer: Int32Array;
  private readonly setBuffer2: Int32Array;

  constructor(problem: TrainingProblem, y: ArrayLike<number>, penalty: PenaltySpec, settings: LogisticSettings) {
    if (problem.kind !== "naive" || !problem.xs || !problem.omega) throw new Error("the two-class solver needs the rows (naive form)");
    this.problem = problem;
    this.penalty = penalty;
    this.settings = settings;
    const n = problem.n;
    const p = problem.p;
    this.n = n;
    this.p = p;
    this.xs = problem.xs.data;
    this.omega = problem.omega;
    this.y = Float64Array.from(y);
    if (this.y.length !== n) throw new Error(`the two-class solver got ${this.y.length} outcomes for ${n} rows`);
    this.coef = new Float64Array(p);
    this.eta = new Float64Array(n);
    this.prob = new Float64Array(n);
    this.previousEta = new Float64Array(n);
    this.grad = new Float64Array(p);
    this.residual = new Float64Array(n);
    this.working = new Float64Array(n);
    this.curvature = new Float64Array(p);
    this.centre = new Float64Array(p);
    this.curvatureStamp = new Int32Array(p).fill(-1);
    this.previous = new Float64Array(p);
    this.history = new Float64Array(p);
    this.spare = new Float64Array(p);
    this.strong = new Uint8Array(p);
    this.setBuffer = new Int32Array(p);
    this.activeBuffer = new Int32Array(p);
    this.setBuffer2 = new Int32Array(p);
    let share = 0;
    let used = 0;
    for (let i = 0; i < n; i++) {
      share += this.omega[i] * this.y[i];
      if (this.omega[i] > 0) used++;
    }
    this.used = used;
    if (!(share > 0 && share < 1)) throw new Error("the two-class solver needs rows of both classes");
    this.floor = 1e-6 * Math.sqrt(share * (1 - share));
    // Intercept-only start: the weighted event share's log-odds is the exact null fit.
    this.intercept = settings.intercept ? portableLog(share / (1 - share)) : 0;
    this.computeEta();
    this.nullLoss = this.lossOf(this.eta);
    this.refreshGradient(null, 0);
  }

  /** The probabilities p = logistic(η) at the current scores (model.ts: the same values as logistic). Cost O(n). */
  private evaluate(): void {
    const { eta, prob } = this;
    for (let i = 0; i < this.n; i++) {
      if (i % ROWS_PER_CHECK === ROWS_PER_CHECK - 1) throwIfCancelled(this.settings.signal);
      const score = eta[i];
      prob[i] = logisticFrom(score, tableExp(-Math.abs(score)));
    }
  }

  /**
   * The loss −Σ ω [y η − log(1 + e^η)] at the scores `eta` (classMetrics.ts softplus, through
   * softplusFrom with the exponential the logistic function uses too). Cost O(n).
   */
  private lossOf(eta: Float64Array): number {
    const { y, omega } = this;
    let sum = 0;
    for (let i = 0; i < this.n; i++) {
      if (i % ROWS_PER_CHECK === ROWS_PER_CHECK - 1) throwIfCancelled(this.settings.signal);
      if (!(omega[i] > 0)) continue;
      const score = eta[i];
      // y η − log(1 + e^η) is −log(1 + e^−η) for an event and −log(1 + e^η) otherwise.
      sum += omega[i] * softplusFrom(y[i] === 1 ? -score : score, tableExp(-Math.abs(score)));
    }
    return sum;
  }

  /** η = b0 + X̃ b̃ from scratch (no drift from increments), then p and the loss. Cost O(n · nonzero). */
  private computeEta(): void {
    const { eta, coef, xs, n } = this;
    eta.fill(this.intercept);
    // Nonzero columns four at a time: each row's score is loaded and stored once per four columns
    // (a column at a time, the stores dominate). The order of the sums is fixed: same bits every run.
    const columns = this.setBuffer2;
    let count = 0;
    for (let j = 0; j < this.p; j++) if (coef[j] !== 0) columns[count++] = j;
    let t = 0;
    for (; t + 3 < count; t += 4) {
      if (t % CHECK_EVERY === 0) throwIfCancelled(this.settings.signal);
      const o0 = columns[t] * n;
      const o1 = columns[t + 1] * n;
      const o2 = columns[t + 2] * n;
      const o3 = columns[t + 3] * n;
      const b0 = coef[columns[t]];
      const b1 = coef[columns[t + 1]];
      const b2 = coef[columns[t + 2]];
      const b3 = coef[columns[t + 3]];
      for (let i = 0; i < n; i++) eta[i] += b0 * xs[o0 + i] + b1 * xs[o1 + i] + (b2 * xs[o2 + i] + b3 * xs[o3 + i]);
    }
    for (; t < count; t++) {
      const off = columns[t] * n;
      const b = coef[columns[t]];
      for (let i = 0; i < n; i++) eta[i] += b * xs[off + i];
    }
    this.evaluate();
  }

  /** The loss −Σ ω [y η − log(1 + e^η)] (half the deviance per unit weight) at the current coefficients. Cost O(n). */
  loss(): number {
    return this.lossOf(this.eta);
  }

  /** The penalty λ Σ m_j [α|b̃_j| + (1 − α)/2 b̃_j²] at the current coefficients. */
  private penaltyValue(lambda: number): number {
    const { mix, multipliers } = this.penalty;
    let sum = 0;
    for (let j = 0; j < this.p; j++) {
      const b = this.coef[j];
      if (b === 0) continue;
      sum += multipliers[j] * (mix * Math.abs(b) + ((1 - mix) / 2) * b * b);
    }
    return lambda * sum;
  }

  /** The penalized objective F at the current coefficients (module comment). */
  objective(lambda: number): number {
    return this.loss() + this.penaltyValue(lambda);
  }

  /**
   * Whether the move to the current point from the one saved in `previous`, previousIntercept
   * and previousEta (penalty `previousPenalty`) left F at λ where it was or lower. First by
   * convexity, from the gradient at the current point (exact over `set`, which holds every
   * coordinate that moved): the loss L and the penalty P are convex, so with δ the move,
   *   F(new) − F(old) <= ∇L(new)·δ + P(new) − P(old) = −(g0 δ0 + Σ g_j δ_j) + P(new) − P(old),
   * which needs no logarithm; near a solution it is negative (P(new) − P(old) <= s·δ for the
   * subgradient s ≈ −∇L(new)). Only when that bound is positive are both losses evaluated.
   */
  private didNotRise(lambda: number, set: Int32Array, count: number, previousIntercept: number, previousPenalty: number): boolean {
    const { coef, previous, grad } = this;
    const penaltyNow = this.penaltyValue(lambda);
    let bound = penaltyNow - previousPenalty - this.interceptGrad * (this.intercept - previousIntercept);
    for (let t = 0; t < count; t++) {
      const j = set[t];
      const delta = coef[j] - previous[j];
      if (delta !== 0) bound -= grad[j] * delta;
    }
    if (bound <= 0) return true;
    const before = this.lossOf(this.previousEta) + previousPenalty;
    const after = this.lossOf(this.eta) + penaltyNow;
    return after <= before + RISE_SLACK * Math.abs(before);
  }

  /**
   * s_i = ω_i (y_i − p_i), then the true gradient of the listed coordinates (all free ones when
   * `set` is null) and of the intercept. Cost O(n · count).
   */
  private refreshGradient(set: Int32Array | null, count: number): void {
    const { residual, omega, y, prob, xs, n } = this;
    let sum = 0;
    let square = 0;
    for (let i = 0; i < n; i++) {
      const difference = y[i] - prob[i];
      residual[i] = omega[i] * difference;
      sum += residual[i];
      square += residual[i] * difference;
    }
    this.interceptGrad = sum;
    this.residualSquare = square;
    const frozen = this.problem.std.frozen;
    const signal = this.settings.signal;
    const total = set ? count : this.p;
    const grad = this.grad;
    // Four columns per pass over the residual, which is then loaded once for four products.
    let t = 0;
    for (; t + 3 < total; t += 4) {
      if (t % CHECK_EVERY === 0) throwIfCancelled(signal);
      const j0 = set ? set[t] : t;
      const j1 = set ? set[t + 1] : t + 1;
      const j2 = set ? set[t + 2] : t + 2;
      const j3 = set ? set[t + 3] : t + 3;
      const o0 = j0 * n;
      const o1 = j1 * n;
      const o2 = j2 * n;
      const o3 = j3 * n;
      let s0 = 0;
      let s1 = 0;
      let s2 = 0;
      let s3 = 0;
      for (let i = 0; i < n; i++) {
        const r = residual[i];
        s0 += xs[o0 + i] * r;
        s1 += xs[o1 + i] * r;
        s2 += xs[o2 + i] * r;
        s3 += xs[o3 + i] * r;
      }
      grad[j0] = frozen[j0] ? 0 : s0;
      grad[j1] = frozen[j1] ? 0 : s1;
      grad[j2] = frozen[j2] ? 0 : s2;
      grad[j3] = frozen[j3] ? 0 : s3;
    }
    for (; t < total; t++) {
      const j = set ? set[t] : t;
      grad[j] = frozen[j] ? 0 : dotRange(xs, j * n, residual, 0, n);
    }
  }

  /**
   * The absolute level below which a violation counts as met: tolerance × max(λ, floor), or the
   * gradient's rounding (ROUNDING_ALLOWANCE × 2^-52 √m × root mean square of ω(y − p)/√ω-weighted
   * terms, i.e. of √Σ ω (y − p)²), whichever is larger. Reads the sum left by refreshGradient.
   */
  private bar(lambda: number): number {
    const rounding = ROUNDING_ALLOWANCE * 2 ** -52 * Math.sqrt(this.used) * Math.sqrt(this.residualSquare);
    return Math.max(this.settings.tolerance * Math.max(lambda, this.floor), rounding);
  }

  /** Largest absolute violation over the listed coordinates (all free ones when null) and the intercept. */
  private violation(lambda: number, set: Int32Array | null, count: number): number {
    const { mix, multipliers, lower, upper } = this.penalty;
    const frozen = this.problem.std.frozen;
    let worst = this.settings.intercept ? Math.abs(this.interceptGrad) : 0;
    const total = set ? count : this.p;
    for (let t = 0; t < total; t++) {
      const j = set ? set[t] : t;
      if (frozen[j]) continue;
      const v = coordinateViolation(this.grad[j], this.coef[j], lambda, mix, multipliers[j], lower[j], upper[j]);
      if (v > worst) worst = v;
    }
    return worst;
  }

  /** c_j and d_j (see the fields) for this outer step. Cost O(n) the first time in a step. */
  private prepareColumn(j: number): void {
    if (this.curvatureStamp[j] === this.stamp) return;
    const { working, xs, n } = this;
    const off = j * n;
    let sum = 0;
    let square = 0;
    for (let i = 0; i < n; i++) {
      const a = xs[off + i];
      const va = working[i] * a;
      sum += va;
      square += va * a;
    }
    const c = this.settings.intercept ? sum / this.sumWorking : 0;
    // Σ v (x − c)² = Σ v x² − c Σ v x: the v-weighted mean is small next to the spread (the
    // columns are centred in ω), so the subtraction costs no meaningful digits; kept ≥ 0.
    const d = Math.max(square - c * sum, 0);
    this.centre[j] = c;
    this.curvature[j] = d;
    this.curvatureStamp[j] = this.stamp;
  }

  /** One pass of coordinate descent on the quadratic over the listed coordinates, then the intercept. Returns the largest scaled change. */
  private sweep(set: Int32Array, count: number, lambda: number): number {
    const { mix, multipliers, lower, upper } = this.penalty;
    const { coef, xs, residual, working, n } = this;
    const l1 = lambda * mix;
    const l2 = lambda * (1 - mix);
    const signal = this.settings.signal;
    throwIfCancelled(signal);
    let largest = 0;
    for (let t = 0; t < count; t++) {
      if (t % CHECK_EVERY === CHECK_EVERY - 1) throwIfCancelled(signal);
      const j = set[t];
      const off = j * n;
      const g = dotRange(xs, off, residual, 0, n);
      const old = coef[j];
      const m = multipliers[j];
      // A coefficient at 0 whose gradient the soft threshold absorbs stays at 0: no curvature needed.
      if (old === 0 && Math.abs(g) <= l1 * m) continue;
      this.prepareColumn(j);
      const d = this.curvature[j];
      const denominator = d + l2 * m;
      if (!(denominator > 0)) continue;
      let value = softThreshold(g + d * old, l1 * m) / denominator;
      if (value < lower[j]) value = lower[j];
      else if (value > upper[j]) value = upper[j];
      const delta = value - old;
      if (delta === 0) continue;
      coef[j] = value;
      // The intercept moves with the coordinate (profiled out: module comment).
      const c = this.centre[j];
      this.intercept -= delta * c;
      for (let i = 0; i < n; i++) residual[i] -= delta * working[i] * (xs[off + i] - c);
      const change = denominator * Math.abs(delta);
      if (change > largest) largest = change;
    }
    if (this.settings.intercept) {
      let sum = 0;
      for (let i = 0; i < n; i++) sum += residual[i];
      const delta = sum / this.sumWorking;
      if (delta !== 0) {
        this.intercept += delta;
        for (let i = 0; i < n; i++) residual[i] -= delta * working[i];
        const change = this.sumWorking * Math.abs(delta);
        if (change > largest) largest = change;
      }
    }
    this.totalSweeps++;
    return largest;
  }

  /**
   * Solves the current quadratic over the listed coordinates to `limit` (largest scaled change
   * of a full sweep), cycling on the nonzero ones between full sweeps (as descent.ts does).
   * Returns the sweeps used, or -sweeps when the cap stopped it.
   */
  private solveQuadratic(set: Int32Array, count: number, lambda: number, limit: number, sweepsLeft: number): number {
    const active = this.activeBuffer;
    const coef = this.coef;
    if (this.settings.intercept) {
      // The intercept to its optimum first (Σ s = 0), as the profiled updates assume.
      const { residual, working, n } = this;
      let sum = 0;
      for (let i = 0; i < n; i++) sum += residual[i];
      const delta = sum / this.sumWorking;
      this.intercept += delta;
      for (let i = 0; i < n; i++) residual[i] -= delta * working[i];
    }
    let sweeps = 0;
    for (;;) {
      if (sweeps >= sweepsLeft) return -sweeps;
      sweeps++;
      if (this.sweep(set, count, lambda) <= limit) return sweeps;
      let activeCount = 0;
      for (let t = 0; t < count; t++) if (coef[set[t]] !== 0) active[activeCount++] = set[t];
      for (;;) {
        if (sweeps >= sweepsLeft) return -sweeps;
        sweeps++;
        if (this.sweep(active, activeCount, lambda) <= limit) break;
      }
    }
  }

  /**
   * Newton steps (outer loop) at strength λ over the listed coordinates, until their KKT
   * conditions and the intercept's hold (see `bar`). Returns sweeps, steps, halvings and whether
   * it converged; the gradient of the listed coordinates is left exact at the final point.
   */
  private newton(
    lambda: number,
    set: Int32Array,
    count: number,
    budget: { sweeps: number; steps: number },
    covariance: boolean,
    fresh = false,
  ): { converged: boolean; halvings: number } {
    const { coef, previous } = this;
    let halvings = 0;
    if (!fresh) this.refreshGradient(set, count);
    let lastViolation = NaN;
    for (;;) {
      const violation = this.violation(lambda, set, count);
      const bar = this.bar(lambda);
      if (violation <= bar) return { converged: true, halvings };
      if (budget.steps >= MAX_NEWTON_STEPS || budget.sweeps >= this.settings.maxSweeps) return { converged: false, halvings };
      budget.steps++;
      this.totalNewtonSteps++;
      previous.set(coef);
      this.previousEta.set(this.eta);
      const previousIntercept = this.intercept;
      const previousPenalty = this.penaltyValue(lambda);
      // Inexact Newton: solve the quadratic to a fraction of the current violation, and to below the bar at the end.
      const relative = violation / Math.max(lambda, this.floor);
      const limit = Math.max(0.5 * bar, Math.min(0.1, relative) * violation);
      const sweepsLeft = this.settings.maxSweeps - budget.sweeps;
      let used: number;
      if (covariance) {
        if (this.hessianWanted(violation, lastViolation, bar)) this.refreshHessian();
        used = this.covarianceStep(lambda, limit, sweepsLeft);
      } else {
        this.setWorkingWeights();
        used = this.solveQuadratic(set, count, lambda, limit, sweepsLeft);
      }
      lastViolation = violation;
      budget.sweeps += Math.abs(used);
      this.computeEta();
      this.refreshGradient(set, count);
      if (!this.didNotRise(lambda, set, count, previousIntercept, previousPenalty)) {
        // Step control: the objective would rise; halve toward the previous point until it doesn't.
        const before = this.lossOf(this.previousEta) + previousPenalty;
        const limitValue = before + RISE_SLACK * Math.abs(before);
        let halved = 0;
        let after = Infinity;
        while (halved < MAX_HALVINGS) {
          halved++;
          for (let t = 0; t < count; t++) {
            const j = set[t];
            coef[j] = coef[j] / 2 + previous[j] / 2;
          }
          this.intercept = this.intercept / 2 + previousIntercept / 2;
          this.computeEta();
          after = this.objective(lambda);
          if (after <= limitValue) break;
        }
        halvings += halved;
        this.stepHalvings += halved;
        // The stored curvature (covariance form) no longer describes the objective here.
        this.hessianStale = true;
        if (!(after <= limitValue)) {
          // No step along this direction lowers the objective: keep the previous point.
          coef.set(previous);
          this.intercept = previousIntercept;
          this.computeEta();
          this.refreshGradient(set, count);
          return { converged: false, halvings };
        }
        this.refreshGradient(set, count);
      }
      if (used < 0) return { converged: false, halvings };
    }
  }

  /** v_i = ω_i max(p_i(1 − p_i), WEIGHT_FLOOR) at the current fit, and Σ v; a new outer step for the lazy column sums. */
  private setWorkingWeights(): void {
    const { n, omega, prob, working } = this;
    let sumWorking = 0;
    for (let i = 0; i < n; i++) {
      const q = prob[i] * (1 - prob[i]);
      working[i] = omega[i] * (q > WEIGHT_FLOOR ? q : WEIGHT_FLOOR);
      sumWorking += working[i];
    }
    this.sumWorking = sumWorking;
    this.stamp++;
  }

  /**
   * Covariance form: whether to rebuild the stored curvature before this outer step. Always the
   * first time and after a shortened step; otherwise when the last step's contraction of the
   * violation (ratio to the one before) predicts more remaining steps than a rebuild costs. A step
   * costs about two passes over the data (scores and gradient, 2·n·p), a rebuild n·p²/2, and a
   * rebuild also cuts the steps that follow (to about 2 per strength, from 5 or 6 with a curvature
   * many strengths old); measured on random 1000 × 50 paths, rebuilding when more than p/16 steps
   * remain at the current rate took the least time (p/4: 2× the steps; every time: 3× the rebuilds).
   */
  private hessianWanted(violation: number, lastViolation: number, bar: number): boolean {
    if (this.hessianStale || !this.inner) return true;
    if (!(lastViolation > 0)) return false;
    const ratio = violation / lastViolation;
    if (ratio >= 1) return true;
    const remaining = portableLog(bar / violation) / portableLog(ratio);
    return remaining > this.p / 16;
  }

  /**
   * Covariance form, rebuild: working weights v at the current fit, u_j = Σ v x̃_j, and the
   * quadratic's Gram matrix with the intercept profiled out, H_jk = Σ v (x̃_j − c_j)(x̃_k − c_k)
   * = Σ [v (x̃_j − c_j)] x̃_k (the other centring drops out: Σ v (x̃_j − c_j) = 0), c_j = u_j / Σ v.
   * A gram-form problem on H (descent.ts CoordinateDescent, with its active-set Newton step) then
   * solves each outer step's quadratic in O(p) per coordinate update. Cost O(n·p²/2).
   */
  private refreshHessian(): void {
    this.setWorkingWeights();
    const { n, p, xs, working } = this;
    const frozen = this.problem.std.frozen;
    const signal = this.settings.signal;
    const gram = this.hessian ?? new Float64Array(p * p);
    const u = this.columnSums ?? new Float64Array(p);
    this.hessian = gram;
    this.columnSums = u;
    const weighted = this.residualSpare ?? new Float64Array(n);
    this.residualSpare = weighted;
    const curvature = new Float64Array(p);
    gram.fill(0);
    for (let j = 0; j < p; j++) {
      u[j] = 0;
      if (frozen[j]) continue;
      // Column j's products cost n·(p − j): a checkpoint per column keeps them short.
      throwIfCancelled(signal);
      const off = j * n;
      let sum = 0;
      for (let i = 0; i < n; i++) sum += working[i] * xs[off + i];
      u[j] = sum;
      const c = this.settings.intercept ? sum / this.sumWorking : 0;
      for (let i = 0; i < n; i++) weighted[i] = working[i] * (xs[off + i] - c);
      // Four products per pass over the weighted column (frozen columns are zeros: products 0).
      let k = j;
      for (; k + 3 < p; k += 4) {
        const o0 = k * n;
        const o1 = o0 + n;
        const o2 = o1 + n;
        const o3 = o2 + n;
        let s0 = 0;
        let s1 = 0;
        let s2 = 0;
        let s3 = 0;
        for (let i = 0; i < n; i++) {
          const w = weighted[i];
          s0 += w * xs[o0 + i];
          s1 += w * xs[o1 + i];
          s2 += w * xs[o2 + i];
          s3 += w * xs[o3 + i];
        }
        gram[j * p + k] = gram[k * p + j] = s0;
        gram[j * p + k + 1] = gram[(k + 1) * p + j] = s1;
        gram[j * p + k + 2] = gram[(k + 2) * p + j] = s2;
        gram[j * p + k + 3] = gram[(k + 3) * p + j] = s3;
      }
      for (; k < p; k++) {
        const value = dotRange(weighted, 0, xs, k * n, n);
        gram[j * p + k] = value;
        gram[k * p + j] = value;
      }
      curvature[j] = gram[j * p + j];
    }
    const quadratic: TrainingProblem = {
      kind: "gram",
      p,
      n: 0,
      // The inner solver reads the frozen columns and, for its floor, yVariance (1 here: its
      // tolerance is set per step from the absolute limit, see covarianceStep).
      std: { ...this.problem.std, yVariance: 1 },
      curvature,
      cross: new Float64Array(p),
      gram,
      xs: null,
      omega: null,
      yc: null,
    };
    this.innerSettings = { tolerance: this.settings.tolerance, maxSweeps: this.settings.maxSweeps, signal };
    this.inner = new CoordinateDescent(quadratic, this.penalty, this.innerSettings);
    this.hessianStale = false;
    this.hessianBuilds++;
  }

  /**
   * Covariance form, one outer step: the quadratic model of F at the current point with the stored
   * curvature, minimized over b̃ (intercept profiled out) by the gram-form solver:
   *   ½ b̃ᵀHb̃ − cᵀb̃ + penalty,  c = g − u g0/Σv + H b̃_now,
   * whose gradient at b̃_now is the true one (profiled), so its fixed point is F's minimizer;
   * then b0 += (g0 − uᵀδ)/Σv for the step δ. Returns the inner sweeps (negative when capped).
   */
  private covarianceStep(lambda: number, limit: number, sweepsLeft: number): number {
    const inner = this.inner as CoordinateDescent;
    const gram = this.hessian as Float64Array;
    const u = this.columnSums as Float64Array;
    const { p, coef } = this;
    const frozen = this.problem.std.frozen;
    const cross = inner.problem.cross;
    const shift = this.settings.intercept ? this.interceptGrad / this.sumWorking : 0;
    for (let j = 0; j < p; j++) {
      if (frozen[j]) {
        cross[j] = 0;
        continue;
      }
      let value = this.grad[j] - u[j] * shift;
      const off = j * p;
      for (let k = 0; k < p; k++) if (coef[k] !== 0) value += gram[off + k] * coef[k];
      cross[j] = value;
    }
    const settings = this.innerSettings as { tolerance: number; maxSweeps: number };
    settings.tolerance = limit / Math.max(lambda, 1e-6);
    settings.maxSweeps = Math.max(1, sweepsLeft);
    inner.setCoefficients(coef);
    const report = inner.solve(lambda, lambda);
    let along = 0;
    for (let j = 0; j < p; j++) {
      const delta = inner.coef[j] - coef[j];
      if (delta !== 0) along += u[j] * delta;
    }
    coef.set(inner.coef);
    if (this.settings.intercept) this.intercept += (this.interceptGrad - along) / this.sumWorking;
    return report.converged ? report.sweeps : -report.sweeps;
  }

  /**
   * Fits the intercept and the unpenalized predictors (m_j = 0) with every penalized coefficient
   * at zero: the model at the top of the path. The gradient of every predictor is exact after.
   */
  fitUnpenalized(): LogisticReport {
    const frozen = this.problem.std.frozen;
    const set = this.setBuffer;
    let count = 0;
    for (let j = 0; j < this.p; j++) if (!frozen[j] && this.penalty.multipliers[j] === 0) set[count++] = j;
    const budget = { sweeps: 0, steps: 0 };
    // Residual form here whatever the setting: the covariance form's inner solver moves every coordinate.
    const { converged, halvings } = this.newton(0, set, count, budget, false);
    this.refreshGradient(null, 0);
    return { sweeps: budget.sweeps, newtonSteps: budget.steps, converged, kktViolation: 0, strongRuleMisses: 0, stepHalvings: halvings };
  }

  /**
   * Smallest λ at which every penalized coefficient is zero, given the current (unpenalized) fit:
   * max over penalized j of the true gradient in a direction its bounds allow, / (α m_j)
   * (Friedman et al. 2010 §2.5 with the binomial gradient: max_j |x̃_jᵀ W (y − p̂)| / (Σw α m_j)).
   */
  topStrength(mixForTop: number): number {
    const { multipliers, lower, upper } = this.penalty;
    const frozen = this.problem.std.frozen;
    let top = 0;
    for (let j = 0; j < this.p; j++) {
      const m = multipliers[j];
      if (frozen[j] || m === 0) continue;
      const g = this.grad[j];
      let push = 0;
      if (g > 0 && upper[j] > 0) push = g;
      else if (g < 0 && lower[j] < 0) push = -g;
      const value = push / (mixForTop * m);
      if (value > top) top = value;
    }
    return top;
  }

  /**
   * Warm start by linear extrapolation along the path from the last two solutions (as descent.ts
   * does; the solution is a smooth function of λ between changes of the active set): each
   * coefficient nonzero at both steps along its last slope, stopping at zero rather than crossing
   * it, clipped to its bounds; the intercept likewise. Kept only when it does not raise the
   * objective at λ (didNotRise), so it changes the work, never the answer. Returns true when the
   * gradient over `set` (which holds every nonzero coefficient) is exact at the point kept.
   * Cost O(n · nonzero) plus a gradient over the set.
   */
  private extrapolate(lambda: number, set: Int32Array, count: number): boolean {
    const previous = this.solvedLambda;
    const before = this.historyLambda;
    if (!(previous > 0 && before > previous && lambda < previous)) return false;
    const ratio = (lambda - previous) / (previous - before);
    const { lower, upper } = this.penalty;
    const { coef, history } = this;
    this.previous.set(coef);
    this.previousEta.set(this.eta);
    const startPenalty = this.penaltyValue(lambda);
    const startIntercept = this.intercept;
    let moved = false;
    for (let j = 0; j < this.p; j++) {
      const now = coef[j];
      const then = history[j];
      if (now === 0 || then === 0 || now === lower[j] || now === upper[j]) continue;
      let value = now + ratio * (now - then);
      if (value * now <= 0) value = 0;
      if (value < lower[j]) value = lower[j];
      else if (value > upper[j]) value = upper[j];
      if (value !== now) {
        coef[j] = value;
        moved = true;
      }
    }
    if (!moved) return false;
    if (this.settings.intercept) this.intercept = startIntercept + ratio * (startIntercept - this.historyIntercept);
    this.computeEta();
    this.refreshGradient(set, count);
    if (this.didNotRise(lambda, set, count, startIntercept, startPenalty)) return true;
    coef.set(this.previous);
    this.intercept = startIntercept;
    this.eta.set(this.previousEta);
    this.evaluate();
    return false;
  }

  /**
   * Solves at strength λ, warm-started from the current state. `previousLambda` feeds the strong
   * rule (pass λ itself to keep only what the current gradient supports, Infinity to keep all).
   */
  solve(lambda: number, previousLambda: number): LogisticReport {
    const p = this.p;
    const { mix, multipliers, lower, upper } = this.penalty;
    const frozen = this.problem.std.frozen;
    const { strong, coef, grad } = this;
    const set = this.setBuffer;
    const covariance = this.settings.covariance === true;
    // The covariance form's gradient covers every column at each step anyway: no screening there
    // (its inner gram-form solver screens the quadratic's coordinates itself).
    const cut = Number.isFinite(previousLambda) && !covariance ? mix * (2 * lambda - previousLambda) : -Infinity;
    let count = 0;
    for (let j = 0; j < p; j++) {
      const keep = !frozen[j] && (coef[j] !== 0 || multipliers[j] * mix === 0 || Math.abs(grad[j]) >= cut * multipliers[j]);
      strong[j] = keep ? 1 : 0;
      if (keep) set[count++] = j;
    }
    this.spare.set(coef);
    const spareIntercept = this.intercept;
    let fresh = this.extrapolate(lambda, set, count);
    const budget = { sweeps: 0, steps: 0 };
    let converged = true;
    let misses = 0;
    let halvings = 0;
    const l1 = lambda * mix;
    for (;;) {
      const outcome = this.newton(lambda, set, count, budget, covariance, fresh);
      fresh = false;
      halvings += outcome.halvings;
      if (!outcome.converged) {
        converged = false;
        break;
      }
      // KKT check, on the true gradient, of everything the strong rule set aside.
      let added = 0;
      const residual = this.residual;
      const n = this.n;
      for (let j = 0; j < p; j++) {
        if (strong[j] || frozen[j]) continue;
        if (j % CHECK_EVERY === CHECK_EVERY - 1) throwIfCancelled(this.settings.signal);
        const g = dotRange(this.xs, j * n, residual, 0, n);
        grad[j] = g;
        const t = l1 * multipliers[j];
        if ((g > t && upper[j] > 0) || (g < -t && lower[j] < 0)) {
          strong[j] = 1;
          set[count++] = j;
          added++;
        }
      }
      if (added === 0) break;
      misses += added;
    }
    // Converged: the strong set's gradient is exact from the last step and the rest from the
    // check above. Otherwise the rest may be stale: recompute it all.
    if (!converged) this.refreshGradient(null, 0);
    this.history.set(this.spare);
    this.historyIntercept = spareIntercept;
    this.historyLambda = this.solvedLambda;
    this.solvedLambda = lambda;
    return {
      sweeps: budget.sweeps,
      newtonSteps: budget.steps,
      converged,
      kktViolation: this.kktViolation(lambda),
      strongRuleMisses: misses,
      stepHalvings: halvings,
    };
  }

  /** Largest violation over free predictors and the intercept, divided by max(λ, floor). */
  kktViolation(lambda: number): number {
    return this.violation(lambda, null, 0) / Math.max(lambda, this.floor);
  }

  /** True when every row with positive weight has a probability within SATURATION of its class. */
  saturated(): boolean {
    const { prob, y, omega } = this;
    for (let i = 0; i < this.n; i++) {
      if (!(omega[i] > 0)) continue;
      if (y[i] === 1 ? prob[i] < 1 - SATURATION : prob[i] > SATURATION) return false;
    }
    return true;
  }
}

/**
 * Top of the grid for a two-class problem, from a solver at its unpenalized fit:
 * - α > 0: the smallest λ with every penalized coefficient zero (LogisticDescent.topStrength).
 * - α = 0: the λ at which the ridge fit of the quadratic approximation at that fit has RIDGE_TOP_DF
 *   effective degrees of freedom over the penalized terms (path.ts, as for the number outcome). Its
 *   Gram matrix is X̃ᵀVX̃ with V = diag(ω_i p_i(1 − p_i)) at the unpenalized fit, which with an
 *   intercept only is ȳ(1 − ȳ)·X̃ᵀΩX̃ (ȳ the weighted event share): the eigenvalues of
 *   ridgeSpectral.ts penalizedSpectrum on the rows weighted by v instead of ω.
 * Returns 0 when no penalized predictor's gradient can move it from 0.
 */
export function logisticTopStrength(solver: LogisticDescent): number {
  const mix = solver.penalty.mix;
  if (mix > 0) return solver.topStrength(mix);
  if (!(solver.topStrength(1) > 0)) return 0;
  const problem = solver.problem;
  const omega = problem.omega as Float64Array;
  const hessian = new Float64Array(problem.n);
  for (let i = 0; i < problem.n; i++) hessian[i] = omega[i] * solver.prob[i] * (1 - solver.prob[i]);
  const values = penalizedSpectrum({ ...problem, omega: hessian }, solver.penalty.multipliers, solver.settings.signal);
  return strengthForDegreesOfFreedom(values, RIDGE_TOP_DF);
}

export interface LogisticPathSettings {
  /** End the path once every training probability is within SATURATION of its class. */
  stopWhenSaturated: boolean;
  /** End the path once a tenfold drop in strength lowers the loss by less than PLATEAU_GAIN (path.ts). */
  stopWhenFlat: boolean;
  /** Leave the loss and r2 of each point NaN (a cross-validation fold needs neither): saves a pass with logarithms per point. */
  skipLoss?: boolean;
  signal?: CancelSignal;
}

export interface LogisticRun extends PathRun {
  /** b0 on the standardized scale at each computed strength. */
  intercepts: number[];
  /** The loss (half the deviance per unit weight) at each computed strength. */
  losses: number[];
  /** Outer steps whose objective would have risen, halved (all strengths). */
  stepHalvings: number;
  newtonSteps: number;
}

/**
 * Solves down `strengths` (decreasing) from the solver's current state (its unpenalized fit,
 * `start` the report of that fit), each point warm-started from the previous one. r2 is the
 * share of the null deviance explained: 1 − loss / null loss.
 */
export function runLogisticPath(
  solver: LogisticDescent,
  start: LogisticReport,
  strengths: readonly number[],
  settings: LogisticPathSettings,
): LogisticRun {
  const run: LogisticRun = {
    strengths: [],
    coefficients: [],
    r2: [],
    nonzero: [],
    sweeps: start.sweeps,
    maxKktViolation: 0,
    notConverged: start.converged ? [] : [0],
    strongRuleMisses: 0,
    earlyStop: null,
    solver: "descent",
    intercepts: [],
    losses: [],
    stepHalvings: start.stepHalvings,
    newtonSteps: start.newtonSteps,
  };
  let anchor = 0;
  const endsAt = (k: number, loss: number): EarlyStop | null => {
    if (k + 1 === strengths.length) return null;
    if (settings.stopWhenSaturated && solver.saturated()) return "saturated";
    if (settings.stopWhenFlat) {
      const reach = PLATEAU_SPAN * strengths[k] * (1 - 1e-9);
      while (anchor + 1 < k && strengths[anchor + 1] >= reach) anchor++;
      if (strengths[anchor] >= reach && run.losses[anchor] - loss < PLATEAU_GAIN * run.losses[anchor]) return "no-gain";
    }
    return null;
  };
  for (let k = 0; k < strengths.length; k++) {
    throwIfCancelled(settings.signal);
    const lambda = strengths[k];
    const report = solver.solve(lambda, k === 0 ? lambda : strengths[k - 1]);
    run.sweeps += report.sweeps;
    run.newtonSteps += report.newtonSteps;
    run.strongRuleMisses += report.strongRuleMisses;
    run.stepHalvings += report.stepHalvings;
    if (!report.converged) run.notConverged.push(k);
    if (report.kktViolation > run.maxKktViolation) run.maxKktViolation = report.kktViolation;
    const loss = settings.skipLoss ? NaN : solver.loss();
    const coef = Float64Array.from(solver.coef);
    let nonzero = 0;
    for (let j = 0; j < coef.length; j++) if (coef[j] !== 0) nonzero++;
    const stop = endsAt(k, loss);
    run.strengths.push(lambda);
    run.coefficients.push(coef);
    run.intercepts.push(solver.intercept);
    run.r2.push(1 - loss / solver.nullLoss);
    run.nonzero.push(nonzero);
    run.losses.push(loss);
    if (stop !== null) {
      run.earlyStop = stop;
      break;
    }
  }
  return run;
}
