/**
 * Demo data for the DuckDB route: a year of the invented roastery's per-minute drum sensor log,
 * written as Parquet (all numbers made up by this script). Not committed (about 30 MB); write it
 * where you like:
 *
 *   npx tsx addin/demo/generateSensorLog.ts sensor-log.parquet [minutes]
 *
 * One row a minute from 2025-01-01 00:00 UTC (525,600 rows by default): `minute` (a TIMESTAMP),
 * `batch_id` (a new roast every 15 minutes), `drum_temp` (°C), `exhaust_temp` (°C, follows the
 * drum), `airflow` (m³/h), `gas_pressure` (kPa), `ambient_humidity` (%), `roast_level` (text:
 * light, medium, dark), and the target `roast_loss` (% of green weight lost so far, blank now and
 * then when the scale drops a reading).
 *
 * TRUE MODEL:
 *   roast_loss = 14 + 0.04·(drum_temp − 210) − 0.03·(airflow − 40) + 0.6·(gas_pressure − 3)
 *                + 1.2·[dark] − 0.8·[light] + noise,   noise ~ Normal(0, 0.3²)
 *   zero (no effect): exhaust_temp (correlated with drum_temp), ambient_humidity
 *
 * Randomness: Mulberry32 (engine/random.ts) from SEED; normals by the Box–Muller transform; the
 * same seed and length always give the same rows.
 */
import { mkdtempSync, rmSync, writeFileSync } from "fs";
import { tmpdir } from "os";
import { join, resolve } from "path";
import { duckdbRun } from "../../engine/node/duckdb";
import { mulberry32 } from "../../engine/random";
import { quoteString } from "../../engine/sumsSql";

const SEED = 2025;
const START = Date.UTC(2025, 0, 1);
const LEVELS = ["light", "medium", "medium", "dark"];

/** The log as CSV text (`minutes` rows). */
export function sensorLogCsv(minutes: number, seed = SEED): string {
  const random = { next: mulberry32(seed) };
  const normal = (): number => Math.sqrt(-2 * Math.log(1 - random.next())) * Math.cos(2 * Math.PI * random.next());
  const lines = ["minute,batch_id,drum_temp,exhaust_temp,airflow,gas_pressure,ambient_humidity,roast_level,roast_loss"];
  let level = LEVELS[0];
  let heat = 0;
  for (let i = 0; i < minutes; i++) {
    if (i % 15 === 0) {
      level = LEVELS[Math.floor(random.next() * LEVELS.length)];
      heat = 8 * normal();
    }
    const drum = 210 + heat + 6 * normal();
    const exhaust = 0.7 * drum + 25 + 2 * normal();
    const airflow = 40 + 4 * normal();
    const gas = 3 + 0.4 * normal();
    const humidity = 55 + 10 * Math.sin((2 * Math.PI * i) / 525_600) + 3 * normal();
    const loss = 14 + 0.04 * (drum - 210) - 0.03 * (airflow - 40) + 0.6 * (gas - 3) + (level === "dark" ? 1.2 : level === "light" ? -0.8 : 0) + 0.3 * normal();
    const minute = new Date(START + i * 60_000).toISOString().replace("T", " ").replace(".000Z", "");
    const dropped = random.next() < 0.002;
    lines.push(
      [minute, 1 + Math.floor(i / 15), drum.toFixed(2), exhaust.toFixed(2), airflow.toFixed(2), gas.toFixed(3), humidity.toFixed(1), level, dropped ? "" : loss.toFixed(3)].join(","),
    );
  }
  return lines.join("\n") + "\n";
}

/** Writes the log as Parquet at `file` (through a temporary CSV, removed afterwards). */
export async function writeSensorLog(file: string, minutes = 525_600, seed = SEED): Promise<void> {
  const folder = mkdtempSync(join(tmpdir(), "shrinkwise-sensor-log-"));
  try {
    const csv = join(folder, "sensor-log.csv");
    writeFileSync(csv, sensorLogCsv(minutes, seed), "utf8");
    await duckdbRun(
      `COPY (SELECT * FROM read_csv(${quoteString(csv, "duckdb")}, header = true, types = {'minute': 'TIMESTAMP'})) TO ${quoteString(resolve(file), "duckdb")} (FORMAT parquet)`,
    );
  } finally {
    rmSync(folder, { recursive: true, force: true });
  }
}

if (require.main === module) {
  const [file, minutes] = process.argv.slice(2);
  if (!file) {
    console.error("usage: npx tsx addin/demo/generateSensorLog.ts <out.parquet> [minutes]");
    process.exit(2);
  }
  void writeSensorLog(file, minutes ? Number(minutes) : undefined).then(() => console.log(`wrote ${file}`));
}
