"""The visit diagnosis: one implementation for a single reading and for a million.

``diagnose_batch`` works on columns (numpy arrays, NaN for missing) and computes targets,
derived values, metric statuses and points, the visit score, the finding masks and the energy
penalty for every row at once, the saturation targets' pressures included.

What is stored per row is ``pack``'s: numbers and codes in one float32 row (a few hundred
bytes, no JSON), made on columns for the whole batch. ``expand`` writes the texts (reasons,
evidence, sources, advice, cautions) when rows are read, once per distinct case; a single
POST, ``BatchResult.diagnosis(i)`` and any page or report read diagnoses through it, so
what is shown is always what was stored.

Saturation temperatures come from ``saturation.py`` (dew and bubble, see ``targets.py`` for
the glide choice), gauge pressures are made absolute with the standard atmosphere at the
site's elevation. Cycle metrics (TD, split, superheat, subcooling, compression ratio,
discharge temperature) are not scored when the compressor is reported stopped. R-744 with the
head above its critical pressure has no condensing temperature and no subcooling: the
gas-cooler approach and the head pressure are scored instead.
"""

from __future__ import annotations

import functools
import math
import string
from collections.abc import Callable, Mapping, Sequence
from dataclasses import dataclass, field
from typing import Any

import numpy as np
from numpy.typing import ArrayLike, NDArray

from diagnostics.core import (
    atmosphere,
    electrical,
    energy,
    findings,
    refrigerants,
    saturation,
    units,
)
from diagnostics.core import scoring as sc
from diagnostics.core import targets as tg
from diagnostics.core.types import (
    APPLICATIONS,
    HEAD_PRESSURE_CONTROLS,
    METERING_DEVICES,
    SIGHT_GLASS_STATES,
    STATUSES,
    Caution,
    DerivedValues,
    Diagnosis,
    Finding,
    Metric,
    Reading,
    Target,
    UnitDesign,
)

FloatArray = NDArray[np.float64]
IntArray = NDArray[np.int8]

#: Bump whenever a change alters any stored result; ``manage.py rescore`` keys on it.
ALGORITHM_VERSION = "2026.1"

#: Legs per reading kept in the columns (three-phase); single-phase uses the first.
LEGS = 3

READING_SCALARS: tuple[str, ...] = (
    "box_temp_c",
    "entering_air_temp_c",
    "suction_kpa_gauge",
    "suction_line_temp_c",
    "head_kpa_gauge",
    "liquid_line_temp_c",
    "discharge_line_temp_c",
    "run_capacitor_uf",
    "start_capacitor_uf",
)
READING_FLAGS: tuple[str, ...] = (
    "call_for_cooling",
    "in_defrost",
    "compressor_running",
    "condenser_fan_running",
    "evaporator_fans_running",
    "coil_iced",
)


# --- columns in ----------------------------------------------------------------------------


def _col(values: Sequence[float | None]) -> FloatArray:
    return np.array([np.nan if v is None else float(v) for v in values], dtype=np.float64)


def _legs(values: Sequence[Sequence[float]]) -> FloatArray:
    out = np.full((len(values), LEGS), np.nan)
    for i, legs in enumerate(values):
        for j, v in enumerate(tuple(legs)[:LEGS]):
            if v is not None:
                out[i, j] = float(v)
    return out


@dataclass(frozen=True)
class ReadingColumns:
    """Readings as columns: float arrays of one length, NaN for missing.

    ``compressor_amps`` and ``supply_volts`` are (n, 3) arrays (one column per leg, NaN
    where fewer were measured); the flags are 1.0 / 0.0 / NaN; ``sight_glass`` is the index
    into ``types.SIGHT_GLASS_STATES`` or NaN.
    """

    box_temp_c: FloatArray
    entering_air_temp_c: FloatArray
    suction_kpa_gauge: FloatArray
    suction_line_temp_c: FloatArray
    head_kpa_gauge: FloatArray
    liquid_line_temp_c: FloatArray
    discharge_line_temp_c: FloatArray
    run_capacitor_uf: FloatArray
    start_capacitor_uf: FloatArray
    compressor_amps: FloatArray
    supply_volts: FloatArray
    call_for_cooling: FloatArray
    in_defrost: FloatArray
    compressor_running: FloatArray
    condenser_fan_running: FloatArray
    evaporator_fans_running: FloatArray
    coil_iced: FloatArray
    sight_glass: FloatArray

    def __len__(self) -> int:
        return int(self.box_temp_c.shape[0])

    @classmethod
    def from_arrays(cls, n: int, **columns: ArrayLike) -> ReadingColumns:
        """Columns from whatever arrays are given; every other column is all-missing."""
        unknown = set(columns) - set(cls.__dataclass_fields__)
        if unknown:
            raise TypeError(f"unknown reading columns: {sorted(unknown)}")
        data: dict[str, FloatArray] = {}
        for name in cls.__dataclass_fields__:
            shape: tuple[int, ...] = (
                (n, LEGS) if name in ("compressor_amps", "supply_volts") else (n,)
            )
            if name in columns:
                arr = np.asarray(columns[name], dtype=np.float64)
                if arr.shape != shape:
                    if len(shape) == 2 and arr.shape == (n,):
                        arr = np.column_stack([arr, np.full((n, LEGS - 1), np.nan)])
                    else:
                        raise ValueError(f"{name}: expected shape {shape}, got {arr.shape}")
                data[name] = arr
            else:
                data[name] = np.full(shape, np.nan)
        return cls(**data)

    @classmethod
    def from_readings(cls, readings: Sequence[Reading]) -> ReadingColumns:
        """Columns from reading dataclasses (the single-reading path and tests)."""
        data: dict[str, FloatArray] = {
            name: _col([getattr(r, name) for r in readings]) for name in READING_SCALARS
        }
        for name in READING_FLAGS:
            data[name] = _col([getattr(r, name) for r in readings])
        data["compressor_amps"] = _legs([r.compressor_amps or () for r in readings])
        data["supply_volts"] = _legs([r.supply_volts or () for r in readings])
        data["sight_glass"] = _col(
            [
                SIGHT_GLASS_STATES.index(r.sight_glass)
                if r.sight_glass in SIGHT_GLASS_STATES
                else None
                for r in readings
            ]
        )
        return cls(**data)


UNIT_FLOATS: tuple[str, ...] = (
    "design_box_temp_c",
    "design_evap_td_k",
    "design_condenser_split_k",
    "superheat_min_k",
    "superheat_max_k",
    "high_pressure_cutout_kpa_gauge",
    "nameplate_volts",
    "nameplate_volts_max",
    "phase",
    "hertz",
    "rla_a",
    "lra_a",
    "run_capacitor_uf",
    "run_capacitor_tolerance_pct",
    "start_capacitor_min_uf",
    "start_capacitor_max_uf",
    "head_pressure_setpoint_c",
)


@dataclass(frozen=True)
class UnitColumns:
    """Unit designs as columns (one entry per unit; readings point at them by index)."""

    designs: tuple[UnitDesign, ...]
    refrigerants: tuple[str, ...]
    refrigerant_code: NDArray[np.intp]
    application_code: NDArray[np.intp]
    metering_code: NDArray[np.intp]
    metering_given: NDArray[np.bool_]
    water_cooled: NDArray[np.bool_]
    has_receiver: FloatArray
    #: Kind of head-pressure control (index into ``types.HEAD_PRESSURE_CONTROLS``), the
    #: unit's or its application's default, and whether the unit gave it.
    control_code: NDArray[np.intp]
    control_given: NDArray[np.bool_]
    #: The design TD and split are given on the mid-point (else the dew point).
    basis_mid: NDArray[np.bool_]
    floats: Mapping[str, FloatArray]

    def __len__(self) -> int:
        return len(self.designs)

    @classmethod
    def from_designs(cls, designs: Sequence[UnitDesign]) -> UnitColumns:
        """Columns from design dataclasses; refrigerant names are normalised ('R404A')."""
        names = [refrigerants.normalise_designation(d.refrigerant) for d in designs]
        distinct = tuple(dict.fromkeys(names))
        apps = [d.application if d.application in APPLICATIONS else "other" for d in designs]
        app_code = np.array([APPLICATIONS.index(a) for a in apps], dtype=np.intp)
        given = np.array([d.metering_device in METERING_DEVICES for d in designs], dtype=bool)
        default_meter = tg.default_metering_codes(app_code).astype(np.intp)
        meter = np.array(
            [
                METERING_DEVICES.index(d.metering_device)
                if d.metering_device in METERING_DEVICES
                else -1
                for d in designs
            ],
            dtype=np.intp,
        )
        meter = np.where(given, meter, default_meter)
        receiver = _col(
            [None if d.has_receiver is None else float(d.has_receiver) for d in designs]
        )
        receiver = np.where(np.isnan(receiver), tg.default_has_receiver(app_code), receiver)
        control_given = np.array(
            [d.head_pressure_control in HEAD_PRESSURE_CONTROLS for d in designs], dtype=bool
        )
        control = np.array(
            [
                HEAD_PRESSURE_CONTROLS.index(d.head_pressure_control) if given else 0
                for d, given in zip(designs, control_given, strict=True)
            ],
            dtype=np.intp,
        )
        control = np.where(control_given, control, tg.default_head_pressure_control_codes(app_code))
        return cls(
            designs=tuple(designs),
            refrigerants=distinct,
            refrigerant_code=np.array([distinct.index(n) for n in names], dtype=np.intp),
            application_code=app_code,
            metering_code=meter,
            metering_given=given,
            water_cooled=np.array([d.condenser_type == "water" for d in designs], dtype=bool),
            has_receiver=receiver,
            control_code=control,
            control_given=control_given,
            basis_mid=np.array([d.temperature_basis == "mid_point" for d in designs], dtype=bool),
            floats={name: _col([getattr(d, name) for d in designs]) for name in UNIT_FLOATS},
        )


