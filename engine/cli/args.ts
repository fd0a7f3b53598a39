/**
 * Command-line arguments of `npm run fit -- <file> --target <column> [options]`: parsing and
 * the mapping to the engine's FitOptions. Pure functions (no process, no files), so tests call
 * them directly.
 *
 * Forms accepted: `--name value` and `--name=value`; flags take no value. The data file is the
 * one positional argument (`-` reads standard input). Everything the user can get wrong here is
 * a CommandError, which the entry point turns into exit code 2 and a one-line message.
 */
import { MAX_DRAWS, MAX_REPEATS } from "../assurance";
import { checkMeasure, MEASURES, parseRule } from "../fit";
import type { ChoiceRule, ErrorMeasure, FitOptions } from "../fit";
import { parseOutcome, type OutcomeKind, type OutcomeSetting } from "../outcome";

/** A mistake in how the command was called or in the file it was given (exit code 2). */
export class CommandError extends Error {
  constructor(message: string) {
    super(message);
    this.name = "CommandError";
  }
}

/** Everything the command line says, before any file is read. `null` = not given (engine default). */
export interface CommandOptions {
  /** Path of the CSV/TSV file; `-` = standard input. */
  file: string;
  /** Name of the target column. */
  target: string;
  /** Predictor columns to use (default: every other column). */
  predictors: string[] | null;
  /** Columns to leave out of the default predictor set. */
  exclude: string[] | null;
  /** Mixes to try (0 ridge … 1 lasso). */
  mixes: number[] | null;
  /** Fit exactly this strength (no cross-validation). */
  strength: number | null;
  folds: number | null;
  seed: number | null;
  rule: ChoiceRule | null;
  measure: ErrorMeasure | null;
  /** How to read the target: auto (the default: two distinct labels, TRUE/FALSE or 0/1 are yes/no), number or two-class. */
  outcome: OutcomeSetting;
  /** Yes/no outcomes: the label of the class the model gives the probability of. */
  event: string | null;
  /** Yes/no outcomes: the probability at or above which a row is flagged as the event. */
  cutoff: number | null;
  /** Strengths per tenfold drop of the grid. */
  gridDensity: number | null;
  /** Number of strengths in the grid (instead of a density). */
  count: number | null;
  /** Bottom of the grid as a fraction of its top. */
  lowEnd: number | null;
  /** End a path once a tenfold drop in strength improves the fit by less than 1%. */
  stopEarly: boolean;
  timeOrdered: boolean;
  /** Column whose values label the folds (grouped cross-validation). */
  foldColumn: string | null;
  /** Column of observation weights. */
  weightsColumn: string | null;
  standardize: boolean;
  intercept: boolean;
  /** Print one JSON object instead of the readable report. */
  json: boolean;
  /** `--sums-out <file>`: also save the data's sums table (engine/sums.ts) with the fit's fold labels (JSON; long form for a .csv name). Absent: not saved. */
  sumsOut?: string | null;
  /** `--sums <file>`: fit from a saved sums table (JSON, or its long form as CSV) instead of a data file. Absent: fit a data file. */
  sums?: string | null;
  /** Deals of the random folds (1 to 50); null for 1. */
  repeats: number | null;
  /** Also estimate the whole procedure's error by nested cross-validation. */
  honest: boolean;
  /** Run stability selection at the chosen mix. */
  stability: boolean;
  /** Stability selection: pairs of complementary half-samples B (1 to 1000); null for the engine's 50. */
  draws: number | null;
  /** Stability selection: q, the largest average number of terms selected at a counted strength; null for the default. */
  q: number | null;
  /** Stability selection: the threshold π, strictly between 0.5 and 1; null for 0.75. */
  threshold: number | null;
  /** File of new rows to predict after fitting (same predictor column names). */
  predict: string | null;
  /** Where to write the predictions CSV; null = standard output (and no report). */
  predictionsOut: string | null;
  /** With --predict: the level of CV+ prediction intervals (number targets); null for none. */
  interval: number | null;
  /** Worker threads for the folds and mixes: a whole number from 1, or "auto" (the cores available); null: 1, no workers. */
  threads?: number | "auto" | null;
  /** How the data file is summed (cli/viaDuckdb.ts): "duckdb", "memory", or null to decide by the file (Parquet or large: DuckDB). */
  via?: "duckdb" | "memory" | null;
  /** DuckDB route: a whole-number column hashed into --folds blocks. */
  foldKey?: string | null;
  /** DuckDB route: an ordering column cut into --folds + 1 time blocks. */
  timeColumn?: string | null;
  /** Print the queries that compute the sums, and exit. */
  printSql?: boolean;
  /** ClickHouse route (cli/viaClickhouse.ts): the server's HTTP URL; `file` then holds the --table name. */
  clickhouse?: string | null;
}

