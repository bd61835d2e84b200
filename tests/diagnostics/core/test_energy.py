"""The simple vapour-compression cycle and the energy penalty of a high head (docs/references.md
§7)."""

from __future__ import annotations

import numpy as np
import pytest

from diagnostics.core import energy


def f_to_c(f: float) -> float:
    return (f - 32.0) / 1.8


def test_it_reproduces_the_r404a_worked_example():
    """docs/references.md §7 worked example (a CoolProp regression value): R-404A, 20 F dew
    evaporating, 10 F superheat, 5 F subcooling, isentropic efficiency 0.65: COP 2.906 at
    100 F condensing (dew), 2.223 at 115 F, +30.7 % energy per unit of cooling. Tolerance
    0.002 on the COPs, 0.1 percentage point on the penalty."""
    at_100 = energy.cycle_cop_at_dew_temperatures("R-404A", f_to_c(20.0), f_to_c(100.0))
    at_115 = energy.cycle_cop_at_dew_temperatures("R-404A", f_to_c(20.0), f_to_c(115.0))
    assert at_100 == pytest.approx(2.906, abs=0.002)
    assert at_115 == pytest.approx(2.223, abs=0.002)
    assert 100 * (at_100 / at_115 - 1) == pytest.approx(30.7, abs=0.1)


def test_the_penalty_per_kelvin_has_the_size_of_the_published_rule_of_thumb():
    """Published rule of thumb: about 3 % more energy per K of condensing temperature
    (Energie-Agentur der Wirtschaft, KA-03b; docs/references.md §7). A rule of thumb only sets the
    order of magnitude, so the cycle's figure for R-404A at 20 F evaporating, 100 F -> 105 F
    condensing must lie between 2 and 5 % per K."""
    penalty = energy.energy_penalty_pct(
        "R-404A", np.array([f_to_c(20.0)]), np.array([f_to_c(105.0)]), np.array([f_to_c(100.0)])
    )[0]
    per_k = penalty / (5.0 / 1.8)
    assert 2.0 < per_k < 5.0


def test_the_batch_surface_matches_the_exact_cycle():
    """The batch path reads COP off a per-refrigerant grid; it must agree with the exact
    cycle within 0.1 % at points between grid nodes (R-404A pseudo-pure, R-448A as a HEOS
    mixture). Regression of one implementation against the other."""
    for designation in ("R-404A", "R-448A"):
        surface = energy.cop_surface(designation)
        for te, tc in ((-28.3, 31.1), (-6.7, 43.9), (3.2, 52.6)):
            exact = energy.cycle_cop_at_dew_temperatures(designation, te, tc)
            grid = 1.0 / surface.work_per_cooling(np.array([te]), np.array([tc]))[0]
            assert grid == pytest.approx(exact, rel=1e-3), (designation, te, tc)


def test_the_penalty_grows_with_the_head_and_is_zero_below_target():
    """A head above target costs energy, more the higher it is; a head below target is no
    penalty (clipped at 0); on target the penalty is 0."""
    te = np.full(4, -5.0)
    target = np.full(4, 35.0)
    actual = np.array([30.0, 35.0, 40.0, 45.0])
    penalty = energy.energy_penalty_pct("R-404A", te, actual, target)
    assert penalty[0] == 0.0
    assert penalty[1] == pytest.approx(0.0, abs=1e-9)
    assert 0.0 < penalty[2] < penalty[3]


def test_it_gives_no_penalty_where_the_cycle_does_not_reach():
    """Outside the surface (missing input, condensing below evaporating, evaporating far
    below the grid) the penalty is NaN: said, not guessed."""
    penalty = energy.energy_penalty_pct(
        "R-404A",
        np.array([np.nan, 10.0, -80.0]),
        np.array([40.0, 5.0, 40.0]),
        np.array([35.0, 35.0, 35.0]),
    )
    assert np.isnan(penalty).all()


def test_it_refuses_a_cycle_without_lift():
    """Condensing at or below the evaporating pressure is no refrigeration cycle."""
    with pytest.raises(energy.CycleError):
        energy.cycle_cop("R-404A", 500.0, 400.0)


def test_a_worse_compressor_lowers_the_cop_in_proportion():
    """COP = (h1 - h3) / (h2 - h1) with h2 - h1 = (h2s - h1) / eta: halving the isentropic
    efficiency halves the COP exactly (a property of the method in docs/references.md §7)."""
    full = energy.cycle_cop_at_dew_temperatures("R-404A", -5.0, 40.0, isentropic_efficiency=0.8)
    half = energy.cycle_cop_at_dew_temperatures("R-404A", -5.0, 40.0, isentropic_efficiency=0.4)
    assert half == pytest.approx(full / 2, rel=1e-9)