# --- per-unit targets ---------------------------------------------------------------------


def _unit_targets(u: UnitColumns) -> dict[str, FloatArray]:
    """Every design quantity per unit, design data first and application default second.

    ``*_origin`` arrays say where each came from (``targets.FROM_DESIGN`` / ``FROM_DEFAULT``
    / ``MISSING``); the per-row text of the sources is built from them lazily.
    """
    f, app = u.floats, u.application_code
    out: dict[str, FloatArray] = {}

    def put(name: str, resolved: tg.Resolved) -> None:
        out[name] = resolved.value
        out[f"{name}_origin"] = resolved.origin.astype(np.float64)

    box = tg.resolve(f["design_box_temp_c"], tg.default_box_temp_c(app))
    # An ice machine makes ice: its bin is no box held at a set point, so no box target.
    ice = app == APPLICATIONS.index("ice_machine")
    put(
        "box_temp_c",
        tg.Resolved(np.where(ice, np.nan, box.value), np.where(ice, tg.MISSING, box.origin)),
    )
    out["ice_machine"] = ice.astype(np.float64)
    put("evap_td_k", tg.resolve(f["design_evap_td_k"], tg.default_evap_td_k(app)))
    put(
        "split_k",
        tg.resolve(f["design_condenser_split_k"], tg.default_condenser_split_k(app)),
    )
    sh_low, sh_high = tg.default_superheat_range_k(app, u.metering_code)
    put("superheat_min_k", tg.resolve(f["superheat_min_k"], sh_low))
    put("superheat_max_k", tg.resolve(f["superheat_max_k"], sh_high))
    sc_low, sc_high = tg.subcooling_range_k(u.has_receiver)
    out["subcooling_min_k"], out["subcooling_max_k"] = sc_low, sc_high
    setpoint, held_low, held_high = tg.head_control_band(
        u.control_code, f["head_pressure_setpoint_c"]
    )
    out["head_setpoint_c"], out["head_held_low_c"], out["head_held_high_c"] = (
        setpoint,
        held_low,
        held_high,
    )
    out["head_setpoint_c_origin"] = np.where(
        np.isnan(setpoint),
        tg.MISSING,
        np.where(np.isnan(f["head_pressure_setpoint_c"]), tg.FROM_DEFAULT, tg.FROM_DESIGN),
    ).astype(np.float64)
    out["basis_mid"] = u.basis_mid.astype(np.float64)
    out["cr_typical_low"], typical_high = tg.compression_ratio_typical(app)
    # a freezer runs ratios a cooler never should: its own typical top where that is higher
    out["cr_limit"] = np.fmax(typical_high, tg.COMPRESSION_RATIO_LIMIT.value)
    out["cutout_kpa_gauge"] = f["high_pressure_cutout_kpa_gauge"]
    out["rla_a"], out["lra_a"] = f["rla_a"], f["lra_a"]
    volts, volts_max = f["nameplate_volts"], f["nameplate_volts_max"]
    upper = np.where(np.isnan(volts_max), volts, volts_max)
    tol = electrical.NEMA_VOLTAGE_TOLERANCE_PCT / 100.0
    out["volts_low"], out["volts_high"] = volts * (1 - tol), upper * (1 + tol)
    out["volts_nominal"] = 0.5 * (volts + upper)
    out["phase"] = f["phase"]
    rating = f["run_capacitor_uf"]
    put(
        "run_cap_tol_pct",
        tg.resolve(f["run_capacitor_tolerance_pct"], tg.RUN_CAPACITOR_TOLERANCE_PCT.value),
    )
    out["run_cap_tol_pct"] = np.where(np.isnan(rating), np.nan, out["run_cap_tol_pct"])
    out["run_cap_uf"] = rating
    out["run_cap_low"] = rating * (1 - out["run_cap_tol_pct"] / 100.0)
    out["run_cap_high"] = rating * (1 + out["run_cap_tol_pct"] / 100.0)
    s_min, s_max = f["start_capacitor_min_uf"], f["start_capacitor_max_uf"]
    s_min, s_max = np.where(np.isnan(s_min), s_max, s_min), np.where(np.isnan(s_max), s_min, s_max)
    out["start_cap_low"], out["start_cap_high"] = s_min, s_max
    out["start_cap_uf"] = 0.5 * (s_min + s_max)
    out["water_cooled"] = u.water_cooled.astype(np.float64)
    return out


# --- metric columns and the batch result ----------------------------------------------------

#: Head-pressure controls that stop the condenser fans to hold the head.
_FAN_CONTROLS = np.array(
    [HEAD_PRESSURE_CONTROLS.index(k) for k in ("fan_cycling", "variable_speed", "other")]
)

#: Why a metric was not scored, beyond missing inputs (which are worked out per row).
REASON_NONE = 0
REASON_WATER_COOLED = 1
REASON_TRANSCRITICAL = 2
REASON_HEAD_CONTROL = 3
REASON_HIDDEN = 4
REASON_RUNNING_UNKNOWN = 5
REASON_SINGLE_PHASE = 6
REASON_COMPRESSOR_OFF = 7
REASON_DEFROST = 8
REASON_ICE_MACHINE = 9

REASON_TEXT: dict[int, str] = {
    REASON_WATER_COOLED: "water-cooled condenser: there is no air split to score",
    REASON_TRANSCRITICAL: "R-744 above its critical pressure: no condensing temperature or "
    "subcooling exists; the gas-cooler approach and head pressure are scored instead",
    REASON_HEAD_CONTROL: "the head-pressure control was holding condensing up at this "
    "entering-air temperature, so the split says nothing about the condenser; judge the coil "
    "by eye or on a warmer day",
    REASON_RUNNING_UNKNOWN: "whether the compressor was running was not given",
    REASON_SINGLE_PHASE: "single-phase supply: there is no three-phase unbalance",
    REASON_COMPRESSOR_OFF: "compressor reported not running: cycle readings are not judged",
    REASON_DEFROST: "the unit was defrosting: the box and the refrigeration cycle are not "
    "judged until it is back on cooling",
    REASON_ICE_MACHINE: "an ice machine is judged on its refrigeration cycle and electrics, "
    "not on the temperature of its bin",
}

#: Per metric: the reading fields it needs and the design data its target needs (for the
#: "not scored: missing ..." text, built per row).
METRIC_NEEDS: dict[str, tuple[tuple[str, ...], str]] = {
    "box_temp": (("box_temp_c",), "a design box temperature"),
    "evaporator_td": (("box_temp_c", "suction_kpa_gauge"), "a design evaporator TD"),
    "condenser_split": (("entering_air_temp_c", "head_kpa_gauge"), "a design condenser split"),
    "superheat": (("suction_kpa_gauge", "suction_line_temp_c"), "a superheat range"),
    "subcooling": (("head_kpa_gauge", "liquid_line_temp_c"), "whether it has a receiver"),
    "discharge_line_temp": (("discharge_line_temp_c",), "a discharge limit"),
    "compression_ratio": (("suction_kpa_gauge", "head_kpa_gauge"), "a compression-ratio limit"),
    "head_pressure": (("head_kpa_gauge",), "a high-pressure cut-out"),
    "gas_cooler_approach": (("liquid_line_temp_c", "entering_air_temp_c"), "an approach target"),
    "running_amps": (("compressor_amps", "compressor_running"), "the nameplate RLA"),
    "standstill_amps": (("compressor_amps", "compressor_running"), "the nameplate LRA"),
    "supply_voltage": (("supply_volts",), "the nameplate voltage"),
    "voltage_unbalance": (("supply_volts",), "an unbalance limit"),
    "current_unbalance": (("compressor_amps",), "an unbalance limit"),
    "run_capacitor": (("run_capacitor_uf",), "the run capacitor's rating"),
    "start_capacitor": (("start_capacitor_uf",), "the start capacitor's range"),
}
#: Reasons that make a metric inapplicable to the unit (its target is not listed either).
NOT_APPLICABLE = (
    REASON_WATER_COOLED,
    REASON_TRANSCRITICAL,
    REASON_SINGLE_PHASE,
    REASON_ICE_MACHINE,
)
_NOT_APPLICABLE = np.isin(np.arange(max(REASON_TEXT) + 1), NOT_APPLICABLE)
CYCLE_METRICS = (
    "evaporator_td",
    "condenser_split",
    "superheat",
    "subcooling",
    "discharge_line_temp",
    "compression_ratio",
)


