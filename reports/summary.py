"""Judging a site-month from its gathered data: health grades, trends, urgency, money at stake.

Pure functions over the plain data of ``data.py`` (no queries, no Django). The grading
thresholds are ours and live in one table (``ReportRules``) with the reason beside each value;
the money comes from the diagnostics core (``costs.energy_cost``) with the stored penalty.
"""

from __future__ import annotations

from collections.abc import Iterable, Sequence
from dataclasses import dataclass, field
from datetime import date
from statistics import fmean, median

from diagnostics.core import costs
from diagnostics.core.scoring import SCORING_TABLE
from diagnostics.core.sources import cite

from .data import (
    Check,
    EnergyEstimate,
    FlagRow,
    Health,
    HistoryPoint,
    LeakRateRow,
    Story,
    Trend,
)
from .months import Month
from .words import (
    FINDING_ACTIONS,
    FLAG_ACTIONS,
    METRIC_ACTIONS,
    NOT_FOR_ICE_MACHINES,
    SCORE_NAME,
    Decision,
    follow_up,
    one_per_topic,
)


@dataclass(frozen=True)
class ReportRules:
    healthy_score_min: float = field(
        default=85.0,
        metadata=cite(
            "Rimewatch choice: a score of 85 or more with nothing flagged reads as healthy"
        ),
    )
    attention_score_below: float = field(
        default=70.0,
        metadata=cite(
            "Rimewatch choice: below 70 a unit has lost points on several metrics or a fault"
        ),
    )
    trend_change_points: float = field(
        default=10.0,
        metadata=cite(
            "Rimewatch choice: a score 10 points away from the median of the months before is a "
            "change, not scatter"
        ),
    )
    trend_months_compared: int = field(
        default=3,
        metadata=cite("Rimewatch choice: the three months before the report month"),
    )
    trend_min_earlier_months: int = field(
        default=2,
        metadata=cite("Rimewatch choice: a trend needs at least two earlier months with a score"),
    )
    chart_min_points: int = field(
        default=3,
        metadata=cite("Rimewatch choice: fewer than three visits do not make a trend line"),
    )
    max_actions: int = field(
        default=4,
        metadata=cite("Rimewatch choice: the first page lists at most four actions"),
    )


DEFAULT_RULES = ReportRules()


#: Flag severities, both as stored (notice/warning/urgent) and as the core names them.
SEVERITY_RANK: dict[str, int] = {
    "urgent": 3,
    "high": 3,
    "warning": 2,
    "medium": 2,
    "notice": 1,
    "low": 1,
}


def severity_rank(severity: str) -> int:
    return SEVERITY_RANK.get(severity, 1)


# --- health of one unit -------------------------------------------------------------------------


def current_check(checks: Sequence[Check]) -> Check | None:
    """The check that stands for the month: the latest as-found reading, else the latest."""
    found = [c for c in checks if c.stage == "as_found"]
    pool = found or list(checks)
    return max(pool, key=lambda c: (c.taken_at, c.reading_set_id), default=None)


def as_left_check(checks: Sequence[Check], current: Check | None) -> Check | None:
    """The as-left reading of the same visit as ``current``, if one was taken."""
    if current is None:
        return None
    left = [
        c
        for c in checks
        if c.stage == "as_left"
        and c.visit_reference == current.visit_reference
        and c.reading_set_id != current.reading_set_id
    ]
    return max(left, key=lambda c: (c.taken_at, c.reading_set_id), default=None)


def _month_leaks(leak_rows: Iterable[LeakRateRow], month: Month) -> list[LeakRateRow]:
    return [
        a for a in leak_rows if month.first_day <= a.occurred_on <= month.last_day and a.computed
    ]


def _whose(labels: Sequence[str]) -> str:
    return "its" if len(labels) == 1 else "their"


def score_condition(score: float | None, rules: ReportRules = DEFAULT_RULES) -> str:
    """The condition a check score alone stands for (``words.CONDITIONS``); None is a check
    with too few readings to score."""
    if score is None:
        return "unjudged"
    if score < rules.attention_score_below:
        return "act"
    if score < rules.healthy_score_min:
        return "watch"
    return "sound"


