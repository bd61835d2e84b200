"""The flags that should be open on a unit: one per kind, with severity and evidence."""

from __future__ import annotations

from datetime import date, timedelta

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from diagnostics.core import units
from diagnostics.core.appliance_leaks import Appliance, LeakRepair, RefrigerantAddition
from diagnostics.core.flags import (
    DEFAULT_FLAG_RULES,
    FlagKind,
    LeakHistory,
    Severity,
    UnitHistory,
    decide_flags,
    decide_flags_many,
    reconcile,
)
from diagnostics.core.maintenance import MaintenancePlan
from diagnostics.core.sources import describe_rules
from diagnostics.core.split_drift import DEFAULT_DRIFT_RULES
from diagnostics.core.split_drift_types import SplitDriftInput, SplitPoint
from diagnostics.core.start_history import StartAttempt, StartHistory

TODAY = date(2026, 8, 1)


def ago(days: int) -> date:
    return TODAY - timedelta(days=days)


def lb(value: float) -> float:
    return float(units.mass_to_kg(value, "lb"))


def rising_split(slope_k_per_day: float, split_today_k: float, n: int = 12) -> SplitDriftInput:
    """Synthetic monthly splits on a straight line, design split 14 K."""
    points = tuple(
        SplitPoint(ago(30 * k), split_today_k - slope_k_per_day * 30 * k, 25.0) for k in range(n)
    )
    return SplitDriftInput(points, design_split_k=14.0)


def kinds(history: UnitHistory) -> dict[FlagKind, Severity]:
    return {d.kind: d.severity for d in decide_flags(history, TODAY)}


def test_a_drift_reaching_its_limit_soon_is_a_high_flag_with_its_date() -> None:
    """Synthetic: split 19.0 K rising 0.03 K/day reaches the 19.6 K limit in 20 days: urgent
    (within 30 days), projected on that date, evidence naming the slope, and the forecast
    as numbers (slope 10.96 K/year = 0.03 x 365.25; split now 19 K) with its dates."""
    (decision,) = decide_flags(UnitHistory(1, split=rising_split(0.03, 19.0)), TODAY)
    assert decision.kind is FlagKind.HEAD_PRESSURE_DRIFT
    assert decision.severity is Severity.URGENT
    assert decision.projected_date == TODAY + timedelta(days=20)
    forecast = {name: (value, unit) for name, value, unit in decision.forecast}
    assert forecast["split_slope"] == (pytest.approx(0.03 * 365.25, abs=1e-6), "K/year")
    assert forecast["split_now"][0] == pytest.approx(19.0, abs=1e-6)
    assert dict(decision.forecast_dates)["limit_crossed_on"] == TODAY + timedelta(days=20)
    rising = next(e for e in decision.evidence if "rising" in e.text)
    assert ("split_slope", forecast["split_slope"][0], "K/year") in rising.quantities


def test_drift_severity_follows_how_soon_the_limit_comes() -> None:
    """Synthetic: limit in 60 days -> warning; in 150 days -> notice; beyond the horizon -> none."""
    assert kinds(UnitHistory(1, split=rising_split(0.02, 18.4))) == {
        FlagKind.HEAD_PRESSURE_DRIFT: Severity.WARNING
    }
    assert kinds(UnitHistory(1, split=rising_split(0.02, 16.6))) == {
        FlagKind.HEAD_PRESSURE_DRIFT: Severity.NOTICE
    }
    assert kinds(UnitHistory(1, split=rising_split(0.01, 15.0))) == {}


@settings(max_examples=60, deadline=None)
@given(
    n=st.integers(min_value=0, max_value=DEFAULT_DRIFT_RULES.min_points - 1),
    data=st.data(),
)
def test_a_drift_flag_never_opens_on_fewer_points_than_the_minimum(
    n: int, data: st.DataObject
) -> None:
    """Whatever the dates and values, fewer as-found points than the minimum open no drift
    flag (property-based)."""
    offsets = data.draw(st.lists(st.integers(0, 2000), min_size=n, max_size=n))
    values = data.draw(st.lists(st.floats(-20.0, 80.0, allow_nan=False), min_size=n, max_size=n))
    points = tuple(SplitPoint(ago(d), v, 20.0) for d, v in zip(offsets, values, strict=True))
    history = UnitHistory(1, split=SplitDriftInput(points, design_split_k=14.0))
    assert FlagKind.HEAD_PRESSURE_DRIFT not in kinds(history)


