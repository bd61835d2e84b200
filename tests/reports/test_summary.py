"""Judging a unit-month: grades, trends, urgency and the money at stake (no database)."""

from __future__ import annotations

import datetime as dt
from dataclasses import replace
from zoneinfo import ZoneInfo

import pytest

from reports import data, overview, summary, words
from reports.data import (
    Check,
    FindingRow,
    FlagRow,
    Health,
    HistoryPoint,
    MetricRow,
    Story,
    Trend,
    UnitInfo,
    UnitMonth,
)
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
        forecast=(),
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
        Health("sound", ()),
        Story(Trend("steady", ""), ""),
        None,
        (),
    )

    def unit(tag, status, flags=()):
        return replace(
            base,
            unit=replace(info, tag=tag),
            flags=tuple(flags),
            health=Health(status, ("x",)),
        )

    ranked = overview.rank_attention(
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


def _steady_history() -> list[HistoryPoint]:
    """Scores of 90 in the three months before March and in March itself."""
    return [point(dt.date(2025, m, 5), 90) for m in (12,)] + [
        point(dt.date(2026, m, 5), 90) for m in (1, 2, 3)
    ]


def test_an_urgent_drift_flag_makes_the_trend_getting_worse_whatever_the_score():
    """Scores holding at 90 read 'holding steady' on their own, but beside an open urgent
    head-pressure drift flag the trend is 'getting worse' and names the flag: the flag rests
    on several visits, one month's score can hide it."""
    history = _steady_history()
    alone = summary.story_of(check(90), history, (), MARCH)
    flagged = summary.story_of(check(90), history, (flag("urgent"),), MARCH)
    assert alone.trend.label == "Holding steady"
    assert flagged.trend.label == "Getting worse"
    assert "head pressure drifting up (urgent)" in flagged.trend.detail


def test_a_steady_score_with_a_fault_reads_no_better():
    """A score as steady as the months before while a reading is far off its aim is 'no
    better', not 'holding steady'."""
    story = summary.story_of(check(90, metrics=(SPLIT_HIGH,)), _steady_history(), (), MARCH)
    assert story.trend.label == "No better"


def test_a_capacitor_out_of_its_rating_is_never_called_nothing_found():
    """With no probable cause stored but the run capacitor far off its rating, the sentence
    in the causes' place names the capacitor; with nothing off it says nothing was found;
    with findings listed it says nothing (the findings speak)."""
    capacitor = MetricRow(
        "run_capacitor", "run capacitor", 38, 45, 42.3, 47.7, -4.3, "uF", "fault", 15, ""
    )
    off = summary.story_of(check(85, metrics=(capacitor,)), (), (), MARCH)
    assert "No probable cause" not in off.cause
    assert "run capacitor is far off its aim" in off.cause
    fine = summary.story_of(check(99), (), (), MARCH)
    assert fine.cause == "Nothing wrong was found in this check."
    found = FindingRow("undercharge", "Refrigerant charge looks low", ("a", "b"), 0.6, "")
    assert summary.story_of(check(70, findings=(found,)), (), (), MARCH).cause == ""


def test_actions_are_the_managers_decisions_not_the_technicians_steps():
    """A stored undercharge finding asks the manager to approve a leak search; the
    technician's advice is not among the actions; a warm box comes first; a capacitor far
    off its rating with no finding covering it asks for its replacement."""
    advice = "Look for the leak before adding anything"
    found = FindingRow("undercharge", "Refrigerant charge looks low", ("a", "b"), 0.6, advice)
    box = MetricRow("box_temp", "box temperature", 9, 2, 0, 4, 5, "C", "fault", 15, "")
    capacitor = MetricRow(
        "run_capacitor", "run capacitor", 38, 45, 42.3, 47.7, -4.3, "uF", "fault", 15, ""
    )
    actions = summary.actions_for(
        check(50, findings=(found,), metrics=(capacitor, box)), (), (), MARCH
    )
    assert actions[0] == words.METRIC_ACTIONS["box_temp"].text + "."
    assert words.FINDING_ACTIONS["undercharge"].text + "." in actions
    assert words.METRIC_ACTIONS["run_capacitor"].text + "." in actions
    assert not any(advice in a for a in actions)


def test_energy_is_priced_only_above_the_condensing_target():
    """A stored penalty on a unit whose split sits inside its ok band (or whose head is held
    up by its control, not judged) costs nothing: no estimate, so it is not listed as 'not
    priced' either; above the band it is priced."""
    inside = MetricRow("condenser_split", "condenser split", 12, 11, 7, 14, 0, "K", "ok", 0, "")
    held = MetricRow(
        "condenser_split",
        "condenser split",
        None,
        11,
        7,
        14,
        None,
        "K",
        "not_scored",
        0,
        "head-pressure control holds condensing up",
    )

    def estimate(metric):
        return summary.energy_estimate(
            check(90, energy_penalty_pct=4.0, metrics=(metric,)),
            phase=1,
            tariff_per_kwh=0.15,
            currency="USD",
            days_in_month=31,
        )

    assert estimate(inside) is None
    assert estimate(held) is None
    assert estimate(SPLIT_HIGH).extra_cost_per_month > 0


def test_conditions_share_one_vocabulary_and_one_rule():
    """The report's health statuses are the pages' condition words; a score alone maps to
    them by the report's thresholds (85 and 70), and no score is 'not enough readings'."""
    assert {k: c.label for k, c in words.CONDITIONS.items()} == data.HEALTH_LABELS
    assert [summary.score_condition(s) for s in (95, 85, 84, 70, 69, None)] == [
        "sound",
        "sound",
        "watch",
        "watch",
        "act",
        "unjudged",
    ]
    assert summary.grade_unit(check(None), (), (), MARCH).label == "Not enough readings to judge"


def test_one_topic_is_asked_once_in_its_most_pressing_words():
    """An urgent start-components flag, a compressor that stalled at start and a run
    capacitor far off its rating are one decision: replace the start components now (the
    stall's words), asked once in the flag's place; the warm box still comes first."""
    stall = FindingRow("compressor_not_starting", "Compressor stalls at start", ("a", "b"), 0.7, "")
    capacitor = MetricRow(
        "run_capacitor", "run capacitor", 35, 45, 42.3, 47.7, -6.8, "uF", "fault", 15, ""
    )
    box = MetricRow("box_temp", "box temperature", 9, 2, 0, 4, 5, "C", "fault", 15, "")
    start_flag = replace(flag("urgent"), kind="start_components", kind_label="Start components")
    actions = summary.actions_for(
        check(30, findings=(stall,), metrics=(capacitor, box)),
        (start_flag, flag("warning")),
        (),
        MARCH,
    )
    assert actions == (
        words.METRIC_ACTIONS["box_temp"].text + ".",
        words.FINDING_ACTIONS["compressor_not_starting"].text + ".",
        words.FLAG_ACTIONS["head_pressure_drift"].text + ".",
    )


def test_a_warm_box_with_no_cause_named_asks_for_the_stock_and_a_visit():
    """A box far off its design with no probable cause stored asks staff to check the stock
    first, then for a visit to find the cause."""
    box = MetricRow("box_temp", "box temperature", 9, 2, 0, 4, 5, "C", "fault", 15, "")
    assert summary.actions_for(check(85, metrics=(box,)), (), (), MARCH) == (
        words.METRIC_ACTIONS["box_temp"].text + ".",
        words.follow_up("box temperature").text + ".",
    )


def test_a_passed_projected_date_asks_for_the_work_now():
    """A flag whose projected date has passed asks for its work now, naming the date."""
    late = flag("urgent", projected=dt.date(2026, 2, 1))
    (action,) = summary.actions_for(check(95), (late,), (), MARCH, today=dt.date(2026, 3, 31))
    assert action.endswith("its projected date (01 Feb 2026) has passed: book it now.")
