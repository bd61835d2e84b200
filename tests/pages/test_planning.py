"""Maintenance due with one action to book the proposed visits, and the attention page of
open flags, leak deadlines and boxes far off their design temperature, soonest first."""

from __future__ import annotations

import datetime as dt

import pytest
from django.urls import reverse
from django.utils import timezone

from fleet.models import Visit
from tests.factories import (
    ReadingSetFactory,
    RefrigerantEventFactory,
    SiteFactory,
    UnitFactory,
    UserFactory,
    VisitFactory,
    VisitUnitFactory,
    document_for,
)

from .conftest import open_flag, over_limit_addition, store_diagnosis
from .test_query_counts import BOUNDS

pytestmark = pytest.mark.django_db


def _reviewed_visit(unit, days_ago: int) -> Visit:
    """Reviewed at noon ``days_ago`` calendar days back. Not ``days_ago`` times 24 hours:
    from 23:30 on 1 December in Chicago that lands at 00:30 on 18 October, 44 calendar days
    back, as daylight saving time ended in between."""
    noon = timezone.localtime().replace(hour=12, minute=0, second=0, microsecond=0)
    start = noon - dt.timedelta(days=days_ago)  # wall-clock arithmetic in the local zone
    visit = VisitFactory(
        site=unit.site,
        status="reviewed",
        window_start=start,
        reviewed_by=UserFactory(),
        reviewed_at=start,
    )
    VisitUnitFactory(visit=visit, unit=unit)
    return visit


def test_it_lists_overdue_units_and_books_one_visit_per_site(office):
    """A 30-day unit last seen 45 days ago is overdue; a unit seen yesterday is not due.
    Booking makes one unassigned planned visit covering the overdue unit; a second press
    books nothing more."""
    site = SiteFactory(name="Quay Market")
    late = UnitFactory(site=site, tag="QM-LATE", pm_interval_days=30)
    fresh = UnitFactory(site=site, tag="QM-FRESH", pm_interval_days=90)
    _reviewed_visit(late, 45)
    _reviewed_visit(fresh, 1)
    page = office.get(reverse("fleet:maintenance")).content.decode()
    assert "QM-LATE" in page
    assert "15 days overdue" in page
    assert "QM-FRESH" not in page
    response = office.post(reverse("fleet:maintenance-propose"))
    assert response.status_code == 302
    booked = Visit.objects.get(site=site, status="scheduled")
    assert list(booked.units.all()) == [late]
    assert booked.kind == "planned"
    assert not booked.technicians.exists()
    office.post(reverse("fleet:maintenance-propose"))
    assert Visit.objects.filter(site=site, status="scheduled").count() == 1
    page = office.get(reverse("fleet:maintenance")).content.decode()
    assert "Booked for" in page


def test_it_lists_flags_and_deadlines_soonest_first(office):
    """Deadlines and flags interleave by date: an overdue repair comes before a repair due
    next month, and a met repair deadline is gone."""
    site = SiteFactory()
    soon_unit = UnitFactory(site=site, tag="AT-SOON")
    later_unit = UnitFactory(site=site, tag="AT-LATER")
    done_unit = UnitFactory(site=site, tag="AT-DONE")
    today = timezone.localdate()
    over_limit_addition(VisitUnitFactory(unit=soon_unit), today - dt.timedelta(days=40))
    over_limit_addition(VisitUnitFactory(unit=later_unit), today)
    covered = VisitUnitFactory(unit=done_unit)
    over_limit_addition(covered, today - dt.timedelta(days=5))
    RefrigerantEventFactory(
        visit_unit=covered, kind="leak_repaired", amount_kg=None, occurred_on=today
    )
    open_flag(later_unit, projected_on=today + dt.timedelta(days=10))
    page = office.get(reverse("fleet:attention")).content.decode()
    soon, flag, later = (
        page.index("AT-SOON"),
        page.index("Head pressure drifting up"),
        page.rindex("AT-LATER"),
    )
    assert soon < flag < later
    assert "10 days overdue" in page
    assert "Leak repair due" in page
    assert page.count("AT-DONE") == 1  # its verification test is still due, its repair is not
    assert "Initial verification test due" in page
    assert "local codes and licensed practice" in page


def _checked(unit, taken_at: dt.datetime, box: tuple, stage: str = "as_found") -> None:
    """A diagnosed reading of ``unit`` whose stored box-temperature metric is ``box``
    (measured, target, low, high, status, points; synthetic values)."""
    reading = ReadingSetFactory(
        visit_unit=VisitUnitFactory(unit=unit), taken_at=taken_at, stage=stage
    )
    store_diagnosis(reading, document=document_for(metrics={"box_temp": box}))


#: A freezer box 7.2 K above its -23.3 C design, past the fault margin (synthetic).
WARM = (-16.1, -23.3, -25.3, -21.3, "fault", 15.0)
#: The same box back within its band.
COLD = (-23.0, -23.3, -25.3, -21.3, "ok", 0.0)


def test_it_lists_a_box_found_far_off_its_design_temperature(office, django_assert_max_num_queries):
    """A unit whose latest as-found check found its box 7.2 K above design (13.0 F: a
    difference of 1 K is 1.8 F by the definition of the scales) is on the attention list
    with the stock at risk; a unit warm at an older check but back in range at its latest,
    and one warm only in its as-left reading, are not. The page stays within its query
    bound."""
    site = SiteFactory()
    warm = UnitFactory(site=site, tag="AT-WARM", application="low_temp")
    mended = UnitFactory(site=site, tag="AT-MENDED", application="low_temp")
    left = UnitFactory(site=site, tag="AT-LEFT", application="low_temp")
    now = timezone.now()
    _checked(warm, now - dt.timedelta(days=40), COLD)
    _checked(warm, now - dt.timedelta(days=2), WARM)
    _checked(mended, now - dt.timedelta(days=40), WARM)
    _checked(mended, now - dt.timedelta(days=2), COLD)
    _checked(left, now - dt.timedelta(days=2), COLD)
    _checked(left, now - dt.timedelta(days=1), WARM, stage="as_left")
    with django_assert_max_num_queries(BOUNDS["attention"]):
        page = office.get(reverse("fleet:attention")).content.decode()
    assert "Box far off its design temperature" in page
    assert "AT-WARM" in page
    assert "13.0 \u00b0F above design" in page
    assert "1 box far off design" in page
    assert "AT-MENDED" not in page
    assert "AT-LEFT" not in page
