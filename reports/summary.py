"""Judging a site-month from its gathered data: health grades, trends, urgency, money at stake.

Pure functions over the plain data of ``gather.py`` (no queries, no Django). The grading
thresholds are ours and live in one table (``ReportRules``) with the reason beside each value;
the money comes from the diagnostics core (``costs.energy_cost``) with the stored penalty.
"""

from __future__ import annotations

from collections import Counter
from collections.abc import Iterable, Sequence
from dataclasses import dataclass, field
from datetime import date
from statistics import fmean, median
from typing import TYPE_CHECKING

from diagnostics.core import costs
from diagnostics.core.sources import cite

from .months import Month

if TYPE_CHECKING:
    from .gather import Check, FlagRow, HistoryPoint, LeakRateRow, UnitMonth, VisitInfo


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

HEALTH_LABELS: dict[str, str] = {
    "act": "Needs attention",
    "watch": "Keep an eye on",
    "unseen": "Not checked this month",
    "sound": "Healthy",
}
#: Order of urgency: lower sorts first.
HEALTH_ORDER: dict[str, int] = {"act": 0, "watch": 1, "unseen": 2, "sound": 3}


@dataclass(frozen=True)
class Health:
    status: str
    reasons: tuple[str, ...]

    @property
    def label(self) -> str:
        return HEALTH_LABELS[self.status]

    @property
    def order(self) -> int:
        return HEALTH_ORDER[self.status]


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


def grade_unit(
    current: Check | None,
    flags: Sequence[FlagRow],
    leak_rows: Sequence[LeakRateRow],
    month: Month,
    rules: ReportRules = DEFAULT_RULES,
) -> Health:
    """Needs attention / keep an eye on / healthy / not checked, with the reasons why."""
    act: list[str] = []
    watch: list[str] = []
    for flag in flags:
        text = f"open flag: {flag.kind_label.lower()} ({flag.severity_label.lower()})"
        (act if flag.severity_rank >= 3 else watch).append(text)
    for a in _month_leaks(leak_rows, month):
        if a.over_threshold:
            act.append(f"leak rate {a.leak_rate_percent or 0:.0f} % over the threshold")
    if current is not None:
        score = current.score
        if score is not None and score < rules.attention_score_below:
            act.append(f"score {score:.0f}, below {rules.attention_score_below:.0f}")
        elif score is not None and score < rules.healthy_score_min:
            watch.append(f"score {score:.0f}, below {rules.healthy_score_min:.0f}")
        faults = [m.label for m in current.metrics if m.status == "fault"]
        watches = [m.label for m in current.metrics if m.status == "watch"]
        if faults:
            act.append("past the fault limit: " + ", ".join(faults))
        if watches:
            watch.append("outside the ok range: " + ", ".join(watches))
        if current.findings and not faults:
            watch.append("probable cause: " + current.findings[0].title.lower())
    if act:
        return Health("act", tuple(act + watch))
    if watch:
        return Health("watch", tuple(watch))
    if current is None:
        return Health("unseen", ("no readings taken this month",))
    return Health("sound", ())


# --- trend --------------------------------------------------------------------------------------

TREND_LABELS: dict[str, str] = {
    "worse": "Getting worse",
    "better": "Improving",
    "steady": "Steady",
    "unknown": "Too little history",
}


@dataclass(frozen=True)
class Trend:
    direction: str
    detail: str

    @property
    def label(self) -> str:
        return TREND_LABELS[self.direction]


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
    """This month's score against the median of the months before it."""
    scores = monthly_scores(history)
    now = scores.get(month)
    before = [s for m, s in scores.items() if m < month][-rules.trend_months_compared :]
    if now is None or len(before) < rules.trend_min_earlier_months:
        return Trend("unknown", "not enough scored months to compare")
    reference = median(before)
    change = now - reference
    detail = f"score {now:.0f} against {reference:.0f} over the {len(before)} months before"
    if change <= -rules.trend_change_points:
        return Trend("worse", detail)
    if change >= rules.trend_change_points:
        return Trend("better", detail)
    return Trend("steady", detail)


# --- energy money -------------------------------------------------------------------------------


@dataclass(frozen=True)
class EnergyEstimate:
    """What the month's penalty costs; ``cost`` is None when it could not be estimated."""

    penalty_percent: float
    cost: costs.EnergyCost | None
    note: str

    @property
    def extra_cost_per_month(self) -> float | None:
        return self.cost.extra_cost_per_month if self.cost else None

    @property
    def extra_kwh_per_month(self) -> float | None:
        return self.cost.extra_kwh_per_month if self.cost else None


def energy_estimate(
    current: Check | None,
    *,
    phase: int,
    tariff_per_kwh: float,
    currency: str,
    days_in_month: int,
) -> EnergyEstimate | None:
    """Money at stake from the stored energy penalty; None where there is no penalty."""
    if current is None or current.energy_penalty_pct is None or current.energy_penalty_pct <= 0:
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

#: The next step each kind of flag calls for (our wording of common service practice).
FLAG_ACTIONS: dict[str, str] = {
    "head_pressure_drift": "Clean the condenser coil and check its fans before the head "
    "pressure reaches the cut-out",
    "start_components": "Test the start components (capacitors, relay, contactor) and the "
    "supply voltage at start; replace what fails",
    "leak_rate": "Find and repair the leak, then verify the repair (leak-rate rules)",
    "maintenance_overdue": "Book the planned maintenance visit",
}


