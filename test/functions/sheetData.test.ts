/**
 * Spreadsheet data that used to fit the wrong thing silently (functions/dataset.ts): numbers
 * stored as text, dates stored as text, a header row of numbers, a coefficient table without an
 * intercept row, and names that clash once folded the way terms are looked up.
 */
import fc from "fast-check";
import { apply, choice, coefs, predict } from "../../functions/api";
import { buildDataset, Dataset } from "../../functions/dataset";
import { textKey } from "../../functions/cells";
import { defaultSettings } from "../../functions/settings";
import { expectVectorRelative } from "../helpers/numeric";
import { CountingRunner, labelled, QUICK, rejection, sheet } from "./support";

const FIXED = "strength=0.01";

function dataset(target: unknown[][], predictors: unknown[][], header: "auto" | "yes" | "no" = "auto"): Dataset {
  return buildDataset(target, predictors, { ...defaultSettings(), header });
}

/** The cell error a synchronous buildDataset call throws, as its message. */
function refusal(run: () => unknown): string {
  try {
    run();
  } catch (e) {
    return (e as Error).message;
  }
  throw new Error("expected buildDataset to refuse");
}

describe("numbers stored as text", () => {
  const grouped = new Intl.NumberFormat("en-US", { maximumFractionDigits: 3 });
  const value = fc.integer({ min: -1e9, max: 1e9 }).map((k) => k / 1000);
  /** How one number may arrive: as a number, or as text written plainly, padded, or grouped by Intl (en-US). */
  const writing = fc.constantFrom<(v: number) => unknown>(
    (v) => v,
    (v) => String(v),
    (v) => `  ${String(v)} `,
    (v) => grouped.format(v),
  );

  test("property: a table whose cells are numbers written as text reads as the same numbers, and CHOICE's notes name each such column", () => {
    fc.assert(
      fc.property(
        fc.integer({ min: 1, max: 4 }).chain((width) =>
          fc.array(fc.tuple(value, fc.array(value, { minLength: width, maxLength: width })), { minLength: 3, maxLength: 25 }),
        ),
        fc.infiniteStream(writing),
        (rows, writers) => {
          const width = rows[0][1].length;
          const header = Array.from({ length: width }, (_, j) => `c${j + 1}`);
          const numeric = dataset([["y"], ...rows.map((r) => [r[0]])], [header, ...rows.map((r) => r[1])]);
          const written = rows.map((r) => ({ y: writers.next().value(r[0]), x: r[1].map((v) => writers.next().value(v)) }));
          const textual = dataset([["y"], ...written.map((r) => [r.y])], [header, ...written.map((r) => r.x)]);
          // The reference is the same data given as numbers (common practice: a number stored as text is that number).
          expect(textual.predictors).toEqual(numeric.predictors);
          expect(textual.target).toEqual(numeric.target);
          expect(textual.names).toEqual(header);
          header.forEach((name, j) => {
            const anyText = written.some((r) => typeof r.x[j] === "string");
            expect(textual.notes.some((n) => n.startsWith(`predictors column '${name}' read as numbers: its cells hold numbers stored as text`))).toBe(anyText);
          });
          expect(textual.notes.some((n) => n.startsWith("target 'y' read as numbers"))).toBe(written.some((r) => typeof r.y === "string"));
        },
      ),
      { numRuns: 150, seed: 8 },
    );
  });

  test("the note, exactly, for plain and grouped numbers stored as text", async () => {
    const { target, predictors } = sheet();
    const asText = predictors.map((row, i) => (i === 0 ? row : [(row[0] as number).toFixed(6), row[1], row[2]]));
    const notes = String(labelled(await choice(new CountingRunner(), target, asText, 1, FIXED)).get("notes"));
    expect(notes).toBe(
      "predictors column 'Size' read as numbers: its cells hold numbers stored as text (first: row 2, '7.524413'); to use them as categories, write labels that aren't numbers",
    );
    const thousands = predictors.map((row, i) => (i === 0 ? row : [row[0], row[1], grouped.format(1000 * (row[2] as number))]));
    const dataset2 = dataset(target, thousands);
    expect(dataset2.notes).toEqual([
      "predictors column 'Temp' read as numbers: its cells hold numbers stored as text (first: row 2, '10,000'); ',' is read as a thousands separator, so '10,000' is 10000; to use them as categories, write labels that aren't numbers",
    ]);
  });

  test("text that only partly reads as numbers is an error naming the column and the first bad cell", () => {
    const { target, predictors } = sheet();
    const x = predictors.map((row, i) => (i === 0 ? row : [String(row[0]), row[1], row[2]]));
    x[4][0] = "about 3";
    x[9][0] = "n/a";
    // All text, mostly numbers stored as text: the message also says how to keep codes as categories.
    expect(refusal(() => dataset(target, x))).toBe(
      "predictors column 'Size' row 5 has text 'about 3' in a number column: fix it or clear the cell (most of its cells are numbers stored as text; to use the column as categories, write every value as a label that isn't a number, such as 'grade 1')",
    );
    // Real numbers beside the texts: a plain number column with a bad cell.
    x[2][0] = predictors[2][0];
    expect(refusal(() => dataset(target, x))).toBe("predictors column 'Size' row 5 has text 'about 3' in a number column: fix it or clear the cell");
  });

  test("genuine text levels keep working as levels (Coastal / Highland / Valley, codes like A1)", () => {
    const origins = ["Coastal", "Highland", "Valley", "Coastal", "A1"];
    const target = [["score"], ...origins.map((_, i) => [80 + i]), [86], [87]];
    const predictors = [["origin", "moisture"], ...origins.map((o, i) => [o, 10 + (i % 3)]), ["Coastal", 11], ["Valley", 12]];
    const d = dataset(target, predictors);
    expect(d.names).toEqual(["origin: Highland", "origin: Valley", "origin: A1", "moisture"]);
    expect(d.notes).toEqual([]);
  });

  test("the target and the weights column read numbers stored as text too, with a note", () => {
    const { target, predictors } = sheet();
    const y = target.map((row, i) => (i === 0 ? row : [` ${String(row[0])} `]));
    const x = predictors.map((row, i) => [...row, i === 0 ? "w" : String(1 + (i % 3))]);
    const d = buildDataset(y, x, { ...defaultSettings(), weightsColumn: "w" });
    const plain = dataset(target, predictors);
    expect(d.target).toEqual(plain.target);
    expect(d.weights).toEqual(x.slice(1).map((r) => Number(r[3])));
    expect(d.notes).toEqual([
      `weights column 'w' read as numbers: its cells hold numbers stored as text (first: row 2, '2')`,
      `target 'Sales' read as numbers: its cells hold numbers stored as text (first: row 2, '${String(target[1][0]).trim()}')`,
    ]);
  });

  test("PREDICT and APPLY read new rows holding numbers stored as text as the numbers", async () => {
    const runner = new CountingRunner();
    const { target, predictors } = sheet();
    const rows = [["Size", "Region", "Temp"], [4.5, "North", -2], [6, "West", 3.25]];
    const asText = rows.map((row, i) => (i === 0 ? row : [` ${String(row[0])}`, row[1], String(row[2])]));
    const byNumber = await predict(runner, target, predictors, rows, 1, FIXED);
    expect(await predict(runner, target, predictors, asText, 1, FIXED)).toEqual(byNumber);
    const table = await coefs(runner, target, predictors, 1, FIXED);
    expect(await apply(table, asText)).toEqual(await apply(table, rows));
    expect((await rejection(predict(runner, target, predictors, [[4.5, "North", "0,5"]], 1, FIXED))).message).toBe(
      "new_rows row 1 column 'Temp' has text '0,5' (a decimal comma or another digit grouping? numbers are read with '.' as the decimal point and ',' between groups of three digits), but 'Temp' is a number column: fix it or clear the cell",
    );
  });
});

