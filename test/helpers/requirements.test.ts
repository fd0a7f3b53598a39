/**
 * The gate that decides whether a suite needing Chromium, xmllint or dist/ runs, is skipped (with
 * one line saying how to fix it) or fails (SHRINKWISE_REQUIRE_ALL=1, as in CI).
 * Sources: none needed, these are our own rules (test/helpers/requirements.ts).
 */
import { join } from "path";
import { tmpdir } from "os";
import { decideGate, distNeed, parseRequireAll, programNeed, type Need } from "./requirements";

const chromium: Need = { what: "/usr/bin/chromium is missing", fix: "apt-get install -y chromium" };
const dist: Need = { what: "dist/ is not built", fix: "npm run build" };

describe("decideGate", () => {
  test("runs when nothing is missing, whether or not everything is required", () => {
    expect(decideGate("the suite", [], false)).toEqual({ kind: "run" });
    expect(decideGate("the suite", [null, null], true)).toEqual({ kind: "run" });
  });

  test("skips with one line naming the suite, what is missing and the fix", () => {
    const gate = decideGate("the pane (pane.test.ts)", [chromium, null], false);
    expect(gate).toEqual({
      kind: "skip",
      message: "skipped the pane (pane.test.ts): /usr/bin/chromium is missing. Fix: apt-get install -y chromium",
    });
    expect(gate.kind !== "run" && gate.message.includes("\n")).toBe(false);
  });

  test("fails instead of skipping when every suite is required", () => {
    const gate = decideGate("the pane (pane.test.ts)", [chromium, dist], true);
    expect(gate.kind).toBe("fail");
    expect(gate.kind === "fail" && gate.message).toBe(
      "the pane (pane.test.ts) can't run: /usr/bin/chromium is missing; dist/ is not built. " +
        "Fix: apt-get install -y chromium && npm run build (SHRINKWISE_REQUIRE_ALL=1 makes this a failure, not a skip)",
    );
  });

  test("names a shared fix once", () => {
    const other: Need = { what: "/opt/other is missing", fix: "apt-get install -y chromium" };
    const gate = decideGate("s", [chromium, other], false);
    expect(gate.kind === "skip" && gate.message).toBe("skipped s: /usr/bin/chromium is missing; /opt/other is missing. Fix: apt-get install -y chromium");
  });
});

describe("parseRequireAll", () => {
  test("off when unset, empty, 0 or false; on for 1 or true", () => {
    for (const value of [undefined, "", " ", "0", "false", "FALSE"]) expect([value, parseRequireAll(value)]).toEqual([value, false]);
    for (const value of ["1", "true", "True"]) expect([value, parseRequireAll(value)]).toEqual([value, true]);
  });

  test("any other value is an error, so a typo in CI can't quietly turn skips back on", () => {
    expect(() => parseRequireAll("yes please")).toThrow("SHRINKWISE_REQUIRE_ALL must be 1 (fail when a check can't run) or 0 (skip it), not 'yes please'");
  });
});

describe("what is missing", () => {
  test("a program is missing when its path is not an executable file", () => {
    expect(programNeed(process.execPath, "unused")).toBeNull();
    const absent = join(tmpdir(), "shrinkwise-no-such-program");
    expect(programNeed(absent, "apt-get install -y it")).toEqual({ what: `${absent} is missing`, fix: "apt-get install -y it" });
    // A file that exists but can't be run (this test file) counts as missing too.
    expect(programNeed(__filename, "fix")).not.toBeNull();
  });

  test("dist/ is missing without its taskpane.html", () => {
    expect(distNeed(join(tmpdir(), "shrinkwise-no-such-dist"))).toEqual({ what: "dist/ is not built", fix: "npm run build" });
  });
});
