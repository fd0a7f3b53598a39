/**
 * Benchmark of the sums table by DuckDB (engine/node/duckdb.ts): `npm run bench -- --only sums`
 * (this part; bench/sums.ts times the fit from the sums), or `tsx bench/sumsDuckdb.ts` alone.
 *
 * Data: a Parquet file of 10,000,000 rows × 20 predictors + target + an integer reading id,
 * written by DuckDB from a seeded formula (DuckDB's hash of row number and column: the same file
 * for the same seed), in a temporary folder removed afterwards; and the same for 1,000,000 rows
 * (for the memory figure). One predictor is a timestamp near 1.7e9 (a large offset).
 *
 * Figures, each best of --repeat (default 1), in this process, interleaved; first on one DuckDB
 * thread (the route's default, for bit-identical sums), then, on a machine with more cores, on
 * every core (DuckDB's own default), the scan and the sums at the same thread count:
 * - `sumsMs`: the whole sums table (describe, first pass, second pass: 231 cross-products,
 *   20 offsets and cross-products with the target, 10 blocks by the hash of the reading id);
 * - `scanMs`: a plain single-aggregate scan of the same file that reads every column the sums read
 *   (`SELECT sum(x0 + … + x19 + y)`), so both read and decode the same bytes; `vsScan = sumsMs /
 *   scanMs` (goal ≤ 3); `oneColumnScanMs`, `sum(y)` alone, for scale;
 * - `peakMB`: the Node process's peak resident memory during the sums (DuckDB runs inside it)
 *   less its resident memory before (Linux VmHWM, reset through /proc/self/clear_refs), for 1M and
 *   10M rows (goal: independent of the rows).
 */
import * as fs from "fs";
import * as os from "os";
import * as path from "path";
import { duckdbRun, duckdbSums } from "../engine/node/duckdb";
import { quoteString } from "../engine/sumsSql";

const PREDICTORS = 20;
const FOLDS = 10;
const SEED = 20261204;

function statusKb(field: string): number | null {
  try {
    const match = new RegExp(`^${field}:\\s+(\\d+) kB`, "m").exec(fs.readFileSync("/proc/self/status", "utf8"));
    return match ? Number(match[1]) : null;
  } catch {
    return null;
  }
}

/** Peak resident memory (MB) while `work` runs, above the resident memory before it; null off Linux. */
async function peakDuring<T>(work: () => Promise<T>): Promise<{ value: T; peakMB: number | null }> {
  (globalThis as { gc?: () => void }).gc?.();
  let linux = statusKb("VmHWM") !== null;
  try {
    fs.writeFileSync("/proc/self/clear_refs", "5");
  } catch {
    linux = false;
  }
  const base = statusKb("VmRSS") ?? 0;
  const value = await work();
  const peak = linux ? statusKb("VmHWM") : null;
  return { value, peakMB: peak === null ? null : ((peak - base) * 1024) / 1e6 };
}

/** Writes the seeded Parquet file of `rows` rows (DuckDB's hash: uniform bits per row and column). */
async function writeFile(file: string, rows: number): Promise<void> {
  const uniform = (j: number, row = "i") => `(CAST(hash(${row} * 64 + ${j}, ${SEED}) >> 11 AS DOUBLE) / 9007199254740992.0)`;
  const columns: string[] = ["i AS reading_id"];
  for (let j = 0; j < PREDICTORS; j++) {
    // x0 a timestamp-like column (1.7e9 s + a minute a row); the others on scales 1 … 20.
    columns.push(j === 0 ? `1.7e9 + 60.0 * i + 30.0 * ${uniform(j)} AS x0` : `${j} * (${uniform(j)} + ${uniform(j + 32)} - 1.0) AS x${j}`);
  }
  // The target: x0's offset within its minute, every third predictor, and uniform noise.
  const signal = ["0.5 * (x0 - 1.7e9 - 60.0 * reading_id) / 30.0", ...Array.from({ length: PREDICTORS }, (_, j) => j).filter((j) => j > 0 && j % 3 === 0).map((j) => `${(1 / j).toFixed(4)} * x${j}`)].join(" + ");
  const sql = `COPY (SELECT *, ${signal} + ${uniform(60, "reading_id")} AS y FROM (SELECT ${columns.join(", ")} FROM range(${rows}) t(i))) TO ${quoteString(file, "duckdb")} (FORMAT parquet)`;
  await duckdbRun(sql, 2);
}

