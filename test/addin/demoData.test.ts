/**
 * The demo data (addin/demo): the generator is deterministic and matches the committed files, the
 * data follow the true model stated in the generator, the README and the TS module, they have
 * the blanks and the text column the demo relies on, and the README's function examples are what
 * the functions (and the standalone preview, which runs the same EXAMPLES) return on them.
 * The second set (quality.csv, a pass/fail outcome) gets the same checks for its two-class model.
 */
import { readFileSync } from "fs";
import { join } from "path";
import { fit } from "../../engine/fit";
import { COLUMNS, demoFiles, generate, NEW_ROWS, ORIGINS, PREDICTOR_COLUMNS, ROWS, SEED, TRUTH, trueMean } from "../../addin/demo/generate";
import { roasteryColumns, roasteryNewRows, roasteryNewRowsExpected, roasteryRows, roasteryTruth } from "../../addin/demo/roasteryData";
import {
  CHECK_VALUES,
  generateQuality,
  QUALITY_COLUMNS,
  QUALITY_NEW_ROWS,
  QUALITY_PREDICTOR_COLUMNS,
  QUALITY_ROWS,
  QUALITY_SEED,
  QUALITY_TRUTH,
  qualityFiles,
  REFERENCE_SHIFT,
  SHIFTS,
  trueFailProbability,
} from "../../addin/demo/generateQuality";
import { qualityColumns, qualityNewRows, qualityNewRowsFailProbability, qualityRows, qualityTruth } from "../../addin/demo/qualityData";
import { CholeskyDecomposition, Matrix } from "ml-matrix";
import { InProcessRunner } from "../../functions/inProcessRunner";
import { demoSheet, EXAMPLES, QUALITY_EXAMPLES, qualitySheet } from "../../taskpane/standalone/preview";

const DEMO = join(__dirname, "..", "..", "addin", "demo");
const README = join(__dirname, "..", "..", "README.md");
const QUALITY_GENERATOR = join(DEMO, "generateQuality.ts");

/** Encoded predictors (origin as Highland/Valley indicators against Coastal) and target, complete rows only. */
function encode(rows: readonly (readonly (number | string | null)[])[]): { x: number[][]; y: number[]; names: string[] } {
  const x: number[][] = [];
  const y: number[] = [];
  for (const row of rows) {
    if (row.some((cell) => cell === null)) continue;
    const numeric = row.slice(1, 11) as number[];
    x.push([...numeric, row[11] === "Highland" ? 1 : 0, row[11] === "Valley" ? 1 : 0]);
    y.push(row[12] as number);
  }
  return { x, y, names: Object.keys(TRUTH.coefficients) };
}

describe("the generator", () => {
  test("same seed, same files: the committed CSVs and TS module are exactly what it writes", () => {
    const files = demoFiles(SEED);
    expect(Object.keys(files).sort()).toEqual(["roastery-new.csv", "roastery.csv", "roasteryData.ts"]);
    for (const [name, text] of Object.entries(files)) {
      // If this fails after a deliberate change to generate.ts, rerun `npm run demo-data`.
      expect([name, readFileSync(join(DEMO, name), "utf8") === text]).toEqual([name, true]);
    }
    expect(demoFiles(SEED)).toEqual(files);
  });

  test("a different seed gives different data", () => {
    expect(generate(SEED + 1).rows).not.toEqual(generate(SEED).rows);
  });

  test("the TS module holds the same data as the CSV", () => {
    const csv = readFileSync(join(DEMO, "roastery.csv"), "utf8").trimEnd().split("\n");
    expect(csv[0].split(",")).toEqual([...roasteryColumns]);
    expect(csv).toHaveLength(ROWS + 1);
    csv.slice(1).forEach((line, i) => {
      const cells = line.split(",").map((text, j) => (text === "" ? null : roasteryColumns[j] === "roast_id" || roasteryColumns[j] === "origin" ? text : Number(text)));
      expect(cells).toEqual([...roasteryRows[i]]);
    });
    const newCsv = readFileSync(join(DEMO, "roastery-new.csv"), "utf8").trimEnd().split("\n");
    expect(newCsv[0].split(",")).toEqual(roasteryColumns.slice(0, -1));
    expect(newCsv).toHaveLength(NEW_ROWS + 1);
    expect(roasteryNewRows).toHaveLength(NEW_ROWS);
  });
});

