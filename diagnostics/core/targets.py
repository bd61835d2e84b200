"""What a unit should read: the targets' default values with their sources, and the
saturation pressure a target temperature is read at on the unit's basis.

Targets come from three places: the unit's own design data (``UnitDesign``), the defaults
for its application below when a design field is missing (looked up per unit, vectorised, in
``unit_defaults``), and the reading's own conditions (the box and entering-air temperatures
the targets are measured against):

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
or the liquid stops being saturated). The evaporator TD and the condenser split are taken on
the basis the unit's design data is given on (``UnitDesign.temperature_basis``): the **dew
point** unless the design says mid-point. Dew is the basis of compressor ratings and of the
vapour column a technician reads for suction on a pressure-temperature chart, so a design TD
or split copied from a catalogue is a dew-point figure; measuring it on the mid-point would
add half the glide to every TD (and take it off every split), which on R-407A is enough to
call a healthy evaporator starved of air. Target pressures are the pressures whose temperature
on that basis equals the target temperature. For a pure fluid or an azeotrope dew, bubble and
mid-point coincide, so the basis changes nothing there.

Head-pressure control
---------------------
In cold weather an air-cooled condenser would condense far below its design temperature, so
most remote units hold the head up (fan cycling, a flooding valve, or variable-speed fans) at
a set point. While the control holds the head, the split says nothing about the condenser:
such a reading is excused (not scored, not trended, not charged as energy). A reading counts
as held only when the unit has a control, a clean condenser would condense below the set
point at that entering air, and the measured condensing temperature sits in the band the kind
of control holds (``HEAD_PRESSURE_CONTROL_DEFAULTS``); a unit without control is never
excused, and a condensing temperature above the band is the condenser's own doing.
"""

from __future__ import annotations

from collections.abc import Callable
from dataclasses import dataclass
from typing import Protocol

import numpy as np
from numpy.typing import ArrayLike, NDArray

from diagnostics.core.electrical import DEFAULT_RUN_CAPACITOR_TOLERANCE_PCT
from diagnostics.core.sources import Sourced
from diagnostics.core.types import (
    APPLICATIONS,
    METERING_DEVICES,
    Application,
    HeadPressureControl,
    MeteringDevice,
    TemperatureBasis,
)

FloatArray = NDArray[np.float64]

#: What each temperature basis means, in words for the diagnosis, page and report.
BASIS_TEXT: dict[TemperatureBasis, str] = {
    "dew": (
        "Superheat is measured from the dew point and subcooling from the bubble point. The "
        "evaporator TD and the condenser split are taken on the dew point, the basis the "
        "unit's design data is given on (and the basis of compressor ratings). Pure "
        "refrigerants and azeotropes have no glide: dew and bubble are the same."
    ),
    "mid_point": (
        "Superheat is measured from the dew point and subcooling from the bubble point. The "
        "evaporator TD and the condenser split are taken on the mid-point of the dew and "
        "bubble temperatures, the basis the unit's design data is given on. Pure refrigerants "
        "and azeotropes have no glide: dew and bubble are the same."
    ),
}

TROTT_TD = "Trott & Welch, Refrigeration and Air-Conditioning, 4th ed., 10.3"
TROTT_SPLIT = "Trott & Welch, 3rd ed., Table 10.2 (14-15 K above design dry bulb)"
OURS = "Rimewatch choice"
COMMON = "common practice"


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
    head_pressure_control: HeadPressureControl
    head_pressure_control_source: str


@dataclass(frozen=True)
class HeadControlDefaults:
    """What a kind of head-pressure control holds: its usual set point and the band of
    condensing temperatures (below, above the set point) a held head is found in."""

    setpoint_c: float
    below_k: float
    above_k: float
    source: str


