"""Dates at the edge of the office pages: a date in the address the page cannot use is a
400 naming the parameter; the visit form keeps windows within the booking range and says
when a window ends on another day."""

from __future__ import annotations

import datetime as dt
from zoneinfo import ZoneInfo

import pytest
from django.urls import reverse
from django.utils import timezone

from fleet.models import Visit
from tests.factories import SiteFactory, UnitFactory, VisitFactory

pytestmark = pytest.mark.django_db

DASH = "\u2013"  # between a window's start and end


@pytest.mark.parametrize(
    ("url", "parameter", "value", "problem"),
    [
        ("fleet:schedule", "week", "9999-12-31", "must fall between 1970-01-01 and 2199-12-31"),
        ("fleet:schedule", "week", "0001-01-01", "must fall between 1970-01-01 and 2199-12-31"),
        ("fleet:schedule", "week", "next-tuesday", "is not a date"),
        ("fleet:visit-create", "day", "9999-12-31", "must fall between 1970-01-01 and 2199-12-31"),
        ("fleet:visit-create", "day", "0001-01-01", "must fall between 1970-01-01 and 2199-12-31"),
        ("fleet:visit-create", "day", "31/12/2026", "is not a date"),
    ],
)
def test_a_date_in_the_address_it_cannot_use_is_a_400_naming_it(
    office, url, parameter, value, problem
):
    """Neither a 500 (the week's Monday minus a day overflows) nor a silent swap for today."""
    response = office.get(reverse(url), {parameter: value})
    assert response.status_code == 400
    page = response.content.decode()
    assert f"<code>{parameter}={value}</code>" in page
    assert f"{parameter} {problem}" in page


def test_the_first_and_last_weeks_of_the_era_still_open(office):
    """The edges of the range are weeks like any other."""
    for week in ("1970-01-01", "2199-12-31"):
        assert office.get(reverse("fleet:schedule"), {"week": week}).status_code == 200


def _form(site, unit, start: str, end: str) -> dict:
    return {
        "site": site.pk,
        "kind": "planned",
        "window_start": start,
        "window_end": end,
        "units": [unit.pk],
        "reported_problem": "",
    }


def _day(offset_days: int) -> str:
    return (timezone.localdate() + dt.timedelta(days=offset_days)).isoformat()


@pytest.mark.parametrize(
    ("start", "end", "field", "message"),
    [
        ("9999-12-31T08:00", "9999-12-31T12:00", "window_start", "must fall in the years"),
        ("9999-12-31T23:30", "9999-12-31T23:45", "window_start", "must fall in the years"),
        ("0001-01-01T08:00", "0001-01-01T12:00", "window_start", "must fall in the years"),
        (f"{_day(3)}T08:00", f"{_day(3 + 3653)}T12:00", "window_end", "at most 2 days after"),
        (f"{_day(3)}T08:00", f"{_day(6)}T08:00", "window_end", "at most 2 days after"),
        (f"{_day(-4 * 365)}T08:00", f"{_day(-4 * 365)}T12:00", "window_start", "3 years back"),
        (f"{_day(3 * 365)}T08:00", f"{_day(3 * 365)}T12:00", "window_start", "2 years ahead"),
    ],
)
def test_the_visit_form_refuses_a_window_outside_the_booking_range(
    office, start, end, field, message
):
    """Year 0001 or 9999, a ten-year window, a four-year-old start: the form, not a 500 or a
    stored visit, with the message beside the field."""
    site = SiteFactory()
    unit = UnitFactory(site=site)
    response = office.post(reverse("fleet:visit-create"), _form(site, unit, start, end))
    assert response.status_code == 200
    assert not Visit.objects.exists()
    form = response.context["form"]
    assert message in " ".join(form.errors[field])
    assert f"{form[field].auto_id}_errors" in response.content.decode()


