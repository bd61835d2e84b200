"""The month's reports as one job per site (``monthly_reports --enqueue``): the workers
share them, and however often a site is enqueued or run, it gets one report."""

from __future__ import annotations

import io

import pytest
from django.core import mail
from django.core.management import CommandError, call_command
from django_tasks_db.models import DBTaskResult

from jobs import tasks
from jobs.models import ReportRun
from reports.models import MonthlyReport
from tests.factories import SiteFactory, UserFactory

pytestmark = pytest.mark.django_db

MAKE = "jobs.tasks.make_scheduled_report"
MAIL = "jobs.tasks.email_scheduled_report"


def enqueue(*extra: str) -> str:
    out = io.StringIO()
    call_command("monthly_reports", "--month", "2026-03", "--enqueue", *extra, stdout=out)
    return out.getvalue()


def test_the_month_is_one_job_per_site_and_each_site_is_made_once(run_jobs):
    """Three sites give three claims and three jobs; enqueuing the month again adds none,
    and each job enqueued a second time (a duplicate, or two workers handed the same job)
    makes nothing more: one report per site, nothing mailed without --email."""
    sites = [SiteFactory() for _ in range(3)]
    manager = UserFactory(username="mgr-fan", role="manager")
    sites[0].managers.add(manager)

    assert "3 report job(s) for 2026-03 enqueued; 0 site(s) claimed already." in enqueue()
    assert "0 report job(s) for 2026-03 enqueued; 3 site(s) claimed already." in enqueue()
    runs = list(ReportRun.objects.order_by("site_id"))
    assert [r.site_id for r in runs] == [s.pk for s in sites]
    assert DBTaskResult.objects.filter(task_path=MAKE).count() == 3
    for run in runs:
        tasks.make_scheduled_report.enqueue(run.pk, email=False)
    run_jobs()

    counts = {s.pk: MonthlyReport.objects.filter(site=s).count() for s in sites}
    assert counts == {s.pk: 1 for s in sites}
    assert set(ReportRun.objects.values_list("report__site_id", flat=True)) == set(counts)
    assert not DBTaskResult.objects.filter(task_path=MAIL).exists()
    assert mail.outbox == []


def test_with_email_each_sites_report_is_mailed_once(run_jobs):
    site = SiteFactory()
    manager = UserFactory(username="mgr-fan-mail", role="manager")
    site.managers.add(manager)
    enqueue("--email", "--site", str(site.pk))
    run = ReportRun.objects.get(site=site)
    tasks.make_scheduled_report.enqueue(run.pk)
    run_jobs()

    run.refresh_from_db()
    assert run.emailed_at is not None
    assert [m.to for m in mail.outbox] == [[manager.email]]
    assert DBTaskResult.objects.filter(task_path=MAIL).count() == 1


def test_a_site_the_scheduler_claimed_is_left_to_its_claim():
    claimed, free = SiteFactory(), SiteFactory()
    ReportRun.objects.create(site=claimed, month="2026-03-01", enqueued_at="2026-04-01T06:00Z")
    assert "1 report job(s) for 2026-03 enqueued; 1 site(s) claimed already." in enqueue()
    assert ReportRun.objects.filter(site=free).count() == 1
    assert DBTaskResult.objects.filter(task_path=MAKE).count() == 1


def test_enqueue_refuses_out_naming_it(tmp_path):
    with pytest.raises(CommandError, match="--out"):
        enqueue("--out", str(tmp_path))
    assert not ReportRun.objects.exists()
