/**
 * The fast reading of large grids (functions/dataset.ts CellGrid: plain numbers read without a
 * Cell object, the encoded matrix built while reading, the packed request) against the
 * cell-by-cell reading.
 *
 * Two routes agreeing: every cell of a grid wrapped as an Excel cell value
 * ({ type: "Double", basicValue: 5 }, cells.ts policy) is not a plain number, so it goes through
 * classifyCell one cell at a time, as every cell did before the fast reading; the same grid
 * unwrapped takes the fast path. Both must give the same dataset bit for bit, the same notes and
 * the same messages, whatever mix of blanks, errors, text, numbers stored as text and zeros
 * treated as blanks the grid holds (the bad-input policy is unchanged). The engine's result from a
 * packed request must equal its result from the rows form bit for bit.
 */
import { fit } from "../../engine/fit";
import { isColumnMatrix } from "../../engine/matrix";
import { mulberry32 } from "../../engine/random";
import { prepare } from "../../functions/api";
import { FitCache } from "../../functions/cache";
import { buildDataset, Dataset, DataSettings, PACKED_MIN_VALUES, releaseReservedMatrix, reserveMatrix } from "../../functions/dataset";
import type { AnyFitRequest, FitRunner } from "../../functions/runner";
import type { FitResult } from "../../engine/fit";

const SETTINGS: DataSettings = { header: "auto", zeroIsMissing: null, foldColumn: null, weightsColumn: null };

/** Every cell as Excel's wrapped cell value (a number, text or boolean inside `basicValue`). */
function wrapped(grid: unknown[][]): unknown[][] {
  return grid.map((row) =>
    row.map((v) => {
      if (typeof v === "number") return { type: "Double", basicValue: v };
      if (typeof v === "string") return { type: "String", basicValue: v };
      if (typeof v === "boolean") return { type: "Boolean", basicValue: v };
      return v;
    }),
  );
}

/** A numeric worksheet: header row, `rows` rows × `columns` numbers, a target beside it. */
function numberSheet(seed: number, rows: number, columns: number): { target: unknown[][]; predictors: unknown[][] } {
  const uniform = mulberry32(seed);
  const predictors: unknown[][] = [Array.from({ length: columns }, (_, j) => `beans ${j + 1}`)];
  const target: unknown[][] = [["roast score"]];
  for (let i = 0; i < rows; i++) {
    const row = Array.from({ length: columns }, () => Math.round(1000 * (uniform() - 0.3)) / 100);
    predictors.push(row);
    target.push([row[0] - 0.5 * row[1] + uniform()]);
  }
  return { target, predictors };
}

function bits(values: ArrayLike<number>): string {
  return Array.from(new Uint32Array(Float64Array.from(values).buffer)).join(",");
}

/** Everything a dataset carries that a fit or a spill reads. */
function summary(dataset: Dataset): unknown {
  return {
    names: dataset.names,
    matrix: [dataset.matrix.rows, dataset.matrix.columns, bits(dataset.matrix.data)],
    rows: bits(dataset.predictors.flat()),
    target: bits(dataset.target),
    weights: dataset.weights,
    foldLabels: dataset.foldLabels,
    rowsUsed: dataset.rowsUsed,
    rowsSkipped: dataset.rowsSkipped,
    hasHeader: dataset.hasHeader,
    notes: dataset.notes,
    targetName: dataset.targetName,
    outcome: dataset.outcome,
    classes: dataset.classes,
    references: dataset.referenceLevels,
    terms: dataset.encoder.terms,
  };
}

/** The outcome of reading a grid: its summary, or the message it was refused with. */
function reading(target: unknown[][], predictors: unknown[][], settings: DataSettings): unknown {
  try {
    return summary(buildDataset(target, predictors, settings));
  } catch (error) {
    return { error: (error as Error).message };
  }
}

function expectSameReading(target: unknown[][], predictors: unknown[][], settings: DataSettings = SETTINGS): unknown {
  const fast = reading(target, predictors, settings);
  expect(fast).toEqual(reading(wrapped(target), wrapped(predictors), settings));
  return fast;
}

