#!/usr/bin/env bash
# Print "table|rows" for every table of a PostgreSQL database (the URL as first argument),
# sorted by table: two databases compare with diff, such as a restored backup against the
# database it was taken from (at a quiet moment) or against the counts noted at backup time.
set -euo pipefail
url=${1:?usage: pg-row-counts.sh POSTGRES_URL}
psql --no-psqlrc --quiet --tuples-only --no-align --dbname="$url" <<'SQL'
SELECT format('SELECT %L, count(*) FROM %I.%I', table_name, table_schema, table_name)
FROM information_schema.tables
WHERE table_schema = 'public' AND table_type = 'BASE TABLE'
ORDER BY table_name
\gexec
SQL
