/**
 * Exact unpenalized logistic regression for a two-class (0/1) outcome: the strength-0 baseline
 * of the two-class fits, the logistic analogue of leastSquares.ts.
 *
 * Objective (maximum likelihood; Friedman, Hastie & Tibshirani 2010, J. Stat. Software 33(1),
 * §3, without the penalty): minimize the deviance
 *
 *   D(b0, b) = −2 Σ_i w_i [ y_i log p_i + (1 − y_i) log(1 − p_i) ],   log(p_i / (1 − p_i)) = η_i = b0 + x_i·b
 *
 * over the rows with w_i > 0. Computed as 2 Σ w_i softplus(±η_i) with softplus(t) = log(1 + e^t)
 * taken without overflow (t + log1p(e^−t) for t > 0), so D is finite for every finite η.
 *
 * Method (Newton–Raphson, which for the logit link is IRLS / Fisher scoring; McCullagh & Nelder,
 * Generalized Linear Models, 2nd ed., §2.5 and §4.4):
 * 1. Aliased columns are found by leastSquares' own rule (leastSquares.ts, steps 2–4, repeated
 *    here on the same centred, unit-length weighted columns so that no least-squares fit is run
 *    for it; the tests check both give the same list): a column constant up to rounding, or one
 *    whose remainder after Householder reflections of the columns to its left is at most 1e-10 of
 *    its length, in the user's order, so the later of two copies is the one set aside. The column
 *    space of [1, X] on the rows used does not depend on the positive weights, so the rule found
 *    with the prior weights holds at every Newton step. Aliased columns get coefficient 0 and no SE.
 * 2. The kept columns are centred at their weighted means (held in two parts, problem.ts's
 *    stableCentre: a date near 45000 or a timestamp near 1e12 costs no digits) and divided by their
 *    weighted population SD (their weighted RMS without an intercept). Newton runs on these unit-free
 *    columns z, from the intercept-only fit (b0 = logit ȳ_w, slopes 0), and results return to the
 *    data's units at the end (b_j = γ_j / s_j, b0 = β0 − Σ b_j x̄_j in double-double).
 * 3. Each step solves the weighted least-squares problem min ‖V^½ (r − A δ)‖ with A = [1, z],
 *    V = diag(w p(1−p)) and working residual r = (y − p)/(p(1−p)), by Householder QR of V^½A
 *    (Golub & Van Loan, Matrix Computations, §5.2): no XᵀWX is formed. The working variance
 *    p(1−p) is floored at 1e-14 so a row fitted to within e^−32 neither divides by zero nor
 *    underflows; its true contribution is below that anyway. A column whose weighted remainder
 *    is below 1e-13 of its length is left out of that step (its component is 0).
 * 4. Step-halving: a step that does not lower the deviance is halved (up to 50 times), so the
 *    deviance never increases. One exception, at the optimum: when the step promises a decrease
 *    below the tolerance, the deviance's own rounding (about 1e-16 of its size per row summed) can
 *    hide the gain, so that last full step is taken if it moves the deviance by at most 1e-13 of
 *    its size; the score equations, not the deviance, tell the better point there.
 * 5. Convergence: after a full step, the relative deviance change (D_old − D_new)/(D_new + 0.1)
 *    is at most `tolerance` (default 1e-12), or the Newton decrement gᵀH⁻¹g (the decrease a full
 *    step promises, in deviance units) is at most `tolerance`·(D + 0.1); then one more full Newton
 *    step polishes the estimate. Near the optimum Newton converges quadratically, so each step's
 *    error is about the square of the one before: the polished estimate is accurate to rounding.
 * 6. Standard errors from the inverse observed information at the estimate (for the logit link it
 *    equals the expected, Fisher, information): Cov = (Aᵀ V A)⁻¹ = R⁻¹R⁻ᵀ from the final QR (the
 *    only inverse formed), mapped to the data's units. Weights act as frequency weights: a row of
 *    weight 3 counts as three identical rows, so scaling every weight by c leaves the estimates
 *    unchanged and divides every standard error by √c. z = estimate / SE; two-sided p-values
 *    from the normal distribution, p = erfc(|z|/√2), with erfc computed here (see
 *    complementaryErrorFunction) from portable exp so the digits are the same in every engine.
 *
 * Separation (the estimates do not exist). Albert & Anderson (1984), "On the existence of maximum
 * likelihood estimates in logistic regression models", Biometrika 71(1): the data are completely
 * separated when some combination d (with the intercept) has d·x_i > 0 for every event (y = 1) and
 * d·x_i < 0 for every non-event; quasi-completely separated when d·x_i ≥ 0 for events and ≤ 0 for
 * non-events with equality for some rows (and not all). Then the likelihood keeps rising along d and
 * some coefficients run off to ±infinity; otherwise (overlap) the estimates exist and are unique.
 * Rule used here:
 * - Single terms, checked directly on the data before any iteration: with an intercept, a term whose
 *   values for events and non-events do not overlap (max of one class < min of the other:
 *   complete) or meet only at one value (max of one = min of the other: quasi); without an
 *   intercept, a term whose sign alone splits the classes (zeros count as ties).
 * - Combinations, checked on the Newton steps: when the estimates do not exist, the Newton steps
 *   turn towards a separating direction. Each step δ (intercept included) is tested as a
 *   certificate on the data: s_i = δ·[1, z_i] must have the event sign for every event and the
 *   other sign for every non-event; |s_i| ≤ 1e-9 · Σ|δ_k z_ik| counts as a tie. All strict: complete
 *   separation (a proof, up to rounding far below the margin); some ties: quasi. No sign violation
 *   is ever excused beyond that tie band. Quasi-separation shows late (the finite part of the fit
 *   must settle first), so when the convergence test passes while a full step still moves a
 *   standardized coefficient by more than 1e-3 (the deviance sits at its floor while terms run
 *   off), that step is tested once more with a 1e-6 tie band.
 * - Once found, Newton runs 6 more steps (so the terms that run off stand out), then stops. The
 *   terms reported are the single-term separators when there are any; otherwise the terms whose
 *   standardized coefficients moved by at least 1% of the largest move since separation was found,
 *   narrowed to the smallest leading set (largest moves first, at most 8 terms) on which Newton
 *   alone finds a certificate within 40 steps, so a term that only drifts along is not named.
 * - Safety net: if Newton neither converges nor finds a certificate within `maxIterations`, rows
 *   fitted to their own class within 1e-8 while the standardized coefficients keep growing are
 *   reported as "(nearly) separated" (complete when the deviance has fallen below 1e-6 of the null
 *   deviance, else quasi).
 * When separated, the coefficients returned are the last iterate (finite, meaningless in size),
 * their standard errors, z and p are null, `converged` is false and the message says a penalized
 * fit is needed. Nothing loops for more than `maxIterations` Newton steps.
 *
 * Cost: O(m·c²) per Newton step (m rows with weight > 0, c kept columns plus the intercept), plus one
 * O(m·p²) factorisation for the aliasing; typically 5–10 steps. Memory: three m×p working copies.
 *
 * Throws: a plain Error on misuse the caller should have caught (mismatched lengths, y not 0/1,
 * non-finite values, negative weights, no positive weight, bad options); InputError('constant-target')
 * when the rows used hold only one class; InputError('out-of-range') when a coefficient or the
 * intercept would lie beyond the doubles' range (a column of values near 1e-308, say). The cancel
 * signal is read each iteration, between the columns of every factorisation and between halvings.
 *
 * Example: a 0/1 predictor reproduces the two groups' log-odds. x = [[0], [0], [0], [1], [1], [1]],
 * y = [0, 0, 1, 0, 1, 1] gives intercept log(1/2) = −0.6931 (log-odds of the x = 0 group),
 * coefficient 2 log 2 = 1.3863 (the log odds ratio) and its standard error √(1/2 + 1/1 + 1/1 + 1/2)
 * = √3 (Woolf's formula for a log odds ratio).
 */
