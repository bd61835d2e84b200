"""Leak rates at every refrigerant addition, against a configurable rule set.

The rule set is data: thresholds by appliance type, the scope (charge size, refrigerant, date),
the calculation's day counts and the repair and verification deadlines, each with its source.
``US_EPA`` carries the US federal rules (40 CFR Part 82 Subpart F for ozone-depleting
refrigerants, Part 84 Subpart C for HFCs and their substitutes). Other jurisdictions differ;
build another ``LeakRuleSet`` for them. The tool defers to local regulation.

The regulation counts in pounds; the ratios are unit-free, so the core works in kg and the
scope floors are converted with ``units.mass_to_kg`` from the pounds the rule states.
"""

from __future__ import annotations

from collections.abc import Iterable, Sequence
from dataclasses import dataclass
from datetime import date, timedelta
from enum import StrEnum
from functools import lru_cache
from typing import TypedDict, TypeVar

from diagnostics.core import refrigerants, units
from diagnostics.core.sources import Sourced


class ApplianceType(StrEnum):
    COMMERCIAL_REFRIGERATION = "commercial_refrigeration"
    INDUSTRIAL_PROCESS = "industrial_process"
    COMFORT_COOLING = "comfort_cooling"
    OTHER = "other"


_Rate = TypeVar("_Rate", float, float | None)


def rate_by_method(
    method: LeakRateMethod | str, annualizing: _Rate, rolling_average: _Rate
) -> _Rate:
    """The leak rate compared with the threshold: the facility's one method of the two
    (40 CFR 82.152, docs/references.md §3); every reader picks it here."""
    return annualizing if LeakRateMethod(method) is LeakRateMethod.ANNUALIZING else rolling_average


class LeakRateMethod(StrEnum):
    """The two published methods; one is used for all appliances at a facility."""

    ANNUALIZING = "annualizing"
    ROLLING_AVERAGE = "rolling_average"


class ExcludedReason(StrEnum):
    """Additions the rules say are not calculated (40 CFR 82.157(b))."""

    AFTER_INSTALLATION = "after_installation"
    AFTER_RETROFIT = "after_retrofit"
    SEASONAL_VARIANCE = "seasonal_variance"


@dataclass(frozen=True)
class ThresholdRule:
    appliance_type: ApplianceType
    percent: float
    source: str


@lru_cache(maxsize=64)
def _to_kg(value: float, unit: str) -> float:
    return float(units.mass_to_kg(value, unit))


@dataclass(frozen=True)
class ScopeRule:
    """Which appliances a part of the rules covers.

    The floor is kept in the unit the rule states it in (pounds for the US rules) and converted
    when compared, so the figure in the table reads as in the regulation.
    """

    key: str
    min_full_charge: float
    min_full_charge_unit: str
    #: True: only ozone-depleting refrigerants; False: only the others (HFCs, substitutes).
    ozone_depleting: bool
    #: The refrigerant's GWP must be above this (None: any GWP).
    gwp_above: float | None
    effective_from: date | None
    source: str

    @property
    def min_full_charge_kg(self) -> float:
        return _to_kg(self.min_full_charge, self.min_full_charge_unit)

    def covers(self, full_charge_kg: float, ozone_depleting: bool, gwp: float, on: date) -> bool:
        if self.effective_from is not None and on < self.effective_from:
            return False
        if self.ozone_depleting != ozone_depleting:
            return False
        if self.gwp_above is not None and not gwp > self.gwp_above:
            return False
        return full_charge_kg >= self.min_full_charge_kg