export type ParsedCommand = { help: true } | { help: false; options: CommandOptions };

export const USAGE = `Usage: npm run fit -- <data.csv> --target <column> [options]
       npm run fit -- --sums <sums.json> [options]

Fits a cross-validated ridge / lasso / elastic-net regression to the numeric columns of a
CSV or tab-separated file (header row required) and prints the model. A yes/no target (two
labels such as pass/fail, TRUE/FALSE or 0/1) gets a penalized logistic regression: the model
gives the probability of the event, and coefficients are log-odds of the event.

Columns
  --target <name>           column to predict (required)
  --predictors a,b,c        predictor columns (default: every other column)
  --exclude id,train        leave these columns out of the predictors
  --weights-column <name>   observation weights (not a predictor)
  --fold-column <name>      fold labels, one fold per distinct value (not a predictor; text allowed)

Outcome
  --outcome auto|number|two-class
                            how to read the target (default auto: exactly two distinct values
                            that are TRUE/FALSE, 0/1 or two texts make a yes/no outcome; anything
                            else is a number)
  --event <label>           yes/no outcome: the label of the event, the class whose probability
                            the model gives (default TRUE, else 1, else the less frequent label)
  --cutoff <p>              yes/no outcome: flag a row as the event when its probability is p or
                            more, for the misclassified share and the in-sample table (default 0.5)

Model
  --mix 0,0.5,1             mixes to try: 0 ridge, 1 lasso (default 0,0.25,0.5,0.75,1)
  --strength <value>        fit exactly this strength at a single --mix, no cross-validation;
                            0 gives the exact least-squares fit (for a yes/no target, the
                            unpenalized logistic fit with SE, z and p-values)
  --grid-density <n>        strengths per tenfold drop in strength (default 20: 101 strengths
                            down to a low end of 1e-5)
  --count <n>               number of strengths in the grid, instead of --grid-density
  --low-end <ratio>         bottom of the grid as a fraction of its top (default 1e-5 when
                            rows > predictors, 1e-2 when predictors >= rows)
  --stop-early              end a path once a tenfold drop in strength improves the training
                            fit by less than 1% (default: every path covers its whole grid)
  --no-standardize          penalize predictors in their own units
  --no-intercept            fit without an intercept

Cross-validation
  --folds <k>               number of folds (default 10)
  --seed <n>                seed for the random fold assignment (default 1)
  --time-ordered            rows are in time order: train on earlier rows, score on later ones
  --error mse|mae|deviance|misclassified|auc
                            how held-out rows are scored: mse (default) or mae for a number
                            target; deviance (default), misclassified or auc for a yes/no target
                            (for auc, higher is better)
  --rule lowest|one-se      lowest error (default), or the one-SE rule: the strongest penalty
                            whose error is within one standard error of the lowest

How sure is it
  --repeats <r>             deal the random folds r times (seeds seed, seed+1, …; 1 to 50,
                            default 1) and choose on the curve averaged over the r deals
  --honest                  also estimate the error of the whole procedure (every mix, every
                            strength and the rule) by nested cross-validation: the chosen
                            point's CV error chose the model and is optimistic for it
  --stability               run stability selection at the chosen mix over pairs of
                            complementary half-samples, and print each term's stable share and
                            the bound on the expected number of falsely selected terms
  --draws <B>               stability: pairs of half-samples (1 to 1000, default 50)
  --q <q>                   stability: the largest average number of terms selected at a
                            strength that still counts (default round(sqrt(0.8 p)), p the terms
                            that can be selected)
  --threshold <pi>          stability: the share at or above which a term is stable, between
                            0.5 and 1 (default 0.75); not the yes/no cutoff, which is --cutoff
                            (--draws, --q and --threshold need --stability)

Sums (fit without the rows)
  --sums-out <file>         also save the data's sums table: per fold block, the weights' total,
                            means and centred cross-products of the predictors and the target,
                            with the folds this fit uses (JSON; the long form block | term_a |
                            term_b | value when the name ends in .csv)
  --sums <file>             fit from a saved sums table (JSON, or the long form as CSV) instead
                            of a data file: other --mix, grid, --rule or --folds (which merges
                            blocks) need no pass over the data; options that need the rows are
                            refused

Predictions
  --predict <new.csv>       after fitting, predict every row of new.csv (it needs the
                            predictor columns, by name; other columns are copied through) and
                            write CSV: its columns, then prediction (yes/no target: the
                            probability of the event, and class at the cutoff)
  --interval <level>        with --predict, number target: add low (90%) and high (90%), the
                            CV+ prediction interval at the level (0.9 or 90%); with too few
                            rows for the level (n + 1 < 1/(1 − level)) the ends read
                            -Infinity and Infinity
  --predictions-out <file>  write the predictions CSV to this file and print the report as
                            usual; without it the CSV goes to standard output and the report
                            (or --json) is not printed (its warnings go to standard error)

Large files (DuckDB)
  --via duckdb|memory       how the file is read: duckdb sums it where it lies (memory independent
                            of its rows) and fits from the sums; memory reads it whole (default:
                            duckdb for a Parquet file or a file over 200 MB, else memory)
  --fold-key <column>       duckdb: deal rows into --folds blocks by a hash of this whole-number
                            column (an ID), the same on every engine
  --time-column <column>    duckdb: cut rows into --folds + 1 blocks of near-equal size in the
                            order of this column (numbers, dates or times); each fold is scored on
                            one block by a fit on the blocks before it
                            (without --fold-column, --fold-key or --time-column: a hash of the
                            row's position in the file)
  --print-sql               print the queries that compute the sums (DuckDB SQL; the first pass
                            runs on the file to fill in the second) and exit

A table on a ClickHouse server (instead of a data file)
  --clickhouse <url>        the server's HTTP interface (http://host:8123); the sums are computed
                            there (a Distributed table: on every shard) and fitted here. User and
                            password from SHRINKWISE_CLICKHOUSE_USER / SHRINKWISE_CLICKHOUSE_PASSWORD
  --table <db.table>        the table or view to fit; fold rule: --fold-column, --fold-key or
                            --time-column (a table has no row order to hash); --print-sql prints
                            the ClickHouse SQL

Speed
  --threads <n>|auto        fit the folds and mixes on n worker threads (auto: one per core);
                            the result is the same, bit for bit (default 1: no workers)

Output
  --json                    print one JSON object
  --help                    show this text

Numbers use '.' as the decimal point; ',' between groups of three digits is allowed
("1,234.5", quoted in a comma-separated file). Rows with a blank cell in any column the fit
uses are skipped and counted.
Strengths are unit-free: the penalty acts on the standardized target, so recording the target
(or a predictor) in other units gives the same model. Coefficients are in the data's units;
'per SD' is a coefficient × its predictor's SD (the target's units per SD of the predictor).
For a yes/no target the coefficients are log-odds of the event per unit of the predictor (per SD
in the 'per SD' column); the odds ratio e^coefficient is what the odds of the event are
multiplied by for one more unit.
Exit codes: 0 success, 2 bad input or usage, 1 unexpected failure.`;

