/**
 * The command line's DuckDB route (engine/cli/viaDuckdb.ts): a Parquet file, a large file or
 * --via duckdb is summed by DuckDB and fitted from the sums.
 * Reference: the in-memory route on the same file and folds (the engine's own fit over the rows):
 * the same model to 1e-9 relative to the largest coefficient (fitFromSums equals the in-memory
 * gram-form fit to 1e-10, test/engine/sumsFit.test.ts; summation order adds ~1e-13). 100,000
 * rows here; a 1,000,000-row file gave the same agreement by hand (see the report of bench --only sums).
 */
import { mkdtempSync, rmSync, writeFileSync } from "fs";
import { tmpdir } from "os";
import { join } from "path";
import { runCommandAsync } from "../../engine/cli/fit";
import { parseArgs, type CommandOptions } from "../../engine/cli/args";
import { chooseRoute, DUCKDB_FILE_BYTES } from "../../engine/cli/viaDuckdb";
import { duckdbRun } from "../../engine/node/duckdb";
import { quoteString } from "../../engine/sumsSql";
import { TestRandom } from "../helpers/random";

let folder: string;
let csv: string;
let parquet: string;

/** Invented: a roastery's drum log, numbers only (the in-memory route reads numbers), 8 batches, a few blanks. */
function drumLog(n: number, seed: number): string {
  const random = new TestRandom(seed);
  const lines = ["reading_id,batch,drum_temp,airflow,bean_moisture,ambient,lot_weight,roast_loss"];
  for (let i = 0; i < n; i++) {
    const drum = 200 + 15 * random.normal();
    const air = 40 + 5 * random.normal();
    const moisture = 11 + random.normal();
    const ambient = 50 + 10 * random.normal();
    const loss = 12 + 0.05 * (drum - 200) - 0.1 * (air - 40) + 0.01 * ambient + 0.5 * random.normal();
    lines.push([1e12 + i, 1 + (i % 8), drum, air, random.uniform() < 0.01 ? "" : moisture, ambient, 20 + 10 * random.uniform(), loss].join(","));
  }
  return lines.join("\n") + "\n";
}

beforeAll(async () => {
  folder = mkdtempSync(join(tmpdir(), "shrinkwise-via-duckdb-"));
  csv = join(folder, "drum log.csv");
  writeFileSync(csv, drumLog(100_000, 4), "utf8");
  parquet = join(folder, "drum log.parquet");
  await duckdbRun(`COPY (SELECT * FROM read_csv(${quoteString(csv, "duckdb")}, header = true)) TO ${quoteString(parquet, "duckdb")} (FORMAT parquet)`);
});
afterAll(() => rmSync(folder, { recursive: true, force: true }));

