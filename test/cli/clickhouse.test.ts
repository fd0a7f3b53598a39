/**
 * The command line's ClickHouse route (engine/cli/viaClickhouse.ts): `--clickhouse URL --table
 * db.table` sums a Distributed table of two shards on the test server and fits from the sums.
 *
 * Reference: the same rows written to a CSV file and fitted by the other two routes, DuckDB
 * (--via duckdb, text levels included) and the in-memory fit over the rows (--via memory; numbers
 * only, as that route reads numbers): the same model to 1e-9 (standardized coefficients, norm-wise
 * relative; the bar for coefficients), since fitFromSums equals the in-memory gram-form fit
 * to 1e-10 (test/engine/sumsFit.test.ts) and the sums of the routes agree to ~1e-12
 * (test/clickhouse/sumsSql.test.ts).
 */
import { mkdtempSync, rmSync, writeFileSync } from "fs";
import { tmpdir } from "os";
import { join } from "path";
import { parseArgs } from "../../engine/cli/args";
import { runCommand, runCommandAsync } from "../../engine/cli/fit";
import { loadRoastLog, roastLog, ROAST_COLUMNS } from "../clickhouse/roastLog";
import { vectorRelativeError } from "../helpers/numeric";
import { clickhouseNeed, clickhouseServer, suiteGate } from "../helpers/requirements";

const TABLE = "roast_log_cli"; // this file's own table (test/clickhouse/roastLog.ts ensureRoastTable)
const PASSWORD = "beans-cooling-tray-7"; // test/clickhouse/users.xml's sw_tester

interface Json {
  intercept: number;
  coefficients: Record<string, number>;
  standardizedCoefficients: Record<string, number>;
  strength: number;
  mix: number;
  rowsUsed: number;
  rowsSkipped: number;
  cv: { error: number; folds: number };
}

async function json(argv: string[]): Promise<Json> {
  const outcome = await runCommandAsync(argv);
  expect(outcome.stderr).toBe("");
  expect(outcome.exitCode).toBe(0);
  return JSON.parse(outcome.stdout) as Json;
}

/** Exit code and the one line of a command that fails. */
async function failure(argv: string[]): Promise<{ exitCode: number; line: string }> {
  const outcome = await runCommandAsync(argv);
  expect(outcome.stdout).toBe("");
  expect(outcome.stderr.endsWith("\n")).toBe(true);
  expect(outcome.stderr.trim().split("\n")).toHaveLength(1);
  return { exitCode: outcome.exitCode, line: outcome.stderr.trim() };
}

/** The two models' standardized coefficients (by the same names), norm-wise relative, and their choices. */
function expectSameModel(a: Json, b: Json): void {
  const names = Object.keys(b.standardizedCoefficients).sort();
  expect(Object.keys(a.standardizedCoefficients).sort()).toEqual(names);
  expect(a.mix).toBe(b.mix);
  expect(Math.abs(a.strength - b.strength)).toBeLessThanOrEqual(1e-9 * b.strength);
  expect(vectorRelativeError(names.map((n) => a.standardizedCoefficients[n]), names.map((n) => b.standardizedCoefficients[n]))).toBeLessThanOrEqual(1e-9);
  expect(Math.abs(a.intercept - b.intercept)).toBeLessThanOrEqual(1e-9 * Math.max(1, Math.abs(b.intercept)));
  expect(a.rowsUsed).toBe(b.rowsUsed);
  expect(a.rowsSkipped).toBe(b.rowsSkipped);
}

