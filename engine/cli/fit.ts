/**
 * Command-line entry: `npm run fit -- <data.csv> --target <column> [options]` (see --help).
 * A thin shell: parse arguments → read the file → numeric table → fit → format → print.
 * `runCommand` does everything but the printing, so tests run it in process; the pieces it
 * calls are pure functions tested on their own (test/cli/).
 */
// The sums route (--sums, --sums-out): engine/fitSums.ts, cli/sumsFile.ts.
import { fitFromSums } from "../fitSums";
import type { ReportContext } from "./format";
import { readSumsText, sumsFileText, sumsOfTable } from "./sumsFile";
import { readFileSync, writeFileSync } from "fs";
import { predictionIntervals } from "../conformal";
import { checkMeasure, fit, type FitOptions, type FitResult } from "../fit";
import { fromRows } from "../matrix";
import { predict } from "../model";
import { fitParallel } from "../node/threadPool";
import { CommandError, parseArgs, toFitOptions, USAGE, type CommandOptions } from "./args";
import { failureLine, jsonText, predictionsCsv, textReport, warningMessages } from "./format";
import { readFitTable, readNewRows, type FitTable } from "./table";
import { runViaClickhouse } from "./viaClickhouse";
import { chooseRoute, runViaDuckdb } from "./viaDuckdb";

export interface CommandOutcome {
  exitCode: 0 | 1 | 2;
  stdout: string;
  stderr: string;
}

/** The file's text; `-` reads standard input. Unreadable files are bad input (exit 2). */
export function readInput(file: string): string {
  try {
    return readFileSync(file === "-" ? 0 : file, "utf8");
  } catch (error) {
    const code = (error as NodeJS.ErrnoException).code;
    const reason =
      code === "ENOENT" ? "no such file" : code === "EISDIR" ? "it is a folder" : code === "EACCES" ? "permission denied" : String(code ?? error);
    throw new CommandError(`can't read ${file}: ${reason}`);
  }
}

/** Writes a file of output; failures are bad input (exit 2). */
export function writeOutput(file: string, text: string): void {
  try {
    writeFileSync(file, text, "utf8");
  } catch (error) {
    const code = (error as NodeJS.ErrnoException).code;
    const reason =
      code === "ENOENT" ? "no such folder" : code === "EISDIR" ? "it is a folder" : code === "EACCES" ? "permission denied" : String(code ?? error);
    throw new CommandError(`can't write ${file}: ${reason}`);
  }
}

/**
 * `--predict`: the predictions CSV for the new file's rows from the fitted model, with CV+
 * intervals (engine/conformal.ts) at `--interval` for a number target.
 */
export function predictionsFor(result: FitResult, table: FitTable, options: CommandOptions, text: string): string {
  const file = options.predict as string;
  const fresh = readNewRows(text, table.predictorNames, file === "-" ? "the new rows (standard input)" : file);
  const predictions = predict(result.model, fresh.rows);
  const twoClass = table.outcome === "two-class";
  if (twoClass && options.interval !== null) {
    throw new CommandError("--interval is for number targets; a yes/no model gives probabilities: leave --interval out");
  }
  const interval =
    options.interval === null
      ? null
      : {
          level: options.interval,
          ...predictionIntervals(
            result,
            fresh.rows.length > 0 ? fromRows(fresh.rows) : { rows: 0, columns: result.terms.length, data: new Float64Array(0) },
            options.interval,
          ),
        };
  const classes = twoClass && table.classes && result.classFit ? { event: table.classes.event, other: table.classes.other, cutoff: result.classFit.cutoff } : null;
  return predictionsCsv(fresh.table, predictions, { classes, interval });
}

/**
 * Runs the command on `argv` (the arguments after `npm run fit --`); never throws. `read` reads
 * the data file and the --predict file; `write` writes --predictions-out. The fit runs in this
 * thread whatever --threads says (see runCommandAsync).
 */
