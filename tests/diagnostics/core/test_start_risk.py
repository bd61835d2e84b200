"""Start-component risk: capacitors, failed starts, voltage at start, replacement history."""

from __future__ import annotations

from datetime import date, timedelta

import pytest

from diagnostics.core import electrical
from diagnostics.core.start_history import (
    CapacitorColumns,
    CapacitorReading,
    ComponentReplacement,
    StartAttempt,
    StartComponent,
    StartHistory,
    fitted_capacitor,
)
from diagnostics.core.start_risk import assess_start_risk
from diagnostics.core.start_risk_rules import RiskLevel

TODAY = date(2026, 7, 1)


def ago(days: int) -> date:
    return TODAY - timedelta(days=days)


def codes(history: StartHistory) -> set[str]:
    return {i.code for i in assess_start_risk(history, TODAY).items}


def test_a_run_capacitor_just_above_its_tolerance_is_out_of_rating() -> None:
    """8.3 A at 295.4 V reads 74.5 uF, just above 70 uF +/-6 % (65.8-74.2 uF).

    Source: docs/references.md §4 worked example (uF = 2652.58 x A / V; tolerance per
    EIA-456-A / IEC 60252-1); the measured value within 0.05 uF.
    """
    measured = electrical.capacitor_uf_in_circuit(8.3, 295.4)
    assert measured == pytest.approx(74.5, abs=0.05)
    history = StartHistory(capacitor_readings=(CapacitorReading.run(ago(1), measured, 70.0),))
    result = assess_start_risk(history, TODAY)
    assert [i.code for i in result.items] == ["run_capacitor_out_of_rating"]
    assert result.level is RiskLevel.ELEVATED
    assert {n: v for n, v, _ in result.items[0].quantities}["rating_high"] == pytest.approx(74.2)


def test_a_run_capacitor_inside_its_tolerance_raises_nothing() -> None:
    """4.1 A at 240 V reads 45.31 uF, inside 45 uF +/-6 % (42.30-47.70 uF).

    Source: docs/references.md §4 worked example; tolerance 0.01 uF on the reading.
    """
    measured = electrical.capacitor_uf_in_circuit(4.1, 240.0)
    assert measured == pytest.approx(45.31, abs=0.01)
    history = StartHistory(capacitor_readings=(CapacitorReading.run(ago(1), measured, 45.0),))
    result = assess_start_risk(history, TODAY)
    assert result.items == ()
    assert result.level is RiskLevel.LOW


def test_a_start_capacitor_outside_its_marked_range() -> None:
    """A start capacitor marked 88-108 uF passes inside the range only (IEC 60252-2,
    docs/references.md §4): 80 uF is out, 95 uF is in."""
    out = StartHistory(capacitor_readings=(CapacitorReading.start(ago(1), 80.0, 88.0, 108.0),))
    ok = StartHistory(capacitor_readings=(CapacitorReading.start(ago(1), 95.0, 88.0, 108.0),))
    assert codes(out) == {"start_capacitor_out_of_rating"}
    assert codes(ok) == set()


def test_a_drifting_run_capacitor_is_projected_out_of_rating() -> None:
    """Synthetic: a 45 uF +/-6 % capacitor (low limit 42.3 uF, EIA-456-A) read 45.0, 44.2,
    43.4, 42.6 uF at 120-day steps loses 2.43 uF/year and leaves its rating 45 days from
    today; projected within 2 days."""
    readings = tuple(
        CapacitorReading.run(ago(d), v, 45.0)
        for d, v in ((360, 45.0), (240, 44.2), (120, 43.4), (0, 42.6))
    )
    result = assess_start_risk(StartHistory(capacitor_readings=readings), TODAY)
    assert [i.code for i in result.items] == ["run_capacitor_drift"]
    assert result.projected_on is not None
    assert abs((result.projected_on - (TODAY + timedelta(days=45))).days) <= 2
    loss = {n: v for n, v, _ in result.items[0].quantities}["loss_per_year"]
    assert loss == pytest.approx(0.8 / 120 * 365.25, rel=1e-6)


