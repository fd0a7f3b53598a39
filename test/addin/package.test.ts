/**
 * The release package (`npm run package`, addin/package.js) and its ZIP writer (addin/zip.js).
 *
 * - The writer: CRC-32 equals zlib's own crc32 (a general-purpose library computing it another
 *   way); archives of text, empty, incompressible and non-ASCII-named entries are read back
 *   byte for byte by our reader, by Info-ZIP's `unzip -t` where /usr/bin/unzip exists, and by
 *   Python's zipfile where python3 exists (both independent readers of the format, PKWARE
 *   APPNOTE.TXT).
 * - The package: made `--from` the run's shared hosted build (test/helpers/sharedBuild.ts, so no
 *   second build), it holds the built files without source maps or build stamp, manifest.xml for
 *   the build's base URL, and DEPLOY.md headed by that base; `unzip -l` lists it.
 * - Refusals: no base URL, a bad one, or a folder built for the dev server: one line, exit 2.
 */
import { execFileSync, spawnSync } from "child_process";
import { randomBytes } from "crypto";
import { existsSync, mkdtempSync, readFileSync, rmSync, statSync } from "fs";
import { tmpdir } from "os";
import { join } from "path";
import { crc32 as zlibCrc32 } from "zlib";
import { sharedBuild } from "../helpers/sharedBuild";

// eslint-disable-next-line @typescript-eslint/no-require-imports
const zip = require("../../addin/zip.js") as {
  crc32(bytes: Uint8Array): number;
  writeZip(target: string, entries: { name: string; data: Buffer }[]): { entries: number; bytes: number; stored: number; deflated: number };
  readZip(file: string): { name: string; method: number; crc: number; size: number; data: Buffer }[];
};

const ROOT = join(__dirname, "..", "..");
const PACKAGE = join(ROOT, "addin", "package.js");
const UNZIP = "/usr/bin/unzip";
const hasPython = spawnSync("python3", ["--version"]).status === 0;

let scratch: string;
beforeAll(() => {
  scratch = mkdtempSync(join(tmpdir(), "shrinkwise-package-test-"));
});
afterAll(() => {
  if (scratch) rmSync(scratch, { recursive: true, force: true });
});

describe("the ZIP writer", () => {
  test("CRC-32 agrees with zlib's on edge and random inputs", () => {
    // APPNOTE 4.4.7's CRC-32; the check value of "123456789" is 0xCBF43926 (from memory, and zlib agrees below).
    expect(zip.crc32(Buffer.from("123456789"))).toBe(0xcbf43926);
    for (const bytes of [Buffer.alloc(0), Buffer.alloc(1), Buffer.alloc(1000, 0xff), randomBytes(4097)]) {
      expect(zip.crc32(bytes)).toBe(zlibCrc32(bytes));
    }
  });

  test("text, empty, incompressible and non-ASCII-named entries read back byte for byte", () => {
    const entries = [
      { name: "taskpane.html", data: Buffer.from("<!doctype html>".repeat(200)) },
      { name: "empty.txt", data: Buffer.alloc(0) },
      { name: "duckdb/noise.wasm", data: randomBytes(50_000) },
      { name: "assets/röstung ☕.txt", data: Buffer.from("Röstgrad ☕\n") },
    ];
    const file = join(scratch, "sample.zip");
    const result = zip.writeZip(file, entries);
    expect(result).toMatchObject({ entries: 4, bytes: statSync(file).size });
    // Random bytes don't deflate: stored; repeated text does.
    const back = zip.readZip(file);
    expect(back.map((e) => e.name)).toEqual(entries.map((e) => e.name));
    for (const [i, entry] of back.entries()) expect([entry.name, entry.data.equals(entries[i].data)]).toEqual([entry.name, true]);
    expect(back.find((e) => e.name === "duckdb/noise.wasm")?.method).toBe(0);
    expect(back.find((e) => e.name === "taskpane.html")?.method).toBe(8);
    if (existsSync(UNZIP)) {
      // Info-ZIP tests every entry's CRC and prints "No errors detected".
      expect(execFileSync(UNZIP, ["-t", file], { encoding: "utf8" })).toMatch(/No errors detected/);
      expect(execFileSync(UNZIP, ["-p", file, "assets/röstung ☕.txt"], { encoding: "utf8" })).toBe("Röstgrad ☕\n");
    }
    if (hasPython) {
      const script = "import sys, zipfile\nz = zipfile.ZipFile(sys.argv[1])\nassert z.testzip() is None\nprint('|'.join(i.filename + ':' + str(i.file_size) for i in z.infolist()))";
      const listed = execFileSync("python3", ["-c", script, file], { encoding: "utf8" }).trim();
      expect(listed).toBe(entries.map((e) => `${e.name}:${e.data.length}`).join("|"));
    }
  });

  test("refuses unsafe or repeated names", () => {
    for (const name of ["/etc/x", "../x", "a\\b", ""]) {
      expect(() => zip.writeZip(join(scratch, "bad.zip"), [{ name, data: Buffer.from("x") }])).toThrow(/bad entry name/);
    }
    expect(() => zip.writeZip(join(scratch, "bad.zip"), [{ name: "a", data: Buffer.from("x") }, { name: "a", data: Buffer.from("y") }])).toThrow(/twice/);
  });
});