@dataclass(frozen=True)
class MetricColumns:
    """One metric over the batch."""

    measured: FloatArray
    target: FloatArray
    low: FloatArray
    high: FloatArray
    deviation: FloatArray
    status: IntArray
    points: FloatArray
    reason: IntArray


DERIVED_NAMES: tuple[str, ...] = tuple(DerivedValues.__dataclass_fields__)


@dataclass(frozen=True)
class BatchResult:
    """Columnar results of ``diagnose_batch``; ``diagnosis(i)`` gives row i as dataclasses."""

    algorithm_version: str
    score: FloatArray
    metrics: Mapping[str, MetricColumns]
    derived: Mapping[str, FloatArray]
    #: Saturation targets per row: evaporating and condensing temperature and gauge pressure
    #: (``evaporating_c``, ``suction_kpa_gauge``, ...), with the edges of their ok bands
    #: (``evaporating_c_low``, ``suction_kpa_gauge_high``, ...).
    saturation_targets: Mapping[str, FloatArray]
    finding_mask: NDArray[np.uint32]
    finding_confidence: FloatArray
    energy_penalty_pct: FloatArray
    signals: Mapping[str, NDArray[np.bool_]]
    # kept for building rows lazily
    units: UnitColumns = field(repr=False)
    unit_index: NDArray[np.intp] = field(repr=False)
    readings: ReadingColumns = field(repr=False)
    #: Design quantities per unit (index with ``unit_index``), with their origins.
    unit_targets: Mapping[str, FloatArray] = field(repr=False)
    atmosphere_kpa: FloatArray = field(repr=False)

    def __len__(self) -> int:
        return int(self.score.shape[0])

    @property
    def finding_codes(self) -> tuple[str, ...]:
        """Finding code of each bit of ``finding_mask``, lowest bit first."""
        return findings.RULE_CODES

    def status_names(self, metric: str) -> NDArray[np.str_]:
        """The status of a metric as strings (built on demand for the whole batch)."""
        return np.asarray(STATUSES)[self.metrics[metric].status]

    def diagnosis(self, i: int) -> Diagnosis:
        """Row ``i`` as the dataclasses a single POST returns."""
        return _row_diagnosis(self, i)

    @functools.cached_property
    def packed(self) -> NDArray[np.float32]:
        """Every row in its stored form (``pack``), computed once."""
        return pack(self)

    def details(self) -> list[dict[str, Any]]:
        """Every row's targets, metrics, findings and cautions with their texts, read back
        from the stored form as any stored diagnosis is."""
        return expand(self.packed)


# --- the batch -----------------------------------------------------------------------------


def _finite(x: FloatArray) -> FloatArray:
    return np.where(np.isfinite(x), x, np.nan)


def _leg_extreme(values: FloatArray, largest: bool) -> FloatArray:
    """Largest (or smallest) leg per row, NaN when no leg was measured (no warnings)."""
    pick = np.fmax if largest else np.fmin
    out = values[:, 0].copy()
    for leg in range(1, values.shape[1]):
        pick(out, values[:, leg], out=out)
    return out


def _atmosphere_kpa(elevation_m: ArrayLike, n: int) -> FloatArray:
    """Standard-atmosphere pressure per row; NaN (pressures unscored) for an impossible
    elevation, so one bad site cannot stop a batch."""
    z = np.broadcast_to(np.asarray(elevation_m, dtype=np.float64), (n,))
    usable = np.isfinite(z) & (z >= atmosphere.MIN_ELEVATION_M) & (z <= atmosphere.MAX_ELEVATION_M)
    atm = np.full(n, np.nan)
    if usable.any():
        atm[usable] = atmosphere.standard_pressure_kpa(z[usable])
    return atm


#: Pressure step for the slope of a saturation curve at a reading, kPa.
_SLOPE_STEP_KPA = 1.0

#: Up to this many designs, a batch's unit columns and targets are kept for the next call.
_FEW_UNITS = 4


@functools.lru_cache(maxsize=1024)
def _few_units(designs: tuple[UnitDesign, ...]) -> tuple[UnitColumns, dict[str, FloatArray]]:
    """The columns and design targets of a few units, kept per design: a single reading
    would otherwise rebuild them on every POST, though a unit's design rarely changes (a
    changed design is another key). The arrays are read-only, as they are shared."""
    uc = UnitColumns.from_designs(designs)
    per_unit = _unit_targets(uc)
    for array in (
        *per_unit.values(),
        *uc.floats.values(),
        uc.refrigerant_code,
        uc.application_code,
        uc.metering_code,
        uc.metering_given,
        uc.water_cooled,
        uc.has_receiver,
        uc.control_code,
        uc.control_given,
        uc.basis_mid,
    ):
        array.setflags(write=False)
    return uc, per_unit


