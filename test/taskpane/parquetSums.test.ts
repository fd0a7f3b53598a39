/**
 * The pane's Parquet route without the browser: a Parquet file written by DuckDB (@duckdb/node-api,
 * COPY … TO … (FORMAT parquet)) is read by hyparquet row group by row group
 * (taskpane/sources/parquetRows.ts) and summed by the engine's own scan (engine/sumsScan.ts);
 * the same file is summed by DuckDB's SQL route (engine/node/duckdb.ts, the CLI's route).
 *
 * Source of truth: DuckDB computing the same sums another way (a general reference library). The
 * two routes must give the same terms, blocks, labels, counts and skipped rows exactly, and the
 * same sums to 1e-10 relative (the order of the additions differs); the models fitted from
 * either agree to 1e-9 (the issue's bars). Compressions: SNAPPY (DuckDB's default) and none are
 * read; ZSTD is refused in one line. Not Parquet, a missing column: one line.
 */
import { DuckDBInstance } from "@duckdb/node-api";
import { mkdtempSync, readFileSync, rmSync, writeFileSync } from "fs";
import { tmpdir } from "os";
import { join } from "path";
import { InputError } from "../../engine/errors";
import { fitFromSums } from "../../engine/fitSums";
import { duckdbSums } from "../../engine/node/duckdb";
import { discreteQuantileIndex, sumsOfScan, textToNumber, type ScanRequest } from "../../engine/sumsScan";
import type { FoldRule } from "../../engine/sumsSql";
import { upperIndex, type SumsTable } from "../../engine/sumsTable";
import { bufferOfBlob, openParquet } from "../../taskpane/sources/parquetRows";

let folder: string;
let connection: Awaited<ReturnType<DuckDBInstance["connect"]>>;
let instance: DuckDBInstance;

beforeAll(async () => {
  folder = mkdtempSync(join(tmpdir(), "shrinkwise-parquet-"));
  instance = await DuckDBInstance.create(":memory:");
  connection = await instance.connect();
});

afterAll(() => {
  connection?.closeSync();
  instance?.closeSync();
  if (folder) rmSync(folder, { recursive: true, force: true });
});

/**
 * A roastery's sensor rows, generated in DuckDB with a fixed seed: a key, a timestamp, drum
 * temperature near 1e8 + spread 1 (large offset), humidity with blanks, a text origin with three
 * levels and a few blanks, a small integer grade, a weight (some 0), the target.
 */
async function writeRoastParquet(file: string, rows: number, options = "FORMAT parquet, ROW_GROUP_SIZE 2048"): Promise<void> {
  await connection.run("SELECT setseed(0.25)");
  await connection.run(`COPY (
    SELECT
      i::BIGINT * 7919 - 40000 AS batch_id,
      TIMESTAMP '2026-01-05 06:00:00' + to_seconds((i * 60 + (i % 7))::BIGINT) AS minute,
      100000000 + random() AS drum_temp,
      CASE WHEN i % 37 = 5 THEN NULL ELSE 40 + 10 * random() END AS humidity,
      CASE WHEN i % 101 = 3 THEN NULL ELSE ['Cerrado', 'Sidamo', 'Huila'][1 + (i % 3)] END AS origin,
      (i % 5)::SMALLINT AS grade,
      CASE WHEN i % 11 = 0 THEN 0.0 ELSE 0.5 + random() END AS weight,
      'shift ' || (1 + i % 4)::VARCHAR AS shift,
      3 * random() + 0.01 * (i % 5) AS color_index
    FROM range(${rows}) t(i)
  ) TO '${file}' (${options})`);
  // The target as a function of the predictors, so the fit has something to find.
  const fixed = file.replace(/\.parquet$/, "-y.parquet");
  await connection.run(`COPY (
    SELECT * REPLACE (color_index + 2.5 * (drum_temp - 100000000) - 0.1 * coalesce(humidity, 0) + CASE origin WHEN 'Sidamo' THEN 0.7 ELSE 0 END AS color_index)
    FROM read_parquet('${file}')
  ) TO '${fixed}' (${options})`);
  writeFileSync(file, readFileSync(fixed));
}