async function best<T>(repeat: number, work: () => Promise<T>): Promise<{ ms: number; value: T }> {
  let ms = Infinity;
  let value: T | null = null;
  for (let r = 0; r < repeat; r++) {
    const start = performance.now();
    value = await work();
    ms = Math.min(ms, performance.now() - start);
  }
  return { ms, value: value as T };
}

export interface DuckdbSumsBench {
  table: string[][];
  lines: string[];
}

/** Runs the bench (see the file comment); the temporary folder is removed whatever happens. */
export async function duckdbSumsBench(repeat = 1): Promise<DuckdbSumsBench> {
  const folder = fs.mkdtempSync(path.join(os.tmpdir(), "shrinkwise-bench-sums-"));
  const table: string[][] = [["sums by DuckDB", "rows", "threads", "sums ms", "scan ms", "sums÷scan", "goal", "1-column scan ms", "peak MB", "blocks", "file MB"]];
  const cores = os.cpus().length;
  const threadCounts = cores > 1 ? [1, cores] : [1];
  const lines: string[] = [];
  try {
    for (const rows of [1_000_000, 10_000_000]) {
      const file = path.join(folder, `drum-${rows}.parquet`);
      await writeFile(file, rows);
      const predictors = Array.from({ length: PREDICTORS }, (_, j) => `x${j}`);
      const request = { source: { kind: "parquet" as const, path: file }, target: "y", predictors, fold: { kind: "hash" as const, key: "reading_id", folds: FOLDS } };
      const every = `sum(${[...predictors, "y"].join(" + ")})`;
      const scanSql = (aggregate: string) => `SELECT ${aggregate} AS s FROM read_parquet(${quoteString(file, "duckdb")})`;
      // Warm the file cache once, then interleave: scan, sums, one-column scan.
      await duckdbRun(scanSql(every), 1);
      const fileMB = fs.statSync(file).size / 1e6;
      for (const threads of threadCounts) {
        let scanMs = Infinity;
        let sumsMs = Infinity;
        let oneMs = Infinity;
        let peakMB: number | null = null;
        let blocks = 0;
        for (let r = 0; r < repeat; r++) {
          scanMs = Math.min(scanMs, (await best(1, () => duckdbRun(scanSql(every), threads))).ms);
          const measured = await peakDuring(() => best(1, () => duckdbSums(request, { threads })));
          sumsMs = Math.min(sumsMs, measured.value.ms);
          peakMB = measured.peakMB === null ? null : Math.max(peakMB ?? 0, measured.peakMB);
          blocks = measured.value.value.blocks.length;
          oneMs = Math.min(oneMs, (await best(1, () => duckdbRun(scanSql("sum(y)"), threads))).ms);
        }
        table.push([
          `${rows} × ${PREDICTORS}`,
          String(rows),
          String(threads),
          sumsMs.toFixed(0),
          scanMs.toFixed(0),
          (sumsMs / scanMs).toFixed(2),
          "≤ 3",
          oneMs.toFixed(0),
          peakMB === null ? "–" : peakMB.toFixed(1),
          String(blocks),
          fileMB.toFixed(0),
        ]);
        lines.push(
          JSON.stringify({
            case: `sums-duckdb-${rows}x${PREDICTORS}`,
            rows,
            p: PREDICTORS,
            blocks,
            threads,
            sumsMs: Number(sumsMs.toFixed(1)),
            scanMs: Number(scanMs.toFixed(1)),
            vsScan: Number((sumsMs / scanMs).toFixed(3)),
            oneColumnScanMs: Number(oneMs.toFixed(1)),
            peakMB: peakMB === null ? null : Number(peakMB.toFixed(1)),
            fileMB: Number(fileMB.toFixed(1)),
            // Milliseconds on a shared machine: the load beside them says how much to trust them.
            loadAverage: Number(os.loadavg()[0].toFixed(2)),
          }),
        );
      }
      fs.rmSync(file, { force: true });
    }
  } finally {
    fs.rmSync(folder, { recursive: true, force: true });
  }
  return { table, lines };
}

if (require.main === module) {
  const repeatAt = process.argv.indexOf("--repeat");
  void duckdbSumsBench(repeatAt >= 0 ? Math.max(1, Number(process.argv[repeatAt + 1])) : 1).then(({ table, lines }) => {
    const widths = table[0].map((_, k) => Math.max(...table.map((r) => r[k].length)));
    for (const r of table) console.log(r.map((cell, k) => cell.padStart(widths[k])).join("  "));
    for (const line of lines) console.log(line);
  });
}
