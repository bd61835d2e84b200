"""The visit diagnosis end to end: derived values, what is not scored, and the batch path."""

from __future__ import annotations

import dataclasses
import itertools
import json
import math

import numpy as np
import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from diagnostics.core import findings, saturation
from diagnostics.core.diagnose import (
    ALGORITHM_VERSION,
    ReadingColumns,
    UnitColumns,
    details,
    diagnose,
    diagnose_batch,
    diagnose_row,
    read_details,
    row_diagnosis,
)
from diagnostics.core.encode import documents
from diagnostics.core.targets import f_to_c
from diagnostics.core.types import Reading, UnitDesign

ATM = 101.325
R404A_MT = UnitDesign(
    "R-404A",
    "medium_temp",
    metering_device="txv",
    has_receiver=False,
    rla_a=10.0,
    lra_a=60.0,
    nameplate_volts=230.0,
    phase=1,
    run_capacitor_uf=45.0,
    start_capacitor_min_uf=88.0,
    start_capacitor_max_uf=108.0,
    high_pressure_cutout_kpa_gauge=2800.0,
)
FULL = Reading(
    box_temp_c=2.0,
    entering_air_temp_c=24.0,
    suction_kpa_gauge=330.0,
    suction_line_temp_c=0.0,
    head_kpa_gauge=1550.0,
    liquid_line_temp_c=33.0,
    discharge_line_temp_c=85.0,
    compressor_amps=(8.5,),
    supply_volts=(228.0,),
    run_capacitor_uf=44.0,
    start_capacitor_uf=95.0,
    compressor_running=True,
    condenser_fan_running=True,
    evaporator_fans_running=True,
    coil_iced=False,
    sight_glass="clear",
)


def _metrics(result) -> dict:
    return {m.name: m for m in result.metrics}


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


def test_head_pressure_control_excuses_a_high_split_in_cold_weather():
    """Common practice (docs/references.md §6): head-pressure control holds condensing up in cold
    weather, so a big split at 0 C entering air with condensing near 35 C is not scored; the
    same split at 30 C entering air is a fault."""
    curve = saturation.table("R-404A")
    cold_head = float(curve.dew_pressure_kpa_abs(35.0)) - ATM
    cold = diagnose(
        R404A_MT, dataclasses.replace(FULL, entering_air_temp_c=0.0, head_kpa_gauge=cold_head)
    )
    hot_head = float(curve.dew_pressure_kpa_abs(65.0)) - ATM
    hot = diagnose(
        R404A_MT, dataclasses.replace(FULL, entering_air_temp_c=30.0, head_kpa_gauge=hot_head)
    )
    assert _metrics(cold)["condenser_split"].status == "not_scored"
    assert "head-pressure control" in _metrics(cold)["condenser_split"].reason
    assert _metrics(hot)["condenser_split"].status == "fault"


def _at_condensing(unit, air_f: float, condensing_f: float):
    """FULL with the given air and condensing (dew) temperatures, 5 K superheat and 8 F
    subcooling (inside their ranges), so only the condenser can be judged off."""
    curve = saturation.table("R-404A")
    p_h = float(curve.dew_pressure_kpa_abs(f_to_c(condensing_f)))
    reading = dataclasses.replace(
        FULL,
        entering_air_temp_c=f_to_c(air_f),
        head_kpa_gauge=p_h - ATM,
        liquid_line_temp_c=float(curve.bubble_temp_c(p_h)) - 8 / 1.8,
        suction_line_temp_c=float(curve.dew_temp_c(FULL.suction_kpa_gauge + ATM)) + 5.0,
    )
    return diagnose(unit, reading)


