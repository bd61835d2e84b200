"""The leak rate of one appliance at every refrigerant addition, and its chronic-leaker years.

Both published methods (annualizing and rolling average, 40 CFR 82.152) are computed for each
addition; the rule set (``leaks.LeakRuleSet``) gives the threshold, the scope, the day counts
and the repair and verification deadlines. Masses are kg.
"""

from __future__ import annotations

from collections.abc import Iterable, Sequence
from dataclasses import dataclass
from datetime import date, timedelta
from typing import TypedDict

from diagnostics.core.leaks import (
    US_EPA,
    ApplianceType,
    ExcludedReason,
    LeakRateMethod,
    LeakRuleSet,
    rate_by_method,
)


@dataclass(frozen=True)
class RefrigerantAddition:
    """Refrigerant put into one appliance (kg). ``excluded_reason`` marks one not calculated."""

    occurred_on: date
    amount_kg: float
    excluded_reason: ExcludedReason | None = None


@dataclass(frozen=True)
class LeakRepair:
    """A repair, and the date its follow-up verification test showed the leaks fixed."""

    repaired_on: date
    verified_on: date | None = None


@dataclass(frozen=True)
class Appliance:
    refrigerant: str
    full_charge_kg: float
    appliance_type: ApplianceType = ApplianceType.COMMERCIAL_REFRIGERATION
    #: A repair that needs an industrial process shut down gets the longer deadline.
    repair_needs_industrial_shutdown: bool = False


@dataclass(frozen=True)
class LeakRateResult:
    """The leak rate at one addition (same-day additions combined), and what follows from it.

    ``leak_rate_percent`` is the facility's chosen method; both methods are reported.
    ``verification_due_on`` is the latest date for the initial verification test: counted from
    the repair when one is on record after this addition, else from the repair deadline.
    """

    occurred_on: date
    amount_kg: float
    calculated: bool
    excluded_reason: ExcludedReason | None
    method: LeakRateMethod
    threshold_percent: float
    threshold_source: str
    scope: str | None
    days_since_previous: int | None = None
    days_used: int | None = None
    annualizing_percent: float | None = None
    rolling_average_percent: float | None = None
    leak_rate_percent: float | None = None
    over_threshold: bool = False
    repair_due_on: date | None = None
    verification_due_on: date | None = None

    @property
    def in_scope(self) -> bool:
        return self.scope is not None

    @property
    def repair_required(self) -> bool:
        return self.over_threshold and self.in_scope


def annualizing_percent(
    added_kg: float, full_charge_kg: float, days: int, day_cap: int = 365
) -> float:
    """(added / full charge) / (min(days, cap) / 365) x 100 (40 CFR 82.152, annualizing).

    Days below one cannot occur once same-day additions are combined; a zero is read as one
    day rather than dividing by zero.
    """
    d = min(max(days, 1), day_cap)
    return added_kg / full_charge_kg / (d / 365.0) * 100.0


def rolling_average_percent(window_added_kg: float, full_charge_kg: float) -> float:
    """Added over the window / full charge x 100 (40 CFR 82.152, rolling average)."""
    return window_added_kg / full_charge_kg * 100.0


def _combined(additions: Iterable[RefrigerantAddition], combine: bool) -> list[RefrigerantAddition]:
    """Sort by date and, where the rules say so, merge same-day additions of the same kind."""
    ordered = sorted(additions, key=lambda a: (a.occurred_on, a.excluded_reason or ""))
    if not combine:
        return ordered
    out: list[RefrigerantAddition] = []
    for a in ordered:
        last = out[-1] if out else None
        if (
            last is not None
            and last.occurred_on == a.occurred_on
            and last.excluded_reason == a.excluded_reason
        ):
            out[-1] = RefrigerantAddition(
                a.occurred_on, last.amount_kg + a.amount_kg, a.excluded_reason
            )
        else:
            out.append(a)
    return out


def verification_deadlines(
    repaired_on: date, rules: LeakRuleSet = US_EPA, initial_verified_on: date | None = None
) -> tuple[date, date | None]:
    """Latest dates for the initial verification test and, once it is done, the follow-up."""
    initial_due = repaired_on + timedelta(days=rules.initial_verification_days.value)
    follow_up = (
        None
        if initial_verified_on is None
        else initial_verified_on + timedelta(days=rules.follow_up_verification_days.value)
    )
    return initial_due, follow_up


class _ResultCommon(TypedDict):
    """The fields of a ``LeakRateResult`` that an excluded and a calculated addition share."""

    occurred_on: date
    amount_kg: float
    method: LeakRateMethod
    threshold_percent: float
    threshold_source: str
    scope: str | None


