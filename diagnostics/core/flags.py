"""Which flags should be open on a unit now: the pure decision behind raising and clearing.

Given a unit's history and ``today``, ``decide_flags`` returns at most one decision per kind,
each with a severity, its evidence and a projected date. The Django layer stores them: it opens
a flag for a new kind, updates an open one, and closes the kinds no longer decided
(``reconcile``), so there is never more than one open flag per unit and kind.
"""

from __future__ import annotations

from collections.abc import Iterable, Sequence
from dataclasses import dataclass, field
from datetime import date
from enum import StrEnum

from diagnostics.core.appliance_leaks import (
    Appliance,
    LeakRepair,
    RefrigerantAddition,
    chronic_leaker_years,
    leak_rates,
)
from diagnostics.core.leaks import US_EPA, LeakRateMethod, LeakRuleSet
from diagnostics.core.maintenance import (
    DEFAULT_MAINTENANCE_RULES,
    MaintenancePlan,
    MaintenanceRules,
    maintenance_status,
)
from diagnostics.core.sources import cite
from diagnostics.core.split_drift import DEFAULT_DRIFT_RULES, DriftRules, assess_split_drift_many
from diagnostics.core.split_drift_types import SplitDrift, SplitDriftInput
from diagnostics.core.start_history import StartHistory
from diagnostics.core.start_risk import assess_start_risk_many
from diagnostics.core.start_risk_rules import (
    DEFAULT_START_RULES,
    RiskLevel,
    StartRiskAssessment,
    StartRiskRules,
)


class FlagKind(StrEnum):
    HEAD_PRESSURE_DRIFT = "head_pressure_drift"
    START_COMPONENTS = "start_components"
    LEAK_RATE = "leak_rate"
    MAINTENANCE_OVERDUE = "maintenance_overdue"


class Severity(StrEnum):
    """How soon the office should act (the Django layer stores these values as they are)."""

    NOTICE = "notice"
    WARNING = "warning"
    URGENT = "urgent"


@dataclass(frozen=True)
class Evidence:
    """One fact behind a flag. ``text`` may name its ``quantities`` ((name, value, unit) in
    SI) as ``{name}``, written in the reader's units when read (``wording.fill``)."""

    text: str
    quantities: tuple[tuple[str, float, str], ...] = ()
    observed_on: date | None = None


@dataclass(frozen=True)
class FlagDecision:
    """A flag to hold open. ``summary`` may name ``forecast`` quantities as ``{name}``; the
    forecast is the flag's numbers (SI) and ``forecast_dates`` its projected dates, so a
    reader gets them as numbers in its own units, not only as prose."""

    kind: FlagKind
    severity: Severity
    summary: str
    evidence: tuple[Evidence, ...]
    projected_date: date | None = None
    forecast: tuple[tuple[str, float, str], ...] = ()
    forecast_dates: tuple[tuple[str, date], ...] = ()


@dataclass(frozen=True)
class LeakHistory:
    appliance: Appliance
    additions: tuple[RefrigerantAddition, ...]
    repairs: tuple[LeakRepair, ...] = ()
    method: LeakRateMethod = LeakRateMethod.ROLLING_AVERAGE


@dataclass(frozen=True)
class UnitHistory:
    """Everything the flags of one unit rest on; a part left ``None`` raises no flag."""

    unit_id: int
    split: SplitDriftInput | None = None
    start: StartHistory | None = None
    leak: LeakHistory | None = None
    maintenance: MaintenancePlan | None = None


@dataclass(frozen=True)
class FlagRules:
    drift: DriftRules = DEFAULT_DRIFT_RULES
    start: StartRiskRules = DEFAULT_START_RULES
    leak: LeakRuleSet = US_EPA
    maintenance: MaintenanceRules = DEFAULT_MAINTENANCE_RULES
    drift_urgent_within_days: int = field(
        default=30,
        metadata=cite("ours: a limit reached within a month (or already) needs a visit now"),
    )
    drift_warning_within_days: int = field(
        default=90, metadata=cite("ours: within a season, plan a condenser clean")
    )


