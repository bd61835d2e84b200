"""Leak rates against the US EPA rules (docs/references.md §3)."""

from __future__ import annotations

import dataclasses
from datetime import date, timedelta

import pytest

from diagnostics.core import units
from diagnostics.core.appliance_leaks import (
    Appliance,
    LeakRepair,
    RefrigerantAddition,
    annualizing_percent,
    chronic_leaker_years,
    leak_rates,
    rolling_average_percent,
    verification_deadlines,
)
from diagnostics.core.leaks import RULE_SETS, US_EPA, ApplianceType, ExcludedReason, LeakRateMethod
from diagnostics.core.site_leaks import UnitAdditions, site_totals

DAY = date(2026, 3, 15)


def lb(value: float) -> float:
    return float(units.mass_to_kg(value, "lb"))


def walk_in(full_charge_lb: float = 60.0, **kw: object) -> Appliance:
    return Appliance(refrigerant="R-404A", full_charge_kg=lb(full_charge_lb), **kw)  # type: ignore[arg-type]


def test_annualizing_worked_example() -> None:
    """60 lb full charge, 8 lb added 73 days after the previous addition -> 66.67 %.

    Source: docs/references.md §3 worked example, computed from the annualizing formula of
    40 CFR 82.152; tolerance 0.01 percentage points.
    """
    additions = (
        RefrigerantAddition(DAY - timedelta(days=73), lb(5)),
        RefrigerantAddition(DAY, lb(8)),
    )
    result = leak_rates(walk_in(), additions, method=LeakRateMethod.ANNUALIZING)[-1]
    assert result.days_since_previous == 73
    assert result.annualizing_percent == pytest.approx(66.67, abs=0.01)
    assert result.leak_rate_percent == result.annualizing_percent
    assert result.over_threshold  # commercial refrigeration, 20 % (40 CFR 82.157(c)(2)(i))


def test_rolling_average_worked_example_with_earlier_addition_in_window() -> None:
    """An earlier 5 lb addition inside the 365-day window -> (5 + 8) / 60 = 21.67 %.

    Source: docs/references.md §3 worked example (40 CFR 82.152, rolling average);
    tolerance 0.01 percentage points.
    """
    additions = (
        RefrigerantAddition(DAY - timedelta(days=73), lb(5)),
        RefrigerantAddition(DAY, lb(8)),
    )
    result = leak_rates(walk_in(), additions, method=LeakRateMethod.ROLLING_AVERAGE)[-1]
    assert result.rolling_average_percent == pytest.approx(21.67, abs=0.01)
    assert result.leak_rate_percent == result.rolling_average_percent
    assert result.over_threshold


def test_rolling_window_starts_after_the_last_verified_repair() -> None:
    """A verified repair between the additions leaves only the 8 lb: 8 / 60 = 13.33 %.

    Source: docs/references.md §3 worked example ('13.33 % if the 8 lb is the only addition
    in the window') and 40 CFR 82.152 (window 'since the last repair if shorter');
    tolerance 0.01 percentage points.
    """
    additions = (
        RefrigerantAddition(DAY - timedelta(days=73), lb(5)),
        RefrigerantAddition(DAY, lb(8)),
    )
    repairs = (LeakRepair(DAY - timedelta(days=40), verified_on=DAY - timedelta(days=30)),)
    result = leak_rates(walk_in(), additions, repairs=repairs)[-1]
    assert result.rolling_average_percent == pytest.approx(13.33, abs=0.01)
    assert not result.over_threshold


def test_annualizing_caps_the_days_at_365() -> None:
    """8 lb added 400 days after the previous addition -> 13.33 % (days capped at 365).

    Source: docs/references.md §3 worked example (40 CFR 82.152); tolerance 0.01 points.
    """
    additions = (
        RefrigerantAddition(DAY - timedelta(days=400), lb(5)),
        RefrigerantAddition(DAY, lb(8)),
    )
    result = leak_rates(walk_in(), additions, method=LeakRateMethod.ANNUALIZING)[-1]
    assert result.days_since_previous == 400
    assert result.days_used == 365
    assert result.annualizing_percent == pytest.approx(13.33, abs=0.01)


