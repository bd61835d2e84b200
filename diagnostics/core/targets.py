"""What a unit should read: design data first, application defaults (with sources) second.

Targets come from three places: the unit's own design data (``UnitDesign``), the defaults
for its application below when a design field is missing, and the reading's own conditions
(the box and entering-air temperatures the targets are measured against):

- evaporating target = box temperature - evaporator TD;
- condensing target = entering air + condenser split (air-cooled condensers only);
- superheat range by metering device and application; subcooling range with and without a
  receiver; discharge-line limit; compression-ratio limit; RLA, LRA, nameplate voltage and
  capacitor ratings from the nameplate.

Glide blends: which saturation temperature stands for "evaporating" and "condensing"
------------------------------------------------------------------------------------
A zeotropic blend (R-407A, R-448A, R-449A, ...) boils over a range of temperatures at one
pressure: it starts at the bubble point and ends at the dew point. Superheat is always
measured from the dew point and subcooling from the bubble point (that is where the vapour
or the liquid stops being saturated). For the evaporator TD and the condenser split we use
the **mid-point**, the average of the dew and bubble temperatures at the measured pressure
(``GLIDE_CHOICE``). TD and split are rules of the trade from single-component refrigerants,
where the refrigerant sits at one temperature through the whole coil; the mid-point keeps
the mean temperature difference between air and refrigerant, which sets the heat flow, the
same as the rule intends. Target pressures are therefore the pressures whose mid-point
temperature equals the target temperature. For a pure fluid or an azeotrope dew, bubble and
mid-point coincide, so the choice changes nothing there.
"""

from __future__ import annotations

from collections.abc import Callable
from dataclasses import dataclass
from typing import Protocol

import numpy as np
from numpy.typing import NDArray

from diagnostics.core.electrical import DEFAULT_RUN_CAPACITOR_TOLERANCE_PCT
from diagnostics.core.sources import Sourced
from diagnostics.core.types import APPLICATIONS, METERING_DEVICES, Application, MeteringDevice

FloatArray = NDArray[np.float64]

GLIDE_CHOICE = "mid_point"
GLIDE_CHOICE_TEXT = (
    "Superheat is measured from the dew point and subcooling from the bubble point. The "
    "evaporating temperature used for the evaporator TD and the condensing temperature used "
    "for the condenser split are the mid-point of the dew and bubble temperatures at the "
    "measured pressure, so the mean air-to-refrigerant temperature difference of a glide "
    "blend matches what the single-refrigerant rule intends. Pure refrigerants and "
    "azeotropes have no glide: all three temperatures are the same."
)

COMMON = "common practice"
TROTT_TD = "Trott & Welch, Refrigeration and Air-Conditioning, 4th ed., 10.3"
TROTT_SPLIT = "Trott & Welch, 3rd ed., Table 10.2 (14-15 K above design dry bulb)"
OURS = "Rimewatch choice"


def f_to_k(delta_f: float) -> float:
    """A temperature difference in F as K (the trade quotes its rules in F)."""
    return delta_f / 1.8


def f_to_c(temp_f: float) -> float:
    """A temperature in F as C."""
    return (temp_f - 32.0) / 1.8


@dataclass(frozen=True)
class SourcedRange:
    """A default range and where it comes from."""

    low: float
    high: float
    source: str


@dataclass(frozen=True)
class ApplicationDefaults:
    """Defaults for one application, used wherever the unit's design data is silent."""

    box_temp_c: Sourced[float] | None
    evap_td_k: Sourced[float] | None
    condenser_split_k: Sourced[float]
    metering_device: MeteringDevice
    has_receiver: bool | None
    receiver_source: str
    compression_ratio: SourcedRange
    head_pressure_floor_c: Sourced[float]


_HP_FLOOR = Sourced(
    f_to_c(100.0),
    "common practice (from memory): head-pressure control holds condensing near 80-100 F "
    "in cold weather; the upper end is used so a held-up head is not marked as a fault",
)

