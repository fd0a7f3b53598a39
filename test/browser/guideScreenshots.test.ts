/**
 * The user guide's pictures (docs/guide.md, docs/img/), taken from the real pane: the built
 * standalone preview in Debian's Chromium, 350 px wide (a task pane's usual width), in the light
 * and the dark theme, walked through the guide's steps on the demo roastery data: pick the ranges,
 * look at the settings, fit, read the three charts, write the formulas, write the report.
 *
 * Deterministic: the demo data and the fold seed are fixed, the page's clock is pinned (the report
 * sheet's name carries a date), the charts do not animate, and the pictures are cut from the page
 * by element. A picture that differs from the committed one only by anti-aliasing noise (a few
 * pixels off by a few levels) is not rewritten, so a rerun leaves git clean.
 *
 * The guide links these pictures (test/docs/guide.test.ts fails for a linked picture
 * that is missing). Skipped with one line without Chromium or dist/, failed under
 * SHRINKWISE_REQUIRE_ALL=1 (test/helpers/requirements.ts).
 */
import { existsSync, mkdirSync, readFileSync, statSync, writeFileSync } from "fs";
import { join } from "path";
import type { Browser, Locator, Page } from "playwright-core";
import { browserGate, launchBrowser, ROOT, startServer, StaticServer } from "./harness";

const suite = browserGate("the user guide's screenshots (test/browser/guideScreenshots.test.ts)").describe;

const IMG = join(ROOT, "docs", "img");
const SHEET = "'Roast log'";
const PANE_WIDTH = 350;
/** Tall enough that the whole pane is in the viewport: pictures are cut by page coordinates. */
const PAGE_HEIGHT = 7600;
const THEMES = ["light", "dark"] as const;
/** The walkthrough's pictures, by step (the file is `<name>-<theme>.png`). */
const SHOTS = ["ranges", "settings", "fit", "chart-path", "chart-cv", "chart-bars", "formulas", "report"] as const;
type Shot = (typeof SHOTS)[number];



/** A pixel counts as changed when a channel moves by more than this (0–255)… */
const PIXEL_LEVELS = 24;
/** …and a picture counts as changed when more than this share of its pixels did. */
const CHANGED_SHARE = 0.002;

async function pick(page: Page, address: string, picker: string): Promise<void> {
  await page.evaluate((a) => {
    const preview = (window as unknown as { __shrinkwisePreview: { host: { setSelection(a: string): void } } }).__shrinkwisePreview;
    preview.host.setSelection(a);
  }, address);
  await page.getByTestId(`${picker}-use-selection`).click();
}

async function waitForText(page: Page, testid: string, pattern: RegExp, timeout = 120000): Promise<void> {
  await page.waitForFunction(
    ([id, source]) => new RegExp(source).test(document.querySelector(`[data-testid="${id}"]`)?.textContent ?? ""),
    [testid, pattern.source] as const,
    { timeout },
  );
}

/** The page rectangle from the top of `from` to the bottom of `to` (or of `from`), at most `maxHeight` tall. */
async function box(from: Locator, to: Locator | null = null, maxHeight = 900): Promise<{ x: number; y: number; width: number; height: number }> {
  const top = await from.boundingBox();
  const bottom = to ? await to.boundingBox() : top;
  if (!top || !bottom) throw new Error("an element of the pane to photograph is not on the page");
  const y = Math.floor(top.y) - 6;
  const end = Math.ceil(bottom.y + bottom.height) + 6;
  return { x: 0, y, width: PANE_WIDTH, height: Math.min(end - y, maxHeight) };
}

/**
 * Whether two PNGs show the same picture but for anti-aliasing noise, compared in the browser
 * (it decodes PNG; the project has no image library): the same size, and at most CHANGED_SHARE
 * of the pixels moved by more than PIXEL_LEVELS in any channel.
 */
async function samePicture(page: Page, a: Buffer, b: Buffer): Promise<boolean> {
  return page.evaluate(
    async ([first, second, levels, share]) => {
      const pixels = async (base64: string): Promise<ImageData> => {
        const bytes = Uint8Array.from(atob(base64), (c) => c.charCodeAt(0));
        const bitmap = await createImageBitmap(new Blob([bytes], { type: "image/png" }));
        const canvas = new OffscreenCanvas(bitmap.width, bitmap.height);
        const context = canvas.getContext("2d")!;
        context.drawImage(bitmap, 0, 0);
        return context.getImageData(0, 0, bitmap.width, bitmap.height);
      };
      const [p, q] = [await pixels(first), await pixels(second)];
      if (p.width !== q.width || p.height !== q.height) return false;
      let changed = 0;
      for (let i = 0; i < p.data.length; i += 4) {
        for (let c = 0; c < 3; c++) {
          if (Math.abs(p.data[i + c] - q.data[i + c]) > levels) {
            changed++;
            break;
          }
        }
      }
      return changed <= share * p.width * p.height;
    },
    [a.toString("base64"), b.toString("base64"), PIXEL_LEVELS, CHANGED_SHARE] as const,
  );
}