import { CancelSignal, InputError, throwIfCancelled } from "./errors";
import { ColumnMatrix } from "./matrix";
import { applyReflector, euclideanLength, twoProduct, twoSum } from "./leastSquares";
import { hypotenuse, portableExp, portableLog } from "./portableMath";
import { CONSTANT_SPREAD_RATIO, stableCentre } from "./problem";
import { significant } from "./words";

export interface LogisticBaselineOptions {
  /** Fit an intercept (default true). Without one, the null model is p = 0.5. */
  intercept?: boolean;
  /** Frequency weights ≥ 0 (default all 1). Rows with weight 0 take no part in the fit. */
  weights?: ArrayLike<number>;
  /** Column names for messages (default: column numbers from 1). */
  names?: readonly string[];
  /** Read every iteration and between the columns of each factorisation. */
  signal?: CancelSignal;
  /** Most Newton steps (default 100). */
  maxIterations?: number;
  /** Relative deviance change (and Newton decrement) counted as converged (default 1e-12). */
  tolerance?: number;
}

export interface Separation {
  kind: "complete" | "quasi";
  /** indices of the terms whose coefficients run off to ±infinity (best effort; may be empty when it can't tell) */
  terms: number[];
  /** one sentence in plain words, naming the terms */
  message: string;
}

export interface LogisticBaselineResult {
  /** Log-odds at x = 0 (0 without an intercept). */
  intercept: number;
  /** Log-odds per unit of each column, data units; aliased columns exactly 0. */
  coefficients: number[];
  /** From the observed information (equal to Fisher's for the logit link); null when aliased or separated. */
  standardErrors: (number | null)[];
  interceptStandardError: number | null;
  /** estimate / SE. */
  zValues: (number | null)[];
  interceptZ: number | null;
  /** Two-sided, from the normal distribution. */
  pValues: (number | null)[];
  interceptP: number | null;
  /** −2 Σ w [y log p + (1−y) log(1−p)] over the rows used. */
  deviance: number;
  /** The same for the intercept-only model (p = ȳ_w), or for p = 0.5 without an intercept. */
  nullDeviance: number;
  /** Rows with w > 0 minus kept coefficients (intercept included). */
  degreesOfFreedom: number;
  /** Rows with w > 0 minus 1 (intercept), or minus 0 without one. */
  nullDegreesOfFreedom: number;
  /** Columns that are combinations of columns to their left (and the intercept), as in leastSquares. */
  aliased: number[];
  /** Newton steps taken. */
  iterations: number;
  converged: boolean;
  separation: Separation | null;
  /** Fitted probability of a 1 for every row (rows with weight 0 included). */
  probabilities: Float64Array;
}

const DEFAULT_MAX_ITERATIONS = 100;
const DEFAULT_TOLERANCE = 1e-12;
/** Rank tolerance on unit-length columns: leastSquares' default (its rankTolerance). */
const ALIAS_TOLERANCE = 1e-10;
/** Floor on the working variance p(1−p) (see the file comment, step 3). */
const VARIANCE_FLOOR = 1e-14;
/** A column whose weighted remainder in the QR is below this share of its length sits the step out. */
const STEP_RANK_TOLERANCE = 1e-13;
const MAX_HALVINGS = 50;
/** A last Newton step (promised decrease below the tolerance) may move the deviance up by this much of it: rounding. */
const ROUNDING_ALLOWANCE = 1e-13;
/** Relative band within which a certificate's s_i counts as a tie (on the boundary). */
const TIE_TOLERANCE = 1e-9;
/** A converging full step larger than this (standardized) is tested again with LATE_TIE_TOLERANCE. */
const LATE_STEP = 1e-3;
const LATE_TIE_TOLERANCE = 1e-6;
/** The search for the smallest separating set of terms tries at most this many terms, from at most this many candidates. */
const MAX_SEARCH_TERMS = 8;
const MAX_SEARCH_CANDIDATES = 60;
/** Newton steps allowed per candidate set in that search. */
const SEARCH_ITERATIONS = 40;
/** Newton steps taken after separation is found, before stopping. */
const STEPS_AFTER_SEPARATION = 6;
/** A term whose standardized move is at least this share of the largest is reported as running off. */
const RUNNING_SHARE = 0.01;

/** Everything the iterations need about the rows used, in standardized form. */
interface Design {
  /** Rows with weight > 0. */
  m: number;
  /** Kept columns' original indices. */
  kept: number[];
  /** Number of parameters: kept columns plus the intercept. */
  c: number;
  withIntercept: boolean;
  /** Original row of each used row. */
  rowIndex: Int32Array;
  weight: Float64Array;
  /** 1 for events, 0 for non-events. */
  outcome: Uint8Array;
  /** Standardized kept columns, m per column (column-major, stride-1). */
  z: Float64Array;
}

/**
 * Unpenalized logistic regression of a 0/1 outcome on the columns of `x` (n×p, column-major), by
 * Newton–Raphson on centred, scaled columns with step-halving and separation detection (see the
 * file comment). Results are in the data's units.
 */