def leak_rates(
    appliance: Appliance,
    additions: Iterable[RefrigerantAddition],
    *,
    method: LeakRateMethod = LeakRateMethod.ROLLING_AVERAGE,
    repairs: Sequence[LeakRepair] = (),
    rules: LeakRuleSet = US_EPA,
) -> tuple[LeakRateResult, ...]:
    """The leak rate at every addition of one appliance, oldest first.

    The rolling window runs over the past ``rolling_window_days`` up to and including the
    addition, or from the day after the last verified repair if that is shorter. Excluded
    additions get no rate and are left out of the sums; whether they restart the annualizing
    clock is a rule of the set.
    """
    threshold = rules.threshold_for(appliance.appliance_type)
    full = appliance.full_charge_kg
    if full <= 0:
        raise ValueError("full charge must be positive")
    events = _combined(additions, rules.combine_same_day_additions.value)
    verified = sorted(r.verified_on for r in repairs if r.verified_on is not None)
    repair_days = (
        rules.repair_days_industrial_shutdown.value
        if appliance.repair_needs_industrial_shutdown
        else rules.repair_days.value
    )
    results: list[LeakRateResult] = []
    previous_day: date | None = None
    calculated: list[RefrigerantAddition] = []
    for a in events:
        scope = rules.scope_for(appliance.refrigerant, full, a.occurred_on)
        common = _ResultCommon(
            occurred_on=a.occurred_on,
            amount_kg=a.amount_kg,
            method=method,
            threshold_percent=threshold.percent,
            threshold_source=threshold.source,
            scope=scope.key if scope else None,
        )
        if a.excluded_reason is not None:
            results.append(
                LeakRateResult(calculated=False, excluded_reason=a.excluded_reason, **common)
            )
            if rules.excluded_additions_restart_clock.value:
                previous_day = _later(previous_day, a.occurred_on)
            continue
        if previous_day is None:
            days_since = None
            days_used = rules.days_when_no_earlier_addition.value
        else:
            days_since = (a.occurred_on - previous_day).days
            days_used = min(max(days_since, 1), rules.annualizing_day_cap.value)
        annual = annualizing_percent(a.amount_kg, full, days_used, rules.annualizing_day_cap.value)
        window_start = a.occurred_on - timedelta(days=rules.rolling_window_days.value)
        last_verified = max((v for v in verified if v < a.occurred_on), default=None)
        if last_verified is not None and last_verified > window_start:
            window_start = last_verified
        calculated.append(a)
        window_kg = sum(c.amount_kg for c in calculated if c.occurred_on > window_start)
        rolling = rolling_average_percent(window_kg, full)
        rate = rate_by_method(method, annual, rolling)
        over = rate > threshold.percent
        repair_due = verification_due = None
        if over and scope is not None:
            repair_due = a.occurred_on + timedelta(days=repair_days)
            repaired = min(
                (r.repaired_on for r in repairs if r.repaired_on >= a.occurred_on), default=None
            )
            verification_due, _ = verification_deadlines(repaired or repair_due, rules)
        results.append(
            LeakRateResult(
                calculated=True,
                excluded_reason=None,
                days_since_previous=days_since,
                days_used=days_used,
                annualizing_percent=annual,
                rolling_average_percent=rolling,
                leak_rate_percent=rate,
                over_threshold=over,
                repair_due_on=repair_due,
                verification_due_on=verification_due,
                **common,
            )
        )
        previous_day = _later(previous_day, a.occurred_on)
    return tuple(results)


def _later(a: date | None, b: date) -> date:
    return b if a is None or b > a else a


@dataclass(frozen=True)
class ChronicLeakerYear:
    """A calendar year in which leak-related additions reached the chronic-leaker level."""

    year: int
    added_kg: float
    percent_of_full_charge: float
    report_due_on: date


def chronic_leaker_years(
    appliance: Appliance,
    additions: Iterable[RefrigerantAddition],
    rules: LeakRuleSet = US_EPA,
) -> tuple[ChronicLeakerYear, ...]:
    """Calendar years with leak-related additions at or above the chronic-leaker percentage."""
    by_year: dict[int, float] = {}
    for a in additions:
        if a.excluded_reason is None:
            by_year[a.occurred_on.year] = by_year.get(a.occurred_on.year, 0.0) + a.amount_kg
    month, day = rules.chronic_report_due.value
    out = []
    for year in sorted(by_year):
        pct = by_year[year] / appliance.full_charge_kg * 100.0
        if pct >= rules.chronic_leaker_percent.value:
            out.append(ChronicLeakerYear(year, by_year[year], pct, date(year + 1, month, day)))
    return tuple(out)
