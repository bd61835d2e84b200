"""The units a report is shown in (the contractor's setting), converted by the core only.

Stored values are SI; every conversion goes through ``diagnostics.core.units`` so a report
and the API can never disagree on a number. Currents, voltages and microfarads are shown as
stored.
"""

from __future__ import annotations

from dataclasses import dataclass

from django.conf import settings

from diagnostics.core import units as core_units

#: Unit names understood by ``diagnostics.core.units``, per display system.
SYSTEMS: dict[str, dict[str, str]] = {
    "us": {"temperature": "F", "temperature_difference": "F", "pressure": "psig", "mass": "lb"},
    "si": {"temperature": "C", "temperature_difference": "K", "pressure": "kPa", "mass": "kg"},
}

#: How each unit is printed on pages and chart axes.
SYMBOLS: dict[str, str] = {
    "F": "°F",
    "C": "°C",
    "K": "K",
    "psig": "psig",
    "kPa": "kPa gauge",
    "lb": "lb",
    "kg": "kg",
}


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
        # A temperature difference in the US system is in degrees F, in SI in kelvin.
        return SYMBOLS[self.units["temperature_difference"]]

    @property
    def pressure_symbol(self) -> str:
        return SYMBOLS[self.units["pressure"]]

    @property
    def mass_symbol(self) -> str:
        return SYMBOLS[self.units["mass"]]

    def temperature(self, value_c: float | None) -> float | None:
        if value_c is None:
            return None
        return float(core_units.temperature_from_c(value_c, self.units["temperature"]))

    def difference(self, value_k: float | None) -> float | None:
        if value_k is None:
            return None
        return float(
            core_units.temperature_difference_from_k(value_k, self.units["temperature_difference"])
        )

    def pressure(self, value_kpa_gauge: float | None, elevation_m: float) -> float | None:
        if value_kpa_gauge is None:
            return None
        return float(
            core_units.pressure_from_kpa_gauge(value_kpa_gauge, self.units["pressure"], elevation_m)
        )

    def mass(self, value_kg: float | None) -> float | None:
        if value_kg is None:
            return None
        return float(core_units.mass_from_kg(value_kg, self.units["mass"]))


def display_for(system: str | None = None) -> Display:
    """The display for ``system``, else the contractor's setting (US customary by default)."""
    chosen = system or getattr(settings, "RIMEWATCH_DISPLAY_UNITS", "us")
    return Display(chosen if chosen in SYSTEMS else "us")