describe("dates stored as text", () => {
  test("a column of dates written as text is refused with a suggestion, not turned into one term per date", () => {
    const days = Array.from({ length: 27 }, (_, i) => `2024-02-${String(i + 1).padStart(2, "0")}`);
    const target = [["y"], ...days.map((_, i) => [i * 1.5 + (i % 4)])];
    const predictors = [["day", "x"], ...days.map((d, i) => [d, i % 5])];
    expect(refusal(() => dataset(target, predictors))).toBe(
      "predictors column 'day' holds dates stored as text (row 2: '2024-02-01'): as text, each date would become a 0/1 term of its own; convert them to real dates (for example with DATEVALUE), which Excel keeps as numbers, or leave the column out of predictors",
    );
  });

  test("a date written as text in the target gets the real-date hint", () => {
    const { target, predictors } = sheet();
    const y = target.map((row, i) => (i === 3 ? ["2024-02-01"] : row));
    expect(refusal(() => dataset(y, predictors))).toBe(
      "target row 4 has text '2024-02-01' (a date stored as text? convert it to a real date, which is a number to Excel): the target must be numbers, so fix the cell or clear it",
    );
  });
});

describe("a header row of numbers", () => {
  /** Sales by year: columns 2019, 2020, 2021; target 2022 (or a text header). */
  function years(targetHeader: unknown): { target: unknown[][]; predictors: unknown[][] } {
    const predictors: unknown[][] = [[2019, 2020, 2021]];
    const target: unknown[][] = [[targetHeader]];
    for (let i = 0; i < 30; i++) {
      const a = 100 + ((i * 37) % 50);
      const b = 90 + ((i * 53) % 70);
      const c = 80 + ((i * 71) % 90);
      predictors.push([a, b, c]);
      target.push([0.2 * a + 0.3 * b + 0.5 * c + (i % 3)]);
    }
    return { target, predictors };
  }

  test("beside the target's text header: read as the header, and CHOICE says so", async () => {
    const { target, predictors } = years("Sales");
    const runner = new CountingRunner();
    const values = labelled(await choice(runner, target, predictors, 1, FIXED));
    expect(runner.last().options.names).toEqual(["2019", "2020", "2021"]);
    expect(values.get("rows used")).toBe(30);
    expect(values.get("notes")).toBe(
      "predictors row 1 (2019, 2020, 2021) is read as the header because the target's row 1 ('Sales') is a header beside it (add header=yes to settings to say so)",
    );
  });

  test("years with a number above the target too, or a target one row shorter: ask for header=yes or header=no", async () => {
    const message =
      "predictors row 1 (2019, 2020, 2021) looks like column labels (whole numbers rising from left to right, like years) but could be data: add header=yes to settings if it names the columns, or header=no if it is data";
    const { target, predictors } = years(2022);
    expect(await rejection(coefs(new CountingRunner(), target, predictors, 1, FIXED))).toEqual({ code: "#VALUE!", message });
    expect((await rejection(coefs(new CountingRunner(), target.slice(1), predictors, 1, FIXED))).message).toBe(message);
    // Told: header=yes names the columns (and the target) by the numbers; new rows may repeat that header.
    const runner = new CountingRunner();
    await coefs(runner, target, predictors, 1, `${FIXED}; header=yes`);
    expect(runner.last().options.names).toEqual(["2019", "2020", "2021"]);
    expect(runner.last().target).toHaveLength(30);
    const out = await predict(runner, target, predictors, [[2021, 2019, 2020], [150, 120, 100]], 1, `${FIXED}; header=yes`);
    expect(out[0]).toEqual(["prediction"]);
    expect(out).toHaveLength(2);
    // header=no: every row is data (and the target's 2022 a value).
    await coefs(runner, target, predictors, 1, `${FIXED}; header=no`);
    expect(runner.last().target).toHaveLength(31);
  });

  test("rows that rise in every row (year built | year sold) are data, not labels", () => {
    const predictors: unknown[][] = [];
    const target: unknown[][] = [];
    for (let i = 0; i < 20; i++) {
      const built = 1950 + ((i * 7) % 60);
      predictors.push([built, built + 5 + (i % 20)]);
      target.push([100 + i]);
    }
    const d = dataset(target, predictors);
    expect(d.hasHeader).toBe(false);
    expect(d.rowsUsed).toBe(20);
  });

  test("predictors one row longer than a target without a header: the message suggests header=yes", () => {
    const { target, predictors } = sheet(42, false);
    const x = [[0.5, "West", 7], ...predictors];
    expect(refusal(() => dataset(target, x))).toBe(
      "predictors has 43 rows but target has 42: if predictors' row 1 is a header, add header=yes to settings; otherwise select the same rows in both",
    );
  });
});