def judge(
    score: float | None,
    metrics: Iterable[tuple[str, str]],
    finding_titles: Sequence[str],
    flags: Iterable[tuple[str, str, int]] = (),
    over_threshold: Iterable[float | None] = (),
    *,
    checked: bool = True,
    rules: ReportRules = DEFAULT_RULES,
) -> Health:
    """A unit's condition and the reasons, in the customer's words (no rule values).

    The one rule behind every condition shown, on the pages and in the report: ``metrics``
    are (label, status) pairs of the check, ``flags`` (label, severity label, severity rank)
    of the flags open, ``over_threshold`` the leak rates over their threshold; ``checked``
    is False where no check was made in the period.
    """
    act: list[str] = []
    watch: list[str] = []
    for label, severity_label, rank in flags:
        (act if rank >= 3 else watch).append(
            f"open flag: {label.lower()} ({severity_label.lower()})"
        )
    for pct in over_threshold:
        act.append(f"leak rate {pct or 0:.0f} %, over the leak-rate threshold")
    if checked:
        condition = score_condition(score, rules)
        if score is not None and condition in ("act", "watch"):
            (act if condition == "act" else watch).append(f"{SCORE_NAME} {score:.0f} of 100")
        statuses = list(metrics)
        faults = [label for label, status in statuses if status == "fault"]
        watches = [label for label, status in statuses if status == "watch"]
        if faults:
            act.append(f"far off {_whose(faults)} aim: " + ", ".join(faults))
        if watches:
            watch.append(f"off {_whose(watches)} aim: " + ", ".join(watches))
        if finding_titles and not faults:
            watch.append("probable cause: " + finding_titles[0].lower())
    if act:
        return Health("act", tuple(act + watch))
    if watch:
        return Health("watch", tuple(watch))
    if not checked:
        return Health("unseen", ("no readings taken this month",))
    if score is None:
        return Health("unjudged", ("too few readings to judge",))
    return Health("sound", ())


def grade_unit(
    current: Check | None,
    flags: Sequence[FlagRow],
    leak_rows: Sequence[LeakRateRow],
    month: Month,
    rules: ReportRules = DEFAULT_RULES,
) -> Health:
    """The unit-month's condition (``judge``) from its check, open flags and the month's
    leak rates."""
    return judge(
        current.score if current else None,
        ((m.label, m.status) for m in current.metrics) if current else (),
        [f.title for f in current.findings] if current else (),
        [(f.kind_label, f.severity_label, f.severity_rank) for f in flags],
        [a.leak_rate_percent for a in _month_leaks(leak_rows, month) if a.over_threshold],
        checked=current is not None,
        rules=rules,
    )


def judge_stored(
    score: float | None,
    metrics: Iterable[dict],
    findings: Sequence[dict],
    flags: Iterable[tuple[str, str, int]] = (),
    *,
    application: str = "",
    rules: ReportRules = DEFAULT_RULES,
) -> Health:
    """``judge`` over a stored diagnosis's details (``Diagnosis.details``), as the office
    pages hold them; an ice machine's box metrics do not count (``words``)."""
    skip = NOT_FOR_ICE_MACHINES if application == "ice_machine" else frozenset()
    return judge(
        score,
        ((metric_label(m["name"]), m["status"]) for m in metrics if m["name"] not in skip),
        [f["title"] for f in findings],
        flags,
        rules=rules,
    )


def metric_label(name: str) -> str:
    """The scoring table's own words for a metric ('evaporator superheat')."""
    rule = SCORING_TABLE.get(name)
    return rule.label if rule is not None else name.replace("_", " ")


def worst(healths: Iterable[Health]) -> Health | None:
    """The most urgent of several conditions (a visit's readings), None for none."""
    return min(healths, key=lambda h: h.order, default=None)


# --- trend and the story of the month ----------------------------------------------------------

