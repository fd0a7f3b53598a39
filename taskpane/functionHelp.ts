/**
 * The SHRINK cell functions as the page describes them: the guide at the foot of the pane
 * (taskpane.ts, `#help`) and the standalone preview's "What the cells return"
 * (standalone/preview.ts) both read this list. Its own module so that neither of those two
 * imports the other.
 */
/** One SHRINK function as the pane describes it. */
export interface FunctionHelp {
  /** Function id as registered (COEFS, …); users type SHRINK.<id>. */
  id: string;
  /** Arguments as typed, optional ones in brackets. */
  signature: string;
  /** What it returns, in one line. */
  summary: string;
}

export const FUNCTION_HELP: readonly FunctionHelp[] = [
  { id: "COEFS", signature: "target, predictors, [mixes], [settings]", summary: "the chosen model's coefficients, intercept first, one row per term (a yes/no target: log-odds of the event, with odds ratios)." },
  { id: "CHOICE", signature: "target, predictors, [mixes], [settings]", summary: "how the model was chosen: strength, mix, cross-validated error ± SE, rule (lowest error or one-SE rule), terms kept, rows used and skipped (a yes/no target: the event and cutoff first)." },
  { id: "PREDICT", signature: "target, predictors, new_rows, [mixes], [settings]", summary: "fits the same model and predicts one value per row of new_rows (a yes/no target: the event's probability, or the class with predict=class); a number target with interval=0.9 adds the low and high ends of a CV+ prediction interval." },
  { id: "APPLY", signature: "coefficient_table, new_rows", summary: "predictions from a coefficient table (e.g. a COEFS result), without fitting again; a header saying log-odds gives probabilities." },
  { id: "PATH", signature: "target, predictors, [mix], [settings]", summary: "every coefficient at every penalty strength of one mix, strongest first." },
  { id: "CVCURVE", signature: "target, predictors, [mixes], [settings]", summary: "cross-validated error, its SE and the terms kept for every mix and strength tried." },
  { id: "KEPT", signature: "target, predictors, [mixes], [settings]", summary: "each term's coefficient with the share of cross-validation fold models that keep it and that agree on its sign, most kept first (a stability indication, not a significance test)." },
  { id: "SCORE", signature: "actual, predicted, [settings]", summary: "accuracy of predictions: MAE, RMSE, R², mean error, pairs used and skipped; for yes/no actual values and probabilities, log loss, Brier score, AUC and the events caught and missed at the cutoff." },
  { id: "BASELINE", signature: "target, predictors, [settings]", summary: "the fit without penalty (least squares, or logistic for a yes/no target) with standard errors, to compare with." },
];
