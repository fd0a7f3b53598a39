/**
 * The add-in as a team would host it: the production build made for the base URL
 * http://127.0.0.1:PORT/shrinkwise/ (the run's shared build, test/helpers/sharedBuild.ts), served
 * by a plain static server under /shrinkwise/ (addin/hosted.js: files only, the page's
 * Content-Security-Policy also as a header), opened in Chromium as the standalone preview and
 * driven through a fit on the demo data.
 *
 * - Every request the browser makes (page, office.js and its host files, bundles, the chunks
 *   loaded on demand, the fit worker and its task workers) stays under the base: nothing from
 *   the development server (https://localhost:3000) or any other origin, nothing outside
 *   /shrinkwise/ on the same origin. Checked twice: the browser's own request list, and the
 *   server's list of what it was asked for.
 * - The policy blocks and reports a request to another origin: a fetch from the built pane to a
 *   second local server is refused, a securitypolicyviolation event names connect-src, and that
 *   server never hears of it.
 * - The pane fits, and its charts (the on-demand chart chunk) are drawn, under the policy, with no
 *   violation reported.
 * - "Fit from a file" on a CSV: DuckDB's worker and WebAssembly come from /shrinkwise/duckdb/,
 *   under the same policy.
 */
import { mkdtempSync, rmSync, writeFileSync } from "fs";
import { tmpdir } from "os";
import { join } from "path";
import type { Browser, BrowserContext, Page } from "playwright-core";
import { createServer, Server } from "http";
import { AddressInfo } from "net";
import { chromiumNeed, suiteGate } from "../helpers/requirements";
import { sharedBuild } from "../helpers/sharedBuild";
import { launchBrowser } from "../browser/harness";
import { roastCsv, roastLog } from "../browser/roastLog";

// eslint-disable-next-line @typescript-eslint/no-require-imports
const { startHostedServer } = require("../../addin/hosted.js") as {
  startHostedServer(options: { root: string; prefix?: string; port?: number }): Promise<{ url: string; base: string; served: string[]; close(): Promise<void> }>;
};

const suite = suiteGate("the hosted build in Chromium (test/addin/hosted.test.ts)", [chromiumNeed()]).describe;

const SHEET = "'Roast log'";

async function pick(page: Page, address: string, picker: string): Promise<void> {
  await page.evaluate((a) => {
    const preview = (window as unknown as { __shrinkwisePreview: { host: { setSelection(a: string): void } } }).__shrinkwisePreview;
    preview.host.setSelection(a);
  }, address);
  await page.getByTestId(`${picker}-use-selection`).click();
}

