/**
 * The side pane in a real browser (Debian's Chromium through playwright-core), against the
 * built standalone preview: the same pane as in Excel, on the stand-in workbook with the demo
 * data. Covers the flows: pick ranges, fit with progress, charts, the chosen strength
 * against the engine, cancel and fit again, insert formulas without silent overwrites, the
 * report sheet, the CV chart's x-axis switch, the accessibility scan, and screenshots
 * (test-artifacts/).
 */
import type { Browser, Page } from "playwright-core";
import { prepare } from "../../functions/api";
import { InProcessRunner } from "../../functions/inProcessRunner";
import { roasteryColumns, roasteryRows } from "../../addin/demo/roasteryData";
import { browserGate, launchBrowser, saveScreenshot, scanAccessibility, startServer, StaticServer } from "./harness";

const suite = browserGate("the side pane in Chromium (test/browser/pane.test.ts)").describe;

const SHEET = "'Roast log'";

/** Sets the stand-in selection, as a user dragging over cells would, then presses a picker. */
async function pick(page: Page, address: string, picker: string): Promise<void> {
  await page.evaluate((a) => {
    const preview = (window as unknown as { __shrinkwisePreview: { host: { setSelection(a: string): void } } }).__shrinkwisePreview;
    preview.host.setSelection(a);
  }, address);
  await page.getByTestId(`${picker}-use-selection`).click();
}

async function waitForStatus(page: Page, pattern: RegExp, timeout = 90000): Promise<string> {
  const status = page.getByTestId("status");
  await page.waitForFunction(
    ([source, flags]) => new RegExp(source, flags).test(document.querySelector('[data-testid="status"]')?.textContent ?? ""),
    [pattern.source, pattern.flags] as const,
    { timeout },
  );
  return (await status.textContent()) ?? "";
}

