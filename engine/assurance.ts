/**
 * Shapes of the "how sure is it" results that ride on a fit: repeated cross-validation, the
 * honest (nested cross-validation) error of the whole procedure, and stability selection.
 * Types and option checks only; the computations live in fit.ts (repeats, honest error) and
 * stability.ts (stability selection).
 */
import { InputError } from "./errors";
import type { ErrorMeasure } from "./words";

/** Largest number of repeats of the fold deal. */
export const MAX_REPEATS = 50;
/** Stability selection defaults: pairs of complementary halves, and the threshold π. */
export const DEFAULT_DRAWS = 50;
export const MAX_DRAWS = 1000;
export const DEFAULT_THRESHOLD = 0.75;

export interface StabilityOptions {
  /** Pairs of complementary half-samples B (1 to 1000). Default 50 (100 half-sample fits). */
  draws?: number;
  /**
   * q: the largest average number of terms selected at a strength that still counts (a whole
   * number ≥ 1, at most the number of terms). Default round(√(0.8·p)) with p the number of
   * terms that can be selected (penalized, not constant), at least 1.
   */
  expectedTerms?: number;
  /** π: the selection share at or above which a term is stable, strictly between 0.5 and 1. Default 0.75. */
  threshold?: number;
  /** Seed of the half-sample draws. Default: the fit's seed. */
  seed?: number;
}

/**
 * Stability selection with complementary pairs (Meinshausen & Bühlmann 2010, JRSS-B 72(4);
 * Shah & Samworth 2013, JRSS-B 75(1)), at the chosen mix over the full-data path's strengths.
 */
export interface StabilityResult {
  mix: number;
  /** Pairs drawn B; 2B half-sample paths were fitted. */
  draws: number;
  /** q as used. */
  expectedTerms: number;
  /** π as used. */
  threshold: number;
  seed: number;
  /** Terms that could be selected (the p in the bound). */
  candidates: number;
  /** The bound on the expected number of falsely selected terms: q² / ((2π − 1)·p). */
  falseSelectionBound: number;
  /** Strengths counted (largest first): those where the average number selected is ≤ q. */
  strengths: number[];
  /** The average number of terms selected over the 2B halves at each counted strength. */
  averageSelected: number[];
  /** Per term, in the order of FitResult.terms: the highest selection share over the counted strengths. */
  share: number[];
  /** Per term: share ≥ π (and a candidate). */
  stable: boolean[];
  /**
   * Per term: whether it could be selected (counted in `candidates`). False for constant terms
   * and terms held at 0 by bounds (share 0) and for unpenalized terms, which are in every model by
   * choice (share 1, stable false: stability selection makes no claim about them).
   */
  candidate?: boolean[];
}

/** One outer fold of the nested cross-validation. */
export interface HonestFold {
  /** Total weight (rows when unweighted) of the outer held-out rows scored. */
  weight: number;
  /** The measure on those rows, in the units of FitResult.cv (MSE in the target's units squared, etc.). */
  error: number;
  /** What the inner procedure picked on the outer training rows. */
  mix: number;
  strength: number;
  termsKept: number;
}

/**
 * Honest error of the whole procedure (every mix, every strength, the rule) by nested
 * cross-validation (Varma & Simon 2006, BMC Bioinformatics 7:91; Hastie, Tibshirani & Friedman,
 * The Elements of Statistical Learning, 2nd ed., §7.10.2).
 */
export interface HonestError {
  measure: ErrorMeasure;
  /** Outer folds used. */
  folds: number;
  /** Weighted mean of the outer folds' errors. */
  error: number;
  /** Its standard error over the outer folds (same formula as the CV curve's SE). */
  se: number;
  /** The chosen point's cross-validated error (the one that chose the model: optimistic). */
  optimistic: number;
  perFold: HonestFold[];
}

export function checkRepeats(value: unknown): number {
  if (value === undefined || value === null) return 1;
  if (typeof value !== "number" || !Number.isInteger(value) || value < 1 || value > MAX_REPEATS) {
    throw new InputError("setting", `repeats must be a whole number from 1 to ${MAX_REPEATS}; got ${String(value)}`);
  }
  return value;
}

export function checkStabilityOptions(options: StabilityOptions): { draws: number; expectedTerms: number | null; threshold: number; seed: number | null } {
  const draws = options.draws ?? DEFAULT_DRAWS;
  if (typeof draws !== "number" || !Number.isInteger(draws) || draws < 1 || draws > MAX_DRAWS) {
    throw new InputError("setting", `draws must be a whole number from 1 to ${MAX_DRAWS}; got ${String(draws)}`);
  }
  const q = options.expectedTerms ?? null;
  if (q !== null && (typeof q !== "number" || !Number.isInteger(q) || q < 1)) {
    throw new InputError("setting", `q (the average number of terms selected) must be a whole number of 1 or more; got ${String(q)}`);
  }
  const threshold = options.threshold ?? DEFAULT_THRESHOLD;
  if (typeof threshold !== "number" || !(threshold > 0.5 && threshold < 1)) {
    throw new InputError("setting", `the stability threshold must be strictly between 0.5 and 1 (the bound needs π > 0.5); got ${String(threshold)}`);
  }
  const seed = options.seed ?? null;
  if (seed !== null && (typeof seed !== "number" || !Number.isInteger(seed))) {
    throw new InputError("setting", `the stability seed must be a whole number; got ${String(seed)}`);
  }
  return { draws, expectedTerms: q, threshold, seed };
}

/** Default q: round(√(0.8·p)), at least 1 (documented in the README). */
export function defaultExpectedTerms(candidates: number): number {
  return Math.max(1, Math.round(Math.sqrt(0.8 * candidates)));
}

/** q² / ((2π − 1)·p): Meinshausen & Bühlmann 2010, Theorem 1 (as kept for complementary pairs by Shah & Samworth 2013). */
export function falseSelectionBound(expectedTerms: number, threshold: number, candidates: number): number {
  return (expectedTerms * expectedTerms) / ((2 * threshold - 1) * candidates);
}
