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
 *   p(1 − p) (p and 1 − p each computed from e^−|η|, so both tails keep their digits) is kept at
 *   or above WEIGHT_FLOOR. That changes only the curvature of the approximation: its gradient at
 *   the current fit, Σ v_i x̃_ij (z_i − η_i) = Σ ω_i x̃_ij (y_i − p_i), is the true one whatever
 *   the floor, so the fixed point is the true minimizer.
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
 *   (b0 += Σ s / Σ v) to clear rounding. When descent crawls (strongly correlated columns), the
 *   step's quadratic is finished in gram form on the active columns (buildModel: descent.ts
 *   CoordinateDescent, with its active-set Newton step), as the number outcome's solver does.
 * - Covariance form (settings.covariance, rows ≫ predictors): the quadratic's curvature matrix on
 *   the working set (the strong set and every column the stored matrix already has) is stored and
 *   reused across steps and strengths, rebuilt only when the steps stop contracting fast enough to
 *   pay for it (hessianWanted); columns that join the working set border it (their rows only, with
 *   the same working weights: extendModel). Each step then minimizes that model with the true
 *   gradient at the current point (a proximal Newton method with an inexact Hessian, Lee, Sun &
 *   Saunders 2014, SIAM J. Optim. 24(3)), at O(working set) per coordinate update instead of O(n).
 * - Inexact Newton: each quadratic is solved only to a fraction of the current violation of the
 *   optimality conditions (forcing term min(0.1, violation); Dembo, Eisenstat & Steihaug 1982,
 *   SIAM J. Numer. Anal. 19(2)): early steps are cheap and the convergence stays fast.
 * - Step control: the true penalized objective F must not rise from one outer step to the next
 *   (beyond RISE_SLACK of its value, the rounding of its sum); when it would, the step is halved
 *   toward the previous point until it doesn't (counted in stepHalvings). The check needs no
 *   logarithms when convexity already proves the decrease (didNotRise).
 * - Warm starts: each strength starts from the previous solution extrapolated linearly along the
 *   path (as descent.ts does), kept only when it does not raise F.
 * - Convergence: the optimality (KKT) conditions of F itself, with the true gradient
 *   g_j = Σ ω_i x̃_ij (y_i − p_i): every coordinate's violation (descent.ts coordinateViolation)
 *   and the intercept's, |Σ ω_i (y_i − p_i)|, at most `tolerance` × max(λ, floor) (floor =
 *   1e-6 × the event indicator's SD, as the number outcome's floor is 1e-6 × the target's), or
 *   at most ROUNDING_ALLOWANCE times the rounding a sum over the rows carries, whichever is
 *   larger (below it no step can make progress). The outer loop is capped at MAX_NEWTON_STEPS
 *   per strength and the sweeps at the sweep cap; hitting either is reported (converged = false).
 * - Screening: the sequential strong rule (Tibshirani et al. 2012, JRSS-B 74(2), eq. 7) on the
 *   true gradient at the previous strength, in both forms; steps compute the gradient over the
 *   working set only, and after convergence every discarded predictor's KKT condition is checked
 *   on the true gradient and violators are added back.
 *
 * Separation (a rule of our own): when the classes can be separated, the fitted probabilities
 * run to 0 and 1 as λ falls and the coefficients grow without bound (like log(1/λ)). `saturated`
 * says when the fit explains all but SATURATION (1e-5) of the null deviance, i.e. the deviance
 * explained exceeds 1 − 1e-5: the training classes are reproduced almost exactly. The full-data
 * path ends there (fit.ts, early stop "saturated"), as the number outcome's path ends at an exact
 * fit: weaker strengths would only stretch the same separating direction. (Of the two rules one
 * could use, this one rather than "every probability within 1e-5 of its class": on separated data
 * the lasso's KKT conditions give the rows nearest the boundary e^−|η| ≈ n·λ, so probabilities
 * come within 1e-5 only below λ ≈ 1e-5/n, far under a default grid, while the deviance left is
 * about λ itself and falls below 1e-5 of the null deviance near the default grid's low end.)
 *
 * All exponentials and logarithms are the portable ones (portableMath.ts, via logistic and
 * softplus), so fits are bit-identical in Node and in the browser.
 */
import { softplusFrom } from "./classMetrics";
import { coordinateViolation, CoordinateDescent, PenaltySpec, softThreshold, topFromGradient } from "./descent";
import { CancelSignal, throwIfCancelled } from "./errors";
import { logisticFrom } from "./model";
import type { EarlyStop, PathRun } from "./path";
import { PLATEAU_GAIN, PLATEAU_SPAN, RIDGE_TOP_DF } from "./path";
import { portableLog, tableExp } from "./portableMath";
import { dotRange, TrainingProblem } from "./problem";
import { penalizedSpectrum, strengthForDegreesOfFreedom } from "./ridgeSpectral";

/**
 * Smallest p(1 − p) used as a working weight (the true one falls to 0 as p runs to 0 or 1): 2^-53,
 * about where a probability computed as 1/(1 + e^−η) rounds to exactly 0 or 1 (|η| near 37). It
 * only keeps Σ v and every d_j positive. A larger floor (1e-5 is often suggested) overstates the
 * curvature of the rows already decided, and on separated classes, where those rows are most of
 * the data, the steps shrink by that factor: measured, fits at strengths below about 1e-7 then hit
 * the step cap instead of converging in a few steps.
 */
export const WEIGHT_FLOOR = 2 ** -53;
/** The saturation rule: a fit that leaves at most this share of the null deviance (module comment). */
export const SATURATION = 1e-5;
/** Most outer (Newton) steps at one strength. Warm-started, a strength typically takes 2 to 5. */
export const MAX_NEWTON_STEPS = 100;
/** Most halvings of one outer step before it is abandoned (2^-60: the step has vanished). */
export const MAX_HALVINGS = 60;
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
  /**
   * Called after every accepted outer step with the objective before and after it (both computed
   * exactly for the call: a test hook, it costs two passes with logarithms per step).
   */
  onStep?: (step: { lambda: number; before: number; after: number; halvings: number }) => void;
}

