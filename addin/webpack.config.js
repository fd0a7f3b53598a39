/* global require, module, __dirname, process */
/* eslint-disable @typescript-eslint/no-require-imports -- a CommonJS config file, as webpack-cli loads it */
/**
 * Builds the add-in into dist/:
 *
 *   dist/
 *     taskpane.html          the shared-runtime page (task pane + cell functions): loads
 *                            office-js/office.js, then functions.js, then taskpane.js
 *     functions.js           cell functions (functions/functions.ts) and the shared fit cache
 *     taskpane.js            the side pane (taskpane/taskpane.ts); depends on functions.js, so
 *                            both share one module instance (one fit cache)
 *     fit.worker.js          the Web Worker running the engine (functions/fit.worker.ts)
 *     task.worker.js         the fit worker's task workers: folds and mixes in parallel
 *                            (functions/task.worker.ts, functions/taskPool.ts)
 *     charts.js              chunk loaded on demand when the first chart is drawn: echarts and
 *                            taskpane/charts (taskpane/charts/chartLibrary.ts)
 *     duckdb-session.js      chunk loaded on demand by the pane's "Fit from a file"
 *                            (taskpane/sources/duckdbSession.ts + the duckdb-wasm package)
 *     duckdb/                DuckDB's WebAssembly modules and their worker scripts (eh and mvp
 *                            builds), copied from @duckdb/duckdb-wasm: served from the add-in's
 *                            own origin, fetched only when a file is fitted
 *     functions.json         cell-function metadata generated from functions.ts's JSDoc, then
 *                            post-processed (allowErrorForDataTypeAny, see below)
 *     manifest.xml           the XML manifest: copied from the project root (dev-server URLs), or
 *                            with a base URL (addin/build.js --base-url) rewritten under that base
 *                            with <Version> from package.json (addin/hosting.js hostedManifest)
 *     assets/                icons, copied from addin/assets
 *     office-js/             office.js loader + Excel host files + locale strings, copied from
 *                            @microsoft/office-js (served locally: these machines are offline)
 *     *.map                  source maps (no eval: the add-in's page may run under a strict CSP)
 *     build-stamp.json       production builds only: when the build started (read by
 *                            addin/ensure-build.js, npm test's pretest)
 *
 * Every page carries addin/hosting.js CONTENT_SECURITY_POLICY (a <meta> tag first in taskpane.html's
 * <head>; see hosting.js for why each source is allowed).
 *
 * `npm run build:addin` = `webpack --config addin/webpack.config.js --mode production`.
 * `npm run build` = addin/build.js: type check, then this build; `-- --base-url URL` makes the
 * build for a web server of one's own (env.baseUrl here, or SHRINKWISE_BUILD_BASE_URL set by
 * build.js).
 * `webpack serve --config addin/webpack.config.js` serves https://localhost:3000 with the
 * certificate in .certs/ (made by addin/start.js); `--server-type http` serves plain http (tests).
 */
const fs = require("fs");
const path = require("path");
const webpack = require("webpack");
const HtmlWebpackPlugin = require("html-webpack-plugin");
const CopyWebpackPlugin = require("copy-webpack-plugin");
const CustomFunctionsMetadataPlugin = require("custom-functions-metadata-plugin");
// The user guide, docs/guide.md → dist/guide/index.html with its pictures (addin/guidePage.js).
const { GuidePagePlugin } = require("./guidePage");
const { CONTENT_SECURITY_POLICY, DEV_CONTENT_SECURITY_POLICY, hostedManifest, manifestVersion, parseBaseUrl } = require("./hosting");

const ROOT = path.resolve(__dirname, "..");
const DIST = path.join(ROOT, "dist");
const OFFICE_DIST = path.join(ROOT, "node_modules", "@microsoft", "office-js", "dist");
const FUNCTIONS_SOURCE = path.join(ROOT, "functions", "functions.ts");
const CERTS = path.join(ROOT, ".certs");
const DUCKDB_DIST = path.join(ROOT, "node_modules", "@duckdb", "duckdb-wasm", "dist");
const PORT = 3000;

