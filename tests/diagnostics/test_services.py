"""The Django layer runs the core on records and stores what it returns."""

from __future__ import annotations

import datetime as dt
from io import StringIO

import pytest
from django.core.management import call_command
from django.utils import timezone

from diagnostics import services
from diagnostics.core import saturation, units
from diagnostics.core.diagnose import ALGORITHM_VERSION
from diagnostics.models import Diagnosis, Flag, LeakRate
from tests.factories import (
    ComponentFactory,
    ReadingSetFactory,
    RefrigerantEventFactory,
    UnitFactory,
    VisitUnitFactory,
)

pytestmark = pytest.mark.django_db


def _r404a_reading(vu, box_f=35.0, evap_f=25.0, air_f=70.0, cond_f=100.0, **extra):
    """A reading built from temperatures through the saturation engine (R-404A, sea level)."""
    table = saturation.table("R-404A")
    suction = units.pressure_from_kpa_abs(
        float(table.dew_pressure_kpa_abs(units.temperature_to_c(evap_f, "F"))), "kPa"
    )
    head = units.pressure_from_kpa_abs(
        float(table.bubble_pressure_kpa_abs(units.temperature_to_c(cond_f, "F"))), "kPa"
    )
    values = dict(
        box_temp_c=units.temperature_to_c(box_f, "F"),
        entering_air_temp_c=units.temperature_to_c(air_f, "F"),
        suction_kpa_gauge=suction,
        suction_line_temp_c=units.temperature_to_c(evap_f + 9, "F"),
        head_kpa_gauge=head,
        liquid_line_temp_c=units.temperature_to_c(cond_f - 3, "F"),
        compressor_running=True,
    )
    values.update(extra)
    return ReadingSetFactory(visit_unit=vu, **values)


def test_it_stores_a_diagnosis_with_the_algorithm_version():
    """A reading set diagnosed through the service gets one stored row, replaced on re-run."""
    reading = _r404a_reading(VisitUnitFactory())
    first = services.diagnose_reading_set(reading)
    again = services.diagnose_reading_set(reading)
    assert first.pk == again.pk
    assert Diagnosis.objects.count() == 1
    assert again.algorithm_version == ALGORITHM_VERSION
    assert 0 <= again.score <= 100
    assert {m["name"] for m in again.metrics} >= {"superheat", "evaporator_td"}


def test_it_reads_the_fitted_run_capacitor_rating_from_components():
    """The design the core sees takes the capacitor rating from the part in service now."""
    unit = UnitFactory()
    ComponentFactory(
        unit=unit, rating_uf_min=42.3, rating_uf_max=47.7, installed_on=dt.date(2024, 1, 1)
    )
    ComponentFactory(
        unit=unit,
        rating_uf_min=30.0,
        rating_uf_max=40.0,
        removed_on=dt.date(2024, 1, 1),
        installed_on=dt.date(2020, 1, 1),
    )
    design = services.unit_design(unit)
    assert design.run_capacitor_uf == pytest.approx(45.0)
    assert design.run_capacitor_tolerance_pct == pytest.approx(6.0)


def test_it_reads_a_printed_run_capacitor_and_a_start_capacitor_range():
    """A run capacitor printed 45 uF with no tolerance goes to the core as 45 uF +/- 6 %
    (docs/references.md §4: typically +/- 6 %); a start capacitor marked 88-108 uF as that range
    (IEC 60252-2). Tolerance 1e-9."""
    unit = UnitFactory()
    ComponentFactory(unit=unit, rated_uf=45.0, rating_uf_min=None, rating_uf_max=None)
    ComponentFactory(unit=unit, kind="start_capacitor", rating_uf_min=88.0, rating_uf_max=108.0)
    design = services.unit_design(unit)
    assert design.run_capacitor_uf == pytest.approx(45.0, abs=1e-9)
    assert design.run_capacitor_tolerance_pct == pytest.approx(6.0, abs=1e-9)
    assert (design.start_capacitor_min_uf, design.start_capacitor_max_uf) == (88.0, 108.0)


