"""The jobs in the worker: a scheduled report made and mailed once however often its job
runs, a failure retried with a growing wait and listed for the office, the nightly flag
refresh, and a report asked for from the page made off the request path."""

from __future__ import annotations

import datetime as dt
from zoneinfo import ZoneInfo

import pytest
import time_machine
from django.core import mail
from django.urls import reverse
from django.utils import timezone
from django_tasks import TaskResultStatus
from django_tasks_db.models import DBTaskResult

from jobs import tasks
from jobs.models import DailyRun, ReportRun
from jobs.schedule import tick
from reports.models import MonthlyReport
from reports.months import Month
from tests.factories import SiteFactory, UserFactory
from tests.reports.factories import MonthlyReportFactory

pytestmark = pytest.mark.django_db

CHICAGO = ZoneInfo("America/Chicago")
NOVEMBER = Month(2026, 11)
FIRST = dt.datetime(2026, 12, 1, 0, 30, tzinfo=CHICAGO)


@pytest.fixture
def fake_reports(monkeypatch):
    """Reports stored without rendering (the rendering has its own tests); counts calls."""
    made: list[tuple[int, str]] = []

    def generate(site, month, now=None, **kwargs):
        made.append((site.pk, str(month)))
        return MonthlyReportFactory(site=site, month=month.first_day, generated_at=timezone.now())

    monkeypatch.setattr(tasks, "generate_monthly_report", generate)
    return made


def test_a_scheduled_report_is_made_and_mailed_once(run_jobs):
    """The real pipeline: the first of the month's pass claims the site-month, the worker
    renders and stores version 1 and mails it to the site's manager; passes and runs after
    that make nothing more."""
    site = SiteFactory(time_zone="America/Chicago")
    manager = UserFactory(username="mgr-sched", role="manager")
    site.managers.add(manager)
    with time_machine.travel(FIRST, tick=False):
        tick()
        run_jobs()
        tick()
        run_jobs()

    run = ReportRun.objects.get(site=site, month=NOVEMBER.first_day)
    assert run.report is not None
    assert run.emailed_at is not None
    assert list(MonthlyReport.objects.filter(site=site).values_list("version", flat=True)) == [1]
    assert [m.to for m in mail.outbox] == [[manager.email]]
    assert "November 2026" in mail.outbox[0].subject


def test_the_same_job_run_twice_makes_one_report(run_jobs, fake_reports):
    """A job enqueued twice (a duplicate, or two workers handed the same run) makes one
    report and one e-mail job: the claim is taken by one conditional update."""
    site = SiteFactory()
    with time_machine.travel(FIRST, tick=False):
        tick()
        run = ReportRun.objects.get(site=site)
        tasks.make_scheduled_report.enqueue(run.pk)
        run_jobs()

    assert fake_reports == [(site.pk, "2026-11")]
    assert DBTaskResult.objects.filter(task_path="jobs.tasks.email_scheduled_report").count() == 1


def test_a_claim_held_by_a_running_worker_is_left_to_it(fake_reports):
    site = SiteFactory()
    run = ReportRun.objects.create(
        site=site, month=NOVEMBER.first_day, enqueued_at=FIRST, started_at=timezone.now()
    )
    assert tasks.make_scheduled_report.call(run.pk) is None
    assert fake_reports == []


def test_a_failed_job_is_retried_later_then_given_up_and_listed(
    run_jobs, monkeypatch, settings, client
):
    """Each failed attempt queues the next after 1, 4, 16 ... minutes, with the claim let
    go; after the last attempt nothing more is queued, and the office's page lists the
    failures, the last one as given up."""
    settings.RIMEWATCH_JOB_ATTEMPTS = 3
    settings.RIMEWATCH_JOB_FIRST_RETRY_SECONDS = 60

    def broken(*args, **kwargs):
        raise OSError("disk full while writing the PDF")

    monkeypatch.setattr(tasks, "generate_monthly_report", broken)
    site = SiteFactory()
    with time_machine.travel(FIRST, tick=False) as clock:
        tick()
        assert run_jobs() == 1
        retry = DBTaskResult.objects.get(status=TaskResultStatus.READY)
        assert retry.args_kwargs["kwargs"] == {"attempt": 2}
        assert retry.run_after == FIRST + dt.timedelta(seconds=60)
        assert ReportRun.objects.get(site=site).started_at is None
        assert run_jobs() == 0  # not due yet

        clock.shift(dt.timedelta(seconds=60))
        assert run_jobs() == 1
        third = DBTaskResult.objects.get(status=TaskResultStatus.READY)
        assert third.run_after == timezone.now() + dt.timedelta(seconds=240)

        clock.shift(dt.timedelta(seconds=240))
        assert run_jobs() == 1
        assert not DBTaskResult.objects.filter(status=TaskResultStatus.READY).exists()

    assert DBTaskResult.objects.filter(status=TaskResultStatus.FAILED).count() == 3
    client.force_login(UserFactory(username="office-jobs", role="office"))
    page = client.get(reverse("jobs:failed"))
    text = page.content.decode()
    assert page.status_code == 200
    assert text.count("disk full while writing the PDF") == 3
    assert text.count("gave up") == 1
    assert text.count("tried again later") == 2


