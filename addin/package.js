#!/usr/bin/env node
/* global require, module, __dirname, process, console, Buffer */
/* eslint-disable @typescript-eslint/no-require-imports -- plain CommonJS, run by node directly */
/**
 * `npm run package -- --base-url https://host.example/shrinkwise/`: the release an IT admin
 * deploys, release/shrinkwise-<version>.zip, holding
 *   - the built files for that base (addin/build.js --base-url, built into release/build-<version>/),
 *     source maps and the build stamp left out;
 *   - manifest.xml for that base (the same file as the build's);
 *   - DEPLOY.md (the repo's, headed by the base URL and version this package was made for).
 * Unzipped, everything goes as it is into the web folder behind the base URL.
 *
 * Flags: --base-url URL (or SHRINKWISE_BASE_URL), --out FILE (another zip path),
 * --from DIR (package a folder already built with --base-url, without building again; the base
 * is read from its manifest), --allow-http-loopback (tests only). A missing or bad base URL, or a
 * --from folder that is not a hosted build, is one line and exit 2.
 */
"use strict";

const fs = require("fs");
const path = require("path");
const { BaseUrlError, UsageError, baseUrlOf, parseBaseUrl, readFlags } = require("./hosting");
const { writeZip } = require("./zip");

const ROOT = path.resolve(__dirname, "..");

/** Files of a build that a web server does not need: source maps and the build stamp. */
function shipped(relative) {
  return !relative.endsWith(".map") && relative !== "build-stamp.json";
}

/** Every file under `dir`, as "/"-separated relative names, sorted. */
function filesUnder(dir) {
  const out = [];
  const visit = (folder, prefix) => {
    for (const entry of fs.readdirSync(folder, { withFileTypes: true })) {
      const relative = prefix ? `${prefix}/${entry.name}` : entry.name;
      if (entry.isDirectory()) visit(path.join(folder, entry.name), relative);
      else if (entry.isFile()) out.push(relative);
    }
  };
  visit(dir, "");
  return out.sort();
}

/** The base URL a hosted build's manifest points at (its <SourceLocation>, less "taskpane.html"). */
function baseOfBuild(dir) {
  const file = path.join(dir, "manifest.xml");
  if (!fs.existsSync(file)) throw new UsageError(`${dir} holds no manifest.xml: build it first with npm run build -- --base-url URL --out ${dir}`);
  const text = fs.readFileSync(file, "utf8");
  if (text.includes("localhost:3000")) throw new UsageError(`${dir}/manifest.xml points at the dev server: build with npm run build -- --base-url URL --out ${dir}`);
  const match = /<SourceLocation DefaultValue="([^"]+)taskpane\.html"\/>/.exec(text);
  if (!match) throw new UsageError(`${dir}/manifest.xml has no <SourceLocation> ending in taskpane.html`);
  return match[1];
}

/** The DEPLOY.md that goes into the zip: the repo's, headed by what this package was made for. */
function deployText(baseUrl, version) {
  const text = fs.readFileSync(path.join(ROOT, "DEPLOY.md"), "utf8");
  const note = `> This package: Shrinkwise ${version}, built for the base URL **${baseUrl}**.\n> Its files must be served from exactly that address.\n\n`;
  const firstBreak = text.indexOf("\n\n");
  return firstBreak < 0 ? `${note}${text}` : `${text.slice(0, firstBreak + 2)}${note}${text.slice(firstBreak + 2)}`;
}

/** Zips the hosted build in `dir` (made for `baseUrl`) with DEPLOY.md into `target`. */
function packageBuild(dir, baseUrl, version, target) {
  const names = filesUnder(dir).filter(shipped);
  for (const needed of ["taskpane.html", "manifest.xml", "functions.js", "taskpane.js", "office-js/office.js"]) {
    if (!names.includes(needed)) throw new UsageError(`${dir} is not a complete build: ${needed} is missing`);
  }
  if (names.includes("DEPLOY.md")) throw new UsageError(`${dir} already holds a DEPLOY.md`);
  const entries = names.map((name) => ({ name, data: fs.readFileSync(path.join(dir, ...name.split("/"))) }));
  entries.push({ name: "DEPLOY.md", data: Buffer.from(deployText(baseUrl, version), "utf8") });
  fs.mkdirSync(path.dirname(target), { recursive: true });
  return writeZip(target, entries);
}

function parseArgs(argv, env = process.env) {
  const flags = readFlags(argv, {
    withValue: ["--base-url", "--out", "--from"],
    switches: ["--allow-http-loopback"],
    known: "--base-url URL, --out FILE, --from DIR, --allow-http-loopback",
  });
  const allowHttpLoopback = flags["--allow-http-loopback"] === true;
  const resolved = (flag) => (flags[flag] === undefined ? null : path.resolve(flags[flag]));
  const options = { baseUrl: baseUrlOf(flags["--base-url"], env, allowHttpLoopback), out: resolved("--out"), from: resolved("--from"), allowHttpLoopback };
  if (options.from === null && options.baseUrl === null) {
    throw new UsageError("give the address the files will be served from: npm run package -- --base-url https://host.example/shrinkwise/");
  }
  return options;
}

function main(argv = process.argv.slice(2)) {
  try {
    const options = parseArgs(argv);
    const version = JSON.parse(fs.readFileSync(path.join(ROOT, "package.json"), "utf8")).version;
    let dir = options.from;
    let baseUrl = options.baseUrl;
    if (dir !== null) {
      const built = parseBaseUrl(baseOfBuild(dir), { allowHttpLoopback: true });
      if (baseUrl !== null && baseUrl !== built) throw new UsageError(`${dir} was built for ${built}, not ${baseUrl}`);
      if (!built.startsWith("https://") && !options.allowHttpLoopback) throw new UsageError(`${dir} was built for ${built}, which is not https`);
      baseUrl = built;
    } else {
      dir = path.join(ROOT, "release", `build-${version}`);
      const { main: build } = require("./build");
      const args = ["--base-url", baseUrl, "--out", dir, ...(options.allowHttpLoopback ? ["--allow-http-loopback"] : [])];
      const status = build(args);
      if (status !== 0) return status;
    }
    const target = options.out ?? path.join(ROOT, "release", `shrinkwise-${version}.zip`);
    const result = packageBuild(dir, baseUrl, version, target);
    console.log(`package: ${path.relative(process.cwd(), target)}: ${result.entries} files, ${(result.bytes / 1e6).toFixed(1)} MB, for ${baseUrl} (see DEPLOY.md inside)`);
    return 0;
  } catch (error) {
    if (error instanceof UsageError || error instanceof BaseUrlError) {
      console.error(`package: ${error.message}`);
      return 2;
    }
    throw error;
  }
}

if (require.main === module) process.exitCode = main();

module.exports = { main, packageBuild, filesUnder, shipped, baseOfBuild, deployText };