describe("the data", () => {
  test("a header, 120 rows of 13 columns, 8 new rows without the score", () => {
    expect(roasteryColumns).toEqual([...COLUMNS]);
    expect(roasteryColumns[roasteryColumns.length - 1]).toBe("score");
    expect(roasteryRows).toHaveLength(120);
    for (const row of roasteryRows) expect(row).toHaveLength(13);
    for (const row of roasteryNewRows) expect(row).toHaveLength(12);
  });

  test("blanks where stated: two moisture, one humidity, one score, nothing else", () => {
    const blanks: string[] = [];
    roasteryRows.forEach((row) => row.forEach((cell, j) => cell === null && blanks.push(roasteryColumns[j])));
    expect(blanks.sort()).toEqual(["humidity", "moisture", "moisture", "score"]);
    for (const row of roasteryNewRows) expect(row.every((cell) => cell !== null)).toBe(true);
  });

  test("origin is a text column with our three generic region words, each well represented", () => {
    const j = roasteryColumns.indexOf("origin");
    const counts = new Map<string, number>();
    for (const row of roasteryRows) {
      expect(typeof row[j]).toBe("string");
      counts.set(row[j] as string, (counts.get(row[j] as string) ?? 0) + 1);
    }
    expect([...counts.keys()].sort()).toEqual([...ORIGINS].sort());
    for (const count of counts.values()) expect(count).toBeGreaterThanOrEqual(25);
    // Coastal is the most frequent level, so the cell functions' indicator coding (reference = most
    // frequent level) gives the terms the true model is stated in: Highland and Valley against Coastal.
    const top = [...counts.entries()].sort((a, b) => b[1] - a[1])[0][0];
    expect(top).toBe("Coastal");
  });

  test("the five temperature readings are strongly correlated (the group the demo is about)", () => {
    const { x } = encode(roasteryRows);
    const column = (j: number): number[] => x.map((row) => row[j]);
    const correlation = (a: number[], b: number[]): number => {
      const mean = (v: number[]): number => v.reduce((s, t) => s + t, 0) / v.length;
      const ma = mean(a);
      const mb = mean(b);
      let sab = 0;
      let saa = 0;
      let sbb = 0;
      for (let i = 0; i < a.length; i++) {
        sab += (a[i] - ma) * (b[i] - mb);
        saa += (a[i] - ma) ** 2;
        sbb += (b[i] - mb) ** 2;
      }
      return sab / Math.sqrt(saa * sbb);
    };
    // By construction r = 36 / (36 + 2.25) ≈ 0.94 (shared factor SD 6 °C, own noise SD 1.5 °C).
    for (let a = 0; a < 5; a++) for (let b = a + 1; b < 5; b++) expect(correlation(column(a), column(b))).toBeGreaterThan(0.85);
  });
});

describe("the true coefficients", () => {
  test("are the same in the generator, the TS module and the README", () => {
    expect(roasteryTruth.intercept).toBe(TRUTH.intercept);
    expect(roasteryTruth.noiseSd).toBe(TRUTH.noiseSd);
    expect(roasteryTruth.coefficients).toEqual(TRUTH.coefficients);
    expect(roasteryTruth.referenceOrigin).toBe("Coastal");
    // Sparse: 4 nonzero of 12.
    expect(Object.values(TRUTH.coefficients).filter((c) => c !== 0)).toHaveLength(4);
    const readme = readFileSync(README, "utf8");
    for (const [name, value] of Object.entries(TRUTH.coefficients)) {
      expect([name, readme.includes(`| \`${name}\` | ${value} |`)]).toEqual([name, true]);
    }
    expect(readme).toContain(`| intercept | ${TRUTH.intercept} |`);
  });

  test("the scores follow them: exact least squares lands within 3 standard errors of each", () => {
    // With 116 complete rows and noise SD 0.8, each least-squares estimate is unbiased for the true
    // coefficient; 3 standard errors (two-sided ~0.3% each) is a loose, deterministic check.
    const { x, y, names } = encode(roasteryRows);
    expect(x).toHaveLength(116);
    const ls = fit(x, y, { strength: 0, mixes: [1], names });
    const baseline = ls.baseline;
    if (!baseline) throw new Error("no least-squares baseline");
    names.forEach((name, j) => {
      const truth = TRUTH.coefficients[name as keyof typeof TRUTH.coefficients];
      const se = baseline.standardErrors[j] as number;
      expect([name, Math.abs(ls.coefficients[j] - truth) <= 3 * se]).toEqual([name, true]);
    });
    // Residual SD estimates the noise SD (0.8); rounding to 2 decimals adds a negligible 0.003.
    expect(baseline.residualStandardDeviation).toBeGreaterThan(0.6);
    expect(baseline.residualStandardDeviation).toBeLessThan(1.0);
  });

  test("the new rows' expected scores are the true model's means", () => {
    roasteryNewRows.forEach((row, i) => {
      expect(Math.abs(trueMean(row.slice(1)) - roasteryNewRowsExpected[i])).toBeLessThan(1e-4);
    });
    expect(PREDICTOR_COLUMNS).toEqual(roasteryColumns.slice(1, -1));
  });
});

