/**
 * The pane's reader of local files (taskpane/sources/fileSums.ts) without a browser: DuckDB's
 * session is replaced by a recording stand-in, so what is checked here is the reader's own
 * logic (file kinds, one registration per file, cancel = terminate the worker and start a new
 * one next time, one-line messages). DuckDB itself runs in the browser test
 * (test/browser/fileSums.test.ts).
 */
import { CancelledError, InputError } from "../../../engine/errors";
import { plainValue, type DuckdbSession, type SqlRow } from "../../../taskpane/sources/duckdbSession";
import { columnsOf, fileKindOf, fileProblem, FileSumsReader, readerOf, sqlName, sqlText } from "../../../taskpane/sources/fileSums";

/** A File as the browser gives one (only the name matters to the reader). */
function fakeFile(name: string): File {
  return { name } as File;
}

interface Recorder {
  opened: number;
  log: string[];
  sessions: { terminated: boolean }[];
  /** Resolves the query that is waiting (when `hold` is set). */
  release: (() => void) | null;
}

function opener(recorder: Recorder, answer: (sql: string) => SqlRow[], hold = false): () => Promise<DuckdbSession> {
  return async () => {
    const n = ++recorder.opened;
    const state = { terminated: false };
    recorder.sessions.push(state);
    return {
      version: "test",
      async registerFile(name: string, file: File) {
        recorder.log.push(`#${n} register ${name} ← ${file.name}`);
      },
      async dropFile(name: string) {
        recorder.log.push(`#${n} drop ${name}`);
      },
      async query(sql: string) {
        recorder.log.push(`#${n} ${sql}`);
        if (hold) await new Promise<void>((resolve) => (recorder.release = resolve));
        return answer(sql);
      },
      async terminate() {
        state.terminated = true;
        recorder.log.push(`#${n} terminate`);
      },
    };
  };
}

const DESCRIBED: SqlRow[] = [
  { column_name: "batch_id", column_type: "BIGINT", null: "YES" },
  { column_name: "origin", column_type: "VARCHAR", null: "YES" },
  { column_name: "cup_score", column_type: "DOUBLE", null: "YES" },
  { column_name: "price", column_type: "DECIMAL(9,2)", null: "YES" },
];

test("query values as the pane keeps them: exact 64-bit integers as numbers, larger ones as text, lists as arrays", () => {
  expect(plainValue(BigInt(2) ** BigInt(53) - BigInt(1))).toBe(9007199254740991);
  expect(plainValue(BigInt(2) ** BigInt(60))).toBe("1152921504606846976");
  expect(plainValue([BigInt(3), 2.5, null, "a"])).toEqual([3, 2.5, null, "a"]);
  expect(plainValue(new Float64Array([0.1, 2]))).toEqual([0.1, 2]);
  // An Arrow vector (a list cell from duckdb-wasm) has toArray().
  expect(plainValue({ toArray: () => new BigInt64Array([BigInt(40001), BigInt(40090)]) })).toEqual([40001, 40090]);
  expect(plainValue(new Date(Date.UTC(2026, 11, 4)))).toBe("2026-12-04T00:00:00.000Z");
  expect(plainValue(undefined)).toBeNull();
});

test("file kinds by name; anything else is refused with what to choose", () => {
  expect(fileKindOf("Roast log 2026.CSV")).toBe("csv");
  expect(fileKindOf("sensor.parquet")).toBe("parquet");
  expect(fileKindOf("export.tsv")).toBe("csv");
  expect(() => fileKindOf("beans.xlsx")).toThrow(new InputError("empty", "'beans.xlsx' is neither a CSV nor a Parquet file: choose a file ending in .csv or .parquet"));
});

test("SQL quoting doubles the quote characters (DuckDB's rules)", () => {
  expect(sqlText("it's")).toBe("'it''s'");
  expect(sqlName('a "b"')).toBe('"a ""b"""');
  expect(readerOf("x.parquet", "parquet")).toBe("read_parquet('x.parquet')");
  expect(readerOf("x.csv", "csv")).toBe("read_csv('x.csv', header = true)");
});

test("DESCRIBE's rows become columns; number types are marked", () => {
  expect(columnsOf(DESCRIBED)).toEqual([
    { name: "batch_id", type: "BIGINT", numeric: true },
    { name: "origin", type: "VARCHAR", numeric: false },
    { name: "cup_score", type: "DOUBLE", numeric: true },
    { name: "price", type: "DECIMAL(9,2)", numeric: true },
  ]);
});

