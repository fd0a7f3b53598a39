/**
 * engine/sumsSql.ts and engine/node/duckdb.ts: the sums table computed by DuckDB from CSV and
 * Parquet files.
 *
 * Reference: a plain two-pass computation in TypeScript over the same rows (first pass: the rows
 * a NULL skips; second pass: the block sums about the centre the table reports), written here
 * from the definitions in engine/sumsTable.ts (from memory: the textbook two-pass sums). Agreement
 * to 1e-10 relative to each entry's natural scale (√(cross_aa·cross_bb) for a cross-product,
 * the block's weight·spread for an offset): two summation orders over a few thousand rows differ
 * far less, so a wrong centre, term, block or weight cannot pass.
 * Properties: the fold hash agrees between TypeScript and DuckDB (and ClickHouse when a server is
 * reachable) on keys including negative ones and ones near 2^53; offsets of 1e8 × the spread keep
 * their digits; the table does not depend on the order of the file's rows.
 */
import { mkdtempSync, rmSync, writeFileSync } from "fs";
import { tmpdir } from "os";
import { join } from "path";
import { InputError } from "../../engine/errors";
import { duckdbPrepare, duckdbRun, duckdbSums, fileSource } from "../../engine/node/duckdb";
import { computeSums, exactLiteral, foldHashSql, foldOfKey, quoteIdentifier, quoteString, type FoldRule, type SqlRow } from "../../engine/sumsSql";
import { fitFromSums } from "../../engine/fitSums";
import { checkSums, sumsOfRows } from "../../engine/sums";
import { upperIndex, type SumsTable } from "../../engine/sumsTable";
import { TestRandom } from "../helpers/random";
import { csvOf, gap, referenceSums, roastLog, termValue, weightedMean, type Reading } from "../helpers/sumsReference";

let folder: string;
beforeAll(() => {
  folder = mkdtempSync(join(tmpdir(), "shrinkwise-sums-sql-"));
});
afterAll(() => {
  rmSync(folder, { recursive: true, force: true });
});

function writeCsv(name: string, text: string): string {
  const path = join(folder, name);
  writeFileSync(path, text, "utf8");
  return path;
}

async function toParquet(csv: string, name: string): Promise<string> {
  const path = join(folder, name);
  await duckdbRun(`COPY (SELECT * FROM read_csv(${quoteString(csv, "duckdb")}, header = true)) TO ${quoteString(path, "duckdb")} (FORMAT parquet)`);
  return path;
}