describe("SHRINK.APPLY's intercept row", () => {
  const newRows = [["Size"], [2], [5]];

  test("a table without an intercept row is refused (exact), intercept | 0 says so explicitly", async () => {
    expect(await rejection(apply([["term", "coefficient"], ["Size", 3]], newRows))).toEqual({
      code: "#VALUE!",
      message:
        "coefficient_table has no intercept row: add a row 'intercept' with the model's intercept (intercept | 0 for a model without one), or select the whole table SHRINK.COEFS returned",
    });
    expect(await apply([["Size", 3], ["intercept", 0]], newRows)).toEqual([["prediction"], [6], [15]]); // 3·Size, by hand
  });

  test("a first row naming the intercept is never a header; a coefficient stored as text gets the hint", async () => {
    expect((await rejection(apply([["(intercept)", "10"], ["Size", 3]], newRows))).message).toBe(
      "coefficient_table row 1 ('(intercept)') has text '10' (a number stored as text?) where its coefficient belongs: give a number",
    );
    expect((await rejection(apply([["term", "coefficient"], ["intercept", 10], ["Size", "3"]], newRows))).message).toBe(
      "coefficient_table row 3 ('Size') has text '3' (a number stored as text?) where its coefficient belongs: give a number",
    );
    expect(await apply([["(intercept)", 10], ["Size", 3]], newRows)).toEqual([["prediction"], [16], [25]]); // 10 + 3·Size, by hand
  });
});

