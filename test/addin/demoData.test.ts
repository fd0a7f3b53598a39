/**
 * The demo data (addin/demo): the generator is deterministic and matches the committed files, the
 * data follow the true model stated in the generator, the README and the TS module, they have
 * the blanks and the text column the demo relies on, and the README's function examples are what
 * the functions (and the standalone preview, which runs the same EXAMPLES) return on them.
 */
import { readFileSync } from "fs";
import { join } from "path";
import { fit } from "../../engine/fit";
import { COLUMNS, demoFiles, generate, NEW_ROWS, ORIGINS, PREDICTOR_COLUMNS, ROWS, SEED, TRUTH, trueMean } from "../../addin/demo/generate";
import { roasteryColumns, roasteryNewRows, roasteryNewRowsExpected, roasteryRows, roasteryTruth } from "../../addin/demo/roasteryData";
import { InProcessRunner } from "../../functions/inProcessRunner";
import { demoSheet, EXAMPLES } from "../../taskpane/standalone/preview";

const DEMO = join(__dirname, "..", "..", "addin", "demo");
const README = join(__dirname, "..", "..", "README.md");

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
