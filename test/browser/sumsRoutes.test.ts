/**
 * The pane's fits from sums in a real browser (Debian's Chromium through playwright-core), on the
 * built standalone preview, served under a content security policy without 'unsafe-eval' and
 * with connect-src 'self' (what a strict add-in page may set; DuckDB's worker gets the same
 * policy from its own response):
 *
 * - "A sums table": the long form of a roast log's sums (engine/sums.ts sumsOfRows, then
 *   sumsToLong) is put on a stand-in sheet, picked as a range and fitted; the chosen model equals
 *   the in-memory gram-form fit on the same rows and fold labels (engine/fit.ts) to 1e-9 (the
 *   issue's bar; the sums-engine tests hold the two routes to 1e-10 in Node). The coefficient
 *   table is then written into the sheet as values, after confirming over a filled cell, and
 *   SHRINK.APPLY on it predicts what the coefficients say.
 * - "A local file": a CSV file (DuckDB in the page) and a Parquet file written by DuckDB (the
 *   pane's Parquet reader, no DuckDB) fitted from their sums equal the in-memory fit on the same
 *   rows and portable-hash folds to 1e-9; bad files and text in number columns give one line.
 * - Accessibility: the panel passes the axe scan (serious and critical), and every request stays
 *   on the add-in's origin.
 */
import { DuckDBInstance } from "@duckdb/node-api";
import { mkdtempSync, rmSync, writeFileSync } from "fs";
import { tmpdir } from "os";
import { join } from "path";
import type { Browser, Page } from "playwright-core";
import { fit, type FitResult } from "../../engine/fit";
import { sumsOfRows, sumsToLong } from "../../engine/sums";
import { foldOfKey } from "../../engine/sumsSql";
import { browserGate, launchBrowser, saveScreenshot, scanAccessibility, startServer, StaticServer } from "./harness";
import { designOf, roastCsv, roastLog } from "./roastLog";

const suite = browserGate("the pane's fits from sums in Chromium (test/browser/sumsRoutes.test.ts)").describe;

/**
 * The add-in's own policy (addin/hosting.js, the built page's <meta> tag and addin/hosted.js's
 * header): no eval anywhere (page or workers), requests to our own origin only. Sent as a header
 * here too, since DuckDB's worker takes its policy from its own response.
 */
// eslint-disable-next-line @typescript-eslint/no-require-imports
export const STRICT_CSP = (require("../../addin/hosting.js") as { CONTENT_SECURITY_POLICY: string }).CONTENT_SECURITY_POLICY;

interface Shown {
  terms: string[];
  intercept: number;
  coefficients: number[];
}

/** The coefficients the panel shows, at full precision (data-coefficients). */
async function shownModel(page: Page): Promise<Shown> {
  const text = await page.getByTestId("sums-results-table").getAttribute("data-coefficients");
  return JSON.parse(text ?? "null") as Shown;
}

/** Same model to `tolerance`: coefficients relative to the largest, the intercept relative to the target's size. */
function expectSameModel(shown: Shown, engine: FitResult, tolerance: number): void {
  expect(shown.terms).toEqual(engine.terms);
  const scale = Math.max(...engine.coefficients.map(Math.abs));
  shown.coefficients.forEach((b, j) => expect([engine.terms[j], Math.abs(b - engine.coefficients[j]) <= tolerance * scale]).toEqual([engine.terms[j], true]));
  expect(Math.abs(shown.intercept - engine.intercept)).toBeLessThanOrEqual(tolerance * (Math.abs(engine.intercept) + engine.targetSpread));
}

async function waitForSumsStatus(page: Page, pattern: RegExp, timeout = 90000): Promise<string> {
  await page.waitForFunction(
    ([source, flags]) => new RegExp(source, flags).test(document.querySelector('[data-testid="sums-status"]')?.textContent ?? ""),
    [pattern.source, pattern.flags] as const,
    { timeout },
  );
  return (await page.getByTestId("sums-status").textContent()) ?? "";
}