interface Json {
  intercept: number;
  coefficients: Record<string, number>;
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

function closeModels(a: Json, b: Json): number {
  const size = Math.max(...Object.values(b.coefficients).map(Math.abs));
  let worst = Math.abs(a.intercept - b.intercept) / Math.max(1, Math.abs(b.intercept));
  for (const [name, value] of Object.entries(b.coefficients)) worst = Math.max(worst, Math.abs(a.coefficients[name] - value) / size);
  return worst;
}

describe("the DuckDB route gives the in-memory route's model", () => {
  const common = ["--target", "roast_loss", "--fold-column", "batch", "--exclude", "reading_id", "--weights-column", "lot_weight", "--mix", "0.5,1", "--json"];

  test("CSV via DuckDB, Parquet (DuckDB by default) and CSV in memory: one model", async () => {
    const memory = await json([csv, ...common, "--via", "memory"]);
    const viaCsv = await json([csv, ...common, "--via", "duckdb"]);
    const viaParquet = await json([parquet, ...common]);
    for (const other of [viaCsv, viaParquet]) {
      expect(closeModels(other, memory)).toBeLessThan(1e-9);
      expect(other.rowsUsed).toBe(memory.rowsUsed);
      expect(other.rowsSkipped).toBe(memory.rowsSkipped);
      expect(other.mix).toBe(memory.mix);
      expect(Math.abs(other.strength - memory.strength) / memory.strength).toBeLessThan(1e-9);
      expect(Math.abs(other.cv.error - memory.cv.error) / memory.cv.error).toBeLessThan(1e-9);
    }
    expect(memory.rowsSkipped).toBeGreaterThan(500);
  }, 120_000);

  test("default folds on the DuckDB route: a hash of the row's position; --fold-key and --time-column make their blocks", async () => {
    const byPosition = await json([parquet, "--target", "roast_loss", "--exclude", "reading_id,batch", "--folds", "5", "--json"]);
    expect(byPosition.cv.folds).toBe(5);
    const byKey = await json([csv, "--target", "roast_loss", "--fold-key", "reading_id", "--exclude", "batch", "--folds", "4", "--json"]);
    expect(byKey.cv.folds).toBe(4);
    const byTime = await json([parquet, "--target", "roast_loss", "--time-column", "reading_id", "--exclude", "batch", "--folds", "3", "--json"]);
    // Three forward folds over four time blocks.
    expect(byTime.cv.folds).toBe(3);
    // The same drum, whichever folds: the coefficients differ only by the penalty chosen.
    expect(Math.abs(byKey.coefficients.drum_temp - 0.05)).toBeLessThan(0.005);
  }, 60_000);

  test("--sums-out saves DuckDB's sums; --sums fits them again without the file: the same model", async () => {
    const saved = join(folder, "drum sums.json");
    const direct = await json([parquet, "--target", "roast_loss", "--fold-key", "reading_id", "--exclude", "batch", "--sums-out", saved, "--json"]);
    const again = await json(["--sums", saved, "--json"]);
    expect(closeModels(again, direct)).toBe(0);
    expect(again.rowsUsed).toBe(direct.rowsUsed);
  }, 60_000);

  test("--strength 0 (least squares) via DuckDB on CSV and Parquet = the in-memory least squares: estimates, SEs, df (1e-9)", async () => {
    interface LeastSquaresJson extends Json {
      baseline: { standardErrors: Record<string, number>; interceptStandardError: number; residualStandardDeviation: number; degreesOfFreedom: number; aliased: string[] };
    }
    const args = ["--target", "roast_loss", "--fold-column", "batch", "--exclude", "reading_id", "--weights-column", "lot_weight", "--strength", "0", "--json"];
    const memory = (await json([csv, ...args, "--via", "memory"])) as LeastSquaresJson;
    for (const other of [(await json([csv, ...args, "--via", "duckdb"])) as LeastSquaresJson, (await json([parquet, ...args])) as LeastSquaresJson]) {
      expect(other.strength).toBe(0);
      expect(closeModels(other, memory)).toBeLessThan(1e-9);
      const names = Object.keys(memory.baseline.standardErrors);
      for (const name of names) expect(Math.abs(other.baseline.standardErrors[name] / memory.baseline.standardErrors[name] - 1)).toBeLessThan(1e-9);
      expect(Math.abs(other.baseline.residualStandardDeviation / memory.baseline.residualStandardDeviation - 1)).toBeLessThan(1e-9);
      expect([other.baseline.degreesOfFreedom, other.baseline.aliased, other.rowsUsed]).toEqual([memory.baseline.degreesOfFreedom, memory.baseline.aliased, memory.rowsUsed]);
    }
    // Least squares is one point: several mixes are one line and exit 2.
    const outcome = await runCommandAsync([parquet, ...args, "--mix", "0.5,1"]);
    expect([outcome.exitCode, outcome.stdout, outcome.stderr]).toEqual([2, "", "shrinkwise: a fixed strength is fitted at one mix, but 2 mixes were given: give a single mix\n"]);
  }, 120_000);

  test("--print-sql prints the queries and exits", async () => {
    const outcome = await runCommandAsync([parquet, "--target", "roast_loss", "--fold-column", "batch", "--exclude", "reading_id", "--print-sql"]);
    expect(outcome.exitCode).toBe(0);
    expect(outcome.stdout).toContain("-- firstPass");
    expect(outcome.stdout).toContain("-- secondPass 1 of 1");
    expect(outcome.stdout).toContain("GROUP BY sw_block");
    // The printed second pass runs as it is and gives one row per batch.
    const second = outcome.stdout.split("-- secondPass 1 of 1\n")[1].trim().replace(/;$/, "");
    expect((await duckdbRun(second)).length).toBe(8);
  });
});

describe("which route", () => {
  const options = (argv: string[]): CommandOptions => {
    const parsed = parseArgs(argv);
    if (parsed.help) throw new Error("help");
    return parsed.options;
  };
  test("Parquet and files over 200 MB go through DuckDB; --via decides when given", () => {
    expect(chooseRoute(options(["a.parquet", "--target", "y"]), () => 10)).toBe("duckdb");
    expect(chooseRoute(options(["a.csv", "--target", "y"]), () => DUCKDB_FILE_BYTES + 1)).toBe("duckdb");
    expect(chooseRoute(options(["a.csv", "--target", "y"]), () => DUCKDB_FILE_BYTES)).toBe("memory");
    expect(chooseRoute(options(["a.csv", "--target", "y"]), () => null)).toBe("memory");
    expect(chooseRoute(options(["a.csv", "--target", "y", "--via", "duckdb"]), () => 10)).toBe("duckdb");
    expect(chooseRoute(options(["a.parquet", "--target", "y", "--via", "memory"]), () => 10)).toBe("memory");
    expect(chooseRoute(options(["a.csv", "--target", "y", "--fold-key", "id"]), () => 10)).toBe("duckdb");
  });
});

describe("bad input on the DuckDB route: exit 2, one line", () => {
  const cases: [string, () => string[], string][] = [
    ["a missing file", () => [join(folder, "none.parquet"), "--target", "roast_loss"], "none.parquet: no such file"],
    ["a missing target", () => [parquet, "--target", "loss"], "the target column 'loss' is not in"],
    ["an excluded column that is not there", () => [parquet, "--target", "roast_loss", "--exclude", "drum"], "--exclude names 'drum'"],
    ["--predict", () => [parquet, "--target", "roast_loss", "--predict", csv], "--predict needs the rows in memory"],
    ["--seed", () => [parquet, "--target", "roast_loss", "--seed", "3"], "--seed deals random folds in memory"],
    ["--time-ordered", () => [parquet, "--target", "roast_loss", "--time-ordered"], "give --time-column"],
    ["two fold rules", () => [parquet, "--target", "roast_loss", "--fold-key", "reading_id", "--fold-column", "batch"], "--fold-column and --fold-key each say how rows make folds"],
    ["--fold-key with --via memory", () => [csv, "--target", "roast_loss", "--fold-key", "reading_id", "--via", "memory"], "--fold-key works on the DuckDB route"],
    ["--folds against a fold column", () => [parquet, "--target", "roast_loss", "--fold-column", "batch", "--folds", "5"], "--folds 5 can't apply with --fold-column batch"],
    ["--error mae", () => [parquet, "--target", "roast_loss", "--error", "mae"], "--error mae needs the rows"],
    ["a broken Parquet file", () => [writeBroken(), "--target", "roast_loss"], "as Parquet"],
  ];
  for (const [what, argv, message] of cases) {
    test(what, async () => {
      const outcome = await runCommandAsync(argv());
      expect(outcome.exitCode).toBe(2);
      expect(outcome.stdout).toBe("");
      expect(outcome.stderr).toContain(message);
      expect(outcome.stderr.trim().split("\n").length).toBe(1);
    });
  }
});

function writeBroken(): string {
  const path = join(folder, "broken.parquet");
  writeFileSync(path, "PAR1 but not really a parquet file", "utf8");
  return path;
}
