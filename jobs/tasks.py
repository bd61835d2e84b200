"""The background jobs: each takes its claim first, so a job enqueued twice works once.

Each is ``retried`` (bounded, with a growing wait) and runs in the worker
(``manage.py db_worker``), never in a request.
"""

from __future__ import annotations

import datetime as dt

from django.core.mail import EmailMultiAlternatives
from django.db import transaction
from django.db.models import Q
from django.utils import timezone

from alerts.services import send_digests
from alerts.tasks import detect_events
from diagnostics.services import refresh_flags
from fleet.models import Site
from reports.months import Month
from reports.services import email_report, generate_monthly_report

from .models import DailyRun, ReportRun
from .retry import retried

#: A claim taken this long ago by a worker that never finished (it died) may be taken again.
STALE_CLAIM = dt.timedelta(hours=1)


@retried
def make_scheduled_report(run_id: int, email: bool = True) -> int | None:
    """Make and store the claimed site-month's report, once; then enqueue its e-mail
    (unless ``email`` is false: the office's run without --email).

    One job per site: a month's reports spread over every worker that runs (on any
    machine), so each job draws its charts in its own process, the other workers having
    the other cores. Returns the report's id, or None when the report was made already or
    another worker is making it.
    """
    now = timezone.now()
    taken = (
        ReportRun.objects.filter(pk=run_id, report__isnull=True)
        .filter(Q(started_at__isnull=True) | Q(started_at__lt=now - STALE_CLAIM))
        .update(started_at=now)
    )
    if not taken:
        return None
    run = ReportRun.objects.select_related("site").get(pk=run_id)
    try:
        report = generate_monthly_report(run.site, Month.of(run.month), now, workers=1)
    except Exception:
        ReportRun.objects.filter(pk=run_id).update(started_at=None)
        raise
    with transaction.atomic():
        ReportRun.objects.filter(pk=run_id).update(report=report)
        if email:
            email_scheduled_report.enqueue(run_id)
    return report.pk


@retried
def email_scheduled_report(run_id: int) -> int:
    """Send a scheduled report to its site's managers unless it was sent; returns how many."""
    run = ReportRun.objects.select_related("report__site__customer").get(pk=run_id)
    if run.emailed_at is not None or run.report is None:
        return 0
    sent = email_report(run.report)
    ReportRun.objects.filter(pk=run_id).update(emailed_at=timezone.now())
    return sent


@retried
def make_report_now(site_id: int, month: str) -> int:
    """A report asked for from the page: a new version of the site-month; its id."""
    site = Site.objects.get(pk=site_id)
    return generate_monthly_report(site, Month.parse(month)).pk


@retried
def refresh_flags_nightly(run_id: int) -> dict[str, int]:
    """The nightly flag refresh of the claimed day, then the alerts the new flags call for."""
    run = DailyRun.objects.get(pk=run_id)
    result = refresh_flags(today=run.day)
    detect_events()
    DailyRun.objects.filter(pk=run_id).update(finished_at=timezone.now())
    return {"opened": result.opened, "updated": result.updated, "cleared": result.cleared}


@retried
def daily_digest(run_id: int) -> int:
    """The alert digest of the claimed day; how many people it went to."""
    run = DailyRun.objects.get(pk=run_id)
    sent = send_digests(run.day)
    DailyRun.objects.filter(pk=run_id).update(finished_at=timezone.now())
    return sent


@retried
def send_email(
    subject: str, body: str, to: list[str], from_email: str | None = None, html: str = ""
) -> int:
    """An e-mail composed during a request (a password reset), sent by the worker: the
    request does not wait on the mail server, and a server down is tried again later."""
    message = EmailMultiAlternatives(subject, body, from_email, to)
    if html:
        message.attach_alternative(html, "text/html")
    return message.send()
