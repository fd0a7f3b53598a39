/* global require, module, __dirname, process */
/* eslint-disable @typescript-eslint/no-require-imports -- plain CommonJS, loaded by jest directly */
/**
 * Jest's global teardown: stops the ClickHouse test server when this test run started it
 * (test/helpers/requirements.ts clickhouseServer() leaves a mark), and leaves it alone when it was
 * already running (CI starts it in .ci/run and stops it there).
 */
const { spawnSync } = require("child_process");
const { existsSync, rmSync } = require("fs");
const { join } = require("path");

module.exports = async function stopClickHouseTestServer() {
  const mark = join(process.env.SHRINKWISE_CLICKHOUSE_HOME || "/tmp/shrinkwise-clickhouse", "started-by-jest");
  if (!existsSync(mark)) return;
  rmSync(mark, { force: true });
  const stopped = spawnSync(join(__dirname, "server.sh"), ["stop"], { encoding: "utf8", timeout: 90_000 });
  if (stopped.status !== 0) process.stderr.write(`test/clickhouse/teardown.js: server.sh stop failed: ${stopped.stderr}\n`);
};