describe("the README's cell-function examples", () => {
  /** A cell as the README writes it: numbers to 4 significant digits, errors by their text. */
  const shown = (cell: unknown): string =>
    typeof cell === "number" ? (Number.isInteger(cell) ? String(cell) : String(Number(cell.toPrecision(4)))) : String(cell);
  const line = (cells: readonly unknown[]): string => `| ${cells.map(shown).join(" | ")} |`.replace(/\s+/g, " ");

  test("every example table in the README is what the function returns on the demo data (default settings)", async () => {
    const readmeLines = new Set(readFileSync(README, "utf8").split("\n").map((text) => text.trim().replace(/\s+/g, " ")));
    const runner = new InProcessRunner();
    const sheet = demoSheet();
    const results = new Map<string, unknown[][]>();
    for (const example of EXAMPLES.slice(0, -1)) {
      expect([example.formula, [...readmeLines].some((text) => text.includes(`\`${example.formula}\``))]).toEqual([example.formula, true]);
      const spill = await example.run(runner, sheet);
      results.set(example.id, spill);
      // Long tables (PATH, CVCURVE) are shown by their first rows and their size.
      const rows = spill.length > 25 ? spill.slice(0, 4) : spill;
      if (spill.length > 25) expect(readFileSync(README, "utf8")).toContain(`returns ${spill.length} rows × ${spill[0].length} columns`);
      for (const row of rows) {
        if (row[0] === "mean error (predicted − actual)") {
          // Zero up to rounding: the unpenalized intercept (b0 = ȳ − Σ b·x̄) makes the in-sample mean
          // residual 0 on the rows used; its last digits differ between JavaScript engines, so the
          // README says ≈ 0.
          expect(Math.abs(row[1] as number)).toBeLessThan(1e-9);
          continue;
        }
        if (example.id === "APPLY") continue; // the README states it equals PREDICT (checked below)
        expect([example.id, line(row), readmeLines.has(line(row))]).toEqual([example.id, line(row), true]);
      }
    }
    expect(results.get("APPLY")).toEqual(results.get("PREDICT"));
  });

  test("every yes/no example table in the README is what the function returns on the quality-check data (default settings)", async () => {
    const text = readFileSync(README, "utf8");
    const readmeLines = new Set(text.split("\n").map((t) => t.trim().replace(/\s+/g, " ")));
    const runner = new InProcessRunner();
    const sheet = qualitySheet();
    const results = new Map<string, unknown[][]>();
    for (const example of QUALITY_EXAMPLES) {
      expect([example.formula, text.includes(`\`${example.formula}\``)]).toEqual([example.formula, true]);
      const spill = (await example.run(runner, sheet)) as unknown[][];
      results.set(example.id, spill);
      if (example.id === "APPLY") continue; // the README states it equals PREDICT (checked below)
      for (const row of spill) {
        const cells = row.map((cell) => (cell === null || cell === undefined ? "" : cell));
        expect([example.id, line(cells), readmeLines.has(line(cells))]).toEqual([example.id, line(cells), true]);
      }
    }
    expect(results.get("APPLY")).toEqual(results.get("PREDICT"));
  });

  test("the mistake example is #VALUE! with the message the README quotes", async () => {
    const mistake = EXAMPLES[EXAMPLES.length - 1];
    const error = await mistake.run(new InProcessRunner(), demoSheet()).then(
      () => null,
      (e: { code: string; message: string }) => e,
    );
    expect(error?.code).toBe("#VALUE!");
    expect(readFileSync(README, "utf8")).toContain(`\`#VALUE!\` "${error?.message}"`);
  });
});

