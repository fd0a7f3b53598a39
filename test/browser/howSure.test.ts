/**
 * The pane's "how sure is it" views in a real browser (Debian's Chromium through playwright-core)
 * against the built standalone preview on the roastery demo data: switch on a 90% interval and
 * stability selection with few draws, fit, and see the held-out and kept-share charts drawn
 * (whiskers, stable marks, text summaries), the progress bar counting the fits the engine
 * reports (its total, not a number fixed in the pane), and no console errors; then the yes/no demo
 * (the interval refused, a note in place of the held-out chart). Kept short: small fits (two
 * mixes, five folds, three pairs of half-samples).
 */
import type { Browser, ConsoleMessage, Page } from "playwright-core";
import { fit as engineFit, type FitResult } from "../../engine/fit";
import { prepare } from "../../functions/api";
import { roasteryColumns, roasteryRows } from "../../addin/demo/roasteryData";
import { join } from "path";
import { ARTIFACTS, browserGate, launchBrowser, saveScreenshot, scanAccessibility, startServer, StaticServer } from "./harness";

const suite = browserGate("the pane's how-sure views in Chromium (test/browser/howSure.test.ts)").describe;

const SHEET = "'Roast log'";
const MIXES = "0.5, 1";
const SETTINGS = { folds: "5", interval: "0.9", draws: "3" };

async function pick(page: Page, address: string, picker: string): Promise<void> {
  await page.evaluate((a) => {
    const preview = (window as unknown as { __shrinkwisePreview: { host: { setSelection(a: string): void } } }).__shrinkwisePreview;
    preview.host.setSelection(a);
  }, address);
  await page.getByTestId(`${picker}-use-selection`).click();
}

