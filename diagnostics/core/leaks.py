"""The leak-rate rules as data: a jurisdiction's thresholds, scope and deadlines, with sources.

The rule set is data: thresholds by appliance type, the scope (charge size, refrigerant, date),
the calculation's day counts and the repair and verification deadlines, each with its source.
``US_EPA`` carries the US federal rules (40 CFR Part 82 Subpart F for ozone-depleting
refrigerants, Part 84 Subpart C for HFCs and their substitutes). Other jurisdictions differ;
build another ``LeakRuleSet`` for them. The tool defers to local regulation.

The regulation counts in pounds; the ratios are unit-free, so the core works in kg and the
scope floors are converted with ``units.mass_to_kg`` from the pounds the rule states. The
rates of one appliance are computed in ``appliance_leaks``, a site's totals in ``site_leaks``.
"""

from __future__ import annotations

from dataclasses import dataclass
from datetime import date
from enum import StrEnum
from functools import lru_cache
from typing import TypeVar

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

    def kept_until(self, happened_on: date) -> date:
        """The first day a record of refrigerant work done on ``happened_on`` may be let go:
        ``record_keeping_years`` later (29 February moves to 1 March)."""
        year = happened_on.year + self.record_keeping_years.value
        try:
            return happened_on.replace(year=year)
        except ValueError:  # 29 February into a common year
            return date(year, 3, 1)


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