describe("the fast reading equals the cell-by-cell reading", () => {
  test("a plain numeric grid", () => {
    const sheet = numberSheet(1, 200, 6);
    const fast = expectSameReading(sheet.target, sheet.predictors) as { rowsUsed: number };
    expect(fast.rowsUsed).toBe(200);
  });

  test("blanks, error values, text, numbers stored as text, booleans, -0 and non-finite numbers, seeded at random", () => {
    const odd: unknown[] = [null, "", "  ", "#N/A", { code: "#DIV/0!" }, NaN, Infinity, -0, 0, true, false, " 12.5 ", "1,234", "n/a", new Error("x")];
    for (let seed = 1; seed <= 40; seed++) {
      const uniform = mulberry32(seed);
      const sheet = numberSheet(seed, 60, 4);
      const cells = 2 + Math.floor(uniform() * 4);
      for (let k = 0; k < cells; k++) {
        const i = 1 + Math.floor(uniform() * 60);
        const value = odd[Math.floor(uniform() * odd.length)];
        if (uniform() < 0.2) sheet.target[i][0] = value;
        else sheet.predictors[i][Math.floor(uniform() * 4)] = value;
      }
      expectSameReading(sheet.target, sheet.predictors);
      expectSameReading(sheet.target, sheet.predictors, { ...SETTINGS, zeroIsMissing: "all" });
      expectSameReading(sheet.target, sheet.predictors, { ...SETTINGS, header: "yes", zeroIsMissing: ["beans 2", "roast score"] });
    }
  });

  test("zeros treated as blanks, text columns, fold and weights columns, numbers stored as text", () => {
    const sheet = numberSheet(3, 80, 5);
    const origins = ["hill", "valley", "coast"];
    sheet.predictors[0].push("origin", "batch", "weight");
    for (let i = 1; i <= 80; i++) {
      sheet.predictors[i].push(origins[i % 3], (i % 4) + 1, i % 7 === 0 ? "2" : 1 + (i % 3));
      if (i % 9 === 0) sheet.predictors[i][1] = 0;
      if (i % 11 === 0) sheet.predictors[i][2] = String(sheet.predictors[i][2]);
      if (i % 13 === 0) sheet.target[i][0] = 0;
    }
    const settings: DataSettings = { ...SETTINGS, zeroIsMissing: ["beans 2", "roast score"], foldColumn: "batch", weightsColumn: "weight" };
    const fast = expectSameReading(sheet.target, sheet.predictors, settings) as { rowsSkipped: number; notes: string[] };
    expect(fast.rowsSkipped).toBeGreaterThan(0);
    expect(fast.notes.join(" ")).toContain("stored as text");
  });

  test("refusals carry the same message: text in a number column, a header of numbers, a yes/no target", () => {
    const sheet = numberSheet(4, 30, 3);
    sheet.predictors[7][1] = "lots";
    expect((expectSameReading(sheet.target, sheet.predictors) as { error: string }).error).toContain("row 8 has text 'lots' in a number column");
    const years = numberSheet(5, 30, 3);
    years.predictors[0] = [2019, 2020, 2021];
    expect(expectSameReading(years.target, years.predictors)).toHaveProperty("hasHeader", true);
    expect((expectSameReading(years.target.slice(1), years.predictors) as { error: string }).error).toContain("looks like column labels");
    const yesNo = numberSheet(6, 30, 3);
    for (let i = 1; i <= 30; i++) yesNo.target[i][0] = i % 3 === 0 ? 1 : 0;
    const read = expectSameReading(yesNo.target, yesNo.predictors) as { outcome: string };
    expect(read.outcome).toBe("two-class");
  });
});