def diagnose_batch(
    units: Sequence[UnitDesign] | UnitColumns,
    readings: ReadingColumns,
    elevation_m: ArrayLike = 0.0,
    unit_index: ArrayLike | None = None,
) -> BatchResult:
    """Diagnose every row of ``readings`` at once.

    ``units`` holds one design per reading, or (with ``unit_index``) the distinct designs
    the readings point at. ``elevation_m`` is the site elevation per row (or one value).
    """
    if isinstance(units, UnitColumns):
        uc, per_unit = units, _unit_targets(units)
    elif len(units) <= _FEW_UNITS:
        uc, per_unit = _few_units(tuple(units))
    else:
        uc = UnitColumns.from_designs(units)
        per_unit = _unit_targets(uc)
    n = len(readings)
    if unit_index is None:
        if len(uc) != n:
            raise ValueError("one unit per reading, or pass unit_index")
        idx = np.arange(n, dtype=np.intp)
    else:
        idx = np.asarray(unit_index, dtype=np.intp)
        if idx.shape != (n,):
            raise ValueError("unit_index needs one entry per reading")
    # origins are only read when one row is turned into dataclasses
    t = {k: v[idx] for k, v in per_unit.items() if not k.endswith("_origin")}
    r = readings
    ref_code = uc.refrigerant_code[idx]
    atm = _atmosphere_kpa(elevation_m, n)
    p_s = np.where(r.suction_kpa_gauge + atm > 0, r.suction_kpa_gauge + atm, np.nan)
    p_h = np.where(r.head_kpa_gauge + atm > 0, r.head_kpa_gauge + atm, np.nan)

    # Saturation targets from the reading's conditions (box falls back to the design box),
    # each with the edges of its ok band: the TD and split bands of the scoring table.
    box_for_target = np.where(np.isnan(r.box_temp_c), t["box_temp_c"], r.box_temp_c)
    t_evap_target = box_for_target - t["evap_td_k"]
    t_cond_target = np.where(t["water_cooled"] == 1.0, np.nan, r.entering_air_temp_c + t["split_k"])
    td_low, td_high = sc.ok_band(sc.SCORING_TABLE["evaporator_td"], t["evap_td_k"])
    split_low, split_high = sc.ok_band(sc.SCORING_TABLE["condenser_split"], t["split_k"])
    evap_base, cond_base = t_evap_target + t["evap_td_k"], t_cond_target - t["split_k"]
    t_evap = np.stack([t_evap_target, evap_base - td_high, evap_base - td_low])
    t_cond = np.stack([t_cond_target, cond_base + split_low, cond_base + split_high])

    mid_basis = t["basis_mid"] == 1.0
    nan = np.full(n, np.nan)
    evap_dew, evap_bub, cond_dew, cond_bub = nan.copy(), nan.copy(), nan.copy(), nan.copy()
    p_crit, t_cond_target_dew = nan.copy(), nan.copy()
    # the saturation curves' slopes at the gauges' readings, for the instruments' error
    slope_s, slope_h = nan.copy(), nan.copy()
    p_evap, p_cond = np.full((3, n), np.nan), np.full((3, n), np.nan)
    for code, designation in enumerate(uc.refrigerants):
        sel = np.flatnonzero(ref_code == code)
        if sel.size == 0:
            continue
        curve = saturation.table(designation)
        evap_dew[sel] = tg.dew_temp_c(curve, p_s[sel])
        evap_bub[sel] = tg.bubble_temp_c(curve, p_s[sel])
        cond_dew[sel] = tg.dew_temp_c(curve, p_h[sel])
        cond_bub[sel] = tg.bubble_temp_c(curve, p_h[sel])
        slope_s[sel] = (tg.dew_temp_c(curve, p_s[sel] + _SLOPE_STEP_KPA) - evap_dew[sel]) / (
            _SLOPE_STEP_KPA
        )
        slope_h[sel] = (
            tg.bubble_temp_c(curve, p_h[sel] + _SLOPE_STEP_KPA) - cond_bub[sel]
        ) / _SLOPE_STEP_KPA
        p_crit[sel] = float(curve.critical_pressure_kpa_abs)
        # target and both band edges in one lookup per side, on each unit's basis
        p_evap[:, sel] = tg.basis_pressure_kpa_abs(curve, t_evap[:, sel], mid_basis[sel])
        p_cond[:, sel] = tg.basis_pressure_kpa_abs(curve, t_cond[:, sel], mid_basis[sel])
        t_cond_target_dew[sel] = tg.dew_temp_c(curve, p_cond[0, sel])
    transcritical = p_h >= p_crit
    cond_dew[transcritical] = np.nan
    cond_bub[transcritical] = np.nan
    t_cond_target_dew[transcritical] = np.nan
    p_cond[:, transcritical] = np.nan
    t_cond[:, transcritical] = np.nan

    # Stopped as reported; not reported, a suction at or above head says it was not running.
    running = np.where(np.isnan(r.compressor_running) & (p_s >= p_h), 0.0, r.compressor_running)
    stopped = running == 0.0
    evap_on_basis = np.where(mid_basis, 0.5 * (evap_dew + evap_bub), evap_dew)
    cond_on_basis = np.where(mid_basis, 0.5 * (cond_dew + cond_bub), cond_dew)
    amps_max = _leg_extreme(r.compressor_amps, largest=True)
    volts_min = _leg_extreme(r.supply_volts, largest=False)
    volts_max = _leg_extreme(r.supply_volts, largest=True)
    volts_worst = np.where(
        np.abs(volts_min - t["volts_nominal"]) > np.abs(volts_max - t["volts_nominal"]),
        volts_min,
        volts_max,
    )
    v_unbalance = electrical.unbalance_pct(r.supply_volts)
    a_unbalance = electrical.unbalance_pct(r.compressor_amps)
    derived = {
        "suction_kpa_abs": p_s,
        "head_kpa_abs": p_h,
        "evaporating_dew_c": evap_dew,
        "evaporating_bubble_c": evap_bub,
        "evaporating_c": evap_on_basis,
        "condensing_dew_c": cond_dew,
        "condensing_bubble_c": cond_bub,
        "condensing_c": cond_on_basis,
        "superheat_k": r.suction_line_temp_c - evap_dew,
        "subcooling_k": cond_bub - r.liquid_line_temp_c,
        "evaporator_td_k": r.box_temp_c - evap_on_basis,
        "condenser_split_k": np.where(
            t["water_cooled"] == 1.0, np.nan, cond_on_basis - r.entering_air_temp_c
        ),
        "compression_ratio": _finite(p_h / p_s),
        "transcritical": transcritical.astype(np.float64),
        "gas_cooler_approach_k": np.where(
            transcritical, r.liquid_line_temp_c - r.entering_air_temp_c, np.nan
        ),
        "voltage_unbalance_pct": v_unbalance,
        "current_unbalance_pct": a_unbalance,
        "nema_derating_factor": electrical.nema_derating_factor(v_unbalance),
    }

    # (measured, target, range low or None, range high or None) per metric
    inputs: dict[str, tuple[FloatArray, FloatArray, FloatArray | None, FloatArray | None]] = {
        "box_temp": (r.box_temp_c, t["box_temp_c"], None, None),
        "evaporator_td": (derived["evaporator_td_k"], t["evap_td_k"], None, None),
        "condenser_split": (derived["condenser_split_k"], t["split_k"], None, None),
        "superheat": (
            derived["superheat_k"],
            0.5 * (t["superheat_min_k"] + t["superheat_max_k"]),
            t["superheat_min_k"],
            t["superheat_max_k"],
        ),
        "subcooling": (
            derived["subcooling_k"],
            0.5 * (t["subcooling_min_k"] + t["subcooling_max_k"]),
            t["subcooling_min_k"],
            t["subcooling_max_k"],
        ),
        "discharge_line_temp": (
            r.discharge_line_temp_c,
            np.full(n, tg.DISCHARGE_LINE_MAX_C.value),
            None,
            None,
        ),
        "compression_ratio": (derived["compression_ratio"], t["cr_limit"], None, None),
        "head_pressure": (r.head_kpa_gauge, t["cutout_kpa_gauge"], None, None),
        "gas_cooler_approach": (
            derived["gas_cooler_approach_k"],
            np.full(n, tg.GAS_COOLER_APPROACH_K.value),
            None,
            None,
        ),
        "running_amps": (np.where(running == 1.0, amps_max, np.nan), t["rla_a"], None, None),
        "standstill_amps": (np.where(stopped, amps_max, np.nan), t["lra_a"], None, None),
        "supply_voltage": (volts_worst, t["volts_nominal"], t["volts_low"], t["volts_high"]),
        "voltage_unbalance": (
            np.where(t["phase"] == 1.0, np.nan, v_unbalance),
            np.zeros(n),
            None,
            None,
        ),
        "current_unbalance": (
            np.where((t["phase"] == 1.0) | stopped, np.nan, a_unbalance),
            np.zeros(n),
            None,
            None,
        ),
        "run_capacitor": (r.run_capacitor_uf, t["run_cap_uf"], t["run_cap_low"], t["run_cap_high"]),
        "start_capacitor": (
            r.start_capacitor_uf,
            t["start_cap_uf"],
            t["start_cap_low"],
            t["start_cap_high"],
        ),
    }
    defrost = r.in_defrost == 1.0
    for name in (*CYCLE_METRICS, "box_temp"):
        m, *rest = inputs[name]
        off = defrost | stopped if name != "box_temp" else defrost
        inputs[name] = (np.where(off, np.nan, m), *rest)  # type: ignore[assignment]

    # Cold weather: a head the unit's control holds up says nothing about the condenser.
    held = (
        (r.entering_air_temp_c + t["split_k"] < t["head_setpoint_c"])
        & (cond_on_basis >= t["head_held_low_c"])
        & (cond_on_basis <= t["head_held_high_c"])
    )
    margins = {
        "suction": sc.instrument_margin_k(slope_s),
        "head": sc.instrument_margin_k(slope_h),
    }
    metrics: dict[str, MetricColumns] = {}
    total_points = np.zeros(n)
    judged = np.zeros(n, dtype=bool)
    for name, rule in sc.SCORING_TABLE.items():
        measured, target, own_low, own_high = inputs[name]
        margin = None if rule.margin_from is None else margins[rule.margin_from]
        low, high = sc.ok_band(rule, target, own_low, own_high, margin)
        status, points, deviation = sc.grade(rule, measured, target, low, high)
        reason = np.zeros(n, dtype=np.int8)
        if name in CYCLE_METRICS:
            reason[stopped] = REASON_COMPRESSOR_OFF
        if name in (*CYCLE_METRICS, "box_temp"):
            reason[defrost] = REASON_DEFROST
        if name == "box_temp":
            reason[t["ice_machine"] == 1.0] = REASON_ICE_MACHINE
        if name == "condenser_split":
            reason[t["water_cooled"] == 1.0] = REASON_WATER_COOLED
            reason[transcritical] = REASON_TRANSCRITICAL
            excused = held & (status != sc.NOT_SCORED)
            status[excused] = sc.NOT_SCORED
            points[excused] = 0.0
            deviation[excused] = np.nan
            reason[excused] = REASON_HEAD_CONTROL
        elif name == "subcooling":
            reason[transcritical] = REASON_TRANSCRITICAL
        elif name == "gas_cooler_approach":
            reason[~transcritical] = REASON_HIDDEN
        elif name == "running_amps":
            reason[np.isnan(running)] = REASON_RUNNING_UNKNOWN
            reason[stopped] = REASON_HIDDEN
        elif name == "standstill_amps":
            reason[running != 0.0] = REASON_HIDDEN
        elif name in ("voltage_unbalance", "current_unbalance"):
            reason[t["phase"] == 1.0] = REASON_SINGLE_PHASE
            if name == "current_unbalance":
                reason[stopped] = REASON_HIDDEN
        total_points += points
        judged |= status != sc.NOT_SCORED
        metrics[name] = MetricColumns(
            measured, target, low, high, deviation, status, points, reason
        )

    # Energy money only where the condenser is off its target: the split judged and above
    # its band. Judged and on target costs nothing; not judged (held, off-cycle) says nothing.
    split = metrics["condenser_split"]
    off_target = (split.status != sc.NOT_SCORED) & (split.deviation > 0)
    penalty = np.where(split.status != sc.NOT_SCORED, 0.0, np.nan)
    for code, designation in enumerate(uc.refrigerants):
        sel = np.flatnonzero((ref_code == code) & off_target)
        ok = sel[np.isfinite(evap_dew[sel] + cond_dew[sel] + t_cond_target_dew[sel])]
        if ok.size == 0:
            continue
        try:
            penalty[ok] = energy.energy_penalty_pct(
                designation, evap_dew[ok], cond_dew[ok], t_cond_target_dew[ok]
            )
        except ValueError:
            penalty[ok] = np.nan  # no cycle model for this refrigerant: no figure, no guess

    signals = findings.derive_signals(
        {name: (m.measured, m.target, m.deviation, m.status) for name, m in metrics.items()},
        flags={
            "call_for_cooling": r.call_for_cooling,
            # defrosting, the fans stop and the coil carries frost on purpose
            "compressor_running": np.where(defrost, np.nan, running),
            "coil_iced": r.coil_iced,
            "evaporator_fans_running": r.evaporator_fans_running,
            "condenser_fan_running": r.condenser_fan_running,
            "sight_glass": r.sight_glass,
        },
        compression_ratio_typical_low=t["cr_typical_low"],
        receiverless=uc.has_receiver[idx] == 0.0,
        # a control that cycles or slows the fans stops them while the head is in its band
        condenser_fan_may_stop=np.isin(uc.control_code[idx], _FAN_CONTROLS)
        & ~(cond_on_basis > t["head_held_high_c"]),
        receiver_backed_up=(uc.has_receiver[idx] == 1.0) & ~held,
    )
    fired = findings.evaluate(signals, n)
    atm_targets: dict[str, FloatArray] = {}
    for side, temps, pressure, pressures in (
        ("evaporating_c", t_evap, "suction_kpa_gauge", p_evap),
        ("condensing_c", t_cond, "head_kpa_gauge", p_cond),
    ):
        for k, suffix in enumerate(("", "_low", "_high")):
            atm_targets[side + suffix] = temps[k]
            atm_targets[pressure + suffix] = pressures[k] - atm
    return BatchResult(
        algorithm_version=ALGORITHM_VERSION,
        score=sc.visit_score(total_points, judged),
        metrics=metrics,
        derived=derived,
        saturation_targets=atm_targets,
        finding_mask=fired.mask,
        finding_confidence=fired.confidence,
        energy_penalty_pct=penalty,
        signals=signals,
        units=uc,
        unit_index=idx,
        readings=readings,
        unit_targets=per_unit,
        atmosphere_kpa=atm,
    )


