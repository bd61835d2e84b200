"""The maintenance page does what it says: a visit handed in and waiting for review counts
as done, visits are proposed on working days, the button says how many it books, and a
unit with a stored date out of range is shown as such while the rest are planned."""

from __future__ import annotations

import datetime as dt
from zoneinfo import ZoneInfo

import pytest
import time_machine
from django.urls import reverse
from django.utils import timezone

from fleet.models import Unit, Visit
from tests.factories import SiteFactory, UnitFactory, UserFactory, VisitFactory, VisitUnitFactory

from .conftest import build_world, signed_in
from .test_query_counts import BOUNDS

pytestmark = pytest.mark.django_db


def _visit(unit: Unit, days_ago: int, status: str) -> Visit:
    start = timezone.now() - dt.timedelta(days=days_ago)
    extra = {"reviewed_by": UserFactory(), "reviewed_at": start} if status == "reviewed" else {}
    if status == "submitted":
        extra = {"submitted_at": start}
    visit = VisitFactory(site=unit.site, status=status, window_start=start, **extra)
    VisitUnitFactory(visit=visit, unit=unit)
    return visit


def _overdue(tag: str, site=None, interval: int = 30) -> Unit:
    """Last seen (reviewed) one and a half intervals ago."""
    site = site or SiteFactory(name=f"Site of {tag}")
    unit = UnitFactory(site=site, tag=tag, pm_interval_days=interval)
    _visit(unit, interval * 3 // 2, "reviewed")
    return unit


def test_a_visit_waiting_for_review_counts_as_done(office):
    """A 90-day unit seen 135 days ago (reviewed) and again 2 days ago (handed in, not yet
    reviewed): the unit is not due, and no second visit is proposed or booked."""
    unit = _overdue("QM-DONE", interval=90)
    _visit(unit, 2, "submitted")
    page = office.get(reverse("fleet:maintenance")).content.decode()
    assert "QM-DONE" not in page
    office.post(reverse("fleet:maintenance-propose"))
    assert not Visit.objects.filter(status="scheduled").exists()


@time_machine.travel(
    dt.datetime(2026, 12, 5, 12, 0, tzinfo=ZoneInfo("America/Chicago")), tick=False
)
def test_visits_are_proposed_and_booked_on_working_days(office):
    """On Saturday 5 December an overdue unit is proposed for Monday 7 December, and booked
    for that day, not for the weekend."""
    unit = _overdue("QM-SAT")
    page = office.get(reverse("fleet:maintenance")).content.decode()
    assert "on Mon 7 Dec" in page
    assert "on Sat 5 Dec" not in page
    office.post(reverse("fleet:maintenance-propose"))
    booked = Visit.objects.get(units=unit, status="scheduled")
    assert timezone.localtime(booked.window_start, ZoneInfo(unit.site.time_zone)).date() == dt.date(
        2026, 12, 7
    )


def test_the_button_says_how_many_visits_it_books(office):
    for tag in ("A-1", "B-1", "C-1"):
        _overdue(tag)
    page = office.get(reverse("fleet:maintenance")).content.decode()
    assert "Book these 3 visits" in page
    Visit.objects.all().delete()
    Unit.objects.exclude(tag="A-1").delete()
    _visit(Unit.objects.get(), 45, "reviewed")
    page = office.get(reverse("fleet:maintenance")).content.decode()
    assert "Book this visit" in page
    assert "Book these" not in page


def test_a_unit_with_a_date_out_of_range_is_shown_and_the_rest_planned(office):
    """installed_on 9999-12-31 stored: the page answers, names the unit and its date, and
    still lists and books the overdue unit beside it."""
    site = SiteFactory(name="Quay Market")
    bad = UnitFactory(site=site, tag="QM-BAD")
    Unit.objects.filter(pk=bad.pk).update(installed_on=dt.date(9999, 12, 31))
    late = _overdue("QM-LATE", site)
    response = office.get(reverse("fleet:maintenance"))
    assert response.status_code == 200
    page = response.content.decode()
    assert "Left out: date out of range" in page
    assert "QM-BAD</a> (Quay Market): installed_on 9999-12-31 out of range" in page
    assert "QM-LATE" in page
    response = office.post(reverse("fleet:maintenance-propose"))
    assert response.status_code == 302
    booked = Visit.objects.get(status="scheduled")
    assert list(booked.units.all()) == [late]


@pytest.mark.parametrize("bad_units", [1, 4])
def test_units_left_out_cost_no_more_queries(
    bad_units, office_user, manager, technician, other_technician, django_assert_max_num_queries
):
    world = build_world(technician, other_technician, manager, extra=2)
    for i in range(bad_units):
        unit = UnitFactory(site=world.site, tag=f"BAD-{i}")
        Unit.objects.filter(pk=unit.pk).update(installed_on=dt.date(9999, 12, 31))
    client = signed_in(office_user)
    with django_assert_max_num_queries(BOUNDS["maintenance"]):
        response = client.get(reverse("fleet:maintenance"))
    assert response.content.decode().count("installed_on 9999-12-31 out of range") == bad_units
