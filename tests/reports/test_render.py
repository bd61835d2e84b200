"""The report's HTML from plain data, and what WeasyPrint may fetch."""

from __future__ import annotations

import datetime as dt
from pathlib import Path
from zoneinfo import ZoneInfo

import pytest
from django.contrib.staticfiles import finders

from fleet.display import display_for
from reports.figures import unit_figure
from reports.gather import gather_site_month
from reports.months import Month
from reports.render import RefusedFetch, UnitChart, render_html, url_fetcher
from reports.templatetags.report_format import num
from tests.factories import ReadingSetFactory, UnitFactory, VisitUnitFactory
from tests.reports.factories import DiagnosisFactory, FlagFactory

MARCH = Month(2026, 3)
CHICAGO = ZoneInfo("America/Chicago")
NOW = dt.datetime(2026, 4, 1, 7, tzinfo=CHICAGO)


def html_for(site_id: int, system: str = "us") -> str:
    display = display_for(system)
    sm = gather_site_month(site_id, MARCH, now=NOW)
    charts = {u.unit.id: UnitChart("", "", unit_figure(u, display).notes) for u in sm.units}
    return render_html(sm, charts, display, generated_at=NOW, version=1)


@pytest.mark.django_db
def test_an_empty_month_still_makes_a_report_that_says_so():
    """A site with no visit in the month gets a report saying there were no visits, naming
    its units as not checked, and still carrying an open flag."""
    unit = UnitFactory(tag="WIC-9")
    FlagFactory(
        unit=unit,
        summary="Planned maintenance is 20 days overdue",
        kind="maintenance_overdue",
        opened_at=NOW - dt.timedelta(days=45),
    )
    html = html_for(unit.site_id)
    assert "No visits this month" in html
    assert "Not checked this month: WIC-9" in html
    assert "Planned maintenance is 20 days overdue" in html


@pytest.mark.django_db
def test_a_unit_with_too_little_history_says_so_instead_of_a_chart():
    """With one visit in twelve months a unit's page explains there are too few visits for
    a trend (without quoting the minimum, a rule value kept for the methods notes) and shows
    no chart image."""
    taken = dt.datetime(2026, 3, 10, 9, tzinfo=CHICAGO)
    vu = VisitUnitFactory(
        visit__window_start=taken, visit__window_end=taken + dt.timedelta(hours=1)
    )
    DiagnosisFactory(reading_set=ReadingSetFactory(visit_unit=vu, taken_at=taken))
    html = html_for(vu.unit.site_id)
    assert (
        "Condensing temperature: only 1 visit with a value in these twelve months, too few "
        "to draw a trend." in html
    )
    assert "<img" not in html


@pytest.mark.django_db
def test_the_template_reads_plain_data_only(django_assert_num_queries):
    """Rendering the HTML of a gathered site-month runs no query."""
    taken = dt.datetime(2026, 3, 10, 9, tzinfo=CHICAGO)
    vu = VisitUnitFactory(
        visit__window_start=taken, visit__window_end=taken + dt.timedelta(hours=1)
    )
    DiagnosisFactory(reading_set=ReadingSetFactory(visit_unit=vu, taken_at=taken))
    display = display_for("us")
    sm = gather_site_month(vu.unit.site_id, MARCH, now=NOW)
    with django_assert_num_queries(0):
        render_html(sm, {}, display, generated_at=NOW)


@pytest.mark.django_db
def test_values_are_shown_in_the_display_units():
    """A design box temperature of 2.0 C shows as 36 F in US units and 2 C in SI units
    (F = C x 1.8 + 32, the definition of the scale); a 10 kg charge as 22.0 lb
    (1 lb = 0.45359237 kg exactly, by the 1959 international agreement)."""
    unit = UnitFactory(design_box_temp_c=2.0, full_charge_kg=10.0)
    us, si = html_for(unit.site_id, "us"), html_for(unit.site_id, "si")
    for shown in ("36 °F", "22.0 lb", "size: Letter"):
        assert shown in us
    for shown in ("2 °C", "10.0 kg", "size: A4"):
        assert shown in si


def fetched(result: dict) -> bytes:
    if "string" in result:
        return result["string"]
    with result["file_obj"] as fh:
        return fh.read()


def test_the_fetcher_refuses_the_network_and_other_files():
    """WeasyPrint may load data URIs and our own static files, nothing else: http(s) and
    files outside the static folders are refused."""
    css = Path(finders.find("reports/report.css"))
    assert b"@page" in fetched(url_fetcher(css.as_uri()))
    assert fetched(url_fetcher("data:text/plain;base64,aGk=")) == b"hi"
    for url in (
        "http://example.com/logo.png",
        "https://example.com/x.css",
        "file:///etc/passwd",
        css.parent.joinpath("..", "..", "..", "settings.py").resolve().as_uri(),
    ):
        with pytest.raises(RefusedFetch):
            url_fetcher(url)


def test_a_value_rounding_to_zero_from_below_shows_no_minus_sign():
    """-0.4 shown without decimals is 0, not -0; -0.6 is -1."""
    assert num(-0.4, 0) == "0"
    assert num(-0.6, 0) == "-1"
    assert num(-0.04, 1) == "0.0"
