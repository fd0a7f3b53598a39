/**
 * The pane's routes (taskpane/sources/routes.ts) in Node, with DuckDB's Node package standing in
 * for DuckDB-wasm behind the same session interface: the file route runs the SQL generator's
 * queries through the pane's FileSumsReader and must give the sums table the in-memory two-pass
 * reference gives (engine/sums.ts sumsOfRows, the reference every query route is held to: ≤ 1e-10
 * relative), report progress query by query, and stop on cancel. The sums-table route reads the
 * long form as a worksheet range holds it (blanks as ""). The browser test
 * (test/browser/sumsRoutes.test.ts) runs the real DuckDB-wasm.
 */
import { DuckDBInstance } from "@duckdb/node-api";
import { mkdtempSync, rmSync, writeFileSync } from "fs";
import { tmpdir } from "os";
import { join } from "path";
import { CancelledError } from "../../../engine/errors";
import { fitFromSums } from "../../../engine/fitSums";
import { sumsOfRows, sumsToLong } from "../../../engine/sums";
import { foldOfKey } from "../../../engine/sumsSql";
import type { SumsTable } from "../../../engine/sumsTable";
import type { DuckdbSession, SqlRow } from "../../../taskpane/sources/duckdbSession";
import { plainValue } from "../../../taskpane/sources/duckdbSession";
import { FileSumsReader, type FileProgress } from "../../../taskpane/sources/fileSums";
import { fitWithSettings, sumsOfFile, sumsOfRange } from "../../../taskpane/sources/routes";
import { designOf, roastCsv, roastLog } from "../../browser/roastLog";

let folder: string;
let csv: string;
const rows = roastLog(80, 515);
const K = 4;

beforeAll(() => {
  folder = mkdtempSync(join(tmpdir(), "shrinkwise-routes-"));
  csv = join(folder, "roast-log.csv");
  writeFileSync(csv, roastCsv(rows));
});

afterAll(() => {
  if (folder) rmSync(folder, { recursive: true, force: true });
});

/** DuckDB's Node package behind the pane's session interface; registered names map to real paths. */
function nodeSession(paths: Map<string, string>, log: string[]): () => Promise<DuckdbSession> {
  return async () => {
    const instance = await DuckDBInstance.create(":memory:");
    const connection = await instance.connect();
    const files = new Map<string, string>();
    return {
      version: "node",
      async registerFile(name: string, file: File) {
        files.set(name, paths.get(file.name) as string);
      },
      async dropFile(name: string) {
        files.delete(name);
      },
      async query(sql: string) {
        log.push(sql.slice(0, 20));
        let text = sql;
        for (const [name, path] of files) text = text.split(`'${name}'`).join(`'${path}'`);
        const objects = (await connection.runAndReadAll(text)).getRowObjectsJS();
        return objects.map((o) => Object.fromEntries(Object.entries(o).map(([k, v]) => [k, plainValue(v)]))) as SqlRow[];
      },
      async terminate() {
        connection.closeSync();
        instance.closeSync();
      },
    };
  };
}

function relativeClose(a: number, b: number, tolerance: number, scale: number): boolean {
  return Math.abs(a - b) <= tolerance * Math.max(Math.abs(b), scale);
}

