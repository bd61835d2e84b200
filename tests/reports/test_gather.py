"""Gathering a site-month: fixed query count, time zones, what is read and how it is judged."""

from __future__ import annotations

import datetime as dt
from zoneinfo import ZoneInfo

import pytest

from diagnostics.core.findings import RULES_BY_CODE
from reports.gather import gather_site_month
from reports.months import Month
from reports.words import FINDING_ACTIONS
from tests.factories import (
    ReadingSetFactory,
    RefrigerantEventFactory,
    SiteFactory,
    UnitFactory,
    VisitFactory,
    VisitUnitFactory,
    document_for,
)
from tests.reports.factories import (
    DiagnosisFactory,
    FlagFactory,
    LeakRateFactory,
    bulk_site_history,
)

MARCH = Month(2026, 3)
CHICAGO = ZoneInfo("America/Chicago")
AFTER_MARCH = dt.datetime(2026, 4, 2, 12, tzinfo=CHICAGO)

#: Queries of one gathering: site, components, units, readings, month details, technicians,
#: visit units, visits, refrigerant events, flags.
GATHER_QUERIES = 10


@pytest.mark.django_db
@pytest.mark.parametrize("n_units", [5, 50])
def test_gathering_costs_the_same_queries_for_5_and_50_units(
    n_units, django_assert_max_num_queries
):
    """A site-month is gathered in at most GATHER_QUERIES queries whether the site has 5 or
    50 units with twelve monthly visits each (no query per unit, visit or reading)."""
    history = bulk_site_history(n_units, MARCH)
    with django_assert_max_num_queries(GATHER_QUERIES):
        sm = gather_site_month(history.site.pk, MARCH, now=AFTER_MARCH)
    assert len(sm.units) == n_units
    assert all(len(u.history) == 12 for u in sm.units)
    assert all(len(u.checks) == 1 for u in sm.units)
    assert len(sm.visits) == 1


@pytest.mark.django_db
def test_it_names_every_unit_shows_open_flags_and_stored_leak_rates():
    """Every unit of the site appears; a flag open at the end of the month appears with its
    evidence; an addition carries the leak-rate figures stored for it, unchanged."""
    history = bulk_site_history(3, MARCH)
    sm = gather_site_month(history.site.pk, MARCH, now=AFTER_MARCH)
    assert [u.unit.tag for u in sm.units] == ["B-001", "B-002", "B-003"]
    flagged = sm.units[0]
    assert [f.kind for f in flagged.flags] == ["head_pressure_drift"]
    assert flagged.flags[0].evidence[0].quantities == (("condenser_split", 16.5, "K"),)
    rates = sm.units[1].leak_rates
    assert [(r.rolling_average_percent, r.over_threshold) for r in rates] == [
        (12.0, False),
        (31.0, True),
    ]
    assert rates[-1].annualizing_percent == pytest.approx(31.0 * 1.2)
    assert rates[-1].threshold_percent == 20.0


@pytest.mark.django_db
def test_a_past_months_report_shows_the_flags_as_they_stood_at_its_end():
    """A report for March made in May shows the flags open at the end of March: one opened
    just after the month is left out, one cleared in April shows as open (it was then), one
    cleared in March is left out; an acknowledgement made in April is not counted."""
    unit = UnitFactory()
    end = MARCH.end_in(CHICAGO)
    FlagFactory(unit=unit, kind="leak_rate", opened_at=end + dt.timedelta(hours=2))
    was_open = FlagFactory(
        unit=unit,
        kind="head_pressure_drift",
        opened_at=end - dt.timedelta(days=20),
        cleared_at=end + dt.timedelta(days=3),
        acknowledged_at=end + dt.timedelta(days=1),
    )
    FlagFactory(
        unit=unit,
        kind="start_components",
        opened_at=end - dt.timedelta(days=20),
        cleared_at=end - dt.timedelta(days=2),
    )
    sm = gather_site_month(unit.site.pk, MARCH, now=end + dt.timedelta(days=40))
    assert [f.id for f in sm.units[0].flags] == [was_open.id]
    assert sm.units[0].flags[0].acknowledged is False
    assert sm.month_closed


