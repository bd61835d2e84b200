"""End to end on PostgreSQL: the scheduler's pass enqueues the month's report, and real
worker processes (``manage.py db_worker``, as production runs them) make it and mail it;
two workers racing over a job enqueued twice still make one report."""

from __future__ import annotations

import datetime as dt
import os
import subprocess
import sys
from pathlib import Path
from zoneinfo import ZoneInfo

import pytest
from django.db import connection
from django_tasks import TaskResultStatus
from django_tasks_db.models import DBTaskResult

from jobs import tasks
from jobs.models import ReportRun
from jobs.schedule import enqueue_month, tick
from reports.models import MonthlyReport
from reports.months import Month
from tests.factories import SiteFactory, UserFactory

pytestmark = [
    pytest.mark.django_db(transaction=True, serialized_rollback=True),
    pytest.mark.skipif(
        connection.vendor != "postgresql",
        reason="a worker process needs the test database on a server (SQLite's test "
        "database lives in this process's memory); `make test` runs this on a throwaway "
        "PostgreSQL",
    ),
]

ROOT = Path(__file__).resolve().parents[2]


def start_worker(name: str) -> subprocess.Popen[str]:
    """A worker process on the test database that exits once the queue is empty."""
    db = connection.settings_dict
    url = f"postgres://{db['USER']}@{db['HOST']}:{db['PORT']}/{db['NAME']}"
    env = {**os.environ, "DATABASE_URL": url, "DJANGO_SETTINGS_MODULE": "config.settings_test"}
    return subprocess.Popen(
        [
            sys.executable,
            "manage.py",
            "db_worker",
            "--batch",
            "--interval",
            "0.1",
            "--no-startup-delay",
            "--worker-id",
            name,
        ],
        cwd=ROOT,
        env=env,
        stdout=subprocess.PIPE,
        stderr=subprocess.STDOUT,
        text=True,
    )


def finish(worker: subprocess.Popen[str]) -> str:
    output, _ = worker.communicate(timeout=300)
    assert worker.returncode == 0, output
    return output


def test_the_first_of_the_month_through_real_workers():
    site = SiteFactory(time_zone="America/Denver")
    manager = UserFactory(username="mgr-e2e", role="manager")
    site.managers.add(manager)
    done = tick(dt.datetime(2026, 12, 1, 0, 10, tzinfo=ZoneInfo("America/Denver")))
    assert done.reports == 1
    run = ReportRun.objects.get(site=site)
    tasks.make_scheduled_report.enqueue(run.pk)  # a duplicate, for two workers to race over

    workers = [start_worker("e2e-1"), start_worker("e2e-2")]
    for worker in workers:
        finish(worker)

    run.refresh_from_db()
    assert run.report is not None
    assert run.emailed_at is not None
    assert MonthlyReport.objects.filter(site=site).count() == 1
    assert run.report.month == dt.date(2026, 11, 1)
    statuses = DBTaskResult.objects.values_list("task_path", "status")
    assert sorted(statuses) == [
        ("jobs.tasks.email_scheduled_report", TaskResultStatus.SUCCESSFUL),
        ("jobs.tasks.make_scheduled_report", TaskResultStatus.SUCCESSFUL),
        ("jobs.tasks.make_scheduled_report", TaskResultStatus.SUCCESSFUL),
    ]
    ran_by = {w for ids in DBTaskResult.objects.values_list("worker_ids", flat=True) for w in ids}
    assert ran_by
    assert ran_by <= {"e2e-1", "e2e-2"}


def test_two_workers_share_the_months_jobs_and_make_one_report_per_site():
    """The month enqueued as one job per site, every job enqueued twice: two worker
    processes racing over them make exactly one report per site, all stored."""
    sites = [SiteFactory() for _ in range(4)]
    assert enqueue_month(Month(2026, 3), sites, email=False) == 4
    for run in ReportRun.objects.all():
        tasks.make_scheduled_report.enqueue(run.pk, email=False)

    workers = [start_worker("fan-1"), start_worker("fan-2")]
    for worker in workers:
        finish(worker)

    per_site = {s.pk: MonthlyReport.objects.filter(site=s).count() for s in sites}
    assert per_site == {s.pk: 1 for s in sites}
    assert not ReportRun.objects.filter(report__isnull=True).exists()
    statuses = list(DBTaskResult.objects.values_list("task_path", "status"))
    assert statuses == [("jobs.tasks.make_scheduled_report", TaskResultStatus.SUCCESSFUL)] * 8
