"""The refrigerant catalogue: designation, composition, safety class, GWP, CoolProp model.

Compositions (mass fractions) and safety classes follow ANSI/ASHRAE Standard 34; the
predefined-mixture table shipped with CoolProp agrees. A blend's GWP is the sum of each
constituent's GWP times its nominal mass fraction (40 CFR 84.64(b)), with constituent values
from IPCC AR4 (100-year), the exchange values of the AIM Act.
"""

from __future__ import annotations

from dataclasses import dataclass
from enum import StrEnum
from functools import cache
from typing import TYPE_CHECKING

if TYPE_CHECKING:
    from CoolProp.CoolProp import AbstractState


class Kind(StrEnum):
    PURE = "pure"
    AZEOTROPE = "azeotrope"
    ZEOTROPE = "zeotrope"


class UnknownRefrigerant(KeyError):
    """Raised for a designation the catalogue does not hold."""

    def __str__(self) -> str:
        return f"unknown refrigerant {self.args[0]!r}; known: {', '.join(sorted(CATALOGUE))}"


#: Constituent GWP values, IPCC AR4 100-year (AIM Act exchange values, 40 CFR 84 Appendix A).
#: R-1234yf, R-1234ze(E), R-600a and R-290 are the AR4-basis values used in EPA tables (from
#: memory); R-717 has no direct radiative forcing.
CONSTITUENT_GWP_AR4: dict[str, float] = {
    "R-22": 1810,
    "R-32": 675,
    "R-125": 3500,
    "R-134a": 1430,
    "R-143a": 4470,
    "R-744": 1,
    "R-1234yf": 4,
    "R-1234ze(E)": 6,
    "R-600a": 3,
    "R-290": 3,
    "R-717": 0,
}

#: CoolProp fluid names for the constituents (used to build HEOS mixtures).
COOLPROP_FLUID: dict[str, str] = {
    "R-22": "R22",
    "R-32": "R32",
    "R-125": "R125",
    "R-134a": "R134a",
    "R-143a": "R143a",
    "R-744": "CarbonDioxide",
    "R-1234yf": "R1234yf",
    "R-1234ze(E)": "R1234ze(E)",
    "R-600a": "IsoButane",
    "R-290": "Propane",
    "R-717": "Ammonia",
}


@dataclass(frozen=True)
class Refrigerant:
    """One refrigerant as the trade names it, and how the property library models it.

    ``coolprop_name`` is set for pure fluids and for the pseudo-pure blends CoolProp ships
    (R-404A, R-407C, R-410A, R-507A); every other blend is a HEOS mixture built from
    ``composition`` (mass fractions by constituent designation).
    """

    designation: str
    kind: Kind
    composition: tuple[tuple[str, float], ...]
    safety_class: str
    coolprop_name: str | None = None

    @property
    def gwp_ar4(self) -> float:
        """Mass-weighted GWP of the constituents (40 CFR 84.64(b))."""
        return round(sum(CONSTITUENT_GWP_AR4[c] * w for c, w in self.composition), 0)

    @property
    def is_blend(self) -> bool:
        return self.kind is not Kind.PURE

    @property
    def flammable(self) -> bool:
        """A2L, A2, A3, B2L... : anything past class 1 burns."""
        return not self.safety_class.endswith("1")

    @property
    def is_coolprop_mixture(self) -> bool:
        """True for a blend CoolProp has no pseudo-pure fluid for (modelled as a HEOS mixture)."""
        return self.coolprop_name is None

    @property
    def mole_fractions(self) -> tuple[float, ...]:
        """Mole fractions of ``composition``: x_i = (w_i / M_i) / sum_j (w_j / M_j).

        Molar masses are CoolProp's; the result matches the predefined ``.mix`` files shipped
        with CoolProp 8.0.0 for every blend in the catalogue.
        """
        moles = [w / _molar_mass(COOLPROP_FLUID[c]) for c, w in self.composition]
        total = sum(moles)
        return tuple(n / total for n in moles)

    def coolprop_state(self) -> AbstractState:
        """A fresh CoolProp ``AbstractState`` (HEOS backend) modelling this refrigerant.

        Pure fluids and CoolProp's pseudo-pure blends by name; any other blend as a HEOS
        mixture of its constituents at ``mole_fractions``. CoolProp raises ValueError if a
        binary pair lacks interaction parameters.
        """
        from CoolProp.CoolProp import AbstractState

        if self.coolprop_name is not None:
            return AbstractState("HEOS", self.coolprop_name)
        state = AbstractState("HEOS", "&".join(COOLPROP_FLUID[c] for c, _ in self.composition))
        state.set_mole_fractions(list(self.mole_fractions))
        return state


