/**
 * Invented demo data for the browser tests of the fits from sums: a coffee roastery's per-minute
 * roast log (seeded, generated here; no real data). One row per minute of a roast:
 *
 *   batch_id        whole number, one per roast (the hash key for folds)
 *   minute          1 … 12, minutes into the roast
 *   drum_temp       °C, rising through the roast
 *   exhaust_temp    °C, following the drum with a lag
 *   airflow         % of the fan's top speed
 *   gas_pct         burner setting, %
 *   bean_moisture   %, drying out through the roast
 *   origin          text: "Huila", "Sidamo", "Cerrado" (an invented mix of growing regions)
 *   color_index     the target: a roast colour reading (higher is lighter)
 *
 * `roastLog(roasts, seed)` gives the rows, `roastCsv` their CSV text, `designOf` the matrix the
 * in-memory engine takes; `NUMBER_PREDICTORS` are the number predictors in order.
 */
import { TestRandom } from "../helpers/random";

export interface RoastMinute {
  batch_id: number;
  minute: number;
  drum_temp: number;
  exhaust_temp: number;
  airflow: number;
  gas_pct: number;
  bean_moisture: number;
  origin: string;
  color_index: number;
}

export const NUMBER_PREDICTORS = ["minute", "drum_temp", "exhaust_temp", "airflow", "gas_pct", "bean_moisture"] as const;
export const ORIGINS = ["Huila", "Sidamo", "Cerrado"] as const;

export function roastLog(roasts: number, seed: number): RoastMinute[] {
  const random = new TestRandom(seed);
  const rows: RoastMinute[] = [];
  for (let r = 0; r < roasts; r++) {
    const batch = 40_000 + 7 * r + Math.floor(random.uniform() * 5);
    // Origins with clearly different shares (reference level: the most frequent, Huila).
    const u = random.uniform();
    const origin = u < 0.5 ? ORIGINS[0] : u < 0.8 ? ORIGINS[1] : ORIGINS[2];
    const charge = 195 + 10 * random.normal() * 0.4;
    const gas = 55 + 15 * random.uniform();
    const fan = 40 + 30 * random.uniform();
    let moisture = 10.5 + random.normal() * 0.6;
    let exhaust = charge - 20;
    for (let minute = 1; minute <= 12; minute++) {
      const drum = charge - 60 + minute * (6 + 0.04 * gas) + random.normal() * 1.5;
      exhaust = 0.6 * exhaust + 0.4 * (drum - 8) + random.normal();
      moisture = Math.max(1, moisture - 0.7 - 0.01 * gas + random.normal() * 0.1);
      const originShift = origin === "Sidamo" ? 2.5 : origin === "Cerrado" ? -1.5 : 0;
      const color = 160 - 0.45 * drum + 0.8 * moisture - 0.05 * fan + originShift + random.normal() * 1.2;
      rows.push({
        batch_id: batch,
        minute,
        drum_temp: round(drum, 2),
        exhaust_temp: round(exhaust, 2),
        airflow: round(fan + random.normal(), 1),
        gas_pct: round(gas, 1),
        bean_moisture: round(moisture, 3),
        origin,
        color_index: round(color, 2),
      });
    }
  }
  return rows;
}

function round(x: number, digits: number): number {
  const f = 10 ** digits;
  return Math.round(x * f) / f;
}

/** The rows as CSV text (header row, comma-separated, numbers as JavaScript writes them). */
export function roastCsv(rows: readonly RoastMinute[]): string {
  const columns = Object.keys(rows[0]) as (keyof RoastMinute)[];
  return [columns.join(","), ...rows.map((row) => columns.map((c) => String(row[c])).join(","))].join("\n") + "\n";
}

/** The roast log as the in-memory engine takes it: number predictors, origin as two indicators (reference: Huila, the most frequent; levels in code-point order, as the SQL generator names them). */
export function designOf(rows: readonly RoastMinute[]): { x: number[][]; y: number[]; names: string[] } {
  const levels = ORIGINS.filter((o) => o !== "Huila").sort();
  const names = [...NUMBER_PREDICTORS, ...levels.map((l) => `origin: ${l}`)];
  const x = rows.map((row) => [...NUMBER_PREDICTORS.map((c) => row[c]), ...levels.map((l) => (row.origin === l ? 1 : 0))]);
  return { x, y: rows.map((row) => row.color_index), names };
}
