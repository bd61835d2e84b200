"""Saturation look-ups for the API and ``manage.py saturation``: one place that turns a
gauge or absolute reading into the core's absolute kPa and asks the saturation tables for
dew and bubble points, and a refrigerant's glide at atmospheric pressure.

Nothing is computed here: the conversion is ``diagnostics.core.units`` (with the standard
atmosphere at the given elevation), the properties are ``diagnostics.core.saturation``.
"""

from __future__ import annotations

import functools
import logging
from dataclasses import dataclass

from diagnostics.core import refrigerants, saturation, units

log = logging.getLogger(__name__)

#: Standard atmosphere at sea level, kPa (U.S. Standard Atmosphere 1976): where a
#: refrigerant's listed glide is read.
ATMOSPHERIC_KPA_ABS = 101.325


class SaturationInputError(ValueError):
    """A request the tables cannot answer; ``field`` names the input at fault."""

    def __init__(self, field: str, message: str) -> None:
        super().__init__(message)
        self.field = field


@dataclass(frozen=True)
class AtPressure:
    refrigerant: str
    absolute_pressure_kpa: float
    dew_temperature_c: float
    bubble_temperature_c: float

    @property
    def glide_k(self) -> float:
        return self.dew_temperature_c - self.bubble_temperature_c


@dataclass(frozen=True)
class AtTemperature:
    refrigerant: str
    temperature_c: float
    dew_pressure_kpa_abs: float
    bubble_pressure_kpa_abs: float


def at_pressure(designation: str, pressure: float, unit: str, elevation_m: float) -> AtPressure:
    """Dew and bubble temperatures at a pressure read in ``unit`` at ``elevation_m``.

    Raises UnknownRefrigerant, or SaturationInputError naming the field at fault.
    """
    name = refrigerants.normalise_designation(designation)
    try:
        absolute = units.pressure_to_kpa_abs(pressure, unit, elevation_m)
    except (units.UnitError, ValueError, ArithmeticError) as exc:
        raise SaturationInputError("pressure", str(exc)) from exc
    if absolute <= 0:
        raise SaturationInputError(
            "pressure", f"{pressure:g} {unit} is below a perfect vacuum at {elevation_m:g} m"
        )
    table = saturation.table(name)
    try:
        dew = table.dew_temp_c(absolute)
        bubble = table.bubble_temp_c(absolute)
    except saturation.SaturationError as exc:
        raise SaturationInputError("pressure", str(exc)) from exc
    return AtPressure(name, float(absolute), float(dew), float(bubble))


def at_temperature(designation: str, temperature: float, unit: str) -> AtTemperature:
    """Dew and bubble pressures (absolute kPa) at a saturation temperature in ``unit``."""
    name = refrigerants.normalise_designation(designation)
    try:
        t_c = units.temperature_to_c(temperature, unit)
    except (units.UnitError, ValueError, ArithmeticError) as exc:
        raise SaturationInputError("temperature", str(exc)) from exc
    table = saturation.table(name)
    try:
        dew = table.dew_pressure_kpa_abs(t_c)
        bubble = table.bubble_pressure_kpa_abs(t_c)
    except saturation.SaturationError as exc:
        raise SaturationInputError("temperature", str(exc)) from exc
    return AtTemperature(name, float(t_c), float(dew), float(bubble))


@functools.lru_cache(maxsize=64)
def atmospheric_glide_k(designation: str) -> float | None:
    """Dew minus bubble temperature at atmospheric pressure; None where the fluid has no
    liquid there (R-744 below its triple point). Remembered per process: tables are fixed."""
    if refrigerants.get(designation).kind is refrigerants.Kind.PURE:
        return 0.0
    try:
        return float(saturation.table(designation).glide_k(ATMOSPHERIC_KPA_ABS))
    except saturation.SaturationError:
        return None
    except Exception:
        # A table that cannot be built must not take the refrigerant list down with it.
        log.exception("no saturation table for %s", designation)
        return None


#: The layout of ``saturation_table``'s answer; bumped when it changes, so a phone's kept
#: copy is fetched again.
TABLE_WIRE_FORMAT = 1
#: The two grids of each curve: their wire name, and what their nodes are spaced in.
_GRIDS: tuple[tuple[str, saturation.Quantity], ...] = (
    ("ln_p_of_temp", "temperature"),
    ("temp_of_ln_p", "pressure"),
)


@functools.lru_cache(maxsize=64)
def saturation_table(designation: str) -> dict[str, object]:
    """A refrigerant's saturation table as the server reads it, node for node, for a client
    that must read the same values offline (docs/api.md says how to interpolate it).

    ``version`` names the content (``saturation.table_version`` and ``TABLE_WIRE_FORMAT``):
    it changes only when the nodes or the layout do. Remembered per process (tables are
    fixed), so it must not be changed by a caller. Raises UnknownRefrigerant.
    """
    refrigerant = refrigerants.get(designation)
    table = saturation.table(refrigerant.designation)
    curves: dict[str, dict[str, dict[str, object]]] = {}
    for curve in saturation.CURVES:
        grids: dict[str, dict[str, object]] = {}
        for key, given in _GRIDS:
            first, last, values = table.grid(curve, given)
            grids[key] = {"first": first, "last": last, "values": values}
        curves[curve] = grids
    return {
        "refrigerant": refrigerant.designation,
        "kind": refrigerant.kind.value,
        "version": f"{saturation.table_version(refrigerant)}.wire-{TABLE_WIRE_FORMAT}",
        "min_temp_c": table.min_temp_c,
        "max_temp_c": table.max_temp_c,
        "critical_temp_c": table.critical_temp_c,
        "critical_pressure_kpa_abs": table.critical_pressure_kpa_abs,
        "curves": curves,
    }