describe("names that clash", () => {
  function regionSheet(numberName: string, textName = "region"): { target: unknown[][]; predictors: unknown[][] } {
    const levels = ["North", "South", "East"];
    const predictors: unknown[][] = [[numberName, textName]];
    const target: unknown[][] = [["y"]];
    for (let i = 0; i < 30; i++) {
      predictors.push([i % 2, levels[i % 3]]);
      target.push([i + (i % 2) * 3]);
    }
    return { target, predictors };
  }

  test("a number column named like a level's term: the clash is caught at fit time, naming the column to rename", async () => {
    const { target, predictors } = regionSheet("region: North");
    expect(await rejection(coefs(new CountingRunner(), target, predictors, 1, FIXED))).toEqual({
      code: "#VALUE!",
      message:
        "predictors column 'region: North' and level 'North' of the text column 'region' would both be listed as 'region: North', so SHRINK.APPLY and settings could not tell them apart: rename the column 'region: North'",
    });
  });

  test("clashes are found after NFC, case and space folding, as terms are looked up", () => {
    const folded = regionSheet("REGION:   north");
    expect(refusal(() => dataset(folded.target, folded.predictors))).toBe(
      "predictors column 'REGION:   north' and level 'North' of the text column 'region' would both be listed as 'region: North', so SHRINK.APPLY and settings could not tell them apart: rename the column 'REGION:   north'",
    );
    const nfd = regionSheet("re\u0301gion: North", "r\u00e9gion");
    expect(refusal(() => dataset(nfd.target, nfd.predictors))).toBe(
      "predictors column 'r\u00e9gion: North' and level 'North' of the text column 'r\u00e9gion' would both be listed as 'r\u00e9gion: North', so SHRINK.APPLY and settings could not tell them apart: rename the column 'r\u00e9gion: North'",
    );
  });

  test("two text columns whose level terms read alike; a name ending in '(reference)'", () => {
    const target = [["y"], [1], [2], [3], [4.5], [5]];
    const predictors = [["a", "a: b"], ["b: c", "c"], ["x", "d"], ["x", "d"], ["b: c", "c"], ["x", "d"]];
    expect(refusal(() => dataset(target, predictors))).toBe(
      "level 'b: c' of the text column 'a' and level 'c' of the text column 'a: b' would both be listed as 'a: b: c', so SHRINK.APPLY and settings could not tell them apart: rename the column 'a' or 'a: b'",
    );
    const marked = [["Size (reference)"], [1], [2], [3], [4], [6]];
    expect(refusal(() => dataset(target, marked))).toBe(
      "predictors column 'Size (reference)' would be listed as 'Size (reference)', which coefficient tables read as a reference-level mark: rename the column so it doesn't end in '(reference)'",
    );
  });

  test("property: whenever a fit goes ahead, COEFS lists distinct names and APPLY on its table predicts as PREDICT; otherwise #VALUE!", async () => {
    const names = fc.constantFrom("r", "R", "r: a", "r:a", "R : A", "r: b", "r: b: c", "s", "\u00e9", "e\u0301", "\u00e9: a", "q (reference)", "t");
    const levels = fc.constantFrom("a", "A", " a ", "b", "b: c", "c", "a: b", "\u00e9", "e\u0301", "c (reference)", "z");
    const column = fc.oneof(
      fc.record({ kind: fc.constant("number" as const), name: names }),
      fc.record({ kind: fc.constant("text" as const), name: names, levels: fc.array(levels, { minLength: 2, maxLength: 3 }) }),
    );
    await fc.assert(
      fc.asyncProperty(fc.array(column, { minLength: 1, maxLength: 3 }), async (columns) => {
        const rows = 14;
        const predictors: unknown[][] = [columns.map((c) => c.name)];
        const target: unknown[][] = [["y"]];
        for (let i = 0; i < rows; i++) {
          predictors.push(columns.map((c, j) => (c.kind === "number" ? ((i * (j + 3)) % 7) - 2 : c.levels[(i + j) % c.levels.length])));
          target.push([Math.sin(i + 1) * 3 + i / 4]);
        }
        const runner = new CountingRunner();
        let table;
        try {
          table = await coefs(runner, target, predictors, 1, FIXED);
        } catch (e) {
          expect((e as { code: unknown }).code).toBe("#VALUE!"); // refused with a message, never a crash
          return;
        }
        const listed = table.slice(1).map((row) => textKey(String(row[0]).replace(/\s*\(reference\)\s*$/i, "")));
        expect(new Set(listed).size).toBe(listed.length);
        const viaApply = await apply(table, predictors);
        const viaPredict = await predict(runner, target, predictors, predictors, 1, FIXED);
        expectVectorRelative(
          viaApply.slice(1).map((r) => r[0] as number),
          viaPredict.slice(1).map((r) => r[0] as number),
          1e-12,
          "APPLY(COEFS) vs PREDICT (engine result at the same point)",
        );
      }),
      { numRuns: 80, seed: 8 },
    );
  });
});

