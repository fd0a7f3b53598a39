/**
 * addin/ensure-build.js (npm test's pretest) deciding whether dist/ is fresh, on a made-up
 * project in a temporary folder with chosen modification times. Sources: none needed, these
 * are our own rules (the script's header).
 */
import { mkdirSync, mkdtempSync, rmSync, unlinkSync, utimesSync, writeFileSync } from "fs";
import { tmpdir } from "os";
import { join } from "path";

// eslint-disable-next-line @typescript-eslint/no-require-imports
const { buildState, INPUTS, STAMP } = require("../../addin/ensure-build.js") as {
  buildState(root: string, options?: { inputs?: string[]; now?: number }): { fresh: boolean; reason: string };
  INPUTS: string[];
  STAMP: string;
};

// A whole second an hour ago: deleting a file below sets its folder's time to now, after T.
const T = Math.floor(Date.now() / 1000) * 1000 - 3_600_000;
let root = "";

/** Sets a path's modification time to `ms` (milliseconds since the epoch). */
function touch(path: string, ms: number): void {
  utimesSync(path, ms / 1000, ms / 1000);
}

function stamp(startedAt: unknown): void {
  mkdirSync(join(root, "dist"), { recursive: true });
  writeFileSync(join(root, "dist", STAMP), JSON.stringify({ startedAt }));
}

beforeEach(() => {
  root = mkdtempSync(join(tmpdir(), "shrinkwise-ensure-build-"));
  mkdirSync(join(root, "engine", "cli"), { recursive: true });
  writeFileSync(join(root, "engine", "fit.ts"), "");
  writeFileSync(join(root, "engine", "cli", "fit.ts"), "");
  writeFileSync(join(root, "manifest.xml"), "");
  for (const path of ["engine/fit.ts", "engine/cli/fit.ts", "engine/cli", "engine", "manifest.xml"]) touch(join(root, path), T - 60_000);
});

afterEach(() => {
  rmSync(root, { recursive: true, force: true });
});

test("the inputs are what the production build reads", () => {
  expect(INPUTS).toEqual(["engine", "functions", "taskpane", "addin", "manifest.xml", "tsconfig.json", "package-lock.json", "docs/guide.md", "docs/img"]);
});

test("not fresh without dist/, without a stamp, or with a stamp holding no time", () => {
  expect(buildState(root)).toEqual({ fresh: false, reason: "dist/ is missing" });
  mkdirSync(join(root, "dist"));
  expect(buildState(root)).toEqual({ fresh: false, reason: `dist/${STAMP} is missing or unreadable: no complete production build` });
  writeFileSync(join(root, "dist", STAMP), "{ not json");
  expect(buildState(root).fresh).toBe(false);
  stamp("yesterday");
  expect(buildState(root)).toEqual({ fresh: false, reason: `dist/${STAMP} holds no build time` });
});

test("fresh when nothing changed after the build started", () => {
  stamp(T);
  expect(buildState(root, { now: T + 3 * 60_000 })).toEqual({ fresh: true, reason: "dist/ is fresh (built 3 min ago, no source changed since)" });
});

test("stale when a file deep in an input folder changed after the build started, and it names that file", () => {
  stamp(T);
  touch(join(root, "engine", "cli", "fit.ts"), T + 1_000);
  expect(buildState(root)).toEqual({ fresh: false, reason: "engine/cli/fit.ts changed after the last build" });
});

test("stale when a single-file input changed", () => {
  stamp(T);
  touch(join(root, "manifest.xml"), T + 5_000);
  expect(buildState(root)).toEqual({ fresh: false, reason: "manifest.xml changed after the last build" });
});

test("stale when a file was deleted (its folder's time changes)", () => {
  stamp(T);
  unlinkSync(join(root, "engine", "fit.ts"));
  expect(buildState(root).reason).toBe("engine changed after the last build");
});

test("an edit made while the build ran counts as a change: the stamp holds the build's start", () => {
  stamp(T);
  touch(join(root, "engine", "fit.ts"), T + 10_000);
  // The stamp file itself is written later than the edit; only its recorded start matters.
  touch(join(root, "dist", STAMP), T + 30_000);
  expect(buildState(root).fresh).toBe(false);
});

test("files outside the inputs don't matter", () => {
  stamp(T);
  writeFileSync(join(root, "README.md"), "");
  mkdirSync(join(root, "test"));
  writeFileSync(join(root, "test", "a.test.ts"), "");
  expect(buildState(root).fresh).toBe(true);
});