/** A quadratic model of the objective on some columns, and the gram-form solver on it (LogisticDescent.buildModel). */
interface CurvatureModel {
  /** The model's columns (global indices) and their number. */
  columns: Int32Array;
  count: number;
  /** count × count Gram matrix with the intercept profiled out, and u_t = Σ v x̃_t. */
  gram: Float64Array;
  sums: Float64Array;
  sumWorking: number;
  inner: CoordinateDescent;
  innerSettings: { tolerance: number; maxSweeps: number; signal?: CancelSignal };
  /** The model's coefficients at the start of a step (buffer). */
  start: Float64Array;
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
  /** 1 − p, computed as its own quotient (not by subtraction), so it keeps its digits as p nears 1. */
  readonly complement: Float64Array;
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
  private model: CurvatureModel | null = null;
  /** Covariance form: 1 for the columns of the stored model. */
  private readonly inModel: Uint8Array;
  private pairBuffer: Float64Array | null = null;
  private hessianStale = true;
  /** Covariance form: how many times the curvature was rebuilt. */
  hessianBuilds = 0;
  /** Residual form: outer steps whose quadratic was finished in gram form on the active columns. */
  modelSteps = 0;
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
    this.complement = new Float64Array(n);
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
    this.inModel = new Uint8Array(p);
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

