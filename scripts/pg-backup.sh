#!/usr/bin/env bash
# Back up Rimewatch's PostgreSQL database (DATABASE_URL) with pg_dump's custom format into
# BACKUP_DIR (default /var/backups/rimewatch), one file per run named by the time in UTC,
# keeping the newest BACKUP_KEEP (default 14). A dump is written under a temporary name and
# checked readable by pg_restore before it takes its place, so a failed run never replaces
# a good backup. Run it nightly (cron or a systemd timer); docs/operations.md says how to
# restore and check a backup.
set -euo pipefail

: "${DATABASE_URL:?set DATABASE_URL to the database to back up}"
dir=${BACKUP_DIR:-/var/backups/rimewatch}
keep=${BACKUP_KEEP:-14}
case $keep in '' | *[!0-9]* | 0) echo "BACKUP_KEEP must be a whole number from 1" >&2; exit 2 ;; esac

mkdir -p "$dir"
stamp=$(date -u +%Y%m%dT%H%M%S.%3NZ)
partial="$dir/.rimewatch-$stamp.dump.partial"
trap 'rm -f "$partial"' EXIT
pg_dump --format=custom --dbname="$DATABASE_URL" --file="$partial"
pg_restore --list "$partial" >/dev/null
mv "$partial" "$dir/rimewatch-$stamp.dump"
echo "$dir/rimewatch-$stamp.dump"

# The newest $keep dumps stay; the names sort by time.
find "$dir" -maxdepth 1 -name 'rimewatch-*.dump' -print | sort -r | tail -n "+$((keep + 1))" |
  while read -r old; do rm -f -- "$old"; done
