"""The standard atmosphere that gauge readings are made absolute with."""

from __future__ import annotations

import numpy as np
import pytest

from diagnostics.core.atmosphere import standard_pressure_kpa

#: ASHRAE Handbook - Fundamentals 2017, ch. 1, Table 1 (via docs/references.md §5).
ASHRAE_TABLE_1 = [(-500.0, 107.478), (0.0, 101.325), (500.0, 95.461), (1000.0, 89.875),
                  (4000.0, 61.640)]  # fmt: skip


@pytest.mark.parametrize(("elevation_m", "kpa"), ASHRAE_TABLE_1)
def test_it_matches_the_ashrae_table(elevation_m, kpa):
    """ASHRAE Fundamentals 2017, ch. 1, Table 1: p at -500, 0, 500, 1000 and 4000 m, within
    0.01 kPa (docs/references.md §5)."""
    assert standard_pressure_kpa(elevation_m) == pytest.approx(kpa, abs=0.01)


def test_it_gives_12_228_psia_at_5000_ft():
    """docs/references.md §5: 5000 ft (1524 m) -> 12.228 psia, within 0.001 psi
    (1 psi = 6.894757 kPa)."""
    assert standard_pressure_kpa(1524.0) / 6.894757293168361 == pytest.approx(12.228, abs=0.001)


def test_it_works_on_arrays_and_falls_with_height():
    """An array of elevations gives an array of pressures, strictly falling with height."""
    z = np.linspace(-1000.0, 11000.0, 50)
    p = standard_pressure_kpa(z)
    assert isinstance(p, np.ndarray)
    assert p.shape == z.shape
    assert np.all(np.diff(p) < 0)
    assert type(standard_pressure_kpa(0)) is float


@pytest.mark.parametrize("elevation_m", [-1500.0, 12000.0, float("nan"), [0.0, 20000.0]])
def test_it_refuses_elevations_outside_the_troposphere(elevation_m):
    """Outside -1,000..11,000 m (or NaN) is an input mistake (feet typed as metres?), not a
    site: ValueError naming the range."""
    with pytest.raises(ValueError, match="-1000 to 11000 m"):
        standard_pressure_kpa(elevation_m)


def test_it_refuses_a_non_numeric_elevation():
    """A string is not an elevation (ValueError)."""
    with pytest.raises(ValueError, match="not a number"):
        standard_pressure_kpa("1500")
