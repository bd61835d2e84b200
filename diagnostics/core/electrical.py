"""Electrical checks on a compressor circuit: unbalance, derating, tolerance and capacitors.

Pure functions over floats or numpy arrays (arrays in, arrays out), usable on their own by
the API or a report and by the batch diagnosis:

- voltage and current unbalance by the NEMA MG-1 (14.36) definition: the largest deviation
  of one value from the average of the three, as a percentage of that average;
- the MG-1 derating factor for a motor on unbalanced voltage (read off the published curve);
- the motor voltage tolerance band, +/-10 % of nameplate (NEMA MG-1, 12.44), also across a
  dual rating such as 208-230 V;
- capacitance measured in circuit: C = I / (2 pi f V), i.e. 2652.58 x A / V at 60 Hz;
- whether a capacitor reading lies within its marked tolerance or range.
"""

from __future__ import annotations

import math

import numpy as np
from numpy.typing import ArrayLike, NDArray

FloatArray = NDArray[np.float64]

#: NEMA MG-1 derating curve for unbalanced voltage (secondary tabulation of the published
#: curve; docs/references.md §4): unbalance % -> derating factor. Above 5 % MG-1 advises not
#: operating the motor, so the factor is undefined (NaN) there.
NEMA_DERATING_CURVE: tuple[tuple[float, float], ...] = (
    (0.0, 1.00),
    (1.0, 1.00),
    (2.0, 0.95),
    (3.0, 0.89),
    (4.0, 0.82),
    (5.0, 0.76),
)
#: Unbalance above which MG-1 advises against operating the motor at all (%).
NEMA_MAX_UNBALANCE_PCT = 5.0
#: Unbalance a motor is designed for without derating (%), NEMA MG-1 14.36.
NEMA_DESIGN_UNBALANCE_PCT = 1.0
#: Motor voltage tolerance at rated frequency (%), NEMA MG-1 12.44.
NEMA_VOLTAGE_TOLERANCE_PCT = 10.0
#: Typical run-capacitor tolerance when the can does not say (%), EIA-456-A / IEC 60252-1.
DEFAULT_RUN_CAPACITOR_TOLERANCE_PCT = 6.0


def unbalance_pct(values: ArrayLike) -> FloatArray | float:
    """Percentage unbalance of three readings (NEMA MG-1 14.36), along the last axis.

    ``100 x max |v_i - mean| / mean``. Used for line-to-line voltages and, by the same
    formula, for the three leg currents. Rows with a missing value (NaN), fewer than three
    values or a non-positive mean give NaN rather than a made-up figure.
    """
    arr = np.asarray(values, dtype=np.float64)
    if arr.shape[-1] != 3:
        raise ValueError("unbalance needs exactly three values per row")
    a, b, c = arr[..., 0], arr[..., 1], arr[..., 2]
    mean = (a + b + c) / 3.0
    # column by column: much faster than reducing a length-3 axis over millions of rows
    deviation = np.maximum(np.maximum(np.abs(a - mean), np.abs(b - mean)), np.abs(c - mean))
    with np.errstate(invalid="ignore", divide="ignore"):
        result = np.where(mean > 0, 100.0 * deviation / mean, np.nan)
    return float(result) if result.ndim == 0 else result


def nema_derating_factor(unbalance: ArrayLike) -> FloatArray | float:
    """Motor derating factor for a voltage unbalance in % (NEMA MG-1 curve, interpolated).

    1.0 up to 1 %; NaN above 5 %, where MG-1 advises not to run the motor; NaN in, NaN out.
    """
    xs, ys = zip(*NEMA_DERATING_CURVE, strict=True)
    arr = np.asarray(unbalance, dtype=np.float64)
    factor = np.interp(arr, xs, ys)
    with np.errstate(invalid="ignore"):
        factor = np.where((arr > NEMA_MAX_UNBALANCE_PCT) | np.isnan(arr), np.nan, factor)
    return float(factor) if factor.ndim == 0 else factor


def voltage_tolerance_band(
    nameplate_volts: float,
    nameplate_volts_max: float | None = None,
    tolerance_pct: float = NEMA_VOLTAGE_TOLERANCE_PCT,
) -> tuple[float, float]:
    """Lowest and highest supply voltage the motor is rated for (NEMA MG-1 12.44).

    For a dual rating (e.g. 208-230 V) the band runs from 10 % below the lower rating to 10 %
    above the upper one: 187-253 V.
    """
    upper = nameplate_volts if nameplate_volts_max is None else nameplate_volts_max
    return (
        nameplate_volts * (1.0 - tolerance_pct / 100.0),
        upper * (1.0 + tolerance_pct / 100.0),
    )


def within_voltage_tolerance(
    volts: ArrayLike,
    nameplate_volts: float,
    nameplate_volts_max: float | None = None,
    tolerance_pct: float = NEMA_VOLTAGE_TOLERANCE_PCT,
) -> NDArray[np.bool_] | bool:
    """True where every given voltage lies inside the nameplate tolerance band."""
    low, high = voltage_tolerance_band(nameplate_volts, nameplate_volts_max, tolerance_pct)
    arr = np.asarray(volts, dtype=np.float64)
    inside = (arr >= low) & (arr <= high)
    return bool(inside) if inside.ndim == 0 else inside


def capacitor_uf_in_circuit(
    amps: ArrayLike, volts: ArrayLike, hertz: float = 60.0
) -> FloatArray | float:
    """Capacitance in uF from the current through a capacitor and the voltage across it.

    C = I / (2 pi f V); at 60 Hz that is 2652.58 x A / V, at 50 Hz 3183.10 x A / V. The
    capacitor's voltage rating plays no part.
    """
    a = np.asarray(amps, dtype=np.float64)
    v = np.asarray(volts, dtype=np.float64)
    with np.errstate(invalid="ignore", divide="ignore"):
        uf = np.where(v > 0, a / (2.0 * math.pi * hertz * v) * 1e6, np.nan)
    return float(uf) if uf.ndim == 0 else uf


def run_capacitor_band(
    rated_uf: float, tolerance_pct: float = DEFAULT_RUN_CAPACITOR_TOLERANCE_PCT
) -> tuple[float, float]:
    """The range a run capacitor's measured value must lie in: rating +/- tolerance."""
    return rated_uf * (1.0 - tolerance_pct / 100.0), rated_uf * (1.0 + tolerance_pct / 100.0)


def run_capacitor_ok(
    measured_uf: ArrayLike,
    rated_uf: float,
    tolerance_pct: float = DEFAULT_RUN_CAPACITOR_TOLERANCE_PCT,
) -> NDArray[np.bool_] | bool:
    """True where a run capacitor reads inside its marked tolerance (IEC 60252-1)."""
    low, high = run_capacitor_band(rated_uf, tolerance_pct)
    arr = np.asarray(measured_uf, dtype=np.float64)
    inside = (arr >= low) & (arr <= high)
    return bool(inside) if inside.ndim == 0 else inside


def start_capacitor_ok(
    measured_uf: ArrayLike, min_uf: float, max_uf: float
) -> NDArray[np.bool_] | bool:
    """True where a start capacitor reads inside its marked range (IEC 60252-2)."""
    arr = np.asarray(measured_uf, dtype=np.float64)
    inside = (arr >= min_uf) & (arr <= max_uf)
    return bool(inside) if inside.ndim == 0 else inside