#: Application -> defaults. Temperatures in C, differences in K.
APPLICATION_DEFAULTS: dict[Application, ApplicationDefaults] = {
    "medium_temp": ApplicationDefaults(
        box_temp_c=Sourced(f_to_c(35.0), f"{COMMON}: walk-in coolers are held at 34-38 F"),
        evap_td_k=Sourced(
            f_to_k(10.0),
            f"{COMMON}: general cooler 10-12 F; {TROTT_TD}: 6 K at about 85 % RH",
        ),
        condenser_split_k=Sourced(14.0, f"{TROTT_SPLIT}; {COMMON}: medium temp 15-30 F"),
        metering_device="txv",
        has_receiver=True,
        receiver_source=f"{COMMON}: remote condensing units usually have a receiver",
        compression_ratio=SourcedRange(3.0, 5.5, "trade education notes: medium temp 3-5.5"),
        head_pressure_floor_c=_HP_FLOOR,
    ),
    "low_temp": ApplicationDefaults(
        box_temp_c=Sourced(f_to_c(-10.0), f"{COMMON}: walk-in freezers are held at -10 to 0 F"),
        evap_td_k=Sourced(f_to_k(10.0), f"{COMMON}: freezer about 10 F"),
        condenser_split_k=Sourced(f_to_k(15.0), f"{COMMON}: low temp split about 10-15 F"),
        metering_device="txv",
        has_receiver=True,
        receiver_source=f"{COMMON}: remote condensing units usually have a receiver",
        compression_ratio=SourcedRange(6.0, 13.0, "trade education notes: low temp 6-13"),
        head_pressure_floor_c=_HP_FLOOR,
    ),
    "reach_in": ApplicationDefaults(
        box_temp_c=Sourced(f_to_c(36.0), f"{COMMON}: reach-in coolers are held at 34-38 F"),
        evap_td_k=Sourced(f_to_k(10.0), f"{COMMON}: general cooler 10-12 F"),
        condenser_split_k=Sourced(14.0, TROTT_SPLIT),
        metering_device="capillary",
        has_receiver=False,
        receiver_source=f"{COMMON}: self-contained reach-ins are usually critically charged "
        "without a receiver",
        compression_ratio=SourcedRange(3.0, 5.5, "trade education notes: medium temp 3-5.5"),
        head_pressure_floor_c=_HP_FLOOR,
    ),
    "ice_machine": ApplicationDefaults(
        box_temp_c=None,
        evap_td_k=None,
        condenser_split_k=Sourced(14.0, TROTT_SPLIT),
        metering_device="txv",
        has_receiver=False,
        receiver_source=f"{COMMON}: self-contained ice machines usually have no receiver",
        compression_ratio=SourcedRange(
            3.0, 13.0, f"{OURS}: spans medium and low temp, the freeze cycle runs through both"
        ),
        head_pressure_floor_c=_HP_FLOOR,
    ),
    "other": ApplicationDefaults(
        box_temp_c=None,
        evap_td_k=None,
        condenser_split_k=Sourced(14.0, TROTT_SPLIT),
        metering_device="txv",
        has_receiver=None,
        receiver_source="unknown: give has_receiver in the design data",
        compression_ratio=SourcedRange(3.0, 13.0, f"{OURS}: spans medium and low temp"),
        head_pressure_floor_c=_HP_FLOOR,
    ),
}

_FIXED_RESTRICTOR = SourcedRange(
    f_to_k(5.0),
    f_to_k(20.0),
    f"{OURS}: a fixed restrictor's superheat floats with the load, so only a wide 5-20 F "
    "band means anything",
)
_TXV_COOLER = SourcedRange(
    f_to_k(8.0), f_to_k(10.0), f"{COMMON}: TXV medium temp 6-10 F, 8-10 F usual"
)
_TXV_FREEZER = SourcedRange(f_to_k(4.0), f_to_k(6.0), f"{COMMON}: TXV low temp 4-6 F")
_TXV_ICE = SourcedRange(
    f_to_k(4.0),
    f_to_k(10.0),
    f"{OURS}: spans the low and medium temp TXV ranges as the freeze cycle pulls down",
)
_TXV_OTHER = SourcedRange(
    f_to_k(6.0), f_to_k(12.0), f"{COMMON}: TXV medium temp 6-10 F, air conditioning 8-12 F"
)
_TXV_BY_APPLICATION: dict[Application, SourcedRange] = {
    "medium_temp": _TXV_COOLER,
    "low_temp": _TXV_FREEZER,
    "reach_in": _TXV_COOLER,
    "ice_machine": _TXV_ICE,
    "other": _TXV_OTHER,
}

#: (application, metering device) -> evaporator superheat range, K.
SUPERHEAT_DEFAULTS: dict[tuple[Application, MeteringDevice], SourcedRange] = {
    (app, device): (_TXV_BY_APPLICATION[app] if device in ("txv", "eev") else _FIXED_RESTRICTOR)
    for app in APPLICATIONS
    for device in ("txv", "eev", "capillary", "fixed_orifice")
}

#: has a receiver -> subcooling range, K.
SUBCOOLING_DEFAULTS: dict[bool, SourcedRange] = {
    False: SourcedRange(
        f_to_k(6.0),
        f_to_k(10.0),
        "Tomczyk, ACHR News 'The Professor' columns: receiverless 6-10 F",
    ),
    True: SourcedRange(
        0.0,
        f_to_k(5.0),
        f"{COMMON}: with a receiver 0-5 F, and not a charge indicator (use the sight glass)",
    ),
}

