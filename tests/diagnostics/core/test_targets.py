"""Targets from design data, application defaults and the reading's conditions."""

from __future__ import annotations

import dataclasses

import numpy as np
import pytest

from diagnostics.core import saturation
from diagnostics.core import targets as tg
from diagnostics.core.diagnose import diagnose
from diagnostics.core.types import APPLICATIONS, METERING_DEVICES, Reading, UnitDesign

PSI_KPA = 6.894757
SEA_LEVEL_KPA = 101.325
#: Stored numbers keep four decimals (stored.DECIMALS).
STORED = 1e-4


def f_to_c(f: float) -> float:
    return (f - 32.0) / 1.8


def kpa_gauge_to_psig(kpa: float) -> float:
    return kpa / PSI_KPA


def _targets(unit: UnitDesign, reading: Reading, elevation_m: float = 0.0) -> dict:
    return {t.name: t for t in diagnose(unit, reading, elevation_m).targets}


def test_it_targets_25f_evaporating_for_a_35f_box_with_a_10f_td():
    """Common practice (docs/references.md §1.3 and §6): a medium-temperature R-404A box at 35 F
    with a 10 F evaporator TD targets 25 F evaporating, about 62-63 psig at sea level. Tolerance:
    1e-4 K on the temperature (a subtraction, stored to 4 decimals); the pressure must fall
    inside the chart's 62-63 psig."""
    unit = UnitDesign("R-404A", "medium_temp", design_evap_td_k=10 / 1.8)
    found = _targets(unit, Reading(box_temp_c=f_to_c(35.0)))
    assert found["evaporating_temp"].value == pytest.approx(f_to_c(25.0), abs=STORED)
    psig = kpa_gauge_to_psig(found["suction_pressure"].value)
    assert 62.0 <= psig <= 63.0
    assert found["suction_pressure"].low < found["suction_pressure"].value
    assert found["suction_pressure"].high > found["suction_pressure"].value


def test_it_targets_100f_condensing_for_70f_air_with_a_30f_split():
    """Common practice (docs/references.md §1.3 and §6): 70 F entering air with a 30 F split targets
    100 F condensing, about 235-237 psig for R-404A at sea level on a chart's liquid
    (bubble) column. The unit's design split is on the dew point by default, whose pressure
    is about 1 % lower (Lemmon 2003, Table V, at 300 K: dew 1.3034 against bubble 1.3169
    MPa), so 233.5-235.5 psig; on a mid-point basis the target sits inside the chart's
    235-237 psig. Tolerance: 1e-4 K (stored to 4 decimals) on the temperature."""
    unit = UnitDesign("R-404A", "medium_temp", design_condenser_split_k=30 / 1.8)
    found = _targets(unit, Reading(entering_air_temp_c=f_to_c(70.0)))
    assert found["condensing_temp"].value == pytest.approx(f_to_c(100.0), abs=STORED)
    assert 233.5 <= kpa_gauge_to_psig(found["condensing_pressure"].value) <= 235.5
    mid = dataclasses.replace(unit, temperature_basis="mid_point")
    found_mid = _targets(mid, Reading(entering_air_temp_c=f_to_c(70.0)))
    assert 235.0 <= kpa_gauge_to_psig(found_mid["condensing_pressure"].value) <= 237.0


def test_the_mid_point_target_pressure_lies_between_dew_and_bubble():
    """The documented glide choice: the target pressure for 25 F is the one whose mid-point
    temperature is 25 F, so it lies between the dew pressure (about 62.1 psig) and the bubble
    pressure (about 63.4 psig) at 25 F; CoolProp regression values from the saturation
    tables, and the mid-point temperature at the result is 25 F within 0.001 K."""
    curve = saturation.table("R-404A")
    t = np.array([f_to_c(25.0)])
    p_mid = tg.mid_point_pressure_kpa_abs(curve, t)[0]
    assert curve.dew_pressure_kpa_abs(t)[0] < p_mid < curve.bubble_pressure_kpa_abs(t)[0]
    mid = 0.5 * (curve.dew_temp_c(p_mid) + curve.bubble_temp_c(p_mid))
    assert float(mid) == pytest.approx(t[0], abs=1e-3)