DEFAULT_FLAG_RULES = FlagRules()


# --- one decision per kind ----------------------------------------------------------------------


def drift_flag(
    drift: SplitDrift, today: date, rules: FlagRules = DEFAULT_FLAG_RULES
) -> FlagDecision | None:
    """A head-pressure flag when the drift judgement says so (a rising split, or one that
    stays above its ok band), graded by how soon a limit is reached."""
    if not drift.flag:
        return None
    dates = [d for d in (drift.limit_crossed_on, drift.cutout_reached_on) if d is not None]
    projected = min(dates, default=None)
    days_left = (projected - today).days if projected is not None else None
    if days_left is not None and days_left <= rules.drift_urgent_within_days:
        severity = Severity.URGENT
    elif (days_left is not None and days_left <= rules.drift_warning_within_days) or (
        drift.persistently_high
    ):
        severity = Severity.WARNING
    else:
        severity = Severity.NOTICE
    forecast = tuple(
        (name, float(value), unit)
        for name, value, unit in (
            ("split_slope", drift.slope_k_per_year, "K/year"),
            ("split_now", drift.split_now_k, "K"),
            ("design_split", drift.design_split_k, "K"),
            ("split_limit", drift.split_limit_k, "K"),
            ("design_day_head_now", drift.design_day_head_now_kpa_gauge, "kPa_gauge"),
            ("design_day_head_at_horizon", drift.design_day_head_at_horizon_kpa_gauge, "kPa_gauge"),
            ("cutout", drift.high_pressure_cutout_kpa_gauge, "kPa_gauge"),
        )
        if value is not None
    )
    have = {name for name, _, _ in forecast}
    rising = drift.rising
    evidence = []
    if drift.persistently_high:
        evidence.append(
            Evidence(
                "condenser split above its ok band at most of the last "
                f"{rules.drift.persistent_window} visits where it could be judged"
            )
        )
    if rising and "split_slope" in have:
        evidence.append(
            Evidence(
                "condenser split rising {split_slope} a year ({slope_low} to {slope_high}) "
                f"over {drift.points_used} visits in {drift.span_days} days, "
                f"confidence {drift.confidence or 0:.2f}",
                tuple(
                    (name, float(value), "K/year")
                    for name, value in (
                        ("split_slope", drift.slope_k_per_year),
                        ("slope_low", drift.slope_low_k_per_year),
                        ("slope_high", drift.slope_high_k_per_year),
                    )
                    if value is not None
                ),
            )
        )
    if "split_now" in have:
        evidence.append(
            Evidence(
                "split now about {split_now} against a design of {design_split} and a limit "
                "of {split_limit}",
                tuple(q for q in forecast if q[0] in ("split_now", "design_split", "split_limit")),
            )
        )
    if drift.limit_crossed_on is not None:
        evidence.append(
            Evidence(f"split limit reached on {drift.limit_crossed_on.isoformat()} on this trend")
        )
    if "cutout" in have:
        text = "high-pressure cut-out {cutout}"
        if "design_day_head_now" in have:
            text = "design-day head today {design_day_head_now} against the " + text
        if drift.cutout_reached_on is not None:
            text += f"; a design day trips it from {drift.cutout_reached_on.isoformat()}"
        evidence.append(
            Evidence(text, tuple(q for q in forecast if q[0] in ("cutout", "design_day_head_now")))
        )
    summary = (
        "head pressure creeping up: condenser split rising {split_slope} a year"
        if rising and not drift.persistently_high
        else "condenser not getting rid of its heat: split about {split_now} against a "
        "design of {design_split}"
    )
    return FlagDecision(
        kind=FlagKind.HEAD_PRESSURE_DRIFT,
        severity=severity,
        summary=summary,
        evidence=tuple(evidence),
        projected_date=projected,
        forecast=forecast,
        forecast_dates=tuple(
            (name, day)
            for name, day in (
                ("limit_crossed_on", drift.limit_crossed_on),
                ("cutout_reached_on", drift.cutout_reached_on),
            )
            if day is not None
        ),
    )


