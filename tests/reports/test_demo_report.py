"""The report of a demo site, end to end: the invented demo fleet, diagnosed and flagged by
the diagnostics services, turned into a stored report and read back from its PDF."""

from __future__ import annotations

import io
from zoneinfo import ZoneInfo

import pytest
from django.db.models import Max
from django.utils import timezone
from pypdf import PdfReader

from diagnostics.models import Flag, LeakRate
from fixtures.load import load_demo_fleet
from fleet.models import ReadingSet, Site
from reports.months import Month
from reports.services import generate_monthly_report

pytestmark = pytest.mark.django_db

#: The demo site whose story is a leak: refrigerant added three times, rates over the limit.
LEAK_SITE = "Greenleaf Market Mesa Heights"


def test_a_demo_sites_report_names_its_units_flags_and_stored_leak_rates():
    """The report of the demo's leaking site, for the month of its latest visit: names every
    unit; shows every flag open on the site; carries each addition's leak rates exactly as the
    diagnostics core stored them (annualizing and rolling average, to 0.1 %); and its PDF has a
    first page, one section per unit each starting on a new page in tag order, then the
    method notes and safety cautions, with 'Page n of N' and the site on every page."""
    load_demo_fleet(timezone.localdate())
    site = Site.objects.get(name=LEAK_SITE)
    tz = ZoneInfo(site.time_zone)
    latest = ReadingSet.objects.filter(visit_unit__unit__site=site).aggregate(t=Max("taken_at"))
    month = Month.of(latest["t"].astimezone(tz).date())

    report = generate_monthly_report(site, month)
    html = report.html

    tags = sorted(site.units.values_list("tag", flat=True))
    assert len(tags) == 7
    for tag in tags:
        assert tag in html
    open_flags = list(Flag.objects.filter(unit__site=site, cleared_at__isnull=True))
    assert open_flags, "the leak story should leave a leak-rate flag open"
    for flag in open_flags:
        assert flag.summary in html
    rates = list(LeakRate.objects.filter(event__visit_unit__unit__site=site))
    assert len(rates) == 3
    for rate in rates:
        assert f"{rate.annualizing_percent:.1f} %" in html
        assert f"{rate.rolling_average_percent:.1f} %" in html

    with report.pdf.open("rb") as fh:
        reader = PdfReader(io.BytesIO(fh.read()))
    pages = [" ".join((p.extract_text() or "").split()) for p in reader.pages]
    assert len(pages) == report.page_count
    assert f"How the refrigeration did in {month.label}" in pages[0]
    for number, text in enumerate(pages, start=1):
        assert site.name in text
        assert f"Page {number} of {len(pages)}" in text
    starts = [next(i for i, t in enumerate(pages) if f"{tag} · " in t) for tag in tags]
    assert starts == sorted(starts)
    assert starts[0] >= 1
    assert len(set(starts)) == len(tags)
    notes = next(i for i, t in enumerate(pages) if "How these numbers are made" in t)
    assert notes > starts[-1]
    assert "Safety cautions" in " ".join(pages[notes:])
    leak_pages = " ".join(pages[starts[tags.index("GLM-CASE-3")] : notes])
    for rate in rates:
        assert f"{rate.rolling_average_percent:.1f} %" in leak_pages
