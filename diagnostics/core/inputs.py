"""The diagnosis's inputs as columns: reading sets and unit designs turned into numpy arrays
(NaN for missing) once, so one batch run judges a single reading or a million alike."""

from __future__ import annotations

from collections.abc import Mapping, Sequence
from dataclasses import dataclass

import numpy as np
from numpy.typing import ArrayLike, NDArray

from diagnostics.core import refrigerants, unit_defaults
from diagnostics.core.numeric import FloatArray
from diagnostics.core.types import (
    APPLICATIONS,
    HEAD_PRESSURE_CONTROLS,
    METERING_DEVICES,
    SIGHT_GLASS_STATES,
    Reading,
    UnitDesign,
)

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


def _col(values: Sequence[float | None]) -> FloatArray:
    """Floats as a column, None as NaN (numpy reads None so for a float dtype)."""
    return np.array(values, dtype=np.float64)


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

    def arrays(self) -> list[NDArray[np.generic]]:
        """Every array held (to share them read-only)."""
        return [
            *self.floats.values(),
            self.refrigerant_code,
            self.application_code,
            self.metering_code,
            self.metering_given,
            self.water_cooled,
            self.has_receiver,
            self.control_code,
            self.control_given,
            self.basis_mid,
        ]

    @classmethod
    def from_designs(cls, designs: Sequence[UnitDesign]) -> UnitColumns:
        """Columns from design dataclasses; refrigerant names are normalised ('R404A')."""
        spelled = {
            r: refrigerants.normalise_designation(r) for r in {d.refrigerant for d in designs}
        }
        names = [spelled[d.refrigerant] for d in designs]
        distinct = tuple(dict.fromkeys(names))
        apps = [d.application if d.application in APPLICATIONS else "other" for d in designs]
        app_code = np.array([APPLICATIONS.index(a) for a in apps], dtype=np.intp)
        given = np.array([d.metering_device in METERING_DEVICES for d in designs], dtype=bool)
        default_meter = unit_defaults.default_metering_codes(app_code).astype(np.intp)
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
        receiver = np.where(
            np.isnan(receiver), unit_defaults.default_has_receiver(app_code), receiver
        )
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
        control = np.where(
            control_given, control, unit_defaults.default_head_pressure_control_codes(app_code)
        )
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
