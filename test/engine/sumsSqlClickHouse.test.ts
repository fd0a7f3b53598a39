/**
 * engine/sumsSql.ts in ClickHouse's dialect, run on a real server (the repo's test server,
 * test/clickhouse/, 18.16 from Debian): the fold hash and the exact literals give the same values
 * as TypeScript and DuckDB, and the sums over a Distributed table of two shards equal the plain
 * two-pass reference (test/helpers/sumsReference.ts) and DuckDB's on the same rows to 1e-10
 * relative to each entry's scale (the tolerance of test/engine/sumsSql.test.ts).
 *
 * Needs a server at SHRINKWISE_CLICKHOUSE_URL (unset: the repo's test server, which the gate
 * starts with `test/clickhouse/server.sh start` when clickhouse-server is installed) whose config defines the cluster shrinkwise_two_shards
 * with shards in the databases sw_shard1 and sw_shard2. The suite makes its own tables
 * (sums_sql_probe) and drops them afterwards. Skipped with a printed reason when no server
 * answers; a failure under SHRINKWISE_REQUIRE_ALL=1.
 */
import { mkdtempSync, rmSync, writeFileSync } from "fs";
import { tmpdir } from "os";
import { join } from "path";
import { duckdbRun, duckdbSums, fileSource } from "../../engine/node/duckdb";
import { computeSums, exactLiteral, foldHashSql, foldOfKey, type FoldRule, type SqlRow } from "../../engine/sumsSql";
import { csvOf, gap, referenceSums, roastLog, type Reading } from "../helpers/sumsReference";
import { clickhouseNeed, clickhouseServer, suiteGate } from "../helpers/requirements";

// The shared ClickHouse gate: SHRINKWISE_CLICKHOUSE_URL, else the repo's test server, started
// when clickhouse-server is installed (test/helpers/requirements.ts clickhouseServer).
const gate = suiteGate("the ClickHouse sums checks (test/engine/sumsSqlClickHouse.test.ts)", [clickhouseNeed()]);
const URL_TEXT = clickhouseServer().url ?? "http://127.0.0.1:18123";

/** A minimal HTTP runner (POST, FORMAT JSON, 64-bit integers as text): enough for these checks. */
async function clickhouse(sql: string): Promise<SqlRow[]> {
  const response = await fetch(`${URL_TEXT}/?output_format_json_quote_64bit_integers=1`, { method: "POST", body: /^\s*(SELECT|WITH|DESCRIBE)/i.test(sql) ? `${sql}\nFORMAT JSON` : sql });
  const text = await response.text();
  if (!response.ok) throw new Error(text.split("\n")[0]);
  return /^\s*(SELECT|WITH|DESCRIBE)/i.test(sql) ? ((JSON.parse(text) as { data: SqlRow[] }).data ?? []) : [];
}

const nullable = (v: number | string | null): string => (v === null ? "\\N" : String(v));

