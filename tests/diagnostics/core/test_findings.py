"""The troubleshooting patterns as rules: each fires on its pattern and not on a near miss.

Patterns from the docs/references.md §6 table (TXV systems; common practice with the
textbook and trade-press sources cited there). The readings are synthetic: an R-404A
medium-temperature TXV unit without a receiver, built so the chosen TD, split, superheat
and subcooling come out exactly (pressures from the saturation tables).
"""

from __future__ import annotations

import dataclasses

import numpy as np
import pytest

from diagnostics.core import findings, saturation
from diagnostics.core.diagnose import diagnose
from diagnostics.core.types import Reading, UnitDesign

ATM = 101.325
BOX_C = 1.7
AIR_C = 24.0
UNIT = UnitDesign(
    "R-404A",
    "medium_temp",
    metering_device="txv",
    has_receiver=False,
    design_evap_td_k=10 / 1.8,
    design_condenser_split_k=14.0,
    rla_a=10.0,
    lra_a=60.0,
    nameplate_volts=230.0,
    phase=1,
)
THREE_PHASE = dataclasses.replace(UNIT, nameplate_volts=460.0, phase=3)


def reading(
    td: float = 10 / 1.8,
    split: float = 14.0,
    superheat: float = 5.0,
    subcooling: float = 4.4,
    amps: tuple[float, ...] = (8.0,),
    volts: tuple[float, ...] = (230.0,),
    **extra: object,
) -> Reading:
    """A running R-404A reading with the given TD, split (both on the dew point, the unit's
    basis), superheat and subcooling."""
    curve = saturation.table("R-404A")
    p_s, p_h = curve.dew_pressure_kpa_abs(np.array([BOX_C - td, AIR_C + split]))
    values: dict[str, object] = {
        "box_temp_c": BOX_C,
        "entering_air_temp_c": AIR_C,
        "suction_kpa_gauge": float(p_s) - ATM,
        "suction_line_temp_c": float(curve.dew_temp_c(p_s)) + superheat,
        "head_kpa_gauge": float(p_h) - ATM,
        "liquid_line_temp_c": float(curve.bubble_temp_c(p_h)) - subcooling,
        "discharge_line_temp_c": 80.0,
        "compressor_amps": amps,
        "supply_volts": volts,
        "compressor_running": True,
    }
    values.update(extra)
    return Reading(**values)  # type: ignore[arg-type]


def codes(unit: UnitDesign, r: Reading) -> set[str]:
    return {f.code for f in diagnose(unit, r).findings}


def test_a_healthy_reading_has_no_findings_and_a_full_score():
    """Everything inside its band: no finding, score 100, every metric with inputs ok."""
    result = diagnose(UNIT, reading())
    assert result.findings == ()
    assert result.score == 100.0
    scored = [m for m in result.metrics if m.status != "not_scored"]
    assert len(scored) >= 8
    assert all(m.status == "ok" for m in scored)


CASES = [
    # code, triggering reading, near miss (same pattern broken by one contradicting sign)
    (
        "undercharge",
        dict(td=9.0, split=9.0, superheat=11.0, subcooling=1.0, amps=(4.0,)),
        dict(td=9.0, split=9.0, superheat=11.0, subcooling=4.4, amps=(4.0,)),
    ),
    (
        "overcharge",
        dict(split=18.5, subcooling=9.0, amps=(11.0,)),
        dict(split=18.5, subcooling=9.0, superheat=11.0),
    ),
    (
        "liquid_line_restriction",
        dict(td=9.0, split=9.0, superheat=11.0, subcooling=9.0, amps=(4.0,)),
        dict(td=9.0, split=18.5, superheat=11.0, subcooling=9.0),
    ),
    (
        "metering_overfeeding",
        dict(superheat=0.5),
        dict(superheat=0.5, td=9.0),
    ),
    (
        "metering_underfeeding",
        dict(superheat=11.0, sight_glass="clear"),
        dict(superheat=11.0, sight_glass="bubbles"),
    ),
    (
        "low_evaporator_airflow",
        dict(td=10.0, superheat=4.6, split=11.0),
        dict(td=10.0, superheat=11.0),
    ),
    (
        "condenser_heat_rejection",
        dict(split=20.0),
        dict(split=16.0),
    ),
    (
        "weak_compressor",
        dict(td=0.5, split=9.0, amps=(4.0,)),
        dict(td=0.5, split=9.0, amps=(11.0,)),
    ),
    (
        "compressor_not_starting",
        dict(compressor_running=False, amps=(55.0,)),
        dict(compressor_running=True, amps=(9.5,)),
    ),
    (
        "supply_problem",
        dict(volts=(200.0,)),
        dict(volts=(215.0,)),
    ),
]


def test_every_rule_has_a_case():
    """Each finding rule that can fire is exercised below with a triggering and a
    non-triggering reading (the capacitor rule on a unit with a rated capacitor, further
    down); a cause with no triggers is only ever named as an alternative."""
    firing = {rule.code for rule in findings.RULES if rule.triggers}
    assert {case[0] for case in CASES} | {"capacitor_out_of_rating"} == firing


