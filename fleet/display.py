"""The units people read: the contractor's display system, and SI values converted to it.

Stored values are SI. The API (``?units=``), the office pages and the monthly reports all
take the display system and every conversion from here, and this module converts only
through ``diagnostics.core.units``, so the three can never disagree on a number. Currents,
voltages and microfarads are shown as stored.
"""

from __future__ import annotations

import datetime as dt
from dataclasses import dataclass
from typing import Literal, overload

from django.conf import settings
from django.template import defaultfilters
from django.utils import timezone

from diagnostics.core import units as core_units
from diagnostics.core import wording
from fleet.limits import SERVICE_ERA

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

    # A number gives a number and None gives None: a page that has checked for None gets a
    # float back, a report passing a reading that may be missing gets either.
    @overload
    def _shown(self, value: float, quantity: Quantity, elevation_m: float = 0.0) -> float: ...
    @overload
    def _shown(
        self, value: float | None, quantity: Quantity, elevation_m: float = 0.0
    ) -> float | None: ...
    def _shown(
        self, value: float | None, quantity: Quantity, elevation_m: float = 0.0
    ) -> float | None:
        if value is None:
            return None
        return float(from_si(value, quantity, self.units[quantity], elevation_m))

    @overload
    def temperature(self, value_c: float) -> float: ...
    @overload
    def temperature(self, value_c: float | None) -> float | None: ...
    def temperature(self, value_c: float | None) -> float | None:
        return self._shown(value_c, "temperature")

    @overload
    def difference(self, value_k: float) -> float: ...
    @overload
    def difference(self, value_k: float | None) -> float | None: ...
    def difference(self, value_k: float | None) -> float | None:
        return self._shown(value_k, "temperature_difference")

    @overload
    def pressure(self, value_kpa_gauge: float, elevation_m: float) -> float: ...
    @overload
    def pressure(self, value_kpa_gauge: float | None, elevation_m: float) -> float | None: ...
    def pressure(self, value_kpa_gauge: float | None, elevation_m: float) -> float | None:
        return self._shown(value_kpa_gauge, "pressure", elevation_m)

    @overload
    def mass(self, value_kg: float) -> float: ...
    @overload
    def mass(self, value_kg: float | None) -> float | None: ...
    def mass(self, value_kg: float | None) -> float | None:
        return self._shown(value_kg, "mass")


def display_for(system: str | None = None) -> Display:
    """The display for ``system``, else the contractor's setting (US customary by default)."""
    chosen = system or getattr(settings, "RIMEWATCH_DISPLAY_UNITS", "us")
    return Display(chosen if chosen in SYSTEMS else "us")


def stored_moment(moment: dt.datetime) -> str:
    """A stored time as written, in UTC: how a page shows a time no wall clock can show."""
    return moment.astimezone(dt.UTC).isoformat(" ", "minutes").replace("+00:00", " UTC")


def shown_moment(value: dt.date | dt.datetime | None, date_format: str | None = None) -> str:
    """Django's ``date`` filter for pages and reports, but a stored time outside
    ``SERVICE_ERA`` (written straight into the database: year 1, or 9999-12-31 23:00 UTC,
    which is past the last day on a Tokyo clock) is shown as stored and marked, where the
    built-in filter's zone conversion would fail the whole page."""
    if isinstance(value, dt.datetime) and value not in SERVICE_ERA:
        return f"{stored_moment(value)} (date out of range)"
    if isinstance(value, dt.datetime):
        value = timezone.localtime(value)
    return str(defaultfilters.date(value, date_format))
