/**
 * The standalone preview served by the webpack dev server, as under `npm start`, in Chromium:
 * after a fit, widening and narrowing the page (as a user drags Excel's pane edge) must raise no
 * error and must not cover the pane with the dev server's "Uncaught runtime errors" overlay.
 *
 * The server is a child process running `webpack serve` with addin/webpack.config.js exactly as
 * addin/start.js runs it (same config, development mode), so the page gets the dev server's own
 * client script with the config's `client.overlay` settings. Differences, on purpose:
 * - plain http on a free 127.0.0.1 port (start.js's `--http`, i.e. SHRINKWISE_HTTP=1), not https
 *   on localhost:3000: https needs a certificate (start.js makes one with openssl) and only
 *   changes the transport; the client script and its overlay settings are the same for both, and
 *   a free port keeps the test clear of a developer's running `npm start`.
 * - `--host 127.0.0.1` and `--port <free>` on the command line, which override the config's.
 * The first compile takes about 20 s, hence the long timeouts. Gated on Chromium like the other browser suites.
 */
import { ChildProcess, spawn } from "child_process";
import { get } from "http";
import { createServer } from "net";
import { join } from "path";
import type { Browser, Page } from "playwright-core";
import { chromiumNeed, suiteGate } from "../helpers/requirements";
import { launchBrowser, ROOT } from "./harness";

// Needs Chromium only (the dev server compiles the sources itself): skips with a one-line fix,
// or fails under SHRINKWISE_REQUIRE_ALL=1 (CI).
const suite = suiteGate("the preview under the dev server in Chromium (test/browser/devServer.test.ts)", [chromiumNeed()]).describe;

/** The id of the iframe webpack-dev-server's client puts over the page to show errors. */
const OVERLAY = "webpack-dev-server-client-overlay";

async function freePort(): Promise<number> {
  return new Promise((resolve, reject) => {
    const probe = createServer();
    probe.once("error", reject);
    probe.listen(0, "127.0.0.1", () => {
      const address = probe.address();
      const port = typeof address === "object" && address ? address.port : 0;
      probe.close(() => resolve(port));
    });
  });
}

/** Resolves once the server answers for the page (the dev middleware holds requests until the first compile is done). */
async function whenServing(url: string, child: ChildProcess, log: () => string, timeoutMs: number): Promise<void> {
  const started = Date.now();
  for (;;) {
    if (child.exitCode !== null || child.signalCode !== null) throw new Error(`the dev server exited (${child.exitCode ?? child.signalCode}):\n${log()}`);
    const status = await new Promise<number>((resolve) => {
      const request = get(url, { timeout: 60_000, agent: false }, (response) => {
        response.resume();
        resolve(response.statusCode ?? 0);
      });
      request.on("error", () => resolve(0));
      request.on("timeout", () => request.destroy());
    });
    if (status === 200) return;
    if (Date.now() - started > timeoutMs) throw new Error(`the dev server did not serve ${url} within ${timeoutMs / 1000} s:\n${log()}`);
    await new Promise((resolve) => setTimeout(resolve, 500));
  }
}

/** Waits for `count` animation frames in the page (ResizeObserver notifications are delivered between frames). */
async function frames(page: Page, count: number): Promise<void> {
  await page.evaluate(
    (n) =>
      new Promise<void>((resolve) => {
        let left = n;
        const step = (): void => {
          if (--left <= 0) resolve();
          else requestAnimationFrame(step);
        };
        requestAnimationFrame(step);
      }),
    count,
  );
}

/** Everything a page reported going wrong, and whether the overlay is on it. */
interface Trouble {
  /** Uncaught exceptions as playwright reports them. */
  pageErrors: string[];
  /** Every `error` event that reached the window, as the dev server's client sees them (some, like ResizeObserver's, are not exceptions). */
  windowErrors: string[];
  /** The dev server's overlay iframe is in the page. */
  overlay: boolean;
}

