"""Units on the wire: which units a request may state, and which SI column each wire field is.

The arithmetic lives in ``diagnostics.core.units``, and what a response states
(``?units=us|si``) in ``fleet/display.py``; this module knows which field is which
quantity, and phrases a limit from ``fleet/limits.py`` in the units the client used, so an
error reads ``below the lowest gauge reading possible (-14.7 psig)`` rather than in kPa the
technician never typed.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import Any

from diagnostics.core import units as core_units
from fleet.display import Quantity, display_for, from_si
from fleet.limits import Limit

#: The units a request may state, per key of its ``units`` object. A temperature
#: difference is stated with the ``temperature`` key (a difference in F is in degrees F).
REQUEST_UNITS: dict[str, tuple[str, ...]] = {
    "temperature": ("F", "C", "K"),
    "pressure": ("psig", "psia", "kPa", "kPa_abs", "bar", "bar_abs"),
    "mass": ("kg", "lb", "oz"),
}
ABSOLUTE_PRESSURE_UNITS = frozenset({"psia", "kPa_abs", "bar_abs"})

#: Which request key states the unit of each quantity.
REQUEST_KEY: dict[Quantity, str] = {
    "temperature": "temperature",
    "temperature_difference": "temperature",
    "pressure": "pressure",
    "mass": "mass",
}

UnitError = core_units.UnitError


@dataclass(frozen=True)
class Measure:
    """A wire field that carries a quantity, the SI column it is stored in, and its limit.

    ``quantity`` None marks a value every client states in the same unit (A, V, uF), named
    by ``label``; it is checked against its limit but never converted.
    """

    column: str
    quantity: Quantity | None
    limit: Limit | None = None
    label: str = ""


def response_units(context: dict[str, Any]) -> dict[str, str]:
    """The units a response states, from ``?units=`` (kept in the serializer context by the
    view)."""
    return display_for(context.get("unit_system")).units


def pressure_difference_from_kpa(value: float, unit: str) -> float:
    """A pressure difference (a deviation) in a gauge ``unit``: the scale, not the offset."""
    return core_units.pressure_from_kpa_gauge(
        value, unit, 0.0
    ) - core_units.pressure_from_kpa_gauge(0.0, unit, 0.0)


def _shown(value: float) -> str:
    """A bound as a person would write it: one decimal at most, no trailing zeros."""
    return f"{round(value, 1) + 0.0:g}"


def in_units(
    value_si: float, quantity: Quantity | None, unit: str, elevation_m: float = 0.0
) -> str:
    """A stored SI value written in the client's ``unit``, e.g. ``-14.7 psig``."""
    return f"{_shown(from_si(value_si, quantity, unit, elevation_m))} {unit}"


def limit_error(
    value_si: float, measure: Measure, unit: str, elevation_m: float = 0.0
) -> str | None:
    """Why ``value_si`` cannot be true, in the client's ``unit``; None when it can.

    Gauge pressures are also held above a perfect vacuum at the site's elevation (the lowest
    a gauge can read there), so an absolute reading below zero is refused wherever it is.
    """
    if not math.isfinite(value_si):
        return "must be a finite number"
    limit = measure.limit
    low = limit.low if limit else None
    high = limit.high if limit else None
    noun = "amount" if measure.quantity == "mass" else "reading"
    if measure.quantity == "pressure":
        vacuum = core_units.pressure_to_kpa_gauge(0.0, "kPa_abs", elevation_m)
        low = vacuum if low is None else max(low, vacuum)
        noun = "absolute pressure" if unit in ABSOLUTE_PRESSURE_UNITS else "gauge reading"
    # A tolerance of a millionth keeps a bound typed exactly in another unit on the right side.
    slack = 1e-6 * max(1.0, abs(low or 0.0), abs(high or 0.0))
    if low is not None and value_si < low - slack:
        bound = in_units(low, measure.quantity, unit, elevation_m)
        return f"below the lowest {noun} possible ({bound})"
    if high is not None and value_si > high + slack:
        bound = in_units(high, measure.quantity, unit, elevation_m)
        return f"above the highest {noun} possible ({bound})"
    return None