describe("npm run package", () => {
  test("refuses, in one line with exit 2: no base URL, a bad one, a folder built for the dev server", () => {
    const run = (args: string[]) => spawnSync(process.execPath, [PACKAGE, ...args], { encoding: "utf8", timeout: 30_000, env: { ...process.env, SHRINKWISE_BASE_URL: "" } });
    const cases: [string[], RegExp][] = [
      [[], /--base-url https:\/\//],
      [["--base-url", "http://host.example/"], /https/],
      [["--from", join(ROOT, "addin")], /no manifest\.xml/],
    ];
    for (const [args, message] of cases) {
      const result = run(args);
      expect([args, result.status]).toEqual([args, 2]);
      expect(result.stderr.trim().split("\n")).toHaveLength(1);
      expect(result.stderr).toMatch(message);
    }
  });

  test(
    "from the run's hosted build: built files, manifest for its base, DEPLOY.md; no maps, no stamp",
    async () => {
      const build = await sharedBuild();
      const target = join(scratch, "release", "shrinkwise-test.zip");
      const made = spawnSync(process.execPath, [PACKAGE, "--from", build.out, "--out", target, "--allow-http-loopback"], { encoding: "utf8", timeout: 300_000 });
      expect(made.stderr).toBe("");
      expect(made.status).toBe(0);
      expect(made.stdout).toMatch(/files, [\d.]+ MB, for http:\/\/127\.0\.0\.1:\d+\/shrinkwise\//);
      const entries = zip.readZip(target);
      const names = entries.map((e) => e.name);
      for (const name of ["manifest.xml", "DEPLOY.md", "taskpane.html", "functions.js", "taskpane.js", "charts.js", "fit.worker.js", "task.worker.js", "functions.json", "office-js/office.js", "duckdb/duckdb-eh.wasm", "assets/icon-32.png"]) {
        expect([name, names.includes(name)]).toEqual([name, true]);
      }
      expect(names.filter((n) => n.endsWith(".map") || n === "build-stamp.json")).toEqual([]);
      const text = (name: string): string => (entries.find((e) => e.name === name) as { data: Buffer }).data.toString("utf8");
      expect(text("manifest.xml")).toBe(readFileSync(join(build.out, "manifest.xml"), "utf8"));
      expect(text("manifest.xml")).toContain(`<SourceLocation DefaultValue="${build.base}taskpane.html"/>`);
      expect(text("DEPLOY.md")).toContain(`built for the base URL **${build.base}**`);
      expect(text("DEPLOY.md")).toContain(readFileSync(join(ROOT, "DEPLOY.md"), "utf8").split("\n\n").slice(1).join("\n\n"));
      if (existsSync(UNZIP)) {
        const listing = execFileSync(UNZIP, ["-l", target], { encoding: "utf8", maxBuffer: 16 * 1024 * 1024 });
        expect(listing).toMatch(new RegExp(`\\s${entries.length} files`));
        expect(listing).toContain("manifest.xml");
      }
      // For the report: how big the release is.
      process.stderr.write(`package.test: ${entries.length} files, ${(statSync(target).size / 1e6).toFixed(1)} MB zipped, ${(entries.reduce((s, e) => s + e.size, 0) / 1e6).toFixed(1)} MB unzipped\n`);
    },
    700_000,
  );
});