_SETPOINT = (
    "common practice (from memory): head-pressure controls hold condensing near 85-100 F; "
    "90 F is taken when the unit does not say (docs/references.md §10)"
)
#: Kind of control -> its defaults. "none" holds nothing (never excused).
HEAD_PRESSURE_CONTROL_DEFAULTS: dict[HeadPressureControl, HeadControlDefaults] = {
    "flooding": HeadControlDefaults(
        f_to_c(90.0),
        f_to_k(5.0),
        f_to_k(4.0),
        f"{_SETPOINT}; {OURS}: a flooding valve holds within a few F of its setting",
    ),
    "variable_speed": HeadControlDefaults(
        f_to_c(90.0),
        f_to_k(5.0),
        f_to_k(4.0),
        f"{_SETPOINT}; {OURS}: variable-speed fans hold within a few F of the set point",
    ),
    "fan_cycling": HeadControlDefaults(
        f_to_c(90.0),
        f_to_k(15.0),
        f_to_k(6.0),
        f"{_SETPOINT}; {OURS}: cycling fans let the head swing between cut-in and cut-out, "
        "about 15 F below to 6 F above the set point",
    ),
    "other": HeadControlDefaults(
        f_to_c(90.0),
        f_to_k(15.0),
        f_to_k(6.0),
        f"{_SETPOINT}; {OURS}: an unnamed control is given the widest band",
    ),
}
_REMOTE_CONTROL = (
    f"{COMMON}: remote condensing units usually hold the head up in cold weather; the kind "
    "is not known, so the widest band applies"
)
_NO_CONTROL = f"{COMMON}: self-contained units usually have no head-pressure control"

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
        head_pressure_control="other",
        head_pressure_control_source=_REMOTE_CONTROL,
    ),
    "low_temp": ApplicationDefaults(
        box_temp_c=Sourced(f_to_c(-10.0), f"{COMMON}: walk-in freezers are held at -10 to 0 F"),
        evap_td_k=Sourced(f_to_k(10.0), f"{COMMON}: freezer about 10 F"),
        condenser_split_k=Sourced(f_to_k(15.0), f"{COMMON}: low temp split about 10-15 F"),
        metering_device="txv",
        has_receiver=True,
        receiver_source=f"{COMMON}: remote condensing units usually have a receiver",
        compression_ratio=SourcedRange(6.0, 13.0, "trade education notes: low temp 6-13"),
        head_pressure_control="other",
        head_pressure_control_source=_REMOTE_CONTROL,
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
        head_pressure_control="none",
        head_pressure_control_source=_NO_CONTROL,
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
        head_pressure_control="fan_cycling",
        head_pressure_control_source=f"{COMMON} (from memory): air-cooled ice machines usually "
        "cycle their condenser fan on head pressure",
    ),
    "other": ApplicationDefaults(
        box_temp_c=None,
        evap_td_k=None,
        condenser_split_k=Sourced(14.0, TROTT_SPLIT),
        metering_device="txv",
        has_receiver=None,
        receiver_source="unknown: give has_receiver in the design data",
        compression_ratio=SourcedRange(3.0, 13.0, f"{OURS}: spans medium and low temp"),
        head_pressure_control="other",
        head_pressure_control_source=_REMOTE_CONTROL,
    ),
}

_FIXED_RESTRICTOR = SourcedRange(
    f_to_k(5.0),
    f_to_k(20.0),
    f"{OURS}: a fixed restrictor's superheat floats with the load, so only a wide 5-20 F "
    "band means anything",
)
_TXV_COOLER = SourcedRange(
    f_to_k(6.0), f_to_k(10.0), f"{COMMON}: TXV medium temp 6-10 F (8-10 F usual)"
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
    for device in METERING_DEVICES
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

# --- saturation targets (the glide choice) ---------------------------------------------


class SaturationCurve(Protocol):
    """The part of a saturation table the targets need (see ``saturation.SaturationTable``)."""

    def dew_temp_c(self, p_kpa_abs: ArrayLike, *, strict: bool = True) -> float | FloatArray: ...
    def bubble_temp_c(self, p_kpa_abs: ArrayLike, *, strict: bool = True) -> float | FloatArray: ...
    def dew_pressure_kpa_abs(
        self, t_c: ArrayLike, *, strict: bool = True
    ) -> float | FloatArray: ...
    def bubble_pressure_kpa_abs(
        self, t_c: ArrayLike, *, strict: bool = True
    ) -> float | FloatArray: ...


def _finite_apply(fn: Callable[..., float | FloatArray], x: ArrayLike) -> FloatArray:
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


def basis_pressure_kpa_abs(
    curve: SaturationCurve, t_c: FloatArray, mid_point: NDArray[np.bool_]
) -> FloatArray:
    """The pressure whose temperature on each unit's basis equals ``t_c``: the dew pressure,
    or where ``mid_point`` (per column of ``t_c``) the mid-point pressure."""
    t = np.asarray(t_c, dtype=np.float64)
    out = _finite_apply(curve.dew_pressure_kpa_abs, t)
    cols = np.flatnonzero(mid_point)
    if cols.size:
        out[..., cols] = mid_point_pressure_kpa_abs(curve, t[..., cols])
    return out
