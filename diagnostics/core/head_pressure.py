"""A unit's head pressure and condensing temperature, on the convention its split is read on.

``condensing_point`` names which saturation temperature stands for "condensing" on a glide
blend (see ``split_drift_types.HeadPressureLimit``): the mid-point, the bubble or the dew
temperature. Gauge pressures are relative to the standard atmosphere at the site's elevation.
"""

from __future__ import annotations

from functools import lru_cache
from typing import Any, Literal

import numpy as np
from numpy.typing import ArrayLike

from diagnostics.core.trends import FloatArray

CondensingPoint = Literal["mid_point", "bubble", "dew"]


def _finite_call(fn: Any, x: FloatArray) -> FloatArray:
    """Call a saturation function on the finite entries only (strict=False: NaN out of range)."""
    out = np.full(x.shape, np.nan)
    mask = np.isfinite(x)
    if mask.any():
        out[mask] = np.asarray(fn(x[mask], strict=False), dtype=float)
    return out


def _sat_table(designation: str) -> Any:
    from diagnostics.core import saturation

    return saturation.table(designation)


def condensing_pressure_kpa_gauge(
    refrigerant: str,
    condensing_c: ArrayLike,
    *,
    elevation_m: float = 0.0,
    condensing_point: CondensingPoint = "mid_point",
) -> FloatArray:
    """Gauge head pressure at condensing temperatures (array), NaN where no saturation exists.

    The temperature is read on the named convention (see the module docstring); the gauge
    reading is relative to the standard atmosphere at the site's elevation. One call to the
    saturation table for the whole array.
    """
    from diagnostics.core import targets, units

    curve = _sat_table(refrigerant)
    temps = np.atleast_1d(np.asarray(condensing_c, dtype=float))
    if condensing_point == "mid_point":
        p_abs = targets.mid_point_pressure_kpa_abs(curve, temps)
    elif condensing_point == "bubble":
        p_abs = _finite_call(curve.bubble_pressure_kpa_abs, temps)
    else:
        p_abs = _finite_call(curve.dew_pressure_kpa_abs, temps)
    return np.asarray(units.pressure_from_kpa_abs(p_abs, "kPa", elevation_m), dtype=float)


@lru_cache(maxsize=4096)
def highest_condensing_c(
    refrigerant: str,
    cutout_kpa_gauge: float,
    elevation_m: float = 0.0,
    condensing_point: CondensingPoint = "mid_point",
) -> float:
    """The condensing temperature (same convention) at which the head reaches the cut-out.

    Cached: a fleet has few distinct (refrigerant, cut-out, elevation) combinations, so a
    refresh calls the property engine a handful of times, not once per unit.
    """
    from diagnostics.core import targets, units

    curve = _sat_table(refrigerant)
    p_abs = np.array([float(units.pressure_to_kpa_abs(cutout_kpa_gauge, "kPa", elevation_m))])
    dew = targets.dew_temp_c(curve, p_abs)
    bubble = targets.bubble_temp_c(curve, p_abs)
    if condensing_point == "mid_point":
        t = 0.5 * (dew + bubble)
    else:
        t = bubble if condensing_point == "bubble" else dew
    return float(t[0])
