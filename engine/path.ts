/**
 * The strength grid and one path of solutions down it, warm-started point to point.
 */
import { CancelledError, CancelSignal } from "./errors";
import { CoordinateDescent, DescentSettings, PenaltySpec } from "./descent";
import { portableExp, portableLog } from "./portableMath";
import type { TrainingProblem } from "./problem";
import { penalizedSpectrum, sharedSpectralRidge, SpectralRidge, strengthForDegreesOfFreedom } from "./ridgeSpectral";

/**
 * Effective degrees of freedom of the penalized terms at the top of a ridge grid (α = 0 has no
 * strength at which every coefficient is zero). With shrink factors s_t = d_t²/(d_t² + λ)
 * summing to df = δ, each s_t ≤ δ, and the ridge fit explains Σ_t (2s_t − s_t²) q_t² of the
 * target's variance, where least squares explains Σ_t q_t² (q_t: the target's part along
 * component t). So at the top the training R² is at most 2δ − δ² = 0.0975 of least squares'
 * (under a tenth): the grid starts near the intercept-only fit, as a lasso grid does at λ_max,
 * whatever the data's scale, correlation or number of predictors.
 */
export const RIDGE_TOP_DF = 0.05;

/**
 * A full-data path ends early, always, once its training fit is exact: the residual mean
 * square at or below this fraction of the target's variance (about six digits of the target's
 * spread reproduced; e.g. predictors ≥ rows at weak strengths). Weaker strengths could only
 * fit the same rows as well again, and the model would interpolate noise. 1e-12 sits well above
 * the rounding of the residual's computation (~1e-16 of the variance) and far below any real
 * fit's residual.
 */
export const EXACT_FIT_RATIO = 1e-12;
/**
 * With the `stop early` setting, a path also ends once a tenfold drop in strength (from the
 * strength PLATEAU_SPAN times the current one) lowered the training residual mean square by
 * less than PLATEAU_GAIN of its value there: the fit has stopped changing, so the weaker
 * strengths below would give the same model. Measured per tenfold drop, the rule does not
 * depend on how densely the grid is laid out.
 */
export const PLATEAU_SPAN = 10;
/** See PLATEAU_SPAN: 1% of the residual mean square per tenfold drop. */
export const PLATEAU_GAIN = 0.01;

/** Why a path ended before its grid did. */
/** Why a path ended early: an exact fit, no gain over a tenfold drop, or (two-class) saturated probabilities (see logistic solver). */
export type EarlyStop = "exact-fit" | "no-gain" | "saturated";

/**
 * Strengths per tenfold drop of the grid, by default. Neighbouring strengths then differ by a
 * factor 10^(1/20) ≈ 1.12, fine enough that the cross-validated minimum found on the grid is
 * within a fraction of a standard error of the minimum on a much finer grid, and a grid
 * spanning 10⁵ (the default low end when rows > predictors) has 101 strengths.
 */
export const DEFAULT_GRID_DENSITY = 20;
/**
 * Default low end of the grid (its bottom as a fraction of its top) when rows > predictors.
 * Measured (bench/lowEnd.ts, table in the README's Method section): on the demo data and the
 * reference data with noise, every mix's lowest cross-validated error lies at or above 10^-3.5
 * of its top, or cutting the grid there costs under 0.1 standard error; 1e-5 leaves a further
 * factor of 30 of margin. At 20 strengths per tenfold drop that is 101 strengths.
 */
export const LOW_END_TALL = 1e-5;
/**
 * Default low end when predictors ≥ rows. Measured likewise on the quadratic diabetes and
 * prostate models over blocks of rows (on unit-free strengths): cut at 1e-2, the choice over all
 * mixes gives up at most 0.36 standard error (where ridge's deeper minimum is the best of all),
 * and the mixes from 0.25 to the lasso are content on every block. Below,
 * the fit nears interpolation and the lasso end slows sharply: a tenfold drop further costs ten
 * times the time on the benchmark's 200 × 2000 case, for the same choice.
 */
export const LOW_END_WIDE = 1e-2;
/** Most strengths a grid may have (from a size, or from a density and low end). */
export const MAX_GRID_SIZE = 10000;

