/**
 * One production build per jest run, shared by the suites that need a fresh build of their own
 * (test/addin/build.test.ts: what the build writes; test/addin/hosted.test.ts: the build served
 * from a sub-path of a plain static server). A production build takes 30 s on a quiet machine
 * and over two minutes under load, so it is made once.
 *
 * It is a hosted build: base URL http://127.0.0.1:PORT/shrinkwise/ (allowHttpLoopback: tests
 * only), PORT a free port chosen before building, on which the hosted suite then serves it.
 *
 * Sharing across test files (jest runs them in worker processes, or all in its own process with
 * --runInBand): the build goes to tmpdir/shrinkwise-jest-build-<id>, id being jest's main process
 * (a worker's parent, or this process in band). The first suite to create that folder builds;
 * the others wait for its done.json (or failed.json). Folders of jest runs that have ended are
 * removed when a later run builds.
 */
import { existsSync, mkdirSync, readdirSync, readFileSync, rmSync, writeFileSync } from "fs";
import { createServer } from "net";
import { loadavg, tmpdir, cpus } from "os";
import { join } from "path";
import webpack from "webpack";

// eslint-disable-next-line @typescript-eslint/no-require-imports
const makeConfig = require("../../addin/webpack.config.js") as (env: object, argv: { mode: string }) => webpack.Configuration;

export interface SharedBuild {
  /** The built folder. */
  out: string;
  /** The base URL the build (and its manifest.xml) was made for, ending in "/". */
  base: string;
  /** The port in `base`, to serve the build on. */
  port: number;
  startedAt: number;
  seconds: number;
  /** The 1-minute load average per core when the build ended (for a load-aware time budget). */
  loadPerCore: number;
  stats: webpack.StatsCompilation;
}

const PREFIX = "shrinkwise-jest-build-";

/** Jest's main process: a worker's parent, or this process when jest runs in band. */
function runId(): number {
  return typeof process.send === "function" ? process.ppid : process.pid;
}

function alive(pid: number): boolean {
  try {
    process.kill(pid, 0);
    return true;
  } catch (error) {
    return (error as NodeJS.ErrnoException).code === "EPERM";
  }
}

/** Removes the shared builds of jest runs that have ended. */
function removeStale(): void {
  for (const name of readdirSync(tmpdir())) {
    if (!name.startsWith(PREFIX)) continue;
    const pid = Number(name.slice(PREFIX.length));
    if (Number.isInteger(pid) && pid !== runId() && !alive(pid)) rmSync(join(tmpdir(), name), { recursive: true, force: true });
  }
}

async function freePort(): Promise<number> {
  return new Promise((resolve, reject) => {
    const server = createServer();
    server.once("error", reject);
    server.listen(0, "127.0.0.1", () => {
      const address = server.address();
      const port = typeof address === "object" && address ? address.port : 0;
      server.close(() => resolve(port));
    });
  });
}

async function build(dir: string): Promise<void> {
  const port = await freePort();
  const base = `http://127.0.0.1:${port}/shrinkwise/`;
  const out = join(dir, "dist");
  const config = makeConfig({ baseUrl: base, allowHttpLoopback: true }, { mode: "production" });
  config.output = { ...config.output, path: out };
  const startedAt = Date.now();
  try {
    const result = await new Promise<webpack.Stats>((resolve, reject) => {
      webpack(config, (error, s) => (error || !s ? reject(error ?? new Error("no stats")) : resolve(s)));
    });
    const seconds = (Date.now() - startedAt) / 1000;
    const stats = result.toJson({ all: false, errors: true, warnings: true, assets: true, cachedAssets: true });
    const loadPerCore = loadavg()[0] / Math.max(1, cpus().length);
    writeFileSync(join(dir, "stats.json"), JSON.stringify(stats));
    writeFileSync(join(dir, "done.json"), JSON.stringify({ out, base, port, startedAt, seconds, loadPerCore }));
  } catch (error) {
    writeFileSync(join(dir, "failed.json"), JSON.stringify({ message: String((error as Error)?.stack ?? error) }));
    throw error;
  }
}

let mine: Promise<SharedBuild> | null = null;

/** The run's shared build: made by the first caller, waited for by the others (up to `waitMs`). */
export function sharedBuild(waitMs = 600_000): Promise<SharedBuild> {
  mine ??= (async () => {
    const dir = join(tmpdir(), `${PREFIX}${runId()}`);
    let builder = false;
    try {
      mkdirSync(dir);
      builder = true;
    } catch (error) {
      if ((error as NodeJS.ErrnoException).code !== "EEXIST") throw error;
    }
    if (builder) {
      removeStale();
      await build(dir);
    } else {
      const until = Date.now() + waitMs;
      while (!existsSync(join(dir, "done.json"))) {
        if (existsSync(join(dir, "failed.json"))) throw new Error(`the shared build failed: ${readFileSync(join(dir, "failed.json"), "utf8")}`);
        if (Date.now() > until) throw new Error(`no shared build in ${dir} after ${waitMs / 1000} s`);
        await new Promise((resolve) => setTimeout(resolve, 500));
      }
    }
    const done = JSON.parse(readFileSync(join(dir, "done.json"), "utf8")) as Omit<SharedBuild, "stats">;
    const stats = JSON.parse(readFileSync(join(dir, "stats.json"), "utf8")) as webpack.StatsCompilation;
    return { ...done, stats };
  })();
  return mine;
}