suite("fits from sums in Chromium (standalone preview, strict CSP)", () => {
  let server: StaticServer;
  let browser: Browser;
  let page: Page;
  const requests: string[] = [];
  const problems: string[] = [];

  beforeAll(async () => {
    server = await startServer(undefined, { "Content-Security-Policy": STRICT_CSP });
    browser = await launchBrowser();
    page = await browser.newPage({ viewport: { width: 1280, height: 1100 } });
    page.on("request", (request) => requests.push(request.url()));
    page.on("console", (message) => {
      if (message.type() === "error" && /Content Security Policy|unsafe-eval/i.test(message.text())) problems.push(message.text());
    });
    page.on("pageerror", (error) => problems.push(error.message));
    await page.goto(`${server.url}/taskpane.html`, { waitUntil: "load" });
    await page.waitForFunction(() => "__shrinkwisePreview" in window, undefined, { timeout: 30000 });
  }, 60000);

  afterAll(async () => {
    await browser?.close();
    await server?.close();
  });

  describe("a sums table", () => {
    test("a sums table on the sheet: picked, fitted, equal to the in-memory fit on the same rows and folds to 1e-9", async () => {
      const rows = roastLog(120, 20261204);
      const { x, y, names } = designOf(rows);
      const labels = rows.map((row) => `shift ${1 + (row.batch_id % 5)}`);
      const table = sumsOfRows(x, y, null, labels, names, "color_index", { blocking: "column 'shift'" });
      const long = sumsToLong(table);
      await page.evaluate((cells) => {
        type Host = { workbook: { addSheet(name: string): unknown }; setCells(a: string, rows: unknown[][]): void; activateSheet(name: string): void };
        const host = (window as unknown as { __shrinkwisePreview: { host: Host } }).__shrinkwisePreview.host;
        host.workbook.addSheet("Sums");
        host.setCells("Sums!A1", cells);
        host.activateSheet("Sums");
      }, long);

      // Keyboard: the data source is a radio group; the worksheet sections hide.
      await page.getByTestId("source-sheet").focus();
      await page.keyboard.press("ArrowRight");
      expect(await page.getByTestId("source-file").isChecked()).toBe(true);
      await page.keyboard.press("ArrowRight");
      expect(await page.getByTestId("source-sums").isChecked()).toBe(true);
      await page.getByTestId("sums-pane").waitFor({ state: "visible" });
      expect(await page.getByTestId("fit-button").isVisible()).toBe(false);
      expect(await page.getByTestId("file-input").isVisible()).toBe(false);

      await page.evaluate((a) => (window as unknown as { __shrinkwisePreview: { host: { setSelection(a: string): void } } }).__shrinkwisePreview.host.setSelection(a), `Sums!A1:D${long.length}`);
      await page.getByTestId("sums-range-use-selection").click();
      expect(await page.getByTestId("sums-range-address").textContent()).toContain(`A1:D${long.length}`);
      // The fit goes to the fit worker (functions/fit.worker.ts "fitSums"), not the pane's thread:
      // record the types of the messages posted to workers from here on.
      await page.evaluate(() => {
        const seen: string[] = [];
        (window as unknown as { __postedToWorkers: string[] }).__postedToWorkers = seen;
        const post = Worker.prototype.postMessage;
        Worker.prototype.postMessage = function (this: Worker, message: unknown, ...rest: unknown[]) {
          seen.push(String((message as { type?: unknown } | null)?.type));
          return (post as (...args: unknown[]) => void).call(this, message, ...rest);
        };
      });
      await page.getByTestId("sums-fit-button").click();
      const status = await waitForSumsStatus(page, /^Fitted|could not/);
      expect(status).toMatch(/^Fitted from sums/);
      expect(await page.evaluate(() => (window as unknown as { __postedToWorkers: string[] }).__postedToWorkers)).toContain("fitSums");

      const engine = fit(x, y, { foldLabels: labels, updates: "gram", names, rule: "lowest", standardize: true, intercept: true });
      const shown = await shownModel(page);
      expectSameModel(shown, engine, 1e-9);
      const strength = Number(await page.getByTestId("sums-chosen-strength").getAttribute("data-value"));
      expect(Math.abs(strength - engine.strength)).toBeLessThanOrEqual(1e-9 * engine.strength);
      expect(await page.getByTestId("sums-chosen-rows").textContent()).toMatch(new RegExp(`^${rows.length} used, 0 skipped .*5 blocks \\(column 'shift'\\)`));
      // The charts drew: one path line per term.
      expect((await page.getByTestId("sums-chart-path").getAttribute("aria-label"))?.length ?? 0).toBeGreaterThan(0);
      expect(await page.getByTestId("sums-chart-cv-caption").textContent()).not.toBe("");
      await saveScreenshot(page, "sums-table-fitted");
    }, 120000);

    test("the coefficient table goes into the sheet as values, after confirming over a filled cell; SHRINK.APPLY predicts from it", async () => {
      type Preview = { host: { setCell(a: string, v: unknown): void; setSelection(a: string): void; cell(a: string): { value: unknown; formula?: string } | undefined; whenCalculated(): Promise<void> } };
      await page.evaluate(() => (window as unknown as { __shrinkwisePreview: Preview }).__shrinkwisePreview.host.setCell("Sums!G3", "keep me"));
      await page.evaluate(() => (window as unknown as { __shrinkwisePreview: Preview }).__shrinkwisePreview.host.setSelection("Sums!F1"));
      await page.getByTestId("sums-destination-use-selection").click();
      await page.getByTestId("sums-write-button").click();
      await page.getByTestId("sums-confirm-panel").waitFor({ state: "visible" });
      expect(await page.getByTestId("sums-confirm-panel").textContent()).toContain("G3");
      const g3 = () => page.evaluate(() => (window as unknown as { __shrinkwisePreview: Preview }).__shrinkwisePreview.host.cell("Sums!G3")?.value);
      await page.getByTestId("sums-confirm-cancel").click();
      expect(await g3()).toBe("keep me");
      expect(await page.getByTestId("sums-write-status").textContent()).toBe("Nothing written.");
      await page.getByTestId("sums-write-button").click();
      await page.getByTestId("sums-confirm-overwrite").click();
      await page.waitForFunction(() => /^Wrote the coefficient table/.test(document.querySelector('[data-testid="sums-write-status"]')?.textContent ?? ""));
      const shown = await shownModel(page);
      const written = await page.evaluate((n) => {
        const host = (window as unknown as { __shrinkwisePreview: Preview }).__shrinkwisePreview.host;
        const out: unknown[][] = [];
        for (let r = 1; r <= n; r++) out.push([host.cell(`Sums!F${r}`)?.value, host.cell(`Sums!G${r}`)?.value, host.cell(`Sums!G${r}`)?.formula ?? null]);
        return out;
      }, shown.terms.length + 2);
      expect(written).toEqual([["term", "coefficient", null], ["intercept", shown.intercept, null], ...shown.terms.map((t, j) => [t, shown.coefficients[j], null])]);

      // New rows beside it, and SHRINK.APPLY over the written table (computed by the stand-in workbook, as Excel would).
      const last = shown.terms.length + 2;
      const newRow = { minute: 6, drum_temp: 188.5, exhaust_temp: 176.25, airflow: 52.5, gas_pct: 61, bean_moisture: 7.25, origin: "Sidamo" };
      const header = Object.keys(newRow);
      await page.evaluate(
        ([h, values, lastRow]) => {
          const host = (window as unknown as { __shrinkwisePreview: { host: { setCells(a: string, rows: unknown[][]): void; setCell(a: string, v: unknown): void } } }).__shrinkwisePreview.host;
          host.setCells("Sums!I1", [h, values]);
          host.setCell("Sums!I4", `=SHRINK.APPLY(F1:G${lastRow}, I1:O2)`);
        },
        [header, Object.values(newRow), last] as const,
      );
      await page.evaluate(() => (window as unknown as { __shrinkwisePreview: Preview }).__shrinkwisePreview.host.whenCalculated());
      const predicted = await page.evaluate(() => (window as unknown as { __shrinkwisePreview: Preview }).__shrinkwisePreview.host.cell("Sums!I5")?.value);
      const values: Record<string, number> = { ...newRow, "origin: Sidamo": 1, "origin: Cerrado": 0 } as unknown as Record<string, number>;
      const expected = shown.terms.reduce((sum, term, j) => sum + shown.coefficients[j] * values[term], shown.intercept);
      expect(typeof predicted).toBe("number");
      expect(Math.abs((predicted as number) - expected)).toBeLessThanOrEqual(1e-12 * Math.abs(expected));
      await saveScreenshot(page, "sums-table-written");
    }, 60000);

    test("a broken sums table: one line saying what to fix, nothing written, the last results kept under a banner", async () => {
      await page.evaluate(() => {
        const host = (window as unknown as { __shrinkwisePreview: { host: { setCell(a: string, v: unknown): void } } }).__shrinkwisePreview.host;
        host.setCell("Sums!D2", 2); // #format's version
      });
      await page.getByTestId("sums-fit-button").click();
      const status = await waitForSumsStatus(page, /could not run/);
      expect(status).toMatch(/version/);
      expect(status).not.toMatch(/\n/);
      expect(await page.getByTestId("sums-stale-banner").isVisible()).toBe(true);
      expect(await page.getByTestId("sums-results-table").isVisible()).toBe(true);
    }, 60000);
  });

  describe("a local file", () => {
    let folder: string;
    const rows = roastLog(250, 7041);
    const K = 5;
    let csv: string;
    let parquet: string;
    let broken: string;
    let large: string;
    let notParquet: string;

    beforeAll(async () => {
      folder = mkdtempSync(join(tmpdir(), "shrinkwise-file-"));
      csv = join(folder, "roast-log.csv");
      writeFileSync(csv, roastCsv(rows));
      parquet = join(folder, "roast-log.parquet");
      const instance = await DuckDBInstance.create(":memory:");
      const connection = await instance.connect();
      await connection.run(`COPY (SELECT * FROM read_csv('${csv}', header = true)) TO '${parquet}' (FORMAT parquet)`);
      connection.closeSync();
      instance.closeSync();
      notParquet = join(folder, "roast-log-not.parquet");
      writeFileSync(notParquet, roastCsv(rows));
      // Text in a number column, far down the file (past the CSV reader's type sample).
      const text = roastCsv(rows).split("\n");
      const at = text.length - 40;
      const cells = text[at].split(",");
      cells[2] = "n/a";
      text[at] = cells.join(",");
      broken = join(folder, "roast-log-typo.csv");
      writeFileSync(broken, text.join("\n"));
      // A long file for cancelling: 6000 roasts × 12 minutes.
      large = join(folder, "roast-log-large.csv");
      writeFileSync(large, roastCsv(roastLog(6000, 99)));
    }, 120000);

    afterAll(() => {
      if (folder) rmSync(folder, { recursive: true, force: true });
    });

    /** The in-memory fit on the same rows, folds by the same portable hash of batch_id. */
    function inMemory(): FitResult {
      const { x, y, names } = designOf(rows);
      const labels = rows.map((row) => String(foldOfKey(row.batch_id, K) + 1));
      return fit(x, y, { foldLabels: labels, updates: "gram", names, rule: "lowest", standardize: true, intercept: true });
    }

    async function pickFile(path: string): Promise<string> {
      await page.getByTestId("file-input").setInputFiles(path);
      await page.waitForFunction(() => {
        const text = document.querySelector('[data-testid="file-status"]')?.textContent ?? "";
        return text !== "" && !text.startsWith("Reading");
      }, undefined, { timeout: 90000 });
      return (await page.getByTestId("file-status").textContent()) ?? "";
    }

    test("a CSV file: its columns offered, the sums computed in the page, the model equal to the in-memory fit to 1e-9", async () => {
      await page.getByTestId("source-file").check();
      await page.getByTestId("file-input").waitFor({ state: "visible" });
      expect(await pickFile(csv)).toBe("roast-log.csv: 9 columns (8 of numbers).");
      // Defaults: the last number column as the target, the ID-like integer column as the hash key.
      expect(await page.getByTestId("file-target").inputValue()).toBe("color_index");
      expect(await page.getByTestId("file-fold-rule").inputValue()).toBe("hash");
      expect(await page.getByTestId("file-fold-column").inputValue()).toBe("batch_id");
      await page.locator('[data-testid="file-predictors"] input[data-column="origin"]').check();
      await page.getByTestId("file-folds").fill(String(K));
      await page.getByTestId("sums-fit-button").click();
      expect(await waitForSumsStatus(page, /^Fitted|could not/)).toMatch(/^Fitted from sums/);
      const engine = inMemory();
      expectSameModel(await shownModel(page), engine, 1e-9);
      expect(await page.getByTestId("sums-chosen-rows").textContent()).toMatch(new RegExp(`^${rows.length} used, 0 skipped .*${K} blocks`));
      expect(await page.getByTestId("sums-chosen-source").textContent()).toMatch(/roast-log\.csv, DuckDB .* in this browser/);
      await saveScreenshot(page, "file-csv-fitted");
    }, 150000);

    test("a Parquet file written by DuckDB: columns from its footer, sums by the pane's Parquet reader (no DuckDB worker), the model equal to the in-memory fit to 1e-9", async () => {
      const workersBefore = requests.filter((url) => url.includes("/duckdb/")).length;
      expect(await pickFile(parquet)).toBe("roast-log.parquet: 9 columns (8 of numbers).");
      await page.locator('[data-testid="file-predictors"] input[data-column="origin"]').check();
      expect(await page.getByTestId("file-fold-column").inputValue()).toBe("batch_id");
      await page.getByTestId("file-folds").fill(String(K));
      await page.getByTestId("sums-fit-button").click();
      expect(await waitForSumsStatus(page, /^Fitted|could not/)).toMatch(/^Fitted from sums/);
      expectSameModel(await shownModel(page), inMemory(), 1e-9);
      expect(await page.getByTestId("sums-chosen-rows").textContent()).toMatch(new RegExp(`^${rows.length} used, 0 skipped .*${K} blocks`));
      expect(await page.getByTestId("sums-chosen-source").textContent()).toMatch(/roast-log\.parquet, read by the pane's Parquet reader in this browser/);
      // DuckDB was not asked: no request for its worker or WebAssembly while the Parquet file was read.
      expect(requests.filter((url) => url.includes("/duckdb/")).length).toBe(workersBefore);
      expect(requests.some((url) => url.endsWith("/parquet-reader.js"))).toBe(true);
      await saveScreenshot(page, "file-parquet-fitted");
    }, 150000);

    test("a file named .parquet that is not Parquet: one line that says what to fix", async () => {
      const status = await pickFile(notParquet);
      expect(status).toMatch(/^'roast-log-not\.parquet' can't be read as Parquet \(.*\): check that it is a Parquet file, or save it again$/);
      expect(status).not.toMatch(/\n/);
    }, 60000);

    test("text in a number column: one line naming the column and the value; the last results stay, marked", async () => {
      expect(await pickFile(broken)).toMatch(/^roast-log-typo\.csv: 9 columns \(7 of numbers\)/);
      // drum_temp now reads as text: the pane does not offer it as a number column.
      await page.locator('[data-testid="file-predictors"] input[data-column="drum_temp"]').check();
      await page.getByTestId("sums-fit-button").click();
      const status = await waitForSumsStatus(page, /could not run/);
      expect(status).toMatch(/drum_temp/);
      expect(status).toMatch(/n\/a/);
      expect(status).not.toMatch(/\n/);
      expect(await page.getByTestId("sums-stale-banner").isVisible()).toBe(true);
    }, 150000);

    test("a long run is cancelled (DuckDB's worker stopped), and the next fit works", async () => {
      expect(await pickFile(large)).toMatch(/^roast-log-large\.csv: 9 columns/);
      await page.locator('[data-testid="file-predictors"] input[data-column="origin"]').check();
      await page.getByTestId("sums-fit-button").click();
      await page.waitForFunction(() => !(document.querySelector('[data-testid="sums-cancel-button"]') as HTMLButtonElement).disabled);
      const workersBefore = requests.filter((url) => url.endsWith("/duckdb/duckdb-browser-eh.worker.js")).length;
      await page.getByTestId("sums-cancel-button").click();
      expect(await waitForSumsStatus(page, /cancel/i, 30000)).toMatch(/^Fit cancelled/);
      // Fit again, on the small file: a new DuckDB worker starts.
      expect(await pickFile(csv)).toMatch(/^roast-log\.csv/);
      await page.locator('[data-testid="file-predictors"] input[data-column="origin"]').check();
      await page.getByTestId("file-folds").fill(String(K));
      await page.getByTestId("sums-fit-button").click();
      expect(await waitForSumsStatus(page, /^Fitted|could not/)).toMatch(/^Fitted from sums/);
      expectSameModel(await shownModel(page), inMemory(), 1e-9);
      // The cancelled worker was terminated: the next read started a new one.
      expect(requests.filter((url) => url.endsWith("/duckdb/duckdb-browser-eh.worker.js")).length).toBe(workersBefore + 1);
      await saveScreenshot(page, "file-after-cancel");
    }, 150000);

    test("time blocks in the order of a column: K + 1 blocks, fitted forward", async () => {
      await page.getByTestId("file-fold-rule").selectOption("time");
      await page.getByTestId("file-fold-column").selectOption("batch_id");
      await page.getByTestId("file-folds").fill("3");
      expect(await page.getByTestId("sums-stale-banner").isVisible()).toBe(true);
      await page.getByTestId("sums-fit-button").click();
      expect(await waitForSumsStatus(page, /^Fitted|could not/)).toMatch(/^Fitted from sums/);
      expect(await page.getByTestId("sums-chosen-rows").textContent()).toMatch(new RegExp(`^${rows.length} used, 0 skipped .*4 blocks`));
    }, 150000);
  });

  describe("at the end", () => {
    test("the panel passes the accessibility scan; no request left the origin; no policy violation", async () => {
      expect(await scanAccessibility(page, server.url)).toEqual([]);
      expect(requests.filter((url) => !url.startsWith(server.url) && !url.startsWith("data:") && !url.startsWith("blob:") && url !== "about:blank")).toEqual([]);
      expect(problems).toEqual([]);
    }, 60000);
  });
});
