/**
 * The roastery's sensor log, generated (an invented scenario; every number is made up here), and
 * its loader into the ClickHouse test server's two shards (test/clickhouse/schema.sql).
 *
 * One row a minute, roast after roast: a batch lasts 14 minutes. Per batch: the green beans'
 * moisture (%), the lot's weight in the drum (kg; the weights column), the roast level (light 30%,
 * medium 45%, dark 25%) and a fold label 1..5. Per minute: the drum temperature (°C, climbing
 * through the roast), the fan's airflow (m³/h) and the room humidity (%, slowly drifting). The
 * reading id is 1e12 + the row number and the minute counts from 1970 (about 2.9e7): large
 * offsets on purpose. About one moisture reading in 150 is missing (NULL).
 *
 * TRUE MODEL (computed from the published, rounded values; the true moisture when it is missing):
 *
 *   roast_loss = 12 + 0.03·(drum_temp − 200) − 0.45·(bean_moisture − 11) + 0.004·(airflow − 400)
 *                − 1.2·[light] + 1.6·[dark] + noise,   noise ~ Normal(0, 0.35²), rounded to 3 decimals
 *
 *   zero (no effect): ambient_humidity, minute, reading_id, batch_id
 *
 * Randomness: Mulberry32 (engine/random.ts) from the seed; normals by the Box–Muller transform.
 * The same seed and count give the same rows, bit for bit, on every machine.
 *
 * The loader sends RowBinary (exact doubles); the tables then hold exactly these values.
 *
 * Command line (loads the server started by server.sh; replaces what the table held):
 *   npx tsx test/clickhouse/roastLog.ts [--rows 20000] [--seed 12] [--table roast_log] [--url http://127.0.0.1:18123]
 */
import * as http from "http";
import { mulberry32 } from "../../engine/random";

export interface RoastReading {
  reading_id: number;
  minute: number;
  batch_id: number;
  drum_temp: number;
  bean_moisture: number | null;
  airflow: number;
  ambient_humidity: number;
  roast_level: "light" | "medium" | "dark";
  lot_weight: number;
  fold_label: number;
  roast_loss: number;
}

/** The columns in the tables' order (schema.sql). */
export const ROAST_COLUMNS = [
  "reading_id",
  "minute",
  "batch_id",
  "drum_temp",
  "bean_moisture",
  "airflow",
  "ambient_humidity",
  "roast_level",
  "lot_weight",
  "fold_label",
  "roast_loss",
] as const;

export const MINUTES_PER_BATCH = 14;
/** 2026-01-05 06:00 UTC in minutes since 1970. */
const FIRST_MINUTE = Math.round(Date.UTC(2026, 0, 5, 6, 0) / 60000);
const FIRST_ID = 1_000_000_000_000;

function round(value: number, digits: number): number {
  return Number(value.toFixed(digits));
}

/** `count` rows of the sensor log from `seed`. Cost O(count). */
export function roastLog(count: number, seed = 12): RoastReading[] {
  const next = mulberry32(seed);
  const normal = () => {
    const u = 1 - next();
    const v = next();
    return Math.sqrt(-2 * Math.log(u)) * Math.cos(2 * Math.PI * v);
  };
  const rows: RoastReading[] = [];
  let batch = { moisture: 0, weight: 0, level: "medium" as RoastReading["roast_level"], fold: 1, heat: 0 };
  for (let i = 0; i < count; i++) {
    const step = i % MINUTES_PER_BATCH;
    const batchId = Math.floor(i / MINUTES_PER_BATCH) + 1;
    if (step === 0) {
      const pick = next();
      batch = {
        moisture: 11 + 0.8 * normal(),
        weight: round(8 + 7 * next(), 1),
        level: pick < 0.3 ? "light" : pick < 0.75 ? "medium" : "dark",
        fold: 1 + Math.floor(next() * 5),
        heat: 6 * normal(),
      };
    }
    const drumTemp = round(165 + 5 * step + batch.heat + 1.5 * normal(), 2);
    const moisture = round(batch.moisture, 2);
    const airflow = round(400 + 35 * normal(), 1);
    const humidity = round(50 + 10 * Math.sin((2 * Math.PI * i) / 1440) + 2 * normal(), 1);
    const level = batch.level;
    const loss =
      12 +
      0.03 * (drumTemp - 200) -
      0.45 * (moisture - 11) +
      0.004 * (airflow - 400) +
      (level === "light" ? -1.2 : level === "dark" ? 1.6 : 0) +
      0.35 * normal();
    rows.push({
      reading_id: FIRST_ID + i,
      minute: FIRST_MINUTE + i,
      batch_id: batchId,
      drum_temp: drumTemp,
      bean_moisture: next() < 1 / 150 ? null : moisture,
      airflow,
      ambient_humidity: humidity,
      roast_level: level,
      lot_weight: batch.weight,
      fold_label: batch.fold,
      roast_loss: round(loss, 3),
    });
  }
  return rows;
}

/** Which shard a row goes to: whole batches, odd batches to shard 1, even to shard 2. */
export function shardOf(row: RoastReading): 1 | 2 {
  return row.batch_id % 2 === 1 ? 1 : 2;
}

/**
 * Rows in ClickHouse's RowBinary format, in the tables' column order: exact, where a text format
 * would not be (ClickHouse 18.16 reads about one decimal text in fifty a unit in the last place
 * off, e.g. 11.976 as 11.975999999999999). Little-endian integers and doubles; Nullable as a
 * 0/1 byte before the value; String as its UTF-8 length (LEB128) and bytes.
 */
