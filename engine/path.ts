/**
 * The strength grid and one path of solutions down it, warm-started point to point.
 */
import { CancelledError, CancelSignal } from "./errors";
import { CoordinateDescent, DescentSettings, PenaltySpec } from "./descent";
import { portableExp, portableLog } from "./elementary";
import type { TrainingProblem } from "./problem";
import { SpectralRidge } from "./ridgeSpectral";

/** Mix used in place of α = 0 to define the top of a ridge grid (λ_max would be infinite). */
export const RIDGE_TOP_MIX = 0.001;

/**
 * Path stops once the fraction of variance explained reaches this value…
 * (Friedman, Hastie & Tibshirani 2010 §2.5 stop the path when the fit saturates.)
 */
export const SATURATED_R2 = 0.999;
/** …or improves by less than this fraction of itself from one strength to the next. */
export const SATURATED_GAIN = 1e-5;
/** Points always computed before the saturation test may stop a path. */
export const MIN_POINTS_BEFORE_STOP = 5;

/**
 * Log-spaced strengths from `top` down to `top × lowEndRatio`, `count` values.
 * Cost O(count). @example strengthGrid(1, 3, 0.01) // [1, 0.1, 0.01]
 */
export function strengthGrid(top: number, count: number, lowEndRatio: number): number[] {
  if (count === 1) return [top];
  const out = new Array<number>(count);
  // portableLog/portableExp rather than Math.log/Math.exp: the same grid, bit for bit, in every
  // JavaScript engine (the add-in's worker and the command line), so fits down it are too.
  const logTop = portableLog(top);
  const step = portableLog(lowEndRatio) / (count - 1);
  for (let k = 0; k < count; k++) out[k] = portableExp(logTop + k * step);
  out[0] = top;
  return out;
}

export type { CancelSignal } from "./errors";

export interface PathSettings extends DescentSettings {
  /** Stop when the fit saturates (see SATURATED_R2 / SATURATED_GAIN). */
  stopWhenSaturated: boolean;
  /** Use the eigendecomposition for ridge when allowed (exact, faster); else coordinate descent. */
  exactRidge: boolean;
  signal?: CancelSignal;
}

export interface PathRun {
  /** Strengths actually computed (a prefix of the grid when the path stopped early). */
  strengths: number[];
  /** Standardized coefficients, one array per computed strength. */
  coefficients: Float64Array[];
  /** Fraction of the (weighted) variance of y explained on the training rows. */
  r2: number[];
  nonzero: number[];
  sweeps: number;
  /** Largest KKT violation relative to λ over every point and predictor. */
  maxKktViolation: number;
  /** Indices of strengths at which the sweep cap was hit. */
  notConverged: number[];
  strongRuleMisses: number;
  /** True when the saturation test ended the path before the grid's end. */
  stoppedEarly: boolean;
  solver: "descent" | "spectral";
}

/**
 * Largest row count for the residual form's n × n kernel factorization when rows outnumber
 * predictors (residual updates asked for on tall data): beyond it the kernel would not fit in
 * memory (100000 rows: 80 GB), and coordinate descent solves the ridge path instead.
 */
export const MAX_KERNEL_ROWS = 2000;

/**
 * True when the exact eigendecomposition path applies (α = 0, positive multipliers, no bounds;
 * in residual form, at most max(p, MAX_KERNEL_ROWS) rows).
 */
export function spectralApplies(problem: TrainingProblem, penalty: PenaltySpec): boolean {
  if (penalty.mix !== 0) return false;
  if (problem.kind === "naive" && problem.n > Math.max(problem.p, MAX_KERNEL_ROWS)) return false;
  for (let j = 0; j < problem.p; j++) {
    if (problem.std.frozen[j]) continue;
    if (!(penalty.multipliers[j] > 0)) return false;
    if (Number.isFinite(penalty.lower[j]) || Number.isFinite(penalty.upper[j])) return false;
  }
  return true;
}

/**
 * Top of the grid for this problem and penalty: fits the unpenalized predictors, then the
 * smallest λ with every penalized coefficient zero (α replaced by RIDGE_TOP_MIX when α = 0).
 * Returns 0 when nothing is left to explain.
 */
export function topStrength(problem: TrainingProblem, penalty: PenaltySpec, settings: DescentSettings): number {
  const solver = new CoordinateDescent(problem, penalty, settings);
  solver.fitUnpenalized();
  return solver.topStrength(penalty.mix > 0 ? penalty.mix : RIDGE_TOP_MIX);
}

/**
 * Solves down `strengths` (decreasing), each point warm-started from the previous one.
 * Cost per point: sweeps × (active set × p) in gram form, sweeps × (active set × n) in
 * naive form, plus one O(n·p) KKT pass in naive form; the spectral ridge path costs one
 * factorization, then O(p²) or O(n·p) per point.
 */
export function runPath(
  problem: TrainingProblem,
  penalty: PenaltySpec,
  strengths: readonly number[],
  settings: PathSettings,
): PathRun {
  const solver = new CoordinateDescent(problem, penalty, settings);
  const top = solver.fitUnpenalized();
  const spectral = settings.exactRidge && spectralApplies(problem, penalty) ? new SpectralRidge(problem, penalty.multipliers, settings.signal) : null;
  const run: PathRun = {
    strengths: [],
    coefficients: [],
    r2: [],
    nonzero: [],
    sweeps: top.sweeps,
    maxKktViolation: 0,
    notConverged: top.converged ? [] : [0],
    strongRuleMisses: 0,
    stoppedEarly: false,
    solver: spectral ? "spectral" : "descent",
  };
  const yVariance = problem.std.yVariance;
  const exact = new Float64Array(problem.p);
  for (let k = 0; k < strengths.length; k++) {
    if (settings.signal?.aborted) throw new CancelledError();
    const lambda = strengths[k];
    let kkt: number;
    let r2: number;
    if (spectral) {
      spectral.coefficientsAt(lambda, exact);
      // The residual's size comes from the factorization (O(n) or O(p)); the gradient, which
      // costs a pass over the data in residual form, is rebuilt to certify the path's ends
      // (gram form: every point, it is cheap there).
      r2 = yVariance > 0 ? 1 - spectral.residualMeanSquareAt(lambda) / yVariance : 0;
      if (problem.kind === "gram" || k === 0 || k === strengths.length - 1) {
        solver.setCoefficients(exact);
        kkt = solver.kktViolation(lambda);
      } else {
        kkt = 0;
      }
    } else {
      const report = solver.solve(lambda, k === 0 ? lambda : strengths[k - 1]);
      run.sweeps += report.sweeps;
      run.strongRuleMisses += report.strongRuleMisses;
      if (!report.converged) run.notConverged.push(k);
      kkt = report.kktViolation;
      r2 = yVariance > 0 ? 1 - solver.residualMeanSquare() / yVariance : 0;
    }
    if (kkt > run.maxKktViolation) run.maxKktViolation = kkt;
    const coef = Float64Array.from(spectral ? exact : solver.coef);
    let nonzero = 0;
    for (let j = 0; j < coef.length; j++) if (coef[j] !== 0) nonzero++;
    run.strengths.push(lambda);
    run.coefficients.push(coef);
    run.r2.push(r2);
    run.nonzero.push(nonzero);
    if (settings.stopWhenSaturated && k + 1 >= MIN_POINTS_BEFORE_STOP && k + 1 < strengths.length) {
      const previous = run.r2[k - 1];
      if (r2 >= SATURATED_R2 || r2 - previous < SATURATED_GAIN * r2) {
        run.stoppedEarly = true;
        break;
      }
    }
  }
  return run;
}
