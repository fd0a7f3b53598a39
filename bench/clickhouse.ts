/**
 * Benchmark of the ClickHouse route (a script, not a test):
 *   npx tsx bench/clickhouse.ts [--rows 1000000] [--repeat 3] [--url http://127.0.0.1:18123] [--no-duckdb]
 *
 * Needs a ClickHouse server with the repo's schema (test/clickhouse/server.sh start; without
 * --url and SHRINKWISE_CLICKHOUSE_URL the script starts the test server itself and stops it after).
 * Loads the roastery's sensor log (test/clickhouse/roastLog.ts, seed 12) into the two shards'
 * roast_bench tables unless they already hold exactly those rows, then, best of --repeat:
 * - `scanMs`: a plain single-aggregate scan of the Distributed table (`sum(drum_temp)`);
 * - `sumsMs`: the sums table through clickhouseSums (describe, first pass, levels, second pass)
 *   for 6 number predictors and one text predictor (3 levels), weights, fold-label blocks;
 *   `vsScan = sumsMs / scanMs`;
 * - the same through DuckDB on a Parquet file of the same rows (in a temp folder, removed
 *   afterwards; one DuckDB thread, as the CLI runs it): `duckdbSumsMs`, `duckdbScanMs`;
 * - `gapToDuckDB`: the largest gap between the two tables (test/helpers/sumsCompare.ts; bar 1e-10);
 * - `sameBits`: whether repeated ClickHouse runs gave bit-identical tables.
 * Prints a few readable lines, then one JSON line.
 */
import { spawnSync } from "child_process";
import { mkdtempSync, rmSync, writeFileSync } from "fs";
import { tmpdir } from "os";
import { join } from "path";
import { clickhouseRunner, clickhouseSums } from "../engine/node/clickhouse";
import { duckdbRun, duckdbSums } from "../engine/node/duckdb";
import { sumsToJSON } from "../engine/sums";
import { quoteString, type SumsRequest } from "../engine/sumsSql";
import type { SumsTable } from "../engine/sumsTable";
import { sumsGap } from "../test/helpers/sumsCompare";
import { loadRoastLog, roastLog, ROAST_COLUMNS, type RoastReading } from "../test/clickhouse/roastLog";

const SERVER_SCRIPT = join(__dirname, "..", "test", "clickhouse", "server.sh");
const SEED = 12;

function argValue(args: readonly string[], name: string): string | undefined {
  const at = args.indexOf(name);
  return at >= 0 ? args[at + 1] : undefined;
}

async function best<T>(repeat: number, work: () => Promise<T>): Promise<{ ms: number; last: T; all: T[] }> {
  let ms = Infinity;
  const all: T[] = [];
  for (let i = 0; i < repeat; i++) {
    const began = process.hrtime.bigint();
    all.push(await work());
    ms = Math.min(ms, Number(process.hrtime.bigint() - began) / 1e6);
  }
  return { ms, last: all[all.length - 1], all };
}

function request(source: SumsRequest["source"]): Omit<SumsRequest, "dialect"> {
  return {
    source,
    target: "roast_loss",
    predictors: ["drum_temp", "bean_moisture", "airflow", "ambient_humidity", "minute", "batch_id", "roast_level"],
    weights: "lot_weight",
    fold: { kind: "column", column: "fold_label" },
  };
}