async function scanSums(file: string, request: ScanRequest): Promise<SumsTable> {
  const bytes = readFileSync(file);
  const rows = await openParquet(bufferOfBlob(new Blob([bytes])), "roast.parquet");
  return sumsOfScan(request, rows, { source: "test" });
}

/**
 * The same sums about another centre (sumsTable.ts conventions): with d = c − c', the sums about c'
 * are cross + d_a·S_b + d_b·S_a + W·d_a·d_b, S = W·offset (from memory: the expansion of
 * (x − c + d)(x' − c' + d')). The two routes' centres differ in their last bits (their additions
 * run in different orders), which moves the cross-products by about d·S: compared about one centre.
 */
function recentre(table: SumsTable, centre: SumsTable["centre"]): SumsTable {
  const p = table.terms.length;
  const d = table.centre.terms.map((c, j) => c - centre.terms[j]);
  const dy = table.centre.target - centre.target;
  const blocks = table.blocks.map((block) => {
    const W = block.weight;
    const S = block.offset.map((o) => W * o);
    const Sy = W * block.offsetY;
    const cross = block.cross.slice();
    for (let a = 0; a < p; a++) for (let c = a; c < p; c++) cross[upperIndex(p, a, c)] += d[a] * S[c] + d[c] * S[a] + W * d[a] * d[c];
    return {
      ...block,
      offset: block.offset.map((o, j) => o + d[j]),
      offsetY: block.offsetY + dy,
      cross,
      crossY: block.crossY.map((v, a) => v + d[a] * Sy + dy * S[a] + W * d[a] * dy),
      yy: block.yy + 2 * dy * Sy + W * dy * dy,
    };
  });
  return { ...table, centre, blocks };
}

/** Two sums tables of the same rows agree: structure exactly, sums (about one centre) to `tolerance` relative to their natural scale. */
function expectSameSums(ours: SumsTable, b: SumsTable, tolerance = 1e-10): void {
  ours.centre.terms.forEach((c, j) => expect(Math.abs(c - b.centre.terms[j])).toBeLessThanOrEqual(1e-12 * Math.abs(b.centre.terms[j]) + 1e-300));
  const a = recentre(ours, b.centre);
  expect(a.terms).toEqual(b.terms);
  expect(a.target).toBe(b.target);
  expect(a.weights).toBe(b.weights);
  expect(a.skippedRows).toBe(b.skippedRows);
  expect(a.blocking).toBe(b.blocking);
  expect(a.timeOrdered ?? false).toBe(b.timeOrdered ?? false);
  expect(a.blocks.map((x) => x.label)).toEqual(b.blocks.map((x) => x.label));
  const p = a.terms.length;
  const close = (x: number, y: number, scale: number, what: string): void => {
    expect([what, Math.abs(x - y) <= tolerance * scale]).toEqual([what, true]);
  };
  a.blocks.forEach((x, k) => {
    const y = b.blocks[k];
    expect(x.rows).toBe(y.rows);
    close(x.weight, y.weight, Math.abs(y.weight), `weight ${x.label}`);
    const spread = (j: number): number => Math.sqrt(Math.max(y.cross[upperIndex(p, j, j)], 0) / y.weight);
    const spreadY = Math.sqrt(y.yy / y.weight);
    for (let j = 0; j < p; j++) {
      close(x.mean[j], y.mean[j], Math.max(Math.abs(y.mean[j]), spread(j)), `mean ${a.terms[j]} ${x.label}`);
      close(x.crossY[j], y.crossY[j], Math.sqrt(y.cross[upperIndex(p, j, j)] * y.yy), `crossY ${a.terms[j]} ${x.label}`);
      close((x.largest as number[])[j], (y.largest as number[])[j], Math.abs((y.largest as number[])[j]), `largest ${a.terms[j]}`);
      for (let c = j; c < p; c++) {
        const t = upperIndex(p, j, c);
        close(x.cross[t], y.cross[t], Math.sqrt(y.cross[upperIndex(p, j, j)] * y.cross[upperIndex(p, c, c)]), `cross ${a.terms[j]} ${a.terms[c]} ${x.label}`);
      }
    }
    close(x.meanY, y.meanY, Math.max(Math.abs(y.meanY), spreadY), `meanY ${x.label}`);
    close(x.yy, y.yy, y.yy, `yy ${x.label}`);
  });
}