export function logisticBaseline(
  x: ColumnMatrix,
  y: ArrayLike<number>,
  options: LogisticBaselineOptions = {},
): LogisticBaselineResult {
  const n = x.rows;
  const p = x.columns;
  const withIntercept = options.intercept ?? true;
  const maxIterations = options.maxIterations ?? DEFAULT_MAX_ITERATIONS;
  const tolerance = options.tolerance ?? DEFAULT_TOLERANCE;
  const signal = options.signal;
  if (x.data.length !== n * p) throw new Error("logisticBaseline requires x.data of length rows × columns");
  if (y.length !== n) throw new Error("logisticBaseline requires y with one value per row of x");
  if (options.weights !== undefined && options.weights.length !== n) {
    throw new Error("logisticBaseline requires one weight per row of x");
  }
  if (!(Number.isInteger(maxIterations) && maxIterations >= 1)) {
    throw new Error("logisticBaseline requires maxIterations to be a whole number >= 1");
  }
  if (!(tolerance > 0 && tolerance < 1)) throw new Error("logisticBaseline requires 0 < tolerance < 1");

  // Rows used (weight > 0), their weights and outcomes.
  const weightOf = (i: number): number => (options.weights === undefined ? 1 : options.weights[i]);
  let m = 0;
  for (let i = 0; i < n; i++) {
    const w = weightOf(i);
    if (!(w >= 0) || !Number.isFinite(w)) throw new Error(`logisticBaseline requires finite weights >= 0 (row ${i + 1})`);
    if (w > 0) m++;
  }
  if (m === 0) throw new Error("logisticBaseline requires at least one positive weight");
  const rowIndex = new Int32Array(m);
  const weight = new Float64Array(m);
  const outcome = new Uint8Array(m);
  let weightTotal = 0;
  let eventWeight = 0;
  let nonEventWeight = 0;
  for (let i = 0, t = 0; i < n; i++) {
    const w = weightOf(i);
    if (!(w > 0)) continue;
    const value = y[i];
    if (value !== 0 && value !== 1) throw new Error(`logisticBaseline requires y to be 0 or 1 (row ${i + 1} has ${value})`);
    rowIndex[t] = i;
    weight[t] = w;
    outcome[t] = value;
    weightTotal += w;
    if (value === 1) eventWeight += w;
    else nonEventWeight += w;
    t++;
  }
  for (let j = 0; j < p; j++) {
    for (let t = 0; t < m; t++) {
      if (!Number.isFinite(x.data[j * n + rowIndex[t]])) {
        throw new Error(`logisticBaseline requires finite predictor values (column ${j + 1}, row ${rowIndex[t] + 1})`);
      }
    }
  }
  if (eventWeight === 0 || nonEventWeight === 0) {
    const only = eventWeight === 0 ? "0s (no)" : "1s (yes)";
    throw new InputError(
      "constant-target",
      `the outcome has only ${only} on the rows used: a two-class fit needs both classes, some rows with 1 (yes) and some with 0 (no)`,
    );
  }
  // Event share ȳ_w and its complement, each from its own class's weight (no 1 − ȳ to lose digits).
  const eventShare = eventWeight / weightTotal;
  const nonEventShare = nonEventWeight / weightTotal;
  const nullDeviance = withIntercept
    ? -2 * (eventWeight * portableLog(eventShare) + nonEventWeight * portableLog(nonEventShare))
    : 2 * weightTotal * portableLog(2);

  // Every column centred (with an intercept) and scaled: z = (x − anchor − offset) / scale.
  const omega = new Float64Array(m);
  for (let t = 0; t < m; t++) omega[t] = weight[t] / weightTotal;
  const anchorAll = new Float64Array(p);
  const offsetAll = new Float64Array(p);
  const scaleAll = new Float64Array(p);
  const constant = new Uint8Array(p);
  const zAll = new Float64Array(m * p);
  for (let j = 0; j < p; j++) {
    throwIfCancelled(signal);
    const source = j * n;
    const target = j * m;
    let largest = 0;
    for (let t = 0; t < m; t++) {
      const v = x.data[source + rowIndex[t]];
      zAll[target + t] = v;
      largest = Math.max(largest, Math.abs(v));
    }
    if (withIntercept) {
      const centre = stableCentre(zAll.subarray(target, target + m), omega, m);
      anchorAll[j] = centre.anchor;
      offsetAll[j] = centre.offset;
      for (let t = 0; t < m; t++) zAll[target + t] = zAll[target + t] - centre.anchor - centre.offset;
    }
    const spread = weightedRootMeanSquare(zAll, target, omega, m);
    // leastSquares' rule (problem.ts): constant up to rounding, or zero, goes with the intercept.
    if (!(spread > CONSTANT_SPREAD_RATIO * largest) || !Number.isFinite(spread)) {
      constant[j] = 1;
      scaleAll[j] = 1;
      continue;
    }
    scaleAll[j] = spread;
    const inverse = 1 / spread;
    for (let t = 0; t < m; t++) zAll[target + t] *= inverse;
  }
  const aliased = aliasedColumns(zAll, omega, m, p, constant, withIntercept, signal);
  const isAliased = new Uint8Array(p);
  for (const j of aliased) isAliased[j] = 1;
  const kept: number[] = [];
  for (let j = 0; j < p; j++) if (!isAliased[j]) kept.push(j);
  const k = kept.length;
  const anchor = new Float64Array(k);
  const offset = new Float64Array(k);
  const scale = new Float64Array(k);
  const z = k === p ? zAll : new Float64Array(m * k);
  kept.forEach((j, a) => {
    anchor[a] = anchorAll[j];
    offset[a] = offsetAll[j];
    scale[a] = scaleAll[j];
    if (z !== zAll) z.set(zAll.subarray(j * m, (j + 1) * m), a * m);
  });
  const c = k + (withIntercept ? 1 : 0);
  const design: Design = { m, kept, c, withIntercept, rowIndex, weight, outcome, z };

  // Separation by a single term, straight from the data.
  const singles = singleTermSeparation(x, design);

  // Newton–Raphson from the intercept-only fit.
  const start = new Float64Array(c);
  if (withIntercept) start[0] = portableLog(eventShare) - portableLog(nonEventShare);
  const run = newtonRun(design, start, {
    maxIterations,
    tolerance,
    signal,
    separatedFromStart: singles.length > 0,
    stopAtCertificate: false,
  });
  const { theta, eta, deviance, iterations, certificate } = run;
  let converged = run.converged;

  // Safety net when Newton neither converged nor found a certificate.
  let fallbackKind: "complete" | "quasi" | null = null;
  if (!converged && run.separationFoundAt < 0 && c > 0) {
    fallbackKind = separationBySymptoms(design, eta, run.history, deviance, nullDeviance);
  }

  // Which terms run off, and the message.
  let separation: Separation | null = null;
  if (run.separationFoundAt >= 0 || fallbackKind !== null) {
    let terms: number[];
    let kind: "complete" | "quasi";
    if (singles.length > 0) {
      terms = singles.map((s) => s.column);
      kind = singles.some((s) => s.kind === "complete") || certificate?.kind === "complete" ? "complete" : "quasi";
    } else {
      terms = runningTerms(design, theta, run.thetaAtSeparation ?? run.history[0], signal);
      kind = certificate?.kind ?? fallbackKind ?? "quasi";
    }
    const proven = singles.length > 0 || certificate !== null;
    separation = { kind, terms, message: separationMessage(kind, terms, singles, options.names, withIntercept, proven) };
    converged = false;
  }

  // Standard errors from the final information matrix (not when separated).
  let covariance: { rInverse: Float64Array; position: Int32Array; size: number } | null = null;
  if (separation === null && c > 0) {
    const system = newtonSystem(design, eta, signal);
    covariance = invertFactor(system);
  }

  // Back to the data's units.
  const coefficients = new Array<number>(p).fill(0);
  const standardErrors = new Array<number | null>(p).fill(null);
  const first = withIntercept ? 1 : 0;
  for (let a = 0; a < k; a++) coefficients[kept[a]] = theta[first + a] / scale[a];
  const intercept = withIntercept ? interceptInDataUnits(theta[0], kept, anchor, offset, coefficients) : 0;
  // Nothing non-finite leaves: a coefficient beyond the doubles' range is the user's to rescale.
  coefficients.forEach((b, j) => {
    if (!Number.isFinite(b)) {
      throw new InputError("out-of-range", `the coefficient of ${columnLabel(options.names, j)} is beyond ±1.8e308: rescale that column`);
    }
  });
  if (!Number.isFinite(intercept)) {
    throw new InputError("out-of-range", "the intercept is beyond ±1.8e308: shift the columns with the largest values towards 0");
  }
  let interceptStandardError: number | null = null;
  if (covariance !== null) {
    const { rInverse, position, size } = covariance;
    // Var(θ_a) = squared length of row a of R⁻¹ (column-major, upper triangular).
    for (let a = 0; a < k; a++) {
      const s = position[first + a];
      if (s < 0) continue;
      let sum = 0;
      for (let col = s; col < size; col++) sum += rInverse[col * size + s] * rInverse[col * size + s];
      standardErrors[kept[a]] = Math.sqrt(sum) / scale[a];
    }
    if (withIntercept && position[0] >= 0) {
      // b0 = β0 − Σ γ_a x̄_a / s_a = uᵀθ, Var = ‖R⁻ᵀu‖² (u in the factor's order; a column left out
      // of the factor makes the intercept's SE unknown too).
      const u = new Float64Array(size);
      let complete = true;
      u[position[0]] = 1;
      for (let a = 0; a < k; a++) {
        const s = position[first + a];
        if (s < 0) complete = false;
        else u[s] = -(anchor[a] + offset[a]) / scale[a];
      }
      if (complete) {
        let sum = 0;
        for (let col = 0; col < size; col++) {
          let projected = 0;
          for (let s = 0; s <= col; s++) projected += rInverse[col * size + s] * u[s];
          sum += projected * projected;
        }
        interceptStandardError = Math.sqrt(sum);
      }
    }
  }
  const zValues = standardErrors.map((se, j) => (se !== null && se > 0 ? coefficients[j] / se : null));
  const pValues = zValues.map((value) => (value === null ? null : normalTwoSidedP(value)));
  const interceptZ = interceptStandardError !== null && interceptStandardError > 0 ? intercept / interceptStandardError : null;
  const interceptP = interceptZ === null ? null : normalTwoSidedP(interceptZ);

  // Fitted probabilities for every row, from the standardized form (no cancellation against offsets).
  const probabilities = new Float64Array(n);
  const rowEta = new Float64Array(n).fill(withIntercept ? theta[0] : 0);
  for (let a = 0; a < k; a++) {
    const gamma = theta[first + a];
    if (gamma === 0) continue;
    const source = kept[a] * n;
    const factor = gamma / scale[a];
    for (let i = 0; i < n; i++) rowEta[i] += (x.data[source + i] - anchor[a] - offset[a]) * factor;
  }
  for (let i = 0; i < n; i++) probabilities[i] = probability(rowEta[i]);

  return {
    intercept,
    coefficients,
    standardErrors,
    interceptStandardError,
    zValues,
    interceptZ,
    pValues,
    interceptP,
    deviance,
    nullDeviance,
    degreesOfFreedom: m - c,
    nullDegreesOfFreedom: m - (withIntercept ? 1 : 0),
    aliased,
    iterations,
    converged,
    separation,
    probabilities,
  };
}

