"""Electrical checks against NEMA MG-1 and the capacitor formula (docs/references.md §4)."""

from __future__ import annotations

import math

import numpy as np
import pytest

from diagnostics.core import electrical


@pytest.mark.parametrize(
    ("volts", "expected"),
    [((460, 467, 450), 1.96), ((462, 463, 455), 1.09), ((480, 476, 472), 0.84)],
)
def test_it_computes_voltage_unbalance_as_nema_mg1_defines_it(volts, expected):
    """NEMA MG-1 14.36 worked examples (docs/references.md §4): 460/467/450 V -> 1.96 %,
    462/463/455 V -> 1.09 %, 480/476/472 V -> 0.84 %; tolerance 0.01 percentage point."""
    assert electrical.unbalance_pct(volts) == pytest.approx(expected, abs=0.01)


def test_it_computes_current_unbalance_with_the_same_formula():
    """docs/references.md §4 (common practice): leg currents 33/29/34 A -> 9.4 % unbalance;
    tolerance 0.05 percentage point."""
    assert electrical.unbalance_pct((33, 29, 34)) == pytest.approx(9.4, abs=0.05)


def test_it_handles_unbalance_row_by_row_and_refuses_missing_legs():
    """Arrays in, arrays out: one row per reading; a row with a missing leg gives NaN, not a
    figure made from two legs."""
    rows = np.array([[460, 467, 450], [480, 476, 472], [460, np.nan, 450]], dtype=float)
    result = electrical.unbalance_pct(rows)
    assert result[0] == pytest.approx(1.96, abs=0.01)
    assert result[1] == pytest.approx(0.84, abs=0.01)
    assert math.isnan(result[2])
    with pytest.raises(ValueError, match="three"):
        electrical.unbalance_pct((460, 450))


@pytest.mark.parametrize(
    ("unbalance", "factor"),
    [(0.5, 1.00), (1.0, 1.00), (2.0, 0.95), (3.0, 0.89), (4.0, 0.82), (5.0, 0.76)],
)
def test_it_reads_the_nema_derating_curve(unbalance, factor):
    """NEMA MG-1 derating curve, secondary tabulation in docs/references.md §4: 1 % 1.00, 2 % 0.95,
    3 % 0.89, 4 % 0.82, 5 % 0.76; tolerance 0.01."""
    assert electrical.nema_derating_factor(unbalance) == pytest.approx(factor, abs=0.01)


def test_it_gives_no_derating_factor_above_five_percent():
    """NEMA MG-1 advises against running a motor above 5 % unbalance, so there is no factor
    to use there (NaN); the 1.96 % worked example derates to about 0.95."""
    factors = electrical.nema_derating_factor(np.array([1.96, 5.5, np.nan]))
    assert factors[0] == pytest.approx(0.952, abs=0.01)
    assert math.isnan(factors[1])
    assert math.isnan(factors[2])


@pytest.mark.parametrize(
    ("nameplate", "nameplate_max", "low", "high"),
    [(230, None, 207, 253), (208, 230, 187, 253), (460, None, 414, 506)],
)
def test_it_gives_the_motor_voltage_tolerance_band(nameplate, nameplate_max, low, high):
    """NEMA MG-1 12.44: +/-10 % of nameplate; docs/references.md §4 examples 230 V -> 207-253 V,
    208-230 V -> 187-253 V, 460 V -> 414-506 V; tolerance 0.5 V (the published figures are
    rounded to the volt)."""
    band = electrical.voltage_tolerance_band(nameplate, nameplate_max)
    assert band == pytest.approx((low, high), abs=0.5)
    assert electrical.within_voltage_tolerance(low + 1, nameplate, nameplate_max)
    assert not electrical.within_voltage_tolerance(low - 1, nameplate, nameplate_max)
    assert not electrical.within_voltage_tolerance(high + 1, nameplate, nameplate_max)


def test_it_derives_the_capacitor_constant_from_c_equals_i_over_2_pi_f_v():
    """C = I / (2 pi f V) (docs/references.md §4): 1 A at 1 V is 2652.58 uF at 60 Hz and
    3183.10 uF at 50 Hz; tolerance 0.01 uF."""
    assert electrical.capacitor_uf_in_circuit(1.0, 1.0, 60.0) == pytest.approx(2652.58, abs=0.01)
    assert electrical.capacitor_uf_in_circuit(1.0, 1.0, 50.0) == pytest.approx(3183.10, abs=0.01)
    assert electrical.capacitor_uf_in_circuit(1.0, 1.0) == pytest.approx(
        1e6 / (2 * math.pi * 60.0), rel=1e-12
    )


def test_it_reproduces_the_capacitor_worked_examples():
    """docs/references.md §4 worked examples: 4.1 A at 240 V -> 45.31 uF, inside 45 uF +/-6 %
    (42.30-47.70); 8.3 A at 295.4 V -> 74.5 uF, just above 70 uF +/-6 % (65.8-74.2);
    tolerance 0.01 uF on the first, 0.05 uF on the second (published to one decimal)."""
    first = electrical.capacitor_uf_in_circuit(4.1, 240.0)
    second = electrical.capacitor_uf_in_circuit(8.3, 295.4)
    assert first == pytest.approx(45.31, abs=0.01)
    assert second == pytest.approx(74.5, abs=0.05)
    assert electrical.run_capacitor_band(45.0, 6.0) == pytest.approx((42.30, 47.70), abs=0.005)
    assert electrical.run_capacitor_ok(first, 45.0, 6.0)
    assert electrical.run_capacitor_band(70.0, 6.0) == pytest.approx((65.8, 74.2), abs=0.005)
    assert not electrical.run_capacitor_ok(second, 70.0, 6.0)


def test_it_checks_a_start_capacitor_against_its_marked_range():
    """IEC 60252-2 (docs/references.md §4): a start capacitor marked 88-108 uF passes inside the
    range and fails outside it."""
    result = electrical.start_capacitor_ok(np.array([88.0, 100.0, 108.0, 80.0, 112.0]), 88, 108)
    assert result.tolist() == [True, True, True, False, False]


def test_it_refuses_a_capacitor_figure_without_voltage():
    """A zero or missing voltage gives NaN rather than an infinite capacitance."""
    result = electrical.capacitor_uf_in_circuit(np.array([4.1, 4.1]), np.array([0.0, np.nan]))
    assert np.isnan(result).all()
