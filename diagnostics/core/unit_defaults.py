"""The targets' defaults per unit, vectorised: application codes in, one array entry per unit.

A design value is taken where the unit gives it, else its application's default
(``targets.APPLICATION_DEFAULTS`` and the ranges beside it), and each value keeps where it came
from (design data, default, missing), so the diagnosis can say which it used.
"""

from __future__ import annotations

from collections.abc import Callable
from dataclasses import dataclass

import numpy as np
from numpy.typing import NDArray

from diagnostics.core.numeric import FloatArray
from diagnostics.core.targets import (
    APPLICATION_DEFAULTS,
    HEAD_PRESSURE_CONTROL_DEFAULTS,
    SUBCOOLING_DEFAULTS,
    SUPERHEAT_DEFAULTS,
    ApplicationDefaults,
)
from diagnostics.core.types import APPLICATIONS, HEAD_PRESSURE_CONTROLS, METERING_DEVICES

#: Where a resolved value came from, per unit.
FROM_DESIGN, FROM_DEFAULT, MISSING = 0, 1, -1


@dataclass(frozen=True)
class Resolved:
    """One design quantity for every unit: value (NaN if missing) and where it came from."""

    value: FloatArray
    origin: NDArray[np.int8]


def resolve(design: FloatArray, default: FloatArray | float | None = None) -> Resolved:
    """Take the design value where given, else the default (NaN default: missing)."""
    design = np.asarray(design, dtype=np.float64)
    if default is None:
        default_arr = np.full_like(design, np.nan)
    else:
        default_arr = np.broadcast_to(np.asarray(default, dtype=np.float64), design.shape)
    has_design = ~np.isnan(design)
    value = np.where(has_design, design, default_arr)
    origin = np.where(
        has_design, FROM_DESIGN, np.where(np.isnan(value), MISSING, FROM_DEFAULT)
    ).astype(np.int8)
    return Resolved(value, origin)


def _by_application(
    app_codes: NDArray[np.integer], pick: Callable[[ApplicationDefaults], float | None]
) -> FloatArray:
    lookup = np.array(
        [np.nan if (v := pick(APPLICATION_DEFAULTS[app])) is None else v for app in APPLICATIONS],
        dtype=np.float64,
    )
    return lookup[np.asarray(app_codes, dtype=np.intp)]


def default_box_temp_c(app_codes: NDArray[np.integer]) -> FloatArray:
    """Default design box temperature per unit (NaN where the application has none)."""
    return _by_application(
        app_codes, lambda d: None if d.box_temp_c is None else d.box_temp_c.value
    )


def default_evap_td_k(app_codes: NDArray[np.integer]) -> FloatArray:
    """Default evaporator TD per unit (NaN for ice machines and 'other')."""
    return _by_application(app_codes, lambda d: None if d.evap_td_k is None else d.evap_td_k.value)


def default_condenser_split_k(app_codes: NDArray[np.integer]) -> FloatArray:
    """Default air-cooled condenser split per unit."""
    return _by_application(app_codes, lambda d: d.condenser_split_k.value)


def default_head_pressure_control_codes(app_codes: NDArray[np.integer]) -> NDArray[np.intp]:
    """Default kind of head-pressure control (index into ``HEAD_PRESSURE_CONTROLS``)."""
    lookup = np.array(
        [
            HEAD_PRESSURE_CONTROLS.index(APPLICATION_DEFAULTS[a].head_pressure_control)
            for a in APPLICATIONS
        ],
        dtype=np.intp,
    )
    return lookup[np.asarray(app_codes, dtype=np.intp)]


def head_control_band(
    control_codes: NDArray[np.integer], setpoint_c: FloatArray
) -> tuple[FloatArray, FloatArray, FloatArray]:
    """Per unit: the set point (the unit's, else its kind's default) and the lowest and
    highest condensing temperature a held head is found at; NaN for a unit without control."""
    kinds = [HEAD_PRESSURE_CONTROL_DEFAULTS.get(k) for k in HEAD_PRESSURE_CONTROLS]
    nan = float("nan")
    default = np.array([nan if d is None else d.setpoint_c for d in kinds])
    below = np.array([nan if d is None else d.below_k for d in kinds])
    above = np.array([nan if d is None else d.above_k for d in kinds])
    c = np.asarray(control_codes, dtype=np.intp)
    setpoint = np.where(np.isnan(setpoint_c), default[c], setpoint_c)
    setpoint = np.where(np.isnan(default[c]), np.nan, setpoint)
    return setpoint, setpoint - below[c], setpoint + above[c]


def compression_ratio_typical(app_codes: NDArray[np.integer]) -> tuple[FloatArray, FloatArray]:
    """Typical compression-ratio range per unit, for the weak-compressor signal."""
    return (
        _by_application(app_codes, lambda d: d.compression_ratio.low),
        _by_application(app_codes, lambda d: d.compression_ratio.high),
    )


def default_has_receiver(app_codes: NDArray[np.integer]) -> FloatArray:
    """1.0 / 0.0 per unit, NaN where the application gives no default."""
    return _by_application(
        app_codes,
        lambda d: None if d.has_receiver is None else float(d.has_receiver),
    )


def default_metering_codes(app_codes: NDArray[np.integer]) -> NDArray[np.int8]:
    """Default metering device (index into ``types.METERING_DEVICES``) per unit."""
    lookup = np.array(
        [METERING_DEVICES.index(APPLICATION_DEFAULTS[a].metering_device) for a in APPLICATIONS],
        dtype=np.int8,
    )
    return lookup[np.asarray(app_codes, dtype=np.intp)]


def default_superheat_range_k(
    app_codes: NDArray[np.integer], metering_codes: NDArray[np.integer]
) -> tuple[FloatArray, FloatArray]:
    """Default superheat range per unit from its application and metering device."""
    lows = np.array(
        [[SUPERHEAT_DEFAULTS[(a, d)].low for d in METERING_DEVICES] for a in APPLICATIONS]
    )
    highs = np.array(
        [[SUPERHEAT_DEFAULTS[(a, d)].high for d in METERING_DEVICES] for a in APPLICATIONS]
    )
    a = np.asarray(app_codes, dtype=np.intp)
    d = np.asarray(metering_codes, dtype=np.intp)
    return lows[a, d], highs[a, d]


def subcooling_range_k(has_receiver: FloatArray) -> tuple[FloatArray, FloatArray]:
    """Subcooling range per unit: with a receiver, without, or NaN when unknown."""
    r = np.asarray(has_receiver, dtype=np.float64)
    low = np.where(
        r == 1.0,
        SUBCOOLING_DEFAULTS[True].low,
        np.where(r == 0.0, SUBCOOLING_DEFAULTS[False].low, np.nan),
    )
    high = np.where(
        r == 1.0,
        SUBCOOLING_DEFAULTS[True].high,
        np.where(r == 0.0, SUBCOOLING_DEFAULTS[False].high, np.nan),
    )
    return low, high