def test_the_mid_point_inverse_holds_across_a_large_glide():
    """R-448A has several kelvin of glide; the mid-point pressure must still give back the
    requested mid-point temperature within 0.001 K from -35 C to +45 C (self-consistency of
    the inverse on the saturation tables)."""
    curve = saturation.table("R-448A")
    t = np.linspace(-35.0, 45.0, 9)
    p = tg.mid_point_pressure_kpa_abs(curve, t)
    mid = 0.5 * (curve.dew_temp_c(p) + curve.bubble_temp_c(p))
    assert np.max(np.abs(mid - t)) < 1e-3


def test_a_pure_fluid_target_pressure_is_its_saturation_pressure():
    """For a pure fluid the mid-point is the saturation point: R-134a at 300 K gives
    702.82 kPa (Tillner-Roth & Baehr 1994, Table 8); tolerance 0.05 %."""
    curve = saturation.table("R-134a")
    p = tg.mid_point_pressure_kpa_abs(curve, np.array([300.0 - 273.15]))[0]
    assert p == pytest.approx(702.82, rel=5e-4)


def test_a_txv_cooler_is_set_to_6_to_10_f_superheat():
    """Common practice (docs/references.md §6): a TXV medium-temperature evaporator runs 6-10 F
    superheat (8-10 F usual), a TXV freezer 4-6 F. Without a gauge reading the accepted
    range is widened by the thermometer's 1 K each side (from memory); the source says so.
    Tolerance 1e-4 K (a conversion, stored to 4 decimals)."""
    cooler = _targets(UnitDesign("R-404A", "medium_temp", metering_device="txv"), Reading())
    freezer = _targets(UnitDesign("R-404A", "low_temp", metering_device="txv"), Reading())
    assert (cooler["superheat"].low, cooler["superheat"].high) == pytest.approx(
        (6 / 1.8 - 1.0, 10 / 1.8 + 1.0), abs=STORED
    )
    assert (freezer["superheat"].low, freezer["superheat"].high) == pytest.approx(
        (4 / 1.8 - 1.0, 6 / 1.8 + 1.0), abs=STORED
    )
    assert "common practice" in cooler["superheat"].source
    assert "clamp thermometer" in cooler["superheat"].source


def test_the_instruments_error_grows_where_the_saturation_curve_is_flat():
    """The band widens by the thermometer's 1 K and the gauge's 7 kPa read through the
    saturation curve, in quadrature (from memory). R-404A's PT chart (docs/references.md §1.3,
    common practice) puts 55 psig at about 19.5 F and 62.5 psig at about 25 F: 0.73 F/psi,
    0.059 K/kPa, so at 62 psig the margin is hypot(1, 7 x 0.059) = 1.08 K (tolerance
    0.03 K). A freezer's suction at about 16 psig reads a flatter curve: a wider margin."""
    unit = UnitDesign("R-404A", "medium_temp", metering_device="txv")
    at_62_psig = Reading(suction_kpa_gauge=62.0 * 6.894757, suction_line_temp_c=-3.0)
    high = _targets(unit, at_62_psig)["superheat"].high
    assert high - 10 / 1.8 == pytest.approx(1.08, abs=0.03)
    at_16_psig = Reading(suction_kpa_gauge=16.0 * 6.894757, suction_line_temp_c=-27.0)
    assert _targets(unit, at_16_psig)["superheat"].high - 10 / 1.8 > high - 10 / 1.8 + 0.1


