"""Unit conversion: exact factors, gauge against the site's atmosphere, and clear errors."""

from __future__ import annotations

from decimal import Decimal

import numpy as np
import pytest
from hypothesis import given
from hypothesis import strategies as st

from diagnostics.core import units as u
from diagnostics.core.numeric import NotNumeric

finite = st.floats(min_value=-1e6, max_value=1e6, allow_nan=False)
elevations = st.floats(min_value=-500, max_value=5000, allow_nan=False)


def test_it_uses_the_exact_definitions_of_the_pound_and_the_psi():
    """1 lb = 0.45359237 kg and 1 oz = 1/16 lb exactly (international avoirdupois pound,
    NIST SP 811 appendix B); 1 psi = 6.894757293168361 kPa (lbf/in^2 from the same pound and
    standard gravity 9.80665 m/s^2, 1 in = 0.0254 m; NIST SP 811 gives 6.894757 kPa)."""
    assert u.mass_to_kg(1.0, "lb") == 0.45359237
    assert u.mass_to_kg(16.0, "oz") == pytest.approx(0.45359237, rel=1e-15)
    assert u.pressure_to_kpa_abs(1.0, "psia") == pytest.approx(6.894757, abs=5e-7)
    assert u.pressure_to_kpa_abs(1.0, "bar_abs") == 100.0
    assert u.length_to_m(5000.0, "ft") == pytest.approx(1524.0)


def test_it_reads_gauge_units_against_the_standard_atmosphere_at_the_site():
    """docs/references.md §5 (ASHRAE Fundamentals 2017, ch. 1): at 5000 ft the atmosphere is
    12.228 psia, so 20.0 psig there is 32.23 psia, not the 34.70 a sea-level reading gives
    (tolerance 0.005 psi)."""
    at_5000_ft = u.length_to_m(5000.0, "ft")
    kpa_abs = u.pressure_to_kpa_abs(20.0, "psig", at_5000_ft)
    assert u.pressure_from_kpa_abs(kpa_abs, "psia") == pytest.approx(32.23, abs=0.005)
    sea_level = u.pressure_to_kpa_abs(20.0, "psig")
    assert u.pressure_from_kpa_abs(sea_level, "psia") == pytest.approx(34.70, abs=0.005)
    assert u.pressure_from_kpa_abs(0.0, "psig", at_5000_ft) == pytest.approx(-12.228, abs=0.001)


def test_it_treats_kpa_and_bar_as_gauge_and_their_abs_forms_as_absolute():
    """'kPa' and 'bar' are gauge (docs/api.md); 'kPa_abs' and 'bar_abs' are not moved by
    elevation."""
    assert u.pressure_to_kpa_abs(0.0, "kPa") == pytest.approx(101.325)
    assert u.pressure_to_kpa_abs(1.0, "bar") == pytest.approx(201.325)
    assert u.pressure_to_kpa_abs(300.0, "kPa_abs", 2000.0) == 300.0
    assert u.pressure_to_kpa_gauge(300.0, "kPa_abs") == pytest.approx(198.675)
    assert u.pressure_from_kpa_gauge(198.675, "kPa_abs") == pytest.approx(300.0)
    assert u.pressure_to_kpa_gauge(2.0, "bar", 2000.0) == 200.0
    assert [u.is_gauge_pressure_unit(x) for x in u.PRESSURE_UNITS] == [
        True, False, True, False, True, False
    ]  # fmt: skip


@given(value=finite, elevation=elevations)
def test_it_round_trips_every_pressure_unit(value, elevation):
    """to then from kPa (absolute and gauge) gives the value back, in every unit."""
    for unit in u.PRESSURE_UNITS:
        kpa_abs = u.pressure_to_kpa_abs(value, unit, elevation)
        assert u.pressure_from_kpa_abs(kpa_abs, unit, elevation) == pytest.approx(
            value, rel=1e-12, abs=1e-9
        )
        kpa_gauge = u.pressure_to_kpa_gauge(value, unit, elevation)
        assert u.pressure_from_kpa_gauge(kpa_gauge, unit, elevation) == pytest.approx(
            value, rel=1e-12, abs=1e-9
        )