// ---------------------------------------------------------------------------------------------
// The second set: the quality check (two-class outcome, log-odds of fail).

type Row = readonly (number | string | null)[];

/** Pearson correlation of two equally long columns. */
function correlation(a: number[], b: number[]): number {
  const mean = (v: number[]): number => v.reduce((s, t) => s + t, 0) / v.length;
  const ma = mean(a);
  const mb = mean(b);
  let sab = 0;
  let saa = 0;
  let sbb = 0;
  for (let i = 0; i < a.length; i++) {
    sab += (a[i] - ma) * (b[i] - mb);
    saa += (a[i] - ma) ** 2;
    sbb += (b[i] - mb) ** 2;
  }
  return sab / Math.sqrt(saa * sbb);
}

const qualityIndex = (name: string): number => qualityColumns.indexOf(name);
const completeQualityRows = (): Row[] => qualityRows.filter((row) => row.every((cell) => cell !== null));

/** The true model's terms as [name, value], in the order the generator's header comment writes them. */
const TRUE_TERMS = Object.entries(QUALITY_TRUTH.coefficients).filter(([, value]) => value !== 0);

/** The value of one encoded predictor (a column, or "shift: <level>" as a 0/1 indicator) in a row. */
function encodedValue(row: Row, name: string): number {
  if (name.startsWith("shift: ")) return row[qualityIndex("shift")] === name.slice("shift: ".length) ? 1 : 0;
  return row[qualityIndex(name)] as number;
}

/**
 * The AUC by the rank-sum route (Mann–Whitney U from mid-ranks), independent of the generator's
 * pairwise count: AUC = (R₁ − n₁(n₁+1)/2) / (n₁·n₀), R₁ the rank sum of the positives
 * (the AUC equals the Mann–Whitney statistic: Hanley & McNeil 1982, Radiology 143:29, `from memory`).
 */
function rankAuc(scores: number[], positive: boolean[]): number {
  const order = scores.map((_, i) => i).sort((a, b) => scores[a] - scores[b]);
  const ranks = new Array<number>(scores.length);
  for (let start = 0; start < order.length; ) {
    let end = start;
    while (end + 1 < order.length && scores[order[end + 1]] === scores[order[start]]) end++;
    for (let t = start; t <= end; t++) ranks[order[t]] = (start + end) / 2 + 1;
    start = end + 1;
  }
  const n1 = positive.filter(Boolean).length;
  const n0 = positive.length - n1;
  const r1 = ranks.reduce((sum, rank, i) => sum + (positive[i] ? rank : 0), 0);
  return (r1 - (n1 * (n1 + 1)) / 2) / (n1 * n0);
}

/** The generator's opening doc comment as plain text (the " * " prefixes removed, lines joined by spaces). */
function generatorHeader(): string {
  const source = readFileSync(QUALITY_GENERATOR, "utf8");
  const block = source.slice(source.indexOf("/**"), source.indexOf("*/"));
  return block
    .split("\n")
    .map((text) => text.replace(/^\s*\/?\*+\s?/, ""))
    .join(" ")
    .replace(/\s+/g, " ")
    .replace(/−/g, "-");
}

/** "[shift = night shift]" → "shift: night shift"; other names unchanged. */
const termName = (text: string): string => text.trim().replace(/^\[shift = (.+)\]$/, "shift: $1");