def test_it_maps_the_design_data_to_the_core():
    """Every design field reaches the core under the core's name; a control not known
    (stored blank) reaches it as None, the application default."""
    unit = UnitFactory(
        has_receiver=None,
        head_pressure_control="",
        head_pressure_setpoint_c=None,
        design_temperature_basis="mid_point",
        nameplate_volts=208,
        nameplate_volts_max=230,
    )
    design = services.unit_design(unit, components=())
    assert design.has_receiver is None
    assert design.head_pressure_control is None
    assert design.temperature_basis == "mid_point"
    assert (design.nameplate_volts, design.nameplate_volts_max) == (208, 230)
    unit.head_pressure_control, unit.head_pressure_setpoint_c = "flooding", 30.0
    design = services.unit_design(unit, components=())
    assert (design.head_pressure_control, design.head_pressure_setpoint_c) == ("flooding", 30.0)


def test_the_plausibility_check_sends_no_query(django_assert_num_queries):
    """A reading set not yet stored, its unit, site and refrigerant in hand, is checked
    without touching the database: suction 900 kPa over head 800 kPa on a running
    compressor names both fields, with the other's pressure as the limit (SI, kPa gauge)."""
    vu = VisitUnitFactory()
    unit = type(vu.unit).objects.select_related("site", "refrigerant").get(pk=vu.unit_id)
    vu.unit = unit
    reading = ReadingSetFactory.build(
        visit_unit=vu,
        suction_kpa_gauge=900.0,
        head_kpa_gauge=800.0,
        suction_line_temp_c=None,
        liquid_line_temp_c=None,
        compressor_running=True,
    )
    with django_assert_num_queries(0):
        problems = services.implausible_fields(reading)
    assert [(p.field, p.limit) for p in problems] == [
        ("suction_kpa_gauge", pytest.approx(800.0)),
        ("head_kpa_gauge", pytest.approx(900.0)),
    ]


def test_rescore_matches_the_one_row_path_and_only_touches_stale_rows():
    """The vectorised batch stores the same score as the per-row service, and a second run
    finds nothing stale."""
    vu = VisitUnitFactory()
    readings = [_r404a_reading(vu, cond_f=100 + 3 * i) for i in range(4)]
    assert services.rescore() == 4
    batch_scores = {d.reading_set_id: d.score for d in Diagnosis.objects.all()}
    for reading in readings:
        assert services.diagnose_reading_set(reading).score == pytest.approx(
            batch_scores[reading.id]
        )
    assert services.stale_reading_sets().count() == 0
    Diagnosis.objects.update(algorithm_version="old")
    assert services.rescore() == 4
    assert set(Diagnosis.objects.values_list("algorithm_version", flat=True)) == {ALGORITHM_VERSION}


def test_rescore_uses_a_fixed_number_of_queries(django_assert_max_num_queries):
    """Batches read rows with values_list and units once: 3 or 30 rows cost the same."""
    vu = VisitUnitFactory()
    for _ in range(3):
        _r404a_reading(vu)
    with django_assert_max_num_queries(8):
        services.rescore()
    for _ in range(27):
        _r404a_reading(vu)
    Diagnosis.objects.all().delete()
    with django_assert_max_num_queries(8):
        services.rescore()


def test_it_stores_the_leak_rate_of_the_worked_example():
    """40 CFR 82.152 worked example (docs/references.md §3, computed from the
    formulas): full charge 60 lb, 8 lb added 73 days after a 5 lb addition: annualizing
    66.67 %, rolling average 21.67 %, over the 20 % commercial threshold; tolerance 0.01."""
    unit = UnitFactory(
        full_charge_kg=units.mass_to_kg(60, "lb"), refrigerant=UnitFactory().refrigerant
    )
    vu = VisitUnitFactory(unit=unit, visit__site=unit.site)
    today = dt.date(2026, 6, 1)
    RefrigerantEventFactory(
        visit_unit=vu,
        amount_kg=units.mass_to_kg(5, "lb"),
        occurred_on=today - dt.timedelta(days=73),
    )
    event = RefrigerantEventFactory(
        visit_unit=vu, amount_kg=units.mass_to_kg(8, "lb"), occurred_on=today
    )
    rate = services.record_leak_rate(event)
    assert rate.annualizing_percent == pytest.approx(66.67, abs=0.01)
    assert rate.rolling_average_percent == pytest.approx(21.67, abs=0.01)
    assert rate.threshold_percent == 20
    assert rate.over_threshold
    assert rate.repair_due_on == today + dt.timedelta(days=30)
    assert LeakRate.objects.count() == 2


