/**
 * A yes/no (two-class) fit in the side pane, in Debian's Chromium through playwright-core, on the
 * built standalone preview: choose the quality-check demo data, see how the target reads
 * ("yes/no outcome, event 'fail' …"), pick the AUC, fit, and check the CV chart's title, the
 * odds-ratio column, the engine's numbers, and the report's table at the cutoff; then the
 * accessibility scan. Screenshots go to test-artifacts/.
 *
 * Sources: "demo data" (addin/demo/qualityData.ts qualityTruth: 296 complete rows, 73 fail),
 * "engine result" (the same request fitted in this process by the in-process runner).
 */
import type { Browser, Page } from "playwright-core";
import type { FitResult } from "../../engine/fit";
import { prepare } from "../../functions/api";
import { InProcessRunner } from "../../functions/inProcessRunner";
import { qualityColumns, qualityRows, qualityTruth } from "../../addin/demo/qualityData";
import { browserGate, launchBrowser, saveScreenshot, scanAccessibility, startServer, StaticServer } from "./harness";

const suite = browserGate("a yes/no fit in the side pane (test/browser/twoClass.test.ts)").describe;

/** The settings typed in the pane below, as the cells read them. */
const MIXES = "0.5, 1";
const SETTINGS = "folds=5; error=auc";

type Preview = {
  host: {
    workbook: { sheets(): { name: string }[]; activeSheet: { name: string } };
    readValues(address: string): Promise<unknown[][]>;
  };
  pane: { inputs(): { ranges: { target: string; predictors: string } } };
};

async function waitForText(page: Page, testid: string, pattern: RegExp, timeout = 120000): Promise<string> {
  await page.waitForFunction(
    ([id, source, flags]) => new RegExp(source, flags).test(document.querySelector(`[data-testid="${id}"]`)?.textContent ?? ""),
    [testid, pattern.source, pattern.flags] as const,
    { timeout },
  );
  return (await page.getByTestId(testid).textContent()) ?? "";
}

