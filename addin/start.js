#!/usr/bin/env node
/* global require, module, __dirname, process, console, setTimeout */
/* eslint-disable @typescript-eslint/no-require-imports -- plain CommonJS, run by node directly */
/**
 * `npm start`: serve the Shrinkwise add-in for development.
 *
 *   1. makes a self-signed certificate for localhost in .certs/ (with openssl) unless one is there;
 *   2. runs the webpack dev server (addin/webpack.config.js) on https://localhost:3000;
 *   3. once it answers, prints how to load manifest.xml into Excel (desktop or web) and the address
 *      of the standalone preview, which works in any browser without Excel.
 *
 * Options (after `npm start --`):
 *   --http         serve over plain http (no certificate, no openssl). Only the standalone preview
 *                  works this way: Excel loads add-ins over https only.
 *   --certs-only   make the certificate if missing, print the instructions, and exit.
 *   --help         this text.
 * Environment: OPENSSL=/path/to/openssl picks the openssl program (default: `openssl` on PATH).
 *
 * Plain Node (CommonJS) on purpose: no TypeScript step and no extra dependencies.
 * office-addin-dev-certs is not used: it wants administrator rights to trust its certificate.
 */
"use strict";

const { spawn, spawnSync } = require("child_process");
const fs = require("fs");
const https = require("https");
const http = require("http");
const path = require("path");

const ROOT = path.resolve(__dirname, "..");
const CERT_DIR = path.join(ROOT, ".certs");
const KEY_FILE = path.join(CERT_DIR, "localhost.key");
const CERT_FILE = path.join(CERT_DIR, "localhost.crt");
const CONFIG = path.join(ROOT, "addin", "webpack.config.js");
const PORT = 3000;

const HELP = `Usage: npm start [-- --http | --certs-only | --help]

Serves the Shrinkwise add-in on https://localhost:${PORT} (certificate in .certs/, made with openssl).
  --http         plain http, no certificate: the standalone preview only (Excel needs https)
  --certs-only   make the certificate if missing, print how to sideload, exit
Environment: OPENSSL=/path/to/openssl`;

/** Options from the command line; unknown options are an error. */
function parseArgs(argv) {
  const options = { http: false, certsOnly: false, help: false };
  for (const arg of argv) {
    if (arg === "--http") options.http = true;
    else if (arg === "--certs-only") options.certsOnly = true;
    else if (arg === "--help" || arg === "-h") options.help = true;
    else throw new Error(`unknown option '${arg}'\n\n${HELP}`);
  }
  return options;
}

/** Makes .certs/localhost.{key,crt} with openssl unless both exist. Returns false (after explaining) when it can't. */
function ensureCertificate() {
  if (fs.existsSync(KEY_FILE) && fs.existsSync(CERT_FILE)) {
    console.log(`Using the certificate in ${path.relative(ROOT, CERT_DIR)}/ (delete the folder to make a new one).`);
    return true;
  }
  const openssl = process.env.OPENSSL || "openssl";
  const probe = spawnSync(openssl, ["version"], { encoding: "utf8" });
  if (probe.error || probe.status !== 0) {
    console.error(
      [
        `Shrinkwise: could not run '${openssl}' to make a certificate for https://localhost:${PORT}.`,
        "  Install OpenSSL (Debian/Ubuntu: sudo apt-get install openssl; macOS: it ships with the system;",
        "  Windows: it comes with Git for Windows, e.g. set OPENSSL=C:\\Program Files\\Git\\usr\\bin\\openssl.exe),",
        "  or put your own localhost certificate at .certs/localhost.key and .certs/localhost.crt,",
        "  or run `npm start -- --http` to serve the standalone preview over plain http (Excel itself needs https).",
      ].join("\n"),
    );
    return false;
  }
  fs.mkdirSync(CERT_DIR, { recursive: true });
  const args = [
    "req", "-x509", "-newkey", "rsa:2048", "-nodes", "-days", "365",
    "-subj", "/CN=localhost",
    "-addext", "subjectAltName=DNS:localhost,IP:127.0.0.1",
    "-keyout", KEY_FILE, "-out", CERT_FILE,
  ];
  // MSYS_NO_PATHCONV stops Git for Windows' openssl from rewriting "/CN=localhost" as a path.
  const made = spawnSync(openssl, args, { encoding: "utf8", env: { ...process.env, MSYS_NO_PATHCONV: "1" } });
  if (made.status !== 0 || !fs.existsSync(KEY_FILE) || !fs.existsSync(CERT_FILE)) {
    console.error(`Shrinkwise: openssl could not make the certificate:\n${made.stderr || made.error}`);
    console.error("  (OpenSSL 1.1.1 or newer is needed for -addext.) Or run `npm start -- --http` for the standalone preview.");
    return false;
  }
  console.log(`Made a self-signed certificate for localhost in ${path.relative(ROOT, CERT_DIR)}/ (valid 365 days).`);
  return true;
}