describe("the quality-check generator", () => {
  test("same seed, same files: the committed quality CSVs and TS module are exactly what it writes", () => {
    const files = qualityFiles(QUALITY_SEED);
    expect(Object.keys(files).sort()).toEqual(["quality-new.csv", "quality.csv", "qualityData.ts"]);
    for (const [name, text] of Object.entries(files)) {
      // If this fails after a deliberate change to generateQuality.ts, rerun `npm run demo-data`.
      expect([name, readFileSync(join(DEMO, name), "utf8") === text]).toEqual([name, true]);
    }
    expect(qualityFiles(QUALITY_SEED)).toEqual(files);
    // `npm run demo-data` writes both sets.
    const script = (JSON.parse(readFileSync(join(__dirname, "..", "..", "package.json"), "utf8")) as { scripts: Record<string, string> }).scripts["demo-data"];
    expect(script).toContain("addin/demo/generate.ts");
    expect(script).toContain("addin/demo/generateQuality.ts");
  });

  test("a different seed gives different data, and the two sets do not share their draws", () => {
    expect(generateQuality(QUALITY_SEED + 1).rows).not.toEqual(generateQuality(QUALITY_SEED).rows);
    expect(QUALITY_SEED).not.toBe(SEED);
  });

  test("the TS module holds the same data as the CSVs", () => {
    const text = new Set(["batch_id", "shift", "check"]);
    const parse = (line: string): (number | string | null)[] =>
      line.split(",").map((cell, j) => (cell === "" ? null : text.has(qualityColumns[j]) ? cell : Number(cell)));
    const csv = readFileSync(join(DEMO, "quality.csv"), "utf8").trimEnd().split("\n");
    expect(csv[0].split(",")).toEqual([...qualityColumns]);
    expect(csv).toHaveLength(QUALITY_ROWS + 1);
    csv.slice(1).forEach((line, i) => expect(parse(line)).toEqual([...qualityRows[i]]));
    const newCsv = readFileSync(join(DEMO, "quality-new.csv"), "utf8").trimEnd().split("\n");
    expect(newCsv[0].split(",")).toEqual(qualityColumns.slice(0, -1));
    expect(newCsv).toHaveLength(QUALITY_NEW_ROWS + 1);
    newCsv.slice(1).forEach((line, i) => expect(parse(line)).toEqual([...qualityNewRows[i]]));
  });
});

describe("the quality-check data", () => {
  test("a header, 300 rows of 14 columns, 8 new rows without the check", () => {
    expect(qualityColumns).toEqual([...QUALITY_COLUMNS]);
    expect(qualityColumns[qualityColumns.length - 1]).toBe("check");
    expect(qualityRows).toHaveLength(300);
    for (const row of qualityRows) expect(row).toHaveLength(14);
    expect(qualityNewRows).toHaveLength(8);
    for (const row of qualityNewRows) expect(row).toHaveLength(13);
    expect(QUALITY_PREDICTOR_COLUMNS).toEqual(qualityColumns.slice(1, -1));
  });

  test("blanks where stated: one moisture, one humidity, one bean age, one check, nothing else", () => {
    const blanks: string[] = [];
    qualityRows.forEach((row) => row.forEach((cell, j) => cell === null && blanks.push(qualityColumns[j])));
    expect(blanks.sort()).toEqual(["bean_age_days", "check", "humidity", "moisture"]);
    expect(generatorHeader()).toContain("blank on purpose: one moisture reading, one humidity reading, one bean age and one check result");
    for (const row of qualityNewRows) expect(row.every((cell) => cell !== null)).toBe(true);
  });

  test("check is text, pass or fail; fail is the rarer class at 20–30% of rows", () => {
    const j = qualityIndex("check");
    const values = qualityRows.map((row) => row[j]).filter((cell) => cell !== null);
    expect([...new Set(values)].sort()).toEqual([...CHECK_VALUES].sort());
    const share = values.filter((value) => value === "fail").length / values.length;
    expect(share).toBeGreaterThanOrEqual(0.2);
    expect(share).toBeLessThanOrEqual(0.3);
  });

  test("shift is a text column with three generic labels; early shift is the most frequent (the reference)", () => {
    const j = qualityIndex("shift");
    const counts = new Map<string, number>();
    for (const row of qualityRows) {
      expect(typeof row[j]).toBe("string");
      counts.set(row[j] as string, (counts.get(row[j] as string) ?? 0) + 1);
    }
    expect([...counts.keys()].sort()).toEqual([...SHIFTS].sort());
    for (const count of counts.values()) expect(count).toBeGreaterThanOrEqual(50);
    // The cell functions take the most frequent level as the reference when they make indicators,
    // so their terms are the ones the true model is stated in.
    expect([...counts.entries()].sort((a, b) => b[1] - a[1])[0][0]).toBe(REFERENCE_SHIFT);
  });

  test("the four temperature readings are strongly correlated; roast_day carries a large offset", () => {
    const rows = completeQualityRows();
    const temps = ["temp_3min", "temp_6min", "temp_9min", "temp_12min"].map((name) => rows.map((row) => row[qualityIndex(name)] as number));
    // By construction r = 36 / (36 + 2.25) ≈ 0.94 (shared factor SD 6 °C, own noise SD 1.5 °C).
    for (let a = 0; a < 4; a++) for (let b = a + 1; b < 4; b++) expect(correlation(temps[a], temps[b])).toBeGreaterThan(0.85);
    // A date serial in the tens of thousands whose spread is a few hundred days: offset ≫ spread.
    const days = qualityRows.map((row) => row[qualityIndex("roast_day")] as number);
    expect(Math.min(...days)).toBeGreaterThan(40000);
    expect(Math.max(...days) - Math.min(...days)).toBeLessThan(1000);
  });

  test("no single predictor separates pass from fail: the classes overlap on every column", () => {
    const rows = qualityRows.filter((row) => row[qualityIndex("check")] !== null);
    for (const name of QUALITY_PREDICTOR_COLUMNS) {
      const j = qualityIndex(name);
      const fail = rows.filter((row) => row[j] !== null && row[qualityIndex("check")] === "fail").map((row) => row[j]);
      const pass = rows.filter((row) => row[j] !== null && row[qualityIndex("check")] === "pass").map((row) => row[j]);
      if (name === "shift") {
        // Every level holds both classes.
        for (const level of SHIFTS) expect([level, fail.includes(level), pass.includes(level)]).toEqual([level, true, true]);
        continue;
      }
      // A threshold separates the classes only if one class's range ends where the other's begins.
      const [f, p] = [fail as number[], pass as number[]];
      expect([name, Math.min(...f) < Math.max(...p) && Math.min(...p) < Math.max(...f)]).toEqual([name, true]);
    }
  });
});