@settings(max_examples=40, deadline=None)
@given(
    n=st.integers(min_value=DEFAULT_DRIFT_RULES.min_points, max_value=12),
    step=st.integers(min_value=1, max_value=80),
    slope=st.floats(0.0, 0.2),
)
def test_a_drift_flag_never_opens_on_a_span_under_the_minimum(
    n: int, step: int, slope: float
) -> None:
    """Enough points packed into less than the minimum span open no drift flag either."""
    span = step * (n - 1)
    if span >= DEFAULT_DRIFT_RULES.min_span_days:
        step = (DEFAULT_DRIFT_RULES.min_span_days - 1) // (n - 1)
    points = tuple(SplitPoint(ago(step * k), 18.0 - slope * step * k, 20.0) for k in range(n))
    history = UnitHistory(1, split=SplitDriftInput(points, design_split_k=14.0))
    assert FlagKind.HEAD_PRESSURE_DRIFT not in kinds(history)


def test_start_risk_maps_to_a_flag_only_when_raised() -> None:
    """Two locked-rotor starts (synthetic, LRA 60 A) are an urgent start-components flag; one
    failed start alone is a low risk and opens none."""
    locked = StartHistory(
        start_attempts=(
            StartAttempt(ago(5), False, peak_amps=55.0),
            StartAttempt(ago(50), False, peak_amps=57.0),
        ),
        lra_a=60.0,
    )
    assert kinds(UnitHistory(1, start=locked)) == {FlagKind.START_COMPONENTS: Severity.URGENT}
    once = StartHistory(start_attempts=(StartAttempt(ago(5), False),))
    assert kinds(UnitHistory(1, start=once)) == {}


def leak(additions: tuple[RefrigerantAddition, ...], repairs: tuple[LeakRepair, ...] = ()):
    return LeakHistory(Appliance("R-404A", lb(60)), additions, repairs)


def test_a_leak_over_threshold_stays_open_until_a_verified_repair() -> None:
    """docs/references.md §3 worked example (60 lb, 8 lb 73 days after 5 lb: 21.67 %
    rolling average, over 20 %): open as a warning before the 30-day repair deadline, still
    open after a repair without verification, closed once a follow-up test verified it."""
    additions = (
        RefrigerantAddition(ago(83), lb(5)),
        RefrigerantAddition(ago(10), lb(8)),
    )
    (opened,) = decide_flags(UnitHistory(1, leak=leak(additions)), TODAY)
    assert opened.kind is FlagKind.LEAK_RATE
    assert opened.severity is Severity.WARNING
    assert opened.projected_date == ago(10) + timedelta(days=30)
    repaired = leak(additions, (LeakRepair(ago(5)),))
    (pending,) = decide_flags(UnitHistory(1, leak=repaired), TODAY)
    assert pending.projected_date == ago(5) + timedelta(days=30)
    verified = leak(additions, (LeakRepair(ago(5), verified_on=ago(2)),))
    assert decide_flags(UnitHistory(1, leak=verified), TODAY) == ()


def test_a_missed_repair_deadline_makes_the_leak_flag_high() -> None:
    """The 30-day repair deadline (40 CFR 82.157(d), docs/references.md §3) passed without a
    repair: urgent."""
    additions = (RefrigerantAddition(ago(40), lb(15)),)
    assert kinds(UnitHistory(1, leak=leak(additions))) == {FlagKind.LEAK_RATE: Severity.URGENT}


def test_a_leak_below_the_scope_is_a_low_flag() -> None:
    """A 10 lb R-404A unit is below the 15 lb Part 84 floor (docs/references.md §3): the
    exceedance is a notice, with no legal deadline."""
    history = LeakHistory(Appliance("R-404A", lb(10)), (RefrigerantAddition(ago(3), lb(5)),))
    (decision,) = decide_flags(UnitHistory(1, leak=history), TODAY)
    assert decision.severity is Severity.NOTICE
    assert decision.projected_date is None