suite("the user guide's screenshots from the real pane", () => {
  let server: StaticServer;
  let browser: Browser;
  const written: string[] = [];
  const kept: string[] = [];

  beforeAll(async () => {
    server = await startServer();
    browser = await launchBrowser();
    mkdirSync(IMG, { recursive: true });
  }, 60000);

  afterAll(async () => {
    await browser?.close();
    await server?.close();
    if (written.length + kept.length > 0) process.stderr.write(`guide screenshots: ${written.length} rewritten, ${kept.length} unchanged\n`);
  });

  for (const theme of THEMES) {
    test(`the walkthrough in the ${theme} theme, ${PANE_WIDTH} px wide`, async () => {
      const context = await browser.newContext({ viewport: { width: PANE_WIDTH, height: PAGE_HEIGHT }, colorScheme: theme, reducedMotion: "reduce", deviceScaleFactor: 1 });
      const page = await context.newPage();
      try {
        // The report sheet is named with the date and time: pin the clock so its picture repeats.
        await page.clock.setFixedTime(new Date("2026-03-02T09:30:00"));
        await page.goto(`${server.url}/taskpane.html`, { waitUntil: "load" });
        await page.waitForFunction(() => "__shrinkwisePreview" in window, undefined, { timeout: 30000 });
        expect(await page.evaluate(() => document.documentElement.getAttribute("data-theme") ?? (matchMedia("(prefers-color-scheme: dark)").matches ? "dark" : "light"))).toBe(theme);

        const shoot = async (shot: Shot, clip: { x: number; y: number; width: number; height: number }): Promise<void> => {
          const file = join(IMG, `${shot}-${theme}.png`);
          const picture = await page.screenshot({ clip, animations: "disabled", caret: "hide" });
          if (existsSync(file) && (await samePicture(page, readFileSync(file), picture))) {
            kept.push(file);
            return;
          }
          writeFileSync(file, picture);
          written.push(file);
        };
        const section = (id: string): Locator => page.locator(`section[aria-labelledby="${id}"]`);

        // Step: pick the ranges (the demo's, selected on the stand-in sheet as a user would).
        await pick(page, `${SHEET}!M1:M121`, "target");
        await pick(page, `${SHEET}!B1:L121`, "predictors");
        await pick(page, `${SHEET}!B124:L132`, "new-rows");
        expect(await page.getByTestId("predictors-address").textContent()).toContain("B1:L121");
        await shoot("ranges", await box(page.getByTestId("source-choice"), section("pane-ranges"), 620));

        // Step: the settings, left at their defaults (the top of the section).
        await shoot("settings", await box(section("pane-settings"), null, 480));

        // Step: fit; the summary of the choice.
        await page.getByTestId("fit-button").click();
        await waitForText(page, "status", /^Fitted/);
        await page.waitForTimeout(300); // the charts' first draw
        // From the Results heading: the status line above it reports the fit's duration, which varies.
        await shoot("fit", await box(section("pane-results"), page.getByTestId("fit-notes")));

        // Step: the three charts.
        for (const kind of ["path", "cv", "bars"] as const) {
          // The heading and the chart; the long text description below it is in the guide's words.
          await shoot(`chart-${kind}`, await box(page.locator(`figure:has([data-testid="chart-${kind}"])`), page.getByTestId(`chart-${kind}`)));
        }

        // Step: formulas on the sheet, from O1 (nothing there, so nothing to confirm).
        await pick(page, `${SHEET}!O1`, "destination");
        await page.getByTestId("insert-button").click();
        await waitForText(page, "insert-status", /^Wrote /);
        await shoot("formulas", await box(section("pane-formulas")));

        // Step: the report sheet.
        await page.getByTestId("report-button").click();
        await waitForText(page, "report-status", /^Report written/);
        await shoot("report", await box(section("pane-report")));
      } finally {
        await context.close();
      }
      for (const shot of SHOTS) {
        const file = join(IMG, `${shot}-${theme}.png`);
        expect(existsSync(file)).toBe(true);
        // Small enough to commit: each picture well under 150 kB (the whole set is a few hundred).
        expect(statSync(file).size).toBeLessThan(150_000);
      }
    }, 240000);
  }
});