def test_it_converts_temperatures_with_their_offsets():
    """Defined points: 32 F = 0 C = 273.15 K; 212 F = 100 C; -40 F = -40 C."""
    assert u.temperature_to_c(32.0, "F") == 0.0
    assert u.temperature_to_c(212.0, "F") == pytest.approx(100.0)
    assert u.temperature_to_c(-40.0, "F") == pytest.approx(-40.0)
    assert u.temperature_to_c(273.15, "K") == 0.0
    assert u.temperature_from_c(100.0, "F") == pytest.approx(212.0)
    assert u.temperature_from_c(-273.15, "K") == 0.0


def test_it_converts_temperature_differences_without_the_offset():
    """A superheat of 10 F is 5.556 K, not the -12.2 C a reading of 10 F would be."""
    assert u.temperature_difference_to_k(10.0, "F") == pytest.approx(50.0 / 9.0)
    assert u.temperature_difference_to_k(10.0, "C") == 10.0
    assert u.temperature_difference_to_k(10.0, "K") == 10.0
    assert u.temperature_difference_from_k(5.0, "F") == pytest.approx(9.0)


@given(value=finite)
def test_it_round_trips_temperatures_and_masses(value):
    """to then from gives the value back, for every temperature and mass unit."""
    for unit in u.TEMPERATURE_UNITS:
        assert u.temperature_from_c(u.temperature_to_c(value, unit), unit) == pytest.approx(
            value, rel=1e-12, abs=1e-9
        )
        back = u.temperature_difference_from_k(u.temperature_difference_to_k(value, unit), unit)
        assert back == pytest.approx(value, rel=1e-12, abs=1e-12)
    for unit in u.MASS_UNITS:
        assert u.mass_from_kg(u.mass_to_kg(value, unit), unit) == pytest.approx(value, rel=1e-12)


def test_it_returns_a_float_for_a_scalar_and_an_array_for_an_array():
    """float in -> float out; list or ndarray in -> ndarray of the same shape out. Decimals
    (as a DecimalField gives them) and numpy scalars count as numbers."""
    assert type(u.temperature_to_c(50, "F")) is float
    assert type(u.pressure_to_kpa_abs(Decimal("10.5"), "psig")) is float
    assert type(u.mass_to_kg(np.float32(2.0), "lb")) is float
    out = u.temperature_to_c([[32.0, 212.0], [50.0, 68.0]], "F")
    assert isinstance(out, np.ndarray)
    np.testing.assert_allclose(out, [[0.0, 100.0], [10.0, 20.0]])
    by_site = u.pressure_to_kpa_abs(0.0, "psig", np.array([0.0, 1000.0]))
    np.testing.assert_allclose(by_site, [101.325, 89.87451942])


def test_it_accepts_any_letter_case_but_nothing_else():
    """'kpa_ABS' is kPa_abs; an unknown unit raises UnitError naming it and listing the
    accepted ones."""
    assert u.pressure_to_kpa_abs(100.0, "kpa_ABS") == 100.0
    assert u.temperature_to_c(32.0, "f") == 0.0
    with pytest.raises(u.UnitError, match=r"'psi'.*psig, psia, kPa, kPa_abs, bar, bar_abs"):
        u.pressure_to_kpa_abs(10.0, "psi")
    with pytest.raises(u.UnitError, match=r"temperature unit 'R'; accepted: F, C, K"):
        u.temperature_to_c(500.0, "R")
    with pytest.raises(u.UnitError, match=r"mass unit None; accepted: kg, lb, oz"):
        u.mass_to_kg(1.0, None)  # type: ignore[arg-type]


@pytest.mark.parametrize("bad", ["12.5", None, True, [1.0, "a"], {"a": 1}, [[1.0], [2.0, 3.0]]])
def test_it_refuses_what_is_not_a_number(bad):
    """Strings (even numeric ones), None, bools and ragged or mixed arrays raise NotNumeric,
    a ValueError."""
    with pytest.raises(NotNumeric):
        u.pressure_to_kpa_abs(bad, "psig")
    assert issubclass(NotNumeric, ValueError)
