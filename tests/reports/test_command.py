"""`manage.py monthly_reports --month YYYY-MM [--site ID] [--out DIR] [--email]`."""

from __future__ import annotations

import io

import pytest
from django.core import mail
from django.core.management import CommandError, call_command

from reports.models import MonthlyReport
from reports.months import Month
from tests.factories import SiteFactory, UserFactory
from tests.reports.factories import bulk_site_history

pytestmark = pytest.mark.django_db


def test_it_stores_writes_and_emails_one_sites_report(tmp_path):
    """For one site the command stores version 1 of the month, writes the PDF into --out
    under the report's file name, emails the site's manager, and leaves other sites alone."""
    history = bulk_site_history(1, Month(2026, 3), months=3)
    other = SiteFactory()
    manager = UserFactory(username="mgr", email="mgr@example.invalid", role="manager")
    history.site.managers.add(manager)
    out = io.StringIO()
    call_command(
        "monthly_reports",
        "--month",
        "2026-03",
        "--site",
        str(history.site.pk),
        "--out",
        str(tmp_path / "pdfs"),
        "--email",
        stdout=out,
        stderr=io.StringIO(),
    )
    report = MonthlyReport.objects.get(site=history.site)
    assert report.version == 1
    written = tmp_path / "pdfs" / report.filename
    assert written.read_bytes()[:5] == b"%PDF-"
    assert [m.to for m in mail.outbox] == [["mgr@example.invalid"]]
    assert "emailed to 1 manager" in out.getvalue()
    assert not MonthlyReport.objects.filter(site=other).exists()


def test_it_refuses_a_malformed_month_or_unknown_site():
    """--month must be YYYY-MM and --site must exist; nothing is stored otherwise."""
    with pytest.raises(CommandError, match="--month"):
        call_command("monthly_reports", "--month", "2026-3", stdout=io.StringIO())
    with pytest.raises(CommandError, match="--site"):
        call_command(
            "monthly_reports", "--month", "2026-03", "--site", "999999", stdout=io.StringIO()
        )
    assert not MonthlyReport.objects.exists()
