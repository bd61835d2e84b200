"""The standard atmosphere: what a gauge reads zero against at a site's elevation.

p = 101.325 x (1 - 2.25577e-5 x Z)^5.2559 kPa, Z in metres above sea level
(ASHRAE Handbook - Fundamentals 2017, ch. 1, eq. 3; U.S. Standard Atmosphere 1976).
The equation describes the troposphere, so elevations are accepted from -1,000 m (below the
Dead Sea shore) to 11,000 m; anything else is more likely a unit mistake than a site.
"""

from __future__ import annotations

from typing import overload

import numpy as np
import numpy.typing as npt

from diagnostics.core.numeric import FloatArray, as_numbers

SEA_LEVEL_PRESSURE_KPA = 101.325
LAPSE_FACTOR_PER_M = 2.25577e-5
EXPONENT = 5.2559
MIN_ELEVATION_M = -1_000.0
MAX_ELEVATION_M = 11_000.0


@overload
def standard_pressure_kpa(elevation_m: float) -> float: ...
@overload
def standard_pressure_kpa(elevation_m: npt.ArrayLike) -> FloatArray | float: ...
def standard_pressure_kpa(elevation_m: npt.ArrayLike) -> FloatArray | float:
    """Standard-atmosphere pressure (kPa absolute) at an elevation (m); float or ndarray.

    Raises ValueError for a non-numeric elevation or one outside -1,000..11,000 m.
    """
    z = as_numbers(elevation_m, "elevation_m")
    arr = np.asarray(z)
    outside = ~((arr >= MIN_ELEVATION_M) & (arr <= MAX_ELEVATION_M))  # NaN is outside too
    if outside.any():
        raise ValueError(
            f"elevation {float(arr[outside].flat[0]):g} m is outside the standard "
            f"atmosphere's range ({MIN_ELEVATION_M:g} to {MAX_ELEVATION_M:g} m)"
        )
    p = SEA_LEVEL_PRESSURE_KPA * (1.0 - LAPSE_FACTOR_PER_M * arr) ** EXPONENT
    return float(p) if isinstance(z, float) else p
