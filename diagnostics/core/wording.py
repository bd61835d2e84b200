"""Sentences with numbers in them, written in the reader's units when they are read.

Flags keep their sentences as templates with named places (``"split now {split_now}"``)
and their numbers as SI quantities ``(name, value, unit)``; ``fill`` writes each number in
the units the reader asked for (a US office reads F, psig and lb, an SI one C, kPa and kg),
so a leak entered in pounds is never reported in kilograms. A sentence without places (any
stored before templates) comes back as it is.
"""

from __future__ import annotations

import math
import string
from collections.abc import Iterable, Mapping

from diagnostics.core import units

Quantity = tuple[str, float, str]

#: Stored unit -> (kind of quantity, decimals). Kinds are those the reader picks units for.
_KINDS: dict[str, tuple[str, int]] = {
    "C": ("temperature", 1),
    "K": ("temperature_difference", 1),
    "K/year": ("temperature_difference", 1),
    "kPa_gauge": ("pressure", 0),
    "kg": ("mass", 2),
}
#: How a unit is written after its number (in sentences, on pages and on chart axes).
SYMBOLS: dict[str, str] = {
    "F": "°F",
    "C": "°C",
    "K": "K",
    "psig": "psig",
    "kPa": "kPa gauge",
    "lb": "lb",
    "kg": "kg",
    "%": "%",
    "d": "days",
    "uF": "µF",
    "A": "A",
    "V": "V",
}


def convert(
    value: float, unit: str, reader: Mapping[str, str], elevation_m: float = 0.0
) -> tuple[float, str]:
    """A stored SI value in the reader's units: (value, unit name). ``reader`` maps a kind
    (temperature, temperature_difference, pressure, mass) to the unit asked for; units of
    no kind (%, days, A, V, uF) stay as stored."""
    kind = _KINDS.get(unit, (None, 0))[0]
    if kind is None:
        return value, unit
    target = reader[kind]
    if kind == "temperature":
        return float(units.temperature_from_c(value, target)), target
    if kind == "temperature_difference":
        return float(units.temperature_difference_from_k(value, target)), target
    if kind == "pressure":
        return float(units.pressure_from_kpa_gauge(value, target, elevation_m)), target
    return float(units.mass_from_kg(value, target)), target


def number(value: float, unit: str, reader: Mapping[str, str], elevation_m: float = 0.0) -> str:
    """One stored quantity written for the reader, e.g. '4.1 °F' or '250 psig'."""
    if not math.isfinite(value):
        return "?"
    decimals = _KINDS.get(unit, (None, None))[1]
    shown, shown_unit = convert(value, unit, reader, elevation_m)
    if decimals is None:
        decimals = 0 if float(shown).is_integer() else (1 if unit in ("%", "uF", "A", "V") else 2)
    symbol = SYMBOLS.get(shown_unit, "" if shown_unit == "1" else shown_unit)
    text = f"{shown:.{decimals}f}"
    return f"{text} {symbol}".strip()


def fill(
    template: str,
    quantities: Iterable[Quantity],
    reader: Mapping[str, str],
    elevation_m: float = 0.0,
) -> str:
    """``template`` with each ``{name}`` replaced by that quantity in the reader's units; a
    place with no quantity is left as written."""
    values = {name: (value, unit) for name, value, unit in quantities}
    parts: list[str] = []
    for literal, name, _spec, _conversion in string.Formatter().parse(template):
        parts.append(literal)
        if name is None:
            continue
        if name in values:
            parts.append(number(*values[name], reader, elevation_m))
        else:
            parts.append("{" + name + "}")
    return "".join(parts)