/**
 * Number of strengths of a grid laid out with `density` strengths per tenfold drop from its
 * top down to top × lowEndRatio: round(density × log10(1/lowEndRatio)) + 1, and at least 2, so
 * both ends are on it. Spread evenly on a log scale (strengthGrid), the grid's realised density,
 * gridDensity(count, lowEndRatio), is then within half a strength per span of the one asked for,
 * and equal to it when density × log10(1/lowEndRatio) is whole.
 * @example gridSize(20, 1e-4) // 81
 */
export function gridSize(density: number, lowEndRatio: number): number {
  // Math.log10 is exact at powers of ten, and a last-bit difference between engines could
  // change the rounded count only at an exact half: safe here, unlike the grid's powers.
  return Math.max(2, Math.round(density * Math.log10(1 / lowEndRatio)) + 1);
}

/** Strengths per tenfold drop of a grid of `count` strengths: (count − 1) / log10(1/lowEndRatio). */
export function gridDensity(count: number, lowEndRatio: number): number {
  return count > 1 ? (count - 1) / Math.log10(1 / lowEndRatio) : 0;
}

/**
 * `count` strengths evenly spaced on a log scale from `top` down to `top × lowEndRatio`, both
 * ends exact: strength k is top × lowEndRatio^(k/(count − 1)). The powers come from
 * portableExp/portableLog, so the grid (and every fit on it) is the same in every JavaScript
 * engine. Cost O(count).
 * @example strengthGrid(1, 3, 0.01) // [1, 0.1, 0.01]
 */
export function strengthGrid(top: number, count: number, lowEndRatio: number): number[] {
  if (count === 1) return [top];
  const out = new Array<number>(count);
  const step = portableLog(lowEndRatio) / (count - 1);
  for (let k = 0; k < count; k++) out[k] = top * portableExp(k * step);
  out[0] = top;
  out[count - 1] = top * lowEndRatio;
  return out;
}

export type { CancelSignal } from "./errors";

export interface PathSettings extends DescentSettings {
  /** End the path once the training fit is exact (see EXACT_FIT_RATIO). */
  stopWhenExact: boolean;
  /** End the path once a tenfold drop in strength no longer improves the fit (see PLATEAU_SPAN). */
  stopWhenFlat: boolean;
  /** Use the eigendecomposition for ridge when allowed (exact, faster); else coordinate descent. */
  exactRidge: boolean;
  signal?: CancelSignal;
}

