"""The scheduler's pass: each site's report on the first of the month by the site's own
clock, the daily jobs from their hour on, each claimed once however many passes run."""

from __future__ import annotations

import datetime as dt
from zoneinfo import ZoneInfo

import pytest
import time_machine
from django.core.management import call_command
from django.db import OperationalError
from django_tasks_db.models import DBTaskResult

from jobs.management.commands import run_scheduler
from jobs.models import DailyRun, ReportRun
from jobs.schedule import tick
from reports.months import Month
from tests.factories import SiteFactory
from tests.reports.factories import MonthlyReportFactory

pytestmark = pytest.mark.django_db

CHICAGO = ZoneInfo("America/Chicago")
AUCKLAND = ZoneInfo("Pacific/Auckland")
NOVEMBER = Month(2026, 11)


def claimed(month: Month) -> set[int]:
    return set(ReportRun.objects.filter(month=month.first_day).values_list("site_id", flat=True))


def test_each_site_gets_its_report_when_its_own_clock_reaches_the_first():
    """At 18:00 on 30 November in Chicago it is already 1 December in Auckland: only the
    Auckland site's November is claimed; Chicago's follows just after its own midnight."""
    chicago = SiteFactory(time_zone="America/Chicago")
    auckland = SiteFactory(time_zone="Pacific/Auckland")

    tick(dt.datetime(2026, 11, 30, 18, 0, tzinfo=CHICAGO))
    assert claimed(NOVEMBER) == {auckland.pk}

    tick(dt.datetime(2026, 12, 1, 0, 5, tzinfo=CHICAGO))
    assert claimed(NOVEMBER) == {auckland.pk, chicago.pk}


def test_passes_repeated_claim_and_enqueue_once():
    """Three passes (three schedulers, or one each minute) make one claim and one job per
    site-month."""
    sites = SiteFactory.create_batch(2)
    now = dt.datetime(2026, 12, 1, 1, 0, tzinfo=CHICAGO)
    results = [tick(now) for _ in range(3)]

    assert [r.reports for r in results] == [2, 0, 0]
    assert ReportRun.objects.filter(month=NOVEMBER.first_day).count() == len(sites)
    jobs = DBTaskResult.objects.filter(task_path="jobs.tasks.make_scheduled_report")
    assert sorted(j.args_kwargs["args"][0] for j in jobs) == sorted(
        ReportRun.objects.values_list("pk", flat=True)
    )


def test_a_complete_stored_report_is_not_made_again_but_an_early_one_is():
    """A report made after the month ended (by the command, say) stands for it; one made
    from the page before the month was over does not."""
    done, early = SiteFactory.create_batch(2)
    MonthlyReportFactory(
        site=done,
        month=NOVEMBER.first_day,
        generated_at=dt.datetime(2026, 12, 1, 0, 1, tzinfo=CHICAGO),
    )
    MonthlyReportFactory(
        site=early, month=NOVEMBER.first_day, generated_at=dt.datetime(2026, 11, 20, tzinfo=CHICAGO)
    )

    tick(dt.datetime(2026, 12, 1, 6, 0, tzinfo=CHICAGO))

    assert claimed(NOVEMBER) == {early.pk}


def test_a_site_with_a_bad_stored_time_zone_stops_no_other(caplog):
    bad = SiteFactory()
    good = SiteFactory()
    type(bad).objects.filter(pk=bad.pk).update(time_zone="Mars/Olympus")

    tick(dt.datetime(2026, 12, 1, 6, 0, tzinfo=CHICAGO))

    assert claimed(NOVEMBER) == {good.pk}
    assert "Mars/Olympus" in caplog.text


def test_daily_jobs_from_their_hour_on_once_a_day(settings):
    settings.RIMEWATCH_FLAG_REFRESH_HOUR = 2
    settings.RIMEWATCH_DIGEST_HOUR = 7
    day = dt.date(2026, 12, 5)

    assert tick(dt.datetime(2026, 12, 5, 1, 59, tzinfo=CHICAGO)).daily == ()
    assert tick(dt.datetime(2026, 12, 5, 2, 0, tzinfo=CHICAGO)).daily == ("flag_refresh",)
    assert tick(dt.datetime(2026, 12, 5, 3, 0, tzinfo=CHICAGO)).daily == ()
    assert tick(dt.datetime(2026, 12, 5, 23, 0, tzinfo=CHICAGO)).daily == ("digest",)
    assert set(DailyRun.objects.filter(day=day).values_list("name", flat=True)) == {
        "flag_refresh",
        "digest",
    }
    assert DBTaskResult.objects.filter(task_path="jobs.tasks.refresh_flags_nightly").count() == 1


def test_the_scheduler_command_makes_one_pass_with_once(capsys):
    site = SiteFactory(time_zone="America/Chicago")
    with time_machine.travel(dt.datetime(2026, 12, 1, 0, 30, tzinfo=CHICAGO), tick=False):
        call_command("run_scheduler", "--once")
        call_command("run_scheduler", "--once")
    assert claimed(NOVEMBER) == {site.pk}
    assert capsys.readouterr().out.count("enqueued 1 report(s)") == 1


def test_the_scheduler_command_says_when_a_pass_fails_with_once(monkeypatch):
    def down(now=None):
        raise OperationalError("connection refused")

    monkeypatch.setattr(run_scheduler, "tick", down)
    with pytest.raises(OperationalError):
        call_command("run_scheduler", "--once")


def test_a_report_of_a_month_another_site_is_due_for_does_not_stop_the_pass():
    """When Auckland is due for November and Chicago still for October, a Chicago report
    of November (made from the page) is no reason to skip or fail either."""
    chicago = SiteFactory(time_zone="America/Chicago")
    auckland = SiteFactory(time_zone="Pacific/Auckland")
    MonthlyReportFactory(site=chicago, month=NOVEMBER.first_day)

    tick(dt.datetime(2026, 11, 30, 18, 0, tzinfo=CHICAGO))

    assert claimed(NOVEMBER) == {auckland.pk}
    assert claimed(Month(2026, 10)) == {chicago.pk}
