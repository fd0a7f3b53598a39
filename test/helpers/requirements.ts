/**
 * What the conditional suites need from the machine beyond `npm ci`, and what happens without it.
 *
 * - Debian's Chromium at /usr/bin/chromium (`apt-get install -y chromium`): browser checks;
 * - xmllint at /usr/bin/xmllint (Debian's libxml2-utils): the manifest's well-formedness;
 * - the built dist/ (`npm run build`; `npm test` builds it first, see addin/ensure-build.js);
 * - a ClickHouse server (Debian's `clickhouse-server`, 18.16 or newer): the ClickHouse route.
 *   SHRINKWISE_CLICKHOUSE_URL names a running one (CI starts test/clickhouse/server.sh and sets
 *   it); unset, the suites start the repo's test server themselves with server.sh when the
 *   binary is installed, and jest's global teardown stops it again (test/clickhouse/teardown.js).
 *
 * Without one of them a suite (or test) is skipped, and says so in one line with the command
 * that fixes it. With SHRINKWISE_REQUIRE_ALL=1 (set by .ci/run) it fails instead: CI must never
 * pass with a check quietly left out.
 *
 * SHRINKWISE_CHROMIUM and SHRINKWISE_XMLLINT replace the two programs' paths. Pointed at a path
 * that does not exist, they show the skip (or, with SHRINKWISE_REQUIRE_ALL=1, the failure)
 * without uninstalling anything.
 */
import { spawnSync } from "child_process";
import { accessSync, constants, existsSync, writeFileSync } from "fs";
import { join, resolve } from "path";

export const ROOT = resolve(__dirname, "..", "..");
export const DIST = join(ROOT, "dist");
export const CHROMIUM = process.env.SHRINKWISE_CHROMIUM || "/usr/bin/chromium";
export const XMLLINT = process.env.SHRINKWISE_XMLLINT || "/usr/bin/xmllint";

/** Something missing: what (a short phrase) and the command that provides it. */
export interface Need {
  what: string;
  fix: string;
}

export type Gate = { kind: "run" } | { kind: "skip"; message: string } | { kind: "fail"; message: string };

/** Reads SHRINKWISE_REQUIRE_ALL: unset, empty, 0 or false is off; 1 or true is on; anything else is an error. */
export function parseRequireAll(value: string | undefined): boolean {
  const text = (value ?? "").trim().toLowerCase();
  if (text === "" || text === "0" || text === "false") return false;
  if (text === "1" || text === "true") return true;
  throw new Error(`SHRINKWISE_REQUIRE_ALL must be 1 (fail when a check can't run) or 0 (skip it), not '${value}'`);
}

/**
 * Decides a suite's fate from what it is missing: run when nothing is, else skip, or fail when
 * every suite is required. The message is one line naming the suite, what is missing and the fix.
 */
export function decideGate(suite: string, missing: readonly (Need | null)[], requireAll: boolean): Gate {
  const needs = missing.filter((need): need is Need => need !== null);
  if (needs.length === 0) return { kind: "run" };
  const what = needs.map((need) => need.what).join("; ");
  const fix = [...new Set(needs.map((need) => need.fix))].join(" && ");
  if (requireAll) {
    return { kind: "fail", message: `${suite} can't run: ${what}. Fix: ${fix} (SHRINKWISE_REQUIRE_ALL=1 makes this a failure, not a skip)` };
  }
  return { kind: "skip", message: `skipped ${suite}: ${what}. Fix: ${fix}` };
}

/** A program the tests run, missing when `path` is not an executable file. */
export function programNeed(path: string, fix: string): Need | null {
  try {
    accessSync(path, constants.X_OK);
    return null;
  } catch {
    return { what: `${path} is missing`, fix };
  }
}

export function chromiumNeed(): Need | null {
  return programNeed(CHROMIUM, "apt-get install -y chromium");
}

export function xmllintNeed(): Need | null {
  return programNeed(XMLLINT, "apt-get install -y libxml2-utils");
}

export function distNeed(dist = DIST): Need | null {
  return existsSync(join(dist, "taskpane.html")) ? null : { what: "dist/ is not built", fix: "npm run build" };
}

export interface SuiteGate {
  gate: Gate;
  /** `describe` when the suite can run, `describe.skip` when skipped, one failing test when required. */
  describe(name: string, body: () => void): void;
  /** `test` when it can run, `test.skip` when skipped, a failing test when required. */
  test(name: string, fn: jest.ProvidesCallback, timeout?: number): void;
}

