#!/usr/bin/env bash
# Run a command with a throwaway S3-compatible server: where files attached to units are
# kept when RIMEWATCH_FILE_STORAGE=s3 (docs/deployment.md). Starts moto's server (a dev
# dependency in pyproject.toml, so `make install` brings it) on a free local port, in
# memory, exports RIMEWATCH_TEST_S3_ENDPOINT, runs the command, then stops it. Without it
# the S3 tests are skipped, loudly, and under REQUIRE_S3=1 (CI) this fails instead.
set -euo pipefail

here=$(cd "$(dirname "$0")/.." && pwd)
server_bin="$here/.venv/bin/moto_server"
if [ ! -x "$server_bin" ]; then
  echo "## moto_server not found in .venv: the S3 storage tests are SKIPPED (make install)." >&2
  if [ "${REQUIRE_S3:-0}" = "1" ]; then
    echo "REQUIRE_S3=1: failing instead of skipping." >&2
    exit 1
  fi
  exec "$@"
fi

log=$(mktemp /tmp/rimewatch-s3.XXXXXX.log)
port=$(python3 -c 'import socket; s=socket.socket(); s.bind(("127.0.0.1", 0)); print(s.getsockname()[1])')
"$server_bin" -H 127.0.0.1 -p "$port" >"$log" 2>&1 &
server=$!
cleanup() {
  kill "$server" 2>/dev/null || true
  wait "$server" 2>/dev/null || true
  rm -f "$log"
}
trap cleanup EXIT
for _ in $(seq 100); do
  python3 -c "import urllib.request; urllib.request.urlopen('http://127.0.0.1:$port/')" \
    >/dev/null 2>&1 && break
  sleep 0.1
done
echo "Throwaway S3-compatible server (moto) on 127.0.0.1:$port"
export RIMEWATCH_TEST_S3_ENDPOINT="http://127.0.0.1:$port"
"$@"