def test_a_head_held_at_the_units_own_set_point_is_not_a_condenser_fault():
    """Issue seen in the field: a unit whose control holds 90 F got condenser findings in
    spring and autumn. With its flooding control at 90 F (design data), a 55 F spring day
    condensing at 91 F is the control's doing: the split is not judged, no finding, no
    energy money. Common practice (docs/references.md §6): score the split only above the set
    point."""
    unit = dataclasses.replace(
        R404A_MT, head_pressure_control="flooding", head_pressure_setpoint_c=f_to_c(90.0)
    )
    result = _at_condensing(unit, 55.0, 91.0)
    split = _metrics(result)["condenser_split"]
    assert split.status == "not_scored"
    assert "head-pressure control" in split.reason
    assert not {"condenser_heat_rejection", "overcharge"} & {f.code for f in result.findings}
    assert result.energy_penalty_pct is None


def test_a_unit_without_head_pressure_control_has_its_dirty_condenser_found_in_cold_air():
    """Issue seen in the field: a fouled condenser found at 57 F entering air on a unit with
    no head-pressure control scored 95 with no finding (an assumed control excused it). With
    no control nothing holds the head: 57 F air condensing at 100 F is a 43 F split against
    a 25 F design (Trott & Welch's 14 K), a fault with the condenser named and energy charged
    (docs/references.md §7 cycle)."""
    unit = dataclasses.replace(R404A_MT, head_pressure_control="none")
    result = _at_condensing(unit, 57.0, 100.0)
    assert _metrics(result)["condenser_split"].status == "fault"
    assert "condenser_heat_rejection" in {f.code for f in result.findings}
    assert result.energy_penalty_pct > 0.0
    # the same reading on a unit with a control holding 100 F is excused, held in its band
    held = dataclasses.replace(
        unit, head_pressure_control="fan_cycling", head_pressure_setpoint_c=f_to_c(100.0)
    )
    assert _metrics(_at_condensing(held, 57.0, 100.0))["condenser_split"].status == "not_scored"


def test_a_controlled_head_far_above_its_band_is_the_condensers_own_doing():
    """A control holds the head at its set point, never far above it: at 57 F air a unit held
    at 90 F by a flooding valve that condenses at 110 F has a condenser problem."""
    unit = dataclasses.replace(
        R404A_MT, head_pressure_control="flooding", head_pressure_setpoint_c=f_to_c(90.0)
    )
    result = _at_condensing(unit, 57.0, 110.0)
    assert _metrics(result)["condenser_split"].status == "fault"
    assert "condenser_heat_rejection" in {f.code for f in result.findings}


def test_the_energy_penalty_follows_the_head():
    """A head above target costs energy (docs/references.md §7 method): the penalty is positive for
    a high head, larger for a higher one, and zero on a head below target; a head inside its
    ok band is on target and costs nothing (energy money only where a unit is off it)."""
    curve = saturation.table("R-404A")
    penalties = []
    for condensing in (30.0, 45.0, 55.0):
        head = float(curve.dew_pressure_kpa_abs(condensing)) - ATM
        penalties.append(
            diagnose(R404A_MT, dataclasses.replace(FULL, head_kpa_gauge=head)).energy_penalty_pct
        )
    assert penalties[0] == 0.0
    assert 0.0 < penalties[1] < penalties[2]
    on_target = float(curve.dew_pressure_kpa_abs(24.0 + 14.0 + 2.0)) - ATM
    assert (
        diagnose(R404A_MT, dataclasses.replace(FULL, head_kpa_gauge=on_target)).energy_penalty_pct
        == 0.0
    )


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


def test_one_post_and_the_batch_share_one_implementation():
    """diagnose(unit, reading) equals row i of diagnose_batch over many rows (same scores,
    metrics, findings), including with readings pointing at shared units by index."""
    units = [R404A_MT, UnitDesign("R-448A", "low_temp", has_receiver=True)]
    readings = [
        FULL,
        dataclasses.replace(FULL, suction_line_temp_c=12.0, sight_glass="bubbles"),
        Reading(box_temp_c=-20.0, suction_kpa_gauge=80.0, suction_line_temp_c=-30.0),
        Reading(),
    ]
    index = np.array([0, 0, 1, 1])
    batch = diagnose_batch(
        UnitColumns.from_designs(units), ReadingColumns.from_readings(readings), 0.0, index
    )
    assert len(batch) == 4
    for i, r in enumerate(readings):
        single = diagnose(units[index[i]], r)
        assert row_diagnosis(batch, i) == single
        if single.score is None:
            assert np.isnan(batch.score[i])
        else:
            assert batch.score[i] == single.score


