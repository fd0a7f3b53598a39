/**
 * The command line's ClickHouse route: `npm run fit -- --clickhouse http://host:8123 --table
 * db.table --target y --fold-column f` sends the sums table's queries (engine/sumsSql.ts, ClickHouse
 * dialect) to the server's HTTP interface (engine/node/clickhouse.ts), and fits from the sums
 * (engine/fitSums.ts). A Distributed table works unchanged: every shard sums its own rows and the
 * server merges the partial sums. The report and --json are the other routes' (format.ts).
 *
 * User and password: SHRINKWISE_CLICKHOUSE_USER / SHRINKWISE_CLICKHOUSE_PASSWORD, never printed.
 *
 * Folds (the sums table's blocks): `--fold-column c`, `--fold-key id` (the portable hash of a
 * whole-number column into --folds blocks, default 10) or `--time-column t` (--folds + 1 time
 * blocks). One of them is required: a table on a server (a Distributed one above all) has no row
 * order to deal rows by. The options that need the rows are refused as on the DuckDB route.
 */
import type { FitResult } from "../fit";
import { clickhouseColumns, clickhousePrepare, clickhouseSums, type ClickHouseSumsOptions } from "../node/clickhouse";
import type { FoldRule, SumsRequest } from "../sumsSql";
import type { SumsTable } from "../sumsTable";
import { CommandError, type CommandOptions } from "./args";
import { fitQueriedSums, foldRuleFor } from "./viaDuckdb";

export interface ClickhouseOutcome {
  stdout: string;
  /** The sums the fit came from (null for --print-sql). */
  sums: SumsTable | null;
  result: FitResult | null;
}

/** Options the ClickHouse route can't honour, refused before any query with what to do instead. */
function refuseRowOptions(options: CommandOptions): void {
  const needRows: [boolean, string][] = [
    [options.predict !== null, "--predict"],
    [options.repeats !== null && options.repeats > 1, `--repeats ${options.repeats}`],
    [options.honest, "--honest"],
    [options.stability, "--stability"],
  ];
  const flags = needRows.filter(([given]) => given).map(([, flag]) => flag);
  if (flags.length > 0) {
    throw new CommandError(
      `${flags.join(" and ")} ${flags.length === 1 ? "needs" : "need"} the rows in memory, and the ClickHouse route fits from sums: leave ${flags.length === 1 ? "it" : "them"} out, or export the rows to a file`,
    );
  }
  if (options.timeOrdered) throw new CommandError("--time-ordered needs rows in memory; on the ClickHouse route give --time-column <column> to cut time blocks by a column");
  if (options.seed !== null) throw new CommandError("--seed deals random folds in memory; the ClickHouse route deals rows by --fold-column, --fold-key or --time-column: leave --seed out");
  if (options.outcome === "two-class") throw new CommandError("a yes/no target needs passes over the rows: the ClickHouse route fits number targets only");
  if (options.measure === "mae") throw new CommandError("--error mae needs the rows' absolute errors: fit from sums with --error mse");
  if (!options.foldColumn && !options.foldKey && !options.timeColumn) {
    throw new CommandError(
      `the ClickHouse route needs a fold rule, as a table has no row order to deal rows by: add --fold-column <column>, --fold-key <whole-number column> or --time-column <column>`,
    );
  }
}

/** The predictors: --predictors, else every column but the target, weights, fold column and --exclude. */
function predictorsFor(options: CommandOptions, columns: readonly string[], rule: FoldRule): string[] {
  if (options.predictors !== null) return options.predictors;
  const roles = new Set([options.target, options.weightsColumn, rule.kind === "hash" ? rule.key : rule.column]);
  const exclude = new Set(options.exclude ?? []);
  for (const name of exclude) {
    if (!columns.includes(name)) throw new CommandError(`--exclude names '${name}', which is not a column of ${options.file}`);
  }
  return columns.filter((name) => !roles.has(name) && !exclude.has(name));
}

/**
 * Runs the ClickHouse route of a parsed command (options.clickhouse set; options.file holds the
 * table's name): the sums on the server, then the fit and its report (or, with --print-sql, the
 * queries). Throws CommandError / InputError for bad input and for a server that refuses or times
 * out; the caller turns them into exit code 2. `env` supplies user and password (tests pass their own).
 */
export async function runViaClickhouse(
  options: CommandOptions,
  write: (file: string, text: string) => void,
  env: Record<string, string | undefined> = process.env,
): Promise<ClickhouseOutcome> {
  const url = options.clickhouse;
  if (!url) throw new CommandError("the ClickHouse route needs --clickhouse <url>");
  refuseRowOptions(options);
  const server: ClickHouseSumsOptions = { url, env };
  const source = { kind: "table" as const, name: options.file };
  const rule = foldRuleFor(options);
  const columns = await clickhouseColumns(source, server);
  const predictors = predictorsFor(options, columns, rule);
  if (predictors.length === 0) throw new CommandError(`no predictor columns left in ${options.file}: every column is the target, weights, fold column or excluded`);
  const request: Omit<SumsRequest, "dialect"> = { source, target: options.target, predictors, weights: options.weightsColumn, fold: rule };
  if (options.printSql) {
    const printed: string[] = [];
    const prepared = await clickhousePrepare(request, { ...server, onQuery: (step, sql) => printed.push(`-- ${step}\n${sql};`) });
    prepared.second.queries.forEach((query, i) => printed.push(`-- secondPass ${i + 1} of ${prepared.second.queries.length}\n${query.sql};`));
    return { stdout: printed.join("\n\n") + "\n", sums: null, result: null };
  }
  const sums = await clickhouseSums(request, server);
  return fitQueriedSums(options, sums, rule, write);
}