type Kind = "text" | "number" | "list" | "numberList" | "flag";

/** The option table: each option once, with the kind of value it takes. */
const OPTIONS: Record<string, Kind> = {
  target: "text",
  predictors: "list",
  exclude: "list",
  "weights-column": "text",
  "fold-column": "text",
  mix: "numberList",
  strength: "number",
  "grid-density": "number",
  count: "number",
  "low-end": "number",
  "stop-early": "flag",
  "no-standardize": "flag",
  "no-intercept": "flag",
  folds: "number",
  seed: "number",
  "time-ordered": "flag",
  error: "text",
  // Older spelling of --error, still accepted (not shown in the help).
  measure: "text",
  rule: "text",
  outcome: "text",
  event: "text",
  cutoff: "number",
  repeats: "number",
  honest: "flag",
  stability: "flag",
  draws: "number",
  q: "number",
  threshold: "number",
  predict: "text",
  "predictions-out": "text",
  "sums-out": "text",
  sums: "text",
  interval: "text",
  json: "flag",
  threads: "text",
  via: "text",
  "fold-key": "text",
  "time-column": "text",
  "print-sql": "flag",
  clickhouse: "text",
  table: "text",
  help: "flag",
};

const NUMBER_PATTERN = /^[+-]?(\d+\.?\d*|\.\d+)([eE][+-]?\d+)?$/;