describe("Unicode normalization of names", () => {
  test("a setting, new rows and a coefficient table may spell a column name in another normalization", async () => {
    const runner = new CountingRunner();
    const { target, predictors } = sheet();
    const x = predictors.map((row, i) => (i === 0 ? ["caf\u00e9", "Region", "Temp"] : row));
    await coefs(runner, target, x, 1, `${FIXED}; no penalty=cafe\u0301`);
    expect(runner.last().options.names?.[0]).toBe("caf\u00e9");
    expect(runner.last().options.penaltyMultipliers).toEqual([0, 1, 1, 1, 1]);
    const newRows = [["Temp", "Region", "cafe\u0301"], [1, "North", 5]];
    const predicted = await predict(runner, target, x, newRows, 1, FIXED);
    expect(predicted[0]).toEqual(["prediction"]);
    const table = await coefs(runner, target, x, 1, FIXED);
    const nfdTable = table.map((row) => [typeof row[0] === "string" ? row[0].normalize("NFD") : row[0], row[1]]);
    expect(await apply(nfdTable, [["caf\u00e9", "Region", "Temp"], [5, "North", 1]])).toEqual(predicted);
  });

  test("property: a header in one normalization and a setting in the other name the same column", async () => {
    const letters = fc.constantFrom("e", "a", "o", "n", "\u00e9", "\u00f1", "\u00f6", "e\u0301", "n\u0303", "o\u0308", "A\u030a");
    const { target, predictors } = sheet(20);
    await fc.assert(
      fc.asyncProperty(fc.array(letters, { minLength: 1, maxLength: 6 }), fc.boolean(), async (parts, headerNfd) => {
        const name = parts.join("");
        const header = headerNfd ? name.normalize("NFD") : name.normalize("NFC");
        const setting = headerNfd ? name.normalize("NFC") : name.normalize("NFD");
        const x = predictors.map((row, i) => (i === 0 ? [header, "Region", "Temp"] : row));
        const runner = new CountingRunner();
        await coefs(runner, target, x, 1, `${FIXED}; no penalty=${setting}`);
        expect(runner.last().options.penaltyMultipliers).toEqual([0, 1, 1, 1, 1]);
        expect(runner.last().options.names?.[0]).toBe(name.normalize("NFC"));
      }),
      { numRuns: 40, seed: 8 },
    );
  });
});

describe("QUICK settings still cross-validate numbers stored as text", () => {
  test("a cross-validated fit over text numbers equals the fit over the numbers", async () => {
    const runner = new CountingRunner();
    const { target, predictors } = sheet();
    const asText = predictors.map((row, i) => (i === 0 ? row : [String(row[0]), row[1], String(row[2])]));
    const a = await coefs(runner, target, predictors, null, QUICK);
    const b = await coefs(runner, target, asText, null, QUICK);
    expect(b).toEqual(a); // same request, same fit: bit-identical (the engine's determinism contract)
  });
});