def test_the_failed_jobs_page_is_the_offices(client, technician, manager):
    for user in (technician, manager):
        client.force_login(user)
        assert client.get(reverse("jobs:failed")).status_code == 404


def test_the_nightly_flag_refresh_runs_once_for_its_day(run_jobs, monkeypatch, settings):
    settings.RIMEWATCH_FLAG_REFRESH_HOUR = 2
    days: list[dt.date] = []
    real = tasks.refresh_flags

    def spy(today=None, **kwargs):
        days.append(today)
        return real(today=today, **kwargs)

    monkeypatch.setattr(tasks, "refresh_flags", spy)
    with time_machine.travel(dt.datetime(2026, 12, 5, 2, 15, tzinfo=CHICAGO), tick=False):
        tick()
        tick()
        run_jobs()

    assert days == [dt.date(2026, 12, 5)]
    assert DailyRun.objects.get(name="flag_refresh").finished_at is not None


def test_make_now_from_the_page_is_queued_once_and_made_by_the_worker(
    client, office_user, run_jobs, fake_reports
):
    """The page answers at once (the report is made by the worker); asked twice before the
    worker runs, one job is queued."""
    site = SiteFactory()
    client.force_login(office_user)
    url = reverse("reports:request", args=[site.pk])
    with time_machine.travel(dt.datetime(2026, 12, 5, 10, 0, tzinfo=CHICAGO), tick=False):
        first = client.post(url, {"month": "2026-11"})
        client.post(url, {"month": "2026-11"})
        assert fake_reports == []
        assert first.status_code == 302
        assert DBTaskResult.objects.filter(task_path="jobs.tasks.make_report_now").count() == 1
        run_jobs()
        page = client.get(reverse("reports:site", args=[site.pk]))

    assert fake_reports == [(site.pk, "2026-11")]
    assert "November 2026" in page.content.decode()


@pytest.mark.parametrize(
    ("month", "says"),
    [("2026-13", "no such month"), ("November", "not a month"), ("2027-01", "not begun")],
)
def test_make_now_refuses_a_bad_month_naming_the_field(client, office_user, month, says):
    site = SiteFactory()
    client.force_login(office_user)
    with time_machine.travel(dt.datetime(2026, 12, 5, 10, 0, tzinfo=CHICAGO), tick=False):
        response = client.post(reverse("reports:request", args=[site.pk]), {"month": month})
    assert response.status_code == 400
    assert "month:" in response.content.decode()
    assert says in response.content.decode()
    assert not DBTaskResult.objects.exists()


def test_make_now_is_the_offices(client, manager):
    site = SiteFactory()
    site.managers.add(manager)
    client.force_login(manager)
    response = client.post(reverse("reports:request", args=[site.pk]), {"month": "2026-11"})
    assert response.status_code == 404
    assert not DBTaskResult.objects.exists()


def test_the_failed_jobs_page_reads_in_the_same_queries_however_many_failed(
    client, office_user, django_assert_max_num_queries
):
    def fail(count: int) -> None:
        for n in range(count):
            DBTaskResult.objects.create(
                status=TaskResultStatus.FAILED,
                args_kwargs={"args": [n], "kwargs": {"attempt": 5}},
                task_path="jobs.tasks.make_scheduled_report",
                backend_name="default",
                run_after=timezone.now(),
                finished_at=timezone.now(),
                exception_class_path="builtins.OSError",
                traceback="Traceback...\nOSError: disk full",
            )

    client.force_login(office_user)
    url = reverse("jobs:failed")
    fail(1)
    client.get(url)  # the session and the user read once
    with django_assert_max_num_queries(8) as few:
        client.get(url)
    fail(20)
    with django_assert_max_num_queries(len(few.captured_queries)):
        page = client.get(url)
    assert page.content.decode().count("disk full") == 21
