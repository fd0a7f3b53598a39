/**
 * Second demo data set for Shrinkwise, with a two-class outcome: the same invented coffee roastery,
 * now at its quality check (all names and numbers are made up by this script). `npm run demo-data`
 * writes (after the cupping-score set of generate.ts)
 *
 *   addin/demo/quality.csv        300 roasted batches: a header row, then one row per batch
 *   addin/demo/quality-new.csv    8 further batches without the check result (for prediction examples)
 *   addin/demo/qualityData.ts     the same data as a TypeScript module
 *
 * The scenario: every batch is inspected after cooling and either passes or fails the check (text
 * column `check`: pass / fail). The roaster logs the bean temperature at 3, 6, 9 and 12 minutes into
 * the roast (four readings driven by one shared "how hot was this roast" factor, so they are strongly
 * correlated, r ≈ 0.94), the green beans' moisture (%) and density (g/L), the batch size (kg), the
 * total roast time (min), the room humidity (%, follows the seasons), how many days ago the green
 * beans arrived, the roast day (a spreadsheet date serial in the 45,000s: a column with a large
 * offset and no effect) and the shift that roasted the batch (text, drawn as early shift 40%,
 * late shift 35%, night shift 25%).
 *
 * TRUE MODEL (computed from the rounded, published predictor values):
 *
 *   log-odds of fail = −60.2 + 0.2·temp_9min + 1.5·moisture + 0.2·batch_kg + 0.03·bean_age_days
 *                      + 1·[shift = night shift]
 *   check = fail with probability 1 / (1 + exp(−log-odds)), else pass
 *
 *   zero (no effect): temp_3min, temp_6min, temp_12min, density, roast_min, humidity, roast_day,
 *                     [shift = late shift]  (early shift is the reference shift)
 *
 * So 5 of the 13 encoded predictors matter; one of them hides among four correlated look-alikes,
 * density and roast time are correlated with predictors that matter (moisture; the heat factor and
 * batch size) without mattering themselves, and moisture drifts down as the beans age.
 * On the 296 complete rows 73 batches fail (24.7%), and the true log-odds rank them with
 * AUC 0.8561: the classes overlap, and no single column separates them (test/addin/demoData.test.ts
 * checks these figures against the data; "complete" rows have no blank cell). A few cells are left
 * blank on purpose: one moisture reading, one humidity reading, one bean age and one check result.
 *
 * Randomness: Mulberry32 (engine/random.ts) from QUALITY_SEED; normals by the Box–Muller transform
 * (shared with generate.ts). The seed differs from the cupping-score set's, so the two sets do not
 * share their random draws. The same seed always writes byte-identical files.
 */
import { writeFileSync } from "fs";
import { join } from "path";
import { mulberry32 } from "../../engine/random";
import { type Cell, normal, round, toCsv, tsRows } from "./generate";

export const QUALITY_SEED = 2;
export const QUALITY_ROWS = 300;
export const QUALITY_NEW_ROWS = 8;

export const QUALITY_TEMP_COLUMNS = ["temp_3min", "temp_6min", "temp_9min", "temp_12min"] as const;
/** Every column, in file order: an id, the predictors (shift is text), then the outcome. */
export const QUALITY_COLUMNS = [
  "batch_id",
  ...QUALITY_TEMP_COLUMNS,
  "moisture",
  "density",
  "batch_kg",
  "roast_min",
  "humidity",
  "bean_age_days",
  "roast_day",
  "shift",
  "check",
] as const;
export const QUALITY_PREDICTOR_COLUMNS = QUALITY_COLUMNS.slice(1, -1);
export const QUALITY_TARGET_COLUMN = "check";
/** The outcome's two values; the model gives the log-odds of the first. */
export const CHECK_VALUES = ["fail", "pass"] as const;
export const SHIFTS = ["early shift", "late shift", "night shift"] as const;
/** Shift whose indicator is left out of the true model (its effect is absorbed by the intercept). */
export const REFERENCE_SHIFT = "early shift";
/** Roast day of the first batch: a spreadsheet date serial (days counted from the sheet's epoch). */
export const FIRST_ROAST_DAY = 45660;

/** The true model of the log-odds of fail, per encoded predictor (shift as indicators against early shift). */
export const QUALITY_TRUTH = {
  intercept: -60.2,
  coefficients: {
    temp_3min: 0,
    temp_6min: 0,
    temp_9min: 0.2,
    temp_12min: 0,
    moisture: 1.5,
    density: 0,
    batch_kg: 0.2,
    roast_min: 0,
    humidity: 0,
    bean_age_days: 0.03,
    roast_day: 0,
    "shift: late shift": 0,
    "shift: night shift": 1,
  },
} as const;