@dataclass(frozen=True)
class LeakRuleSet:
    """Everything the leak-rate computation takes from a jurisdiction's rules."""

    name: str
    thresholds: tuple[ThresholdRule, ...]
    scopes: tuple[ScopeRule, ...]
    ozone_depleting_refrigerants: Sourced[tuple[str, ...]]
    annualizing_day_cap: Sourced[int]
    days_when_no_earlier_addition: Sourced[int]
    rolling_window_days: Sourced[int]
    combine_same_day_additions: Sourced[bool]
    excluded_additions_restart_clock: Sourced[bool]
    repair_days: Sourced[int]
    repair_days_industrial_shutdown: Sourced[int]
    initial_verification_days: Sourced[int]
    follow_up_verification_days: Sourced[int]
    retrofit_plan_days: Sourced[int]
    retrofit_completion_days: Sourced[int]
    chronic_leaker_percent: Sourced[float]
    chronic_report_due: Sourced[tuple[int, int]]
    record_keeping_years: Sourced[int]

    def threshold_for(self, appliance_type: ApplianceType | str) -> ThresholdRule:
        kind = ApplianceType(appliance_type)
        for rule in self.thresholds:
            if rule.appliance_type is kind:
                return rule
        raise KeyError(f"rule set {self.name!r} has no threshold for {kind.value!r}")

    def scope_for(self, refrigerant: str, full_charge_kg: float, on: date) -> ScopeRule | None:
        """The first scope rule that covers the appliance on that date, or None."""
        designation, gwp = _refrigerant_facts(refrigerant)
        ods = designation in self.ozone_depleting_refrigerants.value
        for scope in self.scopes:
            if scope.covers(full_charge_kg, ods, gwp, on):
                return scope
        return None


@lru_cache(maxsize=256)
def _refrigerant_facts(refrigerant: str) -> tuple[str, float]:
    """Catalogue spelling and GWP, cached: a fleet has few refrigerants and many additions."""
    ref = refrigerants.get(refrigerant)
    return ref.designation, ref.gwp_ar4


_CFR82_152 = "40 CFR 82.152, definition of leak rate (same in 84.102)"

US_EPA = LeakRuleSet(
    name="US EPA, 40 CFR Part 82 Subpart F and Part 84 Subpart C",
    thresholds=(
        ThresholdRule(
            ApplianceType.COMMERCIAL_REFRIGERATION, 20.0, "40 CFR 82.157(c)(2)(i); 84.106"
        ),
        ThresholdRule(ApplianceType.INDUSTRIAL_PROCESS, 30.0, "40 CFR 82.157(c)(2)(ii); 84.106"),
        ThresholdRule(ApplianceType.COMFORT_COOLING, 10.0, "40 CFR 82.157(c)(2)(iii); 84.106"),
        ThresholdRule(ApplianceType.OTHER, 10.0, "40 CFR 82.157(c)(2)(iii); 84.106"),
    ),
    scopes=(
        ScopeRule(
            key="part_82_ods",
            min_full_charge=50.0,
            min_full_charge_unit="lb",
            ozone_depleting=True,
            gwp_above=None,
            effective_from=None,
            source="40 CFR 82.157(a): 50 lb or more of a class I or class II refrigerant",
        ),
        ScopeRule(
            key="part_84_hfc",
            min_full_charge=15.0,
            min_full_charge_unit="lb",
            ozone_depleting=False,
            gwp_above=53.0,
            effective_from=date(2026, 1, 1),
            source="40 CFR 84.106: 15 lb or more of an HFC or a substitute (GWP above 53 "
            "and the 2026-01-01 start from memory)",
        ),
    ),
    ozone_depleting_refrigerants=Sourced(
        ("R-22",), "40 CFR 82 Subpart A, Appendix B (class II): HCFC-22; from memory"
    ),
    annualizing_day_cap=Sourced(365, _CFR82_152 + ": days since the last addition, at most 365"),
    days_when_no_earlier_addition=Sourced(
        365, "40 CFR 84.102 leak rate: no earlier addition, use 365 days (from memory)"
    ),
    rolling_window_days=Sourced(
        365, _CFR82_152 + ": additions over the past 365 days, or since the last repair"
    ),
    combine_same_day_additions=Sourced(
        True,
        _CFR82_152 + ": 'whether in one addition or multiple additions related to the "
        "same leak'; same-day additions are read as one",
    ),
    excluded_additions_restart_clock=Sourced(
        True, _CFR82_152 + ": days 'since the last day refrigerant was added', any addition"
    ),
    repair_days=Sourced(
        30,
        "40 CFR 82.157(d); 84.106: within 30 days of the addition that "
        "showed the exceedance (paragraph letters from memory)",
    ),
    repair_days_industrial_shutdown=Sourced(
        120, "40 CFR 82.157(d): 120 days when an industrial process shutdown is needed"
    ),
    initial_verification_days=Sourced(
        30, "40 CFR 82.157(e): within 30 days of the repair; from memory"
    ),
    follow_up_verification_days=Sourced(
        10, "40 CFR 82.157(e): within 10 days of the initial verification test; from memory"
    ),
    retrofit_plan_days=Sourced(30, "40 CFR 82.157(h): plan within 30 days (paragraph from memory)"),
    retrofit_completion_days=Sourced(
        365, "40 CFR 82.157(i): completed within 12 months (paragraph from memory)"
    ),
    chronic_leaker_percent=Sourced(
        125.0, "40 CFR 82.157(m): 125 % of full charge in a calendar year (paragraph from memory)"
    ),
    chronic_report_due=Sourced(
        (3, 1), "40 CFR 82.157(m): report by 1 March of the next year (paragraph from memory)"
    ),
    record_keeping_years=Sourced(3, "40 CFR 82.157(l): records kept 3 years"),
)