test("the file route's sums equal the in-memory two-pass sums on the same rows and hash folds (≤ 1e-10)", async () => {
  const log: string[] = [];
  const reader = new FileSumsReader(nodeSession(new Map([["roast-log.csv", csv]]), log));
  const progress: FileProgress[] = [];
  const table = await sumsOfFile(
    reader,
    { name: "roast-log.csv" } as File,
    { target: "color_index", predictors: ["minute", "drum_temp", "exhaust_temp", "airflow", "gas_pct", "bean_moisture", "origin"], weights: null, fold: { kind: "hash", key: "batch_id", folds: K } },
    (p) => progress.push(p),
    { aborted: false, onAbort: () => undefined },
  );
  await reader.reset();
  const { x, y, names } = designOf(rows);
  const labels = rows.map((row) => String(foldOfKey(row.batch_id, K) + 1));
  const reference: SumsTable = sumsOfRows(x, y, null, labels, names, "color_index");
  expect(table.terms).toEqual(reference.terms);
  expect(table.blocks.map((b) => b.label)).toEqual(reference.blocks.map((b) => b.label));
  table.blocks.forEach((block, b) => {
    const other = reference.blocks[b];
    expect(block.rows).toBe(other.rows);
    const scale = Math.max(...other.cross.map(Math.abs));
    block.cross.forEach((v, i) => expect([i, relativeClose(v, other.cross[i], 1e-10, scale)]).toEqual([i, true]));
    block.crossY.forEach((v, i) => expect(relativeClose(v, other.crossY[i], 1e-10, Math.abs(other.yy))).toBe(true));
    expect(relativeClose(block.yy, other.yy, 1e-10, 0)).toBe(true);
  });
  expect(table.source).toBe("roast-log.csv, DuckDB node in this browser");
  // Progress: one report before each query, done counting up from 0, the total never below done + 1.
  expect(progress.map((p) => p.done)).toEqual(progress.map((_, i) => i));
  progress.forEach((p) => expect(p.total).toBeGreaterThan(p.done));
  expect(progress.map((p) => p.step)).toEqual(expect.arrayContaining(["reading the columns", "first pass over the rows (counts and centre)", "listing a text column's levels", "second pass over the rows (sums per block)"]));
  expect(progress.length).toBe(log.length);
  // And the fit from those sums equals the fit from the reference sums (fitWithSettings = fitFromSums with the pane's options).
  const settings = { rule: "lowest" as const, standardize: true, intercept: true };
  const fromFile = await fitWithSettings(table, settings, () => undefined, { aborted: false, onAbort: () => undefined });
  const fromReference = fitFromSums(reference, settings);
  const size = Math.max(...fromReference.coefficients.map(Math.abs));
  fromFile.coefficients.forEach((b, j) => expect(Math.abs(b - fromReference.coefficients[j])).toBeLessThanOrEqual(1e-9 * size));
});

test("cancel between queries stops the file route with CancelledError", async () => {
  const log: string[] = [];
  const reader = new FileSumsReader(nodeSession(new Map([["roast-log.csv", csv]]), log));
  const callbacks: (() => void)[] = [];
  const signal = { aborted: false, onAbort: (callback: () => void) => callbacks.push(callback) };
  const running = sumsOfFile(
    reader,
    { name: "roast-log.csv" } as File,
    { target: "color_index", predictors: ["drum_temp"], weights: null, fold: { kind: "hash", key: "batch_id", folds: K } },
    (p) => {
      if (p.step.startsWith("first pass")) {
        signal.aborted = true;
        callbacks.forEach((callback) => callback());
      }
    },
    signal,
  );
  await expect(running).rejects.toBeInstanceOf(CancelledError);
  // Only the describe ran: the first pass, announced after the cancel, never reached DuckDB.
  expect(log).toEqual(["DESCRIBE SELECT * FR"]);
});

test("time blocks by an ordering column: a time-ordered table of K + 1 blocks, fitted forward (the pane's third fold rule)", async () => {
  const reader = new FileSumsReader(nodeSession(new Map([["roast-log.csv", csv]]), []));
  const table = await sumsOfFile(
    reader,
    { name: "roast-log.csv" } as File,
    { target: "color_index", predictors: ["drum_temp", "bean_moisture", "origin"], weights: null, fold: { kind: "time", column: "batch_id", folds: 3 } },
    () => undefined,
    { aborted: false, onAbort: () => undefined },
  );
  await reader.reset();
  expect(table.timeOrdered).toBe(true);
  expect(table.blocks.map((b) => b.label)).toEqual(["1", "2", "3", "4"]);
  expect(table.blocks.reduce((n, b) => n + b.rows, 0)).toBe(rows.length);
  const result = await fitWithSettings(table, { rule: "lowest", standardize: true, intercept: true }, () => undefined, { aborted: false, onAbort: () => undefined });
  expect(result.cv?.folds).toBe(3); // forward chaining: each later block scored once
  expect(result.terms).toEqual(["drum_temp", "bean_moisture", "origin: Cerrado", "origin: Sidamo"]);
});

test("the sums-table route reads the long form as a range holds it (blank cells as \"\")", () => {
  const { x, y, names } = designOf(rows);
  const labels = rows.map((row) => `shift ${row.minute % 3}`);
  const table = sumsOfRows(x, y, null, labels, names, "color_index");
  const range = sumsToLong(table).map((row) => row.map((cell) => cell));
  const back = sumsOfRange(range);
  expect(back.blocks.map((b) => b.cross)).toEqual(table.blocks.map((b) => b.cross));
  expect(back.centre).toEqual(table.centre);
});