function expectSameFit(a: SumsTable, b: SumsTable): void {
  const fa = fitFromSums(a, { mixes: [1, 0.5], rule: "lowest" });
  const fb = fitFromSums(b, { mixes: [1, 0.5], rule: "lowest" });
  const scale = Math.max(...fb.coefficients.map(Math.abs));
  fa.coefficients.forEach((v, j) => expect(Math.abs(v - fb.coefficients[j])).toBeLessThanOrEqual(1e-9 * scale));
  expect(Math.abs(fa.intercept - fb.intercept)).toBeLessThanOrEqual(1e-9 * (Math.abs(fb.intercept) + fb.targetSpread));
  expect(Math.abs(fa.strength - fb.strength)).toBeLessThanOrEqual(1e-9 * fb.strength);
}

const predictors = ["drum_temp", "humidity", "origin", "grade"];

describe("a Parquet file read by hyparquet and summed by the engine equals DuckDB's sums of the same file", () => {
  const rules: [string, FoldRule, string | null][] = [
    ["hash of a key into 7 folds, weights", { kind: "hash", key: "batch_id", folds: 7 }, "weight"],
    ["a fold column of text", { kind: "column", column: "shift" }, null],
    ["a fold column of small integers, weights", { kind: "column", column: "grade" }, "weight"],
    ["time blocks by a timestamp", { kind: "time", column: "minute", folds: 4 }, null],
    ["time blocks by a number column", { kind: "time", column: "batch_id", folds: 10 }, "weight"],
  ];
  let file: string;
  beforeAll(async () => {
    file = join(folder, "roast.parquet");
    await writeRoastParquet(file, 9000);
  }, 60000);

  test("the file has several row groups (read one at a time) and DuckDB's default compression, SNAPPY", async () => {
    const rows = await openParquet(bufferOfBlob(new Blob([readFileSync(file)])), "roast.parquet");
    expect(rows.batches).toBeGreaterThan(1);
    expect(rows.rows).toBe(9000);
    // The column types in DuckDB's words, as DuckDB's DESCRIBE of the same file gives them.
    const described = (await connection.runAndReadAll(`DESCRIBE SELECT * FROM read_parquet('${file}')`)).getRowObjectsJson();
    expect(rows.columns.map((c) => `${c.name}:${c.type}`)).toEqual(described.map((row) => `${String(row.column_name)}:${String(row.column_type)}`));
    expect(rows.columns.map((c) => c.name)).toEqual(["batch_id", "minute", "drum_temp", "humidity", "origin", "grade", "weight", "shift", "color_index"]);
  });

  test.each(rules)("%s", async (_, fold, weights) => {
    const grade = fold.kind === "column" && fold.column === "grade";
    const request: ScanRequest = { target: "color_index", predictors: grade ? predictors.filter((p) => p !== "grade") : predictors, weights, fold };
    const engine = await scanSums(file, request);
    const duck = await duckdbSums({ ...request, source: { kind: "parquet", path: file } });
    expectSameSums(engine, duck);
    expect(engine.terms).toEqual(expect.arrayContaining(["origin: Cerrado", "origin: Huila"]));
    expect(engine.skippedRows).toBeGreaterThan(0);
    expectSameFit(engine, duck);
  }, 60000);

  test("uncompressed Parquet reads the same; the scan reports progress per row group and stops on cancel", async () => {
    const plain = join(folder, "roast-plain.parquet");
    await writeRoastParquet(plain, 5000, "FORMAT parquet, COMPRESSION uncompressed, ROW_GROUP_SIZE 2048");
    const request: ScanRequest = { target: "color_index", predictors, fold: { kind: "hash", key: "batch_id", folds: 5 } };
    const rows = await openParquet(bufferOfBlob(new Blob([readFileSync(plain)])), "roast-plain.parquet");
    const seen: number[] = [];
    const engine = await sumsOfScan(request, rows, { onProgress: (done, total) => seen.push(done / total) });
    expect(seen[seen.length - 1]).toBe(1);
    expect(seen.length).toBe(2 * rows.batches);
    expectSameSums(engine, await duckdbSums({ ...request, source: { kind: "parquet", path: plain } }));
    const signal = { aborted: false };
    await expect(sumsOfScan(request, rows, { signal, onProgress: () => (signal.aborted = true) })).rejects.toMatchObject({ name: "CancelledError" });
  }, 60000);
});