export function runCommand(
  argv: readonly string[],
  read: (file: string) => string = readInput,
  write: (file: string, text: string) => void = writeOutput,
): CommandOutcome {
  if (duckdbCommand(argv) !== null) {
    return { exitCode: 2, stdout: "", stderr: "shrinkwise: this file goes through DuckDB, which runs asynchronously: use runCommandAsync (or --via memory)\n" };
  }
  if (clickhouseCommand(argv) !== null) {
    return { exitCode: 2, stdout: "", stderr: "shrinkwise: the ClickHouse route runs asynchronously: use runCommandAsync\n" };
  }
  const step = commandSteps(argv, read, write);
  let next = step.next();
  while (!next.done) {
    const [x, y, options] = next.value;
    let result: FitResult;
    try {
      result = fit(x, y, options);
    } catch (error) {
      next = step.throw(error);
      continue;
    }
    next = step.next(result);
  }
  return next.value;
}

/** As runCommand, with the folds and mixes on --threads worker threads (engine/node/threadPool.ts): the same output. */
export async function runCommandAsync(
  argv: readonly string[],
  read: (file: string) => string = readInput,
  write: (file: string, text: string) => void = writeOutput,
): Promise<CommandOutcome> {
  // A table on a ClickHouse server is summed there and fitted from the sums.
  const clickhouse = clickhouseCommand(argv);
  if (clickhouse !== null) {
    try {
      return { exitCode: 0, stdout: (await runViaClickhouse(clickhouse, write)).stdout, stderr: "" };
    } catch (error) {
      const failure = failureLine(error);
      return { exitCode: failure.exitCode, stdout: "", stderr: failure.line };
    }
  }
  // A Parquet or large file (or --via duckdb) is summed by DuckDB and fitted from the sums.
  const duckdb = duckdbCommand(argv);
  if (duckdb !== null) {
    try {
      return { exitCode: 0, stdout: (await runViaDuckdb(duckdb, write)).stdout, stderr: "" };
    } catch (error) {
      const failure = failureLine(error);
      return { exitCode: failure.exitCode, stdout: "", stderr: failure.line };
    }
  }
  const step = commandSteps(argv, read, write);
  let next = step.next();
  while (!next.done) {
    const [x, y, options, threads] = next.value;
    try {
      next = step.next(await fitParallel(x, y, options, { threads: threads ?? 1 }));
    } catch (error) {
      next = step.throw(error);
    }
  }
  return next.value;
}

/** The parsed command when it takes the DuckDB route (cli/viaDuckdb.ts chooseRoute), else null (bad arguments included: commandSteps reports them). */
function duckdbCommand(argv: readonly string[]): CommandOptions | null {
  try {
    const command = parseArgs(argv);
    return !command.help && !command.options.clickhouse && chooseRoute(command.options) === "duckdb" ? command.options : null;
  } catch {
    return null;
  }
}

/** The parsed command when it names a ClickHouse server (--clickhouse, cli/viaClickhouse.ts), else null (bad arguments included: commandSteps reports them). */
function clickhouseCommand(argv: readonly string[]): CommandOptions | null {
  try {
    const command = parseArgs(argv);
    return !command.help && command.options.clickhouse ? command.options : null;
  } catch {
    return null;
  }
}

type FitCall = [number[][], ArrayLike<number>, FitOptions, number | "auto" | null];

