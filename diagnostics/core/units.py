"""The one place where units are converted.

Inside the core everything is SI with the unit in the name: kPa absolute or gauge, degrees C
(K for differences), kg, m. These functions take a float or a numpy array and return the same
kind (a scalar comes back as a Python float, anything array-like as a float ndarray).

Gauge pressure is relative to the local atmosphere, so the gauge <-> absolute conversions take
the site's elevation and use the standard atmosphere (``diagnostics.core.atmosphere``).
Exact factors: 1 lb = 0.45359237 kg (international pound); 1 psi = 1 lbf/in^2 =
0.45359237 x 9.80665 / 0.0254^2 Pa; 1 bar = 100 kPa; 1 ft = 0.3048 m.
"""

from __future__ import annotations

from typing import overload

import numpy.typing as npt

from diagnostics.core.atmosphere import standard_pressure_kpa
from diagnostics.core.numeric import FloatArray, as_numbers

PRESSURE_UNITS: tuple[str, ...] = ("psig", "psia", "kPa", "kPa_abs", "bar", "bar_abs")
TEMPERATURE_UNITS: tuple[str, ...] = ("F", "C", "K")
MASS_UNITS: tuple[str, ...] = ("kg", "lb", "oz")
LENGTH_UNITS: tuple[str, ...] = ("m", "ft")

KG_PER_LB = 0.45359237
KPA_PER_PSI = KG_PER_LB * 9.80665 / 0.0254**2 / 1000.0  # 6.894757293168361
KPA_PER_BAR = 100.0
ZERO_C_IN_K = 273.15
M_PER_FT = 0.3048

#: kPa per unit, and whether the unit is gauge (relative to the local atmosphere).
_PRESSURE: dict[str, tuple[float, bool]] = {
    "psig": (KPA_PER_PSI, True),
    "psia": (KPA_PER_PSI, False),
    "kPa": (1.0, True),
    "kPa_abs": (1.0, False),
    "bar": (KPA_PER_BAR, True),
    "bar_abs": (KPA_PER_BAR, False),
}
_KG_PER: dict[str, float] = {"kg": 1.0, "lb": KG_PER_LB, "oz": KG_PER_LB / 16.0}
_M_PER: dict[str, float] = {"m": 1.0, "ft": M_PER_FT}


class UnitError(ValueError):
    """A unit name this module does not know; the message lists the accepted ones."""

    def __init__(self, unit: object, quantity: str, accepted: tuple[str, ...]) -> None:
        self.unit = unit
        self.quantity = quantity
        self.accepted = accepted
        super().__init__(f"unknown {quantity} unit {unit!r}; accepted: {', '.join(accepted)}")


def _canonical(unit: object, quantity: str, accepted: tuple[str, ...]) -> str:
    """The accepted spelling of ``unit``; case does not matter ('kpa' is 'kPa')."""
    if isinstance(unit, str):
        if unit in accepted:
            return unit
        for name in accepted:
            if name.lower() == unit.strip().lower():
                return name
    raise UnitError(unit, quantity, accepted)


# --- pressure -------------------------------------------------------------------------------


@overload
def pressure_to_kpa_abs(value: float, unit: str, elevation_m: float = 0.0) -> float: ...
@overload
def pressure_to_kpa_abs(
    value: npt.ArrayLike, unit: str, elevation_m: npt.ArrayLike = 0.0
) -> float | FloatArray: ...
def pressure_to_kpa_abs(
    value: npt.ArrayLike, unit: str, elevation_m: npt.ArrayLike = 0.0
) -> float | FloatArray:
    """A pressure in ``unit`` as kPa absolute; gauge units add the atmosphere at elevation_m."""
    factor, gauge = _PRESSURE[_canonical(unit, "pressure", PRESSURE_UNITS)]
    v = as_numbers(value, "pressure")
    return v * factor + standard_pressure_kpa(elevation_m) if gauge else v * factor


@overload
def pressure_from_kpa_abs(kpa_abs: float, unit: str, elevation_m: float = 0.0) -> float: ...
@overload
def pressure_from_kpa_abs(
    kpa_abs: npt.ArrayLike, unit: str, elevation_m: npt.ArrayLike = 0.0
) -> float | FloatArray: ...
def pressure_from_kpa_abs(
    kpa_abs: npt.ArrayLike, unit: str, elevation_m: npt.ArrayLike = 0.0
) -> float | FloatArray:
    """kPa absolute expressed in ``unit`` (gauge units read against the site's atmosphere)."""
    factor, gauge = _PRESSURE[_canonical(unit, "pressure", PRESSURE_UNITS)]
    v = as_numbers(kpa_abs, "pressure")
    return (v - standard_pressure_kpa(elevation_m)) / factor if gauge else v / factor


@overload
def pressure_to_kpa_gauge(value: float, unit: str, elevation_m: float = 0.0) -> float: ...
@overload
def pressure_to_kpa_gauge(
    value: npt.ArrayLike, unit: str, elevation_m: npt.ArrayLike = 0.0
) -> float | FloatArray: ...
def pressure_to_kpa_gauge(
    value: npt.ArrayLike, unit: str, elevation_m: npt.ArrayLike = 0.0
) -> float | FloatArray:
    """A pressure in ``unit`` as kPa gauge; absolute units subtract the atmosphere."""
    factor, gauge = _PRESSURE[_canonical(unit, "pressure", PRESSURE_UNITS)]
    v = as_numbers(value, "pressure")
    return v * factor if gauge else v * factor - standard_pressure_kpa(elevation_m)