#: Flag kinds that follow a change over several visits: while one is open the unit is
#: getting worse, whatever one month's score says.
DRIFT_KINDS = frozenset({"head_pressure_drift", "start_components", "leak_rate"})


def monthly_scores(history: Iterable[HistoryPoint]) -> dict[Month, float]:
    """Mean score per month (a month with a call and a planned visit counts once)."""
    by_month: dict[Month, list[float]] = {}
    for p in history:
        if p.score is not None:
            by_month.setdefault(Month.of(p.taken_on), []).append(p.score)
    return {m: fmean(v) for m, v in sorted(by_month.items())}


def trend_of(
    history: Sequence[HistoryPoint], month: Month, rules: ReportRules = DEFAULT_RULES
) -> Trend:
    """This month's score against the median of the months before it (the scores alone;
    ``story_of`` weighs them with the flags and the check)."""
    scores = monthly_scores(history)
    now = scores.get(month)
    before = [s for m, s in scores.items() if m < month][-rules.trend_months_compared :]
    if now is None or len(before) < rules.trend_min_earlier_months:
        return Trend("unknown", "not enough scored months to compare")
    reference = median(before)
    change = now - reference
    detail = f"{SCORE_NAME} {now:.0f} against {reference:.0f} over the {len(before)} months before"
    if change <= -rules.trend_change_points:
        return Trend("worse", detail)
    if change >= rules.trend_change_points:
        return Trend("better", detail)
    return Trend("steady", detail)


def _listed(labels: Sequence[str]) -> str:
    if len(labels) <= 1:
        return "".join(labels)
    return ", ".join(labels[:-1]) + " and " + labels[-1]


def cause_sentence(
    has_findings: bool,
    faults: Sequence[str],
    watches: Sequence[str],
    drifting: Sequence[str] = (),
) -> str:
    """What to say where no probable cause is listed, so the sentence never contradicts the
    readings beside it: "" when findings are listed (they speak for themselves)."""
    if has_findings:
        return ""
    if faults:
        one = len(faults) == 1
        return (
            f"No single cause could be named from these readings, but the {_listed(faults)} "
            f"{'is' if one else 'are'} far off {'its' if one else 'their'} aim: see what to do."
        )
    if drifting:
        return (
            f"Nothing is off in this check, but the open flag ({_listed(drifting)}) follows a "
            "change over several visits."
        )
    if watches:
        one = len(watches) == 1
        return (
            f"No fault found; the {_listed(watches)} {'is' if one else 'are'} off "
            f"{'its' if one else 'their'} aim and worth watching."
        )
    return "Nothing wrong was found in this check."


def story_of(
    current: Check | None,
    history: Sequence[HistoryPoint],
    flags: Sequence[FlagRow],
    month: Month,
    rules: ReportRules = DEFAULT_RULES,
) -> Story:
    """The trend word and the cause sentence from the scores, the check and the open flags.

    An open flag of a drifting kind makes the trend 'getting worse' (the flag rests on
    several visits; one month's score can hide it); a steady score with something still
    off reads 'no better', not 'holding steady'.
    """
    scores = trend_of(history, month, rules)
    drifting = sorted(
        (f for f in flags if f.kind in DRIFT_KINDS), key=lambda f: (-f.severity_rank, f.id)
    )
    metrics = current.metrics if current else ()
    faults = [m.label for m in metrics if m.status == "fault"]
    watches = [m.label for m in metrics if m.status == "watch"]
    has_findings = bool(current and current.findings)
    if drifting:
        top = drifting[0]
        trend = Trend(
            "worse", f"open flag: {top.kind_label.lower()} ({top.severity_label.lower()})"
        )
    elif scores.direction == "steady" and (faults or has_findings):
        trend = Trend("stuck", scores.detail + ", and still off its aim")
    else:
        trend = scores
    if current is None:
        return Story(trend, "")
    cause = cause_sentence(has_findings, faults, watches, [f.kind_label.lower() for f in drifting])
    return Story(trend, cause)


# --- energy money -------------------------------------------------------------------------------


