#!/usr/bin/env node
/* global require, module, process, console, URL */
/* eslint-disable @typescript-eslint/no-require-imports -- plain CommonJS, run by node directly and by the tests */
/**
 * A plain static web server for a built dist/, the way any web host would serve it: files only,
 * under a path prefix (e.g. /shrinkwise/), with the pages' Content-Security-Policy also sent as a
 * response header (addin/hosting.js CONTENT_SECURITY_POLICY: a worker script takes its policy from
 * its own response, not from the page's <meta> tag). Nothing outside the prefix is served.
 *
 * Used by test/addin/hosted.test.ts; also handy to try a hosted build by hand:
 *   node addin/hosted.js DIR [--prefix /shrinkwise/] [--port 8080]
 * serves http://127.0.0.1:PORT/shrinkwise/ (plain http on the loopback address only: Excel wants
 * https, which your real web server provides).
 */
"use strict";

const fs = require("fs");
const http = require("http");
const path = require("path");
const { CONTENT_SECURITY_POLICY } = require("./hosting");

const TYPES = {
  ".html": "text/html; charset=utf-8",
  ".js": "text/javascript; charset=utf-8",
  ".json": "application/json; charset=utf-8",
  ".xml": "application/xml; charset=utf-8",
  ".png": "image/png",
  ".css": "text/css; charset=utf-8",
  ".map": "application/json; charset=utf-8",
  ".txt": "text/plain; charset=utf-8",
  ".md": "text/markdown; charset=utf-8",
  // Browsers compile a streamed WebAssembly module only with this type.
  ".wasm": "application/wasm",
};

/**
 * Serves `root` under `prefix` on 127.0.0.1:`port` (0 = any free port). Resolves to
 * `{ url, base, served, close }`: `base` is url + prefix, `served` lists every request path
 * (served or not) in order.
 */
function startHostedServer({ root, prefix = "/shrinkwise/", port = 0, headers = { "Content-Security-Policy": CONTENT_SECURITY_POLICY } }) {
  const top = path.resolve(root);
  if (!prefix.startsWith("/") || !prefix.endsWith("/")) throw new Error(`the prefix must start and end with '/', not '${prefix}'`);
  const served = [];
  const server = http.createServer((request, response) => {
    const pathname = new URL(request.url ?? "/", "http://localhost").pathname;
    served.push(pathname);
    let relative = null;
    if (pathname.startsWith(prefix)) {
      try {
        relative = decodeURIComponent(pathname.slice(prefix.length)) || "taskpane.html";
      } catch {
        relative = null;
      }
    }
    const file = relative === null ? null : path.resolve(top, relative);
    if (file === null || !file.startsWith(top + path.sep) || !fs.existsSync(file) || !fs.statSync(file).isFile()) {
      response.writeHead(404, { "Content-Type": "text/plain; charset=utf-8" });
      response.end("not found");
      return;
    }
    response.writeHead(200, { ...headers, "Content-Type": TYPES[path.extname(file)] ?? "application/octet-stream" });
    fs.createReadStream(file).pipe(response);
  });
  return new Promise((resolve, reject) => {
    server.once("error", reject);
    server.listen(port, "127.0.0.1", () => {
      const url = `http://127.0.0.1:${server.address().port}`;
      resolve({
        url,
        base: `${url}${prefix}`,
        served,
        close: () => new Promise((done) => server.close(() => done())),
      });
    });
  });
}

async function main(argv) {
  const options = { root: null, prefix: "/shrinkwise/", port: 8080 };
  for (let i = 0; i < argv.length; i++) {
    if (argv[i] === "--prefix") options.prefix = argv[++i];
    else if (argv[i] === "--port") options.port = Number(argv[++i]);
    else if (options.root === null && !argv[i].startsWith("--")) options.root = argv[i];
    else {
      console.error(`hosted: unknown argument '${argv[i]}' (usage: node addin/hosted.js DIR [--prefix /shrinkwise/] [--port 8080])`);
      return 2;
    }
  }
  if (options.root === null || !fs.existsSync(path.join(options.root, "taskpane.html"))) {
    console.error("hosted: give a built folder holding taskpane.html (npm run build -- --base-url http://127.0.0.1:8080/shrinkwise/ --allow-http-loopback --out DIR)");
    return 2;
  }
  const server = await startHostedServer(options);
  console.log(`serving ${options.root} at ${server.base} (Ctrl+C stops)`);
  return 0;
}

if (require.main === module) {
  main(process.argv.slice(2)).then((code) => {
    if (code !== 0) process.exitCode = code;
  });
}

module.exports = { startHostedServer, TYPES };