/**
 * Top-level switches added to functions.json after generation; the JSDoc generator has no tag
 * for them. `allowErrorForDataTypeAny` is a top-level property (not per parameter: "All
 * parameters with the type any or any[][] can accept errors as input values when
 * allowErrorForDataTypeAny is set to true", custom functions JSON metadata reference). With it,
 * an error cell inside a data range reaches the function as a value (the row is skipped, see
 * functions/cells.ts) instead of Excel short-circuiting the whole call to that error.
 */
const METADATA_FLAGS = { allowErrorForDataTypeAny: true };

/** Collapses runs of whitespace (the line breaks of wrapped JSDoc) into single spaces. */
function oneLine(text) {
  return typeof text === "string" ? text.replace(/\s+/g, " ").trim() : text;
}

/**
 * Post-processes generated functions.json text: sets METADATA_FLAGS, and puts descriptions on
 * one line (Excel shows them as tooltips while the user types). Returns the new text.
 */
function postProcessMetadata(text) {
  const metadata = JSON.parse(text);
  Object.assign(metadata, METADATA_FLAGS);
  for (const fn of metadata.functions || []) {
    if (fn.description !== undefined) fn.description = oneLine(fn.description);
    for (const parameter of fn.parameters || []) {
      if (parameter.description !== undefined) parameter.description = oneLine(parameter.description);
    }
  }
  return JSON.stringify(metadata, null, 2);
}

/**
 * Post-processes functions.json, and removes the metadata plugin's loader that appends
 * unguarded `CustomFunctions.associate(...)` calls to functions.ts: functions.ts registers its
 * functions itself, guarded for pages where the CustomFunctions global is missing.
 */
class FunctionsMetadataFinish {
  apply(compiler) {
    const name = "FunctionsMetadataFinish";
    const pluginLoader = require.resolve("custom-functions-metadata-plugin/lib/loader.js");
    compiler.hooks.compilation.tap(name, (compilation) => {
      if (compilation.compiler.isChild()) return;
      webpack.NormalModule.getCompilationHooks(compilation).beforeLoaders.tap(name, (loaders) => {
        for (let i = loaders.length - 1; i >= 0; i--) if (loaders[i].loader === pluginLoader) loaders.splice(i, 1);
      });
      compilation.hooks.processAssets.tap({ name, stage: webpack.Compilation.PROCESS_ASSETS_STAGE_ADDITIONS }, () => {
        const asset = compilation.getAsset("functions.json");
        if (!asset) {
          // The metadata plugin reports its own errors; without them a missing file is ours to report.
          if (compilation.errors.length === 0) compilation.errors.push(new webpack.WebpackError("functions.json was not generated"));
          return;
        }
        const text = postProcessMetadata(asset.source.source().toString());
        compilation.updateAsset("functions.json", new webpack.sources.RawSource(text));
      });
    });
  }
}

/**
 * Ends a production build with build-stamp.json: the time this build started. addin/ensure-build.js
 * (npm test's pretest) compares it with the sources' modification times to decide whether dist/
 * is fresh or must be built again. Emitted as an asset, so it is written only with a complete
 * build (a production build with errors emits nothing).
 */
class BuildStamp {
  apply(compiler) {
    const name = "BuildStamp";
    let startedAt = Date.now();
    const start = (_compiler, done) => {
      startedAt = Date.now();
      done();
    };
    compiler.hooks.run.tapAsync(name, start);
    compiler.hooks.watchRun.tapAsync(name, start);
    compiler.hooks.thisCompilation.tap(name, (compilation) => {
      compilation.hooks.processAssets.tap({ name, stage: webpack.Compilation.PROCESS_ASSETS_STAGE_REPORT }, () => {
        const text = JSON.stringify({ startedAt, startedAtIso: new Date(startedAt).toISOString(), writtenBy: "addin/webpack.config.js" }, null, 2);
        compilation.emitAsset("build-stamp.json", new webpack.sources.RawSource(text));
      });
    });
  }
}

/** office.js and what it loads for Excel, already minified (Terser would take minutes on them). */
function officeJsPatterns() {
  const minimized = { minimized: true };
  const files = [
    "office.js",
    "o15apptofilemappingtable.js",
    "custom-functions-runtime.js",
    "es6-promise.js",
    "telemetry/oteljs_agave.js",
    "excel-*.js",
    "excelwebapp-*.js",
    "excelios-*.js",
    "*/office_strings.js",
  ];
  return files.map((from) => ({
    from,
    context: OFFICE_DIST,
    to: "office-js/",
    info: minimized,
    globOptions: { ignore: ["**/*.debug.js"] },
    noErrorOnMissing: from !== "office.js",
    ...(from === "o15apptofilemappingtable.js" ? { transform: withoutTelemetryFrame } : {}),
  }));
}