def start_flag(assessment: StartRiskAssessment) -> FlagDecision | None:
    """A start-components flag for an elevated or high risk."""
    if assessment.level is RiskLevel.LOW:
        return None
    severity = Severity.URGENT if assessment.level is RiskLevel.HIGH else Severity.WARNING
    return FlagDecision(
        kind=FlagKind.START_COMPONENTS,
        severity=severity,
        summary=f"start-component risk {assessment.level.value} (score {assessment.score:g})",
        evidence=tuple(Evidence(i.text, i.quantities, i.observed_on) for i in assessment.items),
        projected_date=assessment.projected_on,
    )


def leak_flag(
    leak: LeakHistory, today: date, rules: FlagRules = DEFAULT_FLAG_RULES
) -> FlagDecision | None:
    """A leak-rate flag while an exceedance is not closed by a verified repair.

    In scope of the rule set: a warning, urgent once the repair or verification deadline has
    passed or the unit is a chronic leaker. Over the threshold but below the scope: a notice,
    for the contractor's own follow-up.
    """
    additions = tuple(a for a in leak.additions if a.occurred_on <= today)
    if not additions:
        return None
    results = leak_rates(
        leak.appliance, additions, method=leak.method, repairs=leak.repairs, rules=rules.leak
    )
    verified = [r.verified_on for r in leak.repairs if r.verified_on is not None]
    open_ = [
        r
        for r in results
        if r.over_threshold and not any(v >= r.occurred_on for v in verified if v <= today)
    ]
    if not open_:
        return None
    latest = open_[-1]
    chronic = [
        y
        for y in chronic_leaker_years(leak.appliance, additions, rules.leak)
        if y.year >= today.year - 1
    ]
    repaired = min(
        (r.repaired_on for r in leak.repairs if latest.occurred_on <= r.repaired_on <= today),
        default=None,
    )
    projected = latest.verification_due_on if repaired is not None else latest.repair_due_on
    if not latest.in_scope:
        severity = Severity.NOTICE
    elif chronic or (projected is not None and projected < today):
        severity = Severity.URGENT
    else:
        severity = Severity.WARNING
    rate = latest.leak_rate_percent or 0.0
    evidence = [
        Evidence(
            "{added} added on " + f"{latest.occurred_on.isoformat()}: leak rate "
            f"{rate:.1f} % ({latest.method.value.replace('_', ' ')}) over the "
            f"{latest.threshold_percent:g} % threshold ({latest.threshold_source})",
            (
                ("added", latest.amount_kg, "kg"),
                ("annualizing", latest.annualizing_percent or 0.0, "%"),
                ("rolling_average", latest.rolling_average_percent or 0.0, "%"),
                ("threshold", latest.threshold_percent, "%"),
            ),
            latest.occurred_on,
        )
    ]
    if latest.in_scope:
        evidence.append(
            Evidence(
                f"repair due by {latest.repair_due_on}; initial verification test due by "
                f"{latest.verification_due_on}"
                + (f" (repaired {repaired.isoformat()})" if repaired else "")
            )
        )
    else:
        evidence.append(
            Evidence(
                "below the charge or refrigerant scope of the rule set: no legal deadline, "
                "repair advised"
            )
        )
    for y in chronic:
        evidence.append(
            Evidence(
                f"chronic leaker in {y.year}: "
                + "{added_in_year} added, "
                + f"{y.percent_of_full_charge:.0f} % of full charge; report due "
                f"{y.report_due_on.isoformat()}",
                (("added_in_year", y.added_kg, "kg"),),
            )
        )
    return FlagDecision(
        kind=FlagKind.LEAK_RATE,
        severity=severity,
        summary=f"leak rate {rate:.0f} % over the {latest.threshold_percent:g} % threshold",
        evidence=tuple(evidence),
        projected_date=projected,
    )