@pytest.mark.parametrize(("code", "firing", "missing"), CASES, ids=[c[0] for c in CASES])
def test_each_rule_fires_on_its_pattern_and_not_on_a_near_miss(code, firing, missing):
    """docs/references.md §6 pattern for the finding: the triggering reading yields it with
    evidence, a confidence in (0, 1) and advice; the near miss (one contradicting sign) does not."""
    fired = {f.code: f for f in diagnose(UNIT, reading(**firing)).findings}
    assert code in fired
    finding = fired[code]
    assert finding.evidence
    assert 0.0 < finding.confidence < 1.0
    assert finding.advice
    assert code not in codes(UNIT, reading(**missing))


def test_a_reported_iced_coil_or_stopped_fan_alone_points_at_airflow():
    """An iced coil or stopped evaporator fans is itself the low-airflow pattern
    (docs/references.md §6), even before the TD shows it; the evidence says what was reported."""
    iced = {f.code: f for f in diagnose(UNIT, reading(coil_iced=True)).findings}
    assert "low_evaporator_airflow" in iced
    assert "evaporator coil reported iced" in iced["low_evaporator_airflow"].evidence
    assert "low_evaporator_airflow" in codes(UNIT, reading(evaporator_fans_running=False))


def test_a_stopped_condenser_fan_points_at_the_condenser():
    """A condenser fan reported off triggers the condenser finding (docs/references.md §6: split up
    sharply); it also rules out non-condensables as the first explanation."""
    found = codes(UNIT, reading(split=20.0, condenser_fan_running=False))
    assert "condenser_heat_rejection" in found
    assert "non_condensables" not in found


def test_three_phase_unbalance_triggers_the_supply_finding():
    """NEMA MG-1 14.36 worked examples (docs/references.md §4): 460/467/450 V (1.96 %) is above the
    1 % design limit and raises the supply finding; 480/476/472 V (0.84 %) does not."""
    unbalanced = reading(volts=(460.0, 467.0, 450.0), amps=(8.0, 8.0, 8.0))
    balanced = reading(volts=(480.0, 476.0, 472.0), amps=(8.0, 8.0, 8.0))
    assert "supply_problem" in codes(THREE_PHASE, unbalanced)
    assert "supply_problem" not in codes(THREE_PHASE, balanced)


def test_supporting_signs_raise_the_confidence():
    """The same rule is more certain with more of its pattern present: undercharge with
    bubbles, low split and low amps beats undercharge from superheat and subcooling alone."""
    bare = diagnose(UNIT, reading(superheat=11.0, subcooling=1.0)).findings
    full = diagnose(
        UNIT,
        reading(
            td=9.0,
            split=9.0,
            superheat=11.0,
            subcooling=1.0,
            amps=(4.0,),
            sight_glass="bubbles",
        ),
    ).findings
    conf = {f.code: f.confidence for f in bare}
    conf_full = {f.code: f.confidence for f in full}
    assert conf_full["undercharge"] > conf["undercharge"]
    assert conf_full["undercharge"] <= findings.MAX_CONFIDENCE


def test_missing_data_neither_triggers_nor_vetoes():
    """A reading with superheat and subcooling only: undercharge still fires (no veto from
    the unmeasured TD), and nothing fires from the fields that were not measured."""
    r = reading(superheat=11.0, subcooling=1.0)
    sparse = Reading(
        suction_kpa_gauge=r.suction_kpa_gauge,
        suction_line_temp_c=r.suction_line_temp_c,
        head_kpa_gauge=r.head_kpa_gauge,
        liquid_line_temp_c=r.liquid_line_temp_c,
    )
    assert codes(UNIT, sparse) == {"undercharge"}


def test_with_a_receiver_low_subcooling_is_not_read_as_charge():
    """With a receiver, subcooling is no charge indicator (docs/references.md §6, common practice):
    a low subcooling with high superheat does not make a short-charge finding there (the sight
    glass tells), while the same reading on a receiverless unit does. A subcooling far above
    a receiver's band with the head not held up says the receiver is full and liquid backs
    into the condenser (common practice): there it counts as on a receiverless unit."""
    short = reading(td=9.0, split=9.0, superheat=11.0, subcooling=0.2)
    with_receiver = dataclasses.replace(UNIT, has_receiver=True)
    assert "undercharge" in codes(UNIT, short)
    assert "undercharge" not in codes(with_receiver, short)
    backed_up = reading(split=18.5, subcooling=9.0)
    assert codes(with_receiver, backed_up) == {"overcharge"}


def test_every_rule_is_complete_data():
    """Rules are data: each has a title, advice and a base confidence below the cap; every
    signal it names exists; a rule with no trigger is named as some rule's alternative, and
    every rule naming alternatives says which check decides."""
    named = {a.code for rule in findings.RULES for a in rule.alternatives}
    for rule in findings.RULES:
        assert rule.title
        assert rule.advice
        assert rule.triggers or rule.code in named
        assert 0.0 < rule.base_confidence < findings.MAX_CONFIDENCE
        for trigger in rule.triggers:
            assert trigger <= set(findings.SIGNALS)
        assert all(a.check for a in rule.alternatives)


