#!/usr/bin/env bash
# Run a command with a throwaway Redis server: the cache a production deployment shares
# between machines when REDIS_URL is set (docs/deployment.md). Starts Debian's redis-server
# on a free local port with nothing saved to disk, exports REDIS_URL, runs the command, then
# stops it. Installs redis-server with apt-get when missing and we are root; otherwise says
# loudly that the Redis tests will be skipped, and fails instead under REQUIRE_REDIS=1.
set -euo pipefail

if ! command -v redis-server >/dev/null 2>&1 && [ "$(id -u)" = "0" ] \
  && command -v apt-get >/dev/null 2>&1; then
  echo "Installing Debian's redis-server for the cache tests..."
  export DEBIAN_FRONTEND=noninteractive
  apt-get update -qq
  apt-get install -y -qq redis-server >/dev/null
fi
if ! command -v redis-server >/dev/null 2>&1; then
  echo "########################################################################" >&2
  echo "## redis-server not found: the shared-cache tests on Redis are SKIPPED." >&2
  echo "## Install it with: sudo apt-get install redis-server" >&2
  echo "########################################################################" >&2
  if [ "${REQUIRE_REDIS:-0}" = "1" ]; then
    echo "REQUIRE_REDIS=1: failing instead of skipping." >&2
    exit 1
  fi
  exec "$@"
fi

workdir=$(mktemp -d /tmp/rimewatch-redis.XXXXXX)
port=$(python3 -c 'import socket; s=socket.socket(); s.bind(("127.0.0.1", 0)); print(s.getsockname()[1])')
redis-server --port "$port" --bind 127.0.0.1 --save "" --appendonly no \
  --dir "$workdir" --logfile "$workdir/server.log" --daemonize no &
server=$!
cleanup() {
  kill "$server" 2>/dev/null || true
  wait "$server" 2>/dev/null || true
  rm -rf "$workdir"
}
trap cleanup EXIT
for _ in $(seq 50); do
  redis-cli -h 127.0.0.1 -p "$port" ping >/dev/null 2>&1 && break
  sleep 0.1
done
redis-cli -h 127.0.0.1 -p "$port" ping >/dev/null
echo "Throwaway Redis $(redis-server --version | awk '{print $3}' | cut -d= -f2) on 127.0.0.1:$port"
export REDIS_URL="redis://127.0.0.1:$port/0"
"$@"
