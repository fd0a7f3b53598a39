/**
 * The built taskpane.html opened in a plain browser (no Office host): it must load without
 * script errors, make no request beyond its own server (data never leave the workbook), and
 * pass an automated accessibility scan with no serious or critical violation (axe-core).
 */
import type { Browser, Page } from "playwright-core";
import { browserGate, launchBrowser, saveScreenshot, scanAccessibility, startServer, StaticServer } from "./harness";

const suite = browserGate("the standalone page in Chromium (test/browser/page.test.ts)").describe;

suite("standalone page in Chromium", () => {
  let server: StaticServer;
  let browser: Browser;
  let page: Page;
  const errors: string[] = [];
  const foreign: string[] = [];

  beforeAll(async () => {
    server = await startServer();
    browser = await launchBrowser();
    page = await browser.newPage({ viewport: { width: 1280, height: 1000 } });
    page.on("pageerror", (error) => errors.push(String(error)));
    page.on("console", (message) => {
      if (message.type() === "error") errors.push(message.text());
    });
    page.on("request", (request) => {
      const url = request.url();
      if (!url.startsWith(server.url) && !url.startsWith("data:") && !url.startsWith("blob:")) foreign.push(url);
    });
    await page.goto(`${server.url}/taskpane.html`, { waitUntil: "load" });
  }, 60000);

  afterAll(async () => {
    await browser?.close();
    await server?.close();
  });

  test("loads without script errors and asks nothing of any other host", async () => {
    await page.waitForTimeout(3000);
    expect(errors).toEqual([]);
    expect(foreign).toEqual([]);
  }, 60000);

  test("axe-core finds no serious or critical accessibility violation", async () => {
    const violations = await scanAccessibility(page);
    await saveScreenshot(page, "standalone-page");
    expect(violations).toEqual([]);
  }, 60000);
});
