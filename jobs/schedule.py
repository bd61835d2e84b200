"""What is due now: one pass of the scheduler (``manage.py run_scheduler`` runs it each
minute; any number of schedulers may run, the claims' unique constraints decide).

- Each site's report of the month just ended, once the site's own clock has reached the
  first of the month (sites keep their time zone), unless a report made after that month
  ended is stored already (by the command, say).
- The nightly flag refresh and the daily alert digest, once a day each, from their hour of
  ``TIME_ZONE`` on (a scheduler that was down catches up the same day).
- New alert events (urgent faults, opened flags, leak deadlines near), each delivered by a
  job of its own.
"""

from __future__ import annotations

import datetime as dt
import logging
from collections.abc import Callable, Iterable
from dataclasses import dataclass
from typing import Any
from zoneinfo import ZoneInfo, ZoneInfoNotFoundError

from django.conf import settings
from django.db import IntegrityError, transaction
from django.utils import timezone

from alerts.tasks import detect_events
from fleet.models import Site
from reports.models import MonthlyReport
from reports.months import Month

from .models import DailyRun, ReportRun
from .tasks import daily_digest, make_scheduled_report, refresh_flags_nightly

log = logging.getLogger(__name__)


@dataclass(frozen=True)
class Tick:
    """What one pass enqueued."""

    reports: int
    daily: tuple[str, ...]
    alerts: int


def _due_reports(now: dt.datetime) -> list[tuple[Site, Month]]:
    """Each site's month just ended by its own clock, where no complete report is stored
    and no run is claimed."""
    wanted: dict[tuple[int, dt.date], Site] = {}
    for site in Site.objects.order_by("pk"):
        try:
            zone = ZoneInfo(site.time_zone)
        except (ValueError, ZoneInfoNotFoundError):  # one bad row stops no other site
            log.error("site %s: unknown time zone %r, no report scheduled", site.pk, site.time_zone)
            continue
        month = Month.of(now.astimezone(zone).date()).shift(-1)
        wanted[(site.pk, month.first_day)] = site
    months = {m for _, m in wanted}
    claimed = set(
        ReportRun.objects.filter(month__in=months).values_list("site_id", "month").distinct()
    )
    made = {
        (site_id, month)
        for site_id, month, made_at in MonthlyReport.objects.filter(month__in=months).values_list(
            "site_id", "month", "generated_at"
        )
        if (site_id, month) in wanted
        and made_at >= Month.of(month).end_in(ZoneInfo(wanted[(site_id, month)].time_zone))
    }
    return [
        (site, Month.of(month))
        for (site_id, month), site in wanted.items()
        if (site_id, month) not in claimed and (site_id, month) not in made
    ]


def _claim(create: Callable[..., None], *args: Any) -> bool:
    """Insert a claim (and enqueue its job) in one transaction; False if it was taken."""
    try:
        with transaction.atomic():
            create(*args)
    except IntegrityError:
        return False
    return True


def _claim_report(site: Site, month: Month, now: dt.datetime, email: bool = True) -> None:
    run = ReportRun.objects.create(site=site, month=month.first_day, enqueued_at=now)
    if email:
        make_scheduled_report.enqueue(run.pk)
    else:
        make_scheduled_report.enqueue(run.pk, email=False)


def enqueue_month(
    month: Month, sites: Iterable[Site], *, email: bool, now: dt.datetime | None = None
) -> int:
    """Claim each site's report of ``month`` and enqueue it as a job of its own, for any
    number of workers on any number of machines to share; how many were enqueued. A site
    whose month is claimed already (by the scheduler, or an earlier call) is left to that
    claim: the unique claim, not this caller, decides, so no site is made twice."""
    now = now or timezone.now()
    return sum(_claim(_claim_report, site, month, now, email) for site in sites)


def _claim_daily(name: str, now: dt.datetime) -> None:
    run = DailyRun.objects.create(name=name, day=timezone.localdate(now), enqueued_at=now)
    job = refresh_flags_nightly if name == DailyRun.Name.FLAG_REFRESH else daily_digest
    job.enqueue(run.pk)


def tick(now: dt.datetime | None = None) -> Tick:
    """Enqueue whatever is due at ``now`` and not yet claimed."""
    now = now or timezone.now()
    reports = sum(_claim(_claim_report, site, month, now) for site, month in _due_reports(now))
    hours = {
        DailyRun.Name.FLAG_REFRESH: settings.RIMEWATCH_FLAG_REFRESH_HOUR,
        DailyRun.Name.DIGEST: settings.RIMEWATCH_DIGEST_HOUR,
    }
    today = timezone.localdate(now)
    done = set(DailyRun.objects.filter(day=today).values_list("name", flat=True))
    daily = tuple(
        str(name)
        for name, hour in hours.items()
        if name not in done
        and timezone.localtime(now).hour >= hour
        and _claim(_claim_daily, name, now)
    )
    return Tick(reports=reports, daily=daily, alerts=detect_events(now))
