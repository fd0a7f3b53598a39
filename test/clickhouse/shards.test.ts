/**
 * A Distributed table over two shards computes the same per-block sums as the two shards summed
 * one by one, and as a plain TypeScript two-pass computation over the generated rows.
 *
 * The SQL here is deliberately minimal and written by hand (the generator in engine/sumsSql.ts
 * has its own test against the server, sumsSql.test.ts): a first pass for the weighted centre,
 * then per fold label Σw, rows, Σw(x − c) and Σw(x − c)(x' − c') about that centre, for seven
 * numeric terms, two indicator terms and the target. Rows with a blank (NULL) moisture are left
 * out, and counted.
 *
 * Sources: the sums' definitions (engine/sumsTable.ts), computed a second way in plain
 * TypeScript; additivity of sums over disjoint rows (the shards) as the property checked.
 * Tolerance 1e-10 relative to each entry's natural scale (a cross-product against
 * sqrt(Σw(x−c)²·Σw(x'−c')²), its Cauchy–Schwarz bound): summing 20,000 rows in two different
 * orders differs by about n·2^-53 ≈ 2e-12 of that scale, far below; a wrong row or term moves an
 * entry by a sizeable share of it.
 */
import { clickhouseRunner, type SqlRow } from "../../engine/node/clickhouse";
import { clickhouseNeed, clickhouseServer, suiteGate } from "../helpers/requirements";
import { loadRoastLog, roastLog, ROAST_COLUMNS, shardOf, type RoastReading } from "./roastLog";

const TABLE = "roast_log_shards"; // this file's own table (roastLog.ts ensureRoastTable)
const ROWS = 20_000;

interface Term {
  name: string;
  sql: string;
  value(row: RoastReading): number;
}

/** The terms, each as SQL and as TypeScript. reading_id's mean is about 1.7e8 times its spread. */
const TERMS: Term[] = [
  { name: "drum_temp", sql: "drum_temp", value: (row) => row.drum_temp },
  { name: "bean_moisture", sql: "assumeNotNull(bean_moisture)", value: (row) => row.bean_moisture as number },
  { name: "airflow", sql: "airflow", value: (row) => row.airflow },
  { name: "ambient_humidity", sql: "ambient_humidity", value: (row) => row.ambient_humidity },
  { name: "minute", sql: "toFloat64(minute)", value: (row) => row.minute },
  { name: "reading_id", sql: "toFloat64(reading_id)", value: (row) => row.reading_id },
  { name: "light", sql: "toFloat64(roast_level = 'light')", value: (row) => (row.roast_level === "light" ? 1 : 0) },
  { name: "dark", sql: "toFloat64(roast_level = 'dark')", value: (row) => (row.roast_level === "dark" ? 1 : 0) },
  { name: "roast_loss", sql: "roast_loss", value: (row) => row.roast_loss }, // the target, last
];
const KEEP_SQL = "bean_moisture IS NOT NULL";
const keep = (row: RoastReading) => row.bean_moisture !== null;

interface BlockSums {
  weight: number;
  rows: number;
  /** Σw(x − c) per term. */
  first: number[];
  /** Σw(x_a − c_a)(x_b − c_b), a ≤ b, row by row. */
  cross: number[];
}

function pairs(): [number, number][] {
  const out: [number, number][] = [];
  for (let a = 0; a < TERMS.length; a++) for (let b = a; b < TERMS.length; b++) out.push([a, b]);
  return out;
}

function firstPassSql(from: string): string {
  const sums = TERMS.map((term, a) => `sumIf(lot_weight * ${term.sql}, ${KEEP_SQL}) AS m${a}`);
  return `SELECT count() AS all_rows, countIf(NOT (${KEEP_SQL})) AS skipped, sumIf(lot_weight, ${KEEP_SQL}) AS weight, ${sums.join(", ")} FROM ${from}`;
}