/**
 * DuckDB for "Fit from a file" (taskpane/sources/duckdbSession.ts DUCKDB_FILES): the WebAssembly
 * modules and worker scripts of the two browser builds the pane may pick, served from dist/duckdb/
 * (never a CDN). Already minified upstream, so marked minimized (Terser would take minutes).
 * Not copied: the cross-origin-isolated threaded build (an add-in page is not isolated) and the
 * Node builds.
 */
function duckdbPatterns() {
  const files = ["duckdb-mvp.wasm", "duckdb-eh.wasm", "duckdb-browser-mvp.worker.js", "duckdb-browser-eh.worker.js"];
  return files.map((from) => ({ from, context: DUCKDB_DIST, to: "duckdb/", info: { minimized: true } }));
}

/**
 * Outside an Office host (the standalone preview) office.js falls back to
 * o15apptofilemappingtable.js, whose logger opens a frame on a remote telemetry page three
 * seconds after load. The add-in makes no network calls, so the copy served from dist/ points
 * that frame at about:blank. The build fails if the address is not found (a new office-js
 * version must be looked at again); test/browser/page.test.ts checks no request leaves the page.
 */
const TELEMETRY_FRAME = "https://telemetryservice.firstpartyapps.oaspapps.com/telemetryservice/telemetryproxy.html";
function withoutTelemetryFrame(content) {
  const text = content.toString();
  if (!text.includes(TELEMETRY_FRAME)) {
    throw new Error("o15apptofilemappingtable.js no longer holds the telemetry frame address: review what it loads before shipping it");
  }
  return text.split(TELEMETRY_FRAME).join("about:blank");
}

/**
 * https with the certificate from .certs/ when present, else webpack-dev-server's own
 * self-signed one; plain http when SHRINKWISE_HTTP=1 (set by `npm start -- --http`). The
 * command line's `--server-type http` overrides this either way.
 */
function serverOption() {
  if (process.env.SHRINKWISE_HTTP === "1") return "http";
  const key = path.join(CERTS, "localhost.key");
  const cert = path.join(CERTS, "localhost.crt");
  if (fs.existsSync(key) && fs.existsSync(cert)) {
    return { type: "https", options: { key: fs.readFileSync(key), cert: fs.readFileSync(cert) } };
  }
  return "https";
}

/**
 * The base URL of a hosted build, checked (addin/hosting.js parseBaseUrl), or null for the
 * development manifest. From `env.baseUrl` (webpack's --env, or the tests' config call) or
 * SHRINKWISE_BUILD_BASE_URL (set by addin/build.js); `allowHttpLoopback` likewise.
 */
function baseUrlOf(env) {
  const given = env.baseUrl ?? process.env.SHRINKWISE_BUILD_BASE_URL;
  if (given === undefined || given === "") return null;
  const allowHttpLoopback = env.allowHttpLoopback === true || env.allowHttpLoopback === "true" || process.env.SHRINKWISE_BUILD_ALLOW_HTTP_LOOPBACK === "1";
  return parseBaseUrl(given, { allowHttpLoopback });
}

/** manifest.xml's copy: as it is, or rewritten for `baseUrl` with package.json's version. */
function manifestPattern(baseUrl) {
  const pattern = { from: "manifest.xml", to: "manifest.xml", noErrorOnMissing: baseUrl === null };
  if (baseUrl === null) return pattern;
  const version = manifestVersion(JSON.parse(fs.readFileSync(path.join(ROOT, "package.json"), "utf8")).version);
  return { ...pattern, transform: (content) => hostedManifest(content.toString(), baseUrl, version) };
}

