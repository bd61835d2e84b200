"""The visit diagnosis end to end: derived values, what is not scored, the cautions, and
any subset of the fields."""

from __future__ import annotations

import dataclasses
import math

import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from diagnostics.core import saturation
from diagnostics.core.diagnose import ALGORITHM_VERSION, diagnose
from diagnostics.core.types import Reading, UnitDesign
from tests.diagnostics.core.cases import ATM, FULL, R404A_MT, _metrics


def test_it_measures_superheat_from_dew_and_subcooling_from_bubble_on_r448a():
    """R-448A glides several kelvin. Superheat must be suction-line temperature minus the
    dew temperature and subcooling the bubble temperature minus liquid-line temperature; a
    mid-point or bubble-only (wrong) single-point reading differs by half or all of the
    glide, more than 1 K here. Anchor: R-448A bubble pressure 12.876 bar at 25 C (public
    data page, low authority, docs/references.md §1.2; tolerance 0.3 K)."""
    unit = UnitDesign("R-448A", "medium_temp", has_receiver=False)
    head_abs = 1287.6
    reading = Reading(
        suction_kpa_gauge=250.0,
        suction_line_temp_c=-2.0,
        head_kpa_gauge=head_abs - ATM,
        liquid_line_temp_c=21.0,
    )
    derived = diagnose(unit, reading).derived
    curve = saturation.table("R-448A")
    dew_s = float(curve.dew_temp_c(250.0 + ATM))
    bubble_s = float(curve.bubble_temp_c(250.0 + ATM))
    dew_h = float(curve.dew_temp_c(head_abs))
    assert derived.condensing_bubble_c == pytest.approx(25.0, abs=0.3)
    assert derived.superheat_k == pytest.approx(-2.0 - dew_s, abs=1e-9)
    assert derived.subcooling_k == pytest.approx(derived.condensing_bubble_c - 21.0, abs=1e-9)
    mid_point_superheat = -2.0 - 0.5 * (dew_s + bubble_s)
    bubble_only_superheat = -2.0 - bubble_s
    assert derived.superheat_k < mid_point_superheat - 1.0
    assert derived.superheat_k < bubble_only_superheat - 2.0
    dew_based_subcooling = dew_h - 21.0
    assert derived.subcooling_k < dew_based_subcooling - 2.0
    # TD and split on the dew point unless the design data says mid-point
    assert derived.evaporating_c == pytest.approx(dew_s, abs=1e-9)
    mid = diagnose(dataclasses.replace(unit, temperature_basis="mid_point"), reading).derived
    assert mid.evaporating_c == pytest.approx(0.5 * (dew_s + bubble_s), abs=1e-9)
    assert mid.superheat_k == derived.superheat_k


def test_it_derives_td_split_and_compression_ratio_on_the_units_basis():
    """TD = box - evaporating, split = condensing - entering air, both on the basis the
    design data is given on (dew point by default, stated in the diagnosis); compression
    ratio from absolute pressures (the elevation enters through the standard atmosphere,
    docs/references.md §5: 89.875 kPa at 1000 m)."""
    result = diagnose(R404A_MT, FULL, elevation_m=1000.0)
    d = result.derived
    assert d.suction_kpa_abs == pytest.approx(330.0 + 89.875, abs=0.01)
    assert d.evaporating_c == d.evaporating_dew_c
    assert d.evaporator_td_k == pytest.approx(2.0 - d.evaporating_c, abs=1e-9)
    assert d.condenser_split_k == pytest.approx(d.condensing_c - 24.0, abs=1e-9)
    assert d.compression_ratio == pytest.approx((1550.0 + 89.875) / (330.0 + 89.875), rel=1e-4)
    assert "dew point" in result.glide_choice
    assert result.algorithm_version == ALGORITHM_VERSION


@pytest.mark.parametrize("designation", ["R-407A", "R-448A", "R-449A"])
def test_a_healthy_glide_blend_cooler_is_not_short_of_air(designation):
    """Issue seen in the field: healthy units on zeotropic blends got "too little air
    through the evaporator" at every visit, because the TD was taken on the mid-point while
    the design TD (10 F, common practice for a general cooler) was a dew-point figure. A
    cooler whose dew-point TD is exactly its design TD is on target, with no finding; the
    same reading read on the mid-point is half a glide (R-407A glides about 4 K at
    evaporating pressures: Lemmon 2003 gives R-407C, its sibling, a larger one) higher."""
    unit = UnitDesign(designation, "medium_temp", metering_device="txv", design_evap_td_k=10 / 1.8)
    curve = saturation.table(designation)
    evap_dew_c = 2.0 - 10 / 1.8
    p_s = float(curve.dew_pressure_kpa_abs(evap_dew_c))
    reading = Reading(
        box_temp_c=2.0,
        suction_kpa_gauge=p_s - ATM,
        suction_line_temp_c=evap_dew_c + 9 / 1.8,
        compressor_running=True,
    )
    result = diagnose(unit, reading)
    assert _metrics(result)["evaporator_td"].status == "ok"
    assert result.findings == ()
    glide_k = float(curve.dew_temp_c(p_s) - curve.bubble_temp_c(p_s))
    assert glide_k > 2.0
    mid = diagnose(dataclasses.replace(unit, temperature_basis="mid_point"), reading)
    assert _metrics(mid)["evaporator_td"].measured == pytest.approx(
        10 / 1.8 + glide_k / 2, abs=1e-3
    )