def test_readings_of_a_replaced_capacitor_do_not_count() -> None:
    """Readings before the capacitor was replaced belong to the old part; the as-left reading
    of the new one on the day counts."""
    readings = (
        CapacitorReading.run(ago(40), 30.0, 45.0),
        CapacitorReading.run(ago(40), 45.1, 45.0, as_left=True),
    )
    history = StartHistory(
        capacitor_readings=readings,
        replacements=(ComponentReplacement(ago(40), StartComponent.RUN_CAPACITOR),),
    )
    assert codes(history) == set()


def test_a_locked_rotor_start_and_a_plain_failed_start() -> None:
    """A compressor that hums near LRA without starting points at start components, a locked
    compressor or low voltage (common practice, docs/references.md §4); 'near' is our 80 %.
    Synthetic LRA 60 A: 55 A without starting is locked-rotor; 10 A without starting while
    the control calls is a failed start; 58 A inrush on a good start is normal."""
    history = StartHistory(
        start_attempts=(
            StartAttempt(ago(10), started=False, peak_amps=55.0),
            StartAttempt(ago(20), started=False, peak_amps=10.0, called=True),
            StartAttempt(ago(30), started=True, peak_amps=58.0),
        ),
        lra_a=60.0,
    )
    result = assess_start_risk(history, TODAY)
    assert {i.code for i in result.items} == {"locked_rotor", "failed_start"}
    assert result.score == pytest.approx(3.0)
    assert result.level is RiskLevel.ELEVATED


def test_a_compressor_found_off_cycle_is_not_a_failed_start() -> None:
    """Issue seen in the field: a compressor found off-cycle (0 A, box at its set point) was
    counted as a failed start, and two such visits opened a start-component flag. Without a
    call for cooling (or not recorded) and far from locked-rotor current it is off-cycle:
    no sign, whatever the idle line voltage reads."""
    history = StartHistory(
        start_attempts=(
            StartAttempt(ago(10), started=False, peak_amps=0.0, volts_at_start=150.0, called=False),
            StartAttempt(ago(40), started=False, peak_amps=0.0, volts_at_start=150.0),
        ),
        lra_a=60.0,
        nameplate_volts=230.0,
    )
    result = assess_start_risk(history, TODAY)
    assert result.items == ()
    assert result.level is RiskLevel.LOW


def test_low_voltage_at_start_against_the_nameplate_band() -> None:
    """A 208-230 V nameplate runs on 187-253 V (NEMA MG-1 12.44, docs/references.md §4):
    180 V at start is low, 190 V is not."""
    low = StartHistory(
        start_attempts=(StartAttempt(ago(5), True, volts_at_start=180.0),),
        nameplate_volts=208.0,
        nameplate_volts_max=230.0,
    )
    fine = StartHistory(
        start_attempts=(StartAttempt(ago(5), True, volts_at_start=190.0),),
        nameplate_volts=208.0,
        nameplate_volts_max=230.0,
    )
    assert codes(low) == {"low_voltage_at_start"}
    limit = {n: v for n, v, _ in assess_start_risk(low, TODAY).items[0].quantities}
    assert limit["limit_volts"] == pytest.approx(187.2)
    assert codes(fine) == set()


def test_hard_start_kit_and_repeat_replacements() -> None:
    """A hard-start kit is a stop-gap, and start parts replaced twice within a year point past
    the parts (common practice); replacements older than the year are not counted."""
    history = StartHistory(
        replacements=(
            ComponentReplacement(ago(300), StartComponent.START_CAPACITOR),
            ComponentReplacement(ago(100), StartComponent.START_RELAY),
            ComponentReplacement(ago(90), StartComponent.HARD_START_KIT),
        )
    )
    assert codes(history) == {"hard_start_kit", "repeat_replacements"}
    old = StartHistory(
        replacements=(
            ComponentReplacement(ago(500), StartComponent.START_CAPACITOR),
            ComponentReplacement(ago(100), StartComponent.START_RELAY),
        )
    )
    assert codes(old) == set()