export interface PathRun {
  /** Strengths actually computed (a prefix of the grid when the path stopped early). */
  strengths: number[];
  /** Standardized coefficients, one array per computed strength (views of one block per path: never written after the path). */
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
  /** Why the path ended before the grid's end, or null when it covered the whole grid. */
  earlyStop: EarlyStop | null;
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
 * The exact ridge factorization of this problem when it applies and is wanted (see
 * spectralApplies), else null. Built once per problem: it serves both the top of the grid and
 * every point of the path.
 */
export function ridgeFactorization(problem: TrainingProblem, penalty: PenaltySpec, exactRidge: boolean, signal?: CancelSignal): SpectralRidge | null {
  return exactRidge && spectralApplies(problem, penalty) ? sharedSpectralRidge(problem, penalty.multipliers, signal) : null;
}

/**
 * Top of the grid for this problem and penalty, after fitting the unpenalized predictors:
 * - α > 0: the smallest λ with every penalized coefficient zero (λ_max, Friedman, Hastie &
 *   Tibshirani 2010 §2.5, with multipliers and bounds).
 * - α = 0: the λ at which the ridge fit's effective degrees of freedom over the penalized terms,
 *   df(λ) = Σ_t d_t²/(d_t² + λ) (ESL 2nd ed. eq. 3.50), equal RIDGE_TOP_DF; d_t² are the
 *   eigenvalues of the objective's penalized Gram matrix with unpenalized terms projected out
 *   (ridgeSpectral.ts penalizedSpectrum). `spectral`, when given, supplies them without a
 *   second factorization (no multiplier is 0 then). Bounds don't move this top: it places the
 *   grid, and the bounded path is solved down it by coordinate descent.
 * Returns 0 when nothing is left to explain (no penalized predictor correlates with what the
 * unpenalized ones leave, in a direction its bounds allow).
 */
export function topStrength(problem: TrainingProblem, penalty: PenaltySpec, settings: DescentSettings, spectral: SpectralRidge | null = null): number {
  const solver = new CoordinateDescent(problem, penalty, settings);
  solver.fitUnpenalized();
  if (penalty.mix > 0) return solver.topStrength(penalty.mix);
  if (!(solver.topStrength(1) > 0)) return 0;
  const values = spectral ? spectral.eigenvalues : penalizedSpectrum(problem, penalty.multipliers, settings.signal);
  return strengthForDegreesOfFreedom(values, RIDGE_TOP_DF);
}

/**
 * Solves down `strengths` (decreasing), each point warm-started from the previous one.
 * `factorization`: this problem's ridgeFactorization when the caller already built it.
 * Cost per point: sweeps × (active set × p) in gram form, sweeps × (active set × n) in
 * naive form, plus one O(n·p) KKT pass in naive form; the spectral ridge path costs one
 * factorization, then O(p²) or O(n·p) per point.
 */
export function runPath(
  problem: TrainingProblem,
  penalty: PenaltySpec,
  strengths: readonly number[],
  settings: PathSettings,
  factorization: SpectralRidge | null = null,
): PathRun {
  const solver = new CoordinateDescent(problem, penalty, settings);
  const top = solver.fitUnpenalized();
  const spectral = factorization ?? ridgeFactorization(problem, penalty, settings.exactRidge, settings.signal);
  const run: PathRun = {
    strengths: [],
    coefficients: [],
    r2: [],
    nonzero: [],
    sweeps: top.sweeps,
    maxKktViolation: 0,
    notConverged: top.converged ? [] : [0],
    strongRuleMisses: 0,
    earlyStop: null,
    solver: spectral ? "spectral" : "descent",
  };
  const yVariance = problem.std.yVariance;
  const p = problem.p;
  const exact = new Float64Array(p);
  const block = new Float64Array(strengths.length * p);
  // Residual mean square at each computed point, and the point a tenfold drop above the
  // current one (PLATEAU_SPAN; strengths decrease, so it only moves forward).
  const residuals: number[] = [];
  let anchor = 0;
  /** Why the path ends at point k (after it), or null when it goes on. */
  const endsAt = (k: number, residual: number): EarlyStop | null => {
    if (k + 1 === strengths.length) return null;
    if (settings.stopWhenExact && residual <= EXACT_FIT_RATIO * yVariance) return "exact-fit";
    if (settings.stopWhenFlat) {
      // 1e-9: a grid laid out as exact powers of ten may land a hair off in floating point.
      const reach = PLATEAU_SPAN * strengths[k] * (1 - 1e-9);
      while (anchor + 1 < k && strengths[anchor + 1] >= reach) anchor++;
      if (strengths[anchor] >= reach && residuals[anchor] - residual < PLATEAU_GAIN * residuals[anchor]) return "no-gain";
    }
    return null;
  };
  for (let k = 0; k < strengths.length; k++) {
    if (settings.signal?.aborted) throw new CancelledError();
    const lambda = strengths[k];
    let kkt: number;
    let residual: number;
    let stop: EarlyStop | null;
    if (spectral) {
      spectral.coefficientsAt(lambda, exact);
      // The residual's size comes from the factorization (O(n) or O(p)); the gradient, which
      // costs a pass over the data in residual form, is rebuilt to certify the path's ends
      // (gram form: every point, it is cheap there).
      residual = spectral.residualMeanSquareAt(lambda);
      stop = endsAt(k, residual);
      if (problem.kind === "gram" || k === 0 || k === strengths.length - 1 || stop !== null) {
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
      residual = solver.residualMeanSquare();
      stop = endsAt(k, residual);
    }
    const r2 = yVariance > 0 ? 1 - residual / yVariance : 0;
    if (kkt > run.maxKktViolation) run.maxKktViolation = kkt;
    // A view into the path's one block rather than a new array per point: a typed array of its
    // own costs an allocation of its backing store (≈ 0.2 µs at p = 20, more than the rest of the
    // point's bookkeeping, bench/PROFILE.md "tall20"); the values are the same.
    const coef = block.subarray(k * p, k * p + p);
    const from = spectral ? exact : solver.coef;
    let nonzero = 0;
    for (let j = 0; j < p; j++) {
      const b = from[j];
      coef[j] = b;
      if (b !== 0) nonzero++;
    }
    run.strengths.push(lambda);
    run.coefficients.push(coef);
    run.r2.push(r2);
    run.nonzero.push(nonzero);
    residuals.push(residual);
    if (stop !== null) {
      run.earlyStop = stop;
      break;
    }
  }
  return run;
}