def test_the_batch_reports_columns_and_finding_bits():
    """The columnar result carries one score per row, per-metric status codes and a finding
    bit mask whose set bits are the findings of the row."""
    readings = [FULL, dataclasses.replace(FULL, compressor_running=False, compressor_amps=(57.0,))]
    batch = diagnose_batch([R404A_MT, R404A_MT], ReadingColumns.from_readings(readings))
    assert batch.score.shape == (2,)
    assert batch.status_names("standstill_amps").tolist()[1] == "fault"
    bit = batch.finding_codes.index("compressor_not_starting")
    assert not batch.finding_mask[0] >> bit & 1
    assert batch.finding_mask[1] >> bit & 1


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


def _varied_inputs():
    """Synthetic rows that fire every finding and hit every special case: a grid around
    FULL on a receiverless R-404A cooler, a compressor stalled at start, a low supply, an
    empty reading, R-744 above its critical point, a water-cooled unit, the R-448A glide
    blend, and a site whose elevation is unusable."""
    r448a = UnitDesign(
        "R-448A",
        "low_temp",
        has_receiver=True,
        rla_a=12.0,
        lra_a=70.0,
        temperature_basis="mid_point",
    )
    r744 = UnitDesign("R-744", "medium_temp", has_receiver=True)
    water = dataclasses.replace(R404A_MT, condenser_type="water")
    units = [R404A_MT, r448a, r744, water]
    readings, index = [], []
    glass = ("clear", "bubbles", "none")
    grid = itertools.product((250.0, 330.0, 500.0), (-8.0, 0.0, 12.0), (900.0, 1550.0, 2300.0))
    for n, (suction, suction_line, head) in enumerate(grid):
        for liquid in (20.0, 33.0, 45.0):
            readings.append(
                dataclasses.replace(
                    FULL,
                    box_temp_c=8.0 if n % 2 else -2.0,
                    suction_kpa_gauge=suction,
                    suction_line_temp_c=suction_line,
                    head_kpa_gauge=head,
                    liquid_line_temp_c=liquid,
                    sight_glass=glass[n % 3],
                    compressor_amps=((4.0, 8.5, 11.0)[n % 3],),
                )
            )
            index.append(0)
    readings += [
        dataclasses.replace(FULL, compressor_running=False, compressor_amps=(57.0,)),
        dataclasses.replace(FULL, run_capacitor_uf=38.0),
        dataclasses.replace(FULL, supply_volts=(190.0,)),
        dataclasses.replace(FULL, coil_iced=True, evaporator_fans_running=False),
        Reading(),
        Reading(box_temp_c=-20.0, suction_kpa_gauge=80.0, suction_line_temp_c=-30.0),
        dataclasses.replace(FULL, box_temp_c=-22.0, suction_kpa_gauge=120.0, head_kpa_gauge=1500.0),
        Reading(
            entering_air_temp_c=32.0,
            suction_kpa_gauge=2900.0,
            suction_line_temp_c=-3.0,
            head_kpa_gauge=9000.0,
            liquid_line_temp_c=35.0,
        ),
        Reading(entering_air_temp_c=20.0, suction_kpa_gauge=2900.0, head_kpa_gauge=5500.0),
        FULL,
        dataclasses.replace(FULL, supply_volts=(), compressor_amps=()),
        FULL,
    ]
    index += [0, 0, 0, 0, 0, 1, 1, 2, 2, 3, 3, 0]
    elevation = np.zeros(len(readings))
    elevation[-1] = np.nan  # an unusable site elevation: no gauge pressure can be made absolute
    return units, readings, index, elevation


def _varied_batch():
    units, readings, index, elevation = _varied_inputs()
    return diagnose_batch(
        UnitColumns.from_designs(units),
        ReadingColumns.from_readings(readings),
        elevation,
        np.array(index),
    )


