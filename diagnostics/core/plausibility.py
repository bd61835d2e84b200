"""Readings no working system can produce, found before anything is scored.

A reading set that breaks the physics of the cycle is a slip (a gauge on the wrong port, a
digit too many, the wrong refrigerant), not a sick unit: scored, it would either look
healthy (nothing can be computed from it, so nothing loses points) or raise a cause that is
not there. So it is refused, with the field and the reason, and the technician can look
again while still at the unit.

What is refused (each only where the fields it needs are given):

- suction at or above head while the compressor runs (a running compressor always lifts);
- a pressure outside the refrigerant's saturation range where a saturation temperature is
  needed: any suction pressure (an evaporator always boils below the critical point), a head
  pressure except R-744 above its critical point (transcritical operation);
- a line temperature the refrigerant cannot have at its pressure while running, by more than
  instrument error: a suction line colder than the dew point (superheat below zero), a liquid
  line warmer than the bubble point (subcooling below zero), a discharge line colder than the
  condensing dew point (discharge gas is always superheated).

The checks return reasons with a ``{limit}`` placeholder and the limit in SI, so the caller
writes it in the units the technician used.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field
from typing import Literal

import numpy as np

from diagnostics.core import atmosphere, refrigerants, saturation
from diagnostics.core.sources import cite
from diagnostics.core.types import Reading, UnitDesign

Quantity = Literal["pressure", "temperature"]


@dataclass(frozen=True)
class Implausible:
    """One reading field that cannot be right, and why.

    ``why`` may hold ``{limit}``: the value ``limit`` (SI: kPa gauge at the site, or C) of
    kind ``quantity``, for the caller to write in the request's units.
    """

    field: str
    why: str
    limit: float | None = None
    quantity: Quantity | None = None


@dataclass(frozen=True)
class PlausibilityRules:
    """How far past the physics a reading may be before it is refused."""

    line_temp_margin_k: float = field(
        default=3.0,
        metadata=cite(
            "ours: twice the combined error of a clamp thermometer (about 1 K, from memory) "
            "and a service gauge's 7 kPa (1 psi), worth up to 1 K of saturation temperature "
            "at freezer suction pressures (docs/references.md §9)"
        ),
    )


DEFAULT_PLAUSIBILITY_RULES = PlausibilityRules()


def _running(reading: Reading, p_s: float | None, p_h: float | None) -> bool:
    """Running as reported; when not reported, a suction below head says it was."""
    if reading.compressor_running is not None:
        return reading.compressor_running
    return p_s is not None and p_h is not None and p_s < p_h


def check(
    design: UnitDesign,
    reading: Reading,
    elevation_m: float = 0.0,
    rules: PlausibilityRules = DEFAULT_PLAUSIBILITY_RULES,
) -> tuple[Implausible, ...]:
    """Every implausible field of ``reading`` on a unit of ``design`` at ``elevation_m``,
    in reading-field order; empty when the set is physically possible."""
    try:
        refrigerants.get(design.refrigerant)
    except KeyError:
        return ()
    if not atmosphere.MIN_ELEVATION_M <= elevation_m <= atmosphere.MAX_ELEVATION_M:
        return ()
    atm = float(atmosphere.standard_pressure_kpa(elevation_m))
    table = saturation.table(design.refrigerant)
    transcritical_ok = refrigerants.get(design.refrigerant).designation == "R-744"

    def absolute(gauge: float | None) -> float | None:
        if gauge is None or not math.isfinite(gauge) or gauge + atm <= 0:
            return None
        return gauge + atm

    p_s, p_h = absolute(reading.suction_kpa_gauge), absolute(reading.head_kpa_gauge)
    found: list[Implausible] = []
    dew_lo, dew_hi = table.pressure_range_kpa_abs("dew")
    bub_lo, bub_hi = table.pressure_range_kpa_abs("bubble")
    lowest, highest = max(dew_lo, bub_lo), min(dew_hi, bub_hi)
    critical = table.critical_pressure_kpa_abs
    name = refrigerants.get(design.refrigerant).designation

    def outside(field_name: str, p: float, allow_transcritical: bool) -> bool:
        if p < lowest:
            found.append(
                Implausible(
                    field_name,
                    f"below the saturation range of {name} (lowest {{limit}}): no "
                    "saturation temperature exists there",
                    lowest - atm,
                    "pressure",
                )
            )
            return True
        if p > highest and not (allow_transcritical and p >= critical):
            found.append(
                Implausible(
                    field_name,
                    f"above the saturation range of {name} (highest {{limit}}, just below its "
                    "critical point): no saturation temperature exists there",
                    highest - atm,
                    "pressure",
                )
            )
            return True
        return False

    suction_bad = p_s is not None and outside("suction_kpa_gauge", p_s, False)
    head_bad = p_h is not None and outside("head_kpa_gauge", p_h, transcritical_ok)
    running = _running(reading, p_s, p_h)
    if (
        reading.compressor_running is True
        and p_s is not None
        and p_h is not None
        and p_s >= p_h
        and not (suction_bad or head_bad)
    ):
        found.append(
            Implausible(
                "suction_kpa_gauge",
                "at or above the head pressure ({limit}) while the compressor runs: a running "
                "compressor always lifts; check which gauge is on which port",
                p_h - atm,
                "pressure",
            )
        )
        found.append(
            Implausible(
                "head_kpa_gauge",
                "at or below the suction pressure ({limit}) while the compressor runs",
                p_s - atm,
                "pressure",
            )
        )
        return tuple(found)
    if not running:
        return tuple(found)
    margin = rules.line_temp_margin_k

    def sat(curve: str, p: float) -> float:
        fn = table.dew_temp_c if curve == "dew" else table.bubble_temp_c
        return float(np.asarray(fn(np.array([p]), strict=False))[0])

    if p_s is not None and not suction_bad and reading.suction_line_temp_c is not None:
        dew = sat("dew", p_s)
        if math.isfinite(dew) and reading.suction_line_temp_c < dew - margin:
            found.append(
                Implausible(
                    "suction_line_temp_c",
                    "colder than the refrigerant's dew point at the suction pressure "
                    "({limit}): a suction line is never colder than that by more than "
                    "instrument error",
                    dew,
                    "temperature",
                )
            )
    if p_h is not None and not head_bad and not (transcritical_ok and p_h >= critical):
        bubble, dew = sat("bubble", p_h), sat("dew", p_h)
        liquid, discharge = reading.liquid_line_temp_c, reading.discharge_line_temp_c
        if liquid is not None and math.isfinite(bubble) and liquid > bubble + margin:
            found.append(
                Implausible(
                    "liquid_line_temp_c",
                    "warmer than the refrigerant's bubble point at the head pressure "
                    "({limit}): liquid leaving the condenser is never warmer than that by more "
                    "than instrument error",
                    bubble,
                    "temperature",
                )
            )
        if discharge is not None and math.isfinite(dew) and discharge < dew - margin:
            found.append(
                Implausible(
                    "discharge_line_temp_c",
                    "colder than the condensing dew point at the head pressure ({limit}): "
                    "discharge gas is always superheated",
                    dew,
                    "temperature",
                )
            )
    return tuple(found)
