/**
 * Shrinkwise engine: penalized linear regression (ridge, lasso, elastic net) tuned by
 * cross-validation. Pure TypeScript; no Office or DOM dependency.
 */
// Fitting
export { fit, fitAsync, fitSteps, parseRule, DEFAULT_MIXES, MEASURES, higherIsBetter, checkMeasure } from "./fit";
export type { FitOptions, FitResult, ChoicePoint, CvRow, ChoiceRule, ErrorMeasure, UpdateScheme } from "./fit";
export { leastSquares } from "./leastSquares";
export type { LeastSquaresOptions, LeastSquaresResult } from "./leastSquares";
// Fitting from sums: per-block sums computed where the data live (sumsTable.ts, sums.ts, fitSums.ts)
export { fitFromSums, fitFromSumsSteps, fitFromSumsAsync } from "./fitSums";
export type { SumsFitOptions } from "./fitSums";
export { checkSums, sumsToJSON, parseSumsJSON, sumsToLong, sumsFromLong, sumsOfRows, LONG_HEADER, GLOBAL_BLOCK, VARIANCE_ROUNDING } from "./sums";
export type { SumsDetails, LongCell } from "./sums";
export { SUMS_FORMAT, SUMS_VERSION, upperIndex, upperSize } from "./sumsTable";
export type { SumsTable, SumsBlock } from "./sumsTable";
// Models and accuracy
export { predict, linearScore, logistic, linearModel, modelFromJSON } from "./model";
export type { LinearModel, ModelLink } from "./model";
export { score, meanAbsoluteError, rootMeanSquaredError, rSquared, meanError } from "./metrics";
export type { Score } from "./metrics";
export { scoreTwoClass, areaUnderCurve, binomialDeviance, devianceFromScores, misclassifiedShare, softplus } from "./classMetrics";
export type { TwoClassScore } from "./classMetrics";
export { readOutcome, parseOutcome, outcomeLabel } from "./outcome";
export type { OutcomeKind, OutcomeSetting, OutcomeValue, OutcomeReading } from "./outcome";
// Building blocks
export { strengthGrid, runPath, topStrength, RIDGE_TOP_DF } from "./path";
export { penalizedSpectrum, ridgeDegreesOfFreedom, strengthForDegreesOfFreedom } from "./ridgeSpectral";
export { softThreshold, coordinateViolation } from "./descent";
export { RULE_WORDS, INTERCEPT_LABEL, MIX_LABEL, errorWithSe } from "./words";
export { planFolds } from "./folds";
export { cvPlusIntervals, predictionIntervals, lowerRank, kthSmallest, checkLevel } from "./conformal";
export type { FoldModel, IntervalSource } from "./conformal";
export { keptShares } from "./keptShare";
export type { KeptShare } from "./keptShare";
export type { FoldPlan, FoldScheme } from "./folds";
export { mulberry32, randomFolds } from "./random";
export { fromRows, columnView } from "./matrix";
export type { ColumnMatrix } from "./matrix";
// Parallel folds: the fit's tasks and the pool that runs them (Node threads: engine/node/threadPool.ts)
export { openTaskContext, runFitTask } from "./fit";
export type { RunOptions, TaskContext } from "./fit";
export { WorkerPool, PoolUnavailableError, createTaskHost, POLL_MS } from "./parallel";
export type { FitTask, FitTaskResult, FitTaskInput, TaskPool, TaskSession, TaskEndpoint, ToTaskWorker, FromTaskWorker } from "./parallel";
// Errors
export { InputError, CancelledError } from "./errors";
export type { FitWarning, InputErrorCode, WarningCode } from "./errors";
// Two-class outcomes: the penalized solver and the unpenalized baseline
export { LogisticDescent, runLogisticPath, logisticTopStrength, SATURATION, WEIGHT_FLOOR } from "./logistic";
export type { LogisticSettings, LogisticReport, LogisticRun, LogisticPathSettings } from "./logistic";
export { logisticBaseline } from "./logisticBaseline";
export type { LogisticBaselineResult, LogisticBaselineOptions, Separation } from "./logisticBaseline";
export { MAX_REPEATS, DEFAULT_DRAWS, MAX_DRAWS, DEFAULT_THRESHOLD, checkRepeats, checkStabilityOptions, defaultExpectedTerms, falseSelectionBound } from "./assurance";
export type { StabilityOptions, StabilityResult, HonestError, HonestFold } from "./assurance";
export { HONEST_SEED_OFFSET } from "./honest";
// Stability selection (complementary pairs of half-samples)
export { dealHalves, drawSeed, stabilitySettings, stabilityUnits, MIN_HALF_ROWS } from "./stability";
export type { StabilitySettings, HalfPath } from "./stability";