async function main(args: string[]): Promise<void> {
  const rows = Number(argValue(args, "--rows") ?? 1_000_000);
  const repeat = Math.max(1, Number(argValue(args, "--repeat") ?? 3));
  let url = argValue(args, "--url") ?? process.env.SHRINKWISE_CLICKHOUSE_URL;
  let startedHere = false;
  if (!url) {
    const started = spawnSync(SERVER_SCRIPT, ["start"], { encoding: "utf8" });
    if (started.status !== 0) throw new Error(`test/clickhouse/server.sh start failed: ${started.stderr.trim()}`);
    startedHere = /^ClickHouse test server running/m.test(started.stdout);
    url = "http://127.0.0.1:18123";
  }
  const run = clickhouseRunner({ url });
  const folder = mkdtempSync(join(tmpdir(), "shrinkwise-bench-clickhouse-"));
  try {
    const data: RoastReading[] = roastLog(rows, SEED);
    // Reload only when the tables do not hold exactly these rows (count and two exact sums).
    const expected = { n: rows, ids: data.reduce((s, r) => s + BigInt(r.reading_id), 0n) };
    const held = await run("SELECT count() AS n, sum(reading_id) AS ids FROM shrinkwise.roast_bench").catch(() => [] as Record<string, unknown>[]);
    if (!(held[0] && Number(held[0].n) === expected.n && BigInt(held[0].ids as number | bigint) === expected.ids)) {
      const began = Date.now();
      await loadRoastLog(url, "roast_bench", data);
      process.stdout.write(`loaded ${rows} rows into the two shards in ${((Date.now() - began) / 1000).toFixed(1)} s\n`);
    }
    const version = (await run("SELECT version() AS v"))[0].v;

    const scan = await best(repeat, () => run("SELECT sum(drum_temp) AS s FROM shrinkwise.roast_bench"));
    const sums = await best(repeat, () => clickhouseSums(request({ kind: "table", name: "shrinkwise.roast_bench" }), { url: url as string }));
    const sameBits = sums.all.every((table) => sumsToJSON({ ...table, source: "" }) === sumsToJSON({ ...sums.all[0], source: "" }));

    let duck: { sumsMs: number; scanMs: number; gap: number } | null = null;
    if (!args.includes("--no-duckdb")) {
      const csv = join(folder, "roast_bench.csv");
      const parquet = join(folder, "roast_bench.parquet");
      const lines = data.map((row) => ROAST_COLUMNS.map((column) => (row[column] === null ? "" : String(row[column]))).join(","));
      writeFileSync(csv, `${ROAST_COLUMNS.join(",")}\n${lines.join("\n")}\n`);
      await duckdbRun(`COPY (SELECT * FROM read_csv(${quoteString(csv, "duckdb")}, header = true)) TO ${quoteString(parquet, "duckdb")} (FORMAT parquet)`);
      rmSync(csv);
      const duckScan = await best(repeat, () => duckdbRun(`SELECT sum(drum_temp) AS s FROM read_parquet(${quoteString(parquet, "duckdb")})`));
      const duckSums = await best(repeat, () => duckdbSums(request({ kind: "parquet", path: parquet })));
      duck = { sumsMs: duckSums.ms, scanMs: duckScan.ms, gap: sumsGap(sums.last as SumsTable, duckSums.last) };
    }

    const report = {
      bench: "clickhouse-sums",
      server: `ClickHouse ${String(version)}`,
      rows,
      shards: 2,
      predictors: 7,
      terms: sums.last.terms.length,
      blocks: sums.last.blocks.length,
      scanMs: Number(scan.ms.toFixed(1)),
      sumsMs: Number(sums.ms.toFixed(1)),
      vsScan: Number((sums.ms / scan.ms).toFixed(2)),
      sameBits,
      duckdbSumsMs: duck ? Number(duck.sumsMs.toFixed(1)) : null,
      duckdbScanMs: duck ? Number(duck.scanMs.toFixed(1)) : null,
      gapToDuckDB: duck ? duck.gap : null,
    };
    process.stdout.write(
      `ClickHouse ${report.server.split(" ")[1]}, ${rows.toLocaleString("en-US")} rows over 2 shards, ${report.terms} terms, ${report.blocks} blocks (best of ${repeat}):\n` +
        `  sums ${report.sumsMs} ms, plain scan ${report.scanMs} ms (×${report.vsScan}); repeated runs bit-identical: ${sameBits}\n` +
        (duck
          ? `  DuckDB on a Parquet file of the same rows (1 thread): sums ${report.duckdbSumsMs} ms, plain scan ${report.duckdbScanMs} ms; largest gap between the two tables ${duck.gap.toExponential(1)}\n`
          : "") +
        `${JSON.stringify(report)}\n`,
    );
  } finally {
    rmSync(folder, { recursive: true, force: true });
    if (startedHere) spawnSync(SERVER_SCRIPT, ["stop"], { encoding: "utf8" });
  }
}

main(process.argv.slice(2)).catch((error: unknown) => {
  process.stderr.write(`${error instanceof Error ? error.message : String(error)}\n`);
  process.exit(1);
});