/**
 * Columns that are (numerically) combinations of the columns to their left and the intercept, by
 * leastSquares' rule (leastSquares.ts, step 4): Householder QR of the weighted, unit-length columns
 * √ω·z in the user's order; a column is aliased when it is constant (flagged by the caller), when
 * the length left after the earlier reflections is at most 1e-10 of its own (1), or when the rows
 * can carry no more columns (rows used − 1 with an intercept). Reads the cancel signal between
 * columns. Cost O(m·p²).
 */
function aliasedColumns(
  z: Float64Array,
  omega: Float64Array,
  m: number,
  p: number,
  constant: Uint8Array,
  withIntercept: boolean,
  signal: CancelSignal | undefined,
): number[] {
  const work = new Float64Array(m * p);
  const rootOmega = new Float64Array(m);
  for (let t = 0; t < m; t++) rootOmega[t] = Math.sqrt(omega[t]);
  for (let j = 0; j < p; j++) {
    if (constant[j]) continue;
    for (let t = 0; t < m; t++) work[j * m + t] = rootOmega[t] * z[j * m + t];
  }
  const maxRank = Math.max(0, m - (withIntercept ? 1 : 0));
  const aliased: number[] = [];
  const skip = Uint8Array.from(constant);
  let rank = 0;
  for (let j = 0; j < p; j++) {
    throwIfCancelled(signal);
    if (skip[j] || rank >= maxRank) {
      aliased.push(j);
      continue;
    }
    const start = j * m;
    const diagonal = work[start + rank];
    const remaining = hypotenuse(diagonal, euclideanLength(work, start + rank + 1, m - rank - 1));
    if (remaining <= ALIAS_TOLERANCE) {
      aliased.push(j);
      continue;
    }
    const beta = diagonal >= 0 ? -remaining : remaining;
    const tau = (beta - diagonal) / beta;
    const vScale = 1 / (diagonal - beta);
    for (let t = start + rank + 1; t < start + m; t++) work[t] *= vScale;
    work[start + rank] = beta;
    for (let later = j + 1; later < p; later++) {
      if (!skip[later]) applyReflector(work, start, rank, m, tau, work, later * m);
    }
    rank++;
  }
  return aliased;
}