/** Largest seed magnitude the engine takes (its fold generator's range). */
const MAX_SEED = 4294967295;

/**
 * Reads a plain decimal number ("12", "-0.5", "1e-3", ".5"); surrounding spaces allowed.
 * Returns null for anything else (text, hexadecimal, "Infinity", empty).
 */
export function parseNumber(text: string): number | null {
  const trimmed = text.trim();
  if (!NUMBER_PATTERN.test(trimmed)) return null;
  const value = Number(trimmed);
  return Number.isFinite(value) ? value : null;
}

function splitList(option: string, value: string): string[] {
  const items = value.split(",").map((item) => item.trim().normalize("NFC"));
  if (items.some((item) => item === "")) {
    throw new CommandError(`--${option} has an empty item in '${value}': separate names or numbers with single commas`);
  }
  return items;
}

function numberValue(option: string, value: string): number {
  const n = parseNumber(value);
  if (n === null) throw new CommandError(`--${option} needs a number; got '${value}'`);
  return n;
}

/**
 * Parses the arguments after `npm run fit --` (process.argv.slice(2)).
 * Throws CommandError for unknown options, missing values, bad numbers, a missing file or target.
 * Ranges (a mix above 1, 1 fold) are left to the engine, whose messages say what to fix.
 */
export function parseArgs(argv: readonly string[]): ParsedCommand {
  if (argv.includes("--help") || argv.includes("-h")) return { help: true };
  const seen = new Map<string, string | true>();
  const positional: string[] = [];
  for (let i = 0; i < argv.length; i++) {
    const arg = argv[i];
    if (arg === "--") {
      positional.push(...argv.slice(i + 1));
      break;
    }
    if (!arg.startsWith("--") || arg === "-") {
      if (arg.startsWith("-") && arg !== "-" && parseNumber(arg) === null) {
        throw new CommandError(`unknown option ${arg}`);
      }
      positional.push(arg);
      continue;
    }
    const equals = arg.indexOf("=");
    const name = equals >= 0 ? arg.slice(2, equals) : arg.slice(2);
    const kind = OPTIONS[name];
    if (kind === undefined) throw new CommandError(`unknown option --${name}`);
    if (seen.has(name)) throw new CommandError(`--${name} is given twice: give it once`);
    if (kind === "flag") {
      if (equals >= 0) throw new CommandError(`--${name} takes no value`);
      seen.set(name, true);
      continue;
    }
    let value: string;
    if (equals >= 0) {
      value = arg.slice(equals + 1);
    } else {
      const next = argv[i + 1];
      if (next === undefined || next.startsWith("--")) throw new CommandError(`--${name} needs a value`);
      value = next;
      i++;
    }
    if (value.trim() === "") throw new CommandError(`--${name} needs a value`);
    seen.set(name, value);
  }

  // The ClickHouse route reads a table on a server instead of a file: its name stands in for the file's.
  const clickhouse = typeof seen.get("clickhouse") === "string" ? (seen.get("clickhouse") as string).trim() : null;
  const table = typeof seen.get("table") === "string" ? (seen.get("table") as string).trim() : null;
  if (table !== null && clickhouse === null) throw new CommandError("--table names a table on a ClickHouse server: add --clickhouse <url>");
  const fromSums = seen.has("sums");
  if (fromSums) {
    if (clickhouse !== null) throw new CommandError("--sums fits a saved sums table and --clickhouse sums a table on a server: give one");
    if (positional.length > 0) throw new CommandError(`--sums fits from a saved sums table, without a data file: leave out ${positional.join(", ")}`);
    // Options that need the rows (or a data file's columns), each refused by name.
    const needRows: Record<string, string> = {
      predictors: "the table's terms are the predictors",
      exclude: "the table's terms are the predictors",
      "weights-column": "the weights were summed into the table",
      "fold-column": "the table's blocks are the folds",
      "time-ordered": "the table says whether its blocks are in time order",
      seed: "the table's blocks are the folds, nothing is dealt",
      event: "a sums table holds a number target",
      cutoff: "a sums table holds a number target",
      honest: "nested cross-validation refits on rows",
      stability: "stability selection fits half-samples of rows",
      interval: "CV+ intervals need the held-out rows' residuals",
      "sums-out": "the sums are already saved",
      threads: "a fit from sums takes milliseconds on one thread",
    };
    for (const [name, why] of Object.entries(needRows)) {
      if (seen.has(name)) throw new CommandError(`--${name} can't be used with --sums: ${why}; leave it out`);
    }
    const repeatsGiven = seen.get("repeats");
    if (typeof repeatsGiven === "string" && parseNumber(repeatsGiven) !== 1) {
      throw new CommandError("--repeats can't be used with --sums: the table's blocks are dealt once; leave it out");
    }
    const outcomeGiven = seen.get("outcome");
    if (typeof outcomeGiven === "string" && parseOutcome(outcomeGiven) === "two-class") {
      throw new CommandError("--outcome two-class can't be used with --sums: a yes/no fit needs a pass over the rows at every step; fit the data file");
    }
  } else {
    if (clickhouse !== null) {
      if (table === null) throw new CommandError("--clickhouse needs the table to fit: add --table <db.table>");
      if (positional.length > 0) throw new CommandError(`--clickhouse fits a table on the server, not a file: leave out ${positional.join(", ")}`);
      if (seen.has("via")) throw new CommandError("--via chooses how a file is read; --clickhouse reads a table on the server: leave out --via");
      positional.push(table);
    }
    if (positional.length === 0) throw new CommandError("no data file given: npm run fit -- <data.csv> --target <column>");
    if (positional.length > 1) {
      throw new CommandError(`one data file expected, got ${positional.length}: ${positional.join(", ")}`);
    }
  }
  // Column names are compared in Unicode NFC, as the file's header is read (table.ts).
  const text = (name: string): string | null => {
    const value = seen.get(name);
    return typeof value === "string" ? value.trim().normalize("NFC") : null;
  };
  const number = (name: string): number | null => {
    const value = text(name);
    return value === null ? null : numberValue(name, value);
  };
  const list = (name: string): string[] | null => {
    const value = text(name);
    return value === null ? null : splitList(name, value);
  };

  // With --sums the table names its target; --target, when given, must agree (checked on reading it).
  const target = text("target") ?? (fromSums ? "" : null);
  if (target === null) throw new CommandError("--target is missing: name the column to predict, e.g. --target price");

  const ruleText = text("rule");
  // parseRule also takes the older tokens min, onese and 1se, silently.
  const rule = ruleText === null ? null : parseRule(ruleText);
  if (ruleText !== null && rule === null) {
    throw new CommandError(`--rule must be lowest or one-se; got '${ruleText}'`);
  }
  if (seen.has("error") && seen.has("measure")) {
    throw new CommandError("--error is given twice (once as --measure): give it once");
  }
  const errorFlag = seen.has("measure") ? "measure" : "error";
  const measure = text(errorFlag)?.toLowerCase() ?? null;
  const allMeasures: readonly string[] = [...MEASURES.number, ...MEASURES["two-class"]];
  if (measure !== null && !allMeasures.includes(measure)) {
    throw new CommandError(
      `--error must be ${MEASURES.number.join(" or ")} (a number target) or ${MEASURES["two-class"].join(", ").replace(/, ([^,]+)$/, " or $1")} (a yes/no target); got '${text(errorFlag)}'`,
    );
  }
  const outcomeText = text("outcome");
  const outcome = outcomeText === null ? "auto" : parseOutcome(outcomeText);
  if (outcome === null) throw new CommandError(`--outcome must be auto, number or two-class; got '${outcomeText}'`);
  const event = text("event");
  const cutoff = number("cutoff");
  if (cutoff !== null && !(cutoff > 0 && cutoff < 1)) {
    throw new CommandError(`--cutoff must be a probability between 0 and 1 (not 0 or 1); got '${text("cutoff") as string}'`);
  }
  if (outcome === "number") {
    if (event !== null) throw new CommandError("--event names the event of a yes/no target: it can't be used with --outcome number");
    if (cutoff !== null) throw new CommandError("--cutoff applies to a yes/no target: it can't be used with --outcome number");
  }
  if (measure !== null && outcome !== "auto") {
    // The engine's own words for a measure of the other outcome (checked again once the target is read, for auto).
    try {
      checkMeasure(measure as ErrorMeasure, outcome);
    } catch (error) {
      throw new CommandError(error instanceof Error ? error.message : String(error));
    }
  }
  if (seen.has("grid-density") && seen.has("count")) {
    throw new CommandError("--grid-density and --count both set how many strengths the grid has: give one");
  }
  const predictors = list("predictors");
  const exclude = list("exclude");
  if (predictors !== null && exclude !== null) {
    throw new CommandError("--predictors and --exclude can't be used together: list the predictors, or the columns to leave out");
  }
  const mixText = text("mix");
  const mixes = mixText === null ? null : splitList("mix", mixText).map((item) => numberValue("mix", item));
  const strength = number("strength");
  if (strength !== null && mixes === null && strength !== 0) {
    throw new CommandError("--strength fits one point: give a single --mix as well (0 ridge, 1 lasso, or between)");
  }
  const seed = number("seed");
  if (seed !== null && !(Number.isInteger(seed) && Math.abs(seed) <= MAX_SEED)) {
    throw new CommandError(`--seed must be a whole number from -${MAX_SEED} to ${MAX_SEED}; got '${text("seed") as string}'`);
  }
  const threadsText = text("threads");
  let threads: number | "auto" | null = null;
  if (threadsText !== null) {
    const value = threadsText.trim().toLowerCase() === "auto" ? "auto" : parseNumber(threadsText);
    if (value === null || (value !== "auto" && !(Number.isInteger(value) && value >= 1 && value <= 256))) {
      throw new CommandError(`--threads must be a whole number from 1 to 256, or auto; got '${threadsText}'`);
    }
    threads = value;
  }
  const count = number("count");
  if (count === 1 && strength === null) {
    throw new CommandError(
      "--count 1 tries only the top of the grid, where every penalized coefficient is 0, so the model would be the intercept alone: use 2 or more (by default 20 per tenfold drop), or fit one point with --strength",
    );
  }

  const repeats = number("repeats");
  if (repeats !== null && !(Number.isInteger(repeats) && repeats >= 1 && repeats <= MAX_REPEATS)) {
    throw new CommandError(`--repeats must be a whole number from 1 to ${MAX_REPEATS}; got '${text("repeats") as string}'`);
  }
  const stability = seen.has("stability");
  const draws = number("draws");
  if (draws !== null && !(Number.isInteger(draws) && draws >= 1 && draws <= MAX_DRAWS)) {
    throw new CommandError(`--draws must be a whole number from 1 to ${MAX_DRAWS} (pairs of half-samples); got '${text("draws") as string}'`);
  }
  const q = number("q");
  if (q !== null && !(Number.isInteger(q) && q >= 1)) {
    throw new CommandError(`--q must be a whole number of 1 or more (the average number of terms selected at a counted strength); got '${text("q") as string}'`);
  }
  const threshold = number("threshold");
  if (threshold !== null && !(threshold > 0.5 && threshold < 1)) {
    throw new CommandError(`--threshold (stability) must be between 0.5 and 1, not 0.5 or 1; got '${text("threshold") as string}' (the yes/no cutoff is --cutoff)`);
  }
  const stabilityFlags = ["draws", "q", "threshold"].filter((name) => seen.has(name)).map((name) => `--${name}`);
  if (stabilityFlags.length > 0 && !stability) {
    throw new CommandError(`${stabilityFlags.join(" and ")} ${stabilityFlags.length === 1 ? "sets" : "set"} up stability selection: add --stability (the yes/no cutoff is --cutoff)`);
  }
  const honest = seen.has("honest");
  const needCv = [repeats !== null && repeats > 1 ? `--repeats ${repeats}` : null, honest ? "--honest" : null, stability ? "--stability" : null].filter(
    (flag): flag is string => flag !== null,
  );
  if (strength !== null && needCv.length > 0) {
    throw new CommandError(`${needCv.join(" and ")} ${needCv.length === 1 ? "works" : "work"} on the cross-validated choice, and --strength fits one point without cross-validation: leave one out`);
  }
  if (repeats !== null && repeats > 1 && (seen.has("time-ordered") || seen.has("fold-column"))) {
    const fixed = seen.has("time-ordered") ? "--time-ordered" : "--fold-column";
    throw new CommandError(`--repeats ${repeats} deals random folds again with new seeds, but ${fixed} fixes the folds (one deal): leave one out`);
  }
  const sumsOut = text("sums-out");
  if (sumsOut !== null && repeats !== null && repeats > 1) {
    throw new CommandError(`--sums-out saves one deal of the folds, and --repeats ${repeats} deals them ${repeats} times: leave one out`);
  }
  const predict = text("predict");
  const predictionsOut = text("predictions-out");
  const intervalText = text("interval");
  let interval: number | null = null;
  if (intervalText !== null) {
    const percent = intervalText.endsWith("%");
    const n = parseNumber(percent ? intervalText.slice(0, -1) : intervalText);
    interval = n === null ? null : percent ? n / 100 : n;
    if (interval === null || !(interval > 0 && interval < 1)) {
      throw new CommandError(`--interval must be a coverage level between 0 and 1 (not 0 or 1), like 0.9 or 90%; got '${intervalText}'`);
    }
    if (predict === null) throw new CommandError("--interval gives prediction intervals for new rows: add --predict <new.csv>");
    if (outcome === "two-class") throw new CommandError("--interval is for number targets; a yes/no model gives probabilities: leave --interval out");
  }
  if (predict === "-" && positional[0] === "-") {
    throw new CommandError("the data and --predict can't both come from standard input: give one of them as a file");
  }
  if (predictionsOut !== null && predict === null) {
    throw new CommandError("--predictions-out says where to write predictions: add --predict <new.csv>");
  }

  const sumsRoute = sumsRouteOptions(seen, text);

  return {
    help: false,
    options: {
      file: fromSums ? "" : positional[0],
      target,
      predictors,
      exclude,
      // Strength 0 is least squares whatever the mix: one mix is enough.
      mixes: mixes === null && strength === 0 ? [0] : mixes,
      strength,
      folds: number("folds"),
      seed,
      rule,
      measure: measure as ErrorMeasure | null,
      outcome,
      event,
      cutoff,
      gridDensity: number("grid-density"),
      count,
      lowEnd: number("low-end"),
      stopEarly: seen.has("stop-early"),
      timeOrdered: seen.has("time-ordered"),
      foldColumn: text("fold-column"),
      weightsColumn: text("weights-column"),
      standardize: !seen.has("no-standardize"),
      intercept: !seen.has("no-intercept"),
      json: seen.has("json"),
      repeats,
      honest,
      stability,
      draws,
      q,
      threshold,
      predict,
      predictionsOut,
      interval,
      // The sums route's options, only when given.
      ...(sumsOut !== null ? { sumsOut } : {}),
      ...(fromSums ? { sums: text("sums") } : {}),
      // Only when given: the options object is otherwise what it always was.
      ...(threads !== null ? { threads } : {}),
      ...sumsRoute,
      ...(clickhouse !== null ? { clickhouse } : {}),
    },
  };
}