describe("arguments of the ClickHouse route (no server needed)", () => {
  test("--clickhouse with --table stands in for the data file; mistakes are one line", () => {
    const parsed = parseArgs(["--clickhouse", "http://127.0.0.1:18123", "--table", "shrinkwise.roast_log", "--target", "roast_loss", "--fold-column", "fold_label"]);
    expect(parsed.help === false && parsed.options.clickhouse).toBe("http://127.0.0.1:18123");
    expect(parsed.help === false && parsed.options.file).toBe("shrinkwise.roast_log");
    expect(() => parseArgs(["--table", "shrinkwise.roast_log", "--target", "y"])).toThrow("--table names a table on a ClickHouse server: add --clickhouse <url>");
    expect(() => parseArgs(["--clickhouse", "http://127.0.0.1:18123", "--target", "y"])).toThrow("--clickhouse needs the table to fit: add --table <db.table>");
    expect(() => parseArgs(["log.csv", "--clickhouse", "http://127.0.0.1:18123", "--table", "t", "--target", "y"])).toThrow(
      "--clickhouse fits a table on the server, not a file: leave out log.csv",
    );
    expect(() => parseArgs(["--clickhouse", "http://127.0.0.1:18123", "--table", "t", "--target", "y", "--via", "duckdb"])).toThrow("leave out --via");
  });

  test("options that need the rows, and a missing fold rule, are refused before any query (exit 2)", async () => {
    const base = ["--clickhouse", "http://127.0.0.1:9", "--table", "shrinkwise.roast_log", "--target", "roast_loss"];
    expect((await failure(base)).line).toBe(
      "shrinkwise: the ClickHouse route needs a fold rule, as a table has no row order to deal rows by: add --fold-column <column>, --fold-key <whole-number column> or --time-column <column>",
    );
    const withFolds = [...base, "--fold-column", "fold_label"];
    expect((await failure([...withFolds, "--honest"])).line).toMatch(/^shrinkwise: --honest needs the rows in memory, and the ClickHouse route fits from sums/);
    expect((await failure([...withFolds, "--seed", "3"])).line).toMatch(/^shrinkwise: --seed deals random folds in memory/);
    expect((await failure([...withFolds, "--error", "mae"])).exitCode).toBe(2);
    const sync = runCommand(withFolds);
    expect(sync.exitCode).toBe(2);
    expect(sync.stderr).toBe("shrinkwise: the ClickHouse route runs asynchronously: use runCommandAsync\n");
  });

  test("a server that refuses: one line naming it, exit 2", async () => {
    const refused = await failure(["--clickhouse", "http://127.0.0.1:9", "--table", "shrinkwise.roast_log", "--target", "roast_loss", "--fold-column", "fold_label"]);
    expect(refused).toEqual({
      exitCode: 2,
      line: "shrinkwise: ClickHouse at http://127.0.0.1:9 refused the connection: is the server running, and is that its HTTP port (often 8123)?",
    });
  });
});

const gate = suiteGate("the command line's ClickHouse route (test/cli/clickhouse.test.ts)", [clickhouseNeed()]);