// ---------------------------------------------------------------- Newton–Raphson

interface NewtonSettings {
  maxIterations: number;
  tolerance: number;
  signal: CancelSignal | undefined;
  /** Separation is already known (a single term): run STEPS_AFTER_SEPARATION steps and stop. */
  separatedFromStart: boolean;
  /** Stop at the first certificate (used when searching for the terms that separate). */
  stopAtCertificate: boolean;
}

interface NewtonState {
  theta: Float64Array;
  eta: Float64Array;
  deviance: number;
  iterations: number;
  converged: boolean;
  /** The strongest certificate seen (complete beats quasi). */
  certificate: Certificate | null;
  /** Step at which separation was first known (0: before any step), −1 if never. */
  separationFoundAt: number;
  thetaAtSeparation: Float64Array | null;
  /** The last few iterates, oldest first. */
  history: Float64Array[];
}

/**
 * Newton–Raphson with step-halving from `start` (file comment, steps 3–5), testing every step as a
 * separation certificate. Never more than `maxIterations` steps.
 */
function newtonRun(design: Design, start: Float64Array, settings: NewtonSettings): NewtonState {
  const { m, c } = design;
  const { tolerance, signal } = settings;
  const theta = Float64Array.from(start);
  const eta = new Float64Array(m);
  linearPredictor(design, theta, eta);
  let deviance = devianceOf(design, eta);
  const history: Float64Array[] = [Float64Array.from(theta)];
  let iterations = 0;
  // With no slope the start is the answer: the intercept-only fit, or p = 0.5 with nothing to fit.
  let converged = c === 0 || (c === 1 && design.withIntercept);
  let certificate: Certificate | null = null;
  let separationFoundAt = settings.separatedFromStart ? 0 : -1;
  let thetaAtSeparation: Float64Array | null = settings.separatedFromStart ? Float64Array.from(theta) : null;
  const trialTheta = new Float64Array(c);
  const trialEta = new Float64Array(m);
  // One working copy for every step's factorisation: a fresh m×c array per step would leave the
  // garbage collector a large block to reclaim each time (pauses of a few tenths of a second at
  // 1e5 × 60, longer than the cancel budget).
  const workspace = new Float64Array(m * c);
  // Set once the convergence test passes: one more full Newton step polishes the estimate (its
  // error is then about the square of the last step's), and the run ends.
  let polishing = false;
  while (!converged && iterations < settings.maxIterations) {
    throwIfCancelled(signal);
    const system = newtonSystem(design, eta, signal, workspace);
    const step = system.step;
    if (!allFinite(step)) break;
    iterations++;
    const found = testCertificate(design, step, TIE_TOLERANCE);
    if (found !== null && (certificate === null || (certificate.kind === "quasi" && found.kind === "complete"))) {
      certificate = found;
    }
    if (found !== null && separationFoundAt < 0) {
      separationFoundAt = iterations;
      thetaAtSeparation = Float64Array.from(theta);
      if (settings.stopAtCertificate) break;
    }
    const separated = separationFoundAt >= 0;
    const small = polishing || system.decrement <= tolerance * (deviance + 0.1);
    // Step-halving: never let the deviance rise.
    let fraction = 1;
    let accepted = false;
    let trialDeviance = deviance;
    for (let halving = 0; halving <= MAX_HALVINGS; halving++) {
      throwIfCancelled(signal);
      for (let a = 0; a < c; a++) trialTheta[a] = theta[a] + fraction * step[a];
      linearPredictor(design, trialTheta, trialEta);
      trialDeviance = devianceOf(design, trialEta);
      if (trialDeviance <= deviance) {
        accepted = true;
        break;
      }
      if (small && !separated) {
        // At the optimum the deviance can no longer tell a better point from a worse one (its
        // change is below its own rounding) while the score still can: take the final Newton step
        // when it moves the deviance by rounding only, else stay where we are.
        accepted = halving === 0 && trialDeviance - deviance <= ROUNDING_ALLOWANCE * (deviance + 0.1);
        break;
      }
      fraction /= 2;
    }
    if (!accepted) {
      converged = small && !separated;
      break;
    }
    const change = (deviance - trialDeviance) / (trialDeviance + 0.1);
    theta.set(trialTheta);
    eta.set(trialEta);
    deviance = trialDeviance;
    history.push(Float64Array.from(theta));
    if (history.length > 8) history.shift();
    if (separated) {
      if (iterations >= separationFoundAt + STEPS_AFTER_SEPARATION) break;
      continue;
    }
    if (polishing) {
      converged = true;
      break;
    }
    if (fraction === 1 && (change <= tolerance || small)) {
      // A full step that still moves a coefficient by much while the deviance no longer changes is
      // the mark of quasi-separation found late (the deviance levels off at its floor while the
      // terms run off): test that step once more with a wider tie band.
      let largest = 0;
      for (let a = design.withIntercept ? 1 : 0; a < c; a++) largest = Math.max(largest, Math.abs(step[a]));
      const late = largest > LATE_STEP ? testCertificate(design, step, LATE_TIE_TOLERANCE) : null;
      if (late !== null) {
        certificate = late;
        separationFoundAt = iterations;
        thetaAtSeparation = Float64Array.from(history[Math.max(0, history.length - 2)]);
        break;
      }
      polishing = true;
    }
  }
  // The test passed but the step cap came first: the estimate is converged, only not polished.
  if (polishing && separationFoundAt < 0) converged = true;
  return { theta, eta, deviance, iterations, converged, certificate, separationFoundAt, thetaAtSeparation, history };
}

// ---------------------------------------------------------------- the logistic pieces

/** log(1 + u) for u ≥ 0, accurate for small u (Goldberg's trick: the rounding of 1 + u cancels). */
function log1p(u: number): number {
  const s = 1 + u;
  if (s === 1) return u;
  return (portableLog(s) * u) / (s - 1);
}

/** log(1 + e^t) without overflow or loss for either sign of t. */
function softplus(t: number): number {
  return t > 0 ? t + log1p(portableExp(-t)) : log1p(portableExp(t));
}

/** 1 / (1 + e^−η), from the side where the exponential cannot overflow. */
function probability(eta: number): number {
  if (eta >= 0) return 1 / (1 + portableExp(-eta));
  const e = portableExp(eta);
  return e / (1 + e);
}

