"""A year of visits tells one story: what each visit judged is what the trend and the flags
see at the end of the year.

Readings are built from temperatures through the saturation tables (R-404A, sea level; the
tables are checked against Lemmon 2003 in ``test_saturation.py``). Design split 11 K (ours,
a synthetic unit); the head-pressure control holds condensing near 90 F (32.2 C) in cold
weather (the default for a remote cooler whose control is not recorded, common practice).
"""

from __future__ import annotations

import datetime as dt

import pytest

from diagnostics import services
from diagnostics.core import saturation, units
from diagnostics.models import Flag
from tests.factories import ReadingSetFactory, UnitFactory, VisitUnitFactory

pytestmark = pytest.mark.django_db

YEAR_END = dt.date(2026, 12, 15)
TABLE = saturation.table("R-404A")


def _visit(unit, day: dt.date, *, air_c: float, cond_c: float | None, **extra) -> None:
    """One as-found reading set on ``day``: box 2 C on a 5.5 K TD, 5 K superheat, 3 K
    subcooling; ``cond_c`` is the condensing dew temperature (None: no pressures read)."""
    evap_c = 2.0 - 5.5
    p_s = float(TABLE.dew_pressure_kpa_abs(evap_c))
    values = dict(
        box_temp_c=2.0,
        entering_air_temp_c=air_c,
        suction_kpa_gauge=units.pressure_from_kpa_abs(p_s, "kPa"),
        suction_line_temp_c=evap_c + 5.0,
        compressor_running=True,
        call_for_cooling=True,
        compressor_amps_1=7.0,
        supply_volts_1=230.0,
    )
    if cond_c is not None:
        p_h = float(TABLE.dew_pressure_kpa_abs(cond_c))
        values.update(
            head_kpa_gauge=units.pressure_from_kpa_abs(p_h, "kPa"),
            liquid_line_temp_c=float(TABLE.bubble_temp_c(p_h)) - 3.0,
        )
    values.update(extra)
    taken = dt.datetime.combine(day, dt.time(15), tzinfo=dt.UTC)
    reading = ReadingSetFactory(
        visit_unit=VisitUnitFactory(unit=unit, visit__site=unit.site), taken_at=taken, **values
    )
    services.diagnose_reading_set(reading)


#: Monthly entering air (C) through a year ending in December, a cold-winter site.
AIR_BY_MONTH = {1: -4, 2: -2, 3: 4, 4: 10, 5: 16, 6: 24, 7: 29, 8: 28, 9: 22, 10: 13, 11: 5, 12: 0}


def _held_or_clean(air_c: float, design_split_k: float = 11.0) -> float:
    """Condensing of a clean condenser: air + split, held up near 90 F in cold weather."""
    return max(air_c + design_split_k, units.temperature_to_c(91.0, "F"))


def _open_kinds(unit) -> set[str]:
    return set(
        Flag.objects.filter(unit=unit, cleared_at__isnull=True).values_list("kind", flat=True)
    )


def test_a_clean_condenser_held_up_in_winter_raises_no_head_pressure_flag():
    """Issue seen in the field: the drift trend fitted the winter points the diagnosis had
    excused, so a clean condenser held up by its control got an urgent "head pressure
    creeping up" flag. The held splits are not judged, so they are not trended: no flag."""
    unit = UnitFactory()
    for month, air in AIR_BY_MONTH.items():
        _visit(unit, dt.date(2026, month, 10), air_c=air, cond_c=_held_or_clean(air))
    services.refresh_flags(today=YEAR_END)
    assert "head_pressure_drift" not in _open_kinds(unit)


def test_a_condenser_found_dirty_all_summer_is_still_flagged_at_the_years_end():
    """Issue seen in the field: a condenser found rejecting too little heat at seven summer
    visits had no open flag at the end of the year. On a warm site its split sat 6 K over
    design from April to October (found at each of those seven visits); the winter visits
    are held by the control and say nothing, so the flag stays open."""
    unit = UnitFactory()
    warm = {1: 5, 2: 7, 3: 12, 4: 20, 5: 25, 6: 30, 7: 33, 8: 32, 9: 28, 10: 22, 11: 12, 12: 6}
    for month, air in warm.items():
        cond = air + 17.0 if 4 <= month <= 10 else _held_or_clean(air)
        _visit(unit, dt.date(2026, month, 10), air_c=air, cond_c=cond)
    found = [
        f["code"]
        for visit_unit in unit.visit_units.all()
        for rs in visit_unit.reading_sets.all()
        for f in rs.diagnosis.findings
    ]
    assert found.count("condenser_heat_rejection") == 7
    services.refresh_flags(today=YEAR_END)
    assert "head_pressure_drift" in _open_kinds(unit)


def test_off_cycle_finds_open_no_start_component_flag():
    """Issue seen in the field: a compressor found off-cycle (0 A, box at its set point) at
    two visits opened a start-component flag. Off-cycle (no call for cooling) is not a start
    attempt; two visits where the control called and the compressor did not run are."""
    quiet = UnitFactory()
    for month in (10, 11):
        _visit(
            quiet,
            dt.date(2026, month, 10),
            air_c=10.0,
            cond_c=None,
            compressor_running=False,
            call_for_cooling=False,
            compressor_amps_1=0.0,
            supply_volts_1=180.0,
        )
    failing = UnitFactory()
    for month in (10, 11):
        _visit(
            failing,
            dt.date(2026, month, 10),
            air_c=10.0,
            cond_c=None,
            compressor_running=False,
            call_for_cooling=True,
            compressor_amps_1=0.0,
        )
    services.refresh_flags(today=YEAR_END)
    assert "start_components" not in _open_kinds(quiet)
    assert "start_components" in _open_kinds(failing)


def test_a_running_supply_voltage_is_not_taken_as_the_voltage_at_start():
    """Issue seen in the field: the supply voltage read with the compressor running was
    taken as its voltage at start. A 230 V unit running on 195 V (under the 207 V floor,
    NEMA MG-1 12.44: -10 %) at two visits is a supply finding at each visit, not two starts
    at low voltage: no start-component flag."""
    unit = UnitFactory()
    for month in (10, 11):
        _visit(unit, dt.date(2026, month, 10), air_c=20.0, cond_c=31.0, supply_volts_1=195.0)
    codes = {
        f["code"]
        for visit_unit in unit.visit_units.all()
        for rs in visit_unit.reading_sets.all()
        for f in rs.diagnosis.findings
    }
    assert "supply_problem" in codes
    services.refresh_flags(today=YEAR_END)
    assert "start_components" not in _open_kinds(unit)
