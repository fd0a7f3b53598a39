#!/usr/bin/env node
/* global require, module, __dirname, process, console */
/* eslint-disable @typescript-eslint/no-require-imports -- plain CommonJS, run by node directly */
/**
 * `npm run build`: the strict type check, then the production webpack build into dist/.
 *
 *   npm run build                                         dev manifest (https://localhost:3000), as before
 *   npm run build -- --base-url https://host.example/shrinkwise/
 *                                                         dist/manifest.xml points under that base,
 *                                                         <Version> from package.json
 *   npm run build -- --base-url URL --out DIR              into DIR instead of dist/
 *
 * SHRINKWISE_BASE_URL in the environment stands for --base-url (the flag wins). Flags:
 *   --no-typecheck          skip the type check (the tests, whose ts-jest already type-checks)
 *   --allow-http-loopback   for tests only: also accept http://127.0.0.1[:port]/...
 * A base URL that is not an absolute https address, or an unknown flag, is one line on stderr
 * and exit 2. A failed type check or build exits 1.
 *
 * The webpack step runs webpack-cli in a child process (the same output as before), handing it
 * the checked base through SHRINKWISE_BUILD_BASE_URL (addin/webpack.config.js baseUrlOf).
 */
"use strict";

const path = require("path");
const { spawnSync } = require("child_process");
const { BaseUrlError, UsageError, baseUrlOf, readFlags } = require("./hosting");

const ROOT = path.resolve(__dirname, "..");

/** `{ baseUrl, out, typecheck, allowHttpLoopback }` from the arguments and the environment. */
function parseArgs(argv, env = process.env) {
  const flags = readFlags(argv, {
    withValue: ["--base-url", "--out"],
    switches: ["--no-typecheck", "--allow-http-loopback"],
    known: "--base-url URL, --out DIR, --no-typecheck, --allow-http-loopback",
  });
  const allowHttpLoopback = flags["--allow-http-loopback"] === true;
  const options = {
    baseUrl: baseUrlOf(flags["--base-url"], env, allowHttpLoopback),
    out: flags["--out"] === undefined ? null : path.resolve(flags["--out"]),
    typecheck: flags["--no-typecheck"] !== true,
    allowHttpLoopback,
  };
  if (options.out !== null && options.out === ROOT) throw new UsageError("--out must not be the project folder (the build empties it first)");
  return options;
}

function run(command, args, env) {
  const result = spawnSync(command, args, { cwd: ROOT, stdio: "inherit", env });
  return result.status ?? 1;
}

function main(argv = process.argv.slice(2)) {
  let options;
  try {
    options = parseArgs(argv);
  } catch (error) {
    if (error instanceof UsageError || error instanceof BaseUrlError) {
      console.error(`build: ${error.message}`);
      return 2;
    }
    throw error;
  }
  if (options.typecheck) {
    const tsc = require.resolve("typescript/bin/tsc", { paths: [ROOT] });
    const status = run(process.execPath, [tsc, "-p", "tsconfig.json", "--noEmit"], process.env);
    if (status !== 0) return 1;
  }
  const cli = require.resolve("webpack-cli/bin/cli.js", { paths: [ROOT] });
  const args = [cli, "--config", path.join(ROOT, "addin", "webpack.config.js"), "--mode", "production"];
  if (options.out) args.push("--output-path", options.out);
  const env = { ...process.env, SHRINKWISE_BUILD_BASE_URL: options.baseUrl ?? "", SHRINKWISE_BUILD_ALLOW_HTTP_LOOPBACK: options.allowHttpLoopback ? "1" : "" };
  const status = run(process.execPath, args, env);
  if (status !== 0) return 1;
  if (options.baseUrl) {
    const out = options.out ?? path.join(ROOT, "dist");
    console.log(`build: ${path.relative(process.cwd(), out) || "."}/ is built for ${options.baseUrl} (manifest.xml points there); copy the folder's files to that address`);
  }
  return 0;
}

if (require.main === module) process.exitCode = main();

module.exports = { parseArgs, main };