def test_it_ranges_subcooling_with_and_without_a_receiver():
    """Tomczyk, ACHR News (docs/references.md §6): receiverless systems 6-10 F subcooling; with a
    receiver 0-5 F (common practice); without a gauge reading 1 K each side for the
    thermometer (from memory). Tolerance 1e-4 K (stored to 4 decimals). Without design data
    the receiver follows the application: a reach-in has none (common practice: critically
    charged)."""
    without = _targets(UnitDesign("R-404A", "medium_temp", has_receiver=False), Reading())
    with_receiver = _targets(UnitDesign("R-404A", "medium_temp", has_receiver=True), Reading())
    assert (without["subcooling"].low, without["subcooling"].high) == pytest.approx(
        (6 / 1.8 - 1.0, 10 / 1.8 + 1.0), abs=STORED
    )
    assert (with_receiver["subcooling"].low, with_receiver["subcooling"].high) == pytest.approx(
        (-1.0, 5 / 1.8 + 1.0), abs=STORED
    )
    reach_in = _targets(UnitDesign("R-134a", "reach_in"), Reading())
    assert reach_in["subcooling"].high == pytest.approx(10 / 1.8 + 1.0, abs=STORED)
    assert "Tomczyk" in without["subcooling"].source


def test_it_limits_the_discharge_line_to_225f_and_the_ratio_to_10():
    """Tomczyk, ACHR News (docs/references.md §6): discharge line at most 225 F; single-stage
    compression ratio about 10:1 (common practice). Tolerance 1e-4 (stored to 4 decimals)."""
    found = _targets(UnitDesign("R-404A", "medium_temp"), Reading())
    assert found["discharge_line_temp"].high == pytest.approx(f_to_c(225.0), abs=STORED)
    assert found["compression_ratio"].high == pytest.approx(10.0, abs=STORED)


def test_design_data_wins_over_the_application_default():
    """A design TD of 8 K replaces the 10 F default and the source says it came from the
    unit's design data; without it the default and its source are used."""
    reading = Reading(box_temp_c=2.0)
    own = _targets(UnitDesign("R-404A", "medium_temp", design_evap_td_k=8.0), reading)
    default = _targets(UnitDesign("R-404A", "medium_temp"), reading)
    assert own["evaporating_temp"].value == pytest.approx(-6.0, abs=STORED)
    assert own["evaporator_td"].source.startswith("target: unit design data")
    assert default["evaporating_temp"].value == pytest.approx(2.0 - 10 / 1.8, abs=STORED)
    assert "application default" in default["evaporator_td"].source


def test_the_suction_target_in_gauge_rises_with_elevation():
    """The absolute target pressure does not change with elevation, so the gauge target
    rises by the drop in atmospheric pressure: 101.325 - 89.875 = 11.450 kPa at 1000 m
    (ASHRAE Fundamentals 2017 ch. 1 Table 1, docs/references.md §5); tolerance 0.01 kPa."""
    unit = UnitDesign("R-404A", "medium_temp")
    reading = Reading(box_temp_c=2.0)
    sea = _targets(unit, reading, 0.0)["suction_pressure"].value
    high = _targets(unit, reading, 1000.0)["suction_pressure"].value
    assert high - sea == pytest.approx(101.325 - 89.875, abs=0.01)


def test_a_water_cooled_unit_has_no_condensing_target():
    """Condensing target = entering air + split holds for air-cooled condensers only: a
    water-cooled unit gets no condensing target (said, not guessed)."""
    found = _targets(
        UnitDesign("R-404A", "medium_temp", condenser_type="water"),
        Reading(entering_air_temp_c=25.0),
    )
    assert "condensing_temp" not in found
    assert "condensing_pressure" not in found


def test_every_application_default_names_its_source():
    """Thresholds are data: every default in the tables carries a non-empty source, and the
    superheat table covers every application and metering device."""
    for app in APPLICATIONS:
        d = tg.APPLICATION_DEFAULTS[app]
        assert d.head_pressure_control_source
        for item in (d.box_temp_c, d.evap_td_k, d.condenser_split_k):
            assert item is None or item.source.strip()
        assert d.compression_ratio.source.strip()
        assert d.receiver_source.strip()
        for device in METERING_DEVICES:
            rng = tg.SUPERHEAT_DEFAULTS[(app, device)]
            assert 0 <= rng.low < rng.high
            assert rng.source.strip()
