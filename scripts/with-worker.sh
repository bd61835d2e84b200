#!/usr/bin/env bash
# Run a command (the development server) with the background worker and the scheduler
# beside it, and stop both when it ends: `make run` stays one command with no other server.
# The first argument is the Python to run manage.py with.
set -euo pipefail
python=$1
"$python" manage.py db_worker &
worker=$!
"$python" manage.py run_scheduler &
scheduler=$!
trap 'kill "$worker" "$scheduler" 2>/dev/null || true; wait 2>/dev/null || true' EXIT
echo "Background worker (pid $worker) and scheduler (pid $scheduler) started; they stop with the server."
"$@"