DISCHARGE_LINE_MAX_C = Sourced(
    f_to_c(225.0),
    "Tomczyk, ACHR News, 'Compressor Superheated Discharge Temps': at most 225 F",
)
COMPRESSION_RATIO_LIMIT = Sourced(10.0, f"{COMMON}: single-stage limit about 10:1")
GAS_COOLER_APPROACH_K = Sourced(
    3.0, f"{COMMON} (from memory): gas coolers are selected for a 2-3 K approach"
)
RUN_CAPACITOR_TOLERANCE_PCT = Sourced(
    DEFAULT_RUN_CAPACITOR_TOLERANCE_PCT,
    "typical run-capacitor tolerance +/-6 % (EIA-456-A, IEC 60252-1) when the can is not read",
)
DESIGN = "unit design data"
NAMEPLATE = "nameplate"


# --- per-unit resolution (vectorised over units) ------------------------------------------

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


def default_head_pressure_floor_c(app_codes: NDArray[np.integer]) -> FloatArray:
    """Condensing temperature the head-pressure control is assumed to hold, per unit."""
    return _by_application(app_codes, lambda d: d.head_pressure_floor_c.value)


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


# --- saturation targets (the glide choice) ---------------------------------------------


class SaturationCurve(Protocol):
    """The part of a saturation table the targets need (see ``saturation.SaturationTable``)."""

    def dew_temp_c(self, p_kpa_abs: FloatArray, *, strict: bool = True) -> FloatArray: ...
    def bubble_temp_c(self, p_kpa_abs: FloatArray, *, strict: bool = True) -> FloatArray: ...
    def dew_pressure_kpa_abs(self, t_c: FloatArray, *, strict: bool = True) -> FloatArray: ...
    def bubble_pressure_kpa_abs(self, t_c: FloatArray, *, strict: bool = True) -> FloatArray: ...


def _finite_apply(fn: Callable[..., FloatArray], x: FloatArray) -> FloatArray:
    """A lenient lookup (``strict=False``): NaN where the value is missing, not positive
    for a pressure, or off the table; the curve says so itself, without masking first."""
    return np.asarray(fn(np.asarray(x, dtype=np.float64), strict=False), dtype=np.float64)


def dew_temp_c(curve: SaturationCurve, p_kpa_abs: FloatArray) -> FloatArray:
    """Dew temperature, NaN where the pressure is missing or out of the curve's range."""
    return _finite_apply(curve.dew_temp_c, p_kpa_abs)


def bubble_temp_c(curve: SaturationCurve, p_kpa_abs: FloatArray) -> FloatArray:
    """Bubble temperature, NaN where the pressure is missing or out of the curve's range."""
    return _finite_apply(curve.bubble_temp_c, p_kpa_abs)


def mid_point_pressure_kpa_abs(curve: SaturationCurve, t_c: FloatArray) -> FloatArray:
    """The pressure whose mid-point temperature (dew + bubble) / 2 equals ``t_c``.

    The root lies between the dew pressure at ``t_c`` (mid-point below ``t_c``) and the
    bubble pressure at ``t_c`` (mid-point above); two secant steps in ln p bring it within
    about 1e-4 K, since ln p is nearly linear in temperature across a glide.
    """
    t = np.asarray(t_c, dtype=np.float64)
    p1 = _finite_apply(curve.dew_pressure_kpa_abs, t)
    p2 = _finite_apply(curve.bubble_pressure_kpa_abs, t)

    def mid(p: FloatArray) -> FloatArray:
        return 0.5 * (dew_temp_c(curve, p) + bubble_temp_c(curve, p))

    x1, x2 = np.log(p1), np.log(p2)
    m1, m2 = mid(p1), mid(p2)
    for _ in range(2):
        with np.errstate(invalid="ignore", divide="ignore"):
            span = m2 - m1
            x3 = np.where(np.abs(span) > 1e-9, x1 + (t - m1) * (x2 - x1) / span, x1)
        m3 = mid(np.exp(x3))
        # keep the newest point and the older one on the other side of the root
        replace_1 = np.sign(m3 - t) == np.sign(m1 - t)
        x1 = np.where(replace_1, x3, x1)
        m1 = np.where(replace_1, m3, m1)
        x2 = np.where(replace_1, x2, x3)
        m2 = np.where(replace_1, m2, m3)
    closer = np.abs(m1 - t) <= np.abs(m2 - t)
    best = np.where(closer, x1, x2)
    return np.exp(best)