/**
 * The gate for `suite` (a label such as "the xmllint check (test/addin/manifest.test.ts)") given
 * what it needs (`chromiumNeed()`, ...). A skip is announced at once, on one line, straight to
 * stderr: jest prints nothing of a file whose tests are all skipped, console included, and
 * frames every console.warn with a code excerpt.
 */
export function suiteGate(suite: string, missing: readonly (Need | null)[], requireAll = parseRequireAll(process.env.SHRINKWISE_REQUIRE_ALL)): SuiteGate {
  const gate = decideGate(suite, missing, requireAll);
  if (gate.kind === "skip") process.stderr.write(`${gate.message}\n`);
  const failing = (message: string) => () => {
    const error = new Error(message);
    error.stack = message; // the message says it all; a code frame of this helper would not help
    throw error;
  };
  return {
    gate,
    describe(name, body) {
      if (gate.kind === "run") describe(name, body);
      else if (gate.kind === "skip") describe.skip(name, body);
      else describe(name, () => test("has what it needs", failing(gate.message)));
    },
    test(name, fn, timeout) {
      if (gate.kind === "run") test(name, fn, timeout);
      else if (gate.kind === "skip") test.skip(name, fn, timeout);
      else test(name, failing(gate.message));
    },
  };
}

/** The repo's ClickHouse test server script (config, schema) and what `server.sh url` prints. */
export const CLICKHOUSE_SERVER_SCRIPT = join(ROOT, "test", "clickhouse", "server.sh");
export const CLICKHOUSE_TEST_URL = "http://127.0.0.1:18123";
/** Written when a test run started the server, so that jest's global teardown stops it (and only then). */
export const CLICKHOUSE_STARTED_MARK = join(process.env.SHRINKWISE_CLICKHOUSE_HOME || "/tmp/shrinkwise-clickhouse", "started-by-jest");
const CLICKHOUSE_INSTALL = "apt-get install -y clickhouse-server clickhouse-client";

/** Whether `SELECT 1` answers 1 at `url` within a few seconds (a child Node process: gates are decided synchronously). */
export function clickhouseAnswers(url: string): boolean {
  const probe = spawnSync(
    process.execPath,
    [
      "-e",
      `fetch(process.argv[1], { method: "POST", body: "SELECT 1", signal: AbortSignal.timeout(3000) })
        .then((r) => r.text()).then((t) => process.exit(t.trim() === "1" ? 0 : 1), () => process.exit(1))`,
      url,
    ],
    { encoding: "utf8", timeout: 10_000 },
  );
  return probe.status === 0;
}

let clickhouseDecided: { url: string | null; need: Need | null } | null = null;

/**
 * The ClickHouse server the suites use: SHRINKWISE_CLICKHOUSE_URL when set (it must answer), else
 * the repo's test server, started here with server.sh when the binary is installed. Decided once
 * per test file. `url` is null when there is none; `need` then says why and what fixes it.
 */
export function clickhouseServer(): { url: string | null; need: Need | null } {
  if (clickhouseDecided) return clickhouseDecided;
  const named = process.env.SHRINKWISE_CLICKHOUSE_URL?.trim();
  if (named) {
    clickhouseDecided = clickhouseAnswers(named)
      ? { url: named, need: null }
      : { url: null, need: { what: `no ClickHouse answers at SHRINKWISE_CLICKHOUSE_URL=${named}`, fix: `${CLICKHOUSE_SERVER_SCRIPT} start` } };
    return clickhouseDecided;
  }
  const binary = process.env.SHRINKWISE_CLICKHOUSE_SERVER || "/usr/sbin/clickhouse-server";
  const missing = programNeed(binary, CLICKHOUSE_INSTALL);
  if (missing) {
    clickhouseDecided = { url: null, need: missing };
    return clickhouseDecided;
  }
  const started = spawnSync(CLICKHOUSE_SERVER_SCRIPT, ["start"], { encoding: "utf8", timeout: 120_000 });
  if (started.status !== 0) {
    const reason = `${started.stderr ?? ""}`.trim().split("\n")[0] || `server.sh start exited with ${started.status}`;
    clickhouseDecided = { url: null, need: { what: `the ClickHouse test server did not start (${reason})`, fix: `${CLICKHOUSE_SERVER_SCRIPT} start` } };
    return clickhouseDecided;
  }
  if (/^ClickHouse test server running/m.test(started.stdout)) writeFileSync(CLICKHOUSE_STARTED_MARK, `${process.pid}\n`);
  clickhouseDecided = { url: CLICKHOUSE_TEST_URL, need: null };
  return clickhouseDecided;
}

export function clickhouseNeed(): Need | null {
  return clickhouseServer().need;
}
