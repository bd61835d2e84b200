"""What the task engine costs here: django-tasks' database backend with its db_worker.

Runs a real ``manage.py db_worker`` process against a throwaway SQLite database (or the
PostgreSQL of ``DATABASE_URL``, as under scripts/with-postgres.sh) and measures:

- enqueue-to-start latency of a no-op job, one at a time at random moments (median and 95th
  percentile), at the worker's default poll interval (1 s) and at 0.1 s;
- throughput: ``--jobs`` no-op jobs (default 500) queued, then one worker started in batch
  mode, until it exits;
- the worker process's resident memory after running them.

    .venv/bin/python bench/tasks.py [--jobs 500] [--samples 30]

docs/operations.md keeps the figures and sets them beside Celery with Redis.
"""

from __future__ import annotations

import argparse
import os
import random
import statistics
import subprocess
import sys
import tempfile
import time
from pathlib import Path

sys.path.insert(0, str(Path(__file__).resolve().parent))
sys.path.insert(0, str(Path(__file__).resolve().parent.parent))

from _db import ROOT, setup_database


def worker(*extra: str) -> subprocess.Popen[bytes]:
    env = {**os.environ, "PYTHONPATH": str(Path(__file__).resolve().parent)}
    return subprocess.Popen(
        [sys.executable, "manage.py", "db_worker", "--no-startup-delay", *extra],
        cwd=ROOT,
        env=env,
        stdout=subprocess.DEVNULL,
        stderr=subprocess.DEVNULL,
    )


def rss_kb(pid: int) -> int:
    for line in Path(f"/proc/{pid}/status").read_text().splitlines():
        if line.startswith("VmRSS:"):
            return int(line.split()[1])
    return 0


def latency(samples: int, interval: str) -> list[float]:
    from _jobs.noop import noop

    proc = worker("--interval", interval)
    time.sleep(3)  # started and polling
    waits = []
    try:
        for _ in range(samples):
            # Out of step with the worker's polls, as real jobs arrive.
            time.sleep(random.uniform(0, 1))
            sent = time.time()
            result = noop.enqueue()
            while True:
                result.refresh()
                if result.is_finished:
                    break
                time.sleep(0.005)
            waits.append(result.return_value - sent)
    finally:
        proc.terminate()
        proc.wait()
    return waits


def throughput(jobs: int) -> tuple[float, int]:
    from _jobs.noop import noop

    for _ in range(jobs):
        noop.enqueue()
    started = time.perf_counter()
    proc = worker("--batch", "--interval", "0")
    peak = 0
    while proc.poll() is None:
        peak = max(peak, rss_kb(proc.pid))
        time.sleep(0.05)
    return jobs / (time.perf_counter() - started), peak


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--jobs", type=int, default=500)
    parser.add_argument("--samples", type=int, default=30)
    args = parser.parse_args()
    tmp = Path(tempfile.mkdtemp(prefix="rimewatch-bench-tasks-"))
    if os.environ.get("DATABASE_URL", "").startswith("postgres"):
        os.environ["DJANGO_SETTINGS_MODULE"] = "config.settings_test"
        import django

        django.setup()
        from django.core.management import call_command

        call_command("migrate", verbosity=0, interactive=False)
    else:
        setup_database(tmp)
    from django.db import connection

    print(f"database: {connection.vendor}")
    for interval in ("1", "0.1"):
        waits = sorted(latency(args.samples, interval))
        p95 = waits[int(0.95 * (len(waits) - 1))]
        median = statistics.median(waits)
        print(
            f"enqueue-to-start, poll {interval} s: median {median * 1000:.0f} ms, "
            f"p95 {p95 * 1000:.0f} ms ({len(waits)} jobs)"
        )
    rate, peak = throughput(args.jobs)
    print(f"throughput: {rate:.0f} no-op jobs/s ({args.jobs} jobs, one worker)")
    print(f"worker resident memory: {peak / 1024:.0f} MB at most")


if __name__ == "__main__":
    main()