/** η = θ0 + Σ θ_a z_a on the rows used (column by column: stride-1). */
function linearPredictor(design: Design, theta: Float64Array, eta: Float64Array): void {
  const { m, withIntercept, z } = design;
  eta.fill(withIntercept ? theta[0] : 0);
  const first = withIntercept ? 1 : 0;
  for (let a = 0; a < design.kept.length; a++) {
    const value = theta[first + a];
    if (value === 0) continue;
    const start = a * m;
    for (let t = 0; t < m; t++) eta[t] += value * z[start + t];
  }
}

/** D = 2 Σ w softplus(±η): −2 w log p for an event, −2 w log(1 − p) for a non-event. */
function devianceOf(design: Design, eta: Float64Array): number {
  let sum = 0;
  for (let t = 0; t < design.m; t++) sum += design.weight[t] * softplus(design.outcome[t] === 1 ? -eta[t] : eta[t]);
  return 2 * sum;
}

/** Householder factor of V^½A for one Newton step, and the step itself. */
interface NewtonSystem {
  /** θ increment (0 for a column left out of the factor). */
  step: Float64Array;
  /** gᵀH⁻¹g: the deviance decrease a full step promises. */
  decrement: number;
  /** Working copy: R on and above the diagonal of the factor's columns, reflectors below. */
  work: Float64Array;
  m: number;
  /** Original parameter index of each factor position. */
  order: number[];
}

/**
 * Builds V^½A (A = [1, z]) and the working right-hand side V^−½ w (y − p), factors by Householder QR
 * in parameter order (a column with nothing left after the earlier reflections is left out) and
 * solves R δ = (Qᵀ r)[0..rank). Reads the cancel signal between columns. Cost O(m·c²).
 */
function newtonSystem(
  design: Design,
  eta: Float64Array,
  signal: CancelSignal | undefined,
  workspace: Float64Array = new Float64Array(design.m * design.c),
): NewtonSystem {
  const { m, c, withIntercept, z, weight, outcome } = design;
  // Every entry is written below before it is read, so a reused workspace needs no clearing.
  const work = workspace;
  const rhs = new Float64Array(m);
  const root = new Float64Array(m);
  for (let t = 0; t < m; t++) {
    // p and 1 − p each from the side where it has full relative accuracy.
    const e = portableExp(-Math.abs(eta[t]));
    const large = 1 / (1 + e);
    const smallShare = e / (1 + e);
    const pEvent = eta[t] >= 0 ? large : smallShare;
    const pNon = eta[t] >= 0 ? smallShare : large;
    const variance = Math.max(pEvent * pNon, VARIANCE_FLOOR);
    const residual = outcome[t] === 1 ? pNon : -pEvent; // y − p
    root[t] = Math.sqrt(weight[t] * variance);
    rhs[t] = (weight[t] * residual) / root[t];
  }
  const first = withIntercept ? 1 : 0;
  if (withIntercept) for (let t = 0; t < m; t++) work[t] = root[t];
  for (let a = 0; a < design.kept.length; a++) {
    throwIfCancelled(signal);
    const source = a * m;
    const target = (first + a) * m;
    for (let t = 0; t < m; t++) work[target + t] = root[t] * z[source + t];
  }
  const order: number[] = [];
  const tau = new Float64Array(c);
  for (let j = 0; j < c; j++) {
    throwIfCancelled(signal);
    const rank = order.length;
    const start = j * m;
    const length = euclideanLength(work, start, m);
    if (rank >= m || length === 0) continue;
    const diagonal = work[start + rank];
    const remaining = hypotenuse(diagonal, euclideanLength(work, start + rank + 1, m - rank - 1));
    if (!(remaining > STEP_RANK_TOLERANCE * length)) continue;
    // Reflector H = I − τ v vᵀ, v = [1; v₂..], H·column = [β; 0..].
    const beta = diagonal >= 0 ? -remaining : remaining;
    tau[rank] = (beta - diagonal) / beta;
    const vScale = 1 / (diagonal - beta);
    for (let t = start + rank + 1; t < start + m; t++) work[t] *= vScale;
    work[start + rank] = beta;
    for (let later = j + 1; later < c; later++) applyReflector(work, start, rank, m, tau[rank], work, later * m);
    order.push(j);
  }
  const rank = order.length;
  for (let s = 0; s < rank; s++) applyReflector(work, order[s] * m, s, m, tau[s], rhs, 0);
  let decrement = 0;
  for (let s = 0; s < rank; s++) decrement += rhs[s] * rhs[s];
  for (let s = rank - 1; s >= 0; s--) {
    const column = order[s] * m;
    const value = rhs[s] / work[column + s];
    rhs[s] = value;
    for (let r = 0; r < s; r++) rhs[r] -= value * work[column + r];
  }
  const step = new Float64Array(c);
  for (let s = 0; s < rank; s++) step[order[s]] = rhs[s];
  return { step, decrement, work, m, order };
}

/**
 * R⁻¹ (column-major, size×size, upper triangular) of a Newton system's factor, and the factor
 * position of each parameter (−1 when it was left out).
 */
function invertFactor(system: NewtonSystem): { rInverse: Float64Array; position: Int32Array; size: number } {
  const { work, m, order } = system;
  const size = order.length;
  const position = new Int32Array(system.step.length).fill(-1);
  for (let s = 0; s < size; s++) position[order[s]] = s;
  const rInverse = new Float64Array(size * size);
  for (let col = 0; col < size; col++) {
    const out = col * size;
    rInverse[out + col] = 1;
    for (let s = col; s >= 0; s--) {
      const column = order[s] * m;
      const value = rInverse[out + s] / work[column + s];
      rInverse[out + s] = value;
      for (let r = 0; r < s; r++) rInverse[out + r] -= value * work[column + r];
    }
  }
  return { rInverse, position, size };
}



/** √(Σ ω v²) of data[start .. start+m), scaled by the largest |v| so squares cannot overflow. */
function weightedRootMeanSquare(data: Float64Array, start: number, omega: Float64Array, m: number): number {
  let largest = 0;
  for (let t = 0; t < m; t++) largest = Math.max(largest, Math.abs(data[start + t]));
  if (largest === 0) return 0;
  const inverse = 1 / largest;
  let sum = 0;
  for (let t = 0; t < m; t++) {
    const scaled = data[start + t] * inverse;
    sum += omega[t] * scaled * scaled;
  }
  return largest * Math.sqrt(sum);
}

function allFinite(values: Float64Array): boolean {
  for (let a = 0; a < values.length; a++) if (!Number.isFinite(values[a])) return false;
  return true;
}