def test_a_high_split_names_non_condensables_beside_the_condenser_not_alone():
    """Issue seen in the field: non-condensables was raised as a finding beside every high
    split. Its running symptoms are a dirty condenser's (docs/references.md §6, common practice), so
    a high split gives one finding, the condenser, naming non-condensables as what the
    readings cannot rule out and the standing-pressure check that decides; a condenser fan
    seen stopped settles it (no alternative)."""
    found = diagnose(UNIT, reading(split=20.0)).findings
    assert [f.code for f in found] == ["condenser_heat_rejection"]
    assert found[0].alternatives == ("non_condensables",)
    assert "standing" in found[0].deciding_check
    fan_off = diagnose(UNIT, reading(split=20.0, condenser_fan_running=False)).findings
    assert [f.code for f in fan_off] == ["condenser_heat_rejection"]
    assert fan_off[0].alternatives == ()
    assert fan_off[0].deciding_check == ""


def test_an_overcharged_receiverless_txv_unit_is_not_read_as_overfeeding():
    """Issue seen in the field: an overcharged receiverless TXV unit was read as "metering
    device overfeeding". Overcharge backs liquid into the condenser: high subcooling and a
    high split, with a superheat at or a little under its setting (docs/references.md §6); the
    valve is not at fault, so only the charge is named."""
    found = codes(UNIT, reading(split=19.0, subcooling=9.0, superheat=1.0))
    assert found == {"overcharge"}


def test_a_short_charge_and_a_restriction_are_told_apart_by_subcooling_or_say_they_cannot():
    """Receiverless: a short charge lowers the subcooling, a restriction raises it
    (docs/references.md §6), so each is named alone. With a receiver the subcooling says nothing;
    bubbles and a high superheat then read as a
    short charge that cannot rule out a restriction ahead of the sight glass, and the drier
    check decides."""
    short = diagnose(UNIT, reading(superheat=11.0, subcooling=1.0, sight_glass="bubbles"))
    assert [(f.code, f.alternatives) for f in short.findings] == [("undercharge", ())]
    with_receiver = dataclasses.replace(UNIT, has_receiver=True)
    glass = diagnose(
        with_receiver, reading(td=9.0, superheat=11.0, subcooling=1.0, sight_glass="bubbles")
    ).findings
    assert [(f.code, f.alternatives) for f in glass] == [
        ("undercharge", ("liquid_line_restriction",))
    ]
    assert "filter-drier" in glass[0].deciding_check


@pytest.mark.parametrize(
    ("application", "superheat_f"),
    [("low_temp", 5.0), ("low_temp", 7.0), ("medium_temp", 10.2), ("medium_temp", 11.5)],
)
def test_txv_superheat_within_instrument_error_of_its_band_is_fine(application, superheat_f):
    """Issue seen in the field: a low-temperature TXV unit at 5-7 F superheat was read as
    underfeeding, a TXV cooler at 10.2 F superheat as "watch". The bands are common
    practice (TXV low temp 4-6 F, medium temp 8-10 F, docs/references.md §6) and a reading is off
    them only by more than the instruments' error (2 F, ours): these are ok, no finding."""
    unit = dataclasses.replace(UNIT, application=application, has_receiver=True)
    result = diagnose(unit, reading(superheat=superheat_f / 1.8, sight_glass="clear"))
    superheat = next(m for m in result.metrics if m.name == "superheat")
    assert superheat.status == "ok"
    assert "metering_underfeeding" not in {f.code for f in result.findings}


def test_a_capacitor_outside_its_marked_tolerance_is_named():
    """A run capacitor rated 45 uF +/-6 % passes 42.3-47.7 uF (docs/references.md §4 worked example:
    EIA-456-A / IEC 60252-1); 38 uF is named as a capacitor out of its rating, 44 uF is not,
    and a compressor that will not start names the start problem instead of both."""
    unit = dataclasses.replace(UNIT, run_capacitor_uf=45.0)
    assert codes(unit, reading(run_capacitor_uf=38.0)) == {"capacitor_out_of_rating"}
    assert codes(unit, reading(run_capacitor_uf=44.0)) == set()
    stalled = reading(run_capacitor_uf=38.0, compressor_running=False, amps=(55.0,))
    assert codes(unit, stalled) == {"compressor_not_starting"}


def test_off_cycle_is_not_a_failed_start():
    """A compressor found stopped without a call for cooling is off-cycle: no finding. With
    the control calling and the compressor not running it does not start when called."""
    off = reading(compressor_running=False, call_for_cooling=False, amps=(0.0,))
    assert codes(UNIT, off) == set()
    called = reading(compressor_running=False, call_for_cooling=True, amps=(0.0,))
    assert codes(UNIT, called) == {"compressor_not_starting"}


def test_evidence_is_never_listed_twice():
    """A TD far above its band says it is above its band: the finding lists it once."""
    found = diagnose(UNIT, reading(td=20.0, superheat=4.0)).findings
    airflow = next(f for f in found if f.code == "low_evaporator_airflow")
    td_lines = [e for e in airflow.evidence if e.startswith("evaporator TD")]
    assert len(td_lines) == 1