def test_it_opens_one_flag_per_unit_and_kind_and_clears_it():
    """refresh_flags opens a leak-rate flag once, keeps one open on a re-run (writing nothing
    when nothing changed), updates it when the history moves, and clears it when the history
    no longer calls for it."""
    unit = UnitFactory(full_charge_kg=units.mass_to_kg(60, "lb"))
    vu = VisitUnitFactory(unit=unit, visit__site=unit.site)
    today = timezone.localdate()
    RefrigerantEventFactory(visit_unit=vu, amount_kg=units.mass_to_kg(20, "lb"), occurred_on=today)
    first = services.refresh_flags(today=today, unit_ids=[unit.id])
    second = services.refresh_flags(today=today, unit_ids=[unit.id])
    assert (first.opened, second.opened, second.updated) == (1, 0, 0)
    assert Flag.objects.filter(unit=unit, kind="leak_rate", cleared_at__isnull=True).count() == 1
    RefrigerantEventFactory(visit_unit=vu, amount_kg=units.mass_to_kg(10, "lb"), occurred_on=today)
    moved = services.refresh_flags(today=today, unit_ids=[unit.id])
    assert (moved.opened, moved.updated) == (0, 1)
    assert Flag.objects.filter(unit=unit, kind="leak_rate", cleared_at__isnull=True).count() == 1
    unit.visit_units.get().refrigerant_events.all().delete()
    third = services.refresh_flags(today=today, unit_ids=[unit.id])
    assert third.cleared == 1
    assert not Flag.objects.filter(unit=unit, cleared_at__isnull=True).exists()


def test_maintenance_plans_count_the_last_reviewed_visit_on_the_site_calendar():
    """The plan behind the maintenance page and the overdue flag is one: the last reviewed
    visit is dated by the site's clock (01:30 UTC on 2 March is 1 March in Denver), and a
    planned visit booked ahead is the next one."""
    from diagnostics.history import maintenance_plans, unit_histories
    from tests.factories import SiteFactory, UserFactory, VisitFactory

    site = SiteFactory(time_zone="America/Denver")
    unit = UnitFactory(site=site, pm_interval_days=30)
    done = dt.datetime(2026, 3, 2, 1, 30, tzinfo=dt.UTC)
    reviewed = VisitFactory(
        site=site, status="reviewed", window_start=done, reviewed_by=UserFactory(), reviewed_at=done
    )
    VisitUnitFactory(visit=reviewed, unit=unit)
    ahead = dt.datetime(2026, 6, 10, 15, 0, tzinfo=dt.UTC)
    booked = VisitFactory(site=site, status="scheduled", window_start=ahead)
    VisitUnitFactory(visit=booked, unit=unit)
    today = dt.date(2026, 6, 1)
    (plan,) = maintenance_plans(today, unit_ids=[unit.id])
    assert plan.last_completed_on == dt.date(2026, 3, 1)
    assert plan.next_scheduled_on == dt.date(2026, 6, 10)
    (history,) = unit_histories(today, unit_ids=[unit.id])
    assert history.maintenance == plan