export interface QualityData {
  /** QUALITY_COLUMNS order; blanks are null. */
  rows: Cell[][];
  /** QUALITY_COLUMNS order without the check. */
  newRows: Cell[][];
  /** The true probability of fail of each new row (4 decimals). */
  newRowsFailProbability: number[];
  /** Figures of the rows with no blank cell: their count, how many fail, the true log-odds' AUC. */
  summary: { completeRows: number; fails: number; auc: number };
}

/** The log-odds of fail under QUALITY_TRUTH for one row of predictor values (QUALITY_PREDICTOR_COLUMNS order). */
export function trueLogOdds(predictors: readonly Cell[]): number {
  const c = QUALITY_TRUTH.coefficients;
  let logOdds: number = QUALITY_TRUTH.intercept;
  QUALITY_PREDICTOR_COLUMNS.forEach((name, j) => {
    if (name === "shift") {
      if (predictors[j] === "late shift") logOdds += c["shift: late shift"];
      if (predictors[j] === "night shift") logOdds += c["shift: night shift"];
    } else {
      logOdds += (c[name as keyof typeof c] as number) * (predictors[j] as number);
    }
  });
  return logOdds;
}

/** The true probability of fail for one row of predictor values. */
export function trueFailProbability(predictors: readonly Cell[]): number {
  return 1 / (1 + Math.exp(-trueLogOdds(predictors)));
}

/**
 * Area under the ROC curve of `scores` for telling `positive` rows from the rest: the share of
 * (positive, negative) pairs the score orders correctly, ties counting one half (the Mann–Whitney
 * form of the AUC). Cost O(n²), fine for a few hundred rows.
 */
export function pairwiseAuc(scores: readonly number[], positive: readonly boolean[]): number {
  let favourable = 0;
  let pairs = 0;
  for (let i = 0; i < scores.length; i++) {
    if (!positive[i]) continue;
    for (let k = 0; k < scores.length; k++) {
      if (positive[k]) continue;
      pairs++;
      favourable += scores[i] > scores[k] ? 1 : scores[i] === scores[k] ? 0.5 : 0;
    }
  }
  return favourable / pairs;
}

const TEMP_BASE = [138, 172, 194, 211]; // °C at 3, 6, 9 and 12 minutes for an average roast

/** Predictor values of one batch roasted on `day`, QUALITY_PREDICTOR_COLUMNS order. */
function drawBatch(next: () => number, day: number): Cell[] {
  const heat = normal(next); // the shared roast-heat factor
  const temps = TEMP_BASE.map((base) => round(base + 6 * heat + 1.5 * normal(next), 1));
  const beanAgeDays = 2 + Math.floor(next() * 89); // 2 … 90 days since the green beans arrived
  const moisture = round(11 - 0.006 * beanAgeDays + 0.5 * normal(next), 1); // beans dry out in storage
  const density = round(700 + 15 * (moisture - 10.7) + 20 * normal(next), 0);
  const batchKg = round(6 + 0.5 * Math.floor(next() * 19), 1); // 6 … 15 kg in half-kilo steps
  const roastMin = round(12.5 - 0.5 * heat + 0.08 * (batchKg - 10) + 0.3 * normal(next), 2);
  // Humid summers, dry winters: a yearly wave plus day-to-day noise.
  const humidity = round(52 + 12 * Math.sin((2 * Math.PI * (day - FIRST_ROAST_DAY - 90)) / 365) + 6 * normal(next), 0);
  // Early shift is the most common (40%), so it is also the level the cell functions take as the
  // reference when they turn shift into indicator columns (the most frequent level).
  const u = next();
  const shift = u < 0.4 ? "early shift" : u < 0.75 ? "late shift" : "night shift";
  return [...temps, moisture, density, batchKg, roastMin, humidity, beanAgeDays, day, shift];
}

function id(k: number): string {
  return `B${String(k).padStart(3, "0")}`;
}

/** The quality-check demo data for a seed (deterministic). */
export function generateQuality(seed: number = QUALITY_SEED): QualityData {
  const next = mulberry32(seed);
  const rows: Cell[][] = [];
  let day = FIRST_ROAST_DAY;
  for (let i = 0; i < QUALITY_ROWS; i++) {
    const predictors = drawBatch(next, day);
    const check = next() < trueFailProbability(predictors) ? "fail" : "pass";
    rows.push([id(i + 1), ...predictors, check]);
    day += Math.floor(next() * 3); // 0, 1 or 2 days to the next batch
  }
  // Blanks, at rows drawn from the same stream: one moisture, one humidity, one bean age, one check.
  const blanks: [string, number][] = [
    ["moisture", 1],
    ["humidity", 1],
    ["bean_age_days", 1],
    ["check", 1],
  ];
  const used = new Set<number>();
  for (const [column, count] of blanks) {
    const j = QUALITY_COLUMNS.indexOf(column as (typeof QUALITY_COLUMNS)[number]);
    for (let b = 0; b < count; b++) {
      let i = Math.floor(next() * QUALITY_ROWS);
      while (used.has(i)) i = (i + 1) % QUALITY_ROWS;
      used.add(i);
      rows[i][j] = null;
    }
  }
  const newRows: Cell[][] = [];
  const newRowsFailProbability: number[] = [];
  for (let i = 0; i < QUALITY_NEW_ROWS; i++) {
    const predictors = drawBatch(next, day);
    newRows.push([id(QUALITY_ROWS + i + 1), ...predictors]);
    newRowsFailProbability.push(round(trueFailProbability(predictors), 4));
    day += Math.floor(next() * 3);
  }
  const complete = rows.filter((row) => row.every((cell) => cell !== null));
  const scores = complete.map((row) => trueLogOdds(row.slice(1, -1)));
  const failed = complete.map((row) => row[row.length - 1] === "fail");
  const summary = {
    completeRows: complete.length,
    fails: failed.filter(Boolean).length,
    auc: round(pairwiseAuc(scores, failed), 4),
  };
  return { rows, newRows, newRowsFailProbability, summary };
}