describe("packed requests from large grids", () => {
  class Recorder implements FitRunner {
    readonly requests: AnyFitRequest[] = [];
    fit(request: AnyFitRequest): Promise<FitResult> {
      this.requests.push(request);
      return Promise.resolve({ run: this.requests.length } as unknown as FitResult);
    }
  }

  test("a grid of at least PACKED_MIN_VALUES values sends the matrix; the engine's result equals the rows form's bit for bit", () => {
    const rows = Math.ceil(PACKED_MIN_VALUES / 8) + 3;
    const sheet = numberSheet(7, rows, 8);
    const prepared = prepare(sheet.target, sheet.predictors, [[0.5, 1]], "folds=4; seed=2; grid size=15");
    expect(isColumnMatrix(prepared.request.predictors)).toBe(true);
    const small = prepare(sheet.target.slice(0, 21), sheet.predictors.slice(0, 21), [[0.5, 1]], "folds=4; seed=2; grid size=15");
    expect(Array.isArray(small.request.predictors)).toBe(true);
    const { predictors, target, options } = prepared.request;
    expect(fit(predictors, target, options)).toStrictEqual(fit(prepared.dataset.predictors, target, options));
  });

  test("the cache misses when any cell changes, and hits when nothing did", async () => {
    const rows = Math.ceil(PACKED_MIN_VALUES / 6) + 1;
    const sheet = numberSheet(8, rows, 6);
    const inner = new Recorder();
    const cache = new FitCache(inner);
    const ask = (predictors: unknown[][], target: unknown[][]) => cache.fit(prepare(target, predictors, null, "folds=4").request);
    await ask(sheet.predictors, sheet.target);
    await ask(sheet.predictors.map((r) => r.slice()), sheet.target.map((r) => r.slice()));
    expect(inner.requests.length).toBe(1);
    const uniform = mulberry32(9);
    let runs = 1;
    for (let k = 0; k < 40; k++) {
      const predictors = sheet.predictors.map((r) => r.slice());
      const target = sheet.target.map((r) => r.slice());
      const i = 1 + Math.floor(uniform() * rows);
      const j = k % 6;
      if (k % 8 === 7) target[i][0] = (target[i][0] as number) + 2 ** -40;
      else predictors[i][j] = (predictors[i][j] as number) === 0 ? -0 : (predictors[i][j] as number) * (1 + 2 ** -52);
      await ask(predictors, target);
      expect(inner.requests.length).toBe(++runs);
    }
  });
});

describe("a matrix buffer reserved while a fit runs (dataset.ts reserveMatrix)", () => {
  const wait = (): Promise<void> => new Promise((resolve) => setTimeout(resolve, 5));
  afterEach(() => releaseReservedMatrix());

  test("the next grid of that size is read into it, once, with the same dataset bit for bit; other sizes get fresh memory", async () => {
    const sheet = numberSheet(11, 11000, 6);
    const before = reading(sheet.target, sheet.predictors, SETTINGS);
    const first = buildDataset(sheet.target, sheet.predictors, SETTINGS);
    reserveMatrix(first.matrix.data.length);
    await wait();
    const second = buildDataset(sheet.target, sheet.predictors, SETTINGS);
    const third = buildDataset(sheet.target, sheet.predictors, SETTINGS);
    expect(summary(second)).toEqual(before);
    expect(summary(third)).toEqual(before);
    // Each dataset owns its matrix: the reserved one went to one reading only.
    expect(new Set([first.matrix.data.buffer, second.matrix.data.buffer, third.matrix.data.buffer]).size).toBe(3);
    // A reserved buffer of another size is left alone.
    reserveMatrix(first.matrix.data.length + 6);
    await wait();
    expect(summary(buildDataset(sheet.target, sheet.predictors, SETTINGS))).toEqual(before);
  });

  test("a grid that is not all plain numbers, read after a reservation, is read as before (and as the cell-by-cell reading)", async () => {
    const sheet = numberSheet(12, 11000, 6);
    const predictors = sheet.predictors.map((r) => r.slice());
    predictors[9000][2] = "";
    predictors[10500][4] = "7.5";
    const expected = reading(wrapped(sheet.target), wrapped(predictors), SETTINGS);
    reserveMatrix(11000 * 6);
    await wait();
    expect(reading(sheet.target, predictors, SETTINGS)).toEqual(expected);
    // The buffer given back after the plain reading stopped serves the next plain grid, cleanly.
    expect(reading(sheet.target, sheet.predictors, SETTINGS)).toEqual(reading(wrapped(sheet.target), wrapped(sheet.predictors), SETTINGS));
  });
});
