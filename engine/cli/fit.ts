/**
 * Command-line entry: `npm run fit -- <data.csv> --target <column> [options]` (see --help).
 * A thin shell: parse arguments → read the file → numeric table → fit → format → print.
 * `runCommand` does everything but the printing, so tests run it in process; the pieces it
 * calls are pure functions tested on their own (test/cli/).
 */
import { readFileSync } from "fs";
import { checkMeasure, fit, FitOptions, FitResult } from "../fit";
import { fitParallel } from "../node/threadPool";
import { CommandError, parseArgs, toFitOptions, USAGE } from "./args";
import { failureLine, jsonText, textReport } from "./format";
import { readFitTable } from "./table";

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

/** Runs the command on `argv` (the arguments after `npm run fit --`); never throws. --threads is ignored here (see runCommandAsync). */
export function runCommand(argv: readonly string[], read: (file: string) => string = readInput): CommandOutcome {
  const step = commandSteps(argv, read);
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
export async function runCommandAsync(argv: readonly string[], read: (file: string) => string = readInput): Promise<CommandOutcome> {
  const step = commandSteps(argv, read);
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

type FitCall = [number[][], ArrayLike<number>, FitOptions, number | "auto" | null];

/** The command as steps: yields the one fit it needs (the caller runs it) and returns the outcome; never throws. */
function* commandSteps(argv: readonly string[], read: (file: string) => string): Generator<FitCall, CommandOutcome, FitResult> {
  try {
    const command = parseArgs(argv);
    if (command.help) return { exitCode: 0, stdout: USAGE + "\n", stderr: "" };
    const options = command.options;
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
    const result: FitResult = yield [
      table.predictors,
      table.targetValues,
      toFitOptions(options, { names: table.predictorNames, weights: table.weights, foldLabels: table.foldLabels, outcome: table.outcome }),
      options.threads ?? null,
    ];
    const context = { table, foldColumn: options.foldColumn };
    return { exitCode: 0, stdout: options.json ? jsonText(result, context) : textReport(result, context), stderr: "" };
  } catch (error) {
    const failure = failureLine(error);
    return { exitCode: failure.exitCode, stdout: "", stderr: failure.line };
  }
}

if (require.main === module) {
  void runCommandAsync(process.argv.slice(2)).then((outcome) => {
    process.stdout.write(outcome.stdout);
    process.stderr.write(outcome.stderr);
    process.exitCode = outcome.exitCode;
  });
}
