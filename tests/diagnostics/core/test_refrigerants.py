"""The refrigerant catalogue: compositions, classes, GWP and how CoolProp models each entry."""

from __future__ import annotations

import CoolProp.CoolProp as CP
import pytest

from diagnostics.core import refrigerants as rf

#: ANSI/ASHRAE Standard 34 (mass %, safety class) and the GWP by the rule of 40 CFR 84.64(b)
#: with IPCC AR4 constituent values, as tabulated in docs/references.md §2.
BLENDS = {
    "R-404A": ({"R-125": 44, "R-143a": 52, "R-134a": 4}, "A1", 3922),
    "R-407A": ({"R-32": 20, "R-125": 40, "R-134a": 40}, "A1", 2107),
    "R-407C": ({"R-32": 23, "R-125": 25, "R-134a": 52}, "A1", 1774),
    "R-410A": ({"R-32": 50, "R-125": 50}, "A1", 2088),
    "R-448A": (
        {"R-32": 26, "R-125": 26, "R-1234yf": 20, "R-134a": 21, "R-1234ze(E)": 7},
        "A1",
        1387,
    ),
    "R-449A": ({"R-32": 24.3, "R-125": 24.7, "R-1234yf": 25.3, "R-134a": 25.7}, "A1", 1397),
    "R-452A": ({"R-32": 11, "R-125": 59, "R-1234yf": 30}, "A1", 2140),
    "R-454B": ({"R-32": 68.9, "R-1234yf": 31.1}, "A2L", 466),
    "R-454C": ({"R-32": 21.5, "R-1234yf": 78.5}, "A2L", 148),
    "R-455A": ({"R-744": 3, "R-32": 21.5, "R-1234yf": 75.5}, "A2L", 148),
    "R-507A": ({"R-125": 50, "R-143a": 50}, "A1", 3985),
    "R-513A": ({"R-1234yf": 56, "R-134a": 44}, "A1", 631),
}
#: Single fluids: ASHRAE 34 class and AR4 GWP (docs/references.md §2).
SINGLES = {
    "R-22": ("A1", 1810), "R-32": ("A2L", 675), "R-134a": ("A1", 1430), "R-290": ("A3", 3),
    "R-600a": ("A3", 3), "R-717": ("B2L", 0), "R-744": ("A1", 1), "R-1234yf": ("A2L", 4),
    "R-1234ze(E)": ("A2L", 6),
}  # fmt: skip


def test_it_holds_every_refrigerant_of_the_references_and_nothing_else():
    """The catalogue is exactly the blends and single fluids of docs/references.md §2."""
    assert set(rf.CATALOGUE) == set(BLENDS) | set(SINGLES)


@pytest.mark.parametrize("designation", sorted(BLENDS))
def test_it_gives_blends_their_ashrae_composition_class_and_gwp(designation):
    """Composition and class per ASHRAE 34; GWP = sum of constituent AR4 GWP x mass fraction
    (40 CFR 84.64(b)), matching docs/references.md §2 to the unit."""
    parts, safety_class, gwp = BLENDS[designation]
    blend = rf.get(designation)
    assert dict(blend.composition) == pytest.approx({c: w / 100 for c, w in parts.items()})
    assert blend.safety_class == safety_class
    assert blend.gwp_ar4 == gwp
    assert blend.is_blend


@pytest.mark.parametrize("designation", sorted(SINGLES))
def test_it_gives_single_fluids_their_class_and_gwp(designation):
    """ASHRAE 34 class and IPCC AR4 GWP (docs/references.md §2)."""
    fluid = rf.get(designation)
    assert (fluid.safety_class, fluid.gwp_ar4) == SINGLES[designation]
    assert fluid.composition == ((designation, 1.0),)
    assert not fluid.is_blend


def test_it_knows_which_burn():
    """A2L, A3 and B2L are flammable; A1 is not (ASHRAE 34 classes)."""
    for designation in ("R-454B", "R-290", "R-717"):
        assert rf.get(designation).flammable
    assert not rf.get("R-404A").flammable


@pytest.mark.parametrize("spelling", ["R-404A", "R404A", "r404a", " r-404a "])
def test_it_accepts_the_usual_spellings(spelling):
    """'R404A', 'r404a' and 'R-404A' all name R-404A."""
    assert rf.get(spelling).designation == "R-404A"


def test_it_names_the_known_refrigerants_when_it_does_not_know_one():
    """An unknown designation raises UnknownRefrigerant (a KeyError) listing the known ones."""
    with pytest.raises(
        rf.UnknownRefrigerant, match=r"unknown refrigerant 'R-999'; known: R-1234yf"
    ):
        rf.get("R-999")


@pytest.mark.parametrize(
    ("designation", "coolprop_name"),
    [("R-404A", "R404A"), ("R-407C", "R407C"), ("R-410A", "R410A"), ("R-507A", "R507A")],
)
def test_it_uses_coolprops_pseudo_pure_blends_where_coolprop_has_them(designation, coolprop_name):
    """CoolProp 8.0.0 ships pseudo-pure equations for R-404A, R-407C, R-410A and R-507A
    (Lemmon, Int. J. Thermophys. 24 (2003) 991); the catalogue uses them."""
    blend = rf.get(designation)
    assert blend.coolprop_name == coolprop_name
    assert not blend.is_coolprop_mixture
    assert blend.coolprop_state().name() == coolprop_name


@pytest.mark.parametrize("designation", sorted(d for d in BLENDS if rf.get(d).is_coolprop_mixture))
def test_it_builds_other_blends_as_mixtures_with_coolprops_mole_fractions(designation):
    """Mass fractions become mole fractions x_i = (w_i/M_i) / sum(w_j/M_j); they match the
    predefined mixture files shipped with CoolProp 8.0.0 (``R448A.mix``...) within 1e-7, and
    every binary pair has interaction parameters (CoolProp builds the mixture)."""
    blend = rf.get(designation)
    shipped = CP.AbstractState("HEOS", designation.replace("-", "") + ".mix")
    state = blend.coolprop_state()
    assert state.fluid_names() == shipped.fluid_names()
    assert list(blend.mole_fractions) == pytest.approx(shipped.get_mole_fractions(), abs=1e-7)
    assert sum(blend.mole_fractions) == pytest.approx(1.0, abs=1e-15)


#: CAS Registry numbers of the single fluids.
CAS = {
    "R-22": "75-45-6", "R-32": "75-10-5", "R-134a": "811-97-2", "R-290": "74-98-6",
    "R-600a": "75-28-5", "R-717": "7664-41-7", "R-744": "124-38-9", "R-1234yf": "754-12-1",
    "R-1234ze(E)": "29118-24-9",
}  # fmt: skip


@pytest.mark.parametrize("designation", sorted(SINGLES))
def test_it_models_each_single_fluid_as_the_right_coolprop_fluid(designation):
    """The CoolProp fluid behind each single refrigerant has that refrigerant's CAS number
    (R-744 is carbon dioxide, 124-38-9; R-717 ammonia, 7664-41-7...)."""
    state = rf.get(designation).coolprop_state()
    assert state.fluid_param_string("CAS") == CAS[designation]
