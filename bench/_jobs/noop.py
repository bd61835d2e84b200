"""The no-op job bench/tasks.py times (imported by the worker with bench/ on its path;
in a folder of its own so `make bench` does not run it as a benchmark)."""

from __future__ import annotations

import time

from django_tasks import task


@task()
def noop() -> float:
    """The moment the worker started it (Unix seconds)."""
    return time.time()