gate.describe("the ClickHouse route gives the other routes' model", () => {
  const url = clickhouseServer().url ?? "http://127.0.0.1:18123"; // the body runs even when skipped
  const rows = roastLog(12_000, 5);
  let folder = "";
  let csv = "";
  let numbersCsv = "";

  beforeAll(async () => {
    await loadRoastLog(url, TABLE, rows);
    folder = mkdtempSync(join(tmpdir(), "shrinkwise-cli-clickhouse-"));
    const write = (name: string, columns: readonly string[]) => {
      const path = join(folder, name);
      const lines = rows.map((row) => columns.map((c) => (row[c as keyof typeof row] === null ? "" : String(row[c as keyof typeof row]))).join(","));
      writeFileSync(path, `${columns.join(",")}\n${lines.join("\n")}\n`);
      return path;
    };
    csv = write("roast_log.csv", ROAST_COLUMNS);
    numbersCsv = write("roast_log_numbers.csv", ROAST_COLUMNS.filter((c) => c !== "roast_level"));
  });
  afterAll(() => {
    if (folder) rmSync(folder, { recursive: true, force: true });
  });

  const server = () => ["--clickhouse", url, "--table", `shrinkwise.${TABLE}`];
  const common = ["--target", "roast_loss", "--fold-column", "fold_label", "--weights-column", "lot_weight", "--exclude", "reading_id,batch_id", "--mix", "0.5,1", "--json"];

  test("with a text column: ClickHouse over two shards = DuckDB on a CSV of the same rows", async () => {
    const viaClickHouse = await json([...server(), ...common]);
    const viaDuckDB = await json([csv, ...common, "--via", "duckdb"]);
    expectSameModel(viaClickHouse, viaDuckDB);
    expect(Object.keys(viaClickHouse.coefficients)).toContain("roast_level: dark");
    expect(viaClickHouse.cv.folds).toBe(5);
    expect(viaClickHouse.rowsSkipped).toBe(rows.filter((row) => row.bean_moisture === null).length);
    // The generator's true model shows through (test/clickhouse/roastLog.ts).
    expect(Math.abs(viaClickHouse.coefficients.drum_temp - 0.03)).toBeLessThan(0.003);
    expect(Math.abs(viaClickHouse.coefficients.bean_moisture + 0.45)).toBeLessThan(0.05);
  });

  test("numbers only: ClickHouse = the in-memory fit of the rows; the hash rule = DuckDB's", async () => {
    const base = common.filter((_, i) => i < 6 || i > 7); // common without its --exclude
    expectSameModel(
      await json([...server(), ...base, "--exclude", "reading_id,batch_id,roast_level"]),
      await json([numbersCsv, ...base, "--exclude", "reading_id,batch_id", "--via", "memory"]),
    );
    const hashed = ["--target", "roast_loss", "--fold-key", "reading_id", "--folds", "6", "--predictors", "drum_temp,bean_moisture,airflow,roast_level", "--json"];
    expectSameModel(await json([...server(), ...hashed]), await json([csv, ...hashed, "--via", "duckdb"]));
  });

  test("--strength 0 (least squares) from the server's sums = the in-memory least squares of the rows (1e-9)", async () => {
    interface LeastSquaresJson extends Json {
      baseline: { standardErrors: Record<string, number>; residualStandardDeviation: number; degreesOfFreedom: number; aliased: string[] };
    }
    const args = ["--target", "roast_loss", "--fold-column", "fold_label", "--weights-column", "lot_weight", "--strength", "0", "--json"];
    const viaClickHouse = (await json([...server(), ...args, "--exclude", "reading_id,batch_id,roast_level"])) as LeastSquaresJson;
    const inMemory = (await json([numbersCsv, ...args, "--exclude", "reading_id,batch_id", "--via", "memory"])) as LeastSquaresJson;
    expect(viaClickHouse.strength).toBe(0);
    expectSameModel({ ...viaClickHouse, strength: 1 }, { ...inMemory, strength: 1 });
    const names = Object.keys(inMemory.baseline.standardErrors).sort();
    expect(vectorRelativeError(names.map((n) => viaClickHouse.baseline.standardErrors[n]), names.map((n) => inMemory.baseline.standardErrors[n]))).toBeLessThanOrEqual(1e-9);
    expect(Math.abs(viaClickHouse.baseline.residualStandardDeviation / inMemory.baseline.residualStandardDeviation - 1)).toBeLessThanOrEqual(1e-9);
    expect(viaClickHouse.baseline.degreesOfFreedom).toBe(inMemory.baseline.degreesOfFreedom);
  });

  test("the README's example: the generator's model on roastLog.ts's default rows (20,000, seed 12)", async () => {
    // The README runs it on shrinkwise.roast_log as `npx tsx test/clickhouse/roastLog.ts` loads it;
    // here the same rows go into this file's own table.
    const readmeTable = `${TABLE}_readme`;
    await loadRoastLog(url, readmeTable, roastLog(20_000, 12));
    const result = await json([
      ...["--clickhouse", url, "--table", `shrinkwise.${readmeTable}`, "--target", "roast_loss", "--fold-column", "fold_label"],
      ...["--weights-column", "lot_weight", "--exclude", "reading_id,batch_id", "--json"],
    ]);
    const c = result.coefficients;
    // As the README states them: +0.030, −0.45, +0.004, +1.6, −1.2; minute and humidity near 0.
    expect([c.drum_temp.toFixed(3), c.bean_moisture.toFixed(2), c.airflow.toFixed(3)]).toEqual(["0.030", "-0.45", "0.004"]);
    expect([c["roast_level: dark"].toFixed(1), c["roast_level: light"].toFixed(1)]).toEqual(["1.6", "-1.2"]);
    expect(Math.abs(result.standardizedCoefficients.minute)).toBeLessThan(0.01);
    expect(Math.abs(result.standardizedCoefficients.ambient_humidity)).toBeLessThan(0.01);
  });

  test("--sums-out saves the server's sums; --sums refits them without the server: the same model (fitFromSums twice on one table)", async () => {
    const saved = join(folder, "roast-sums.json");
    const written: Record<string, string> = {};
    const outcome = await runCommandAsync([...server(), ...common, "--sums-out", saved], undefined, (file, text) => (written[file] = text));
    expect(outcome.stderr).toBe("");
    expect(outcome.exitCode).toBe(0);
    expect(Object.keys(written)).toEqual([saved]);
    writeFileSync(saved, written[saved]);
    const refit = await json(["--sums", saved, "--mix", "0.5,1", "--json"]);
    expectSameModel(refit, JSON.parse(outcome.stdout) as Json);
  });

  test("--print-sql prints the ClickHouse queries, first pass run on the server to fill in the second", async () => {
    const outcome = await runCommandAsync([...server(), "--target", "roast_loss", "--fold-column", "fold_label", "--print-sql"]);
    expect(outcome.exitCode).toBe(0);
    expect(outcome.stdout).toContain("-- describe\nDESCRIBE TABLE `shrinkwise`.`roast_log_cli`;");
    expect(outcome.stdout).toMatch(/-- secondPass 1 of \d+\nWITH/);
    expect(outcome.stdout).toContain("FROM `shrinkwise`.`roast_log_cli`");
  });

  test("bad input through the server: a missing table or column, a wrong password not printed (exit 2, one line)", async () => {
    const missingTable = await failure(["--clickhouse", url, "--table", "shrinkwise.roast_logg", "--target", "roast_loss", "--fold-column", "fold_label"]);
    expect(missingTable.exitCode).toBe(2);
    expect(missingTable.line).toMatch(new RegExp(`^shrinkwise: ClickHouse at ${url} refused the query: Table shrinkwise\\.roast_logg doesn.t exist`));
    const missingColumn = await failure([...server(), "--target", "roast_loss", "--fold-column", "fold_label", "--predictors", "drum_temp,roast_colour"]);
    expect(missingColumn.exitCode).toBe(2);
    expect(missingColumn.line).toContain("roast_colour");
    const saved = { user: process.env.SHRINKWISE_CLICKHOUSE_USER, password: process.env.SHRINKWISE_CLICKHOUSE_PASSWORD };
    process.env.SHRINKWISE_CLICKHOUSE_USER = "sw_tester";
    process.env.SHRINKWISE_CLICKHOUSE_PASSWORD = `${PASSWORD}-wrong`;
    try {
      const wrong = await failure([...server(), "--target", "roast_loss", "--fold-column", "fold_label"]);
      expect(wrong.exitCode).toBe(2);
      expect(wrong.line).toMatch(/did not accept the user or password: .*; check SHRINKWISE_CLICKHOUSE_USER and SHRINKWISE_CLICKHOUSE_PASSWORD$/);
      expect(wrong.line).not.toContain(PASSWORD);
      process.env.SHRINKWISE_CLICKHOUSE_PASSWORD = PASSWORD;
      const right = await json([...server(), ...common]);
      expect(right.cv.folds).toBe(5);
    } finally {
      for (const [name, value] of [
        ["SHRINKWISE_CLICKHOUSE_USER", saved.user],
        ["SHRINKWISE_CLICKHOUSE_PASSWORD", saved.password],
      ] as const) {
        if (value === undefined) delete process.env[name];
        else process.env[name] = value;
      }
    }
  });
});