/** The TypeScript module text (qualityData.ts). */
export function toQualityModule(data: QualityData, seed: number = QUALITY_SEED): string {
  const { completeRows, fails, auc } = data.summary;
  const coefficientLines = Object.entries(QUALITY_TRUTH.coefficients)
    .map(([name, value]) => ` *   ${name.padEnd(19)} ${value}`)
    .join("\n");
  return `/**
 * GENERATED by addin/demo/generateQuality.ts (\`npm run demo-data\`, seed ${seed}): do not edit by hand.
 *
 * The invented coffee roastery's quality check: ${QUALITY_ROWS} roasted batches (\`qualityRows\`, each
 * passed or failed the check) and ${QUALITY_NEW_ROWS} further batches without a result (\`qualityNewRows\`).
 * Blank cells are null. The same data as CSV: quality.csv and quality-new.csv in this folder.
 *
 * True model: log-odds of fail = intercept + Σ coefficient × predictor; each batch fails with
 * probability 1 / (1 + exp(−log-odds)). Shift enters as indicators against ${REFERENCE_SHIFT}:
 *   intercept           ${QUALITY_TRUTH.intercept}
${coefficientLines}
 *
 * On the ${completeRows} complete rows (no blank cell) ${fails} batches fail (${((100 * fails) / completeRows).toFixed(1)}%);
 * the true log-odds rank them with AUC ${auc}.
 */
export type DemoCell = number | string | null;

export const qualitySeed = ${seed};

/** Column names, in order: id, predictors (shift is text), outcome (check: pass or fail). */
export const qualityColumns: readonly string[] = ${JSON.stringify(QUALITY_COLUMNS)};

/** The predictor columns (every column but batch_id and check). */
export const qualityPredictorColumns: readonly string[] = ${JSON.stringify(QUALITY_PREDICTOR_COLUMNS)};

export const qualityTargetColumn = ${JSON.stringify(QUALITY_TARGET_COLUMN)};

/** ${QUALITY_ROWS} batches, qualityColumns order. */
export const qualityRows: readonly (readonly DemoCell[])[] = [
${tsRows(data.rows)}
];

/** ${QUALITY_NEW_ROWS} further batches: qualityColumns without check. */
export const qualityNewRows: readonly (readonly DemoCell[])[] = [
${tsRows(data.newRows)}
];

/** True probability of fail of each new batch under the true model. */
export const qualityNewRowsFailProbability: readonly number[] = ${JSON.stringify(data.newRowsFailProbability)};

/** The true model the data were drawn from (log-odds of fail), and what it gives on the complete rows. */
export const qualityTruth = {
  intercept: ${QUALITY_TRUTH.intercept},
  positiveClass: "fail",
  referenceShift: ${JSON.stringify(REFERENCE_SHIFT)},
  coefficients: {
${Object.entries(QUALITY_TRUTH.coefficients)
  .map(([name, value]) => `    ${JSON.stringify(name)}: ${value},`)
  .join("\n")}
  } as Readonly<Record<string, number>>,
  completeRows: ${completeRows},
  fails: ${fails},
  auc: ${auc},
};
`;
}

/** File name → contents, for every generated file of this set. */
export function qualityFiles(seed: number = QUALITY_SEED): Record<string, string> {
  const data = generateQuality(seed);
  return {
    "quality.csv": toCsv(QUALITY_COLUMNS, data.rows),
    "quality-new.csv": toCsv(QUALITY_COLUMNS.slice(0, -1), data.newRows),
    "qualityData.ts": toQualityModule(data, seed),
  };
}

function main(): void {
  for (const [name, text] of Object.entries(qualityFiles())) {
    const file = join(__dirname, name);
    writeFileSync(file, text);
    console.log(`wrote ${file}`);
  }
}

if (require.main === module) main();