/** The text printed once the server answers (or with --certs-only). */
function instructions(scheme) {
  const origin = `${scheme}://localhost:${PORT}`;
  const lines = [
    "",
    "──────────────────────────────────────────────────────────────────────────────",
    ` Shrinkwise dev server: ${origin}`,
    "",
    ` Standalone preview (any browser, no Excel needed): ${origin}/taskpane.html`,
    "   The demo roastery data and what each SHRINK function returns on it, computed live.",
  ];
  if (scheme === "http") {
    lines.push("", " Plain http: Excel will not load the add-in from this server. Run `npm start` (https) for that.");
  } else {
    lines.push(
      "",
      " The certificate is self-signed. Browsers show a warning once (you can proceed to localhost);",
      " Excel needs it trusted by the system. Trust .certs/localhost.crt yourself, e.g.",
      "   Windows: certutil -user -addstore Root .certs\\localhost.crt",
      "   macOS:   security add-trusted-cert -r trustRoot -k ~/Library/Keychains/login.keychain-db .certs/localhost.crt",
      "",
      " Load the add-in (manifest.xml) into Excel:",
      "   Excel on the web: open a workbook, Home > Add-ins (or Insert > Add-ins) > More Add-ins >",
      "     Upload My Add-in > choose manifest.xml from this folder.",
      "   Excel on Windows or Mac: in another terminal run `npx office-addin-debugging start manifest.xml`",
      "     (Microsoft's sideloading tool, fetched by npx on demand; it opens Excel with the add-in), or",
      "     Windows: share a folder holding manifest.xml, add it under File > Options > Trust Center >",
      "       Trust Center Settings > Trusted Add-in Catalogs (Show in Menu), restart Excel, then",
      "       Insert > My Add-ins > Shared Folder;",
      "     Mac: copy manifest.xml to ~/Library/Containers/com.microsoft.Excel/Data/Documents/wef/",
      "       and restart Excel; it appears under Insert > My Add-ins.",
      "   Then Data > Shrinkage Models opens the pane; type =SHRINK. in a cell to see the functions.",
    );
  }
  lines.push("──────────────────────────────────────────────────────────────────────────────", "");
  return lines.join("\n");
}

/** Polls the preview page until the server answers (any status), then calls `ready`. */
function whenServing(scheme, ready) {
  const client = scheme === "https" ? https : http;
  const started = Date.now();
  const attempt = () => {
    const request = client.get(
      { host: "localhost", port: PORT, path: "/taskpane.html", rejectUnauthorized: false, timeout: 2000 },
      (response) => {
        response.resume();
        ready();
      },
    );
    request.on("error", retry);
    request.on("timeout", () => request.destroy());
  };
  const retry = () => {
    if (Date.now() - started > 5 * 60 * 1000) {
      console.error(`Shrinkwise: nothing answered on ${scheme}://localhost:${PORT} after 5 minutes; see the webpack output above.`);
      return;
    }
    setTimeout(attempt, 1000);
  };
  attempt();
}

/** Runs `webpack serve` from the project's own webpack-cli (no shell, works the same on Windows). */
function serve(scheme) {
  let cli;
  try {
    cli = require.resolve("webpack-cli/bin/cli.js", { paths: [ROOT] });
  } catch {
    console.error("Shrinkwise: webpack-cli is not installed. Run `npm ci` first.");
    return 1;
  }
  if (!fs.existsSync(CONFIG)) {
    console.error(`Shrinkwise: ${path.relative(ROOT, CONFIG)} is missing.`);
    return 1;
  }
  // The config picks the server itself: https with .certs/localhost.{key,crt} (made above), or
  // plain http when SHRINKWISE_HTTP=1. (No --server-type here: webpack-cli cannot combine it
  // with the config's plain "http" value.)
  const args = [cli, "serve", "--config", CONFIG, "--mode", "development", "--port", String(PORT)];
  const child = spawn(process.execPath, args, {
    cwd: ROOT,
    stdio: "inherit",
    env: { ...process.env, SHRINKWISE_HTTP: scheme === "http" ? "1" : "" },
  });
  for (const signal of ["SIGINT", "SIGTERM"]) {
    process.on(signal, () => child.kill(signal));
  }
  whenServing(scheme, () => console.log(instructions(scheme)));
  child.on("exit", (code, signal) => {
    process.exit(code ?? (signal ? 1 : 0));
  });
  return null;
}

function main() {
  let options;
  try {
    options = parseArgs(process.argv.slice(2));
  } catch (error) {
    console.error(`Shrinkwise: ${error.message}`);
    return 2;
  }
  if (options.help) {
    console.log(HELP);
    return 0;
  }
  const scheme = options.http ? "http" : "https";
  if (scheme === "https" && !ensureCertificate()) return 1;
  if (options.certsOnly) {
    console.log(instructions(scheme));
    return 0;
  }
  return serve(scheme);
}

if (require.main === module) {
  const code = main();
  if (code !== null) process.exitCode = code;
}

module.exports = { parseArgs, instructions };