  /**
   * The probabilities p = logistic(η) at the current scores (model.ts: the same values as
   * logistic) and their complements 1 − p = logistic(−η), each as a quotient of e^−|η|, so that
   * y − p and p(1 − p) keep their digits in both tails. Cost O(n).
   */
  private evaluate(): void {
    const { eta, prob, complement } = this;
    for (let i = 0; i < this.n; i++) {
      if (i % ROWS_PER_CHECK === ROWS_PER_CHECK - 1) throwIfCancelled(this.settings.signal);
      const score = eta[i];
      const e = tableExp(score > 0 ? -score : score);
      prob[i] = logisticFrom(score, e);
      complement[i] = logisticFrom(-score, e);
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
      sum += omega[i] * softplusFrom(y[i] === 1 ? -score : score, tableExp(score > 0 ? -score : score));
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
    const { residual, omega, y, prob, complement, xs, n } = this;
    let sum = 0;
    let square = 0;
    for (let i = 0; i < n; i++) {
      const difference = y[i] === 1 ? complement[i] : -prob[i];
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
      if (old === 0 && (g > 0 ? g : -g) <= l1 * m) continue;
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
      const change = denominator * (delta > 0 ? delta : -delta);
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
      let previousChange = Infinity;
      for (;;) {
        if (sweeps >= sweepsLeft) return -sweeps;
        sweeps++;
        const change = this.sweep(active, activeCount, lambda);
        if (change <= limit) break;
        // Crawling (strongly correlated columns, e.g. uncentred ones without an intercept): when
        // the sweeps still needed at the current rate would cost more than a Gram matrix of the
        // active columns (n·a²/2 to build, about a³/6 for the inner solver's Newton step), solve
        // this step's quadratic on those columns in gram form instead (buildModel).
        const rate = change / previousChange;
        previousChange = change;
        if (rate < 1 && activeCount > 0) {
          const remaining = portableLog(limit / change) / portableLog(rate);
          const sweepCost = 3 * this.n * activeCount;
          const modelCost = (this.n * activeCount * activeCount) / 2 + (activeCount * activeCount * activeCount) / 6;
          if (remaining * sweepCost > modelCost) return this.activeModelStep(active, activeCount, lambda, limit, sweepsLeft - sweeps, sweeps);
        }
      }
    }
  }

  /**
   * Residual form, when descent crawls: this step's quadratic (its current working weights) on the
   * active columns, in gram form. The model's gradient at the current point is the quadratic's,
   * from the working residual s (Σ x̃_j s, and Σ s for the intercept). Coordinates outside the
   * active set stay where they are; the outer loop's checks bring them in if they should move.
   * Returns the sweeps used in all (negative when capped).
   */
  private activeModelStep(active: Int32Array, activeCount: number, lambda: number, limit: number, sweepsLeft: number, sweepsSoFar: number): number {
    const { residual, xs, n } = this;
    let interceptGradient = 0;
    for (let i = 0; i < n; i++) interceptGradient += residual[i];
    const model = this.buildModel(active, activeCount);
    const columns = model.columns;
    const used = this.modelStep(model, lambda, limit, sweepsLeft, (t) => dotRange(xs, columns[t] * n, residual, 0, n), interceptGradient);
    this.modelSteps++;
    return used < 0 ? -(sweepsSoFar - used) : sweepsSoFar + used;
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
      const halvingsBefore = halvings;
      // Inexact Newton: solve the quadratic to a fraction of the current violation, and to below the bar at the end.
      const relative = violation / Math.max(lambda, this.floor);
      const limit = Math.max(0.5 * bar, Math.min(0.1, relative) * violation);
      const sweepsLeft = this.settings.maxSweeps - budget.sweeps;
      let used: number;
      if (covariance) {
        if (this.hessianWanted(violation, lastViolation, bar)) this.refreshHessian(set, count);
        else if (!this.modelCovers(set, count)) this.extendModel(set, count);
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
      if (this.settings.onStep) {
        const halved = halvings - halvingsBefore;
        this.settings.onStep({ lambda, before: this.lossOf(this.previousEta) + previousPenalty, after: this.objective(lambda), halvings: halved });
      }
      if (used < 0) return { converged: false, halvings };
    }
  }

  /** v_i = ω_i max(p_i(1 − p_i), WEIGHT_FLOOR) at the current fit, and Σ v; a new outer step for the lazy column sums. */
  private setWorkingWeights(): void {
    const { n, omega, prob, complement, working } = this;
    let sumWorking = 0;
    for (let i = 0; i < n; i++) {
      const q = prob[i] * complement[i];
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
    if (this.hessianStale || !this.model) return true;
    if (!(lastViolation > 0)) return false;
    const ratio = violation / lastViolation;
    if (ratio >= 1) return true;
    const remaining = portableLog(bar / violation) / portableLog(ratio);
    return remaining > this.p / 16;
  }

  /**
   * The quadratic model on a set of columns (global indices `columns[0..count)`), with the
   * working weights v in place: u_t = Σ v x̃_t, and the Gram matrix with the intercept profiled
   * out, H_ts = Σ v (x̃_t − c_t)(x̃_s − c_s) = Σ [v (x̃_t − c_t)] x̃_s (the other centring drops
   * out: Σ v (x̃_t − c_t) = 0), c_t = u_t / Σ v. A gram-form problem on H (descent.ts
   * CoordinateDescent, with its active-set Newton step) then solves the model's quadratic in O(count)
   * per coordinate update. Cost O(n·count²/2).
   */
  private buildModel(columns: Int32Array, count: number, base: CurvatureModel | null = null): CurvatureModel {
    const { n, p, xs, working } = this;
    const frozen = this.problem.std.frozen;
    const signal = this.settings.signal;
    const gram = new Float64Array(count * count);
    const sums = new Float64Array(count);
    // Extending `base` (same working weights, its columns first): its entries are copied, and only
    // the pairs with a new column are summed.
    const known = base ? base.count : 0;
    if (base) for (let a = 0; a < known; a++) gram.set(base.gram.subarray(a * known, (a + 1) * known), a * count);
    const curvature = new Float64Array(count);
    const subFrozen = new Uint8Array(count);
    // Two weighted columns at a time, each pass over the rows making 2 × 4 products (8 running
    // sums from 6 loads): the build is the covariance form's largest cost.
    const pair = this.pairBuffer ?? new Float64Array(2 * n);
    this.pairBuffer = pair;
    const weigh = (a: number, into: number): void => {
      const j = columns[a];
      subFrozen[a] = frozen[j];
      if (frozen[j]) {
        pair.fill(0, into, into + n);
        return;
      }
      const off = j * n;
      let sum = 0;
      for (let i = 0; i < n; i++) sum += working[i] * xs[off + i];
      sums[a] = sum;
      const c = this.settings.intercept ? sum / this.sumWorking : 0;
      for (let i = 0; i < n; i++) pair[into + i] = working[i] * (xs[off + i] - c);
    };
    for (let a = 0; a < count; a += 2) {
      // Columns a and a + 1 cost n·(count − a) products each: a checkpoint per pair keeps them short.
      throwIfCancelled(signal);
      const two = a + 1 < count;
      weigh(a, 0);
      if (two) weigh(a + 1, n);
      else pair.fill(0, n, 2 * n);
      let b = a + 1 < known ? known : a;
      for (; b + 3 < count; b += 4) {
        const o0 = columns[b] * n;
        const o1 = columns[b + 1] * n;
        const o2 = columns[b + 2] * n;
        const o3 = columns[b + 3] * n;
        let s00 = 0;
        let s01 = 0;
        let s02 = 0;
        let s03 = 0;
        let s10 = 0;
        let s11 = 0;
        let s12 = 0;
        let s13 = 0;
        for (let i = 0; i < n; i++) {
          const u = pair[i];
          const v = pair[n + i];
          const x0 = xs[o0 + i];
          const x1 = xs[o1 + i];
          const x2 = xs[o2 + i];
          const x3 = xs[o3 + i];
          s00 += u * x0;
          s01 += u * x1;
          s02 += u * x2;
          s03 += u * x3;
          s10 += v * x0;
          s11 += v * x1;
          s12 += v * x2;
          s13 += v * x3;
        }
        // Entries on or above the diagonal only, mirrored: the matrix is exactly symmetric.
        const row = a * count;
        gram[row + b] = gram[b * count + a] = s00;
        gram[row + b + 1] = gram[(b + 1) * count + a] = s01;
        gram[row + b + 2] = gram[(b + 2) * count + a] = s02;
        gram[row + b + 3] = gram[(b + 3) * count + a] = s03;
        if (two) {
          const next = row + count;
          if (b >= a + 1) gram[next + b] = gram[b * count + a + 1] = s10;
          gram[next + b + 1] = gram[(b + 1) * count + a + 1] = s11;
          gram[next + b + 2] = gram[(b + 2) * count + a + 1] = s12;
          gram[next + b + 3] = gram[(b + 3) * count + a + 1] = s13;
        }
      }
      for (; b < count; b++) {
        const off = columns[b] * n;
        const first = dotRange(pair, 0, xs, off, n);
        gram[a * count + b] = gram[b * count + a] = first;
        if (two && b >= a + 1) {
          const second = dotRange(pair, n, xs, off, n);
          gram[(a + 1) * count + b] = gram[b * count + a + 1] = second;
        }
      }
    }
    for (let a = 0; a < count; a++) curvature[a] = gram[a * count + a];
    let whole = count === p;
    for (let a = 0; whole && a < count; a++) whole = columns[a] === a;
    const pick = (values: Float64Array): Float64Array => (whole ? values : Float64Array.from(columns.subarray(0, count), (j) => values[j]));
    const penalty: PenaltySpec = whole
      ? this.penalty
      : { mix: this.penalty.mix, multipliers: pick(this.penalty.multipliers), lower: pick(this.penalty.lower), upper: pick(this.penalty.upper) };
    const quadratic: TrainingProblem = {
      kind: "gram",
      p: count,
      n: 0,
      // The inner solver reads the frozen columns and, for its floor, yVariance (1 here: its
      // tolerance is set per step from the absolute limit, see modelStep).
      std: { ...this.problem.std, frozen: subFrozen, yVariance: 1 },
      curvature,
      cross: new Float64Array(count),
      gram,
      xs: null,
      omega: null,
      yc: null,
    };
    const innerSettings = { tolerance: this.settings.tolerance, maxSweeps: this.settings.maxSweeps, signal };
    return {
      columns: whole ? columns : columns.slice(0, count),
      count,
      gram,
      sums,
      sumWorking: this.sumWorking,
      inner: new CoordinateDescent(quadratic, penalty, innerSettings),
      innerSettings,
      start: new Float64Array(count),
    };
  }

  /** Covariance form: whether the stored model's columns are exactly the listed ones. */
  private modelCovers(set: Int32Array, count: number): boolean {
    const model = this.model;
    if (!model || model.count !== count) return false;
    for (let t = 0; t < count; t++) if (!this.inModel[set[t]]) return false;
    return true;
  }

  /**
   * Covariance form, new columns in the working set: the stored model (same working weights) is
   * bordered with their rows, at O(n · new · count) instead of a rebuild's O(n · count² / 2). The
   * working set holds every column of the model (solve), else this is a rebuild.
   */
  private extendModel(set: Int32Array, count: number): void {
    const old = this.model as CurvatureModel;
    const columns = new Int32Array(count);
    columns.set(old.columns.subarray(0, old.count));
    let k = old.count;
    for (let t = 0; t < count; t++) {
      const j = set[t];
      if (this.inModel[j]) continue;
      if (k === count) break;
      columns[k++] = j;
    }
    if (k !== count) {
      this.refreshHessian(set, count);
      return;
    }
    this.model = this.buildModel(columns, count, old);
    for (let t = count - 1; t >= old.count; t--) this.inModel[columns[t]] = 1;
  }

  /** Covariance form, rebuild: working weights at the current fit and the model on the listed columns (the working set). */
  private refreshHessian(set: Int32Array, count: number): void {
    this.setWorkingWeights();
    const old = this.model;
    if (old) for (let a = 0; a < old.count; a++) this.inModel[old.columns[a]] = 0;
    this.model = this.buildModel(set, count);
    for (let t = 0; t < count; t++) this.inModel[set[t]] = 1;
    this.hessianStale = false;
    this.hessianBuilds++;
  }

  /**
   * One solve of a quadratic model of F at the current point, minimized over the model's
   * coefficients (the intercept profiled out) by its gram-form solver:
   *   ½ b̃ᵀHb̃ − cᵀb̃ + penalty,  c = g − u g0/Σv + H b̃_now,
   * where g and g0 are the gradients the model should have at b̃_now (`gradient(t)` for column t
   * of the model, and `interceptGradient`): the true ones in covariance form, so the fixed point
   * is F's minimizer. Then b0 += (g0 − uᵀδ)/Σv for the step δ. Returns the inner sweeps (negative
   * when capped).
   */
  private modelStep(model: CurvatureModel, lambda: number, limit: number, sweepsLeft: number, gradient: (t: number) => number, interceptGradient: number): number {
    const { inner, gram, sums, columns, count, start } = model;
    const coef = this.coef;
    const frozen = inner.problem.std.frozen;
    const cross = inner.problem.cross;
    const shift = this.settings.intercept ? interceptGradient / model.sumWorking : 0;
    for (let a = 0; a < count; a++) start[a] = coef[columns[a]];
    for (let a = 0; a < count; a++) {
      if (frozen[a]) {
        cross[a] = 0;
        continue;
      }
      let value = gradient(a) - sums[a] * shift;
      const off = a * count;
      for (let b = 0; b < count; b++) if (start[b] !== 0) value += gram[off + b] * start[b];
      cross[a] = value;
    }
    model.innerSettings.tolerance = limit / Math.max(lambda, 1e-6);
    model.innerSettings.maxSweeps = Math.max(1, sweepsLeft);
    inner.setCoefficients(start);
    const report = inner.solve(lambda, lambda);
    let along = 0;
    for (let a = 0; a < count; a++) {
      const delta = inner.coef[a] - start[a];
      if (delta !== 0) along += sums[a] * delta;
      coef[columns[a]] = inner.coef[a];
    }
    if (this.settings.intercept) this.intercept += (interceptGradient - along) / model.sumWorking;
    return report.converged ? report.sweeps : -report.sweeps;
  }

  /** Covariance form, one outer step on the stored model, with the true gradients. */
  private covarianceStep(lambda: number, limit: number, sweepsLeft: number): number {
    const grad = this.grad;
    const model = this.model as CurvatureModel;
    const columns = model.columns;
    return this.modelStep(model, lambda, limit, sweepsLeft, (t) => grad[columns[t]], this.interceptGrad);
  }

  /**
   * Moves the state to the given standardized intercept and coefficients (frozen columns stay 0;
   * bounds are the caller's business), e.g. to warm-start from a model fitted elsewhere. The next
   * solve starts there. Cost O(n · p).
   */
  startFrom(intercept: number, coefficients: ArrayLike<number>): void {
    const frozen = this.problem.std.frozen;
    for (let j = 0; j < this.p; j++) this.coef[j] = frozen[j] ? 0 : coefficients[j];
    this.intercept = this.settings.intercept ? intercept : 0;
    this.computeEta();
    this.refreshGradient(null, 0);
    this.solvedLambda = NaN;
    this.historyLambda = NaN;
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
    return topFromGradient(this.grad, this.penalty, this.problem.std.frozen, mixForTop);
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
    const cut = Number.isFinite(previousLambda) ? mix * (2 * lambda - previousLambda) : -Infinity;
    let count = 0;
    for (let j = 0; j < p; j++) {
      const keep = !frozen[j] && (coef[j] !== 0 || multipliers[j] * mix === 0 || Math.abs(grad[j]) >= cut * multipliers[j]);
      strong[j] = keep ? 1 : 0;
      if (keep) set[count++] = j;
    }
    if (covariance && this.model) {
      // Covariance form: the stored model's columns join the working set (their gradient feeds
      // the model), so the model is reused as it is, or bordered with the new strong columns.
      count = 0;
      for (let j = 0; j < p; j++) {
        if (this.inModel[j]) strong[j] = 1;
        if (strong[j]) set[count++] = j;
      }
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

  /** True when the fit leaves at most SATURATION of the null deviance (module comment). Cost O(n). */
  saturated(): boolean {
    return isSaturated(this.loss(), this.nullLoss);
  }

  /** True when every row with positive weight has a probability within `distance` of its class. */
  probabilitiesWithin(distance: number): boolean {
    const { prob, complement, y, omega } = this;
    for (let i = 0; i < this.n; i++) {
      if (!(omega[i] > 0)) continue;
      if ((y[i] === 1 ? complement[i] : prob[i]) > distance) return false;
    }
    return true;
  }
}

/** The saturation rule (module comment): the loss at most SATURATION of the null model's. */
function isSaturated(loss: number, nullLoss: number): boolean {
  return loss <= SATURATION * nullLoss;
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
  for (let i = 0; i < problem.n; i++) hessian[i] = omega[i] * solver.prob[i] * solver.complement[i];
  const values = penalizedSpectrum({ ...problem, omega: hessian }, solver.penalty.multipliers, solver.settings.signal);
  return strengthForDegreesOfFreedom(values, RIDGE_TOP_DF);
}

export interface LogisticPathSettings {
  /** End the path once the fit leaves at most SATURATION of the null deviance (see saturated). */
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
    if (settings.stopWhenSaturated && isSaturated(loss, solver.nullLoss)) return "saturated";
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