suite("side pane in Chromium (standalone preview)", () => {
  let server: StaticServer;
  let browser: Browser;
  let page: Page;

  beforeAll(async () => {
    server = await startServer();
    browser = await launchBrowser();
    page = await browser.newPage({ viewport: { width: 1280, height: 1100 } });
    await page.goto(`${server.url}/taskpane.html`, { waitUntil: "load" });
    await page.waitForFunction(() => "__shrinkwisePreview" in window, undefined, { timeout: 30000 });
  }, 60000);

  afterAll(async () => {
    await browser?.close();
    await server?.close();
  });

  test("pick ranges, fit with progress; one path line per term; the chosen strength is the engine's", async () => {
    await pick(page, `${SHEET}!M1:M121`, "target");
    await pick(page, `${SHEET}!B1:L121`, "predictors");
    expect(await page.getByTestId("target-address").textContent()).toContain("M1:M121");
    expect(await page.getByTestId("predictors-address").textContent()).toContain("B1:L121");

    const seen: number[] = [];
    const poll = setInterval(() => {
      page
        .evaluate(() => (document.querySelector('[data-testid="fit-progress"]') as HTMLProgressElement | null)?.value ?? -1)
        .then((v) => seen.push(v))
        .catch(() => undefined);
    }, 20);
    await page.getByTestId("fit-button").click();
    await waitForStatus(page, /^Fitted/);
    clearInterval(poll);
    const progress = await page.evaluate(() => {
      const bar = document.querySelector('[data-testid="fit-progress"]') as HTMLProgressElement;
      return { value: bar.value, max: bar.max };
    });
    expect(progress.value).toBe(progress.max); // the bar finished: every fold of every mix done
    expect(progress.max).toBe(5 * 11); // default 5 mixes × (10 folds + the full-data path)

    // The engine in this process, on the same data through the same request builder.
    const target = [["score"], ...roasteryRows.map((row) => [row[roasteryColumns.indexOf("score")]])];
    const predictors = roasteryRows.map((row) => roasteryColumns.slice(1, 12).map((name) => row[roasteryColumns.indexOf(name)]));
    predictors.unshift(roasteryColumns.slice(1, 12));
    const prepared = prepare(target, predictors, null, null);
    const engine = await new InProcessRunner().fit(prepared.request);
    const shown = Number(await page.getByTestId("chosen-strength").getAttribute("data-value"));
    // Same code and inputs in the browser's worker: equal to the last bits is expected; 1e-12
    // relative allows only for a different JavaScript engine's last-digit rounding of exp/log.
    expect(Math.abs(shown - engine.strength)).toBeLessThanOrEqual(1e-12 * engine.strength);

    // One drawn line per term: the path chart's caption counts them, and the SVG holds one
    // stroked, unfilled series path per term.
    const caption = (await page.getByTestId("chart-path").getAttribute("aria-label")) ?? "";
    expect(caption.length).toBeGreaterThan(0);
    const lines = await page.evaluate(() => {
      const svg = document.querySelector('[data-testid="chart-path"] svg');
      if (!svg) return -1;
      return Array.from(svg.querySelectorAll("path")).filter((p) => p.getAttribute("fill") === "none" && (p.getAttribute("d") ?? "").split("L").length > 10).length;
    });
    expect(lines).toBe(engine.terms.length);
    await saveScreenshot(page, "pane-fitted");
  }, 120000);

  test("the accessibility scan finds no serious or critical violation with results on screen", async () => {
    expect(await scanAccessibility(page)).toEqual([]);
  }, 60000);

  test("the CV chart's x axis: a labelled radio pair beside the chart, worked by keyboard or pointer, redraws the chart with the other axis title", async () => {
    const cvText = () => page.evaluate(() => document.querySelector('[data-testid="chart-cv"] svg')?.textContent ?? "");
    const waitForAxis = (title: string) =>
      page.waitForFunction((t) => (document.querySelector('[data-testid="chart-cv"] svg')?.textContent ?? "").includes(t), title, { timeout: 10000 });
    // A group named by its legend, two radios named by their text.
    const group = page.getByRole("group", { name: "X axis" });
    expect(await group.getAttribute("data-testid")).toBe("cv-axis");
    const strength = group.getByRole("radio", { name: "strength λ" });
    const fraction = group.getByRole("radio", { name: "strength ÷ top of grid" });
    // Default: λ itself.
    expect(await strength.isChecked()).toBe(true);
    expect(await fraction.isChecked()).toBe(false);
    expect(await cvText()).toContain("strength λ (log scale)");
    expect(await cvText()).not.toContain("top of grid");

    // Keyboard: focus the checked radio, the arrow key moves the choice.
    await strength.focus();
    await page.keyboard.press("ArrowRight");
    expect(await fraction.isChecked()).toBe(true);
    await waitForAxis("strength ÷ top of grid (log scale)");
    expect(await cvText()).not.toContain("strength λ (log scale)");
    expect(await page.getByTestId("chart-cv").getAttribute("aria-label")).toContain("against strength ÷ top of grid");
    expect(await page.getByTestId("chart-cv-caption").textContent()).toContain("against strength ÷ top of grid");
    // The focused radio shows a focus ring (on its visible part, the text beside it).
    const ring = await page.evaluate(() => getComputedStyle(document.querySelector('[data-testid="cv-axis-fraction"] + span') as Element).outlineStyle);
    expect(ring).toBe("solid");
    await saveScreenshot(page, "pane-cv-axis-fraction");

    // Pointer: back to λ.
    await strength.check();
    await waitForAxis("strength λ (log scale)");
    expect(await cvText()).not.toContain("top of grid");
    expect(await page.getByTestId("chart-cv").getAttribute("aria-label")).toContain("against λ");
    expect(await scanAccessibility(page)).toEqual([]);
  }, 60000);

  test("insert formulas: a filled cell is not overwritten until confirmed in the pane", async () => {
    await page.evaluate(() => {
      const preview = (window as unknown as { __shrinkwisePreview: { host: { setCell(a: string, v: unknown): void } } }).__shrinkwisePreview;
      preview.host.setCell("'Roast log'!P3", "keep me");
    });
    await pick(page, `${SHEET}!O1`, "destination");
    await page.getByTestId("insert-button").click();
    await page.getByTestId("confirm-panel").waitFor({ state: "visible" });
    const cell = () =>
      page.evaluate(() => {
        const preview = (window as unknown as { __shrinkwisePreview: { host: { cell(a: string): { value: unknown; formula?: string } | undefined } } }).__shrinkwisePreview;
        const c = preview.host.cell("'Roast log'!P3");
        const anchor = preview.host.cell("'Roast log'!O1");
        return { p3: c?.value, o1: anchor?.formula ?? null };
      });
    expect(await cell()).toEqual({ p3: "keep me", o1: null });
    await page.getByTestId("confirm-cancel").click();
    expect(await cell()).toEqual({ p3: "keep me", o1: null });
    await page.getByTestId("insert-button").click();
    await page.getByTestId("confirm-overwrite").click();
    await page.waitForFunction(() => {
      const preview = (window as unknown as { __shrinkwisePreview: { host: { cell(a: string): { formula?: string } | undefined } } }).__shrinkwisePreview;
      return (preview.host.cell("'Roast log'!O1")?.formula ?? "").startsWith("=SHRINK.COEFS(");
    });
    await saveScreenshot(page, "pane-formulas");
  }, 60000);

  test("the report sheet is written and named", async () => {
    await page.getByTestId("report-button").click();
    await page.waitForFunction(() => (document.querySelector('[data-testid="report-status"]')?.getAttribute("data-sheet") ?? "") !== "");
    const name = await page.getByTestId("report-status").getAttribute("data-sheet");
    const sheets = await page.evaluate(() => {
      const preview = (window as unknown as { __shrinkwisePreview: { host: { workbook: { sheets(): { name: string }[] } } } }).__shrinkwisePreview;
      return preview.host.workbook.sheets().map((s) => s.name);
    });
    expect(sheets).toContain(name);
    await saveScreenshot(page, "pane-report");
  }, 60000);

  test("a long fit on a large generated sheet can be cancelled, and fitting again works", async () => {
    // A large sheet made in the page: 300 rows × 600 correlated predictors (more predictors than
    // rows: the slow regime) + a target, on a new stand-in sheet "Large"; picked like any range.
    await page.evaluate(() => {
      type Host = { workbook: { addSheet(name: string): unknown }; setCells(a: string, rows: (number | string)[][]): void };
      const host = (window as unknown as { __shrinkwisePreview: { host: Host } }).__shrinkwisePreview.host;
      host.workbook.addSheet("Large");
      let state = 12345;
      const uniform = () => ((state = (Math.imul(state, 1103515245) + 12345) >>> 0) / 4294967296);
      const rows: (number | string)[][] = [["y", ...Array.from({ length: 600 }, (_, j) => `x${j + 1}`)]];
      for (let i = 0; i < 300; i++) {
        let previous = uniform() - 0.5;
        const row = [previous];
        for (let j = 1; j < 600; j++) row.push((previous = 0.7 * previous + (uniform() - 0.5)));
        rows.push([row[0] - 2 * row[10] + row[30] + 0.3 * (uniform() - 0.5), ...row]);
      }
      host.setCells("Large!A1", rows);
    });
    await pick(page, "Large!A1:A301", "target");
    await pick(page, "Large!B1:WC301", "predictors"); // columns B..WC = 600 predictors
    await page.getByTestId("new-rows-clear").click();
    await page.getByTestId("more-settings").evaluate((details) => ((details as HTMLDetailsElement).open = true));
    await page.getByTestId("setting-mixes").fill("0, 0.1, 0.2, 0.3, 0.4, 0.5, 0.6, 0.7, 0.8, 0.9, 1");
    await page.getByTestId("setting-folds").fill("20");
    await page.getByTestId("fit-button").click();
    await page.waitForFunction(() => ((document.querySelector('[data-testid="fit-progress"]') as HTMLProgressElement | null)?.value ?? 0) >= 1, undefined, { timeout: 60000 });
    const before = await page.evaluate(() => (document.querySelector('[data-testid="fit-progress"]') as HTMLProgressElement).max);
    expect(before).toBe(11 * 21); // 11 mixes × (20 folds + the full-data path)
    await page.getByTestId("cancel-button").click();
    const status = await waitForStatus(page, /cancel/i, 30000);
    expect(status.toLowerCase()).toContain("cancel");
    await page.getByTestId("setting-mixes").fill("1");
    await page.getByTestId("setting-folds").fill("5");
    await page.getByTestId("fit-button").click();
    await waitForStatus(page, /^Fitted/);
    await saveScreenshot(page, "pane-after-cancel");
  }, 150000);
});