@pytest.mark.django_db
def test_a_report_for_the_month_under_way_shows_the_flags_open_now():
    """A report for March made on 20 March reads the flags open on 20 March: one opened on
    the 19th shows, one cleared on the 18th does not."""
    unit = UnitFactory()
    made = dt.datetime(2026, 3, 20, 12, tzinfo=CHICAGO)
    shown = FlagFactory(unit=unit, kind="leak_rate", opened_at=made - dt.timedelta(days=1))
    FlagFactory(
        unit=unit,
        kind="start_components",
        opened_at=made - dt.timedelta(days=10),
        cleared_at=made - dt.timedelta(days=2),
    )
    sm = gather_site_month(unit.site.pk, MARCH, now=made)
    assert [f.id for f in sm.units[0].flags] == [shown.id]
    assert not sm.month_closed


@pytest.mark.django_db
def test_a_visit_belongs_to_the_month_of_the_site_local_time():
    """A visit at 23:30 on 31 March in Denver (05:30 UTC on 1 April) counts for March."""
    site = SiteFactory(time_zone="America/Denver")
    denver = ZoneInfo("America/Denver")
    late = dt.datetime(2026, 3, 31, 23, 30, tzinfo=denver)
    VisitFactory(site=site, window_start=late, window_end=late + dt.timedelta(hours=1))
    march = gather_site_month(site.pk, MARCH, now=AFTER_MARCH)
    april = gather_site_month(site.pk, Month(2026, 4), now=AFTER_MARCH + dt.timedelta(days=40))
    assert len(march.visits) == 1
    assert march.visits[0].starts_at.date() == dt.date(2026, 3, 31)
    assert april.visits == ()


@pytest.mark.django_db
def test_an_empty_month_says_no_visits_and_units_not_checked():
    """With no visit in the month the site-month has no visits, every unit is 'not checked',
    and nothing is totalled."""
    unit = UnitFactory()
    sm = gather_site_month(unit.site.pk, MARCH, now=AFTER_MARCH)
    assert not sm.has_visits
    assert [u.health.status for u in sm.units] == ["unseen"]
    assert sm.refrigerant.added_kg == 0
    assert sm.attention == ()


@pytest.mark.django_db
def test_the_month_check_is_the_as_found_reading_with_its_stored_findings():
    """The month's score is the as-found diagnosis; the as-left one is kept beside it; the
    findings and glide choice come from the stored diagnosis."""
    taken = dt.datetime(2026, 3, 10, 9, tzinfo=CHICAGO)
    vu = VisitUnitFactory(
        visit__window_start=taken, visit__window_end=taken + dt.timedelta(hours=2)
    )
    found = DiagnosisFactory(
        reading_set=ReadingSetFactory(visit_unit=vu, taken_at=taken, stage="as_found"),
        score=55.0,
        document=document_for(findings={"undercharge": 0.8}),
    )
    DiagnosisFactory(
        reading_set=ReadingSetFactory(
            visit_unit=vu, taken_at=taken + dt.timedelta(hours=1), stage="as_left"
        ),
        score=96.0,
    )
    sm = gather_site_month(vu.unit.site.pk, MARCH, now=AFTER_MARCH)
    u = sm.units[0]
    assert u.current.reading_set_id == found.reading_set_id
    assert u.current.score == 55.0
    assert u.as_left.score == 96.0
    rule = RULES_BY_CODE["undercharge"]
    assert u.current.findings[0].title == rule.title
    assert u.current.findings[0].confidence == pytest.approx(0.8)
    assert u.current.findings[0].evidence
    assert u.health.status == "act"
    assert FINDING_ACTIONS["undercharge"].text + "." in u.actions
    assert not any(rule.advice in a for a in u.actions)
    assert sm.glide_choices == (found.glide_choice,)
    assert found.glide_choice


@pytest.mark.django_db
def test_refrigerant_added_is_totalled_in_co2e_with_the_published_gwp():
    """1.5 kg of R-404A added in the month is 1.5 x 3922 = 5883 kg CO2e (GWP AR4 3922 by the
    40 CFR 84.64(b) mass-weighted rule, docs/references.md §2; tolerance 1 kg)."""
    vu = VisitUnitFactory()  # the unit factory fits R-404A
    event = RefrigerantEventFactory(visit_unit=vu, amount_kg=1.5, occurred_on=dt.date(2026, 3, 9))
    LeakRateFactory(event=event)
    sm = gather_site_month(vu.unit.site.pk, MARCH, now=AFTER_MARCH)
    assert sm.refrigerant.added_kg == pytest.approx(1.5)
    assert sm.refrigerant.co2e_tonnes * 1000 == pytest.approx(5883, abs=1)
    assert sm.units[0].added_kg_month == pytest.approx(1.5)