suite("standalone preview under the webpack dev server in Chromium", () => {
  let server: ChildProcess | undefined;
  let output = "";
  let origin = "";
  let browser: Browser;

  /** A new page on the preview, 350 px wide, with its errors recorded; resolves once the pane is up. */
  async function openPreview(): Promise<{ page: Page; trouble: () => Promise<Trouble> }> {
    const page = await browser.newPage({ viewport: { width: 350, height: 900 } });
    const pageErrors: string[] = [];
    page.on("pageerror", (error) => pageErrors.push(String(error)));
    await page.addInitScript(() => {
      const seen: string[] = [];
      (window as unknown as { __errorEvents: string[] }).__errorEvents = seen;
      window.addEventListener("error", (event) => seen.push(event.message || String(event.error)));
    });
    await page.goto(`${origin}/taskpane.html`, { waitUntil: "load" });
    await page.waitForFunction(() => "__shrinkwisePreview" in window, undefined, { timeout: 60_000 });
    const trouble = async (): Promise<Trouble> => ({
      pageErrors: pageErrors.slice(),
      windowErrors: await page.evaluate(() => (window as unknown as { __errorEvents: string[] }).__errorEvents.slice()),
      overlay: await page.evaluate((id) => document.getElementById(id) !== null, OVERLAY),
    });
    return { page, trouble };
  }

  const NONE: Trouble = { pageErrors: [], windowErrors: [], overlay: false };

  beforeAll(async () => {
    const port = await freePort();
    origin = `http://127.0.0.1:${port}`;
    const cli = require.resolve("webpack-cli/bin/cli.js", { paths: [ROOT] });
    const config = join(ROOT, "addin", "webpack.config.js");
    server = spawn(process.execPath, [cli, "serve", "--config", config, "--mode", "development", "--host", "127.0.0.1", "--port", String(port)], {
      cwd: ROOT,
      env: { ...process.env, SHRINKWISE_HTTP: "1" },
      stdio: ["ignore", "pipe", "pipe"],
    });
    const keep = (chunk: Buffer): void => {
      output = (output + chunk.toString()).slice(-20_000);
    };
    server.stdout?.on("data", keep);
    server.stderr?.on("data", keep);
    await whenServing(`${origin}/taskpane.html`, server, () => output, 150_000);
    browser = await launchBrowser();
  }, 240_000);

  afterAll(async () => {
    await browser?.close();
    if (server && server.exitCode === null) {
      let timer: NodeJS.Timeout | undefined;
      const exited = new Promise((resolve) => server?.once("exit", resolve));
      server.kill("SIGTERM");
      await Promise.race([exited, new Promise((resolve) => (timer = setTimeout(resolve, 5000)))]);
      clearTimeout(timer);
      if (server.exitCode === null && server.signalCode === null) server.kill("SIGKILL");
    }
    server?.stdout?.destroy();
    server?.stderr?.destroy();
  });

  test("after a fit on the demo data, resizing 350 → 500 → 380 px raises no error and shows no overlay", async () => {
    const { page, trouble } = await openPreview();
    await page.getByTestId("fit-button").click();
    await page.waitForFunction(() => /^Fitted/.test(document.querySelector('[data-testid="status"]')?.textContent ?? ""), undefined, { timeout: 90_000 });
    await frames(page, 5);
    // The charts are drawn and nothing went wrong before the resizing starts.
    expect(await page.locator('[data-testid="chart-path"] svg').count()).toBe(1);
    expect(await trouble()).toEqual(NONE);

    const gaps: number[] = [];
    for (const width of [500, 380]) {
      await page.setViewportSize({ width, height: 900 });
      await frames(page, 6);
      await page.waitForTimeout(300); // the client builds its overlay iframe asynchronously
      // How far the path chart's drawing is from its box's width (0: it followed the resize).
      gaps.push(
        await page.evaluate(() => {
          const holder = document.querySelector('[data-testid="chart-path"]') as HTMLElement;
          return Math.abs(Number(holder.querySelector("svg")?.getAttribute("width")) - holder.clientWidth);
        }),
      );
    }
    expect(await trouble()).toEqual(NONE);
    expect(gaps).toEqual([0, 0]);
    await page.close();
  }, 120_000);

  test("the overlay stays away for a ResizeObserver loop notice but still shows a real runtime error", async () => {
    const { page, trouble } = await openPreview();
    // Chromium's own notice, as an error event without an exception (as the browser sends it).
    await page.evaluate(() => window.dispatchEvent(new ErrorEvent("error", { message: "ResizeObserver loop completed with undelivered notifications." })));
    await frames(page, 3);
    await page.waitForTimeout(300);
    expect((await trouble()).overlay).toBe(false);

    await page.evaluate(() =>
      setTimeout(() => {
        throw new Error("a real failure the developer must see");
      }, 0),
    );
    await page.waitForFunction((id) => document.getElementById(id) !== null, OVERLAY, { timeout: 10_000 });
    const text = await page.frameLocator(`#${OVERLAY}`).locator("body").textContent({ timeout: 10_000 });
    expect(text).toContain("a real failure the developer must see");
    await page.close();
  }, 60_000);
});