def diagnose(unit: UnitDesign, reading: Reading, elevation_m: float = 0.0) -> Diagnosis:
    """Diagnose one reading set: the batch code on a batch of one, row 0 as dataclasses."""
    result = diagnose_batch([unit], ReadingColumns.from_readings([reading]), elevation_m)
    return result.diagnosis(0)


def diagnose_row(unit: UnitDesign, reading: Reading, elevation_m: float = 0.0) -> Row:
    """One reading set as stored (the version, ``stored_columns`` of a batch of one),
    without writing its texts: what the service stores for a single POST."""
    result = diagnose_batch([unit], ReadingColumns.from_readings([reading]), elevation_m)
    row = {name: values[0] for name, values in stored_columns(result).items()}
    return {"algorithm_version": result.algorithm_version, **row}


# --- rows as stored, built column-wise -----------------------------------------------------

#: Derived values stored as columns (trends read them without reading the details), each
#: where it was judged only (``judged_derived``).
STORED_DERIVED: tuple[str, ...] = (
    "evaporating_c",
    "condensing_c",
    "superheat_k",
    "subcooling_k",
    "evaporator_td_k",
    "condenser_split_k",
    "compression_ratio",
)

Row = dict[str, Any]

#: Stored derived value -> the metric whose judgement it follows (the others: running only).
_JUDGED_BY: dict[str, str] = {
    "superheat_k": "superheat",
    "subcooling_k": "subcooling",
    "evaporator_td_k": "evaporator_td",
    "condenser_split_k": "condenser_split",
    "compression_ratio": "compression_ratio",
}


def _opt(x: float) -> float | None:
    """A float for the stored row: NaN and the open ends of a band (+/-inf) become None."""
    x = float(x)
    return None if not math.isfinite(x) else x


#: Below this many rows plain Python beats numpy's per-call overhead (the one-row path).
_FEW_ROWS = 16


def _opt_list(values: FloatArray) -> list[float | None]:
    """``_opt`` over a column: one ``tolist`` and a patch of the few non-finite entries."""
    out: list[Any] = values.tolist()
    if len(out) < _FEW_ROWS:
        return [v if math.isfinite(v) else None for v in out]
    for j in np.flatnonzero(~np.isfinite(values)).tolist():
        out[j] = None
    return out


#: Evidence is stored once, so it states SI and US customary side by side (the trade in
#: North America reads F and psig; the stored numbers stay SI). Gauge stays gauge.
_SECOND_UNIT = {
    "C": ("F", lambda v: units.temperature_from_c(v, "F")),
    "K": ("F", lambda v: units.temperature_difference_from_k(v, "F")),
    "kPa": ("psig", lambda v: units.pressure_from_kpa_gauge(v, "psig")),
}


def _number(value: float) -> str:
    return f"{value:.1f}"


def _fmt(value: float | None, unit: str) -> str:
    if value is None:
        return "?"
    text = f"{_number(value)} {unit}".strip() if unit else _number(value)
    if unit in _SECOND_UNIT:
        other, convert = _SECOND_UNIT[unit]
        text += f" ({_number(float(convert(value)))} {other})"
    return text


def _band_text(low: float | None, high: float | None, unit: str) -> str:
    def band(lo: float | None, hi: float | None, symbol: str) -> str:
        lo_text = "" if lo is None else _number(lo)
        hi_text = "" if hi is None else _number(hi)
        if lo_text and hi_text:
            return f"{lo_text} to {hi_text} {symbol}".strip()
        return f"{'at most ' + hi_text if hi_text else 'at least ' + lo_text} {symbol}".strip()

    text = band(low, high, unit)
    if unit in _SECOND_UNIT:
        other, convert = _SECOND_UNIT[unit]
        text += (
            " ("
            + band(
                None if low is None else float(convert(low)),
                None if high is None else float(convert(high)),
                other,
            )
            + ")"
        )
    return text


@functools.cache
def _template(text: str) -> tuple[tuple[str, str | None, str], ...]:
    """An evidence template split once into (literal, metric or None, spec) parts: ``{m}``
    is the measured value, ``{m:band}`` the ok band, ``{m:target}`` and ``{m:high}``."""
    return tuple((lit, name, spec or "") for lit, name, spec, _ in string.Formatter().parse(text))


def _design_source(origin: float, default_source: str, design_label: str = tg.DESIGN) -> str:
    if origin == tg.FROM_DESIGN:
        return design_label
    if origin == tg.FROM_DEFAULT:
        return f"application default ({default_source})"
    return "missing"


@functools.cache
def _target_sources(context: tuple[float, ...]) -> dict[str, str]:
    """Where each metric's target value came from, for one ``_SOURCE_CONTEXT`` case
    (-1 stands for a missing receiver answer)."""
    (
        app_code,
        metering_code,
        metering_given,
        receiver,
        receiver_given,
        origin_box,
        origin_td,
        origin_split,
        origin_superheat,
        origin_run_cap,
        control,
        control_given,
        origin_setpoint,
        basis_mid,
    ) = context
    app = APPLICATIONS[int(app_code)]
    device = METERING_DEVICES[int(metering_code)]
    defaults = tg.APPLICATION_DEFAULTS[app]
    receiver_note = tg.DESIGN if receiver_given else defaults.receiver_source
    sub_source = tg.SUBCOOLING_DEFAULTS[bool(receiver)].source if receiver >= 0 else "missing"
    sh_device = f"metering device {device}" + ("" if metering_given else f" (default for {app})")
    kind = HEAD_PRESSURE_CONTROLS[int(control)]
    control_note = f"head-pressure control: {kind.replace('_', ' ')}" + (
        "" if control_given else f" ({defaults.head_pressure_control_source})"
    )
    if kind != "none":
        control_note += ", set point " + (
            tg.DESIGN
            if origin_setpoint == tg.FROM_DESIGN
            else f"default ({tg.HEAD_PRESSURE_CONTROL_DEFAULTS[kind].source})"
        )
    basis = "mid-point" if basis_mid else "dew point"
    return {
        "box_temp": _design_source(
            origin_box, defaults.box_temp_c.source if defaults.box_temp_c else ""
        ),
        "evaporator_td": _design_source(
            origin_td, defaults.evap_td_k.source if defaults.evap_td_k else ""
        )
        + f"; on the {basis}",
        "condenser_split": _design_source(origin_split, defaults.condenser_split_k.source)
        + f"; on the {basis}; {control_note}",
        "superheat": _design_source(
            origin_superheat,
            f"{tg.SUPERHEAT_DEFAULTS[(app, device)].source}; {sh_device}",
        ),
        "subcooling": f"{sub_source}; receiver: {receiver_note}",
        "discharge_line_temp": tg.DISCHARGE_LINE_MAX_C.source,
        "compression_ratio": f"{tg.COMPRESSION_RATIO_LIMIT.source}, or the application's "
        f"typical top where higher ({defaults.compression_ratio.source})",
        "head_pressure": f"{tg.DESIGN}: high-pressure cut-out",
        "gas_cooler_approach": tg.GAS_COOLER_APPROACH_K.source,
        "running_amps": f"{tg.NAMEPLATE}: RLA",
        "standstill_amps": f"{tg.NAMEPLATE}: LRA",
        "supply_voltage": f"{tg.NAMEPLATE} voltage",
        "voltage_unbalance": "NEMA MG-1 14.36",
        "current_unbalance": "common practice",
        "run_capacitor": f"{tg.NAMEPLATE} rating, tolerance: "
        + _design_source(origin_run_cap, tg.RUN_CAPACITOR_TOLERANCE_PCT.source),
        "start_capacitor": f"{tg.NAMEPLATE} range",
    }