def test_first_addition_uses_365_days() -> None:
    """With no earlier addition the annualizing method uses 365 days: 8 / 60 = 13.33 %.

    Source: docs/references.md §3 edge cases (Part 84: no earlier addition, use 365 days;
    from memory there); tolerance 0.01 points.
    """
    result = leak_rates(walk_in(), (RefrigerantAddition(DAY, lb(8)),))[0]
    assert result.days_since_previous is None
    assert result.days_used == 365
    assert result.annualizing_percent == pytest.approx(13.33, abs=0.01)


def test_same_day_additions_are_one_addition() -> None:
    """3 lb and 5 lb on one day, 73 days after the last: one result of 66.67 %, not days = 0.

    Source: 40 CFR 82.152 ('whether in one addition or if multiple additions related to same
    leak') and the docs/references.md §3 worked example; tolerance 0.01 points.
    """
    additions = (
        RefrigerantAddition(DAY - timedelta(days=73), lb(5)),
        RefrigerantAddition(DAY, lb(3)),
        RefrigerantAddition(DAY, lb(5)),
    )
    results = leak_rates(walk_in(), additions, method=LeakRateMethod.ANNUALIZING)
    assert len(results) == 2
    assert results[-1].amount_kg == pytest.approx(lb(8))
    assert results[-1].annualizing_percent == pytest.approx(66.67, abs=0.01)


def test_days_zero_is_read_as_one_day() -> None:
    """The formula never divides by zero: 0 days counts as 1 day (synthetic 1 kg of 100 kg)."""
    assert annualizing_percent(1.0, 100.0, 0) == pytest.approx(365.0)
    assert annualizing_percent(1.0, 100.0, 1) == pytest.approx(365.0)


def test_excluded_additions_get_no_rate_and_stay_out_of_the_window() -> None:
    """Additions after installation or retrofit and seasonal ones are not calculated.

    Source: 40 CFR 82.157(b). The 20 lb installation top-up is not summed: the later 6 lb
    gives a rolling average of 6 / 60 = 10 %; the annualizing clock restarts at the last day
    refrigerant was added (40 CFR 82.152), 30 days -> 6/60 / (30/365) = 121.67 %.
    """
    additions = (
        RefrigerantAddition(DAY - timedelta(days=30), lb(20), ExcludedReason.AFTER_INSTALLATION),
        RefrigerantAddition(DAY, lb(6)),
    )
    first, second = leak_rates(walk_in(), additions)
    assert not first.calculated
    assert first.annualizing_percent is None
    assert first.excluded_reason is ExcludedReason.AFTER_INSTALLATION
    assert second.rolling_average_percent == pytest.approx(10.0, abs=0.01)
    assert second.annualizing_percent == pytest.approx(121.67, abs=0.01)


def test_a_rule_set_can_leave_excluded_additions_off_the_clock() -> None:
    """With the clock rule switched off, the first calculated addition uses 365 days: 10 %."""
    rules = dataclasses.replace(
        US_EPA,
        excluded_additions_restart_clock=dataclasses.replace(
            US_EPA.excluded_additions_restart_clock, value=False
        ),
    )
    additions = (
        RefrigerantAddition(DAY - timedelta(days=30), lb(20), ExcludedReason.SEASONAL_VARIANCE),
        RefrigerantAddition(DAY, lb(6)),
    )
    result = leak_rates(walk_in(), additions, rules=rules)[-1]
    assert result.days_used == 365
    assert result.annualizing_percent == pytest.approx(10.0, abs=0.01)