/** The DuckDB route's options (only those given, so the options object is otherwise unchanged), checked against each other. */
function sumsRouteOptions(seen: ReadonlyMap<string, string | true>, text: (name: string) => string | null): Partial<CommandOptions> {
  const out: Partial<CommandOptions> = {};
  const via = text("via");
  if (via !== null) {
    const lower = via.toLowerCase();
    if (lower !== "duckdb" && lower !== "memory") throw new CommandError(`--via must be duckdb or memory; got '${via}'`);
    out.via = lower;
  }
  const foldKey = text("fold-key");
  const timeColumn = text("time-column");
  const rules = ["fold-column", "fold-key", "time-column", "time-ordered"].filter((name) => seen.has(name)).map((name) => `--${name}`);
  if (rules.length > 1) throw new CommandError(`${rules.join(" and ")} each say how rows make folds: give one`);
  const duckdbOnly = [foldKey !== null ? "--fold-key" : null, timeColumn !== null ? "--time-column" : null, seen.has("print-sql") ? "--print-sql" : null].filter(
    (flag): flag is string => flag !== null,
  );
  if (duckdbOnly.length > 0 && out.via === "memory") {
    throw new CommandError(`${duckdbOnly.join(" and ")} ${duckdbOnly.length === 1 ? "works" : "work"} on the DuckDB route: leave out --via memory`);
  }
  if (foldKey !== null) out.foldKey = foldKey;
  if (timeColumn !== null) out.timeColumn = timeColumn;
  if (seen.has("print-sql")) out.printSql = true;
  return out;
}

