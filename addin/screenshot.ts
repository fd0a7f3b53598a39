/**
 * Regenerates the README's picture of the side pane (docs/pane-preview.png): serves the built
 * dist/ on loopback, opens the standalone preview in Debian's Chromium, picks the demo ranges,
 * fits with default settings and photographs the top of the page. Run after `npm run build`:
 *   npm run screenshot
 * A script, not a test: the picture is looked at by people, not compared.
 */
import { join } from "path";
import { launchBrowser, ROOT, startServer } from "../test/browser/harness";

const SHEET = "'Roast log'";

async function main(): Promise<void> {
  const server = await startServer();
  const browser = await launchBrowser();
  try {
    const page = await browser.newPage({ viewport: { width: 1100, height: 1300 } });
    await page.goto(`${server.url}/taskpane.html`, { waitUntil: "load" });
    await page.waitForFunction(() => "__shrinkwisePreview" in window, undefined, { timeout: 30000 });
    for (const [address, picker] of [
      [`${SHEET}!M1:M121`, "target"],
      [`${SHEET}!B1:L121`, "predictors"],
    ] as const) {
      await page.evaluate((a) => {
        const preview = (window as unknown as { __shrinkwisePreview: { host: { setSelection(a: string): void } } }).__shrinkwisePreview;
        preview.host.setSelection(a);
      }, address);
      await page.getByTestId(`${picker}-use-selection`).click();
    }
    await page.getByTestId("fit-button").click();
    await page.waitForFunction(() => /^Fitted/.test(document.querySelector('[data-testid="status"]')?.textContent ?? ""), undefined, { timeout: 120000 });
    await page.waitForTimeout(500); // let the charts finish their first draw
    // Frame the fit's outcome: the Fit section near the top, results and the path chart below.
    await page.evaluate(() => {
      document.querySelector('[data-testid="fit-button"]')?.scrollIntoView({ block: "start" });
      window.scrollBy(0, -150);
    });
    const file = join(ROOT, "docs", "pane-preview.png");
    await page.screenshot({ path: file });
    console.log(`wrote ${file}`);
  } finally {
    await browser.close();
    await server.close();
  }
}

main().catch((error: unknown) => {
  console.error(error instanceof Error ? error.message : String(error));
  process.exit(1);
});