def test_a_compressor_that_will_not_start_draws_near_lra_one_that_runs_near_rla():
    """docs/references.md §4 (common practice): a compressor that hums without starting draws near
    its LRA (fault, finding 'compressor_not_starting'); one that runs draws near or below RLA
    (ok). Synthetic 10 A RLA / 60 A LRA."""
    stuck = diagnose(
        R404A_MT, dataclasses.replace(FULL, compressor_running=False, compressor_amps=(57.0,))
    )
    running = diagnose(R404A_MT, dataclasses.replace(FULL, compressor_amps=(9.8,)))
    assert _metrics(stuck)["standstill_amps"].status == "fault"
    assert "running_amps" not in _metrics(stuck)
    assert "compressor_not_starting" in {f.code for f in stuck.findings}
    assert _metrics(running)["running_amps"].status == "ok"
    assert "standstill_amps" not in _metrics(running)


def test_a_stopped_compressor_leaves_the_cycle_unjudged():
    """With the compressor reported off, pressures have equalised: TD, split, superheat,
    subcooling, discharge and compression ratio are not scored, and say why."""
    result = diagnose(R404A_MT, dataclasses.replace(FULL, compressor_running=False))
    metrics = _metrics(result)
    for name in ("evaporator_td", "condenser_split", "superheat", "compression_ratio"):
        assert metrics[name].status == "not_scored"
        assert "not running" in metrics[name].reason
    assert metrics["box_temp"].status != "not_scored"


def test_an_empty_reading_scores_nothing_and_says_so():
    """Issue seen in the field: a set with nothing to judge scored 100. It has no score
    (None: "not enough readings to judge"), fires no finding, and every metric is not_scored
    with a reason naming what is missing; one judged metric is enough for a score."""
    result = diagnose(R404A_MT, Reading())
    assert result.score is None
    assert diagnose(R404A_MT, Reading(box_temp_c=2.0)).score == 100.0
    assert result.findings == ()
    assert result.energy_penalty_pct is None
    for metric in result.metrics:
        assert metric.status == "not_scored"
        assert metric.points_lost == 0.0
        assert metric.reason
    assert "box_temp_c" in _metrics(result)["box_temp"].reason


def test_a_water_cooled_condenser_has_no_split_to_score():
    """No air split exists on a water-cooled condenser: the split is not scored, with that
    reason, and no energy penalty is guessed."""
    unit = dataclasses.replace(R404A_MT, condenser_type="water")
    result = diagnose(unit, FULL)
    split = _metrics(result)["condenser_split"]
    assert split.status == "not_scored"
    assert "water-cooled" in split.reason
    assert result.energy_penalty_pct is None


def test_r744_above_its_critical_point_scores_the_gas_cooler_instead():
    """R-744 above 7377 kPa absolute (critical point, Span & Wagner 1996) has no condensing
    temperature and no subcooling (docs/references.md §1.4): those are not scored with the reason,
    the gas-cooler approach (outlet - entering air) and the head against the cut-out are."""
    unit = UnitDesign(
        "R-744",
        "medium_temp",
        has_receiver=True,
        high_pressure_cutout_kpa_gauge=12000.0,
    )
    reading = Reading(
        entering_air_temp_c=32.0,
        suction_kpa_gauge=2900.0,
        suction_line_temp_c=-3.0,
        head_kpa_gauge=9000.0,
        liquid_line_temp_c=35.0,
    )
    result = diagnose(unit, reading)
    metrics = _metrics(result)
    assert result.derived.transcritical
    assert result.derived.condensing_c is None
    for name in ("condenser_split", "subcooling"):
        assert metrics[name].status == "not_scored"
        assert "critical" in metrics[name].reason
    assert metrics["gas_cooler_approach"].measured == pytest.approx(3.0)
    assert metrics["gas_cooler_approach"].status == "ok"
    assert metrics["head_pressure"].status == "ok"
    assert result.energy_penalty_pct is None
    assert "high_pressure_co2" in {c.code for c in result.cautions}