test("DuckDB's messages become one line that says what to fix, naming the file", () => {
  const one = (message: string) => fileProblem(new Error(message), "sensor.csv").message;
  expect(one('Binder Error: Referenced column "moisture" not found in FROM clause!\nCandidate bindings: ...')).toBe(
    "'sensor.csv' has no column 'moisture': check the column names (the first row of a CSV file)",
  );
  expect(one("Conversion Error: Could not convert string 'n/a' to DOUBLE when casting from source column drum_temp")).toBe(
    "'sensor.csv' has text 'n/a' where numbers are expected (column 'drum_temp'): fix or blank that cell, or leave the column out",
  );
  for (const message of [one("x\ny"), one("Something else entirely")]) expect(message).not.toMatch(/\n/);
  const input = new InputError("setting", "from the generator");
  expect(fileProblem(input, "a.csv")).toBe(input);
});

test("columns: the file is registered once, DESCRIBE runs on its reader", async () => {
  const recorder: Recorder = { opened: 0, log: [], sessions: [], release: null };
  const reader = new FileSumsReader(opener(recorder, () => DESCRIBED));
  const file = fakeFile("roasts.csv");
  expect((await reader.columns(file)).map((c) => c.name)).toEqual(["batch_id", "origin", "cup_score", "price"]);
  await reader.columns(file);
  expect(recorder.opened).toBe(1);
  expect(recorder.log).toEqual([
    "#1 register shrinkwise-source.csv ← roasts.csv",
    "#1 DESCRIBE SELECT * FROM read_csv('shrinkwise-source.csv', header = true)",
    "#1 DESCRIBE SELECT * FROM read_csv('shrinkwise-source.csv', header = true)",
  ]);
  // Another file: the first is dropped, the second registered under its kind's name.
  await reader.columns(fakeFile("sensor.tsv"));
  expect(recorder.log.slice(3)).toEqual([
    "#1 drop shrinkwise-source.csv",
    "#1 register shrinkwise-source.csv ← sensor.tsv",
    "#1 DESCRIBE SELECT * FROM read_csv('shrinkwise-source.csv', header = true)",
  ]);
});

test("a Parquet file's columns come from its footer, read by the pane's Parquet reader: DuckDB is not opened", async () => {
  const recorder: Recorder = { opened: 0, log: [], sessions: [], release: null };
  const reader = new FileSumsReader(opener(recorder, () => DESCRIBED));
  const notParquet = Object.assign(new Blob(["batch_id,price\n1,2\n"]), { name: "sensor.parquet" }) as File;
  await expect(reader.columns(notParquet)).rejects.toThrow(/^'sensor\.parquet' can't be read as Parquet/);
  expect(recorder.opened).toBe(0);
});

test("cancel terminates the worker at once; the next use opens a new session (restartable)", async () => {
  const recorder: Recorder = { opened: 0, log: [], sessions: [], release: null };
  const reader = new FileSumsReader(opener(recorder, () => DESCRIBED, true));
  const callbacks: (() => void)[] = [];
  const signal = { aborted: false, onAbort: (callback: () => void) => callbacks.push(callback) };
  const file = fakeFile("roasts.csv");
  const running = reader.run(file, signal, (query, registered) => query(`SELECT count(*) FROM ${readerOf(registered.name, registered.kind)}`));
  while (!recorder.release) await new Promise((resolve) => setTimeout(resolve, 1));
  signal.aborted = true;
  callbacks.forEach((callback) => callback());
  await expect(running).rejects.toBeInstanceOf(CancelledError);
  expect(recorder.sessions[0].terminated).toBe(true);
  recorder.release?.(); // the stand-in's query finishing late changes nothing
  // Restart: a new session, the file registered again.
  const again = new FileSumsReader(opener(recorder, () => DESCRIBED));
  await expect(again.columns(file)).resolves.toHaveLength(4);
  const fresh = reader.run(file, { aborted: false, onAbort: () => undefined }, async () => "ran");
  await expect(fresh).resolves.toBe("ran");
  expect(recorder.opened).toBe(3);
  expect(recorder.log.filter((line) => line.startsWith("#3"))).toEqual(["#3 register shrinkwise-source.csv ← roasts.csv"]);
});

test("a session that can't open is reported, and the next use tries again", async () => {
  let tries = 0;
  const reader = new FileSumsReader(async () => {
    tries++;
    throw new Error("DuckDB could not start in this browser: no WebAssembly");
  });
  await expect(reader.columns(fakeFile("a.csv"))).rejects.toThrow(/could not start/);
  await expect(reader.columns(fakeFile("a.csv"))).rejects.toThrow(/could not start/);
  expect(tries).toBe(2);
});
