/**
 * Test helpers for the sums table: an invented roastery drum log (per-minute readings, a few
 * blanks, a text column), its CSV text, and the plain two-pass reference sums written from the
 * definitions in engine/sumsTable.ts (from memory: the textbook two-pass sums), with the gap
 * between a computed table and the reference, each entry against its natural scale.
 */
import type { SumsTable } from "../../engine/sumsTable";
import { upperIndex } from "../../engine/sumsTable";
import { TestRandom } from "./random";

/** A generated minute of the roastery's drum log. */
export interface Reading {
  reading_id: number;
  minute: number;
  batch: string;
  drum_temp: number | null;
  airflow: number;
  bean_moisture: number | null;
  roast_level: string | null;
  lot_weight: number;
  roast_loss: number | null;
}

/** Invented data: a drum's per-minute log; a few blanks; roast_loss depends on the others. */
export function roastLog(n: number, seed: number, offset = 0): Reading[] {
  const random = new TestRandom(seed);
  const levels = ["light", "medium", "dark", "city"];
  const out: Reading[] = [];
  for (let i = 0; i < n; i++) {
    const drum = 200 + 15 * random.normal();
    const air = 40 + 5 * random.normal();
    const moisture = 11 + random.normal();
    const level = levels[Math.min(3, Math.floor(random.uniform() * random.uniform() * 5))];
    const loss = 12 + 0.05 * (drum - 200) - 0.1 * (air - 40) + (level === "dark" ? 2 : level === "light" ? -1 : 0) + 0.5 * random.normal();
    out.push({
      reading_id: 1e12 + 37 * i - 5000 * Math.floor(random.uniform() * 3),
      minute: 29_000_000 + i,
      batch: `B${1 + Math.floor(random.uniform() * 6)}`,
      drum_temp: random.uniform() < 0.02 ? null : drum + offset,
      airflow: air,
      bean_moisture: random.uniform() < 0.03 ? null : moisture,
      roast_level: random.uniform() < 0.01 ? null : level,
      lot_weight: random.uniform() < 0.05 ? 0 : 20 + 10 * random.uniform(),
      roast_loss: random.uniform() < 0.01 ? null : loss,
    });
  }
  return out;
}

export const COLUMNS: (keyof Reading)[] = ["reading_id", "minute", "batch", "drum_temp", "airflow", "bean_moisture", "roast_level", "lot_weight", "roast_loss"];

export function csvOf(rows: readonly Reading[], columns: readonly (keyof Reading)[] = COLUMNS): string {
  // Numbers as JavaScript writes them: shortest round-trip text, read back to the same double.
  return [columns.join(","), ...rows.map((r) => columns.map((c) => (r[c] === null ? "" : String(r[c]))).join(","))].join("\n") + "\n";
}

/** Term value of a row: a number column, or `column: level` (1/0). */
export function termValue(row: Reading, term: string): number | null {
  const colon = term.indexOf(": ");
  if (colon < 0) return row[term as keyof Reading] as number | null;
  const column = term.slice(0, colon) as keyof Reading;
  const value = row[column];
  return value === null ? null : value === term.slice(colon + 2) ? 1 : 0;
}

export interface ReferenceBlock {
  weight: number;
  rows: number;
  offset: number[];
  offsetY: number;
  cross: number[];
  crossY: number[];
  yy: number;
  largest: number[];
  largestY: number;
}

/** The two-pass reference: blocks by `label`, sums about the table's centre. */
export function referenceSums(rows: readonly Reading[], table: SumsTable, used: readonly (keyof Reading)[], weights: keyof Reading | null, label: (r: Reading) => string) {
  const p = table.terms.length;
  // First pass: the rows a blank skips.
  const kept = rows.filter((r) => used.every((c) => r[c] !== null));
  const blocks = new Map<string, ReferenceBlock>();
  // Second pass: sums about the centre.
  for (const r of kept) {
    const key = label(r);
    let b = blocks.get(key);
    if (!b) {
      b = { weight: 0, rows: 0, offset: Array(p).fill(0), offsetY: 0, cross: Array((p * (p + 1)) / 2).fill(0), crossY: Array(p).fill(0), yy: 0, largest: Array(p).fill(0), largestY: 0 };
      blocks.set(key, b);
    }
    const w = weights === null ? 1 : (r[weights] as number);
    const x = table.terms.map((t) => termValue(r, t) as number);
    const d = x.map((v, a) => v - table.centre.terms[a]);
    const y = r.roast_loss as number;
    const dy = y - table.centre.target;
    b.weight += w;
    b.rows += 1;
    b.offsetY += w * dy;
    b.yy += w * dy * dy;
    for (let a = 0; a < p; a++) {
      b.offset[a] += w * d[a];
      b.crossY[a] += w * d[a] * dy;
      for (let c = a; c < p; c++) b.cross[upperIndex(p, a, c)] += w * d[a] * d[c];
      if (w > 0) b.largest[a] = Math.max(b.largest[a], Math.abs(x[a]));
    }
    if (w > 0) b.largestY = Math.max(b.largestY, Math.abs(y));
  }
  for (const b of blocks.values()) {
    b.offset = b.offset.map((s) => s / b.weight);
    b.offsetY /= b.weight;
  }
  return { kept: kept.length, blocks };
}

/** Largest relative gap between the table and the reference, each entry against its natural scale. */
export function gap(table: SumsTable, reference: ReturnType<typeof referenceSums>): number {
  const p = table.terms.length;
  let worst = 0;
  const rel = (a: number, b: number, scale: number) => {
    const g = Math.abs(a - b) / (scale > 0 ? scale : 1);
    if (!(g <= worst)) worst = Number.isNaN(g) ? Infinity : g;
  };
  expect(table.blocks.map((b) => b.label).sort()).toEqual([...reference.blocks.keys()].sort());
  for (const block of table.blocks) {
    const r = reference.blocks.get(block.label) as ReferenceBlock;
    expect(block.rows).toBe(r.rows);
    rel(block.weight, r.weight, r.weight);
    const spread = (a: number) => Math.sqrt(r.cross[upperIndex(p, a, a)] / r.weight);
    const spreadY = Math.sqrt(r.yy / r.weight);
    rel(block.yy, r.yy, r.yy);
    rel(block.offsetY, r.offsetY, spreadY);
    rel(block.largestY as number, r.largestY, r.largestY);
    for (let a = 0; a < p; a++) {
      rel(block.offset[a], r.offset[a], spread(a));
      rel(block.crossY[a], r.crossY[a], Math.sqrt(r.cross[upperIndex(p, a, a)] * r.yy));
      rel((block.largest as number[])[a], r.largest[a], r.largest[a]);
      for (let c = a; c < p; c++) rel(block.cross[upperIndex(p, a, c)], r.cross[upperIndex(p, a, c)], Math.sqrt(r.cross[upperIndex(p, a, a)] * r.cross[upperIndex(p, c, c)]));
    }
  }
  return worst;
}

/** Weighted mean of a column over the kept rows, plainly summed (for the centre). */
export function weightedMean(rows: readonly Reading[], used: readonly (keyof Reading)[], value: (r: Reading) => number, w: (r: Reading) => number): number {
  let s = 0;
  let sw = 0;
  for (const r of rows) {
    if (!used.every((c) => r[c] !== null)) continue;
    s += w(r) * value(r);
    sw += w(r);
  }
  return s / sw;
}

