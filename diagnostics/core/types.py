"""Inputs and outputs of the visit diagnosis, as frozen dataclasses in SI units.

Everything inside the core is SI: temperatures in degrees C, temperature differences in K,
pressures in kPa (gauge where the name says ``_gauge``, as read on the gauges at the site's
elevation; absolute where it says ``_abs``), currents in A, voltages in V, capacitance in uF.
Conversions from the technician's units happen in ``units.py`` only.

A ``None`` in a ``UnitDesign`` means "use the application default" (``targets.py``); a
``None`` in a ``Reading`` means "not measured", and whatever needs it is not scored.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from typing import Literal, TypeVar, overload

Application = Literal["medium_temp", "low_temp", "reach_in", "ice_machine", "other"]
MeteringDevice = Literal["txv", "eev", "capillary", "fixed_orifice"]
CondenserType = Literal["air", "water"]
SightGlass = Literal["clear", "bubbles", "none"]
Status = Literal["ok", "watch", "fault", "not_scored"]
#: How a unit keeps its condensing temperature up in cold weather.
HeadPressureControl = Literal["none", "fan_cycling", "flooding", "variable_speed", "other"]
#: Which saturation temperature a glide blend's design TD and split are given on.
TemperatureBasis = Literal["dew", "mid_point"]

APPLICATIONS: tuple[Application, ...] = (
    "medium_temp",
    "low_temp",
    "reach_in",
    "ice_machine",
    "other",
)
METERING_DEVICES: tuple[MeteringDevice, ...] = ("txv", "eev", "capillary", "fixed_orifice")
CONDENSER_TYPES: tuple[CondenserType, ...] = ("air", "water")
SIGHT_GLASS_STATES: tuple[SightGlass, ...] = ("clear", "bubbles", "none")
STATUSES: tuple[Status, ...] = ("ok", "watch", "fault", "not_scored")
HEAD_PRESSURE_CONTROLS: tuple[HeadPressureControl, ...] = (
    "none",
    "fan_cycling",
    "flooding",
    "variable_speed",
    "other",
)
TEMPERATURE_BASES: tuple[TemperatureBasis, ...] = ("dew", "mid_point")

_Name = TypeVar("_Name", bound=str)


@overload
def choice(value: str | None, names: tuple[_Name, ...], default: _Name) -> _Name: ...
@overload
def choice(value: str | None, names: tuple[_Name, ...], default: None = None) -> _Name | None: ...
def choice(
    value: str | None, names: tuple[_Name, ...], default: _Name | None = None
) -> _Name | None:
    """``value`` as one of ``names`` (the values of one of the Literal types above), else
    ``default``: how a record's plain string becomes the core's name. The core reads a name
    it does not know as the default, so nothing is refused here."""
    return next((name for name in names if name == value), default)


@dataclass(frozen=True)
class UnitDesign:
    """What the unit was built and set up to do: nameplate and design data.

    Any numeric field left ``None`` falls back to the application default in
    ``targets.APPLICATION_DEFAULTS`` (or, for nameplate ratings with no sensible default such
    as RLA, leaves the dependent metric unscored).
    """

    refrigerant: str
    application: Application = "other"
    metering_device: MeteringDevice | None = None
    condenser_type: CondenserType = "air"
    has_receiver: bool | None = None
    design_box_temp_c: float | None = None
    design_evap_td_k: float | None = None
    design_condenser_split_k: float | None = None
    superheat_min_k: float | None = None
    superheat_max_k: float | None = None
    high_pressure_cutout_kpa_gauge: float | None = None
    nameplate_volts: float | None = None
    #: Upper end of a dual voltage rating such as 208-230 V (``nameplate_volts`` is the lower).
    nameplate_volts_max: float | None = None
    phase: int | None = None
    hertz: float | None = None
    rla_a: float | None = None
    lra_a: float | None = None
    run_capacitor_uf: float | None = None
    run_capacitor_tolerance_pct: float | None = None
    start_capacitor_min_uf: float | None = None
    start_capacitor_max_uf: float | None = None
    #: How the head is held up in cold weather; ``None``: the application default.
    head_pressure_control: HeadPressureControl | None = None
    #: The condensing temperature that control holds (its set point); ``None``: the default
    #: for its kind.
    head_pressure_setpoint_c: float | None = None
    #: The saturation temperature the design TD and split of a glide blend are given on:
    #: the dew point (compressor ratings use it, and so does the vapour column a technician
    #: reads for suction) unless the design data says mid-point.
    temperature_basis: TemperatureBasis = "dew"


@dataclass(frozen=True)
class Reading:
    """One set of readings taken at a visit; every field may be missing (``None``)."""

    box_temp_c: float | None = None
    #: Air entering the condenser (the ambient the condenser sees).
    entering_air_temp_c: float | None = None
    suction_kpa_gauge: float | None = None
    #: Suction line at the evaporator outlet (where the bulb of a TXV sits).
    suction_line_temp_c: float | None = None
    head_kpa_gauge: float | None = None
    #: Liquid line at the condenser or receiver outlet; for R-744 above its critical point,
    #: the gas-cooler outlet temperature.
    liquid_line_temp_c: float | None = None
    discharge_line_temp_c: float | None = None
    #: One value per leg measured (one for single-phase, three for three-phase).
    compressor_amps: tuple[float, ...] = ()
    #: Line-to-line voltages, one per pair of legs measured.
    supply_volts: tuple[float, ...] = ()
    run_capacitor_uf: float | None = None
    start_capacitor_uf: float | None = None
    #: The control is calling for the compressor: with ``compressor_running`` false that is a
    #: failed start; without a call the unit is simply off-cycle.
    call_for_cooling: bool | None = None
    #: The unit was defrosting when read: the box and the cycle are not judged.
    in_defrost: bool | None = None
    compressor_running: bool | None = None
    condenser_fan_running: bool | None = None
    evaporator_fans_running: bool | None = None
    coil_iced: bool | None = None
    sight_glass: SightGlass | None = None


@dataclass(frozen=True)
class Target:
    """A value the unit should reach, the range accepted as ok, and where it came from."""

    name: str
    value: float
    low: float | None
    high: float | None
    unit: str
    source: str


@dataclass(frozen=True)
class Metric:
    """One scored quantity: measured against its target, with the status and points it cost.

    ``deviation`` is how far the measurement lies outside the ok range (positive above,
    negative below, 0 inside), in ``unit``. A metric that could not be scored has status
    ``"not_scored"``, no points and a ``reason`` saying why.
    """

    name: str
    measured: float | None
    target: float | None
    low: float | None
    high: float | None
    deviation: float | None
    unit: str
    status: Status
    points_lost: float
    reason: str = ""


@dataclass(frozen=True)
class Finding:
    """A probable cause drawn from the metrics, with the evidence behind it."""

    code: str
    title: str
    evidence: tuple[str, ...]
    confidence: float
    advice: str
    #: Codes of neighbouring causes these readings cannot tell apart from this one.
    alternatives: tuple[str, ...] = ()
    #: The check that would decide between this cause and its alternatives.
    deciding_check: str = ""


@dataclass(frozen=True)
class Caution:
    """A safety note to show with any advice to act."""

    code: str
    text: str


@dataclass(frozen=True)
class DerivedValues:
    """Quantities computed from the reading with the property engine (NaN-free: ``None``)."""

    suction_kpa_abs: float | None = None
    head_kpa_abs: float | None = None
    evaporating_dew_c: float | None = None
    evaporating_bubble_c: float | None = None
    #: The evaporating temperature used for the evaporator TD, on the unit's design basis.
    evaporating_c: float | None = None
    condensing_dew_c: float | None = None
    condensing_bubble_c: float | None = None
    #: The condensing temperature used for the condenser split, on the unit's design basis.
    condensing_c: float | None = None
    superheat_k: float | None = None
    subcooling_k: float | None = None
    evaporator_td_k: float | None = None
    condenser_split_k: float | None = None
    compression_ratio: float | None = None
    #: R-744 with the head pressure above its critical pressure: no condensing exists.
    transcritical: bool = False
    #: Gas-cooler outlet temperature minus entering air (R-744 above its critical point).
    gas_cooler_approach_k: float | None = None
    voltage_unbalance_pct: float | None = None
    current_unbalance_pct: float | None = None
    nema_derating_factor: float | None = None


@dataclass(frozen=True)
class Diagnosis:
    """The whole judgement on one reading set, as stored with its algorithm version."""

    #: 0-100, or None when the set held nothing to judge.
    score: float | None
    algorithm_version: str
    targets: tuple[Target, ...]
    metrics: tuple[Metric, ...]
    findings: tuple[Finding, ...]
    cautions: tuple[Caution, ...]
    energy_penalty_pct: float | None
    derived: DerivedValues = field(default_factory=DerivedValues)
    #: The saturation point TD and split are taken on for this unit (its design basis), in words.
    glide_choice: str = ""