@overload
def pressure_from_kpa_gauge(kpa_gauge: float, unit: str, elevation_m: float = 0.0) -> float: ...
@overload
def pressure_from_kpa_gauge(
    kpa_gauge: npt.ArrayLike, unit: str, elevation_m: npt.ArrayLike = 0.0
) -> float | FloatArray: ...
def pressure_from_kpa_gauge(
    kpa_gauge: npt.ArrayLike, unit: str, elevation_m: npt.ArrayLike = 0.0
) -> float | FloatArray:
    """kPa gauge expressed in ``unit``; absolute units add the atmosphere at elevation_m."""
    factor, gauge = _PRESSURE[_canonical(unit, "pressure", PRESSURE_UNITS)]
    v = as_numbers(kpa_gauge, "pressure")
    return v / factor if gauge else (v + standard_pressure_kpa(elevation_m)) / factor


def is_gauge_pressure_unit(unit: str) -> bool:
    """True for psig, kPa and bar (read against the local atmosphere)."""
    return _PRESSURE[_canonical(unit, "pressure", PRESSURE_UNITS)][1]


# --- temperature ----------------------------------------------------------------------------


@overload
def temperature_to_c(value: float, unit: str) -> float: ...
@overload
def temperature_to_c(value: npt.ArrayLike, unit: str) -> float | FloatArray: ...
def temperature_to_c(value: npt.ArrayLike, unit: str) -> float | FloatArray:
    """A temperature (a reading, not a difference) in ``unit`` as degrees C."""
    unit = _canonical(unit, "temperature", TEMPERATURE_UNITS)
    v = as_numbers(value, "temperature")
    if unit == "F":
        return (v - 32.0) * (5.0 / 9.0)
    if unit == "K":
        return v - ZERO_C_IN_K
    return v


@overload
def temperature_from_c(value_c: float, unit: str) -> float: ...
@overload
def temperature_from_c(value_c: npt.ArrayLike, unit: str) -> float | FloatArray: ...
def temperature_from_c(value_c: npt.ArrayLike, unit: str) -> float | FloatArray:
    """Degrees C expressed in ``unit``."""
    unit = _canonical(unit, "temperature", TEMPERATURE_UNITS)
    v = as_numbers(value_c, "temperature")
    if unit == "F":
        return v * 1.8 + 32.0
    if unit == "K":
        return v + ZERO_C_IN_K
    return v


@overload
def temperature_difference_to_k(value: float, unit: str) -> float: ...
@overload
def temperature_difference_to_k(value: npt.ArrayLike, unit: str) -> float | FloatArray: ...
def temperature_difference_to_k(value: npt.ArrayLike, unit: str) -> float | FloatArray:
    """A temperature difference (superheat, split, glide) in ``unit`` as K: F is x 5/9."""
    unit = _canonical(unit, "temperature", TEMPERATURE_UNITS)
    v = as_numbers(value, "temperature difference")
    return v * (5.0 / 9.0) if unit == "F" else v


@overload
def temperature_difference_from_k(value_k: float, unit: str) -> float: ...
@overload
def temperature_difference_from_k(value_k: npt.ArrayLike, unit: str) -> float | FloatArray: ...
def temperature_difference_from_k(value_k: npt.ArrayLike, unit: str) -> float | FloatArray:
    """A temperature difference in K expressed in ``unit`` (F is x 1.8)."""
    unit = _canonical(unit, "temperature", TEMPERATURE_UNITS)
    v = as_numbers(value_k, "temperature difference")
    return v * 1.8 if unit == "F" else v


# --- mass and length ------------------------------------------------------------------------


@overload
def mass_to_kg(value: float, unit: str) -> float: ...
@overload
def mass_to_kg(value: npt.ArrayLike, unit: str) -> float | FloatArray: ...
def mass_to_kg(value: npt.ArrayLike, unit: str) -> float | FloatArray:
    """A mass in ``unit`` as kg."""
    return as_numbers(value, "mass") * _KG_PER[_canonical(unit, "mass", MASS_UNITS)]


@overload
def mass_from_kg(value_kg: float, unit: str) -> float: ...
@overload
def mass_from_kg(value_kg: npt.ArrayLike, unit: str) -> float | FloatArray: ...
def mass_from_kg(value_kg: npt.ArrayLike, unit: str) -> float | FloatArray:
    """kg expressed in ``unit``."""
    return as_numbers(value_kg, "mass") / _KG_PER[_canonical(unit, "mass", MASS_UNITS)]


@overload
def length_to_m(value: float, unit: str) -> float: ...
@overload
def length_to_m(value: npt.ArrayLike, unit: str) -> float | FloatArray: ...
def length_to_m(value: npt.ArrayLike, unit: str) -> float | FloatArray:
    """A length (a site's elevation, say) in ``unit`` as metres."""
    return as_numbers(value, "length") * _M_PER[_canonical(unit, "length", LENGTH_UNITS)]


@overload
def length_from_m(value_m: float, unit: str) -> float: ...
@overload
def length_from_m(value_m: npt.ArrayLike, unit: str) -> float | FloatArray: ...
def length_from_m(value_m: npt.ArrayLike, unit: str) -> float | FloatArray:
    """Metres expressed in ``unit``."""
    return as_numbers(value_m, "length") / _M_PER[_canonical(unit, "length", LENGTH_UNITS)]