suite("a yes/no fit in the side pane (standalone preview)", () => {
  let server: StaticServer;
  let browser: Browser;
  let page: Page;
  let engine: FitResult;

  beforeAll(async () => {
    server = await startServer();
    browser = await launchBrowser();
    page = await browser.newPage({ viewport: { width: 1280, height: 1100 } });
    await page.goto(`${server.url}/taskpane.html`, { waitUntil: "load" });
    await page.waitForFunction(() => "__shrinkwisePreview" in window, undefined, { timeout: 30000 });
    // The engine in this process, on the same data through the same request builder.
    const last = qualityColumns.length - 1;
    const target = [[qualityColumns[last]], ...qualityRows.map((row) => [row[last]])];
    const predictors = [qualityColumns.slice(1, last), ...qualityRows.map((row) => row.slice(1, last))];
    engine = await new InProcessRunner().fit(prepare(target, predictors, MIXES, SETTINGS).request);
  }, 120000);

  afterAll(async () => {
    await browser?.close();
    await server?.close();
  });

  test("the demo choice puts the quality-check ranges in the pane; the target reads as yes/no, event 'fail', 73 of 296 rows (demo data)", async () => {
    // Before: the roast scores, a number target.
    await waitForText(page, "target-outcome", /^number outcome/, 30000);
    await page.getByTestId("demo-choice-quality").check();
    const line = await waitForText(page, "target-outcome", /^yes\/no outcome/, 30000);
    expect(line).toBe(`yes/no outcome, event 'fail' (${qualityTruth.fails} of ${qualityTruth.completeRows} rows; the other class is 'pass')`);
    expect(await page.getByTestId("target-address").textContent()).toContain("'Quality check'!N1:N301");
    expect(await page.getByTestId("predictors-address").textContent()).toContain("'Quality check'!B1:M301");
    const active = await page.evaluate(() => (window as unknown as { __shrinkwisePreview: Preview }).__shrinkwisePreview.host.workbook.activeSheet.name);
    expect(active).toBe("Quality check");
    // The form follows: the yes/no measures, and the event offered from the target's labels.
    const measures = await page.getByTestId("setting-error").evaluate((select) => Array.from((select as HTMLSelectElement).options).map((o) => o.value));
    expect(measures).toEqual(["", "misclassified", "auc"]);
    expect(await page.getByTestId("setting-event").isVisible()).toBe(true);
    const events = await page.getByTestId("setting-event").evaluate((select) => Array.from((select as HTMLSelectElement).options).map((o) => o.textContent));
    expect(events).toEqual(["Default: 'fail'", "fail", "pass"]);
    expect(await page.getByTestId("setting-cutoff").isVisible()).toBe(true);
  }, 60000);

  test("fit by AUC: the CV chart says higher is better and marks the highest AUC; the table has odds ratios; the numbers are the engine's", async () => {
    await page.getByTestId("setting-mixes").fill(MIXES);
    await page.getByTestId("setting-folds").fill("5");
    await page.getByTestId("setting-error").selectOption("auc");
    await page.getByTestId("fit-button").click();
    await waitForText(page, "status", /^Fitted/);

    // Same code and inputs in the browser's worker: 1e-12 relative allows only for another engine's last-digit rounding.
    const shown = Number(await page.getByTestId("chosen-strength").getAttribute("data-value"));
    expect(Math.abs(shown - engine.strength)).toBeLessThanOrEqual(1e-12 * engine.strength);
    expect(await page.getByTestId("chosen-error").textContent()).toMatch(/^CV AUC 0\.\d+ ± 0\.\d+ \(higher is better\)$/);
    expect(await page.getByTestId("chosen-rule").textContent()).toBe("highest AUC");
    expect(await page.getByTestId("chosen-outcome").textContent()).toBe(
      `yes/no outcome, event 'fail' (${qualityTruth.fails} of ${qualityTruth.completeRows} rows; the other class is 'pass')`,
    );
    const fit = engine.classFit as NonNullable<FitResult["classFit"]>;
    expect(await page.getByTestId("chosen-cutoff").textContent()).toMatch(
      new RegExp(`^0\\.5: ${fit.eventsCaught} events caught, ${fit.eventsMissed} missed, ${fit.falseAlarms} false alarms, ${fit.correctAllClear} correct all-clear`),
    );

    const cv = await page.evaluate(() => document.querySelector('[data-testid="chart-cv"] svg')?.textContent ?? "");
    expect(cv).toContain("Cross-validated AUC (higher is better)");
    expect(cv).toContain("highest AUC");
    expect(await page.getByTestId("chart-cv").getAttribute("aria-label")).toContain("Marked: highest AUC");
    const path = await page.evaluate(() => document.querySelector('[data-testid="chart-path"] svg')?.textContent ?? "");
    expect(path).toContain("log-odds per SD");

    // The coefficient table: term, log-odds, odds ratio, log-odds per SD; odds ratio = e^log-odds (definition).
    const headers = await page.getByTestId("results-table").locator("thead th").allTextContents();
    expect(headers).toEqual(["term", "log-odds", "odds ratio", "log-odds per SD"]);
    const moisture = await page.getByTestId("results-table").locator("tbody tr", { hasText: "moisture" }).locator("td").allTextContents();
    const j = engine.terms.indexOf("moisture");
    expect(Number(moisture[0])).toBeCloseTo(engine.coefficients[j], 4);
    expect(Math.abs(Number(moisture[1]) / Math.exp(engine.coefficients[j]) - 1)).toBeLessThan(1e-5); // 6 significant digits shown
    await saveScreenshot(page, "pane-two-class-fitted");
  }, 180000);

  test("the report sheet holds the table at the cutoff in words, with the engine's counts", async () => {
    await page.getByTestId("report-button").click();
    await page.waitForFunction(() => (document.querySelector('[data-testid="report-status"]')?.getAttribute("data-sheet") ?? "") !== "", undefined, { timeout: 60000 });
    const name = (await page.getByTestId("report-status").getAttribute("data-sheet")) as string;
    const cells = await page.evaluate(async (sheet) => {
      const host = (window as unknown as { __shrinkwisePreview: Preview }).__shrinkwisePreview.host;
      return host.readValues(`'${sheet}'!A1:E80`);
    }, name);
    const row = (label: string): unknown[] | undefined => cells.find((r) => r[0] === label);
    const fit = engine.classFit as NonNullable<FitResult["classFit"]>;
    expect(row("events caught ('fail', flagged)")?.[1]).toBe(fit.eventsCaught);
    expect(row("events missed ('fail', not flagged)")?.[1]).toBe(fit.eventsMissed);
    expect(row("false alarms ('pass', flagged)")?.[1]).toBe(fit.falseAlarms);
    expect(row("correct all-clear ('pass', not flagged)")?.[1]).toBe(fit.correctAllClear);
    expect(row("sensitivity (share of events caught)")?.[1]).toBe(fit.sensitivity);
    expect(cells.some((r) => typeof r[0] === "string" && r[0].includes("business decision, not a statistical one"))).toBe(true);
    expect(cells.some((r) => r[0] === "term" && r[2] === "odds ratio")).toBe(true);
    await saveScreenshot(page, "pane-two-class-report");
  }, 60000);

  test("the accessibility scan finds no serious or critical violation with yes/no results on screen", async () => {
    expect(await scanAccessibility(page)).toEqual([]);
  }, 60000);
});