def actions_for(
    current: Check | None,
    flags: Sequence[FlagRow],
    leak_rows: Sequence[LeakRateRow],
    month: Month,
    rules: ReportRules = DEFAULT_RULES,
    today: date | None = None,
) -> tuple[str, ...]:
    """Plain next steps, most urgent first: flags, leak deadlines, then the findings' advice."""
    out: list[str] = []
    for flag in sorted(flags, key=lambda f: (-f.severity_rank, f.projected_on or month.last_day)):
        when = ""
        if flag.projected_on and today is not None and flag.projected_on < today:
            when = f" now (its projected date, {flag.projected_on:%d %b %Y}, has passed)"
        elif flag.projected_on:
            when = f" (by {flag.projected_on:%d %b %Y})"
        out.append(f"{FLAG_ACTIONS.get(flag.kind, flag.summary)}{when}.")
    leak_flagged = any(f.kind == "leak_rate" for f in flags)
    for a in _month_leaks(leak_rows, month):
        if a.over_threshold and a.repair_due_on and not leak_flagged:
            out.append(f"Repair the leak by {a.repair_due_on:%d %b %Y} (leak-rate rules).")
    if current is not None:
        for finding in current.findings:
            if finding.advice:
                out.append(finding.advice)
    elif flags:
        out.append("Not checked this month: include it in the next visit.")
    unique = list(dict.fromkeys(a.strip() for a in out if a.strip()))
    return tuple(unique[: rules.max_actions])


def rank_attention(units: Iterable[UnitMonth]) -> tuple[UnitMonth, ...]:
    """Units needing attention or watching, most urgent first.

    Urgency: the grade, then the most severe open flag, then the nearest projected date,
    then the lowest score.
    """
    chosen = [
        u for u in units if u.health.status in ("act", "watch") or u.trend.direction == "worse"
    ]

    def key(u: UnitMonth) -> tuple:
        top = max((f.severity_rank for f in u.flags), default=0)
        dates = [f.projected_on for f in u.flags if f.projected_on is not None]
        soonest = min(dates).toordinal() if dates else 10**7
        score = u.current.score if u.current and u.current.score is not None else 101.0
        return (u.health.order, -top, soonest, score, u.unit.tag)

    return tuple(sorted(chosen, key=key))


# --- the site as a whole ------------------------------------------------------------------------


@dataclass(frozen=True)
class SiteOverview:
    unit_count: int
    checked_count: int
    counts: tuple[tuple[str, str, int], ...]
    mean_score: float | None
    lowest_score: float | None
    open_flag_count: int
    not_checked: tuple[str, ...]
    visits_by_kind: tuple[tuple[str, int], ...]
    energy_cost_per_month: float
    energy_kwh_per_month: float
    energy_units_estimated: int
    energy_units_not_estimated: tuple[str, ...]
    #: The costliest units: (tag, penalty %, kWh a month, cost a month), most first.
    energy_top: tuple[tuple[str, float, float, float], ...] = ()
    #: Units priced but not listed in ``energy_top``, and what they add up to.
    energy_rest_count: int = 0
    energy_rest_cost: float = 0.0

    @property
    def status(self) -> str:
        """The site's grade: its worst unit's, ignoring units merely not checked."""
        present = [s for s, _, n in self.counts if n and s != "unseen"]
        if not present:
            return "unseen"
        return min(present, key=lambda s: HEALTH_ORDER[s])

    @property
    def status_label(self) -> str:
        return HEALTH_LABELS[self.status]


#: The first page lists the costliest units only; the rest are summed in one line.
ENERGY_ROWS = 8


def overview(units: Sequence[UnitMonth], visits: Sequence[VisitInfo]) -> SiteOverview:
    counts = Counter(u.health.status for u in units)
    scores = [u.current.score for u in units if u.current and u.current.score is not None]
    estimated = [u for u in units if u.energy and u.energy.cost]
    by_kind = Counter(v.kind_label for v in visits if v.status != "cancelled")
    priced = sorted(
        (
            (
                u.unit.tag,
                u.energy.penalty_percent,
                u.energy.extra_kwh_per_month or 0.0,
                u.energy.extra_cost_per_month or 0.0,
            )
            for u in estimated
        ),
        key=lambda row: (-row[3], row[0]),
    )
    top, rest = priced[:ENERGY_ROWS], priced[ENERGY_ROWS:]
    return SiteOverview(
        unit_count=len(units),
        checked_count=sum(1 for u in units if u.current is not None),
        counts=tuple((s, HEALTH_LABELS[s], counts.get(s, 0)) for s in HEALTH_ORDER),
        mean_score=fmean(scores) if scores else None,
        lowest_score=min(scores) if scores else None,
        open_flag_count=sum(len(u.flags) for u in units),
        not_checked=tuple(u.unit.tag for u in units if u.current is None),
        visits_by_kind=tuple(sorted(by_kind.items())),
        energy_cost_per_month=sum(u.energy.extra_cost_per_month or 0.0 for u in estimated),
        energy_kwh_per_month=sum(u.energy.extra_kwh_per_month or 0.0 for u in estimated),
        energy_units_estimated=len(estimated),
        energy_units_not_estimated=tuple(
            u.unit.tag for u in units if u.energy is not None and u.energy.cost is None
        ),
        energy_top=tuple(top),
        energy_rest_count=len(rest),
        energy_rest_cost=sum(row[3] for row in rest),
    )