describe("sums of a file by DuckDB against a two-pass reference", () => {
  const rows = roastLog(3000, 11);
  const used: (keyof Reading)[] = ["roast_loss", "drum_temp", "airflow", "bean_moisture", "roast_level", "lot_weight", "batch"];
  const request = (path: string, fold: FoldRule = { kind: "column", column: "batch" }) => ({
    source: fileSource(path),
    target: "roast_loss",
    predictors: ["drum_temp", "airflow", "bean_moisture", "roast_level"],
    weights: "lot_weight",
    fold,
  });

  test("CSV and Parquet: every entry within 1e-10 of the reference; NULL rows skipped and counted; text levels as indicators", async () => {
    const csv = writeCsv("log.csv", csvOf(rows));
    const parquet = await toParquet(csv, "log.parquet");
    for (const path of [csv, parquet]) {
      const table = await duckdbSums(request(path));
      // Reference level: the most frequent of the used rows ('light' is drawn most often: u·v·5 < 1 has probability ≈ 0.52).
      expect(table.terms).toEqual(["drum_temp", "airflow", "bean_moisture", "roast_level: city", "roast_level: dark", "roast_level: medium"]);
      const reference = referenceSums(rows, table, used, "lot_weight", (r) => r.batch);
      expect(table.skippedRows).toBe(rows.length - reference.kept);
      expect(table.skippedRows).toBeGreaterThan(100);
      expect(gap(table, reference)).toBeLessThan(1e-10);
      // The centre is the weighted mean (plain sums; the engine may add in another order).
      const mean = weightedMean(rows, used, (r) => r.drum_temp as number, (r) => r.lot_weight);
      expect(Math.abs(table.centre.terms[0] - mean) / 15).toBeLessThan(1e-12);
      expect(table.blocks.map((b) => b.label)).toEqual(["B1", "B2", "B3", "B4", "B5", "B6"]);
      expect(table.blocking).toBe("column 'batch'");
      expect(table.weights).toBe("lot_weight");
    }
  });

  test("no weights: every row weighs 1", async () => {
    const csv = writeCsv("plain.csv", csvOf(rows));
    const table = await duckdbSums({ ...request(csv), weights: null });
    const reference = referenceSums(rows, table, used.filter((c) => c !== "lot_weight"), null, (r) => r.batch);
    expect(gap(table, reference)).toBeLessThan(1e-10);
    for (const block of table.blocks) expect(block.weight).toBe(block.rows);
  });

  test("the table does not depend on the order of the file's rows", async () => {
    const random = new TestRandom(5);
    const shuffled = [...rows];
    for (let i = shuffled.length - 1; i > 0; i--) {
      const k = Math.floor(random.uniform() * (i + 1));
      [shuffled[i], shuffled[k]] = [shuffled[k], shuffled[i]];
    }
    const a = await duckdbSums(request(writeCsv("a.csv", csvOf(rows))));
    const b = await duckdbSums(request(writeCsv("b.csv", csvOf(shuffled))));
    const reference = referenceSums(rows, a, used, "lot_weight", (r) => r.batch);
    expect(gap(b, reference)).toBeLessThan(1e-10);
    expect(b.centre.terms[0]).toBeCloseTo(a.centre.terms[0], 9);
  });

  test("the same file gives the same table bit for bit (one DuckDB thread)", async () => {
    const csv = writeCsv("same.csv", csvOf(rows));
    const a = await duckdbSums(request(csv));
    const b = await duckdbSums(request(csv));
    expect(JSON.stringify(b)).toBe(JSON.stringify(a));
  });

  test("hash folds: blocks 1..K by foldOfKey of the key, in number order", async () => {
    const csv = writeCsv("hash.csv", csvOf(rows));
    const table = await duckdbSums(request(csv, { kind: "hash", key: "reading_id", folds: 7 }));
    expect(table.blocks.map((b) => b.label)).toEqual(["1", "2", "3", "4", "5", "6", "7"]);
    const reference = referenceSums(rows, table, [...used.filter((c) => c !== "batch"), "reading_id"], "lot_weight", (r) => String(foldOfKey(r.reading_id, 7) + 1));
    expect(gap(table, reference)).toBeLessThan(1e-10);
    expect(table.blocking).toBe("hash of 'reading_id' into 7");
  });

  test("time blocks: K+1 blocks in time order of near-equal size; given cut points fix them", async () => {
    const csv = writeCsv("time.csv", csvOf(rows));
    const table = await duckdbSums(request(csv, { kind: "time", column: "minute", folds: 4 }));
    expect(table.blocks.map((b) => b.label)).toEqual(["1", "2", "3", "4", "5"]);
    const kept = rows.filter((r) => used.filter((c) => c !== "batch").every((c) => r[c] !== null)).length;
    for (const block of table.blocks) expect(Math.abs(block.rows - kept / 5)).toBeLessThanOrEqual(1);
    const cuts = [29_000_500, 29_001_000, 29_002_000];
    const fixed = await duckdbSums(request(csv, { kind: "time", column: "minute", folds: 3, cuts }));
    const label = (r: Reading) => String(1 + cuts.filter((c) => r.minute >= c).length);
    const reference = referenceSums(rows, fixed, [...used.filter((c) => c !== "batch"), "minute"], "lot_weight", label);
    expect(gap(fixed, reference)).toBeLessThan(1e-10);
  });

  test("Parquet without text columns: the first pass picks the used rows by WHERE, and gives the FILTER form's table bit for bit", async () => {
    // Property (common practice: two routes agreeing): the same file read as a plain Parquet source
    // (WHERE form, count from the footer) and through a query over it (FILTER form) must give the
    // same table bit for bit, and both the reference's to 1e-10, for column, hash and time blocks.
    const parquet = await toParquet(writeCsv("numbers.csv", csvOf(rows)), "numbers.parquet");
    const numbersOnly = used.filter((c) => c !== "roast_level");
    const viaQuery = { kind: "query" as const, sql: `SELECT * FROM read_parquet(${quoteString(parquet, "duckdb")})` };
    const firstPasses: string[] = [];
    const onQuery = (step: string, sql: string) => {
      if (step === "firstPass") firstPasses.push(sql);
    };
    const folds: [FoldRule, (r: Reading) => string, (keyof Reading)[]][] = [
      [{ kind: "column", column: "batch" }, (r) => r.batch, []],
      [{ kind: "hash", key: "reading_id", folds: 7 }, (r) => String(foldOfKey(r.reading_id, 7) + 1), ["reading_id"]],
    ];
    for (const [fold, label, extra] of folds) {
      const base = { ...request(parquet, fold), predictors: ["drum_temp", "airflow", "bean_moisture"] };
      firstPasses.length = 0;
      const byWhere = await duckdbSums(base, { onQuery });
      const byFilter = await duckdbSums({ ...base, source: viaQuery }, { onQuery });
      expect(firstPasses[0]).toMatch(/\nWHERE /);
      expect(firstPasses[0].match(/IS NOT NULL/g)).toHaveLength(6); // the condition once: one test per used column
      expect(firstPasses[1]).toMatch(/FILTER \(WHERE/);
      expect(JSON.stringify({ ...byWhere, source: "" })).toBe(JSON.stringify({ ...byFilter, source: "" }));
      const reference = referenceSums(rows, byWhere, [...numbersOnly.filter((c) => c !== "batch" || fold.kind === "column"), ...extra], "lot_weight", label);
      expect(gap(byWhere, reference)).toBeLessThan(1e-10);
      expect(byWhere.skippedRows).toBe(rows.length - reference.kept);
    }
    // Time blocks: the quantiles are taken over the used rows in both forms.
    const time = { ...request(parquet, { kind: "time", column: "minute", folds: 4 }), predictors: ["drum_temp", "airflow", "bean_moisture"] };
    const a = await duckdbSums(time);
    const b = await duckdbSums({ ...time, source: viaQuery });
    expect(JSON.stringify({ ...a, source: "" })).toBe(JSON.stringify({ ...b, source: "" }));
    // Negative weights are still found (a count over the used rows, without the repeated condition).
    const negative = join(folder, "negative.parquet");
    await duckdbRun(`COPY (SELECT * FROM (VALUES (1.0, 2.0, 1.0, 1), (2.0, 3.0, -1.0, 2), (3.0, 5.0, 1.0, 3)) AS t(y, x, w, id)) TO ${quoteString(negative, "duckdb")} (FORMAT parquet)`);
    await expect(duckdbSums({ source: fileSource(negative), target: "y", predictors: ["x"], weights: "w", fold: { kind: "hash", key: "id", folds: 2 } })).rejects.toThrow(/negative values/);
  });

  test("weights: each aggregate's w·a formed once a row, and the largest magnitudes by CASE, give the sums of sum(w * a * b) and FILTER bit for bit", async () => {
    // Property (IEEE 754 multiplication is deterministic; w * a * b parses as (w * a) * b): the
    // second pass with sw_wt<a> = w·(x_a − c_a) precomputed must answer exactly what the same query
    // with every product written out sum(sw_w * sw_t<a> * …) answers, cell for cell.
    // Every seventh row weighs 0, so that the largest magnitudes (over rows of weight > 0) leave rows out.
    const csv = writeCsv("weighted.csv", csvOf(rows.map((r, i) => (i % 7 === 0 ? { ...r, lot_weight: 0 } : r))));
    for (const fold of [{ kind: "column", column: "batch" }, { kind: "hash", key: "reading_id", folds: 5 }] as FoldRule[]) {
      const { second } = await duckdbPrepare(request(csv, fold));
      for (const query of second.queries) {
        expect(query.sql).toMatch(/sum\(sw_wt0 \* sw_t1\)/);
        // The largest magnitudes as FILTER, as they were written before (common practice: both skip the rows of weight 0).
        expect(query.sql).toMatch(/max\(CASE WHEN sw_w > 0 THEN abs\(sw_x0\) END\)/);
        const spelledOut = query.sql
          .replace(/sum\(sw_w(y|t\d+)((?: \* sw_\w+)?)\)/g, "sum(sw_w * sw_$1$2)")
          .replace(/max\(CASE WHEN sw_w > 0 THEN abs\((sw_\w+)\) END\)/g, "max(abs($1)) FILTER (WHERE sw_w > 0)");
        expect(spelledOut).not.toMatch(/sum\(sw_wt|sum\(sw_wy/);
        const byBlock = (answer: SqlRow[]) => JSON.stringify([...answer].sort((a, b) => String(a.sw_block).localeCompare(String(b.sw_block))), (_, v: unknown) => (typeof v === "bigint" ? v.toString() : v));
        expect(byBlock(await duckdbRun(query.sql))).toBe(byBlock(await duckdbRun(spelledOut)));
      }
    }
  });

  test("precision: an offset of 1e8 × the spread keeps the sums' digits", async () => {
    // drum_temp's spread is 15; 1.5e9 + ~200 is 1e8 × 15. Without centring, Σw(x − x̄)² from
    // Σwx² − (Σwx)²/Σw would lose all its digits (x² ≈ 2e18, eps·x² ≈ 500 ≫ the spread² 225).
    const shifted = roastLog(3000, 11, 1.5e9);
    const csv = writeCsv("offset.csv", csvOf(shifted));
    const table = await duckdbSums(request(csv));
    const reference = referenceSums(shifted, table, used, "lot_weight", (r) => r.batch);
    expect(gap(table, reference)).toBeLessThan(1e-10);
    // And the block-centred variance equals the unshifted data's (shifting changes nothing but rounding of x itself: ulp(1.5e9) ≈ 2.4e-7).
    const plain = await duckdbSums(request(writeCsv("unshifted.csv", csvOf(roastLog(3000, 11)))));
    for (let k = 0; k < table.blocks.length; k++) {
      const b = table.blocks[k];
      const c = plain.blocks[k];
      const centred = (x: SumsTable["blocks"][number]) => x.cross[0] - x.weight * x.offset[0] * x.offset[0];
      expect(Math.abs(centred(b) - centred(c)) / centred(c)).toBeLessThan(1e-7);
    }
  });
});

describe("DuckDB's table against the engine's own (engine/sums.ts, fitSums.ts)", () => {
  test("checkSums accepts it; block-centred sums and means equal sumsOfRows's to 1e-10; fitFromSums gives the same model to 1e-9", async () => {
    const rows = roastLog(2500, 31);
    const csv = writeCsv("engine.csv", csvOf(rows));
    const table = await duckdbSums({ source: fileSource(csv), target: "roast_loss", predictors: ["drum_temp", "airflow", "bean_moisture", "roast_level"], weights: "lot_weight", fold: { kind: "column", column: "batch" } });
    expect(checkSums(table)).toEqual(table);
    const used: (keyof Reading)[] = ["roast_loss", "drum_temp", "airflow", "bean_moisture", "roast_level", "lot_weight", "batch"];
    const kept = rows.filter((r) => used.every((c) => r[c] !== null));
    const x = kept.map((r) => table.terms.map((t) => termValue(r, t) as number));
    const memory = sumsOfRows(x, kept.map((r) => r.roast_loss as number), kept.map((r) => r.lot_weight), kept.map((r) => r.batch), table.terms, "roast_loss", { weightsName: "lot_weight" });
    const p = table.terms.length;
    expect(memory.blocks.map((b) => b.label)).toEqual(table.blocks.map((b) => b.label));
    let worst = 0;
    table.blocks.forEach((block, k) => {
      const other = memory.blocks[k];
      expect(block.rows).toBe(other.rows);
      // Centre-free quantities: the block's own weighted means and its sums about them.
      const own = (b: typeof block, a: number, c: number) => b.cross[upperIndex(p, a, c)] - b.weight * b.offset[a] * b.offset[c];
      for (let a = 0; a < p; a++) {
        const scale = Math.sqrt(own(other, a, a) / other.weight);
        worst = Math.max(worst, Math.abs(block.mean[a] - other.mean[a]) / scale);
        for (let c = a; c < p; c++) worst = Math.max(worst, Math.abs(own(block, a, c) - own(other, a, c)) / Math.sqrt(own(other, a, a) * own(other, c, c)));
      }
      worst = Math.max(worst, Math.abs(block.weight - other.weight) / other.weight);
    });
    expect(worst).toBeLessThan(1e-10);
    const options = { mixes: [0.5, 1] };
    const a = fitFromSums(table, options);
    const b = fitFromSums(memory, options);
    expect(a.terms).toEqual(b.terms);
    const size = Math.max(...b.coefficients.map(Math.abs));
    a.coefficients.forEach((v, j) => expect(Math.abs(v - b.coefficients[j]) / size).toBeLessThan(1e-9));
  });
});

describe("fold hash", () => {
  const keys: bigint[] = [0n, 1n, -1n, 2n, 65535n, 65536n, 4294967295n, 4294967296n, -4294967296n, -4294967297n, 1000000000000n, -123456789012n, 9007199254740991n, 9007199254740992n, -9007199254740993n, 9223372036854775807n, -9223372036854775808n];
  for (let i = 0; i < 40; i++) keys.push(BigInt(Math.floor(Math.sin(i + 1) * 1e15)));

  test("TypeScript: a number key and the same bigint give the same fold; folds spread evenly", () => {
    for (const k of keys) {
      if (BigInt(Number(k)) === k) expect(foldOfKey(Number(k), 10)).toBe(foldOfKey(k, 10));
    }
    // Even spread over 10 folds of 10,000 consecutive keys (common practice: each within 10% of 1000).
    const counts = Array(10).fill(0);
    for (let k = 0; k < 10000; k++) counts[foldOfKey(k, 10)] += 1;
    for (const c of counts) expect(Math.abs(c - 1000)).toBeLessThan(100);
    // By hand (from the definition): 1·2654435761 mod 2^32 = 2654435761 → fold 1 of 10.
    expect(foldOfKey(1, 10)).toBe(1);
    expect(foldOfKey(-1, 10)).toBe(Number((4294967295n * 2654435761n) % 4294967296n) % 10);
    expect(() => foldOfKey(1.5, 10)).toThrow(RangeError);
  });

  test("DuckDB computes the same fold as TypeScript (negative keys and keys near 2^53 and 2^63 included)", async () => {
    const values = keys.map((k) => `(${k.toString()})`).join(", ");
    for (const folds of [2, 7, 10]) {
      const rows = await duckdbRun(`SELECT k, ${foldHashSql("k", folds, "duckdb")} AS fold FROM (SELECT CAST(col0 AS BIGINT) AS k FROM (VALUES ${values}))`);
      for (const row of rows) expect(Number(row.fold)).toBe(foldOfKey(row.k as bigint, folds) + 1);
    }
    // UBIGINT keys above 2^63 and HUGEINT keys: the remainder is taken in the key's own type.
    const wide = [18446744073709551615n, 9223372036854775808n, 12345678901234567890n];
    for (const type of ["UBIGINT", "HUGEINT"]) {
      const rows = await duckdbRun(`SELECT CAST(k AS VARCHAR) AS k, ${foldHashSql("k", 10, "duckdb")} AS fold FROM (SELECT unnest([${wide.map((k) => `CAST('${k}' AS ${type})`).join(", ")}]) AS k)`);
      for (const row of rows) expect(Number(row.fold)).toBe(foldOfKey(BigInt(row.k as string), 10) + 1);
    }
    // An exact product check against BigInt (from memory: h = m·G mod 2^32).
    for (const k of keys) {
      const m = ((k % 4294967296n) + 4294967296n) % 4294967296n;
      expect(foldOfKey(k, 1000)).toBe(Number(((m * 2654435761n) % 4294967296n) % 1000n));
    }
  });
});

describe("literals and quoting", () => {
  test("exactLiteral gives back the same double in DuckDB", async () => {
    const values = [0, 1, -1, 0.1, 1 / 3, -2.5e-300, 5e-324, 1.7976931348623157e308, 1e12 + 0.5, 2 ** 53 + 2, 29000000.12345679, -1234.5678e-20];
    const sql = values.map((v, i) => `${exactLiteral(v, "duckdb")} AS v${i}`).join(", ");
    const [row] = await duckdbRun(`SELECT ${sql}`);
    values.forEach((v, i) => expect(Object.is(row[`v${i}`], v) || row[`v${i}`] === v).toBe(true));
    expect(exactLiteral(0.75, "duckdb")).toBe("(CAST(3 AS DOUBLE) / 4)");
    expect(() => exactLiteral(NaN, "duckdb")).toThrow(RangeError);
  });

  test("names and texts with quotes survive", async () => {
    const name = `roast "level" it's`;
    const level = `dark 'n' "oily"`;
    const [row] = await duckdbRun(`SELECT ${quoteString(level, "duckdb")} AS ${quoteIdentifier(name, "duckdb")}`);
    expect(row[name]).toBe(level);
    expect(quoteIdentifier("a`b\\", "clickhouse")).toBe("`a\\`b\\\\`");
    expect(quoteString("it's \\", "clickhouse")).toBe("'it\\'s \\\\'");
  });
});

describe("text levels", () => {
  test("the reference is the most frequent level; ties go to the first in code-point order; quotes in levels and names", async () => {
    const lines = ["y,x,\"roast \"\"style\"\"\",lot"];
    const styles = ["b'oily", "a", "b'oily", "a", "c"];
    for (let i = 0; i < 60; i++) lines.push(`${i % 7},${(i * 13) % 11},${styles[i % 5]},${1 + (i % 3)}`);
    const csv = writeCsv("levels.csv", lines.join("\n") + "\n");
    const table = await duckdbSums({ source: fileSource(csv), target: "y", predictors: ["x", 'roast "style"'], fold: { kind: "column", column: "lot" } });
    // 'a' and "b'oily" both appear 24 times: 'a' comes first in code-point order.
    expect(table.terms).toEqual(["x", `roast "style": b'oily`, `roast "style": c`]);
    // The indicator's block offset plus its centre is the level's share in the block.
    for (const block of table.blocks) {
      const rowsInBlock = lines.slice(1).filter((l) => l.endsWith(`,${block.label}`));
      const share = rowsInBlock.filter((l) => l.includes("b'oily")).length / rowsInBlock.length;
      expect(Math.abs(block.mean[1] - share)).toBeLessThan(1e-14);
    }
  });

  test("the level cap: a clear error naming the column and its count", async () => {
    const lines = ["y,x,operator,lot"];
    for (let i = 0; i < 80; i++) lines.push(`${i % 5},${i},op${i % 60},${i % 4}`);
    const csv = writeCsv("cap.csv", lines.join("\n") + "\n");
    const request = { source: fileSource(csv), target: "y", predictors: ["x", "operator"], fold: { kind: "column" as const, column: "lot" } };
    await expect(duckdbSums(request)).rejects.toThrow("predictors column 'operator' has 60 different texts: a text column becomes one 0/1 term per level (at most 50)");
    const table = await duckdbSums({ ...request, levelCap: 60 });
    expect(table.terms.length).toBe(1 + 59);
  });
});

describe("wide models: the cross-products dealt into several queries", () => {
  test("p = 60 with at most 200 aggregates a query equals one query's answer", async () => {
    const p = 60;
    const random = new TestRandom(3);
    const header = ["y", ...Array.from({ length: p }, (_, j) => `probe_${j}`), "lot"];
    const lines = [header.join(",")];
    for (let i = 0; i < 400; i++) lines.push([random.normal(), ...Array.from({ length: p }, () => random.normal() * 3 + 100), i % 5].join(","));
    const csv = writeCsv("wide.csv", lines.join("\n") + "\n");
    const base = { source: fileSource(csv), target: "y", predictors: header.slice(1, p + 1), fold: { kind: "column" as const, column: "lot" } };
    const queries: string[] = [];
    const chunked = await duckdbSums({ ...base, maxAggregates: 200 }, { onQuery: (step, sql) => step === "secondPass" && queries.push(sql) });
    // 5 per block scalars + 3 per term + the triangle, 200 at most each.
    expect(queries.length).toBe(Math.ceil((5 + 3 * p + (p * (p + 1)) / 2) / 200));
    const whole = await duckdbSums({ ...base, maxAggregates: 100000 });
    expect(chunked.blocks).toEqual(whole.blocks);
  });
});

describe("bad input: one line that says what to fix", () => {
  const good = "y,x,lot\n1,2,a\n2,3,b\n3,5,a\n4,4,b\n";
  const ask = (path: string, over: Partial<{ target: string; predictors: string[]; weights: string; fold: FoldRule }> = {}) =>
    duckdbSums({ source: fileSource(path), target: "y", predictors: ["x"], fold: { kind: "column", column: "lot" }, ...over });

  const cases: [string, () => Promise<unknown>, string][] = [
    ["a missing file", () => ask(join(tmpdir(), "no-such-roast-log.csv")), "no-such-roast-log.csv: no such file"],
    ["a missing column", () => ask(writeCsv("g1.csv", good), { predictors: ["x", "drum"] }), "predictors column 'drum' is not in"],
    ["a missing target", () => ask(writeCsv("g2.csv", good), { target: "loss" }), "the target column 'loss' is not in"],
    ["a column used twice", () => ask(writeCsv("g3.csv", good), { predictors: ["x", "y"] }), "column 'y' is both the target and a predictor"],
    ["an unreadable Parquet file", () => ask(writeCsv("broken.parquet", "this is not parquet")), "as Parquet"],
    ["text in the target", () => ask(writeCsv("t1.csv", "y,x,lot\nhigh,2,a\nlow,3,b\nlow,4,a\n")), "the target column 'y' has text where numbers are expected (e.g. 'high')"],
    ["a stray text among numbers in a predictor", () => ask(writeCsv("t2.csv", "y,x,lot\n1,2,a\n2,3,b\n3,n/a,a\n4,5,b\n")), "predictors column 'x' has text where numbers are expected (e.g. 'n/a')"],
    ["negative weights", () => ask(writeCsv("w1.csv", "y,x,lot,w\n1,2,a,1\n2,3,b,-1\n3,4,a,1\n"), { weights: "w" }), "the weights column 'w' has negative values"],
    ["all-zero weights", () => ask(writeCsv("w2.csv", "y,x,lot,w\n1,2,a,0\n2,3,b,0\n"), { weights: "w" }), "adds up to 0"],
    ["every row blank somewhere", () => ask(writeCsv("b1.csv", "y,x,lot\n1,,a\n,3,b\n")), "every one of the 2 rows has a blank (NULL) in a used column"],
    ["a fold key that is not whole numbers", () => ask(writeCsv("k1.csv", good), { fold: { kind: "hash", key: "lot", folds: 5 } }), "the fold key 'lot' must hold whole numbers"],
    ["one fold", () => ask(writeCsv("k2.csv", good), { fold: { kind: "hash", key: "x", folds: 1 } }), "the number of folds must be a whole number from 2"],
    ["a yes/no target", () => ask(writeCsv("yn.csv", "y,x,lot\ntrue,2,a\nfalse,3,b\n")), "fitting from sums takes number targets only"],
    ["no predictors", () => ask(writeCsv("np.csv", good), { predictors: [] }), "no predictors given"],
    ["a stray text past the rows DuckDB samples for types", () => ask(writeCsv("late.csv", lateText())), "late.csv line 40002, column 'x': 'n/a' is not a number"],
    ["a NaN in a Parquet column", () => nanParquet().then((path) => ask(path)), "column 'x' has values that are not finite"],
  ];
  for (const [what, run, message] of cases) {
    test(what, async () => {
      const error = await run().then(
        () => null,
        (e: unknown) => e,
      );
      expect(error).toBeInstanceOf(InputError);
      expect((error as Error).message).toContain(message);
      expect((error as Error).message).not.toContain("\n");
    });
  }
});

function lateText(): string {
  const lines = ["y,x,lot"];
  for (let i = 0; i < 40000; i++) lines.push(`${i % 7},${i % 11},${i % 3}`);
  return [...lines, "1,n/a,2"].join("\n") + "\n";
}

async function nanParquet(): Promise<string> {
  const path = join(folder, "nan.parquet");
  await duckdbRun(`COPY (SELECT * FROM (VALUES (1.0, 2.0, 'a'), (2.0, CAST('NaN' AS DOUBLE), 'b'), (3.0, 4.0, 'a')) AS t(y, x, lot)) TO ${quoteString(path, "duckdb")} (FORMAT parquet)`);
  return path;
}

describe("any runner: computeSums drives the queries", () => {
  test("a cancel raised before a query stops the run", async () => {
    let asked = 0;
    const signal = { aborted: false };
    const run = async (sql: string): Promise<SqlRow[]> => {
      asked += 1;
      signal.aborted = true;
      return duckdbRun(sql);
    };
    const csv = writeCsv("cancel.csv", "y,x,lot\n1,2,a\n2,3,b\n3,5,a\n4,4,b\n");
    await expect(computeSums({ source: fileSource(csv), dialect: "duckdb", target: "y", predictors: ["x"], fold: { kind: "column", column: "lot" } }, run, { signal })).rejects.toThrow("cancelled");
    expect(asked).toBe(1);
  });
});
