#!/usr/bin/env node
/* global require, module, __dirname, process, console */
/* eslint-disable @typescript-eslint/no-require-imports -- plain CommonJS, run by node directly */
/**
 * `npm test`'s pretest: makes sure dist/ (the production build the browser tests load) is there
 * and was built from the current sources, and builds it when not. Prints one line saying which.
 *
 * The production webpack build ends by writing dist/build-stamp.json with the time the build
 * started (addin/webpack.config.js, BuildStamp). dist/ is fresh when that stamp exists and no
 * build input (a file or folder under INPUTS) was modified after that time; a folder's time
 * changes when a file in it is added, renamed or deleted, so removals count too. Comparing with
 * the build's start, not the stamp file's own time, means an edit made while webpack was running
 * makes the next `npm test` build again rather than test an out-of-date bundle.
 *
 * So CI (`npm run build`, then `npm test`) builds once; a fresh clone's `npm test` builds first;
 * `npx jest <file>` never builds (npm runs pretest for `npm test` only).
 *
 * The build here is webpack alone, in production mode (`npm run build:addin`); `npm run build`
 * adds the strict type check, which ts-jest's diagnostics cover for the code the tests load.
 */
"use strict";

const fs = require("fs");
const path = require("path");
const { spawnSync } = require("child_process");

const ROOT = path.resolve(__dirname, "..");
const STAMP = "build-stamp.json";
/** What the production build reads, relative to the project root (folders are walked). */
const INPUTS = ["engine", "functions", "taskpane", "addin", "manifest.xml", "tsconfig.json", "package-lock.json", "docs/guide.md", "docs/img"];

/** The most recently modified file or folder among `inputs` under `root`, or null when none exists. */
function newestInput(root, inputs = INPUTS) {
  let newest = null;
  const visit = (file) => {
    let stat;
    try {
      stat = fs.lstatSync(file);
    } catch {
      return; // an input that does not exist (yet) is not newer than anything
    }
    if (!newest || stat.mtimeMs > newest.mtimeMs) newest = { file: path.relative(root, file) || ".", mtimeMs: stat.mtimeMs };
    if (stat.isDirectory()) {
      for (const name of fs.readdirSync(file)) visit(path.join(file, name));
    }
  };
  for (const input of inputs) visit(path.join(root, input));
  return newest;
}

function describeAge(ms) {
  const seconds = Math.max(0, Math.round(ms / 1000));
  if (seconds < 90) return `${seconds} s`;
  const minutes = Math.round(seconds / 60);
  if (minutes < 90) return `${minutes} min`;
  return `${Math.round(minutes / 60)} h`;
}

/**
 * Whether `root`/dist holds a build of the current inputs: `{ fresh, reason }`, the reason one
 * short phrase (why a build is needed, or what makes dist/ fresh).
 */
function buildState(root = ROOT, { inputs = INPUTS, now = Date.now() } = {}) {
  const dist = path.join(root, "dist");
  if (!fs.existsSync(dist)) return { fresh: false, reason: "dist/ is missing" };
  let startedAt;
  try {
    startedAt = JSON.parse(fs.readFileSync(path.join(dist, STAMP), "utf8")).startedAt;
  } catch {
    return { fresh: false, reason: `dist/${STAMP} is missing or unreadable: no complete production build` };
  }
  if (typeof startedAt !== "number" || !Number.isFinite(startedAt)) {
    return { fresh: false, reason: `dist/${STAMP} holds no build time` };
  }
  const newest = newestInput(root, inputs);
  if (newest && newest.mtimeMs > startedAt) {
    return { fresh: false, reason: `${newest.file} changed after the last build` };
  }
  return { fresh: true, reason: `dist/ is fresh (built ${describeAge(now - startedAt)} ago, no source changed since)` };
}

function main() {
  const state = buildState();
  if (state.fresh) {
    console.log(`pretest: ${state.reason}`);
    return 0;
  }
  console.log(`pretest: building dist/ (production webpack) because ${state.reason}`);
  const started = Date.now();
  const cli = require.resolve("webpack-cli/bin/cli.js", { paths: [ROOT] });
  const config = path.join(ROOT, "addin", "webpack.config.js");
  const result = spawnSync(process.execPath, [cli, "--config", config, "--mode", "production", "--stats", "errors-only"], {
    cwd: ROOT,
    stdio: "inherit",
  });
  if (result.status !== 0) {
    console.error(`pretest: the build failed (exit ${result.status ?? result.signal}); run npm run build to see why`);
    return result.status || 1;
  }
  console.log(`pretest: built dist/ in ${describeAge(Date.now() - started)}`);
  return 0;
}

if (require.main === module) process.exitCode = main();

module.exports = { buildState, newestInput, INPUTS, STAMP };
