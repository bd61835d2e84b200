"""One stored date no job can work with (``installed_on`` 9999-12-31, written before the
models checked dates or straight into the database) never stops a fleet-wide job: that unit
is skipped and named, and every other unit is judged as before."""

from __future__ import annotations

import datetime as dt
import io
import logging

import pytest
from django.core.management import call_command
from django.utils import timezone

from diagnostics import services
from diagnostics.history import maintenance_plans
from diagnostics.models import Flag
from fleet.models import ReadingSet, Unit, Visit
from tests.factories import (
    ReadingSetFactory,
    SiteFactory,
    UnitFactory,
    UserFactory,
    VisitFactory,
    VisitUnitFactory,
)

pytestmark = pytest.mark.django_db

FAR = dt.date(9999, 12, 31)


def _overdue_unit(tag: str) -> Unit:
    """A 30-day unit last seen 60 days ago: the refresh opens its maintenance flag."""
    unit = UnitFactory(tag=tag, pm_interval_days=30)
    start = timezone.now() - dt.timedelta(days=60)
    visit = VisitFactory(
        site=unit.site,
        status="reviewed",
        window_start=start,
        reviewed_by=UserFactory(),
        reviewed_at=start,
    )
    VisitUnitFactory(visit=visit, unit=unit)
    return unit


def test_refresh_flags_skips_the_unit_names_it_and_judges_the_rest(caplog):
    bad = UnitFactory(tag="BAD-1")
    Unit.objects.filter(pk=bad.pk).update(installed_on=FAR)
    good = _overdue_unit("GOOD-1")
    out = io.StringIO()
    with caplog.at_level(logging.WARNING, logger="diagnostics.history"):
        call_command("refresh_flags", stdout=out)
    said = f"skipped unit BAD-1 (id {bad.pk}): installed_on 9999-12-31 out of range"
    assert said in out.getvalue()
    assert "1 unit(s) skipped" in out.getvalue()
    assert said in caplog.text
    assert Flag.objects.filter(unit=good, kind="maintenance_overdue").exists()
    assert not Flag.objects.filter(unit=bad).exists()


def test_a_skipped_unit_keeps_the_flags_it_had():
    """Skipped is not judged: its open flags are neither updated nor cleared."""
    unit = _overdue_unit("LATE-1")
    services.refresh_flags()
    flag = Flag.objects.get(unit=unit, kind="maintenance_overdue")
    Unit.objects.filter(pk=unit.pk).update(installed_on=FAR)
    Visit.objects.filter(units=unit).update(
        window_start=dt.datetime(9999, 12, 30, tzinfo=dt.UTC),
        window_end=dt.datetime(9999, 12, 30, 4, tzinfo=dt.UTC),
    )
    result = services.refresh_flags()
    (skipped,) = result.skipped
    assert skipped.problems == (
        "installed_on 9999-12-31 out of range",
        "last visit 9999-12-30 out of range",
    )
    flag.refresh_from_db()
    assert flag.cleared_at is None


def test_maintenance_plans_leave_out_a_unit_with_a_date_out_of_range():
    bad = UnitFactory(tag="BAD-2")
    Unit.objects.filter(pk=bad.pk).update(installed_on=dt.date(1, 1, 1))
    good = UnitFactory(tag="GOOD-2")
    skipped: list = []
    plans = maintenance_plans(timezone.localdate(), skipped=skipped)
    assert [p.unit_id for p in plans] == [good.pk]
    assert [str(s) for s in skipped] == [
        f"skipped unit BAD-2 (id {bad.pk}): installed_on 0001-01-01 out of range"
    ]


def test_a_reading_time_out_of_range_skips_its_unit_not_the_refresh():
    """A reading stamped 9999-12-31 23:00 UTC at a Tokyo site is past the last date on the
    site's calendar: that unit is skipped and named, the others refreshed."""
    site = SiteFactory(time_zone="Asia/Tokyo")
    bad = UnitFactory(site=site, tag="TK-1")
    taken = dt.datetime(9999, 12, 31, 23, 0, tzinfo=dt.UTC)
    ReadingSetFactory(visit_unit=VisitUnitFactory(unit=bad, visit__site=site))
    ReadingSet.objects.update(taken_at=taken)
    good = _overdue_unit("GOOD-3")
    result = services.refresh_flags()
    assert [str(s) for s in result.skipped] == [
        f"skipped unit TK-1 (id {bad.pk}): reading taken 9999-12-31 out of range"
    ]
    assert Flag.objects.filter(unit=good, kind="maintenance_overdue").exists()