describe("the quality-check true model", () => {
  test("the generator's header comment states exactly the coefficients it uses", () => {
    const header = generatorHeader();
    const formula = header.slice(header.indexOf("log-odds of fail =") + "log-odds of fail =".length, header.indexOf("check = fail with"));
    const terms = [...formula.matchAll(/([+-])\s*(\d+(?:\.\d+)?)(?:·(\[shift = [a-z ]+\]|\w+))?/g)].map((m) => ({
      name: m[3] === undefined ? "intercept" : termName(m[3]),
      value: (m[1] === "-" ? -1 : 1) * Number(m[2]),
    }));
    expect(terms[0]).toEqual({ name: "intercept", value: QUALITY_TRUTH.intercept });
    expect(terms.slice(1).map((t) => [t.name, t.value])).toEqual(TRUE_TERMS);
    const zeroText = header.slice(header.indexOf("zero (no effect):") + "zero (no effect):".length, header.indexOf("(early shift is the reference shift)"));
    const zeros = Object.entries(QUALITY_TRUTH.coefficients).filter(([, value]) => value === 0).map(([name]) => name);
    expect(zeroText.split(",").map(termName)).toEqual(zeros);
    // Sparse: 5 nonzero of 13 encoded predictors, one of them a shift indicator.
    expect(TRUE_TERMS).toHaveLength(5);
    expect(Object.keys(QUALITY_TRUTH.coefficients)).toHaveLength(13);
    expect(header).toContain("So 5 of the 13 encoded predictors matter");
  });

  test("the TS module carries the same true model", () => {
    expect(qualityTruth.intercept).toBe(QUALITY_TRUTH.intercept);
    expect(qualityTruth.coefficients).toEqual(QUALITY_TRUTH.coefficients);
    expect(qualityTruth.referenceShift).toBe(REFERENCE_SHIFT);
    expect(qualityTruth.positiveClass).toBe("fail");
  });

  test("the fail count and the true model's AUC stated in the comments are what the data give", () => {
    const rows = completeQualityRows();
    const failed = rows.map((row) => row[qualityIndex("check")] === "fail");
    // The true log-odds by the encoded terms (not the generator's function), then AUC by ranks.
    const logOdds = rows.map((row) => TRUE_TERMS.reduce((sum, [name, value]) => sum + value * encodedValue(row, name), QUALITY_TRUTH.intercept as number));
    const auc = rankAuc(logOdds, failed);
    const fails = failed.filter(Boolean).length;
    expect({ completeRows: qualityTruth.completeRows, fails: qualityTruth.fails }).toEqual({ completeRows: rows.length, fails });
    expect(Math.abs(qualityTruth.auc - auc)).toBeLessThan(5e-5); // stated to 4 decimals
    // Informative but far from separable (an AUC of 1 would mean the true log-odds split the classes).
    expect(auc).toBeGreaterThan(0.8);
    expect(auc).toBeLessThan(0.87);
    const m = generatorHeader().match(/On the (\d+) complete rows (\d+) batches fail \(([\d.]+)%\), and the true log-odds rank them with AUC ([\d.]+)/);
    expect(m).not.toBeNull();
    const [, statedRows, statedFails, statedPercent, statedAuc] = m as RegExpMatchArray;
    expect([Number(statedRows), Number(statedFails), statedPercent, Number(statedAuc)]).toEqual([rows.length, fails, ((100 * fails) / rows.length).toFixed(1), qualityTruth.auc]);
  });

  test("the checks follow the true model: unpenalized logistic regression lands within 3 standard errors", () => {
    // Maximum likelihood for the log-odds on the true-model terms only, by Newton's method
    // (iteratively reweighted least squares), with ml-matrix's Cholesky solve for each step; the
    // standard errors are the square roots of the diagonal of the inverse Fisher information
    // (XᵀWX)⁻¹ at the optimum. The estimates are consistent for the true coefficients, so with
    // 296 rows each lands within 3 standard errors (`common practice` for a simulation check).
    const rows = completeQualityRows();
    const names = TRUE_TERMS.map(([name]) => name);
    const x = new Matrix(rows.map((row) => [1, ...names.map((name) => encodedValue(row, name))]));
    const y = rows.map((row) => (row[qualityIndex("check")] === "fail" ? 1 : 0));
    const p = x.columns;
    let beta = Matrix.zeros(p, 1);
    let information = Matrix.eye(p);
    let converged = false;
    for (let iteration = 0; iteration < 100 && !converged; iteration++) {
      const eta = x.mmul(beta);
      const weighted = x.clone();
      const score = Matrix.zeros(p, 1);
      for (let i = 0; i < x.rows; i++) {
        const mu = 1 / (1 + Math.exp(-eta.get(i, 0)));
        for (let j = 0; j < p; j++) {
          weighted.set(i, j, x.get(i, j) * Math.sqrt(mu * (1 - mu)));
          score.set(j, 0, score.get(j, 0) + x.get(i, j) * (y[i] - mu));
        }
      }
      // XᵀWX as (W^½X)ᵀ(W^½X): exactly symmetric in floating point, as the Cholesky solve requires.
      information = weighted.transpose().mmul(weighted);
      const step = new CholeskyDecomposition(information).solve(score);
      // At convergence the step is ~1e-9 relative, so this information is the one at the optimum.
      beta = Matrix.add(beta, step);
      // (ml-matrix's abs() works in place, so measure on copies.)
      const largest = (m: Matrix): number => Math.max(...m.to1DArray().map(Math.abs));
      converged = largest(step) < 1e-9 * (1 + largest(beta));
    }
    expect(converged).toBe(true);
    const covariance = new CholeskyDecomposition(information).solve(Matrix.eye(p));
    const truth: [string, number][] = [["intercept", QUALITY_TRUTH.intercept], ...TRUE_TERMS];
    truth.forEach(([name, value], j) => {
      const se = Math.sqrt(covariance.get(j, j));
      expect([name, Math.abs(beta.get(j, 0) - value) <= 3 * se]).toEqual([name, true]);
    });
  });

  test("the new rows' fail probabilities are the true model's", () => {
    qualityNewRows.forEach((row, i) => {
      const logOdds = TRUE_TERMS.reduce((sum, [name, value]) => sum + value * encodedValue(row, name), QUALITY_TRUTH.intercept as number);
      expect(Math.abs(1 / (1 + Math.exp(-logOdds)) - qualityNewRowsFailProbability[i])).toBeLessThan(5e-5);
      expect(Math.abs(trueFailProbability(row.slice(1)) - qualityNewRowsFailProbability[i])).toBeLessThan(5e-5);
    });
  });
});
