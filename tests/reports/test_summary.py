"""Judging a unit-month: grades, trends, urgency and the money at stake (no database)."""

from __future__ import annotations

import datetime as dt
from dataclasses import replace
from zoneinfo import ZoneInfo

import pytest

from reports import summary
from reports.gather import Check, FlagRow, HistoryPoint, MetricRow, UnitInfo, UnitMonth
from reports.months import Month

MARCH = Month(2026, 3)
CHICAGO = ZoneInfo("America/Chicago")


def check(score: float | None = 95.0, **kw) -> Check:
    values = dict(
        reading_set_id=1,
        visit_reference="V-1",
        taken_at=dt.datetime(2026, 3, 5, 9, tzinfo=CHICAGO),
        stage="as_found",
        stage_label="As found",
        score=score,
        algorithm_version="test-1",
        glide_choice="",
        energy_penalty_pct=None,
        metrics=(),
        findings=(),
        cautions=(),
        compressor_running=True,
        mean_amps=7.0,
        mean_volts=230.0,
    )
    values.update(kw)
    return Check(**values)


def flag(severity: str = "warning", projected: dt.date | None = None) -> FlagRow:
    return FlagRow(
        id=1,
        kind="head_pressure_drift",
        kind_label="Head pressure drifting up",
        severity=severity,
        severity_label=severity.title(),
        severity_rank=summary.severity_rank(severity),
        summary="Condenser split rising",
        evidence=(),
        projected_on=projected,
        opened_on=dt.date(2026, 2, 1),
        acknowledged=False,
    )


#: A condenser split 6 K above the top of its ok band (synthetic).
SPLIT_HIGH = MetricRow("condenser_split", "condenser split", 20, 11, 7, 14, 6, "K", "fault", 15, "")


def point(day: dt.date, score: float) -> HistoryPoint:
    return HistoryPoint(day, score, *([None] * 16))


def test_grades_follow_the_report_rules():
    """Below 70 needs attention, 70-84 is kept an eye on, 85+ with nothing open is healthy;
    an urgent flag or a metric out of range needs attention whatever the score; a unit not
    checked and not flagged is 'not checked'."""
    assert summary.grade_unit(check(65), (), (), MARCH).status == "act"
    assert summary.grade_unit(check(80), (), (), MARCH).status == "watch"
    assert summary.grade_unit(check(92), (), (), MARCH).status == "sound"
    assert summary.grade_unit(check(95), (flag("warning"),), (), MARCH).status == "watch"
    assert summary.grade_unit(check(95), (flag("urgent"),), (), MARCH).status == "act"
    fault = MetricRow("condenser_split", "condenser split", 20, 11, 7, 14, 6, "K", "fault", 15, "")
    assert summary.grade_unit(check(95, metrics=(fault,)), (), (), MARCH).status == "act"
    assert summary.grade_unit(None, (), (), MARCH).status == "unseen"
    assert summary.grade_unit(None, (flag("notice"),), (), MARCH).status == "watch"


def test_a_drop_against_the_months_before_reads_as_getting_worse():
    """This month's score 10 points or more under the median of the three months before is
    'getting worse'; within 10 points is steady; one earlier month is too little history."""
    before = [point(dt.date(2025, m, 5), s) for m, s in ((12, 95), (11, 94), (10, 96))]
    worse = summary.trend_of([*before, point(dt.date(2026, 3, 5), 80)], MARCH)
    steady = summary.trend_of([*before, point(dt.date(2026, 3, 5), 90)], MARCH)
    short = summary.trend_of([before[0], point(dt.date(2026, 3, 5), 60)], MARCH)
    assert (worse.direction, steady.direction, short.direction) == ("worse", "steady", "unknown")


def test_units_are_ranked_by_grade_then_flag_severity_then_date():
    """Needs-attention units come before watched ones; among equals the more severe flag,
    then the nearer projected date, goes first; healthy units are left out."""
    info = UnitInfo(
        1,
        "A",
        "",
        "medium_temp",
        "",
        "",
        "R-404A",
        "A1",
        3922,
        10,
        "",
        "",
        True,
        2,
        None,
        None,
        None,
        230,
        1,
        60,
        10,
        60,
        None,
        None,
        None,
    )
    base = UnitMonth(
        info,
        (),
        (),
        (),
        (),
        (),
        0.0,
        check(95),
        None,
        summary.Health("sound", ()),
        summary.Story(summary.Trend("steady", ""), ""),
        None,
        (),
    )

    def unit(tag, status, flags=()):
        return replace(
            base,
            unit=replace(info, tag=tag),
            flags=tuple(flags),
            health=summary.Health(status, ("x",)),
        )

    ranked = summary.rank_attention(
        [
            unit("healthy", "sound"),
            unit("watch", "watch", [flag("warning")]),
            unit("act-late", "act", [flag("urgent", dt.date(2026, 6, 1))]),
            unit("act-soon", "act", [flag("urgent", dt.date(2026, 4, 10))]),
            unit("act-mild", "act", [flag("notice")]),
        ]
    )
    assert [u.unit.tag for u in ranked] == ["act-soon", "act-late", "act-mild", "watch"]


def test_energy_money_follows_the_worked_example():
    """Worked example: 230 V x 7.0 A x 0.85 power factor = 1.3685 kW (real power of a
    single-phase load, P = V I PF); running 16 h a day for 31 days = 678.8 kWh (16 h/day:
    common practice, from memory; PF 0.85 from memory, as in diagnostics/core/costs.py);
    a 10 % penalty costs 10/110 of it = 61.71 kWh, at 0.15 USD/kWh = 9.26 USD
    (tolerance 0.01)."""
    estimate = summary.energy_estimate(
        check(90, energy_penalty_pct=10.0, metrics=(SPLIT_HIGH,)),
        phase=1,
        tariff_per_kwh=0.15,
        currency="USD",
        days_in_month=31,
    )
    assert estimate.extra_kwh_per_month == pytest.approx(61.707, abs=0.01)
    assert estimate.extra_cost_per_month == pytest.approx(9.256, abs=0.01)


def test_energy_is_not_priced_without_a_running_current():
    """A penalty measured on a compressor that was not running (or without amps) is noted
    but not priced; no penalty means nothing at stake."""
    hum = summary.energy_estimate(
        check(40, energy_penalty_pct=12.0, compressor_running=False, metrics=(SPLIT_HIGH,)),
        phase=1,
        tariff_per_kwh=0.15,
        currency="USD",
        days_in_month=31,
    )
    assert hum.cost is None
    assert "not estimated" in hum.note
    assert (
        summary.energy_estimate(
            check(99), phase=1, tariff_per_kwh=0.15, currency="USD", days_in_month=31
        )
        is None
    )


def test_months_parse_and_bound_in_local_time():
    """'2026-03' is March 2026; it runs from local midnight on 1 March to local midnight on
    1 April; malformed months are refused."""
    march = Month.parse("2026-03")
    assert (march.first_day, march.last_day, march.label) == (
        dt.date(2026, 3, 1),
        dt.date(2026, 3, 31),
        "March 2026",
    )
    assert march.end_in(CHICAGO) == dt.datetime(2026, 4, 1, tzinfo=CHICAGO)
    assert march.shift(-11) == Month(2025, 4)
    for bad in ("2026-13", "2026-3", "26-03", "2026-00", "march"):
        with pytest.raises(ValueError, match="YYYY-MM|no such month"):
            Month.parse(bad)