def test_many_signs_make_a_high_risk_with_their_evidence() -> None:
    """Locked-rotor starts, low voltage and a hard-start kit together are a high risk, the
    heaviest sign first; events older than a year are ignored."""
    history = StartHistory(
        start_attempts=(
            StartAttempt(ago(3), False, peak_amps=50.0, volts_at_start=180.0),
            StartAttempt(ago(400), False, peak_amps=50.0),
        ),
        replacements=(ComponentReplacement(ago(60), StartComponent.HARD_START_KIT),),
        lra_a=58.0,
        nameplate_volts=230.0,
    )
    result = assess_start_risk(history, TODAY)
    assert result.level is RiskLevel.HIGH
    assert result.score == pytest.approx(4.0)
    assert result.items[0].code == "locked_rotor"
    assert "1 start(s)" in result.items[0].text


def test_columns_mean_the_same_as_readings() -> None:
    """Capacitor readings given as arrays (the fleet form) are judged like the same readings:
    the synthetic drifting 45 uF capacitor above, an older part replaced before it."""
    days = (400, 360, 240, 120, 0)
    values = (30.0, 45.0, 44.2, 43.4, 42.6)
    replaced = (ComponentReplacement(ago(380), StartComponent.RUN_CAPACITOR),)
    readings = tuple(
        CapacitorReading.run(ago(d), v, 45.0) for d, v in zip(days, values, strict=False)
    )
    low, high = electrical.run_capacitor_band(45.0)
    columns = CapacitorColumns.of(
        StartComponent.RUN_CAPACITOR, [ago(d) for d in days], values, low, high
    )
    as_readings = assess_start_risk(StartHistory(readings, replacements=replaced), TODAY)
    as_columns = assess_start_risk(StartHistory((columns,), replacements=replaced), TODAY)
    assert as_columns == as_readings
    assert [i.code for i in as_columns.items] == ["run_capacitor_drift"]


def _part(pk, kind, installed_on=None, removed_on=None, rating=45.0):
    return {
        "id": pk,
        "kind": kind,
        "installed_on": installed_on,
        "removed_on": removed_on,
        "rating_uf_min": rating,
        "rating_uf_max": None,
    }


def test_the_fitted_capacitor_is_the_newest_rated_one_still_in_service():
    """Removed and unrated parts are not fitted; the newest installation wins, one with an
    unknown date counts as the oldest, a later record breaks a tie; a hard-start kit holds
    the start capacitor."""
    parts = [
        _part(1, "run_capacitor"),  # original equipment, date unknown
        _part(2, "run_capacitor", date(2025, 6, 1)),
        _part(3, "run_capacitor", date(2026, 2, 1), removed_on=date(2026, 5, 1)),
        _part(4, "run_capacitor", date(2026, 4, 1), rating=None),
        _part(5, "hard_start_kit", date(2026, 1, 10)),
        _part(6, "start_relay", date(2026, 3, 1)),
    ]
    assert fitted_capacitor(parts, "run")["id"] == 2
    assert fitted_capacitor(parts, "start")["id"] == 5
    assert fitted_capacitor([*parts, _part(7, "run_capacitor", date(2025, 6, 1))], "run")["id"] == 7
    assert fitted_capacitor(parts[:1], "start") is None


def test_the_capacitor_fitted_on_a_day_ignores_later_changes():
    """On a past day, a part fitted later is not yet in service and one removed later still
    is; a part removed that very day is gone."""
    parts = [
        _part(1, "run_capacitor", date(2025, 1, 1)),
        _part(2, "run_capacitor", date(2026, 2, 1), removed_on=date(2026, 5, 1)),
        _part(3, "run_capacitor", date(2026, 5, 1)),
    ]
    assert fitted_capacitor(parts, "run", date(2026, 1, 31))["id"] == 1
    assert fitted_capacitor(parts, "run", date(2026, 3, 15))["id"] == 2
    assert fitted_capacitor(parts, "run", date(2026, 5, 1))["id"] == 3
    assert fitted_capacitor(parts, "run", date(2024, 12, 31)) is None