suite("how-sure views in Chromium (standalone preview)", () => {
  let server: StaticServer;
  let browser: Browser;
  let page: Page;
  const problems: string[] = [];

  beforeAll(async () => {
    server = await startServer();
    browser = await launchBrowser();
    page = await browser.newPage({ viewport: { width: 1280, height: 1100 } });
    page.on("console", (message: ConsoleMessage) => {
      if (message.type() === "error") problems.push(message.text());
    });
    page.on("pageerror", (error) => problems.push(error.message));
    await page.goto(`${server.url}/taskpane.html`, { waitUntil: "load" });
    await page.waitForFunction(() => "__shrinkwisePreview" in window, undefined, { timeout: 30000 });
  }, 60000);

  afterAll(async () => {
    await browser?.close();
    await server?.close();
  });

  /** The engine on the same request, in this process: its result and the total its progress reports. */
  function engineRun(mixes: string, settings: string): { result: FitResult; total: number } {
    const target = [["score"], ...roasteryRows.map((row) => [row[roasteryColumns.indexOf("score")]])];
    const predictors = [roasteryColumns.slice(1, 12), ...roasteryRows.map((row) => roasteryColumns.slice(1, 12).map((name) => row[roasteryColumns.indexOf(name)]))];
    const prepared = prepare(target, predictors, mixes, settings);
    let total = 0;
    const result = engineFit(prepared.request.predictors, prepared.request.target, { ...prepared.request.options, onProgress: (_done, all) => (total = all) });
    return { result, total };
  }

  async function fitAndWait(): Promise<void> {
    await page.getByTestId("fit-button").click();
    await page.waitForFunction(() => /^(Fitted|The fit could not)/.test(document.querySelector('[data-testid="status"]')?.textContent ?? ""), undefined, { timeout: 60000 });
    expect(await page.getByTestId("status").textContent()).toMatch(/^Fitted/);
  }

  async function progressBar(): Promise<{ value: number; max: number }> {
    return page.evaluate(() => {
      const progress = document.querySelector('[data-testid="fit-progress"]') as HTMLProgressElement;
      return { value: progress.value, max: progress.max };
    });
  }

  const svgText = (id: string): Promise<string> => page.evaluate((t) => document.querySelector(`[data-testid="${t}"] svg`)?.textContent ?? "", id);

  test("a 90% interval: the held-out chart with whiskers and its summary, the kept-share chart, no console errors", async () => {
    await pick(page, `${SHEET}!M1:M121`, "target");
    await pick(page, `${SHEET}!B1:L121`, "predictors");
    await page.getByTestId("setting-mixes").fill(MIXES);
    await page.getByTestId("setting-folds").fill(SETTINGS.folds);
    await page.getByTestId("sure-settings").evaluate((details) => ((details as HTMLDetailsElement).open = true));
    // Validated as typed: a level of 1 is refused under the field, then a good one clears it.
    await page.getByTestId("setting-interval").fill("1");
    await page.getByTestId("setting-interval-error").waitFor({ state: "visible" });
    await page.getByTestId("setting-interval").fill(SETTINGS.interval);
    await page.getByTestId("setting-interval-error").waitFor({ state: "hidden" });
    await fitAndWait();

    const { result, total } = engineRun(MIXES, `folds=${SETTINGS.folds}; interval=${SETTINGS.interval}`);
    expect(await progressBar()).toEqual({ value: total, max: total });
    const heldCaption = (await page.getByTestId("chart-held-out-caption").textContent()) ?? "";
    expect(heldCaption).toContain(`for ${result.heldOut!.row.length} rows`);
    expect(heldCaption).toContain("90% CV+ intervals");
    expect(await page.getByTestId("chart-held-out").getAttribute("role")).toBe("img");
    const heldSvg = await svgText("chart-held-out");
    expect(heldSvg).toContain("Held-out predictions vs actual");
    expect(heldSvg).toContain("90% CV+ interval");
    expect(await svgText("chart-kept")).toContain("Kept share of each term");
    expect((await page.getByTestId("chart-kept-caption").textContent()) ?? "").toContain(`Kept share of ${result.terms.length} terms`);
    expect(await page.getByTestId("chosen-repeats").textContent()).toBe(String(result.cv!.repeats));
    await saveScreenshot(page, "pane-how-sure");
    // The two charts alone, for a look at them (test-artifacts/, ignored by git).
    await page.getByTestId("chart-held-out").screenshot({ path: join(ARTIFACTS, "chart-held-out.png") });
    expect(await scanAccessibility(page)).toEqual([]);
    expect(problems).toEqual([]);
  }, 90000);

  test("a yes/no target: an interval level is refused under its field; the held-out chart gives way to a note; the kept-share chart is drawn", async () => {
    await page.getByTestId("demo-choice-quality").check();
    await page.waitForFunction(() => document.querySelector('[data-testid="target-outcome"]')?.getAttribute("data-kind") === "two-class", undefined, { timeout: 20000 });
    await page.getByTestId("setting-interval-error").waitFor({ state: "visible" });
    expect(await page.getByTestId("setting-interval-error").textContent()).toContain("number targets");
    await page.getByTestId("setting-interval").fill("");
    await page.getByTestId("setting-mixes").fill("1");
    await fitAndWait();
    expect(await page.getByTestId("chart-held-out").isVisible()).toBe(false);
    expect(await page.getByTestId("chart-held-out-note").textContent()).toContain("for number targets");
    expect(await svgText("chart-kept")).toContain("Kept share of each term");
    expect(problems).toEqual([]);
    // Back to the roast scores for the next test.
    await page.getByTestId("demo-choice-roast").check();
    await page.waitForFunction(() => document.querySelector('[data-testid="target-outcome"]')?.getAttribute("data-kind") === "number", undefined, { timeout: 20000 });
    await page.getByTestId("setting-mixes").fill(MIXES);
    await page.getByTestId("setting-interval").fill(SETTINGS.interval);
  }, 90000);
  test("stability on with 3 draws: draws, q and π appear, π is checked as typed; stable marks and the bound; the bar counts the engine's fits", async () => {
    expect(await page.getByTestId("setting-draws").isVisible()).toBe(false);
    await page.getByTestId("setting-stability").check();
    await page.getByTestId("setting-draws").waitFor({ state: "visible" });
    await page.getByTestId("setting-draws").fill(SETTINGS.draws);
    await page.getByTestId("setting-stability-threshold").fill("0.4");
    await page.getByTestId("setting-stability-threshold-error").waitFor({ state: "visible" });
    await page.getByTestId("setting-stability-threshold").fill("");
    await fitAndWait();

    const { result, total } = engineRun(MIXES, `folds=${SETTINGS.folds}; interval=${SETTINGS.interval}; stability=yes; draws=${SETTINGS.draws}`);
    expect(result.stability).not.toBeNull();
    expect(await progressBar()).toEqual({ value: total, max: total });
    const keptSvg = await svgText("chart-kept");
    expect(keptSvg).toContain("stable (share ≥ π)");
    const caption = (await page.getByTestId("chart-kept-caption").textContent()) ?? "";
    expect(caption).toContain("falsely selected");
    const stable = result.stability!.stable.filter(Boolean).length;
    expect(caption).toContain(`${stable} stable term`);
    await page.getByTestId("chart-kept").screenshot({ path: join(ARTIFACTS, "chart-kept.png") });
    expect(problems).toEqual([]);
  }, 90000);

});
