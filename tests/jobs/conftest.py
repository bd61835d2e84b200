"""Running queued jobs in the test's own process and transaction, as the worker would."""

from __future__ import annotations

from collections.abc import Callable

import pytest
from django_tasks_db.management.commands.db_worker import Worker
from django_tasks_db.models import DBTaskResult


def run_queued() -> int:
    """Run every job that is due now (``run_after`` passed), in order, including those the
    jobs enqueue; how many ran. A retry waiting for later is left queued."""
    worker = Worker(
        queue_names=["*"],
        interval=0,
        batch=True,
        backend_name="default",
        startup_delay=False,
        max_tasks=None,
        worker_id="test-worker",
        excluded_queue_names=[],
    )
    ran = 0
    while (job := DBTaskResult.objects.ready().first()) is not None:
        job.claim("test-worker")
        worker.run_task(job)
        ran += 1
    return ran


@pytest.fixture
def run_jobs() -> Callable[[], int]:
    return run_queued


@pytest.fixture(autouse=True)
def _report_files(settings, tmp_path):
    settings.MEDIA_ROOT = tmp_path / "media"
    settings.RIMEWATCH_REPORT_CHART_WORKERS = 1
