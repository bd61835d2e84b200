#!/usr/bin/env bash
# Run a command against a throwaway PostgreSQL cluster: initdb into a temp folder, start it
# on a free local port, export DATABASE_URL, run the command, then stop and delete it.
# Without PostgreSQL binaries it says so loudly and exits 0, unless REQUIRE_POSTGRES=1.
set -euo pipefail

bindir=""
for candidate in "$(pg_config --bindir 2>/dev/null || true)" /usr/lib/postgresql/*/bin; do
  if [ -n "$candidate" ] && [ -x "$candidate/initdb" ] && [ -x "$candidate/pg_ctl" ]; then
    bindir=$candidate
  fi
done
if [ -z "$bindir" ]; then
  echo "########################################################################" >&2
  echo "## PostgreSQL binaries (initdb, pg_ctl) not found: PostgreSQL tests SKIPPED." >&2
  echo "## Install PostgreSQL 15 server binaries to run them." >&2
  echo "########################################################################" >&2
  if [ "${REQUIRE_POSTGRES:-0}" = "1" ]; then
    echo "REQUIRE_POSTGRES=1: failing instead of skipping." >&2
    exit 1
  fi
  exit 0
fi

as_pg=()
if [ "$(id -u)" = "0" ]; then
  # PostgreSQL refuses to run as root; run the server as the postgres system user.
  id postgres >/dev/null 2>&1 || useradd --system --home-dir /var/lib/postgresql postgres
  as_pg=(runuser -u postgres --)
fi

workdir=$(mktemp -d /tmp/rimewatch-pg.XXXXXX)
chmod 755 "$workdir"
[ "$(id -u)" = "0" ] && chown postgres "$workdir"
port=$(python3 -c 'import socket; s=socket.socket(); s.bind(("127.0.0.1", 0)); print(s.getsockname()[1])')

# Run a server-side binary from the cluster's folder, which the postgres user can enter
# (the caller's folder may be private to root).
pg() { (cd "$workdir" && "${as_pg[@]}" "$@"); }

cleanup() {
  pg "$bindir/pg_ctl" -D "$workdir/data" -m immediate stop >/dev/null 2>&1 || true
  rm -rf "$workdir"
}
trap cleanup EXIT

pg "$bindir/initdb" -D "$workdir/data" -U postgres --auth=trust -E UTF8 --no-locale >/dev/null
pg "$bindir/pg_ctl" -D "$workdir/data" -l "$workdir/server.log" -w \
  -o "-p $port -k $workdir -c listen_addresses=127.0.0.1 -c fsync=off -c synchronous_commit=off -c full_page_writes=off -c max_connections=200" \
  start >/dev/null
echo "Throwaway PostgreSQL $("$bindir/postgres" --version | awk '{print $3}') on 127.0.0.1:$port"

export DATABASE_URL="postgres://postgres@127.0.0.1:$port/rimewatch"
pg "$bindir/createdb" -h 127.0.0.1 -p "$port" -U postgres rimewatch
"$@"