def test_an_overnight_window_is_booked_and_its_end_day_shown(office):
    """22:00 to 02:00 next day is a real job (a store's night closure): booked, and the
    visit's page and the schedule show the end's day, not "22:00 to 02:00"."""
    site = SiteFactory()
    unit = UnitFactory(site=site)
    response = office.post(
        reverse("fleet:visit-create"), _form(site, unit, f"{_day(2)}T22:00", f"{_day(3)}T02:00")
    )
    assert response.status_code == 302
    visit = Visit.objects.get()
    end = dt.date.fromisoformat(_day(3))
    shown = f"{end:%a} {end.day} {end:%b}, 02:00"
    page = office.get(reverse("fleet:visit", args=[visit.pk])).content.decode()
    assert any(f"{DASH}{shown} {zone} (next day)" in page for zone in ("CST", "CDT"))
    schedule = office.get(reverse("fleet:schedule"), {"week": _day(2)}).content.decode()
    assert f"22:00{DASH}{shown} (next day)" in schedule


def test_the_form_says_when_the_end_is_on_another_day(office):
    """Editing a visit that ends the day after it starts says so beside the window; one
    ending the same day says nothing."""
    chicago = ZoneInfo("America/Chicago")
    start = dt.datetime.combine(
        timezone.localdate() + dt.timedelta(days=2), dt.time(22, 0), chicago
    )
    visit = VisitFactory(
        status="scheduled", window_start=start, window_end=start + dt.timedelta(hours=5)
    )
    page = office.get(reverse("fleet:visit-edit", args=[visit.pk])).content.decode()
    end = (start + dt.timedelta(hours=5)).date()
    assert f"Ends on {end:%a} {end.day} {end:%b %Y}, the day after it starts." in page
    Visit.objects.filter(pk=visit.pk).update(window_end=start + dt.timedelta(hours=1))
    page = office.get(reverse("fleet:visit-edit", args=[visit.pk])).content.decode()
    assert "Ends on" not in page


def test_a_visit_left_where_it_was_is_not_judged_by_todays_booking_range(office):
    """A visit booked long ago (imported history) keeps its window when only its notes
    change: the booking range judges a window being moved, not one left alone."""
    chicago = ZoneInfo("America/Chicago")
    start = dt.datetime.combine(
        timezone.localdate() - dt.timedelta(days=5 * 365), dt.time(8, 0), chicago
    )
    visit = VisitFactory(
        status="scheduled", window_start=start, window_end=start + dt.timedelta(hours=4)
    )
    unit = UnitFactory(site=visit.site)
    body = _form(
        visit.site,
        unit,
        f"{start:%Y-%m-%dT%H:%M}",
        f"{start + dt.timedelta(hours=4):%Y-%m-%dT%H:%M}",
    )
    body["reported_problem"] = "door seal"
    response = office.post(reverse("fleet:visit-edit", args=[visit.pk]), body)
    assert response.status_code == 302
    visit.refresh_from_db()
    assert visit.reported_problem == "door seal"


def test_a_stored_window_out_of_range_is_shown_as_such(office):
    """A visit stored (before the models checked) at 9999-12-31 20:00 UTC at a Tokyo site
    is past the last date on the site's clock: its page says "date out of range" with the
    stored times, and its edit page leaves the window for the coordinator to type anew."""
    site = SiteFactory(time_zone="Asia/Tokyo")
    visit = VisitFactory(site=site, status="scheduled")
    Visit.objects.filter(pk=visit.pk).update(
        window_start=dt.datetime(9999, 12, 31, 20, 0, tzinfo=dt.UTC),
        window_end=dt.datetime(9999, 12, 31, 23, 0, tzinfo=dt.UTC),
    )
    response = office.get(reverse("fleet:visit", args=[visit.pk]))
    assert response.status_code == 200
    page = response.content.decode()
    assert "date out of range" in page
    assert "stored as 9999-12-31 20:00 UTC to 9999-12-31 23:00 UTC" in page
    response = office.get(reverse("fleet:visit-edit", args=[visit.pk]))
    assert response.status_code == 200
    assert response.context["form"].initial["window_start"] is None