@cache
def _molar_mass(coolprop_fluid: str) -> float:
    """kg/mol, from CoolProp."""
    from CoolProp.CoolProp import AbstractState

    return float(AbstractState("HEOS", coolprop_fluid).molar_mass())


def _pure(designation: str, safety_class: str) -> Refrigerant:
    return Refrigerant(
        designation=designation,
        kind=Kind.PURE,
        composition=((designation, 1.0),),
        safety_class=safety_class,
        coolprop_name=COOLPROP_FLUID[designation],
    )


def _blend(
    designation: str,
    kind: Kind,
    safety_class: str,
    parts: dict[str, float],
    coolprop_name: str | None = None,
) -> Refrigerant:
    total = sum(parts.values())
    return Refrigerant(
        designation=designation,
        kind=kind,
        composition=tuple((c, pct / total) for c, pct in parts.items()),
        safety_class=safety_class,
        coolprop_name=coolprop_name,
    )


_ALL: tuple[Refrigerant, ...] = (
    _pure("R-22", "A1"),
    _pure("R-32", "A2L"),
    _pure("R-134a", "A1"),
    _pure("R-290", "A3"),
    _pure("R-600a", "A3"),
    _pure("R-717", "B2L"),
    _pure("R-744", "A1"),
    _pure("R-1234yf", "A2L"),
    _pure("R-1234ze(E)", "A2L"),
    _blend("R-404A", Kind.ZEOTROPE, "A1", {"R-125": 44, "R-143a": 52, "R-134a": 4}, "R404A"),
    _blend("R-407A", Kind.ZEOTROPE, "A1", {"R-32": 20, "R-125": 40, "R-134a": 40}),
    _blend("R-407C", Kind.ZEOTROPE, "A1", {"R-32": 23, "R-125": 25, "R-134a": 52}, "R407C"),
    _blend("R-410A", Kind.ZEOTROPE, "A1", {"R-32": 50, "R-125": 50}, "R410A"),
    _blend(
        "R-448A",
        Kind.ZEOTROPE,
        "A1",
        {"R-32": 26, "R-125": 26, "R-1234yf": 20, "R-134a": 21, "R-1234ze(E)": 7},
    ),
    _blend(
        "R-449A",
        Kind.ZEOTROPE,
        "A1",
        {"R-32": 24.3, "R-125": 24.7, "R-1234yf": 25.3, "R-134a": 25.7},
    ),
    _blend("R-452A", Kind.ZEOTROPE, "A1", {"R-32": 11, "R-125": 59, "R-1234yf": 30}),
    _blend("R-454B", Kind.ZEOTROPE, "A2L", {"R-32": 68.9, "R-1234yf": 31.1}),
    _blend("R-454C", Kind.ZEOTROPE, "A2L", {"R-32": 21.5, "R-1234yf": 78.5}),
    _blend("R-455A", Kind.ZEOTROPE, "A2L", {"R-744": 3, "R-32": 21.5, "R-1234yf": 75.5}),
    _blend("R-507A", Kind.AZEOTROPE, "A1", {"R-125": 50, "R-143a": 50}, "R507A"),
    _blend("R-513A", Kind.AZEOTROPE, "A1", {"R-1234yf": 56, "R-134a": 44}),
)

CATALOGUE: dict[str, Refrigerant] = {r.designation: r for r in _ALL}


def normalise_designation(text: str) -> str:
    """Accept 'r404a', 'R404A' or 'R-404A'; return the catalogue's spelling."""
    raw = text.strip().upper().replace(" ", "")
    if raw.startswith("R") and not raw.startswith("R-"):
        raw = "R-" + raw[1:]
    for designation in CATALOGUE:
        if designation.upper() == raw:
            return designation
    raise UnknownRefrigerant(text)


def get(designation: str) -> Refrigerant:
    """The catalogue entry for a designation, in any common spelling."""
    return CATALOGUE[normalise_designation(designation)]
