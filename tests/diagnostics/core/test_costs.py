"""The monthly energy and money a drifting condenser costs, with its assumptions."""

from __future__ import annotations

import dataclasses

import numpy as np
import pytest

from diagnostics.core.costs import (
    DEFAULT_COST_RULES,
    compressor_power_kw,
    energy_cost,
    extra_energy_fraction,
    penalty_percent_from_excess_k,
)


def test_single_phase_power_is_volts_amps_power_factor() -> None:
    """P = V x I x PF (the AC real-power relation, from memory): 230 V, 10 A, PF 0.85 ->
    1.955 kW; tolerance 1e-9 kW."""
    assert compressor_power_kw(230.0, 10.0, 0.85) == pytest.approx(1.955, abs=1e-9)


def test_three_phase_power_has_root_three() -> None:
    """P = sqrt(3) x V_line x I_line x PF (from memory): 460 V, 10 A, PF 0.85 -> 6.772 kW;
    tolerance 0.001 kW. Arrays go through element by element."""
    assert compressor_power_kw(460.0, 10.0, 0.85, phases=3) == pytest.approx(6.772, abs=1e-3)
    both = compressor_power_kw(np.array([230.0, 460.0]), np.array([10.0, 10.0]), 0.85)
    np.testing.assert_allclose(both, [1.955, 3.910])
    with pytest.raises(ValueError, match="phases"):
        compressor_power_kw(230.0, 10.0, 0.85, phases=2)


def test_the_drift_costs_its_share_of_the_measured_energy() -> None:
    """Penalty 30.7 % (the docs/references.md §7 R-404A example, 100 -> 115 F condensing,
    a CoolProp regression value) on a synthetic 1.955 kW compressor running half the time for
    30 days: 703.8 kWh, of which 30.7/130.7 = 165.31 kWh is the drift; at 0.20 USD/kWh
    33.06 USD. Tolerance 0.01."""
    cost = energy_cost(
        30.7,
        volts=230.0,
        amps=10.0,
        power_factor=0.85,
        run_time_fraction=0.5,
        days_in_month=30.0,
        tariff_per_kwh=0.20,
        currency="USD",
    )
    assert cost.energy_kwh_per_month == pytest.approx(703.8, abs=0.01)
    assert cost.extra_kwh_per_month == pytest.approx(165.31, abs=0.01)
    assert cost.extra_cost_per_month == pytest.approx(33.06, abs=0.01)
    assert cost.currency == "USD"


def test_defaults_are_stated_with_their_source() -> None:
    """What the caller leaves out comes from the rules and says where it came from; a value
    changed in the rules is marked as configured."""
    cost = energy_cost(10.0, volts=230.0, amps=8.0, tariff_per_kwh=0.15, currency="USD")
    used = {a.name: a for a in cost.assumptions}
    assert used["run_time_fraction"].value == pytest.approx(16 / 24)
    assert "16 hours" in used["run_time_fraction"].source
    assert used["power_factor"].value == pytest.approx(DEFAULT_COST_RULES.power_factor)
    assert used["supply_volts"].source == "measured at the visit"
    rules = dataclasses.replace(DEFAULT_COST_RULES, run_time_fraction=0.5)
    configured = energy_cost(
        10.0, volts=230.0, amps=8.0, tariff_per_kwh=0.15, currency="USD", rules=rules
    )
    assert {a.name: a for a in configured.assumptions}["run_time_fraction"].source == "configured"
    assert configured.extra_kwh_per_month == pytest.approx(cost.extra_kwh_per_month * 0.75)


def test_a_run_time_outside_zero_to_one_is_refused() -> None:
    """A compressor cannot run more than all the time."""
    with pytest.raises(ValueError, match="run-time"):
        energy_cost(
            10.0, volts=230.0, amps=8.0, tariff_per_kwh=0.1, currency="USD", run_time_fraction=1.5
        )


def test_rule_of_thumb_penalty_is_three_percent_per_kelvin() -> None:
    """About 3 % more energy per K of condensing temperature (Energie-Agentur der Wirtschaft,
    standard measure KA-03b): 5 K -> 15 %; a head below target costs nothing."""
    assert penalty_percent_from_excess_k(5.0) == pytest.approx(15.0)
    np.testing.assert_allclose(penalty_percent_from_excess_k([-2.0, 1.0]), [0.0, 3.0])


def test_extra_share_of_a_zero_penalty_is_zero() -> None:
    """No penalty, no extra energy; 100 % penalty is half the energy."""
    assert extra_energy_fraction(0.0) == 0.0
    assert extra_energy_fraction(100.0) == pytest.approx(0.5)