describe("bad input: one line that says what to fix", () => {
  test("ZSTD compression is refused before reading, naming the file and what to do", async () => {
    const zstd = join(folder, "roast-zstd.parquet");
    await writeRoastParquet(zstd, 500, "FORMAT parquet, COMPRESSION zstd");
    const rows = await openParquet(bufferOfBlob(new Blob([readFileSync(zstd)])), "roast-zstd.parquet");
    const attempt = sumsOfScan({ target: "color_index", predictors, fold: { kind: "hash", key: "batch_id", folds: 5 } }, rows);
    await expect(attempt).rejects.toThrow(InputError);
    await expect(attempt).rejects.toThrow(/^'roast-zstd\.parquet' is compressed with ZSTD, .*save it again with SNAPPY compression/);
  }, 60000);

  test("a file that is not Parquet", async () => {
    const text = new Blob(["batch_id,color_index\n1,2\n".repeat(20)]);
    await expect(openParquet(bufferOfBlob(text), "notes.parquet")).rejects.toThrow(/^'notes\.parquet' can't be read as Parquet \(.*\): check that it is a Parquet file/);
    await expect(openParquet(bufferOfBlob(new Blob([])), "empty.parquet")).rejects.toThrow(/^'empty\.parquet' can't be read as Parquet/);
  });

  test("a column that is not there; text in the target", async () => {
    const file = join(folder, "roast.parquet");
    const rows = await openParquet(bufferOfBlob(new Blob([readFileSync(file)])), "roast.parquet");
    await expect(sumsOfScan({ target: "colour", predictors, fold: { kind: "hash", key: "batch_id", folds: 5 } }, rows)).rejects.toThrow(/the target column 'colour' is not in roast\.parquet/);
    await expect(sumsOfScan({ target: "shift", predictors, fold: { kind: "hash", key: "batch_id", folds: 5 } }, rows)).rejects.toThrow(/the target column 'shift' has text where numbers are expected \(e\.g\. 'shift 1'\)/);
  });
});

describe("the pieces DuckDB defines", () => {
  test("quantile_disc's index: max(1, ⌈n·q⌉) − 1 with the decimal q, as DuckDB picks it (checked against DuckDB)", async () => {
    for (const folds of [2, 3, 6, 10]) {
      const levels = Array.from({ length: folds }, (_, j) => String((j + 1) / (folds + 1)));
      for (const n of [1, 2, 3, 7, 10, 11, 22, 33, 99, 100, 101, 1000]) {
        const reader = await connection.runAndReadAll(`SELECT quantile_disc(x, [${levels.join(", ")}]) AS q FROM range(${n}) t(x)`);
        const got = (reader.getRowObjectsJson()[0].q as unknown as (string | number)[]).map(Number);
        expect([folds, n, got]).toEqual([folds, n, levels.map((q) => discreteQuantileIndex(n, q))]);
      }
    }
  });

  test("text read as numbers as TRY_CAST reads its common forms", async () => {
    const texts = [" 1.5 ", "-2e3", "+.5", "7.", "abc", "", "1,5", "0x10", "inf", "-Infinity", "NaN"];
    const reader = await connection.runAndReadAll(`SELECT ${texts.map((t, i) => `CAST(TRY_CAST('${t}' AS DOUBLE) AS VARCHAR) AS v${i}`).join(", ")}`);
    const row = reader.getRowObjectsJson()[0] as Record<string, string | null>;
    texts.forEach((t, i) => {
      const duck = row[`v${i}`];
      const ours = textToNumber(t);
      const theirs = duck === null ? null : /^-?nan$/i.test(duck) ? "nan" : /^inf/i.test(duck) ? Infinity : /^-inf/i.test(duck) ? -Infinity : Number(duck);
      expect([t, ours === null ? null : Number.isNaN(ours) ? "nan" : ours]).toEqual([t, theirs]);
    });
  });
});