@pytest.mark.parametrize(
    ("designation", "expected", "absent"),
    [
        ("R-404A", set(), {"flammable_2l", "flammable", "toxic"}),
        ("R-454B", {"flammable_2l"}, {"flammable", "toxic"}),
        ("R-290", {"flammable"}, {"flammable_2l", "toxic"}),
        ("R-717", {"flammable_2l", "toxic"}, {"flammable"}),
    ],
)
def test_it_adds_the_cautions_that_apply(designation, expected, absent):
    """ASHRAE 34 safety classes (docs/references.md §2): A2L and B2L get the mildly-flammable note,
    A3 the flammable one, B classes the toxic one; every diagnosis carries the electrical,
    pressure and local-codes cautions."""
    result = diagnose(UnitDesign(designation, "medium_temp"), Reading(box_temp_c=2.0))
    got = {c.code for c in result.cautions}
    assert {"electrical", "pressure", "codes"} <= got
    assert expected <= got
    assert not (absent & got)


def test_certified_handling_is_cautioned_when_the_repair_opens_the_circuit():
    """An undercharge finding (repair means opening the circuit) adds the certified-handling
    caution; a reading without such a finding does not."""
    low = diagnose(
        R404A_MT,
        dataclasses.replace(FULL, suction_line_temp_c=12.0, sight_glass="bubbles"),
    )
    assert "undercharge" in {f.code for f in low.findings}
    assert "certified_handling" in {c.code for c in low.cautions}
    calm = diagnose(R404A_MT, Reading(box_temp_c=2.0))
    assert "certified_handling" not in {c.code for c in calm.cautions}


FIELDS = {
    "box_temp_c": st.floats(-40, 30),
    "entering_air_temp_c": st.floats(-30, 50),
    "suction_kpa_gauge": st.floats(-120, 3000),
    "suction_line_temp_c": st.floats(-50, 40),
    "head_kpa_gauge": st.floats(-50, 12000),
    "liquid_line_temp_c": st.floats(-20, 70),
    "discharge_line_temp_c": st.floats(-20, 180),
    "compressor_amps": st.lists(st.floats(0, 200), max_size=4).map(tuple),
    "supply_volts": st.lists(st.floats(0, 700), max_size=4).map(tuple),
    "run_capacitor_uf": st.floats(0, 200),
    "start_capacitor_uf": st.floats(0, 600),
    "compressor_running": st.booleans(),
    "condenser_fan_running": st.booleans(),
    "evaporator_fans_running": st.booleans(),
    "coil_iced": st.booleans(),
    "sight_glass": st.sampled_from(["clear", "bubbles", "none"]),
}
UNITS = [
    R404A_MT,
    UnitDesign("R-448A", "low_temp"),
    UnitDesign("R-744", "other", condenser_type="water", phase=3, nameplate_volts=400.0),
    UnitDesign("R-134a", "ice_machine", metering_device="capillary", rla_a=5.0),
]


@settings(max_examples=60, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(
    unit=st.sampled_from(UNITS),
    values=st.fixed_dictionaries({}, optional=FIELDS),
    elevation=st.floats(-100, 3000),
)
def test_any_subset_of_fields_gives_a_score_and_never_crashes(unit, values, elevation):
    """Property: whatever subset of the fields is present (values anywhere in a wide
    physical range, including out of the saturation range), the diagnosis returns, the score
    lies in 0..100 (None exactly when nothing was judged), an unscored metric costs nothing
    and says why, and points add up."""
    result = diagnose(unit, Reading(**values), elevation_m=elevation)
    judged = [m for m in result.metrics if m.status != "not_scored"]
    if not judged:
        assert result.score is None
        return
    assert 0.0 <= result.score <= 100.0
    lost = 0.0
    for metric in result.metrics:
        if metric.status == "not_scored":
            assert metric.points_lost == 0.0
            assert metric.reason
        lost += metric.points_lost
    assert result.score == pytest.approx(max(0.0, 100.0 - lost))
    for finding in result.findings:
        assert 0.0 < finding.confidence <= 1.0
        assert finding.evidence
    assert result.energy_penalty_pct is None or (
        math.isfinite(result.energy_penalty_pct) and result.energy_penalty_pct >= 0.0
    )


def test_an_ice_machine_is_not_judged_on_a_box_temperature():
    """An ice machine makes ice; its bin is no box held at a set point (common practice),
    so a bin temperature is neither scored nor targeted, and says why; its cycle and
    electrics still are."""
    unit = UnitDesign("R-404A", "ice_machine", design_box_temp_c=-1.0, nameplate_volts=230.0)
    result = diagnose(unit, Reading(box_temp_c=6.0, supply_volts=(228.0,)))
    box = _metrics(result)["box_temp"]
    assert box.status == "not_scored"
    assert "ice machine" in box.reason
    assert "box_temp" not in {t.name for t in result.targets}
    assert _metrics(result)["supply_voltage"].status == "ok"