#: The metrics that say a unit condenses above its target (air-cooled split; R-744 gas-cooler
#: approach above its critical point).
CONDENSING_METRICS = frozenset({"condenser_split", "gas_cooler_approach"})


def off_condensing_target(current: Check) -> bool:
    """The check found the condensing side above its target band (watch or fault, above)."""
    return any(
        m.name in CONDENSING_METRICS and m.status in ("watch", "fault") and (m.deviation or 0.0) > 0
        for m in current.metrics
    )


def energy_estimate(
    current: Check | None,
    *,
    phase: int,
    tariff_per_kwh: float,
    currency: str,
    days_in_month: int,
) -> EnergyEstimate | None:
    """Money at stake from the stored energy penalty; None where there is none to price.

    Only a unit condensing above its target band is charged (``off_condensing_target``): a
    penalty stored for a head inside its band, or none stored for a head held up on purpose
    by its control, costs nothing here.
    """
    if current is None or current.energy_penalty_pct is None or current.energy_penalty_pct <= 0:
        return None
    if not off_condensing_target(current):
        return None
    penalty = current.energy_penalty_pct
    if current.compressor_running is False or current.mean_amps is None:
        return EnergyEstimate(penalty, None, "not estimated: no running current was measured")
    if current.mean_volts is None:
        return EnergyEstimate(penalty, None, "not estimated: no supply voltage was measured")
    cost = costs.energy_cost(
        penalty,
        volts=current.mean_volts,
        amps=current.mean_amps,
        tariff_per_kwh=tariff_per_kwh,
        currency=currency,
        phases=phase,
        days_in_month=float(days_in_month),
    )
    return EnergyEstimate(penalty, cost, "")


# --- what to do ---------------------------------------------------------------------------------


def _when(flag: FlagRow, today: date | None) -> str:
    if flag.projected_on and today is not None and flag.projected_on < today:
        return f"; its projected date ({flag.projected_on:%d %b %Y}) has passed: book it now"
    if flag.projected_on:
        return f" (by {flag.projected_on:%d %b %Y})"
    return ""


def actions_for(
    current: Check | None,
    flags: Sequence[FlagRow],
    leak_rows: Sequence[LeakRateRow],
    month: Month,
    rules: ReportRules = DEFAULT_RULES,
    today: date | None = None,
) -> tuple[str, ...]:
    """What the manager is asked to decide, most urgent first, in the manager's terms
    (``words``): stock at risk, then flags, leak deadlines, probable causes, and readings
    far off their aim; one decision per topic, in its most pressing words. The
    technician's own instructions (a finding's advice) stay on the office pages."""
    asked: list[tuple[Decision, str]] = []
    for flag in sorted(flags, key=lambda f: (-f.severity_rank, f.projected_on or month.last_day)):
        decision = FLAG_ACTIONS.get(flag.kind) or follow_up(flag.kind_label.lower())
        asked.append((decision, decision.text + _when(flag, today)))
    for a in _month_leaks(leak_rows, month):
        if a.over_threshold and a.repair_due_on:
            decision = FLAG_ACTIONS["leak_rate"]
            asked.append((decision, f"{decision.text} (by {a.repair_due_on:%d %b %Y})"))
    if current is not None:
        for finding in current.findings:
            decision = FINDING_ACTIONS.get(finding.code) or follow_up(finding.title.lower())
            asked.append((decision, decision.text))
        for m in current.metrics:
            if m.status != "fault":
                continue
            on_metric = METRIC_ACTIONS.get(m.name)
            if on_metric is not None:
                asked.append((on_metric, on_metric.text))
            # With no probable cause named, a reading far off its aim needs a visit to find
            # one (stock at risk included: checking it is not a repair).
            if not current.findings and (on_metric is None or on_metric.first):
                asked.append((follow_up(m.label), follow_up(m.label).text))
    elif flags:
        asked.append(
            (
                follow_up("unit"),
                "Include this unit in the next visit: it was not " "checked this month",
            )
        )
    texts = [t.strip().rstrip(".") + "." for t in one_per_topic(asked)]
    return tuple(texts[: rules.max_actions])
