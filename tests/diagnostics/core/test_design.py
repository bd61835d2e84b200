"""A unit's design resolved once: value, ok range and origin of each quantity."""

from __future__ import annotations

import math

import pytest

from diagnostics.core import design
from diagnostics.core.diagnose import diagnose
from diagnostics.core.types import Reading, UnitDesign

F_PER_K = 1.8


def test_it_takes_the_design_split_where_given_and_the_applications_default_elsewhere():
    """A unit's own split is the design value; without one a medium-temperature unit takes
    14 K, the design split of an air-cooled condenser (14-15 K above design dry bulb, Trott
    & Welch 3rd ed. Table 10.2, docs/references.md), and says so; an unknown application falls back
    to the 'other' defaults, not to an error. Tolerance 1e-12 K."""
    resolved = design.resolve(
        [
            UnitDesign("R-404A", "medium_temp", design_condenser_split_k=11.0),
            UnitDesign("R-404A", "medium_temp"),
            UnitDesign("R-404A", "walk_in_greenhouse"),  # type: ignore[arg-type]
        ]
    )
    own, default, unknown = (resolved.condenser_split_k.at(i) for i in range(3))
    assert (own.value, own.origin) == (11.0, "design")
    assert default.value == pytest.approx(14.0, abs=1e-12)
    assert default.origin == "application_default"
    assert unknown.value == pytest.approx(14.0, abs=1e-12)
    assert unknown.origin == "application_default"


def test_its_ranges_are_the_ok_bands_the_diagnosis_judges_against():
    """The range of a resolved split is the band a reading is judged ok in: the same low
    and high the diagnosis shows for the condenser-split target of that unit, on a reading
    whose split is scored. Tolerance 1e-4 K (stored values keep four decimals)."""
    unit = UnitDesign("R-404A", "medium_temp", design_condenser_split_k=11.0, has_receiver=True)
    reading = Reading(entering_air_temp_c=30.0, head_kpa_gauge=1700.0, compressor_running=True)
    shown = {t.name: t for t in diagnose(unit, reading).targets}["condenser_split"]
    resolved = design.resolve_one(unit)["condenser_split_k"]
    assert resolved.value == pytest.approx(shown.value, abs=1e-4)
    assert resolved.low == pytest.approx(shown.low, abs=1e-4)
    assert resolved.high == pytest.approx(shown.high, abs=1e-4)


def test_a_superheat_range_given_in_part_is_as_sure_as_its_defaulted_end():
    """A TXV cooler's superheat range defaults to 6-10 F (common practice, docs/references.md); a
    unit giving only its lower end keeps its own low end, the default high end, and is
    marked as defaulted, not as its own design. Tolerance 1e-9 K."""
    resolved = design.resolve(
        [
            UnitDesign("R-404A", "medium_temp", metering_device="txv"),
            UnitDesign("R-404A", "medium_temp", metering_device="txv", superheat_min_k=3.0),
            UnitDesign(
                "R-404A",
                "medium_temp",
                metering_device="txv",
                superheat_min_k=3.0,
                superheat_max_k=5.0,
            ),
        ]
    )
    default, partial, own = (resolved.superheat_k.at(i) for i in range(3))
    assert default.low == pytest.approx(6.0 / F_PER_K, abs=1e-9)
    assert default.high == pytest.approx(10.0 / F_PER_K, abs=1e-9)
    assert default.origin == "application_default"
    assert (partial.low, partial.origin) == (3.0, "application_default")
    assert partial.high == pytest.approx(10.0 / F_PER_K, abs=1e-9)
    assert (own.low, own.high, own.value, own.origin) == (3.0, 5.0, 4.0, "design")


def test_what_a_unit_has_no_default_for_is_missing():
    """An ice machine has no box held at a set point and the 'other' application no
    default box temperature or TD: those are missing, with no value and no range; a
    unit without a run capacitor rating has no capacitor tolerance either."""
    ice, other = (design.resolve_one(UnitDesign("R-404A", app)) for app in ("ice_machine", "other"))
    for resolved in (ice["box_temp_c"], other["box_temp_c"], other["evap_td_k"]):
        assert resolved == design.ResolvedTarget(None, None, None, "missing")
    assert ice["run_capacitor_tolerance_pct"].origin == "missing"
    rated = design.resolve_one(UnitDesign("R-404A", run_capacitor_uf=45.0))
    tolerance = rated["run_capacitor_tolerance_pct"]
    assert (tolerance.value, tolerance.origin) == (6.0, "application_default")


def test_one_unit_resolves_as_it_does_among_many():
    """``resolve_one`` gives what ``resolve`` gives that unit in a fleet, every quantity."""
    units = [
        UnitDesign("R-448A", "low_temp", has_receiver=False, head_pressure_control="flooding"),
        UnitDesign("R-290", "reach_in", design_box_temp_c=4.0, run_capacitor_uf=10.0),
    ]
    fleet = design.resolve(units)
    for i, unit in enumerate(units):
        alone = design.resolve_one(unit)
        assert alone.keys() == set(design.RESOLVED)
        for name, target in alone.items():
            among = fleet.unit(i)[name]
            assert target.origin == among.origin
            for a, b in ((target.value, among.value), (target.low, among.low)):
                assert (a is None and b is None) or math.isclose(a, b)
