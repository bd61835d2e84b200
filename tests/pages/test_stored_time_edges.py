"""Times written straight into the database, past every check the models make: a reading,
a hand-in, a flag or a visit window in year 1, or at 9999-12-31 23:00 UTC (past the last
day on a Tokyo clock). No wall clock can show them; the pages, the API, the monthly report
and the fleet-wide jobs must still answer, showing such a time as stored and marked, never
a 500 for the whole page."""

from __future__ import annotations

import datetime as dt
from zoneinfo import ZoneInfo

import pytest
from django.core.management import call_command
from django.test import Client
from django.urls import reverse
from django.utils import timezone

from diagnostics import services as diagnostics_services
from diagnostics.models import Diagnosis, Flag
from fleet.display import shown_moment
from fleet.limits import SERVICE_ERA, day_on_clock
from fleet.models import ReadingSet, Site, Visit
from reports import services as report_services
from reports.months import Month
from reports.queries import unit_trend_history
from tests.pages.conftest import World, build_world, signed_in

pytestmark = pytest.mark.django_db

MOMENTS = {
    "year 1": dt.datetime(1, 1, 1, 0, 0, tzinfo=dt.UTC),
    "9999 in Tokyo": dt.datetime(9999, 12, 31, 23, 0, tzinfo=dt.UTC),
}
SHOWN = {
    "year 1": "0001-01-01 00:00 UTC (date out of range)",
    "9999 in Tokyo": "9999-12-31 23:00 UTC (date out of range)",
}


def _store(world: World, field: str, moment: dt.datetime) -> None:
    """Write ``moment`` past the models, as a bad import or a hand-edited row would."""
    if field == "reading":
        ReadingSet.objects.filter(visit_unit__visit=world.submitted).update(taken_at=moment)
    elif field == "hand-in":
        Visit.objects.filter(pk=world.submitted.pk).update(submitted_at=moment)
    elif field == "flag":
        Flag.objects.filter(pk=world.flag.pk).update(opened_at=moment, updated_at=moment)
    elif field == "diagnosis":
        Diagnosis.objects.update(computed_at=moment)
    else:  # the visit's window, half an hour long (the window's order is a database check)
        Visit.objects.filter(pk=world.submitted.pk).update(
            window_start=moment, window_end=moment + dt.timedelta(minutes=30)
        )


#: Where each stored time is shown as stored, and how it is marked there (the visit page
#: says of its window "date out of range" in a badge, then "stored as ...").
WHERE_SHOWN = {
    "reading": ("fleet:unit", "unit", "{shown}"),
    "hand-in": ("fleet:visit", "submitted", "{shown}"),
    "flag": ("fleet:attention", None, "{shown}"),
    "window": ("fleet:visit", "submitted", "stored as {stored} to"),
}


@pytest.mark.parametrize("office_zone", ["Asia/Tokyo", "Pacific/Honolulu"])
@pytest.mark.parametrize("which", list(MOMENTS))
@pytest.mark.parametrize("field", ["reading", "hand-in", "flag", "diagnosis", "window"])
def test_a_time_no_clock_can_show_fails_no_page_report_or_job(
    settings, office_zone, which, field, office_user, technician, other_technician, manager
):
    """Tokyo (UTC+9) cannot show the last hour of 9999; Honolulu (UTC-10) cannot show the
    first hours of year 1. Every page that lists the row answers 200, as does the API."""
    settings.TIME_ZONE = office_zone
    world = build_world(technician, other_technician, manager)
    Site.objects.filter(pk=world.site.pk).update(time_zone="Asia/Tokyo")
    _store(world, field, MOMENTS[which])
    office, boss, tech = signed_in(office_user), signed_in(manager), signed_in(technician)
    visits: list[tuple[Client, str]] = [
        (office, reverse("fleet:unit", args=[world.unit.pk])),
        (office, reverse("fleet:site", args=[world.site.pk])),
        (office, reverse("fleet:visit", args=[world.submitted.pk])),
        (office, reverse("fleet:review-queue")),
        (office, reverse("fleet:attention")),
        (office, reverse("fleet:schedule")),
        (office, reverse("fleet:maintenance")),
        (office, reverse("fleet:sites")),
        (office, reverse("reports:site", args=[world.site.pk])),
        (boss, reverse("fleet:unit", args=[world.unit.pk])),
        (boss, reverse("fleet:site", args=[world.site.pk])),
        (tech, reverse("fleet:visit", args=[world.submitted.pk])),
        (office, f"/api/v1/units/{world.unit.pk}/trends/"),
        (office, f"/api/v1/units/{world.unit.pk}/diagnosis/"),
        (office, f"/api/v1/units/{world.unit.pk}/flags/"),
        (office, f"/api/v1/visits/{world.submitted.pk}/"),
        (office, f"/api/v1/visits/{world.submitted.pk}/reading-sets/"),
        (office, f"/api/v1/visits/{world.submitted.pk}/history/"),
        (office, "/api/v1/visits/"),
    ]
    answers = {url: client.get(url).status_code for client, url in visits}
    assert set(answers.values()) == {200}, answers

    if field in WHERE_SHOWN:
        name, attribute, text = WHERE_SHOWN[field]
        args = [getattr(world, attribute).pk] if attribute else []
        expected = text.format(shown=SHOWN[which], stored=SHOWN[which].split(" (")[0])
        assert expected in office.get(reverse(name, args=args)).content.decode()

    site = Site.objects.get(pk=world.site.pk)
    this_month = Month.of(timezone.localdate())
    for month in (this_month, this_month.shift(-1)):
        report = report_services.generate_monthly_report(site, month, workers=0)
        assert report.pdf.size > 0
    since = timezone.localdate() - dt.timedelta(days=30)
    diagnostics_services.rescore(
        diagnostics_services.stale_reading_sets(rescore_all=True, since=since)
    )
    call_command("refresh_flags", verbosity=0)