@pytest.mark.parametrize(
    ("appliance_type", "threshold"),
    [
        (ApplianceType.COMMERCIAL_REFRIGERATION, 20.0),
        (ApplianceType.INDUSTRIAL_PROCESS, 30.0),
        (ApplianceType.COMFORT_COOLING, 10.0),
        (ApplianceType.OTHER, 10.0),
    ],
)
def test_threshold_by_appliance_type(appliance_type: ApplianceType, threshold: float) -> None:
    """Thresholds: commercial 20 %, industrial process 30 %, comfort cooling and other 10 %.

    Source: 40 CFR 82.157(c)(2) and 84.106 (docs/references.md §3); exact. A 15 lb addition
    of 60 lb (25 %) is over 10 % and 20 % but not 30 %.
    """
    appliance = walk_in(appliance_type=appliance_type)
    result = leak_rates(appliance, (RefrigerantAddition(DAY, lb(15)),))[0]
    assert result.threshold_percent == threshold
    assert result.over_threshold is (threshold < 25.0)


def test_a_rate_equal_to_the_threshold_is_not_over_it() -> None:
    """Repair is required for a leak rate over the threshold (40 CFR 82.157(c)(1)): 12 lb of
    60 lb is exactly 20 % and is not over the commercial 20 %."""
    result = leak_rates(walk_in(), (RefrigerantAddition(DAY, lb(12)),))[0]
    assert result.rolling_average_percent == pytest.approx(20.0)
    assert not result.over_threshold


def test_repair_and_verification_deadlines() -> None:
    """Repair within 30 days of the addition; initial verification within 30 days of the
    repair, follow-up within 10 days of the initial test.

    Source: docs/references.md §3 (repair 30 days per 40 CFR 82.157(d); the verification
    days from memory there); exact dates.
    """
    result = leak_rates(walk_in(), (RefrigerantAddition(DAY, lb(15)),))[0]
    assert result.repair_due_on == DAY + timedelta(days=30)
    assert result.verification_due_on == DAY + timedelta(days=60)
    repaired = DAY + timedelta(days=5)
    fixed = leak_rates(
        walk_in(), (RefrigerantAddition(DAY, lb(15)),), repairs=(LeakRepair(repaired),)
    )[0]
    assert fixed.verification_due_on == repaired + timedelta(days=30)
    initial, follow_up = verification_deadlines(repaired, initial_verified_on=repaired)
    assert initial == repaired + timedelta(days=30)
    assert follow_up == repaired + timedelta(days=10)


def test_industrial_shutdown_gets_120_days() -> None:
    """A repair needing an industrial process shutdown is due in 120 days (docs/references.md
    §3, 40 CFR 82.157(d)); exact date."""
    appliance = walk_in(
        appliance_type=ApplianceType.INDUSTRIAL_PROCESS, repair_needs_industrial_shutdown=True
    )
    result = leak_rates(appliance, (RefrigerantAddition(DAY, lb(20)),))[0]
    assert result.repair_due_on == DAY + timedelta(days=120)


def test_scope_floors_are_the_regulation_pounds_in_kg() -> None:
    """The 15 lb and 50 lb floors convert with the international pound, 0.45359237 kg exactly
    (NIST SP 811, appendix B); tolerance 1e-9 kg."""
    floors = {s.key: s.min_full_charge_kg for s in US_EPA.scopes}
    assert floors["part_84_hfc"] == pytest.approx(15 * 0.45359237, abs=1e-9)
    assert floors["part_82_ods"] == pytest.approx(50 * 0.45359237, abs=1e-9)


@pytest.mark.parametrize(
    ("refrigerant", "charge_lb", "on", "scope"),
    [
        ("R-404A", 20, date(2026, 1, 1), "part_84_hfc"),
        ("R-404A", 20, date(2025, 12, 31), None),
        ("R-404A", 14, date(2026, 6, 1), None),
        ("R-404A", 15, date(2026, 6, 1), "part_84_hfc"),
        ("R-290", 20, date(2026, 6, 1), None),
        ("R-744", 200, date(2026, 6, 1), None),
        ("R-22", 49, date(2024, 6, 1), None),
        ("R-22", 50, date(2024, 6, 1), "part_82_ods"),
    ],
)
def test_scope_by_charge_refrigerant_and_date(
    refrigerant: str, charge_lb: float, on: date, scope: str | None
) -> None:
    """Part 82: 50 lb or more of an ozone-depleting refrigerant (40 CFR 82.157(a)); Part 84:
    15 lb or more of an HFC or substitute with GWP above 53 from 2026-01-01 (docs/references.md
    §3; GWP > 53 and the date from memory there). GWP values per docs/references.md
    §2 (R-290 3, R-744 1)."""
    appliance = Appliance(refrigerant=refrigerant, full_charge_kg=lb(charge_lb))
    result = leak_rates(appliance, (RefrigerantAddition(on, lb(charge_lb)),))[0]
    assert result.scope == scope
    assert result.over_threshold  # a full charge added is 100 %
    assert (result.repair_due_on is not None) is (scope is not None)