module.exports = (env = {}, argv = {}) => {
  const production = (argv.mode || process.env.NODE_ENV) === "production";
  const baseUrl = baseUrlOf(env || {});
  return {
    mode: production ? "production" : "development",
    context: ROOT,
    target: "web",
    entry: {
      functions: "./functions/functions.ts",
      // dependOn: the pane's bundle reuses the functions bundle's modules on the same page, so
      // the task pane and the cell functions share one fit cache.
      taskpane: { import: "./taskpane/taskpane.ts", dependOn: "functions" },
      "fit.worker": "./functions/fit.worker.ts",
      // Started by the fit worker: its pool of task workers for parallel folds (functions/taskPool.ts).
      "task.worker": "./functions/task.worker.ts",
    },
    output: {
      path: DIST,
      filename: "[name].js",
      // Chunks loaded on demand (import()), named by their webpackChunkName: duckdb-session.js.
      chunkFilename: "[name].js",
      clean: true,
    },
    resolve: { extensions: [".ts", ".js"] },
    // Chunks loaded on demand stay whole (sums-pane.js, duckdb-session.js with the duckdb-wasm
    // package inside), not split further into numbered vendor chunks.
    optimization: { splitChunks: { cacheGroups: { defaultVendors: false, default: false } } },
    module: {
      rules: [
        {
          test: /\.ts$/,
          exclude: /node_modules/,
          use: {
            loader: "ts-loader",
            options: { configFile: path.join(__dirname, "tsconfig.webpack.json"), transpileOnly: true },
          },
        },
      ],
    },
    // No eval-based source maps: they need 'unsafe-eval' under a content security policy.
    devtool: "source-map",
    performance: {
      hints: production ? "warning" : false,
      // Only our own bundles count; the copied Office and DuckDB files are large by nature, the
      // DuckDB chunk is fetched only when a file is fitted, and the chart chunk (echarts) only
      // when the first chart is drawn: the advisory is about what the page loads to start.
      assetFilter: (file) => /\.js$/.test(file) && !file.startsWith("office-js/") && !file.startsWith("duckdb/") && file !== "duckdb-session.js" && file !== "charts.js",
      maxAssetSize: 600 * 1024,
      maxEntrypointSize: 800 * 1024,
    },
    plugins: [
      ...(production ? [new BuildStamp()] : []),
      new CustomFunctionsMetadataPlugin({ input: FUNCTIONS_SOURCE, output: "functions.json" }),
      new FunctionsMetadataFinish(),
      new GuidePagePlugin(),
      new HtmlWebpackPlugin({
        filename: "taskpane.html",
        template: "./taskpane/taskpane.html",
        chunks: ["functions", "taskpane"],
        chunksSortMode: "manual",
        // The page's Content-Security-Policy, written by the template as the first tag after the
        // charset (a <meta> policy governs only what comes after it). The development build adds
        // 'unsafe-eval' for webpack-dev-server's client only (hosting.js DEV_CONTENT_SECURITY_POLICY);
        // its source maps are separate files and its live-reload socket is on the page's origin.
        csp: production ? CONTENT_SECURITY_POLICY : DEV_CONTENT_SECURITY_POLICY,
      }),
      new CopyWebpackPlugin({
        patterns: [
          ...officeJsPatterns(),
          ...duckdbPatterns(),
          manifestPattern(baseUrl),
          {
            from: "addin/assets",
            to: "assets/",
            globOptions: { ignore: ["**/*.ts", "**/*.js", "**/*.md"] },
            noErrorOnMissing: true,
          },
        ],
      }),
    ],
    devServer: {
      host: "localhost",
      port: PORT,
      server: serverOption(),
      headers: { "Access-Control-Allow-Origin": "*" },
      static: false,
      hot: false,
      liveReload: true,
      client: {
        overlay: {
          warnings: false,
          errors: true,
          // Uncaught runtime errors cover the page, except Chromium's "ResizeObserver loop
          // completed with undelivered notifications": a notice that some size changes wait for
          // the next frame, not a failure (the pane defers its chart resizes so it should not
          // happen; an extension or a future layout may still cause it). webpack-dev-server
          // sends this function to the page as source text and rebuilds it there, so it must
          // not use anything else from this file. Return false = no overlay for that error.
          runtimeErrors: (error) => !/ResizeObserver loop/.test(String(error && error.message)),
        },
      },
    },
  };
};

module.exports.postProcessMetadata = postProcessMetadata;
module.exports.METADATA_FLAGS = METADATA_FLAGS;