def test_the_stored_form_of_a_batch_equals_each_row_diagnosed_alone():
    """The stored documents (what ``manage.py rescore`` stores, built on columns) hold for
    every row exactly what diagnosing that reading alone stores, and read back to the same
    details,
    on a batch where every finding fires, fields are missing, R-744 runs above its critical
    point, a condenser is water-cooled, a blend glides and one site's elevation is unusable;
    the details are plain JSON (no NaN, no tuples)."""
    units, readings, index, elevation = _varied_inputs()
    batch = _varied_batch()
    rows = details(batch)
    fired = {f["code"] for row in rows for f in row["findings"]}
    assert fired == {rule.code for rule in findings.RULES if rule.triggers}
    named = {a for row in rows for f in row["findings"] for a in f["alternatives"]}
    assert "non_condensables" in named
    assert batch.derived["transcritical"].any()
    assert any(m["reason"].startswith("water-cooled") for row in rows for m in row["metrics"])
    assert any("mid-point" in t["source"] for row in rows for t in row["targets"])
    assert json.loads(json.dumps(rows, allow_nan=False)) == rows
    assert len(rows) == len(batch)
    for i, (reading, u, z) in enumerate(zip(readings, index, elevation, strict=True)):
        alone = diagnose_batch([units[u]], ReadingColumns.from_readings([reading]), z)
        assert documents(alone) == documents(batch)[i : i + 1], i
        assert details(alone)[0] == rows[i], i


def test_a_document_of_no_known_version_reads_as_no_details():
    """Nothing stored (an empty document), a document of a version this code does not know
    or no document at all reads as empty details rather than as numbers in the wrong
    places; a current one reads with its metrics and cautions."""
    row = diagnose_row(R404A_MT, FULL)
    unknown = {**row["document"], "document_version": 999}
    good, *blank = read_details([row["document"], {}, unknown, None])
    assert good["metrics"]
    assert good["cautions"]
    for details_read in blank:
        assert details_read == {
            "targets": [],
            "metrics": [],
            "findings": [],
            "cautions": [],
            "glide_choice": "",
        }


def test_a_site_without_a_usable_elevation_keeps_its_temperature_targets_only():
    """With no standard atmosphere for the site, the evaporating and condensing temperature
    targets stand but no gauge-pressure target is stored (there is no absolute to subtract
    from, and a NaN would not be valid JSON)."""
    row = details(_varied_batch())[-1]
    names = {t["name"] for t in row["targets"]}
    assert {"evaporating_temp", "condensing_temp"} <= names
    assert not names & {"suction_pressure", "condensing_pressure"}


def test_the_one_post_path_stores_what_the_dataclass_path_gives():
    """``diagnose_row`` (what a single POST stores) holds the score, the derived values and,
    read back, the very targets, metrics, findings and cautions ``diagnose`` gives, for the
    special cases of the varied batch: a stalled start, a low supply, an iced coil, an empty
    reading, R-448A glide, R-744 above its critical point and a water-cooled unit."""
    units, readings, index, _ = _varied_inputs()
    special = list(zip(readings, index, strict=True))[-12:-1]
    assert len(special) == 11
    for reading, u in special:
        row = diagnose_row(units[u], reading)
        expected = diagnose(units[u], reading)
        assert row["algorithm_version"] == ALGORITHM_VERSION
        assert row["score"] == expected.score
        judged = {m.name for m in expected.metrics if m.status != "not_scored"}
        for name, value in (
            ("superheat", expected.derived.superheat_k),
            ("condenser_split", expected.derived.condenser_split_k),
        ):
            assert row[f"{name}_k"] == (value if name in judged else None)
        (details_read,) = read_details([row["document"]])
        for name in ("targets", "metrics", "cautions"):
            assert details_read[name] == [dataclasses.asdict(x) for x in getattr(expected, name)]
        assert details_read["findings"] == [
            {
                **dataclasses.asdict(f),
                "evidence": list(f.evidence),
                "alternatives": list(f.alternatives),
            }
            for f in expected.findings
        ]


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