def test_chronic_leaker_at_125_percent_in_a_calendar_year() -> None:
    """125 % or more of full charge added in a calendar year is reported by 1 March next year.

    Source: docs/references.md §3 (40 CFR 82.157); 40 + 36 lb of 60 lb = 126.7 % in 2026,
    the excluded seasonal addition not counted; 2027's 30 lb (50 %) is not chronic.
    """
    additions = (
        RefrigerantAddition(date(2026, 2, 1), lb(40)),
        RefrigerantAddition(date(2026, 9, 1), lb(36)),
        RefrigerantAddition(date(2026, 11, 1), lb(20), ExcludedReason.SEASONAL_VARIANCE),
        RefrigerantAddition(date(2027, 3, 1), lb(30)),
    )
    years = chronic_leaker_years(walk_in(), additions)
    assert [y.year for y in years] == [2026]
    assert years[0].percent_of_full_charge == pytest.approx(126.67, abs=0.01)
    assert years[0].report_due_on == date(2027, 3, 1)


def test_site_totals_in_kg_and_co2e() -> None:
    """CO2e = kg x GWP; R-404A GWP 3922 and R-134a 1430 (docs/references.md §2, AR4 values
    by 40 CFR 84.64(b)); tolerance 1e-6 t. Additions outside the period are left out."""
    totals = site_totals(
        (
            UnitAdditions(
                1,
                "R404A",
                (
                    RefrigerantAddition(date(2026, 3, 2), 2.0),
                    RefrigerantAddition(date(2026, 3, 20), 1.0, ExcludedReason.AFTER_RETROFIT),
                    RefrigerantAddition(date(2026, 4, 1), 5.0),
                ),
            ),
            UnitAdditions(2, "R-134a", (RefrigerantAddition(date(2026, 3, 31), 0.5),)),
        ),
        date(2026, 3, 1),
        date(2026, 3, 31),
    )
    assert totals.added_kg == pytest.approx(3.5)
    assert totals.leak_related_kg == pytest.approx(2.5)
    assert totals.co2e_tonnes == pytest.approx((3.0 * 3922 + 0.5 * 1430) / 1000, abs=1e-6)
    assert totals.leak_related_co2e_tonnes == pytest.approx(
        (2.0 * 3922 + 0.5 * 1430) / 1000, abs=1e-6
    )
    assert [t.refrigerant for t in totals.by_refrigerant] == ["R-134a", "R-404A"]


def test_rolling_average_function_is_the_plain_ratio() -> None:
    """Rolling average = added in the window / full charge x 100 (40 CFR 82.152): 13 of 60 lb
    -> 21.67 %; tolerance 0.01 points."""
    assert rolling_average_percent(13.0, 60.0) == pytest.approx(21.67, abs=0.01)


def test_every_rule_value_names_its_source() -> None:
    """The rule set is data with a source beside each value, none left blank."""
    for f in dataclasses.fields(US_EPA):
        value = getattr(US_EPA, f.name)
        if f.name == "name":
            continue
        if isinstance(value, tuple):
            assert all(item.source for item in value), f.name
        else:
            assert value.source, f.name


def test_rule_sets_are_found_by_their_settings_key() -> None:
    """The configured key 'us_epa' names the US EPA rule set."""
    assert RULE_SETS["us_epa"] is US_EPA
