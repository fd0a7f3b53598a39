/**
 * Demo data for Shrinkwise: an invented small coffee roastery (all names, places and numbers are
 * made up by this script). `npm run demo-data` writes
 *
 *   addin/demo/roastery.csv       120 roasted batches: a header row, then one row per batch
 *   addin/demo/roastery-new.csv   8 further batches without the score (for SHRINK.PREDICT examples)
 *   addin/demo/roasteryData.ts    the same data as a TypeScript module (the standalone preview imports it)
 *
 * The scenario: each batch gets a cupping score (points, around 84) from the tasting bench. The
 * roaster logs the bean temperature at 2, 4, 6, 8 and 10 minutes into the roast (five readings driven
 * by one shared "how hot was this roast" factor, so they are strongly correlated, r ≈ 0.94), the green
 * beans' moisture (%) and density (g/L), the batch size (kg), the total roast time (min), the
 * room humidity (%), and the beans' origin (text: Coastal 40% of batches, Highland 30%, Valley 30% —
 * generic words, no real places).
 *
 * TRUE MODEL (the score is computed from the rounded, published predictor values):
 *
 *   score = 75.5 + 0.10·temp_8min − 0.90·moisture − 0.15·batch_kg + 1.50·[origin = Highland] + noise
 *   noise ~ Normal(0, 0.8²); score rounded to 2 decimals
 *
 *   zero (no effect): temp_2min, temp_4min, temp_6min, temp_10min, density, roast_min, humidity,
 *                     [origin = Valley]  (Coastal is the reference origin)
 *
 * So 4 of the 12 encoded predictors matter; one of them hides among four correlated look-alikes,
 * and density and roast time are correlated with predictors that matter (moisture; the heat factor
 * and batch size) without mattering themselves. A few cells are left blank on purpose: two moisture
 * readings, one humidity reading and one score.
 *
 * Randomness: Mulberry32 (engine/random.ts) from SEED; normals by the Box–Muller transform. The
 * same seed always writes byte-identical files (test/addin/demoData.test.ts checks the committed ones).
 */
import { writeFileSync } from "fs";
import { join } from "path";
import { mulberry32 } from "../../engine/random";

export const SEED = 1;
export const ROWS = 120;
export const NEW_ROWS = 8;

export const TEMP_COLUMNS = ["temp_2min", "temp_4min", "temp_6min", "temp_8min", "temp_10min"] as const;
/** Every column, in file order: an id, the predictors (origin is text), then the target. */
export const COLUMNS = ["roast_id", ...TEMP_COLUMNS, "moisture", "density", "batch_kg", "roast_min", "humidity", "origin", "score"] as const;
export const PREDICTOR_COLUMNS = COLUMNS.slice(1, -1);
export const TARGET_COLUMN = "score";
export const ORIGINS = ["Highland", "Valley", "Coastal"] as const;
/** Origin whose indicator is left out of the true model (its effect is absorbed by the intercept). */
export const REFERENCE_ORIGIN = "Coastal";

/** The true model, per encoded predictor (origin as indicators against Coastal). */
export const TRUTH = {
  intercept: 75.5,
  coefficients: {
    temp_2min: 0,
    temp_4min: 0,
    temp_6min: 0,
    temp_8min: 0.1,
    temp_10min: 0,
    moisture: -0.9,
    density: 0,
    batch_kg: -0.15,
    roast_min: 0,
    humidity: 0,
    "origin: Highland": 1.5,
    "origin: Valley": 0,
  },
  noiseSd: 0.8,
} as const;

export type Cell = number | string | null;

export interface DemoData {
  /** COLUMNS order; blanks are null. */
  rows: Cell[][];
  /** COLUMNS order without the score. */
  newRows: Cell[][];
  /** The noise-free mean score of each new row under TRUTH. */
  newRowsExpected: number[];
}

/** Rounds to `digits` decimals and returns a plain number (no -0). */
export function round(x: number, digits: number): number {
  const r = Number(x.toFixed(digits));
  return r === 0 ? 0 : r;
}

/** One standard normal draw from two uniforms (Box–Muller, cosine branch). */
export function normal(next: () => number): number {
  const u1 = 1 - next(); // in (0, 1]: log is finite
  const u2 = next();
  return Math.sqrt(-2 * Math.log(u1)) * Math.cos(2 * Math.PI * u2);
}

const TEMP_BASE = [118, 149, 171, 189, 203]; // °C at 2, 4, …, 10 minutes for an average roast

/** The mean score under TRUTH for one row of predictor values (PREDICTOR_COLUMNS order). */
export function trueMean(predictors: Cell[]): number {
  const c = TRUTH.coefficients;
  let mean = TRUTH.intercept;
  PREDICTOR_COLUMNS.forEach((name, j) => {
    if (name === "origin") {
      const origin = predictors[j];
      if (origin === "Highland") mean += c["origin: Highland"];
      if (origin === "Valley") mean += c["origin: Valley"];
    } else {
      mean += (c[name as keyof typeof c] as number) * (predictors[j] as number);
    }
  });
  return mean;
}

/** Predictor values of one batch, PREDICTOR_COLUMNS order. */
function drawBatch(next: () => number): Cell[] {
  const heat = normal(next); // the shared roast-heat factor
  const temps = TEMP_BASE.map((base) => round(base + 6 * heat + 1.5 * normal(next), 1));
  const moisture = round(10.5 + 0.6 * normal(next), 1);
  const density = round(700 + 15 * (moisture - 10.5) + 20 * normal(next), 0);
  const batchKg = round(6 + 0.5 * Math.floor(next() * 19), 1); // 6 … 15 kg in half-kilo steps
  const roastMin = round(12 - 0.5 * heat + 0.08 * (batchKg - 10) + 0.3 * normal(next), 2);
  const humidity = round(35 + 40 * next(), 0);
  // Coastal is the most common origin (40%), so it is also the level the cell functions take as
  // the reference when they turn origin into indicator columns (the most frequent level).
  const u = next();
  const origin = u < 0.4 ? "Coastal" : u < 0.7 ? "Highland" : "Valley";
  return [...temps, moisture, density, batchKg, roastMin, humidity, origin];
}