function secondPassSql(from: string, centre: readonly number[]): string {
  // Centres as decimal literals: ClickHouse reads SQL literals exactly (its text formats not always).
  const d = (a: number) => `(${TERMS[a].sql} - ${String(centre[a])})`;
  const first = TERMS.map((_, a) => `sum(lot_weight * ${d(a)}) AS f${a}`);
  const cross = pairs().map(([a, b]) => `sum(lot_weight * ${d(a)} * ${d(b)}) AS x${a}_${b}`);
  return (
    `SELECT toString(fold_label) AS block, sum(lot_weight) AS weight, count() AS rows, ${first.join(", ")}, ${cross.join(", ")} ` +
    `FROM ${from} WHERE ${KEEP_SQL} GROUP BY fold_label ORDER BY fold_label`
  );
}

function readBlocks(rows: readonly SqlRow[]): Map<string, BlockSums> {
  const blocks = new Map<string, BlockSums>();
  for (const row of rows) {
    blocks.set(row.block as string, {
      weight: row.weight as number,
      rows: row.rows as number,
      first: TERMS.map((_, a) => row[`f${a}`] as number),
      cross: pairs().map(([a, b]) => row[`x${a}_${b}`] as number),
    });
  }
  return blocks;
}

/** The same two passes in TypeScript, over the generated rows. */
function sumsInMemory(rows: readonly RoastReading[], centre: readonly number[]): { centre: number[]; skipped: number; blocks: Map<string, BlockSums> } {
  let weight = 0;
  let skipped = 0;
  const moments = TERMS.map(() => 0);
  for (const row of rows) {
    if (!keep(row)) {
      skipped++;
      continue;
    }
    weight += row.lot_weight;
    TERMS.forEach((term, a) => (moments[a] += row.lot_weight * term.value(row)));
  }
  const blocks = new Map<string, BlockSums>();
  const allPairs = pairs();
  for (const row of rows) {
    if (!keep(row)) continue;
    const label = String(row.fold_label);
    let block = blocks.get(label);
    if (!block) {
      block = { weight: 0, rows: 0, first: TERMS.map(() => 0), cross: allPairs.map(() => 0) };
      blocks.set(label, block);
    }
    const d = TERMS.map((term, a) => term.value(row) - centre[a]);
    block.weight += row.lot_weight;
    block.rows += 1;
    d.forEach((value, a) => (block.first[a] += row.lot_weight * value));
    allPairs.forEach(([a, b], k) => (block.cross[k] += row.lot_weight * d[a] * d[b]));
  }
  return { centre: moments.map((m) => m / weight), skipped, blocks };
}

/** Adds the blocks of `more` into `into` (sums over disjoint rows add). */
function addBlocks(into: Map<string, BlockSums>, more: Map<string, BlockSums>): Map<string, BlockSums> {
  const out = new Map<string, BlockSums>();
  for (const label of new Set([...into.keys(), ...more.keys()])) {
    const a = into.get(label);
    const b = more.get(label);
    if (!a || !b) {
      out.set(label, (a ?? b) as BlockSums);
      continue;
    }
    out.set(label, {
      weight: a.weight + b.weight,
      rows: a.rows + b.rows,
      first: a.first.map((v, i) => v + b.first[i]),
      cross: a.cross.map((v, i) => v + b.cross[i]),
    });
  }
  return out;
}