/** The command as steps: yields the one fit it needs (the caller runs it) and returns the outcome; never throws. */
function* commandSteps(
  argv: readonly string[],
  read: (file: string) => string,
  write: (file: string, text: string) => void,
): Generator<FitCall, CommandOutcome, FitResult> {
  try {
    const command = parseArgs(argv);
    if (command.help) return { exitCode: 0, stdout: USAGE + "\n", stderr: "" };
    const options = command.options;
    if (options.sums) return sumsCommand(options, read, write);
    const table = readFitTable(read(options.file), {
      target: options.target,
      predictors: options.predictors,
      exclude: options.exclude,
      weightsColumn: options.weightsColumn,
      foldColumn: options.foldColumn,
      outcome: options.outcome,
      event: options.event,
    });
    if (table.outcome === "number" && (options.event !== null || options.cutoff !== null)) {
      const flag = options.event !== null ? `--event ${options.event}` : `--cutoff ${options.cutoff}`;
      throw new CommandError(
        `${flag} applies to a yes/no target, and '${table.target}' was read as numbers: leave it out, or give --outcome two-class if the column holds two classes`,
      );
    }
    // The engine's words when the measure belongs to the other kind of target.
    checkMeasure(options.measure, table.outcome);
    if (options.folds !== null && table.foldLabels !== null) {
      // With a fold column the labels fix the folds: a different --folds would be ignored.
      const groups = [...new Set(table.foldLabels)];
      if (groups.length !== options.folds) {
        const shown = groups.slice(0, 6).map((g) => `'${g}'`).join(", ") + (groups.length > 6 ? ", …" : "");
        throw new CommandError(
          `--folds ${options.folds} can't apply with --fold-column ${options.foldColumn as string}: that column makes one fold per distinct value, and it has ${groups.length} (${shown}); leave --folds out`,
        );
      }
    }
    // The sums are computed before the fit (so their own problems are reported first) and saved after it succeeds.
    const sums = options.sumsOut ? sumsOfTable(table, options) : null;
    const result: FitResult = yield [
      table.predictors,
      table.targetValues,
      toFitOptions(options, { names: table.predictorNames, weights: table.weights, foldLabels: table.foldLabels, outcome: table.outcome }),
      options.threads ?? null,
    ];
    if (options.sumsOut && sums) write(options.sumsOut, sumsFileText(options.sumsOut, sums));
    return finish(result, table, { table, foldColumn: options.foldColumn, intercept: options.intercept }, options, read, write);
  } catch (error) {
    const failure = failureLine(error);
    return { exitCode: failure.exitCode, stdout: "", stderr: failure.line };
  }
}

/** The report (or predictions) for a fitted result: the common end of both routes. */
function finish(
  result: FitResult,
  table: FitTable,
  context: ReportContext,
  options: CommandOptions,
  read: (file: string) => string,
  write: (file: string, text: string) => void,
): CommandOutcome {
  const report = (): string => (options.json ? jsonText(result, context) : textReport(result, context));
  {
    if (options.predict !== null) {
      const csv = predictionsFor(result, table, options, read(options.predict));
      if (options.predictionsOut === null) {
        // The report is not printed: its warnings go to stderr, one line each, so none is lost.
        const warnings = warningMessages(result, table).map((message) => `shrinkwise: warning: ${message.replace(/\s*[\r\n]+\s*/g, " ").trim()}\n`);
        return { exitCode: 0, stdout: csv, stderr: warnings.join("") };
      }
      write(options.predictionsOut, csv);
    }
    return { exitCode: 0, stdout: report(), stderr: "" };
  }
}

/** `--sums`: fit from a saved sums table; the report is the usual one, with the table's rows. */
function sumsCommand(options: CommandOptions, read: (file: string) => string, write: (file: string, text: string) => void): CommandOutcome {
  const file = options.sums as string;
  const sums = readSumsText(read(file));
  if (options.target !== "" && options.target !== sums.target) {
    throw new CommandError(`--target ${options.target} doesn't match the sums table, whose target is '${sums.target}': leave --target out or give '${sums.target}'`);
  }
  const rows = sums.blocks.reduce((total, block) => total + block.rows, 0);
  const table: FitTable = {
    target: sums.target,
    predictorNames: sums.terms.slice(),
    predictors: [],
    targetValues: [],
    outcome: "number",
    classes: null,
    weights: sums.weights === null ? null : [],
    foldLabels: null,
    rowsUsed: rows,
    rowsSkipped: sums.skippedRows,
    skippedRows: [],
    blanksByColumn: {},
  };
  const fitOptions = toFitOptions(options, { names: sums.terms, weights: null, foldLabels: null });
  delete fitOptions.timeOrdered;
  const result = fitFromSums(sums, fitOptions);
  return finish(result, table, { table, sums: { file, blocking: sums.blocking, blocks: sums.blocks.length, source: sums.source ?? null }, intercept: options.intercept }, options, read, write);
}

if (require.main === module) {
  void runCommandAsync(process.argv.slice(2)).then((outcome) => {
    process.stdout.write(outcome.stdout);
    process.stderr.write(outcome.stderr);
    process.exitCode = outcome.exitCode;
  });
}