#: Rule sets by the key a deployment names in its settings (``RIMEWATCH_LEAK_RULE_SET``).
RULE_SETS: dict[str, LeakRuleSet] = {"us_epa": US_EPA}


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


@dataclass(frozen=True)
class UnitAdditions:
    """One unit's refrigerant and its additions, for site totals."""

    unit_id: int
    refrigerant: str
    additions: tuple[RefrigerantAddition, ...]


@dataclass(frozen=True)
class RefrigerantTotal:
    refrigerant: str
    gwp: float
    added_kg: float
    leak_related_kg: float

    @property
    def co2e_kg(self) -> float:
        return self.added_kg * self.gwp

    @property
    def leak_related_co2e_kg(self) -> float:
        return self.leak_related_kg * self.gwp


@dataclass(frozen=True)
class SiteLeakTotals:
    """Refrigerant added at a site over a period, in kg and CO2e (kg x GWP, AR4 100-year)."""

    start: date
    end: date
    by_refrigerant: tuple[RefrigerantTotal, ...]

    @property
    def added_kg(self) -> float:
        return sum(t.added_kg for t in self.by_refrigerant)

    @property
    def leak_related_kg(self) -> float:
        return sum(t.leak_related_kg for t in self.by_refrigerant)

    @property
    def co2e_tonnes(self) -> float:
        return sum(t.co2e_kg for t in self.by_refrigerant) / 1000.0

    @property
    def leak_related_co2e_tonnes(self) -> float:
        return sum(t.leak_related_co2e_kg for t in self.by_refrigerant) / 1000.0


def site_totals(units_: Iterable[UnitAdditions], start: date, end: date) -> SiteLeakTotals:
    """Totals of the additions dated start..end inclusive, by refrigerant (GWP per 84.64(b))."""
    added: dict[str, float] = {}
    leak: dict[str, float] = {}
    for u in units_:
        name = refrigerants.normalise_designation(u.refrigerant)
        for a in u.additions:
            if start <= a.occurred_on <= end:
                added[name] = added.get(name, 0.0) + a.amount_kg
                if a.excluded_reason is None:
                    leak[name] = leak.get(name, 0.0) + a.amount_kg
    return SiteLeakTotals(
        start=start,
        end=end,
        by_refrigerant=tuple(
            RefrigerantTotal(name, refrigerants.get(name).gwp_ar4, added[name], leak.get(name, 0.0))
            for name in sorted(added)
        ),
    )