function id(k: number): string {
  return `R${String(k).padStart(3, "0")}`;
}

/** The demo data for a seed (deterministic). */
export function generate(seed: number = SEED): DemoData {
  const next = mulberry32(seed);
  const rows: Cell[][] = [];
  for (let i = 0; i < ROWS; i++) {
    const predictors = drawBatch(next);
    const score = round(trueMean(predictors) + TRUTH.noiseSd * normal(next), 2);
    rows.push([id(i + 1), ...predictors, score]);
  }
  // Blanks, at rows drawn from the same stream: two moisture readings, one humidity, one score.
  const blanks: [string, number][] = [
    ["moisture", 2],
    ["humidity", 1],
    ["score", 1],
  ];
  const used = new Set<number>();
  for (const [column, count] of blanks) {
    const j = COLUMNS.indexOf(column as (typeof COLUMNS)[number]);
    for (let b = 0; b < count; b++) {
      let i = Math.floor(next() * ROWS);
      while (used.has(i)) i = (i + 1) % ROWS;
      used.add(i);
      rows[i][j] = null;
    }
  }
  const newRows: Cell[][] = [];
  const newRowsExpected: number[] = [];
  for (let i = 0; i < NEW_ROWS; i++) {
    const predictors = drawBatch(next);
    newRows.push([id(ROWS + i + 1), ...predictors]);
    newRowsExpected.push(round(trueMean(predictors), 4));
  }
  return { rows, newRows, newRowsExpected };
}

function csvCell(cell: Cell): string {
  return cell === null ? "" : String(cell);
}

/** CSV text: a header row, then the rows; blanks are empty fields; "\n" line ends. */
export function toCsv(columns: readonly string[], rows: Cell[][]): string {
  return [columns.join(","), ...rows.map((row) => row.map(csvCell).join(","))].join("\n") + "\n";
}

function tsCell(cell: Cell): string {
  return cell === null ? "null" : typeof cell === "string" ? JSON.stringify(cell) : String(cell);
}

/** Rows as TypeScript array literals, one row a line (blanks as null). */
export function tsRows(rows: Cell[][]): string {
  return rows.map((row) => `  [${row.map(tsCell).join(", ")}],`).join("\n");
}

/** The TypeScript module text (roasteryData.ts). */
export function toModule(data: DemoData, seed: number = SEED): string {
  const coefficientLines = Object.entries(TRUTH.coefficients)
    .map(([name, value]) => ` *   ${name.padEnd(17)} ${value}`)
    .join("\n");
  return `/**
 * GENERATED by addin/demo/generate.ts (\`npm run demo-data\`, seed ${seed}): do not edit by hand.
 *
 * An invented coffee roastery: ${ROWS} roasted batches (\`roasteryRows\`, a cupping score per batch)
 * and ${NEW_ROWS} further batches without a score (\`roasteryNewRows\`). Blank cells are null.
 * The same data as CSV: roastery.csv and roastery-new.csv in this folder.
 *
 * True model: score = intercept + Σ coefficient × predictor + Normal(0, ${TRUTH.noiseSd}²) noise,
 * origin entering as indicators against ${REFERENCE_ORIGIN}:
 *   intercept        ${TRUTH.intercept}
${coefficientLines}
 */
export type DemoCell = number | string | null;

export const roasterySeed = ${seed};

/** Column names, in order: id, predictors (origin is text), target (score). */
export const roasteryColumns: readonly string[] = ${JSON.stringify(COLUMNS)};

/** The predictor columns (every column but roast_id and score). */
export const roasteryPredictorColumns: readonly string[] = ${JSON.stringify(PREDICTOR_COLUMNS)};

export const roasteryTargetColumn = ${JSON.stringify(TARGET_COLUMN)};

/** ${ROWS} batches, roasteryColumns order. */
export const roasteryRows: readonly (readonly DemoCell[])[] = [
${tsRows(data.rows)}
];

/** ${NEW_ROWS} further batches: roasteryColumns without score. */
export const roasteryNewRows: readonly (readonly DemoCell[])[] = [
${tsRows(data.newRows)}
];

/** Noise-free mean score of each new batch under the true model. */
export const roasteryNewRowsExpected: readonly number[] = ${JSON.stringify(data.newRowsExpected)};

/** The true model the data were drawn from. */
export const roasteryTruth = {
  intercept: ${TRUTH.intercept},
  referenceOrigin: ${JSON.stringify(REFERENCE_ORIGIN)},
  noiseSd: ${TRUTH.noiseSd},
  coefficients: {
${Object.entries(TRUTH.coefficients)
  .map(([name, value]) => `    ${JSON.stringify(name)}: ${value},`)
  .join("\n")}
  } as Readonly<Record<string, number>>,
};
`;
}

/** File name → contents, for every generated file. */
export function demoFiles(seed: number = SEED): Record<string, string> {
  const data = generate(seed);
  return {
    "roastery.csv": toCsv(COLUMNS, data.rows),
    "roastery-new.csv": toCsv(COLUMNS.slice(0, -1), data.newRows),
    "roasteryData.ts": toModule(data, seed),
  };
}

function main(): void {
  for (const [name, text] of Object.entries(demoFiles())) {
    const file = join(__dirname, name);
    writeFileSync(file, text);
    console.log(`wrote ${file}`);
  }
}

if (require.main === module) main();