/**
 * The engine options for a parsed command and the columns read from the file.
 * Options not given are left out, so the engine's documented defaults apply.
 */
export function toFitOptions(
  options: CommandOptions,
  data: { names: readonly string[]; weights: number[] | null; foldLabels: string[] | null; outcome?: OutcomeKind },
): FitOptions {
  const out: FitOptions = {
    names: data.names,
    standardize: options.standardize,
    intercept: options.intercept,
    timeOrdered: options.timeOrdered,
  };
  if (options.mixes !== null) out.mixes = options.mixes;
  if (options.strength !== null) out.strength = options.strength;
  if (options.folds !== null) out.folds = options.folds;
  if (options.seed !== null) out.seed = options.seed;
  if (options.rule !== null) out.rule = options.rule;
  // The outcome as read from the target (table.ts); a number outcome leaves the key out, as before.
  if (data.outcome === "two-class") out.outcome = "two-class";
  if (options.measure !== null) out.measure = options.measure;
  if (options.cutoff !== null && data.outcome === "two-class") out.cutoff = options.cutoff;
  if (options.gridDensity !== null) out.gridDensity = options.gridDensity;
  if (options.count !== null) out.strengthCount = options.count;
  if (options.lowEnd !== null) out.lowEndRatio = options.lowEnd;
  if (options.stopEarly) out.stopEarly = true;
  if (data.weights !== null) out.weights = data.weights;
  if (data.foldLabels !== null) out.foldLabels = data.foldLabels;
  if (options.repeats !== null && options.repeats > 1) out.repeats = options.repeats;
  if (options.honest) out.honestError = true;
  if (options.stability) {
    const stability: NonNullable<FitOptions["stability"]> = {};
    if (options.draws !== null) stability.draws = options.draws;
    if (options.q !== null) stability.expectedTerms = options.q;
    if (options.threshold !== null) stability.threshold = options.threshold;
    out.stability = stability;
  }
  return out;
}