suite("the hosted build, served from /shrinkwise/ by a plain static server", () => {
  let hosted: { url: string; base: string; served: string[]; close(): Promise<void> };
  let browser: Browser;
  let context: BrowserContext;
  let page: Page;
  const requests: string[] = [];
  const violations: string[] = [];
  const problems: string[] = [];

  beforeAll(async () => {
    const build = await sharedBuild();
    hosted = await startHostedServer({ root: build.out, prefix: "/shrinkwise/", port: build.port });
    expect(hosted.base).toBe(build.base);
    browser = await launchBrowser();
    context = await browser.newContext({ viewport: { width: 1280, height: 1100 } });
    // Context-wide: requests of the page and of its workers.
    context.on("request", (request) => requests.push(request.url()));
    page = await context.newPage();
    page.on("console", (message) => {
      if (/Content Security Policy/i.test(message.text())) violations.push(message.text());
    });
    page.on("pageerror", (error) => problems.push(error.message));
    await page.goto(`${hosted.base}taskpane.html`, { waitUntil: "load" });
    await page.waitForFunction(() => "__shrinkwisePreview" in window, undefined, { timeout: 60_000 });
  }, 700_000);

  afterAll(async () => {
    await browser?.close();
    await hosted?.close();
  });

  test("a fit on the demo data, charts drawn; every request stays under the base URL", async () => {
    await pick(page, `${SHEET}!M1:M121`, "target");
    await pick(page, `${SHEET}!B1:L121`, "predictors");
    await page.getByTestId("fit-button").click();
    await page.waitForFunction(() => /^Fitted/.test(document.querySelector('[data-testid="status"]')?.textContent ?? ""), undefined, { timeout: 120_000 });
    // The charts come from their own chunk, loaded on first use: drawn as SVG.
    await page.waitForFunction(() => document.querySelector('[data-testid="chart-path"] svg path') !== null, undefined, { timeout: 30_000 });

    expect(problems).toEqual([]);
    expect(violations).toEqual([]);
    const ours = (url: string): boolean => url.startsWith(hosted.base) || /^(data|blob|about):/.test(url);
    expect(requests.filter((url) => !ours(url))).toEqual([]);
    expect(requests.some((url) => url.includes("localhost:3000"))).toBe(false);
    // What the server saw: only paths under /shrinkwise/, and the parts that prove the pane ran
    // from there (office.js, both bundles, the worker, the chart chunk).
    expect(hosted.served.filter((path) => !path.startsWith("/shrinkwise/"))).toEqual([]);
    for (const file of ["taskpane.html", "office-js/office.js", "functions.js", "taskpane.js", "fit.worker.js", "charts.js"]) {
      expect([file, hosted.served.includes(`/shrinkwise/${file}`)]).toEqual([file, true]);
    }
  }, 180_000);

  test("a request to another origin is blocked by the page's policy and reported; it never arrives", async () => {
    let hits = 0;
    const other: Server = createServer((_request, response) => {
      hits++;
      response.setHeader("Access-Control-Allow-Origin", "*");
      response.end("should not be reached");
    });
    await new Promise<void>((resolve) => other.listen(0, "127.0.0.1", resolve));
    const elsewhere = `http://127.0.0.1:${(other.address() as AddressInfo).port}/collect`;
    try {
      const outcome = await page.evaluate(async (url) => {
        const reported = new Promise<{ directive: string; blocked: string }>((resolve) => {
          document.addEventListener("securitypolicyviolation", (event) => resolve({ directive: event.effectiveDirective, blocked: event.blockedURI }), { once: true });
        });
        let fetched = "answered";
        try {
          await fetch(url, { method: "POST", body: "data" });
        } catch (error) {
          fetched = `refused: ${String(error)}`;
        }
        return { fetched, violation: await reported };
      }, elsewhere);
      expect(outcome.fetched).toMatch(/^refused/);
      expect(outcome.violation.directive).toBe("connect-src");
      expect(outcome.violation.blocked).toContain(new URL(elsewhere).origin);
      expect(hits).toBe(0);
    } finally {
      await new Promise<void>((resolve) => other.close(() => resolve()));
    }
  }, 60_000);

  test("a CSV file fitted by DuckDB in the page: its worker and WebAssembly come from /shrinkwise/duckdb/", async () => {
    const folder = mkdtempSync(join(tmpdir(), "shrinkwise-hosted-file-"));
    // Counted from here: the test before reported its deliberate violation.
    const [violationsBefore, requestsBefore] = [violations.length, requests.length];
    try {
      const csv = join(folder, "roast-log.csv");
      writeFileSync(csv, roastCsv(roastLog(200, 5150)));
      await page.getByTestId("source-file").check();
      await page.getByTestId("file-input").waitFor({ state: "visible" });
      await page.getByTestId("file-input").setInputFiles(csv);
      await page.waitForFunction(() => / columns \(/.test(document.querySelector('[data-testid="file-status"]')?.textContent ?? ""), undefined, { timeout: 90_000 });
      await page.getByTestId("sums-fit-button").click();
      await page.waitForFunction(() => /^Fitted|could not/.test(document.querySelector('[data-testid="sums-status"]')?.textContent ?? ""), undefined, { timeout: 150_000 });
      expect(await page.getByTestId("sums-status").textContent()).toMatch(/^Fitted from sums/);
      expect(await page.getByTestId("sums-chosen-source").textContent()).toMatch(/DuckDB/);
      expect(hosted.served.some((path) => /^\/shrinkwise\/duckdb\/duckdb-(eh|mvp)\.wasm$/.test(path))).toBe(true);
      expect(hosted.served.some((path) => /^\/shrinkwise\/duckdb\/duckdb-browser-(eh|mvp)\.worker\.js$/.test(path))).toBe(true);
      expect(hosted.served.filter((path) => !path.startsWith("/shrinkwise/"))).toEqual([]);
      expect(requests.slice(requestsBefore).filter((url) => !url.startsWith(hosted.base) && !/^(data|blob|about):/.test(url))).toEqual([]);
      expect(violations.slice(violationsBefore)).toEqual([]);
      expect(problems).toEqual([]);
    } finally {
      rmSync(folder, { recursive: true, force: true });
    }
  }, 240_000);
});
