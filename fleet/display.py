"""The units people read: the contractor's display system, and SI values converted to it.

Stored values are SI. The API (``?units=``), the office pages and the monthly reports all
take the display system and every conversion from here, and this module converts only
through ``diagnostics.core.units``, so the three can never disagree on a number. Currents,
voltages and microfarads are shown as stored.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Literal

from django.conf import settings

from diagnostics.core import units as core_units
from diagnostics.core import wording

Quantity = Literal["temperature", "temperature_difference", "pressure", "mass"]

#: The units of each display system, as ``diagnostics.core.units`` names them. Pressures
#: are gauge readings, as a technician reads them; a temperature difference in the US
#: system is in degrees F, in SI in kelvin.
SYSTEMS: dict[str, dict[str, str]] = {
    "us": {"temperature": "F", "temperature_difference": "F", "pressure": "psig", "mass": "lb"},
    "si": {"temperature": "C", "temperature_difference": "K", "pressure": "kPa", "mass": "kg"},
}

#: How each unit is printed on pages, report pages and chart axes (one table with the
#: sentences the core writes in a reader's units).
SYMBOLS = wording.SYMBOLS


def to_si(value: float, quantity: Quantity | None, unit: str, elevation_m: float = 0.0) -> float:
    """A value in ``unit`` as the SI the records store (kPa gauge at the site)."""
    if quantity is None:
        return value
    if quantity == "temperature":
        return core_units.temperature_to_c(value, unit)
    if quantity == "temperature_difference":
        return core_units.temperature_difference_to_k(value, unit)
    if quantity == "pressure":
        return core_units.pressure_to_kpa_gauge(value, unit, elevation_m)
    return core_units.mass_to_kg(value, unit)


def from_si(value: float, quantity: Quantity | None, unit: str, elevation_m: float = 0.0) -> float:
    """A stored SI value in ``unit``."""
    if quantity is None:
        return value
    if quantity == "temperature":
        return core_units.temperature_from_c(value, unit)
    if quantity == "temperature_difference":
        return core_units.temperature_difference_from_k(value, unit)
    if quantity == "pressure":
        return core_units.pressure_from_kpa_gauge(value, unit, elevation_m)
    return core_units.mass_from_kg(value, unit)


@dataclass(frozen=True)
class Display:
    """Converters and labels for one display system ("us" or "si")."""

    system: str

    @property
    def units(self) -> dict[str, str]:
        return SYSTEMS[self.system]

    @property
    def temperature_symbol(self) -> str:
        return SYMBOLS[self.units["temperature"]]

    @property
    def difference_symbol(self) -> str:
        return SYMBOLS[self.units["temperature_difference"]]

    @property
    def pressure_symbol(self) -> str:
        return SYMBOLS[self.units["pressure"]]

    @property
    def mass_symbol(self) -> str:
        return SYMBOLS[self.units["mass"]]

    def _shown(
        self, value: float | None, quantity: Quantity, elevation_m: float = 0.0
    ) -> float | None:
        if value is None:
            return None
        return float(from_si(value, quantity, self.units[quantity], elevation_m))

    def temperature(self, value_c: float | None) -> float | None:
        return self._shown(value_c, "temperature")

    def difference(self, value_k: float | None) -> float | None:
        return self._shown(value_k, "temperature_difference")

    def pressure(self, value_kpa_gauge: float | None, elevation_m: float) -> float | None:
        return self._shown(value_kpa_gauge, "pressure", elevation_m)

    def mass(self, value_kg: float | None) -> float | None:
        return self._shown(value_kg, "mass")


def display_for(system: str | None = None) -> Display:
    """The display for ``system``, else the contractor's setting (US customary by default)."""
    chosen = system or getattr(settings, "RIMEWATCH_DISPLAY_UNITS", "us")
    return Display(chosen if chosen in SYSTEMS else "us")