def maintenance_flag(
    plan: MaintenancePlan, today: date, rules: FlagRules = DEFAULT_FLAG_RULES
) -> FlagDecision | None:
    """A flag once planned maintenance is overdue beyond the grace period."""
    status = maintenance_status(plan, today)
    m = rules.maintenance
    if status.days_overdue <= m.grace_days:
        return None
    if status.scheduled_on is not None:
        severity = Severity.NOTICE
    elif status.days_overdue >= m.high_after_fraction * plan.interval_days:
        severity = Severity.URGENT
    else:
        severity = Severity.WARNING
    evidence = [
        Evidence(
            f"planned maintenance due {status.due_on.isoformat()} ({status.reason}, every "
            f"{plan.interval_days} days): {status.days_overdue} days overdue",
            (("days_overdue", float(status.days_overdue), "d"),),
        )
    ]
    if status.scheduled_on is not None:
        evidence.append(Evidence(f"visit booked for {status.scheduled_on.isoformat()}"))
    return FlagDecision(
        kind=FlagKind.MAINTENANCE_OVERDUE,
        severity=severity,
        summary=f"planned maintenance {status.days_overdue} days overdue",
        evidence=tuple(evidence),
        projected_date=status.scheduled_on or status.due_on,
    )


# --- whole units ---------------------------------------------------------------------------------


def decide_flags_many(
    histories: Sequence[UnitHistory], today: date, rules: FlagRules = DEFAULT_FLAG_RULES
) -> dict[int, tuple[FlagDecision, ...]]:
    """The flags that should be open now, per unit id.

    The split drift and the capacitor slopes run vectorised over all units; leak rates and
    maintenance are a few records per unit, in plain loops.
    """
    splits = {h.unit_id: h.split for h in histories if h.split is not None}
    drifts = assess_split_drift_many(list(splits.values()), today, rules.drift)
    drift_by_unit = dict(zip(splits, drifts, strict=True))
    starts = {h.unit_id: h.start for h in histories if h.start is not None}
    risks = assess_start_risk_many(list(starts.values()), today, rules.start)
    risk_by_unit = dict(zip(starts, risks, strict=True))
    out: dict[int, tuple[FlagDecision, ...]] = {}
    for h in histories:
        decisions: list[FlagDecision | None] = []
        drift = drift_by_unit.get(h.unit_id)
        if drift is not None:
            decisions.append(drift_flag(drift, today, rules))
        risk = risk_by_unit.get(h.unit_id)
        if risk is not None:
            decisions.append(start_flag(risk))
        if h.leak is not None:
            decisions.append(leak_flag(h.leak, today, rules))
        if h.maintenance is not None:
            decisions.append(maintenance_flag(h.maintenance, today, rules))
        out[h.unit_id] = tuple(d for d in decisions if d is not None)
    return out


def decide_flags(
    history: UnitHistory, today: date, rules: FlagRules = DEFAULT_FLAG_RULES
) -> tuple[FlagDecision, ...]:
    """The flags that should be open on one unit now, at most one per kind."""
    return decide_flags_many([history], today, rules)[history.unit_id]


@dataclass(frozen=True)
class FlagChanges:
    """What the store must do so the open flags match the decisions."""

    to_open: tuple[FlagDecision, ...]
    to_update: tuple[FlagDecision, ...]
    to_close: tuple[FlagKind, ...]


def reconcile(open_kinds: Iterable[str], decisions: Iterable[FlagDecision]) -> FlagChanges:
    """Open new kinds, update the still-decided ones, close the rest (one open per kind)."""
    open_set = {FlagKind(k) for k in open_kinds}
    decided = {d.kind: d for d in decisions}
    return FlagChanges(
        to_open=tuple(d for k, d in decided.items() if k not in open_set),
        to_update=tuple(d for k, d in decided.items() if k in open_set),
        to_close=tuple(sorted(open_set - decided.keys())),
    )
