/**
 * Browser-test harness: serves the built add-in (dist/, made by `npm run build`) on a loopback
 * port and drives Debian's Chromium through playwright-core (never a downloaded browser).
 *
 * - `startServer()`: a small static file server on 127.0.0.1 (random free port) for dist/.
 * - `launchBrowser()`: headless Chromium at /usr/bin/chromium with the flags this workplace
 *   needs (no sandbox as root, no background networking: the machine has no network).
 * - `scanAccessibility(page)`: injects axe-core and returns the serious and critical violations.
 * - `saveScreenshot(page, name)`: PNG into test-artifacts/ (ignored by git).
 * `browserGate(suite)`: the suites' gate (test/helpers/requirements.ts). Without Chromium or dist/
 * they skip with one line saying how to fix it, or fail under SHRINKWISE_REQUIRE_ALL=1 (CI). A
 * dist/ older than the sources gets a one-line warning: `npm test` rebuilds it, `npx jest` doesn't.
 */
import { createReadStream, existsSync, mkdirSync, statSync } from "fs";
import { createServer, Server } from "http";
import { AddressInfo } from "net";
import { extname, join, normalize } from "path";
import { chromium, Browser, Page } from "playwright-core";
import { CHROMIUM, chromiumNeed, DIST, distNeed, ROOT, suiteGate, SuiteGate } from "../helpers/requirements";

export { CHROMIUM, DIST, ROOT };
export const ARTIFACTS = join(ROOT, "test-artifacts");

// eslint-disable-next-line @typescript-eslint/no-require-imports
const { buildState } = require("../../addin/ensure-build.js") as { buildState(root?: string): { fresh: boolean; reason: string } };

/** The gate for a browser suite: needs Chromium and the built dist/. */
export function browserGate(suite: string): SuiteGate {
  const gate = suiteGate(suite, [chromiumNeed(), distNeed()]);
  if (gate.gate.kind === "run") {
    const state = buildState(ROOT);
    if (!state.fresh) process.stderr.write(`${suite} tests an old dist/: ${state.reason}. Fix: npm run build (npm test does it first)\n`);
  }
  return gate;
}

const TYPES: Record<string, string> = {
  ".html": "text/html; charset=utf-8",
  ".js": "text/javascript; charset=utf-8",
  ".json": "application/json; charset=utf-8",
  ".xml": "application/xml; charset=utf-8",
  ".png": "image/png",
  ".css": "text/css; charset=utf-8",
  ".map": "application/json; charset=utf-8",
  // DuckDB's WebAssembly (Fit from a file): browsers compile a streamed module only with this type.
  ".wasm": "application/wasm",
};

export interface StaticServer {
  url: string;
  close(): Promise<void>;
}

/**
 * Serves dist/ on 127.0.0.1; only files inside dist/ are reachable. `headers` go on every
 * response (e.g. a Content-Security-Policy, which a worker script's response sets for the worker).
 */
export async function startServer(root = DIST, headers: Record<string, string> = {}): Promise<StaticServer> {
  const server: Server = createServer((request, response) => {
    const path = decodeURIComponent((request.url ?? "/").split("?")[0]);
    const file = normalize(join(root, path === "/" ? "taskpane.html" : path));
    if (!file.startsWith(root) || !existsSync(file) || !statSync(file).isFile()) {
      response.writeHead(404);
      response.end("not found");
      return;
    }
    response.writeHead(200, { ...headers, "Content-Type": TYPES[extname(file)] ?? "application/octet-stream" });
    createReadStream(file).pipe(response);
  });
  await new Promise<void>((done) => server.listen(0, "127.0.0.1", done));
  const { port } = server.address() as AddressInfo;
  return {
    url: `http://127.0.0.1:${port}`,
    close: () => new Promise<void>((done) => server.close(() => done())),
  };
}

export async function launchBrowser(): Promise<Browser> {
  return chromium.launch({
    executablePath: CHROMIUM,
    headless: true,
    args: [
      "--no-sandbox",
      "--disable-gpu",
      "--disable-background-networking",
      "--disable-component-update",
      "--disable-sync",
      "--no-first-run",
      "--disable-quic",
    ],
  });
}

export interface AxeViolation {
  id: string;
  impact: string | null;
  help: string;
  nodes: number;
}

/**
 * Runs axe-core in the page; returns the serious and critical violations. The built page's
 * content security policy refuses inline scripts (addin/hosting.js), so axe is loaded as a script
 * of the page's own origin (`origin`, by default the page's), answered by the test itself.
 */
export async function scanAccessibility(page: Page, origin: string | undefined = /^https?:/.test(page.url()) ? new URL(page.url()).origin : undefined): Promise<AxeViolation[]> {
  if (origin) {
    const url = `${origin}/__test-only__/axe.min.js`;
    await page.route(url, (route) => route.fulfill({ path: require.resolve("axe-core/axe.min.js"), contentType: "text/javascript" }));
    await page.addScriptTag({ url });
  } else {
    await page.addScriptTag({ path: require.resolve("axe-core/axe.min.js") });
  }
  const violations = await page.evaluate(async () => {
    const axe = (window as unknown as { axe: { run: (context: unknown, options: unknown) => Promise<{ violations: { id: string; impact: string | null; help: string; nodes: unknown[] }[] }> } }).axe;
    const result = await axe.run(document, { resultTypes: ["violations"] });
    return result.violations.map((v) => ({ id: v.id, impact: v.impact, help: v.help, nodes: v.nodes.length }));
  });
  return violations.filter((v) => v.impact === "serious" || v.impact === "critical");
}

export async function saveScreenshot(page: Page, name: string): Promise<string> {
  mkdirSync(ARTIFACTS, { recursive: true });
  const file = join(ARTIFACTS, `${name}.png`);
  await page.screenshot({ path: file, fullPage: true });
  return file;
}