/** Largest error of `got` against `want`, each entry relative to its natural scale (see the file comment). */
function worstError(got: Map<string, BlockSums>, want: Map<string, BlockSums>): number {
  expect([...got.keys()].sort()).toEqual([...want.keys()].sort());
  let worst = 0;
  const allPairs = pairs();
  for (const [label, w] of want) {
    const g = got.get(label) as BlockSums;
    worst = Math.max(worst, Math.abs(g.rows - w.rows) / w.rows, Math.abs(g.weight - w.weight) / w.weight);
    const diagonal = TERMS.map((_, a) => w.cross[allPairs.findIndex(([i, j]) => i === a && j === a)]);
    TERMS.forEach((_, a) => {
      // Σw(x − c) is at most sqrt(Σw·Σw(x − c)²) (Cauchy–Schwarz).
      const scale = Math.sqrt(w.weight * diagonal[a]);
      worst = Math.max(worst, Math.abs(g.first[a] - w.first[a]) / scale);
    });
    allPairs.forEach(([a, b], k) => {
      const scale = Math.sqrt(diagonal[a] * diagonal[b]);
      worst = Math.max(worst, Math.abs(g.cross[k] - w.cross[k]) / scale);
    });
  }
  return worst;
}

const gate = suiteGate("the Distributed table over two shards (test/clickhouse/shards.test.ts)", [clickhouseNeed()]);

gate.describe("sums over a Distributed table of two shards", () => {
  const url = clickhouseServer().url ?? "http://127.0.0.1:18123"; // the body runs even when skipped
  const run = clickhouseRunner({ url, env: {} });
  const rows = roastLog(ROWS, 31);

  beforeAll(async () => {
    const [first, second] = await loadRoastLog(url, TABLE, rows);
    expect(first + second).toBe(ROWS);
    expect(first).toBeGreaterThan(ROWS / 3); // both shards hold a real share
    expect(second).toBeGreaterThan(ROWS / 3);
  });

  test("the table holds exactly the generated rows, split over the shards by batch", async () => {
    const back = await run(`SELECT *, _shard_num AS shard FROM shrinkwise.${TABLE} ORDER BY reading_id`).catch(() =>
      // _shard_num is a newer virtual column; 18.16 has none: check the shards' own tables instead
      Promise.all([1, 2].map((s) => run(`SELECT *, ${s} AS shard FROM sw_shard${s}.${TABLE}`))).then(([a, b]) =>
        [...a, ...b].sort((x, y) => (x.reading_id as number) - (y.reading_id as number)),
      ),
    );
    expect(back).toHaveLength(ROWS);
    let differences = 0;
    back.forEach((row, i) => {
      for (const column of ROAST_COLUMNS) if (!Object.is(row[column], rows[i][column])) differences++;
      if (Number(row.shard) !== shardOf(rows[i])) differences++;
    });
    expect(differences).toBe(0);
  });

  test("Distributed = shard 1 + shard 2 = TypeScript two passes (≤ 1e-10 of each entry's scale)", async () => {
    const [first] = await run(firstPassSql(`shrinkwise.${TABLE}`));
    const weight = first.weight as number;
    const centre = TERMS.map((_, a) => (first[`m${a}`] as number) / weight);
    const memory = sumsInMemory(rows, centre);
    expect(first.all_rows).toBe(ROWS);
    expect(first.skipped).toBe(memory.skipped);
    expect(memory.skipped).toBeGreaterThan(0); // the blank-moisture rule is exercised
    centre.forEach((c, a) => expect(Math.abs(c - memory.centre[a])).toBeLessThanOrEqual(1e-12 * Math.abs(memory.centre[a]) + 1e-15));

    const distributed = readBlocks(await run(secondPassSql(`shrinkwise.${TABLE}`, centre)));
    const shard1 = readBlocks(await run(secondPassSql(`sw_shard1.${TABLE}`, centre)));
    const shard2 = readBlocks(await run(secondPassSql(`sw_shard2.${TABLE}`, centre)));
    expect(distributed.size).toBe(5);
    expect(shard1.size).toBe(5);

    const byShards = addBlocks(shard1, shard2);
    expect(worstError(distributed, byShards)).toBeLessThanOrEqual(1e-10);
    expect(worstError(distributed, memory.blocks)).toBeLessThanOrEqual(1e-10);

    // The check can fail: one shard alone is far from the whole.
    expect(worstError(shard1, memory.blocks)).toBeGreaterThan(1e-3);
  });
});