/** b0 = β0 − Σ_j b_j (anchor_j + offset_j), every product and sum error-free (double-double). */
function interceptInDataUnits(
  standardizedIntercept: number,
  kept: number[],
  anchor: Float64Array,
  offset: Float64Array,
  coefficients: number[],
): number {
  let high = standardizedIntercept;
  let low = 0;
  for (let a = 0; a < kept.length; a++) {
    const b = coefficients[kept[a]];
    if (b === 0) continue;
    for (const part of [anchor[a], offset[a]]) {
      const [product, productError] = twoProduct(b, part);
      const [sum, sumError] = twoSum(high, -product);
      high = sum;
      low += sumError - productError;
    }
  }
  return high + low;
}



// ---------------------------------------------------------------- separation

interface Certificate {
  kind: "complete" | "quasi";
}

/**
 * Whether direction d (in θ coordinates) separates the classes (Albert & Anderson 1984): s_i = d·[1, z_i]
 * ≥ 0 on every event and ≤ 0 on every non-event, a row within the tie band of 0 counting as on the
 * boundary, at least one row strict. null when some row is on the wrong side, or d moves nothing.
 */
function testCertificate(design: Design, direction: Float64Array, tieTolerance: number): Certificate | null {
  const { m, withIntercept, z, outcome } = design;
  const first = withIntercept ? 1 : 0;
  const value = new Float64Array(m).fill(withIntercept ? direction[0] : 0);
  const size = new Float64Array(m).fill(withIntercept ? Math.abs(direction[0]) : 0);
  for (let a = 0; a < design.kept.length; a++) {
    const d = direction[first + a];
    if (d === 0) continue;
    const start = a * m;
    for (let t = 0; t < m; t++) {
      const term = d * z[start + t];
      value[t] += term;
      size[t] += Math.abs(term);
    }
  }
  let strict = 0;
  let ties = 0;
  for (let t = 0; t < m; t++) {
    const signed = outcome[t] === 1 ? value[t] : -value[t];
    if (Math.abs(signed) <= tieTolerance * size[t]) ties++;
    else if (signed > 0) strict++;
    else return null;
  }
  if (strict === 0) return null;
  return { kind: ties === 0 ? "complete" : "quasi" };
}

/** A single term that separates the classes on its own. */
interface SingleSeparator {
  column: number;
  kind: "complete" | "quasi";
  /** True when events sit at the high end. */
  eventsHigh: boolean;
  /** Highest value of the low class and lowest of the high class (equal when quasi). */
  lowClassTop: number;
  highClassBottom: number;
}

/**
 * Terms that separate the classes alone, from the data (file comment): with an intercept, event and
 * non-event values that don't overlap (complete) or meet at one value (quasi); without one, a sign
 * that splits the classes (values of 0 count as ties). Cost O(m·k).
 */
function singleTermSeparation(x: ColumnMatrix, design: Design): SingleSeparator[] {
  const found: SingleSeparator[] = [];
  const { m, rowIndex, outcome, withIntercept } = design;
  for (const j of design.kept) {
    const source = j * x.rows;
    let eventLow = Infinity;
    let eventHigh = -Infinity;
    let otherLow = Infinity;
    let otherHigh = -Infinity;
    for (let t = 0; t < m; t++) {
      const v = x.data[source + rowIndex[t]];
      if (outcome[t] === 1) {
        if (v < eventLow) eventLow = v;
        if (v > eventHigh) eventHigh = v;
      } else {
        if (v < otherLow) otherLow = v;
        if (v > otherHigh) otherHigh = v;
      }
    }
    if (withIntercept) {
      if (eventLow >= otherHigh) {
        found.push({ column: j, kind: eventLow > otherHigh ? "complete" : "quasi", eventsHigh: true, lowClassTop: otherHigh, highClassBottom: eventLow });
      } else if (otherLow >= eventHigh) {
        found.push({ column: j, kind: otherLow > eventHigh ? "complete" : "quasi", eventsHigh: false, lowClassTop: eventHigh, highClassBottom: otherLow });
      }
    } else {
      // Through the origin: events ≥ 0 ≥ non-events (or the reverse), not every value 0.
      if (eventLow >= 0 && otherHigh <= 0) {
        found.push({ column: j, kind: eventLow > 0 && otherHigh < 0 ? "complete" : "quasi", eventsHigh: true, lowClassTop: 0, highClassBottom: 0 });
      } else if (otherLow >= 0 && eventHigh <= 0) {
        found.push({ column: j, kind: otherLow > 0 && eventHigh < 0 ? "complete" : "quasi", eventsHigh: false, lowClassTop: 0, highClassBottom: 0 });
      }
    }
  }
  return found;
}

/**
 * The terms that run off (original column indices, ascending): those whose standardized
 * coefficients moved by at least RUNNING_SHARE of the largest move between `since` and `now`,
 * narrowed when possible to the smallest leading set (by the size of the move) that separates the
 * classes on its own: Newton on those terms alone, up to SEARCH_ITERATIONS steps, finds a
 * certificate. A term that only drifts along with the separating ones (its move is a small share,
 * or the set without it still separates) is left out.
 */
function runningTerms(design: Design, now: Float64Array, since: Float64Array, signal: CancelSignal | undefined): number[] {
  const first = design.withIntercept ? 1 : 0;
  const k = design.kept.length;
  const move = new Float64Array(k);
  let largest = 0;
  for (let a = 0; a < k; a++) {
    move[a] = Math.abs(now[first + a] - since[first + a]);
    largest = Math.max(largest, move[a]);
  }
  if (!(largest > 0)) return [];
  const moving: number[] = [];
  for (let a = 0; a < k; a++) if (move[a] >= RUNNING_SHARE * largest) moving.push(a);
  // Largest move first; ties by column order, so the result is deterministic.
  moving.sort((a, b) => move[b] - move[a] || a - b);
  const toColumns = (positions: number[]): number[] => positions.map((a) => design.kept[a]).sort((u, v) => u - v);
  if (moving.length <= 1 || k > MAX_SEARCH_CANDIDATES) return toColumns(moving);
  for (let size = 1; size < Math.min(moving.length, MAX_SEARCH_TERMS + 1); size++) {
    const subset = moving.slice(0, size);
    const sub = subDesign(design, subset);
    const start = new Float64Array(sub.c);
    if (design.withIntercept) start[0] = now[0];
    const run = newtonRun(sub, start, {
      maxIterations: SEARCH_ITERATIONS,
      tolerance: DEFAULT_TOLERANCE,
      signal,
      separatedFromStart: false,
      stopAtCertificate: true,
    });
    if (run.certificate !== null) return toColumns(subset);
  }
  return toColumns(moving);
}