gate.describe("ClickHouse: the generated SQL on a real server", () => {
  const rows = roastLog(2000, 23, 29_000_000);
  let folder: string;
  beforeAll(async () => {
    folder = mkdtempSync(join(tmpdir(), "shrinkwise-sums-ch-"));
    const columns = "(reading_id UInt64, minute UInt32, batch String, drum_temp Nullable(Float64), airflow Float64, bean_moisture Nullable(Float64), roast_level Nullable(String), lot_weight Float64, roast_loss Nullable(Float64))";
    for (const shard of ["sw_shard1", "sw_shard2"]) {
      await clickhouse(`CREATE DATABASE IF NOT EXISTS ${shard}`);
      await clickhouse(`DROP TABLE IF EXISTS ${shard}.sums_sql_probe`);
      await clickhouse(`CREATE TABLE ${shard}.sums_sql_probe ${columns} ENGINE = Log`);
    }
    await clickhouse("CREATE DATABASE IF NOT EXISTS shrinkwise");
    await clickhouse("DROP TABLE IF EXISTS shrinkwise.sums_sql_probe");
    await clickhouse(`CREATE TABLE shrinkwise.sums_sql_probe ${columns} ENGINE = Distributed(shrinkwise_two_shards, '', sums_sql_probe)`);
    // Rows dealt to the two shards alternately, straight into each shard's own table.
    const csv = (part: readonly Reading[]) =>
      part
        .map((r) => [r.reading_id, r.minute, r.batch, r.drum_temp, r.airflow, r.bean_moisture, r.roast_level, r.lot_weight, r.roast_loss].map((v) => (typeof v === "string" ? `"${v}"` : nullable(v))).join(","))
        .join("\n");
    await clickhouse(`INSERT INTO sw_shard1.sums_sql_probe FORMAT CSV\n${csv(rows.filter((_, i) => i % 2 === 0))}\n`);
    await clickhouse(`INSERT INTO sw_shard2.sums_sql_probe FORMAT CSV\n${csv(rows.filter((_, i) => i % 2 === 1))}\n`);
  });
  afterAll(async () => {
    await clickhouse("DROP TABLE IF EXISTS shrinkwise.sums_sql_probe");
    for (const shard of ["sw_shard1", "sw_shard2"]) await clickhouse(`DROP TABLE IF EXISTS ${shard}.sums_sql_probe`);
    rmSync(folder, { recursive: true, force: true });
  });

  test("the fold hash: ClickHouse, DuckDB and TypeScript agree (negative keys, keys near 2^53 and 2^63, UInt64 keys)", async () => {
    const keys = [0n, 1n, -1n, 65535n, 65536n, 4294967295n, 4294967296n, -4294967297n, 1000000000000n, -123456789012n, 9007199254740991n, 9007199254740993n, 9223372036854775807n, -9223372036854775808n];
    const list = keys.map((k) => `toInt64('${k.toString()}')`).join(", ");
    for (const folds of [2, 7, 10]) {
      const answer = await clickhouse(`SELECT toString(k) AS k, ${foldHashSql("k", folds, "clickhouse")} AS fold FROM (SELECT arrayJoin([${list}]) AS k)`);
      expect(answer.length).toBe(keys.length);
      for (const row of answer) expect(Number(row.fold)).toBe(foldOfKey(BigInt(row.k as string), folds) + 1);
    }
    // UInt64 keys above 2^63: ClickHouse wraps them to Int64, which keeps key mod 2^32.
    const big = [18446744073709551615n, 9223372036854775808n, 12345678901234567890n];
    const answer = await clickhouse(`SELECT toString(k) AS k, ${foldHashSql("k", 10, "clickhouse")} AS fold FROM (SELECT arrayJoin([${big.map((k) => `toUInt64('${k}')`).join(", ")}]) AS k)`);
    for (const row of answer) expect(Number(row.fold)).toBe(foldOfKey(BigInt(row.k as string), 10) + 1);
    const duck = await duckdbRun(`SELECT CAST(k AS VARCHAR) AS k, ${foldHashSql("k", 10, "duckdb")} AS fold FROM (SELECT unnest([${big.map((k) => `CAST('${k}' AS UBIGINT)`).join(", ")}]) AS k)`);
    for (const row of duck) expect(Number(row.fold)).toBe(foldOfKey(BigInt(row.k as string), 10) + 1);
  });

  test("exact literals come back as the same doubles", async () => {
    const values = [0.1, 1 / 3, -2.5e-300, 5e-324, 1.7976931348623157e308, 1e12 + 0.5, 2 ** 53 + 2, 29000000.12345679];
    const [row] = await clickhouse(`SELECT ${values.map((v, i) => `${exactLiteral(v, "clickhouse")} AS v${i}`).join(", ")}`);
    values.forEach((v, i) => expect(Number(row[`v${i}`])).toBe(v));
  });

  const used: (keyof Reading)[] = ["roast_loss", "drum_temp", "airflow", "bean_moisture", "roast_level", "lot_weight"];
  const request = (fold: FoldRule) => ({
    target: "roast_loss",
    predictors: ["drum_temp", "airflow", "bean_moisture", "roast_level"],
    weights: "lot_weight",
    fold,
  });
  const rules: [string, FoldRule, keyof Reading, (r: Reading) => string][] = [
    ["a fold column", { kind: "column", column: "batch" }, "batch", (r) => r.batch],
    ["the hash of the reading id", { kind: "hash", key: "reading_id", folds: 5 }, "reading_id", (r) => String(foldOfKey(r.reading_id, 5) + 1)],
    ["time blocks at given cuts", { kind: "time", column: "minute", folds: 2, cuts: [29_000_700, 29_001_400] }, "minute", (r) => String(1 + [29_000_700, 29_001_400].filter((c) => r.minute >= c).length)],
  ];
  for (const [what, fold, column, label] of rules) {
    test(`sums over the two shards by ${what} equal the reference and DuckDB's`, async () => {
      const viaClickHouse = await computeSums({ ...request(fold), source: { kind: "table", name: "shrinkwise.sums_sql_probe" }, dialect: "clickhouse", maxAggregates: 20 }, clickhouse);
      const csv = join(folder, "probe.csv");
      writeFileSync(csv, csvOf(rows), "utf8");
      const viaDuckDB = await duckdbSums({ ...request(fold), source: fileSource(csv) });
      expect(viaClickHouse.terms).toEqual(viaDuckDB.terms);
      expect(viaClickHouse.skippedRows).toBe(viaDuckDB.skippedRows);
      for (const table of [viaClickHouse, viaDuckDB]) {
        expect(gap(table, referenceSums(rows, table, [...used, column], "lot_weight", label))).toBeLessThan(1e-10);
      }
    });
  }

  test("time blocks by ClickHouse's own quantiles: K+1 blocks of near-equal size", async () => {
    const table = await computeSums({ ...request({ kind: "time", column: "minute", folds: 4 }), source: { kind: "table", name: "shrinkwise.sums_sql_probe" }, dialect: "clickhouse" }, clickhouse);
    expect(table.blocks.map((b) => b.label)).toEqual(["1", "2", "3", "4", "5"]);
    const kept = rows.length - table.skippedRows;
    for (const block of table.blocks) expect(Math.abs(block.rows - kept / 5)).toBeLessThanOrEqual(1);
  });
});