@pytest.mark.parametrize(
    ("zone", "taken", "dated"),
    [
        # Chicago is UTC-6 in winter: 02:30 UTC on 2 March is the evening of 1 March; on
        # 8 March, the day US clocks go forward (08:00 UTC), 05:30 UTC is 23:30 on 7 March
        # and 15:00 UTC is 10:00 on 8 March.
        (
            "America/Chicago",
            [(3, 2, 2, 30), (3, 8, 5, 30), (3, 8, 15, 0)],
            [(3, 1), (3, 7), (3, 8)],
        ),
        # Santiago sets clocks back at local midnight on 5 April 2026 (03:00 UTC): 02:30
        # and 03:30 UTC are both 23:30 on 4 April (UTC-3, then UTC-4), 04:30 UTC is 00:30
        # on 5 April. An offset taken at the start of the UTC day would date 03:30 on 5 April.
        (
            "America/Santiago",
            [(4, 5, 2, 30), (4, 5, 3, 30), (4, 5, 4, 30)],
            [(4, 4), (4, 4), (4, 5)],
        ),
    ],
)
def test_a_units_readings_are_dated_on_its_sites_calendar(zone, taken, dated):
    """Trends and start attempts date a reading by the site's clock, with the offset in
    force at the moment of the reading. Offsets from the IANA tz database (zoneinfo)."""
    from diagnostics.history import unit_histories
    from tests.factories import SiteFactory

    unit = UnitFactory(site=SiteFactory(time_zone=zone))
    for month, day, hour, minute in taken:
        at = dt.datetime(2026, month, day, hour, minute, tzinfo=dt.UTC)
        ReadingSetFactory(
            visit_unit=VisitUnitFactory(unit=unit, visit__site=unit.site),
            taken_at=at,
            stage="as_found",
            compressor_running=False,
            call_for_cooling=True,
            compressor_amps_1=0.0,
            supply_volts_1=230.0,
        )
    (history,) = unit_histories(dt.date(2026, 4, 1), unit_ids=[unit.id])
    assert [a.observed_on for a in history.start.start_attempts] == [
        dt.date(2026, month, day) for month, day in dated
    ]


def test_a_drift_is_judged_from_the_split_the_diagnosis_targets():
    """One rule, one place: the design split a unit's drift is judged from is the
    condenser-split target its diagnosis shows, whether the unit gives its own split or
    leaves it to its application (14 K for a cooler, Trott & Welch 3rd ed. Table 10.2;
    tolerance 1e-4 K, stored values keep four decimals)."""
    from diagnostics.history import unit_histories

    own = UnitFactory(application="medium_temp", design_condenser_split_k=9.0)
    defaulted = UnitFactory(application="medium_temp", design_condenser_split_k=None)
    judged = {}
    for unit in (own, defaulted):
        diagnosis = services.diagnose_reading_set(
            _r404a_reading(VisitUnitFactory(unit=unit, visit__site=unit.site))
        )
        judged[unit.id] = {t["name"]: t for t in diagnosis.targets}["condenser_split"]["value"]
    histories = unit_histories(timezone.localdate(), unit_ids=[own.id, defaulted.id])
    drift_from = {h.unit_id: h.split.design_split_k for h in histories}
    assert drift_from == pytest.approx(judged, abs=1e-4)
    assert drift_from[own.id] == 9.0
    assert drift_from[defaulted.id] == pytest.approx(14.0, abs=1e-4)


def test_the_rescore_command_says_what_it_did_and_why_nothing_is_left():
    """A fresh load has nothing stale (sets are diagnosed as they are stored): the command
    says so rather than a bare "Rescored 0", and counts the sets when there is work."""
    vu = VisitUnitFactory()
    _r404a_reading(vu)
    services.rescore()
    out = StringIO()
    call_command("rescore", stdout=out, verbosity=0)
    assert out.getvalue().strip() == (
        "Nothing to rescore: every reading set already has a diagnosis made with "
        f"algorithm {ALGORITHM_VERSION}."
    )
    Diagnosis.objects.update(algorithm_version="old")
    out = StringIO()
    call_command("rescore", stdout=out, verbosity=0)
    assert out.getvalue().strip() == f"Rescored 1 reading sets with algorithm {ALGORITHM_VERSION}."


def test_sets_taken_while_adjusting_stand_for_neither_found_nor_left():
    """A TXV set a quarter turn at a time leaves several sets between as-found and as-left;
    trends and start history read only the two that stand for the unit."""
    from diagnostics.history import unit_histories

    unit = UnitFactory()
    vu = VisitUnitFactory(unit=unit, visit__site=unit.site)
    for stage, cond_f in (("as_found", 100.0), ("adjusting", 130.0), ("adjusting", 128.0)):
        services.diagnose_reading_set(_r404a_reading(vu, cond_f=cond_f, stage=stage))
    services.diagnose_reading_set(_r404a_reading(vu, stage="as_left"))

    (history,) = unit_histories(timezone.localdate(), unit_ids=[unit.id])

    columns = history.split.points
    assert len(columns.split_k) == 2
    assert columns.as_left.tolist() == [False, True]
    assert max(columns.split_k) < 20.0  # neither 130 F nor 128 F condensing got in