def test_maintenance_overdue_after_the_grace_period() -> None:
    """A 90-day plan: 5 days late is within the 7-day grace; 20 days late is a warning; 50
    days (over half the interval) urgent; booked, a notice."""

    def plan(days_since: int, booked: date | None = None) -> UnitHistory:
        return UnitHistory(
            1, maintenance=MaintenancePlan(1, 1, 90, ago(days_since), next_scheduled_on=booked)
        )

    assert kinds(plan(95)) == {}
    assert kinds(plan(110)) == {FlagKind.MAINTENANCE_OVERDUE: Severity.WARNING}
    assert kinds(plan(140)) == {FlagKind.MAINTENANCE_OVERDUE: Severity.URGENT}
    assert kinds(plan(140, booked=TODAY + timedelta(days=3))) == {
        FlagKind.MAINTENANCE_OVERDUE: Severity.NOTICE
    }


def test_one_decision_per_kind_and_the_fleet_path_agrees() -> None:
    """A unit with every problem gets exactly one decision of each kind; the many-unit path
    gives what each unit gives alone."""
    full = UnitHistory(
        7,
        split=rising_split(0.03, 19.0),
        start=StartHistory(
            start_attempts=(
                StartAttempt(ago(5), False, peak_amps=55.0),
                StartAttempt(ago(9), False, peak_amps=55.0),
            ),
            lra_a=60.0,
        ),
        leak=leak((RefrigerantAddition(ago(3), lb(15)),)),
        maintenance=MaintenancePlan(7, 1, 90, ago(140)),
    )
    quiet = UnitHistory(
        8, split=rising_split(0.0, 15.0), maintenance=MaintenancePlan(8, 1, 90, ago(10))
    )
    alone = [decide_flags(h, TODAY) for h in (full, quiet)]
    assert sorted(d.kind for d in alone[0]) == sorted(FlagKind)
    assert alone[1] == ()
    assert decide_flags_many([full, quiet], TODAY) == {7: alone[0], 8: alone[1]}


def test_reconcile_opens_updates_and_closes() -> None:
    """Open kinds still decided are updated, new ones opened, the rest closed."""
    (drift,) = decide_flags(UnitHistory(1, split=rising_split(0.03, 19.0)), TODAY)
    changes = reconcile(["head_pressure_drift", "leak_rate"], [drift])
    assert changes.to_update == (drift,)
    assert changes.to_open == ()
    assert changes.to_close == (FlagKind.LEAK_RATE,)
    fresh = reconcile([], [drift])
    assert fresh.to_open == (drift,)
    assert fresh.to_close == ()


def test_rules_describe_themselves_with_sources() -> None:
    """Every threshold of the drift rules and the flag grading comes with its source."""
    described = describe_rules(DEFAULT_DRIFT_RULES)
    assert described[0][:2] == ("min_points", 5)
    assert all(source for _, _, source in described)
    assert {name for name, _, _ in describe_rules(DEFAULT_FLAG_RULES)} == {
        "drift_urgent_within_days",
        "drift_warning_within_days",
    }


def test_a_fleet_gets_a_decision_per_unit_and_drift_on_the_rising_ones() -> None:
    """Synthetic fleet of 200 units x 24 monthly visits: every fourth unit rises 0.02 K/day to
    17 K today (limit 19.6 K in 130 days), the rest sit at 15 K with 0.3 K noise. Exactly the
    rising ones carry a drift flag."""
    rng = np.random.default_rng(1)

    def unit(u: int) -> UnitHistory:
        slope = 0.02 if u % 4 == 0 else 0.0
        points = tuple(
            SplitPoint(
                ago(30 * k),
                (17.0 if slope else 15.0) - slope * 30 * k + (0.0 if slope else rng.normal(0, 0.3)),
                25.0,
            )
            for k in range(24)
        )
        return UnitHistory(u, split=SplitDriftInput(points, design_split_k=14.0))

    out = decide_flags_many([unit(u) for u in range(200)], TODAY)
    flagged = {
        u for u, ds in out.items() if any(d.kind is FlagKind.HEAD_PRESSURE_DRIFT for d in ds)
    }
    assert len(out) == 200
    assert flagged == {u for u in range(200) if u % 4 == 0}