def _metric_target_source(name: str, source: str) -> str:
    rule = sc.SCORING_TABLE[name]
    text = rule.source if source in rule.source else f"target: {source}; ok band: {rule.source}"
    return text


# Why a metric was not scored for want of data is packed into a small integer per row (two
# bits per reading field, then the target and the atmosphere), so the text is written once
# per distinct case instead of once per row.
_FIELD_MISSING, _FIELD_PARTIAL = 1, 2
_TARGET_MISSING = 1 << 2 * max(len(fields) for fields, _ in METRIC_NEEDS.values())
_ATMOSPHERE_BAD = _TARGET_MISSING << 1


def _missing_keys(
    readings: ReadingColumns, atm: FloatArray, name: str, target_missing: NDArray[np.bool_]
) -> NDArray[np.int64]:
    fields, _ = METRIC_NEEDS[name]
    key = np.where(target_missing, _TARGET_MISSING, 0).astype(np.int64)
    key[np.isnan(atm)] |= _ATMOSPHERE_BAD
    for k, f in enumerate(fields):
        col = getattr(readings, f)
        nan = np.isnan(col)
        absent = nan.all(axis=1) if nan.ndim == 2 else nan
        key[absent] |= _FIELD_MISSING << 2 * k
        if nan.ndim == 2 and name.endswith("unbalance"):
            key[~absent & nan.any(axis=1)] |= _FIELD_PARTIAL << 2 * k
    return key


@functools.cache
def _missing_text(name: str, key: int) -> str:
    """Why metric ``name`` was not scored, for one ``_missing_keys`` case."""
    fields, design = METRIC_NEEDS[name]
    missing: list[str] = []
    for k, f in enumerate(fields):
        state = key >> 2 * k & 3
        if state == _FIELD_MISSING:
            missing.append(f)
        elif state == _FIELD_PARTIAL:
            missing.append(f"{f} (three legs)")
    parts = []
    if missing:
        parts.append("not measured: " + ", ".join(missing))
    if key & _TARGET_MISSING:
        parts.append(f"the unit's data does not give {design}")
    if not parts and "kpa" in " ".join(fields) and key & _ATMOSPHERE_BAD:
        parts.append("the site elevation is unusable, so gauge pressures cannot be made absolute")
    if not parts:
        return "the pressure is outside the refrigerant's saturation range"
    return "; ".join(parts)


@functools.cache
def _evidence_names(bit: int, first_trigger: int, support: int) -> tuple[str, ...]:
    """The signals behind rule ``bit`` for rows whose first holding trigger and supporting
    signals (bit j = ``rule.supporting[j]``) are these; ``findings.signals_behind`` decides."""
    rule = findings.RULES[bit]
    holding = dict.fromkeys(rule.triggers[first_trigger], True)
    for j, name in enumerate(rule.supporting):
        if support >> j & 1:
            holding[name] = True
    return findings.signals_behind(rule, holding)


#: Safety cautions (our wording). Which apply is decided per refrigerant in ``_caution_codes``.
CAUTIONS: dict[str, str] = {
    "electrical": "Electrical hazard: lock out and tag out the supply before touching wiring or "
    "terminals, discharge capacitors before handling them, and take live readings only with "
    "rated meters and protective equipment.",
    "pressure": "Refrigerant under pressure: wear eye protection and gloves; liquid "
    "refrigerant causes frostbite, and a closed vessel must never be heated.",
    "high_pressure_co2": "R-744 (CO2) runs at several times the pressure of other "
    "refrigerants and rises further when the system stands warm: use gauges, hoses and "
    "tools rated for it.",
    "flammable_2l": "Mildly flammable refrigerant (class 2L): keep ignition sources away, "
    "ventilate the work area, and use recovery equipment and leak detectors rated for it.",
    "flammable": "Flammable refrigerant: no ignition sources, ventilate, check the area "
    "with a detector for flammable gas, and use equipment rated for the refrigerant.",
    "toxic": "Toxic refrigerant (safety class B): work with ventilation and the protective "
    "equipment and detection the site's procedures require.",
    "certified_handling": "Opening the refrigerant circuit, recovery and charging are for "
    "certified technicians: recover, never vent, and record every amount added or removed.",
    "codes": "Follow local codes, the manufacturer's instructions and licensed practice; this "
    "diagnosis supports the technician's judgement and does not replace it.",
}

#: Finding bits whose likely repair opens the circuit (certified handling applies).
_OPENS_CIRCUIT_MASK = sum(1 << bit for bit, rule in enumerate(findings.RULES) if rule.opens_circuit)


@functools.cache
def _caution_codes(designation: str, opens_circuit: bool) -> tuple[str, ...]:
    ref = refrigerants.get(designation)
    codes = ["electrical", "pressure"]
    if ref.designation == "R-744":
        codes.append("high_pressure_co2")
    safety = ref.safety_class.upper()
    if safety.endswith("2L"):
        codes.append("flammable_2l")
    elif safety.endswith(("2", "3")):
        codes.append("flammable")
    if safety.startswith("B"):
        codes.append("toxic")
    if opens_circuit:
        codes.append("certified_handling")
    codes.append("codes")
    return tuple(codes)


# --- the stored form: numbers and codes; the texts are written when it is read --------------