def test_the_api_writes_such_a_time_as_stored_and_the_chart_leaves_it_off(office, world):
    """The API hands the record over as stored, in UTC (DRF alone would answer 400 for a
    time the caller never sent); the unit page's chart, which must place every point on a
    calendar, leaves it off and the page shows the reading's time as stored."""
    ReadingSet.objects.filter(visit_unit__visit=world.submitted).update(taken_at=MOMENTS["year 1"])
    trends = office.get(f"/api/v1/units/{world.unit.pk}/trends/").json()
    score = next(s for s in trends["series"] if s["metric"] == "score")
    assert [p["taken_at"] for p in score["points"]] == ["0001-01-01T00:00:00Z"]
    latest = office.get(f"/api/v1/units/{world.unit.pk}/diagnosis/").json()
    assert latest["taken_at"] == "0001-01-01T00:00:00Z"
    assert (
        SHOWN["year 1"] in office.get(reverse("fleet:unit", args=[world.unit.pk])).content.decode()
    )


def test_the_trend_history_keeps_to_the_era(world):
    """The charts' query: a reading at 9999-12-31 23:00 UTC is after any ``since`` yet left
    off, so no point needs a day on a Tokyo calendar that does not exist."""
    tokyo = ZoneInfo("Asia/Tokyo")
    since = timezone.localdate() - dt.timedelta(days=30)
    assert len(unit_trend_history(world.unit.pk, since, tokyo)) == 1
    ReadingSet.objects.filter(visit_unit__visit=world.submitted).update(
        taken_at=MOMENTS["9999 in Tokyo"]
    )
    assert unit_trend_history(world.unit.pk, since, tokyo) == ()


def test_a_day_on_the_clock_keeps_the_utc_day_outside_the_era():
    """Inside the era the site's clock decides the day (22:00 UTC is the next day in Tokyo);
    outside it the UTC day stands in, so the row still sorts first or last."""
    tokyo = ZoneInfo("Asia/Tokyo")
    evening = dt.datetime(2026, 3, 2, 22, 0, tzinfo=dt.UTC)
    assert day_on_clock(evening, tokyo) == dt.date(2026, 3, 3)
    assert day_on_clock(MOMENTS["9999 in Tokyo"], tokyo) == dt.date(9999, 12, 31)
    assert day_on_clock(MOMENTS["year 1"], ZoneInfo("Pacific/Honolulu")) == dt.date(1, 1, 1)
    first, end = SERVICE_ERA.instants()
    assert (first.isoformat(), end.isoformat()) == (
        "1970-01-01T00:00:00+00:00",
        "2200-01-01T00:00:00+00:00",
    )


def test_a_shown_moment_is_the_date_filter_inside_the_era(settings):
    """The filter every page uses formats as Django's ``date`` does, on the current clock."""
    settings.TIME_ZONE = "Asia/Tokyo"
    timezone.activate(ZoneInfo("Asia/Tokyo"))
    try:
        evening = dt.datetime(2026, 3, 2, 22, 0, tzinfo=dt.UTC)
        assert shown_moment(evening, "j M Y, H:i") == "3 Mar 2026, 07:00"
        assert shown_moment(dt.date(2026, 3, 2), "j M Y") == "2 Mar 2026"
        assert shown_moment(None, "j M Y") == ""
        assert shown_moment(MOMENTS["9999 in Tokyo"], "j M Y") == SHOWN["9999 in Tokyo"]
    finally:
        timezone.deactivate()
