/**
 * What the conditional suites need from the machine beyond `npm ci`, and what happens without it.
 *
 * - Debian's Chromium at /usr/bin/chromium (`apt-get install -y chromium`): browser checks;
 * - xmllint at /usr/bin/xmllint (Debian's libxml2-utils): the manifest's well-formedness;
 * - the built dist/ (`npm run build`; `npm test` builds it first, see addin/ensure-build.js).
 *
 * Without one of them a suite (or test) is skipped, and says so in one line with the command
 * that fixes it. With SHRINKWISE_REQUIRE_ALL=1 (set by .ci/run) it fails instead: CI must never
 * pass with a check quietly left out.
 *
 * SHRINKWISE_CHROMIUM and SHRINKWISE_XMLLINT replace the two programs' paths. Pointed at a path
 * that does not exist, they show the skip (or, with SHRINKWISE_REQUIRE_ALL=1, the failure)
 * without uninstalling anything.
 */
import { accessSync, constants, existsSync } from "fs";
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