/** The same rows with only the kept columns at `positions` (positions into design.kept). */
function subDesign(design: Design, positions: number[]): Design {
  const { m } = design;
  const z = new Float64Array(m * positions.length);
  positions.forEach((a, b) => z.set(design.z.subarray(a * m, (a + 1) * m), b * m));
  return {
    ...design,
    kept: positions.map((a) => design.kept[a]),
    c: positions.length + (design.withIntercept ? 1 : 0),
    z,
  };
}

/**
 * The safety net (file comment): rows fitted to their own class within 1e-8 while the
 * standardized coefficients still grow over the last iterations. Complete when the deviance has
 * fallen below 1e-6 of the null deviance, quasi otherwise; null when there is no such sign.
 */
function separationBySymptoms(
  design: Design,
  eta: Float64Array,
  history: Float64Array[],
  deviance: number,
  nullDeviance: number,
): "complete" | "quasi" | null {
  if (history.length < 4) return null;
  let settled = 0;
  for (let t = 0; t < design.m; t++) {
    const own = design.outcome[t] === 1 ? eta[t] : -eta[t];
    if (own > 18.42) settled++; // p of the row's own class above 1 − 1e-8
  }
  if (settled === 0) return null;
  const norm = (theta: Float64Array): number => {
    let largest = 0;
    for (let a = design.withIntercept ? 1 : 0; a < theta.length; a++) largest = Math.max(largest, Math.abs(theta[a]));
    return largest;
  };
  const last = norm(history[history.length - 1]);
  const earlier = norm(history[history.length - 4]);
  if (!(last > earlier * 1.01)) return null;
  return deviance < 1e-6 * nullDeviance ? "complete" : "quasi";
}

/** A column for people: its name in quotes, or "column 3". */
function columnLabel(names: readonly string[] | undefined, j: number): string {
  return names && names[j] !== undefined ? `'${names[j]}'` : `column ${j + 1}`;
}

/** "a", "a and b", "a, b and c". */
function listOf(items: string[]): string {
  return items.length <= 1 ? items.join("") : `${items.slice(0, -1).join(", ")} and ${items[items.length - 1]}`;
}

/**
 * The separation sentence, naming the terms (see the Separation interface). `proven` is false when
 * only the symptoms (safety net) point to separation: then it says "nearly".
 */
function separationMessage(
  kind: "complete" | "quasi",
  terms: number[],
  singles: SingleSeparator[],
  names: readonly string[] | undefined,
  withIntercept: boolean,
  proven: boolean,
): string {
  const number = (v: number): string => significant(v, 6);
  if (singles.length > 0) {
    const s = singles[0];
    const term = columnLabel(names, s.column);
    const high = s.eventsHigh ? "a 1 (yes)" : "a 0 (no)";
    const low = s.eventsHigh ? "a 0 (no)" : "a 1 (yes)";
    let where: string;
    if (!withIntercept) {
      where =
        s.kind === "complete"
          ? `every row with ${term} above 0 is ${high} and every row below 0 ${low}`
          : `every row with ${term} above 0 is ${high}, every row below 0 ${low}, and only rows at exactly 0 are mixed`;
    } else if (s.kind === "complete") {
      where = `every row with ${term} at or above ${number(s.highClassBottom)} is ${high} and every row at or below ${number(s.lowClassTop)} ${low}`;
    } else {
      where = `every row with ${term} above ${number(s.highClassBottom)} is ${high}, every row below it ${low}, and only rows at exactly ${number(s.highClassBottom)} are mixed`;
    }
    const others = singles.length > 1 ? ` (${listOf(singles.slice(1).map((o) => columnLabel(names, o.column)))} alone too)` : "";
    const runs = singles.length > 1 ? "their unpenalized coefficients run" : "its unpenalized coefficient runs";
    return `the classes are separated by ${term}${others}: ${where}, so ${runs} to infinity and the estimates are not finite: use a penalized fit (strength above 0)`;
  }
  const named = terms.map((j) => columnLabel(names, j));
  const nearly = proven ? "" : "(nearly) ";
  const boundary = kind === "complete" ? "" : ", with some rows exactly on the boundary";
  if (named.length === 0) {
    return `the data are ${nearly}separated: a combination of the terms puts every 1 (yes) on one side and every 0 (no) on the other${boundary}, so some unpenalized coefficients run to infinity and the estimates are not finite: use a penalized fit (strength above 0)`;
  }
  const combination = named.length > 1 ? `together: a combination of them` : `: it`;
  const runs = named.length > 1 ? "their unpenalized coefficients run" : "its unpenalized coefficient runs";
  return `the data are ${nearly}separated by ${listOf(named)}${named.length > 1 ? " " : ""}${combination} puts every 1 (yes) on one side and every 0 (no) on the other${boundary}, so ${runs} to infinity and the estimates are not finite: use a penalized fit (strength above 0)`;
}

// ---------------------------------------------------------------- normal tail

/**
 * erfc(x) = (2/√π) ∫ₓ^∞ e^{−t²} dt, in about 1e-15 relative accuracy, from + − × ÷, √ and the
 * portable exp, so every engine gives the same digits. For |x| < 2 the positive series
 * erf(x) = (2/√π) e^{−x²} Σ_{k≥0} 2^k x^{2k+1} / (1·3·…·(2k+1)) (Abramowitz & Stegun 7.1.6), all
 * terms positive so nothing cancels; erfc = 1 − erf loses at most 2.4 digits there. For x ≥ 2 the
 * continued fraction erfc(x) = e^{−x²}/√π · 1/(x + (1/2)/(x + 1/(x + (3/2)/(x + …)))) (A&S 7.1.14),
 * evaluated from a fixed depth of 80 partial fractions. Negative x by erfc(−x) = 2 − erfc(x).
 * @example complementaryErrorFunction(1) // 0.1572992070502851
 */
export function complementaryErrorFunction(x: number): number {
  if (Number.isNaN(x)) return NaN;
  if (x < 0) return 2 - complementaryErrorFunction(-x);
  const rootPi = Math.sqrt(Math.PI);
  if (x < 2) {
    const square = x * x;
    let term = x;
    let sum = x;
    for (let k = 0; k < 200; k++) {
      term *= (2 * square) / (2 * k + 3);
      sum += term;
      if (term <= 1e-17 * sum) break;
    }
    return 1 - ((2 / rootPi) * portableExp(-square) * sum);
  }
  if (x > 27) return 0; // below the smallest double
  let fraction = x;
  for (let depth = 80; depth >= 1; depth--) fraction = x + depth / 2 / fraction;
  return portableExp(-x * x) / rootPi / fraction;
}

/** Two-sided p-value of a standard normal statistic: P(|Z| ≥ |z|) = erfc(|z|/√2). */
export function normalTwoSidedP(z: number): number {
  return complementaryErrorFunction(Math.abs(z) / Math.SQRT2);
}
