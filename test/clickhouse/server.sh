#!/usr/bin/env bash
# The ClickHouse test server (config.xml and users.xml beside this file): loopback only, ports
# 18123 (HTTP) and 19000 (native), every file under /tmp/shrinkwise-clickhouse (override with
# SHRINKWISE_CLICKHOUSE_HOME). Runs as the calling user (root in CI).
#
#   server.sh start    start as a daemon (pid file), wait until `SELECT 1` answers over HTTP,
#                      create the schema (schema.sql); nothing to do when it already runs
#   server.sh stop     stop it and wait until it has gone; nothing to do when it is not running
#   server.sh status   "running (pid N) at URL" and exit 0, or "not running" and exit 3
#   server.sh url      print the HTTP URL (for SHRINKWISE_CLICKHOUSE_URL)
#
# SHRINKWISE_CLICKHOUSE_SERVER names the server binary (default: clickhouse-server on the PATH,
# then /usr/sbin/clickhouse-server); SHRINKWISE_CLICKHOUSE_START_TIMEOUT the seconds to wait (60).
set -euo pipefail

here="$(cd "$(dirname "$0")" && pwd)"
home="${SHRINKWISE_CLICKHOUSE_HOME:-/tmp/shrinkwise-clickhouse}"
pidfile="$home/server.pid"
port=18123
url="http://127.0.0.1:$port"
timeout="${SHRINKWISE_CLICKHOUSE_START_TIMEOUT:-60}"

find_server() {
  if [ -n "${SHRINKWISE_CLICKHOUSE_SERVER:-}" ]; then echo "$SHRINKWISE_CLICKHOUSE_SERVER"; return; fi
  if command -v clickhouse-server >/dev/null 2>&1; then command -v clickhouse-server; return; fi
  echo /usr/sbin/clickhouse-server
}

# The pid from the pid file when that process is alive, else nothing.
running_pid() {
  [ -s "$pidfile" ] || return 1
  local pid
  pid="$(tr -dc '0-9' <"$pidfile")"
  [ -n "$pid" ] && kill -0 "$pid" 2>/dev/null || return 1
  echo "$pid"
}

# One query POSTed over HTTP (Node's fetch: Node is there wherever the tests run, curl need not
# be); prints the answer, fails with the server's message when the server refuses it.
query() {
  node -e '
    const [url, sql, seconds] = process.argv.slice(1);
    fetch(url, { method: "POST", body: sql, signal: AbortSignal.timeout(Number(seconds) * 1000) })
      .then(async (response) => {
        const text = await response.text();
        if (!response.ok) { process.stderr.write(`server.sh: ${url} answered ${response.status}: ${text.split("\n")[0]}\n`); process.exit(1); }
        process.stdout.write(text);
      })
      .catch(() => process.exit(1));
  ' "$url/" "$1" "${2:-30}"
}

answers() {
  [ "$(query 'SELECT 1' 2 2>/dev/null)" = "1" ]
}

# Runs schema.sql one statement at a time (the HTTP interface takes one per request): statements
# end with a semicolon at the end of a line; lines starting with two dashes are skipped.
load_schema() {
  node -e '
    const [url, file] = process.argv.slice(1);
    const lines = require("fs").readFileSync(file, "utf8").split("\n").filter((l) => l.trim() !== "" && !l.startsWith("--"));
    const statements = lines.join("\n").split(/;\s*$/m).map((s) => s.trim()).filter((s) => s !== "");
    (async () => {
      for (const sql of statements) {
        const response = await fetch(url, { method: "POST", body: sql, signal: AbortSignal.timeout(30000) });
        if (!response.ok) throw new Error(`${(await response.text()).split("\n")[0]} (in: ${sql.slice(0, 80)}...)`);
      }
    })().catch((error) => { process.stderr.write(`server.sh: schema.sql: ${error.message}\n`); process.exit(1); });
  ' "$url/" "$here/schema.sql"
}

start() {
  if pid="$(running_pid)"; then
    echo "ClickHouse test server already running (pid $pid) at $url"
    load_schema
    return 0
  fi
  local server
  server="$(find_server)"
  if [ ! -x "$server" ]; then
    echo "server.sh: $server is not installed (apt-get install -y clickhouse-server clickhouse-client)" >&2
    exit 1
  fi
  if answers; then
    echo "server.sh: something else already answers at $url; stop it first (this script only manages the server it started)" >&2
    exit 1
  fi
  mkdir -p "$home/log" "$home/data" "$home/tmp" "$home/user_files" "$home/format_schemas"
  # The paths in config.xml are fixed; a different home gets a copy of it with the paths rewritten.
  local config="$here/config.xml"
  if [ "$home" != "/tmp/shrinkwise-clickhouse" ]; then
    sed "s#/tmp/shrinkwise-clickhouse#$home#g" "$here/config.xml" >"$home/config.xml"
    cp "$here/users.xml" "$home/users.xml"
    config="$home/config.xml"
  fi
  rm -f "$pidfile"
  if ! (cd "$home" && "$server" --config-file="$config" --pid-file="$pidfile" --daemon); then
    echo "server.sh: $server did not start; see $home/log/server.err.log" >&2
    grep -E "<(Error|Fatal)>" "$home/log/server.err.log" 2>/dev/null | tail -n 2 >&2 || true
    exit 1
  fi
  local started=$SECONDS
  until answers; do
    if [ $((SECONDS - started)) -ge "$timeout" ]; then
      echo "server.sh: ClickHouse did not answer 'SELECT 1' at $url within ${timeout}s; see $home/log/server.err.log" >&2
      grep -E "<(Error|Fatal)>" "$home/log/server.err.log" 2>/dev/null | tail -n 2 >&2 || true
      exit 1
    fi
    if [ $((SECONDS - started)) -ge 2 ] && ! running_pid >/dev/null; then
      echo "server.sh: ClickHouse exited while starting; see $home/log/server.err.log" >&2
      grep -E "<(Error|Fatal)>" "$home/log/server.err.log" 2>/dev/null | tail -n 2 >&2 || true
      exit 1
    fi
    sleep 0.5
  done
  load_schema
  echo "ClickHouse test server running (pid $(running_pid)) at $url"
}

stop() {
  local pid
  if ! pid="$(running_pid)"; then
    rm -f "$pidfile"
    echo "ClickHouse test server not running"
    return 0
  fi
  kill -TERM "$pid"
  local waited=0
  while kill -0 "$pid" 2>/dev/null; do
    if [ "$waited" -ge 60 ]; then
      echo "server.sh: ClickHouse (pid $pid) still running 30s after SIGTERM; sending SIGKILL" >&2
      kill -KILL "$pid" 2>/dev/null || true
      break
    fi
    sleep 0.5
    waited=$((waited + 1))
  done
  rm -f "$pidfile"
  echo "ClickHouse test server stopped"
}

status() {
  local pid
  if pid="$(running_pid)"; then
    echo "running (pid $pid) at $url"
  else
    echo "not running"
    exit 3
  fi
}

# Start and stop hold a lock, so that test files starting the server at the same time (jest runs
# them in parallel) neither start it twice nor stop it under each other.
locked() {
  mkdir -p "$home"
  exec 9>"$home/server.lock"
  flock -w 180 9 || { echo "server.sh: another server.sh held $home/server.lock for 3 minutes" >&2; exit 1; }
  "$@"
}

case "${1:-}" in
  start) locked start ;;
  stop) locked stop ;;
  status) status ;;
  url) echo "$url" ;;
  *)
    echo "usage: $0 start|stop|status|url" >&2
    exit 2
    ;;
esac
