/**
 * The pane's footer (taskpane/about.ts) and the guide page it links (addin/guidePage.js → dist/guide/)
 * in Debian's Chromium, on the built standalone preview: the footer names package.json's version,
 * the link opens the guide in a new window on the same origin, the guide's pictures load (the dark
 * ones in the dark theme), nothing is requested from anywhere else, and the page's own policy is
 * in force (a connection from the page is refused).
 */
import { readFileSync } from "fs";
import { join } from "path";
import type { Browser, Page } from "playwright-core";
import { browserGate, launchBrowser, ROOT, startServer, StaticServer } from "./harness";

const suite = browserGate("the pane's version line and guide link (test/browser/about.test.ts)").describe;

const VERSION = (JSON.parse(readFileSync(join(ROOT, "package.json"), "utf8")) as { version: string }).version;

suite("version and guide link in the pane", () => {
  let server: StaticServer;
  let browser: Browser;

  beforeAll(async () => {
    server = await startServer();
    browser = await launchBrowser();
  }, 60000);

  afterAll(async () => {
    await browser?.close();
    await server?.close();
  });

  for (const theme of ["light", "dark"] as const) {
    test(`the footer's link opens the guide in a new window, pictures and all (${theme} theme)`, async () => {
      const context = await browser.newContext({ viewport: { width: 350, height: 900 }, colorScheme: theme });
      const requests: string[] = [];
      const violations: string[] = [];
      context.on("request", (request) => requests.push(request.url()));
      try {
        const page = await context.newPage();
        await page.goto(`${server.url}/taskpane.html`, { waitUntil: "load" });
        await page.waitForFunction(() => "__shrinkwisePreview" in window, undefined, { timeout: 30000 });

        const footer = page.getByTestId("about");
        await footer.scrollIntoViewIfNeeded();
        expect(await page.getByTestId("about-version").textContent()).toBe(`Shrinkwise ${VERSION}`);
        const link = page.getByTestId("guide-link");
        expect(await link.getAttribute("target")).toBe("_blank");
        expect((await link.getAttribute("rel"))?.split(" ")).toEqual(expect.arrayContaining(["noopener", "noreferrer"]));
        expect(await link.evaluate((a) => (a as HTMLAnchorElement).href)).toBe(`${server.url}/guide/index.html`);
        expect(await link.textContent()).toBe("User guide (opens in a new window)");

        const [guide] = await Promise.all([context.waitForEvent("page"), link.click()]);
        guide.on("console", (message) => {
          if (/Content Security Policy|Refused to/i.test(message.text())) violations.push(message.text());
        });
        await guide.waitForLoadState("load");
        expect(guide.url()).toBe(`${server.url}/guide/index.html`);
        expect(await guide.locator("h1").textContent()).toBe("Shrinkwise user guide");
        await loadAllPictures(guide);
        const pictures = await guide.evaluate(() => Array.from(document.images).map((img) => ({ src: img.currentSrc, loaded: img.complete && img.naturalWidth > 0 })));
        expect(pictures.length).toBeGreaterThanOrEqual(8);
        for (const picture of pictures) {
          expect(picture.loaded).toBe(true);
          expect(picture.src.startsWith(`${server.url}/guide/img/`)).toBe(true);
          expect(picture.src.endsWith(`-${theme}.png`)).toBe(true);
        }
        // The guide's #links land on its headings.
        const anchors = await guide.evaluate(() =>
          Array.from(document.querySelectorAll<HTMLAnchorElement>('a[href^="#"]')).map((a) => ({ href: a.getAttribute("href")!, found: document.getElementById(a.getAttribute("href")!.slice(1)) !== null })),
        );
        expect(anchors.length).toBeGreaterThan(3);
        for (const anchor of anchors) expect(anchor).toEqual({ href: anchor.href, found: true });

        // Nothing the page itself holds breaks its policy (its style block's hash, its pictures)…
        expect(violations).toEqual([]);
        // …and the policy is live: no script in the page, and a connection from it is refused.
        expect(await guide.evaluate(() => document.scripts.length)).toBe(0);
        const fetched = await guide.evaluate(() => fetch("/taskpane.html").then(() => "fetched", () => "refused"));
        expect(fetched).toBe("refused");
        expect(violations.some((text) => /connect-src/.test(text))).toBe(true);

        const elsewhere = requests.filter((url) => !url.startsWith(`${server.url}/`) && !url.startsWith("data:") && !url.startsWith("blob:") && url !== "about:blank");
        expect(elsewhere).toEqual([]);
      } finally {
        await context.close();
      }
    }, 120000);
  }
});

/** Scrolls through the page so that every lazily loaded picture loads, then waits for them. */
async function loadAllPictures(page: Page): Promise<void> {
  await page.evaluate(async () => {
    for (const img of Array.from(document.images)) {
      img.scrollIntoView();
      await new Promise((resolve) => requestAnimationFrame(resolve));
    }
  });
  await page.waitForFunction(() => Array.from(document.images).every((img) => img.complete && img.naturalWidth > 0), undefined, { timeout: 30000 });
}