#: The saturation targets with the edges of their ok bands (``BatchResult.saturation_targets``).
SATURATION_TARGETS: tuple[str, ...] = tuple(
    key + edge
    for key in ("evaporating_c", "suction_kpa_gauge", "condensing_c", "head_kpa_gauge")
    for edge in ("", "_low", "_high")
)
_METRIC_FIELDS = (*MetricColumns.__dataclass_fields__, "missing")
_REFRIGERANTS: tuple[str, ...] = tuple(refrigerants.CATALOGUE)
_SIGNAL_NAMES: tuple[str, ...] = tuple(findings.SIGNALS)
_SIGNAL_INDEX = {name: j for j, name in enumerate(_SIGNAL_NAMES)}
#: Signal bits per stored column: float32 holds whole numbers exactly up to 2**24.
_WORD = 16
#: What decides the texts saying where a row's targets came from.
_SOURCE_CONTEXT: tuple[str, ...] = (
    "application",
    "metering",
    "metering_given",
    "receiver",
    "receiver_given",
    "origin_box",
    "origin_evap_td",
    "origin_split",
    "origin_superheat",
    "origin_run_cap_tol",
    "control",
    "control_given",
    "origin_setpoint",
    "basis_mid",
)
#: The stored form of a diagnosis: one float32 per column, in this order. Numbers and codes
#: only (a metric's status and why it was not scored, which rules fired and which signals
#: held, where the targets came from), so a million rows are a few hundred bytes each and
#: cost no JSON; ``expand`` writes the texts. Changing it changes what is stored: bump
#: ``ALGORITHM_VERSION`` with it.
PACKED_COLUMNS: tuple[str, ...] = (
    "refrigerant",
    "box_measured",
    *_SOURCE_CONTEXT,
    *SATURATION_TARGETS,
    *(f"{name}:{f}" for name in sc.SCORING_TABLE for f in _METRIC_FIELDS),
    "finding_mask",
    *(f"confidence:{code}" for code in findings.RULE_CODES),
    *(f"signals:{k}" for k in range(-(-len(_SIGNAL_NAMES) // _WORD))),
)
PACKED_DTYPE = np.dtype("<f4")
PACKED_BYTES = len(PACKED_COLUMNS) * PACKED_DTYPE.itemsize
_AT = {name: i for i, name in enumerate(PACKED_COLUMNS)}
if len(findings.RULES) > 24:
    raise ValueError("the stored finding mask is one float32 column: at most 24 rules")
if len(_SIGNAL_NAMES) > 64:
    raise ValueError("signals are packed from one 64-bit word: at most 64 signals")

#: Stored numbers are float32 (7 significant digits); read back they are rounded to this many
#: decimals so 5.1 stays 5.1 and not 5.099999904632568.
_DECIMALS = 4


def pack(res: BatchResult) -> NDArray[np.float32]:
    """Every row of the batch in its stored form: an (n, len(PACKED_COLUMNS)) float32 array."""
    n = len(res)
    out = np.zeros((n, len(PACKED_COLUMNS)), dtype=PACKED_DTYPE)

    def put(name: str, values: ArrayLike) -> None:
        out[:, _AT[name]] = values

    uc, u, origin = res.units, res.unit_index, res.unit_targets
    catalogue = np.array([_REFRIGERANTS.index(d) for d in uc.refrigerants], dtype=np.intp)
    superheat = np.stack([origin["superheat_min_k_origin"], origin["superheat_max_k_origin"]])
    per_unit: dict[str, ArrayLike] = {
        "refrigerant": catalogue[uc.refrigerant_code],
        "application": uc.application_code,
        "metering": uc.metering_code,
        "metering_given": uc.metering_given,
        "receiver": uc.has_receiver,
        "receiver_given": [d.has_receiver is not None for d in uc.designs],
        "origin_box": origin["box_temp_c_origin"],
        "origin_evap_td": origin["evap_td_k_origin"],
        "origin_split": origin["split_k_origin"],
        "origin_superheat": np.where(
            (superheat == tg.MISSING).any(axis=0), tg.MISSING, superheat.max(axis=0)
        ),
        "origin_run_cap_tol": origin["run_cap_tol_pct_origin"],
        "control": uc.control_code,
        "control_given": uc.control_given,
        "origin_setpoint": origin["head_setpoint_c_origin"],
        "basis_mid": uc.basis_mid,
    }
    for name, values in per_unit.items():
        put(name, np.asarray(values)[u])
    put("box_measured", np.isfinite(res.readings.box_temp_c))
    for name in SATURATION_TARGETS:
        put(name, res.saturation_targets[name])
    for name in sc.SCORING_TABLE:
        c = res.metrics[name]
        for f in MetricColumns.__dataclass_fields__:
            put(f"{name}:{f}", getattr(c, f))
        unscored = c.status == sc.NOT_SCORED
        if unscored.any():
            target_missing = ~np.isfinite(c.target) | np.isnan(c.low) | np.isnan(c.high)
            keys = _missing_keys(res.readings, res.atmosphere_kpa, name, target_missing)
            put(f"{name}:missing", np.where(unscored, keys, 0))
    put("finding_mask", res.finding_mask)
    for bit, code in enumerate(findings.RULE_CODES):
        put(f"confidence:{code}", res.finding_confidence[bit])
    bits = np.zeros(n, dtype=np.uint64)
    for name, held in res.signals.items():
        bits |= held.astype(np.uint64) << np.uint64(_SIGNAL_INDEX[name])
    for k in range(-(-len(_SIGNAL_NAMES) // _WORD)):
        put(f"signals:{k}", (bits >> np.uint64(k * _WORD)) & np.uint64((1 << _WORD) - 1))
    return out


def to_blobs(packed: NDArray[np.float32]) -> list[bytes]:
    """One ``bytes`` per packed row, as the database keeps it."""
    data = np.ascontiguousarray(packed, dtype=PACKED_DTYPE).tobytes()
    return [data[i : i + PACKED_BYTES] for i in range(0, len(data), PACKED_BYTES)]


def empty_details() -> Row:
    """The details of a diagnosis stored without them (or under another layout)."""
    return {"targets": [], "metrics": [], "findings": [], "cautions": [], "glide_choice": ""}


def expand_blobs(blobs: Sequence[bytes | memoryview]) -> list[Row]:
    """Stored blobs back to their details (``expand``), all at once. A blob of another
    length (empty, or stored under another layout) has empty details until it is rescored."""
    fit, matrix = _fitting(blobs)
    out = [empty_details() for _ in blobs]
    for j, row in zip(fit, expand(matrix), strict=True):
        out[j] = row
    return out


def _fitting(blobs: Sequence[bytes | memoryview]) -> tuple[list[int], NDArray[np.float32]]:
    """The positions of the blobs of this layout, and those blobs as one matrix."""
    fit = [j for j, blob in enumerate(blobs) if len(blob) == PACKED_BYTES]
    data = b"".join(bytes(blobs[j]) for j in fit)
    return fit, np.frombuffer(data, dtype=PACKED_DTYPE).reshape(len(fit), len(PACKED_COLUMNS))


def packed_columns(
    blobs: Sequence[bytes | memoryview], names: Sequence[str]
) -> dict[str, FloatArray]:
    """Some numbers of stored rows as float columns (NaN where a blob does not fit), for
    readers that want values, not texts: ``"superheat:low"``, ``"condensing_c"``..."""
    out = {name: np.full(len(blobs), np.nan) for name in names}
    fit, matrix = _fitting(blobs)
    for name in names:
        out[name][fit] = np.round(matrix[:, _AT[name]].astype(np.float64), _DECIMALS)
    return out


def expand(packed: NDArray[np.float32]) -> list[Row]:
    """The details of packed rows: targets, metrics, findings, cautions and the glide choice
    as JSON-ready dicts with their texts (reasons, sources, evidence, advice).

    Numbers are turned into lists once per column and each text is written once per
    distinct case, so expanding many rows costs little more than expanding one.
    """
    k = packed.shape[0]
    if k == 0:
        return []
    cols = np.round(packed.astype(np.float64), _DECIMALS).T

    def num(name: str) -> FloatArray:
        return cols[_AT[name]]

    def code(name: str) -> NDArray[np.int64]:
        return cols[_AT[name]].astype(np.int64)

    statuses = np.array(STATUSES, dtype=object)
    metric_cols: list[list[Row | None]] = []
    values: dict[str, dict[str, list[float | None]]] = {}
    reason_codes: dict[str, NDArray[np.int64]] = {}
    for name, rule in sc.SCORING_TABLE.items():
        v = {f: _opt_list(num(f"{name}:{f}")) for f in ("measured", "target", "low", "high")}
        values[name] = v
        status, reason = code(f"{name}:status"), code(f"{name}:reason")
        reason_codes[name] = reason
        reasons = [""] * k
        unscored = np.flatnonzero(status == sc.NOT_SCORED)
        for j, why, key in zip(
            unscored.tolist(),
            reason[unscored].tolist(),
            code(f"{name}:missing")[unscored].tolist(),
            strict=True,
        ):
            reasons[j] = REASON_TEXT.get(why) or _missing_text(name, key)
        unit_name = rule.unit
        metric_cols.append(
            [
                None
                if hidden
                else {
                    "name": name,
                    "measured": m,
                    "target": t,
                    "low": lo,
                    "high": hi,
                    "deviation": d,
                    "unit": unit_name,
                    "status": s,
                    "points_lost": p,
                    "reason": r,
                }
                for hidden, m, t, lo, hi, d, s, p, r in zip(
                    (reason == REASON_HIDDEN).tolist(),
                    v["measured"],
                    v["target"],
                    v["low"],
                    v["high"],
                    _opt_list(num(f"{name}:deviation")),
                    statuses[status].tolist(),
                    num(f"{name}:points").tolist(),
                    reasons,
                    strict=True,
                )
            ]
        )

    # targets: the saturation targets, then every metric target that applies to the unit
    refrigerant = code("refrigerant")
    target_cols = _saturation_target_cols(
        num, refrigerant, code("box_measured") == 1, code("basis_mid") == 1
    )
    context = np.nan_to_num(packed[:, [_AT[c] for c in _SOURCE_CONTEXT]], nan=-1.0)
    contexts = list(map(tuple, context.tolist()))
    for name, rule in sc.SCORING_TABLE.items():
        v, reason = values[name], reason_codes[name]
        show = np.isfinite(cols[_AT[f"{name}:target"]]) & (reason != REASON_HIDDEN)
        show &= ~_NOT_APPLICABLE[reason]
        unit_name = rule.unit
        target_cols.append(
            [
                {
                    "name": name,
                    "value": t,
                    "low": lo,
                    "high": hi,
                    "unit": unit_name,
                    "source": _metric_target_source(name, _target_sources(ctx)[name]),
                }
                if shown
                else None
                for shown, t, lo, hi, ctx in zip(
                    show.tolist(), v["target"], v["low"], v["high"], contexts, strict=True
                )
            ]
        )

    mask = code("finding_mask")
    words = [code(f"signals:{w}") for w in range(-(-len(_SIGNAL_NAMES) // _WORD))]

    def signal(name: str) -> NDArray[np.bool_]:
        j = _SIGNAL_INDEX[name]
        return ((words[j // _WORD] >> (j % _WORD)) & 1) == 1

    confidence = {c: num(f"confidence:{c}") for c in findings.RULE_CODES}
    found = _finding_rows(mask, confidence, signal, values)
    opens = ((mask & _OPENS_CIRCUIT_MASK) != 0).tolist()
    cautions = [
        [{"code": c, "text": CAUTIONS[c]} for c in _caution_codes(_REFRIGERANTS[r], o)]
        for r, o in zip(refrigerant.tolist(), opens, strict=True)
    ]
    basis_text = [
        tg.BASIS_TEXT["mid_point" if mid else "dew"] for mid in (code("basis_mid") == 1).tolist()
    ]
    return [
        {
            "targets": [d for d in t if d is not None],
            "metrics": [d for d in m if d is not None],
            "findings": found.get(j, []),
            "cautions": c,
            "glide_choice": basis_text[j],
        }
        for j, (t, m, c) in enumerate(
            zip(
                zip(*target_cols, strict=True),
                zip(*metric_cols, strict=True),
                cautions,
                strict=True,
            )
        )
    ]


def _saturation_target_cols(
    num: Callable[[str], FloatArray],
    refrigerant: NDArray[np.int64],
    box_measured: NDArray[np.bool_],
    basis_mid: NDArray[np.bool_],
) -> list[list[Row | None]]:
    """The evaporating and condensing targets and their pressures, one column each; None
    where a row has no such target."""
    blend = np.array([refrigerants.get(d).is_blend for d in _REFRIGERANTS], dtype=bool)
    glide = np.where(
        blend[refrigerant],
        np.where(basis_mid, "mid-point of dew and bubble", "dew point"),
        "saturation",
    ).tolist()
    box_note = np.where(box_measured, "measured box temperature", "design box temperature").tolist()
    out: list[list[Row | None]] = []
    for side, temp_key, pressure_key, temp_name, pressure_name in (
        (
            "evaporating",
            "evaporating_c",
            "suction_kpa_gauge",
            "evaporating_temp",
            "suction_pressure",
        ),
        ("condensing", "condensing_c", "head_kpa_gauge", "condensing_temp", "condensing_pressure"),
    ):
        if side == "evaporating":
            temp_sources = [
                f"{note} - evaporator TD ({g})" for note, g in zip(box_note, glide, strict=True)
            ]
        else:
            temp_sources = [f"entering air + condenser split ({g})" for g in glide]
        temp, pressure = (
            [_opt_list(num(key + edge)) for edge in ("", "_low", "_high")]
            for key in (temp_key, pressure_key)
        )
        out.append(
            [
                {"name": temp_name, "value": t, "low": lo, "high": hi, "unit": "C", "source": s}
                if t is not None
                else None
                for t, lo, hi, s in zip(*temp, temp_sources, strict=True)
            ]
        )
        out.append(
            [
                {
                    "name": pressure_name,
                    "value": p,
                    "low": lo,
                    "high": hi,
                    "unit": "kPa",
                    "source": f"pressure at the {side} target ({g}), gauge at the site elevation",
                }
                if p is not None
                else None
                for p, lo, hi, g in zip(*pressure, glide, strict=True)
            ]
        )
    return out


def _evidence_texts(
    signal: str, at: list[int], values: Mapping[str, Mapping[str, list[float | None]]]
) -> list[str]:
    """The evidence line of ``signal`` for the rows ``at``, filled part by part."""
    pieces: list[list[str]] = []
    for literal, metric, spec in _template(findings.SIGNALS[signal].text):
        if literal:
            pieces.append([literal] * len(at))
        if metric is None:
            continue
        v, unit = values[metric], sc.SCORING_TABLE[metric].unit
        if spec == "band":
            low, high = v["low"], v["high"]
            pieces.append([_band_text(low[j], high[j], unit) for j in at])
        else:
            shown = (
                v["target"] if spec == "target" else v["high"] if spec == "high" else v["measured"]
            )
            pieces.append([_fmt(shown[j], unit) for j in at])
    return ["".join(parts) for parts in zip(*pieces, strict=True)]


def _confidence(finding: Row) -> float:
    return -finding["confidence"]


def _finding_rows(
    mask: NDArray[np.int64],
    confidences: Mapping[str, FloatArray],
    signal: Callable[[str], NDArray[np.bool_]],
    values: Mapping[str, Mapping[str, list[float | None]]],
) -> dict[int, list[Row]]:
    """The findings of every row that has any (row position -> findings, most confident
    first); the evidence lines are formatted once per signal over the rows that show it."""
    has_finding = mask != 0
    if not has_finding.any():
        return {}
    fired_rules: list[
        tuple[findings.Rule, list[int], list[tuple[str, ...]], list[float], list[tuple[str, ...]]]
    ] = []
    for bit, rule in enumerate(findings.RULES):
        fired = np.flatnonzero(mask & (1 << bit))
        if not fired.size:
            continue
        first = np.full(fired.size, -1, dtype=np.int64)
        for t, trigger in enumerate(rule.triggers):
            hit = np.ones(fired.size, dtype=bool)
            for name in trigger:
                hit &= signal(name)[fired]
            first[(first < 0) & hit] = t
        support = np.zeros(fired.size, dtype=np.int64)
        for j, name in enumerate(rule.supporting):
            support[signal(name)[fired]] |= 1 << j
        names = [
            _evidence_names(bit, f, s)
            for f, s in zip(first.tolist(), support.tolist(), strict=True)
        ]
        confidence = [round(c, 3) for c in confidences[rule.code][fired].tolist()]
        open_: list[tuple[findings.Alternative, ...]] = [()] * fired.size
        for alternative in rule.alternatives:
            ruled_out = np.zeros(fired.size, dtype=bool)
            for name in alternative.unless:
                ruled_out |= signal(name)[fired]
            open_ = [
                (*kept, alternative) if not out else kept
                for kept, out in zip(open_, ruled_out.tolist(), strict=True)
            ]
        fired_rules.append((rule, fired.tolist(), names, confidence, open_))

    texts: dict[str, list[str | None]] = {}
    for name in set().union(*(set(n) for _, _, names, _, _ in fired_rules for n in set(names))):
        at = np.flatnonzero(signal(name) & has_finding).tolist()
        column: list[str | None] = [None] * len(mask)
        for j, text in zip(at, _evidence_texts(name, at, values), strict=True):
            column[j] = text
        texts[name] = column

    out: dict[int, list[Row]] = {}
    for rule, rows, names, confidence, alternatives in fired_rules:
        for j, behind, c, alt in zip(rows, names, confidence, alternatives, strict=True):
            out.setdefault(j, []).append(
                {
                    "code": rule.code,
                    "title": rule.title,
                    "evidence": [texts[s][j] for s in behind],
                    "confidence": c,
                    "advice": rule.advice,
                    "alternatives": [a.code for a in alt],
                    "deciding_check": " ".join(dict.fromkeys(a.check for a in alt)),
                }
            )
    for found in out.values():
        if len(found) > 1:
            found.sort(key=_confidence)
    return out


def stored_columns(res: BatchResult) -> dict[str, list[Any]]:
    """Every stored field of the batch but the version, one list per column (None where
    missing): the score, the energy penalty, the derived values trends read, and ``packed``
    (the stored form, one ``bytes`` per row)."""
    return {
        "score": _opt_list(res.score),
        "energy_penalty_pct": _opt_list(res.energy_penalty_pct),
        **{name: _opt_list(judged_derived(res, name)) for name in STORED_DERIVED},
        "packed": to_blobs(res.packed),
    }


def judged_derived(res: BatchResult, name: str) -> FloatArray:
    """A stored derived value where the diagnosis judged it (``STORED_DERIVED``), NaN
    elsewhere: trends and charts then follow exactly what was judged, never a split the
    head-pressure control held up or a pressure read with the compressor off."""
    metric = _JUDGED_BY.get(name)
    values = res.derived[name]
    if metric is None:
        off = np.isin(res.metrics["superheat"].reason, (REASON_COMPRESSOR_OFF, REASON_DEFROST))
        return np.where(off, np.nan, values)
    return np.where(res.metrics[metric].status != sc.NOT_SCORED, values, np.nan)


def typed_details(
    details: Row,
) -> tuple[tuple[Target, ...], tuple[Metric, ...], tuple[Finding, ...], tuple[Caution, ...]]:
    """Expanded details (``expand``) as the core's dataclasses: targets, metrics, findings
    (most confident first) and cautions."""
    return (
        tuple(Target(**t) for t in details["targets"]),
        tuple(Metric(**m) for m in details["metrics"]),
        tuple(
            Finding(
                **{**f, "evidence": tuple(f["evidence"]), "alternatives": tuple(f["alternatives"])}
            )
            for f in details["findings"]
        ),
        tuple(Caution(**c) for c in details["cautions"]),
    )


def _row_derived(res: BatchResult, i: int) -> DerivedValues:
    values: dict[str, Any] = {name: _opt(res.derived[name][i]) for name in DERIVED_NAMES}
    values["transcritical"] = bool(res.derived["transcritical"][i] == 1.0)
    return DerivedValues(**values)


def _row_diagnosis(res: BatchResult, i: int) -> Diagnosis:
    """Row ``i`` as dataclasses: its stored form read back (the same code as for any stored
    row), typed, plus every derived value."""
    row = expand(res.packed[i : i + 1])[0]
    targets, metrics, found, cautions = typed_details(row)
    return Diagnosis(
        score=_opt(res.score[i]),
        algorithm_version=res.algorithm_version,
        targets=targets,
        metrics=metrics,
        findings=found,
        cautions=cautions,
        energy_penalty_pct=_opt(res.energy_penalty_pct[i]),
        derived=_row_derived(res, i),
        glide_choice=row["glide_choice"],
    )