export function rowBinary(rows: readonly RoastReading[]): Buffer {
  const chunks: Buffer[] = [];
  for (const row of rows) {
    const level = Buffer.from(row.roast_level, "utf8");
    const buffer = Buffer.alloc(8 + 4 + 4 + 8 + 1 + 8 + 8 + 8 + 1 + level.length + 8 + 1 + 8);
    let at = 0;
    at = buffer.writeBigUInt64LE(BigInt(row.reading_id), at);
    at = buffer.writeUInt32LE(row.minute, at);
    at = buffer.writeUInt32LE(row.batch_id, at);
    at = buffer.writeDoubleLE(row.drum_temp, at);
    if (row.bean_moisture === null) {
      at = buffer.writeUInt8(1, at);
    } else {
      at = buffer.writeUInt8(0, at);
      at = buffer.writeDoubleLE(row.bean_moisture, at);
    }
    at = buffer.writeDoubleLE(row.airflow, at);
    at = buffer.writeDoubleLE(row.ambient_humidity, at);
    at = buffer.writeUInt8(level.length, at); // < 128: one LEB128 byte
    at += level.copy(buffer, at);
    at = buffer.writeDoubleLE(row.lot_weight, at);
    at = buffer.writeUInt8(row.fold_label, at);
    at = buffer.writeDoubleLE(row.roast_loss, at);
    chunks.push(buffer.subarray(0, at));
  }
  return Buffer.concat(chunks);
}

/**
 * POSTs one statement (and an optional body after it, for INSERT) to the server; throws its
 * message. A fresh connection each time (no keep-alive: the server closes idle ones after 3 s,
 * and a reused closed socket fails the next request).
 */
function post(url: string, statement: string, body: Buffer | null = null): Promise<string> {
  const target = new URL(url);
  let payload: string | Buffer = statement;
  if (body !== null) {
    target.searchParams.set("query", statement);
    payload = body;
  }
  return new Promise((resolve, reject) => {
    const request = http.request(target, { method: "POST", agent: false, headers: { "Content-Length": Buffer.byteLength(payload) } }, (response) => {
      const chunks: Buffer[] = [];
      response.on("data", (chunk: Buffer) => chunks.push(chunk));
      response.on("error", reject);
      response.on("end", () => {
        const text = Buffer.concat(chunks).toString("utf8");
        if (response.statusCode === 200) resolve(text);
        else reject(new Error(`ClickHouse at ${url}: ${text.split("\n")[0]}`));
      });
    });
    request.setTimeout(300_000, () => request.destroy(new Error(`ClickHouse at ${url} did not answer within 300 s`)));
    request.on("error", (error) => reject(new Error(`ClickHouse at ${url}: ${error.message}`)));
    request.end(payload);
  });
}

/**
 * Creates `table` on both shards and the Distributed table shrinkwise.<table> over them, shaped
 * like roast_log (schema.sql), when they are not there yet. Test files each use a table of their
 * own, so that files run in parallel never load one table at the same time.
 */
export async function ensureRoastTable(url: string, table: string): Promise<void> {
  if (!/^\w+$/.test(table)) throw new Error(`table name '${table}' must be letters, digits and underscores`);
  await post(url, `CREATE TABLE IF NOT EXISTS sw_shard1.${table} AS sw_shard1.roast_log`);
  await post(url, `CREATE TABLE IF NOT EXISTS sw_shard2.${table} AS sw_shard1.roast_log`);
  await post(url, `CREATE TABLE IF NOT EXISTS shrinkwise.${table} AS sw_shard1.roast_log ENGINE = Distributed(shrinkwise_two_shards, '', ${table})`);
}

/**
 * Replaces the contents of `table` on both shards (sw_shard1.<table>, sw_shard2.<table>) with
 * `rows`, split by shardOf, in slices of `slice` rows per INSERT. Returns the rows per shard.
 */
export async function loadRoastLog(url: string, table: string, rows: readonly RoastReading[], slice = 200_000): Promise<[number, number]> {
  await ensureRoastTable(url, table);
  const counts: [number, number] = [0, 0];
  for (const shard of [1, 2] as const) {
    const target = `sw_shard${shard}.${table}`;
    await post(url, `TRUNCATE TABLE ${target}`);
    let pending: RoastReading[] = [];
    const flush = async () => {
      if (pending.length === 0) return;
      await post(url, `INSERT INTO ${target} (${ROAST_COLUMNS.join(", ")}) FORMAT RowBinary`, rowBinary(pending));
      counts[shard - 1] += pending.length;
      pending = [];
    };
    for (const row of rows) {
      if (shardOf(row) !== shard) continue;
      pending.push(row);
      if (pending.length >= slice) await flush();
    }
    await flush();
  }
  return counts;
}

async function main(argv: string[]): Promise<void> {
  const option = (name: string, fallback: string) => {
    const at = argv.indexOf(`--${name}`);
    return at >= 0 && at + 1 < argv.length ? argv[at + 1] : fallback;
  };
  const count = Number(option("rows", "20000"));
  const seed = Number(option("seed", "12"));
  const table = option("table", "roast_log");
  const url = option("url", process.env.SHRINKWISE_CLICKHOUSE_URL || "http://127.0.0.1:18123");
  if (!Number.isInteger(count) || count < 1) throw new Error(`--rows must be a positive whole number, not ${option("rows", "")}`);
  const began = Date.now();
  const [first, second] = await loadRoastLog(url, table, roastLog(count, seed));
  process.stdout.write(`loaded ${first} + ${second} rows into sw_shard1.${table} and sw_shard2.${table} (shrinkwise.${table} reads both) in ${((Date.now() - began) / 1000).toFixed(1)} s\n`);
}

if (require.main === module) {
  main(process.argv.slice(2)).catch((error: unknown) => {
    process.stderr.write(`${error instanceof Error ? error.message : String(error)}\n`);
    process.exit(2);
  });
}
