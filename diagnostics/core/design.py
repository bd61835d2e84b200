"""What each unit should read, resolved once: its design value where the unit gives one, else
its application's default, else missing; with the ok range around it and where it came from.

``resolve`` is the one place a unit's design quantities are resolved. The batch diagnosis
judges readings against it, the stored form records its origins (so a target's source can
be written when the diagnosis is read), the flag history takes the design split a drift is
judged against from it, and the demo fleet its healthy ranges: none derives them again.
"""

from __future__ import annotations

import dataclasses
import functools
from collections.abc import Sequence
from dataclasses import dataclass
from typing import Literal

import numpy as np
from numpy.typing import NDArray

from diagnostics.core import electrical
from diagnostics.core import scoring as sc
from diagnostics.core import targets as tg
from diagnostics.core import unit_defaults as ud
from diagnostics.core.inputs import UnitColumns
from diagnostics.core.numeric import FloatArray
from diagnostics.core.types import APPLICATIONS, UnitDesign

#: Where a resolved quantity came from (``unit_defaults.FROM_DESIGN`` / ``FROM_DEFAULT`` /
#: ``MISSING``), by name.
Origin = Literal["design", "application_default", "missing"]
ORIGINS: dict[int, Origin] = {
    ud.FROM_DESIGN: "design",
    ud.FROM_DEFAULT: "application_default",
    ud.MISSING: "missing",
}


def _optional(x: float) -> float | None:
    return float(x) if np.isfinite(x) else None


@dataclass(frozen=True)
class ResolvedTarget:
    """One design quantity of one unit: its value, the range accepted as ok around it (None
    where open or unknown) and where it came from."""

    value: float | None
    low: float | None
    high: float | None
    origin: Origin


@dataclass(frozen=True)
class Resolved:
    """One design quantity for every unit (or every row, after ``take``)."""

    value: FloatArray
    low: FloatArray
    high: FloatArray
    origin: NDArray[np.int8]

    def take(self, index: NDArray[np.intp]) -> Resolved:
        return Resolved(self.value[index], self.low[index], self.high[index], self.origin[index])

    def at(self, i: int) -> ResolvedTarget:
        return ResolvedTarget(
            _optional(self.value[i]),
            _optional(self.low[i]),
            _optional(self.high[i]),
            ORIGINS[int(self.origin[i])],
        )


def _banded(resolved: ud.Resolved, metric: str) -> Resolved:
    """A resolved target with the ok band its metric's rule puts around it."""
    low, high = sc.ok_band(sc.SCORING_TABLE[metric], resolved.value)
    return Resolved(resolved.value, low, high, resolved.origin)


@dataclass(frozen=True)
class DesignTargets:
    """Every design quantity the diagnosis judges against, one entry per unit (or, after
    ``take``, per reading). Temperatures in C, differences in K, pressures kPa gauge."""

    #: Resolved from design data or the application's defaults (``unit`` names them).
    box_temp_c: Resolved
    evap_td_k: Resolved
    condenser_split_k: Resolved
    #: The unit's superheat range; value: its middle; origin: the less certain end's.
    superheat_k: Resolved
    #: The range for a unit with or without a receiver; origin: the receiver answer's.
    subcooling_k: Resolved
    #: The head-pressure control's set point; low, high: where a held head is found.
    head_setpoint_c: Resolved
    run_capacitor_tolerance_pct: Resolved
    #: Taken as the unit gives them (nameplate and design data), or fixed limits.
    ice_machine: NDArray[np.bool_]
    water_cooled: NDArray[np.bool_]
    basis_mid: NDArray[np.bool_]
    has_receiver: FloatArray
    cr_typical_low: FloatArray
    cr_limit: FloatArray
    cutout_kpa_gauge: FloatArray
    rla_a: FloatArray
    lra_a: FloatArray
    volts_low: FloatArray
    volts_high: FloatArray
    volts_nominal: FloatArray
    phase: FloatArray
    run_cap_uf: FloatArray
    run_cap_low: FloatArray
    run_cap_high: FloatArray
    start_cap_uf: FloatArray
    start_cap_low: FloatArray
    start_cap_high: FloatArray

    def __len__(self) -> int:
        return int(self.phase.shape[0])

    def take(self, index: NDArray[np.intp]) -> DesignTargets:
        """The targets of the unit of each row (``index``: the row's unit)."""
        return DesignTargets(
            **{
                f.name: getattr(self, f.name)[index]
                if isinstance(getattr(self, f.name), np.ndarray)
                else getattr(self, f.name).take(index)
                for f in dataclasses.fields(self)
            }
        )

    def unit(self, i: int) -> dict[str, ResolvedTarget]:
        """The resolved quantities of unit ``i``, by name."""
        return {name: getattr(self, name).at(i) for name in RESOLVED}

    def arrays(self) -> list[NDArray[np.generic]]:
        """Every array held (to share them read-only)."""
        out: list[NDArray[np.generic]] = []
        for f in dataclasses.fields(self):
            held = getattr(self, f.name)
            if isinstance(held, Resolved):
                out += [held.value, held.low, held.high, held.origin]
            else:
                out.append(held)
        return out


#: The quantities resolved from design data or defaults, with a value, range and origin.
RESOLVED: tuple[str, ...] = (
    "box_temp_c",
    "evap_td_k",
    "condenser_split_k",
    "superheat_k",
    "subcooling_k",
    "head_setpoint_c",
    "run_capacitor_tolerance_pct",
)


def resolve(units: Sequence[UnitDesign] | UnitColumns) -> DesignTargets:
    """Every design quantity of every unit: design data first, application default second
    (``targets.APPLICATION_DEFAULTS``), with the ok range and the origin of each."""
    u = units if isinstance(units, UnitColumns) else UnitColumns.from_designs(units)
    f, app = u.floats, u.application_code
    box = ud.resolve(f["design_box_temp_c"], ud.default_box_temp_c(app))
    # An ice machine makes ice: its bin is no box held at a set point, so no box target.
    ice = app == APPLICATIONS.index("ice_machine")
    box = ud.Resolved(np.where(ice, np.nan, box.value), np.where(ice, ud.MISSING, box.origin))
    sh_low, sh_high = ud.default_superheat_range_k(app, u.metering_code)
    sh_min = ud.resolve(f["superheat_min_k"], sh_low)
    sh_max = ud.resolve(f["superheat_max_k"], sh_high)
    sh_origin = np.stack([sh_min.origin, sh_max.origin])
    sc_low, sc_high = ud.subcooling_range_k(u.has_receiver)
    receiver_origin = np.where(
        np.isnan(u.has_receiver),
        ud.MISSING,
        np.where([d.has_receiver is not None for d in u.designs], ud.FROM_DESIGN, ud.FROM_DEFAULT),
    ).astype(np.int8)
    setpoint, held_low, held_high = ud.head_control_band(
        u.control_code, f["head_pressure_setpoint_c"]
    )
    setpoint_origin = np.where(
        np.isnan(setpoint),
        ud.MISSING,
        np.where(np.isnan(f["head_pressure_setpoint_c"]), ud.FROM_DEFAULT, ud.FROM_DESIGN),
    ).astype(np.int8)
    typical_low, typical_high = ud.compression_ratio_typical(app)
    volts, volts_max = f["nameplate_volts"], f["nameplate_volts_max"]
    upper = np.where(np.isnan(volts_max), volts, volts_max)
    volt_tol = electrical.NEMA_VOLTAGE_TOLERANCE_PCT / 100.0
    rating = f["run_capacitor_uf"]
    tolerance = ud.resolve(f["run_capacitor_tolerance_pct"], tg.RUN_CAPACITOR_TOLERANCE_PCT.value)
    tol_pct = np.where(np.isnan(rating), np.nan, tolerance.value)
    s_min, s_max = f["start_capacitor_min_uf"], f["start_capacitor_max_uf"]
    s_min, s_max = np.where(np.isnan(s_min), s_max, s_min), np.where(np.isnan(s_max), s_min, s_max)
    nan = np.full(len(u), np.nan)
    return DesignTargets(
        box_temp_c=_banded(box, "box_temp"),
        evap_td_k=_banded(
            ud.resolve(f["design_evap_td_k"], ud.default_evap_td_k(app)), "evaporator_td"
        ),
        condenser_split_k=_banded(
            ud.resolve(f["design_condenser_split_k"], ud.default_condenser_split_k(app)),
            "condenser_split",
        ),
        superheat_k=Resolved(
            0.5 * (sh_min.value + sh_max.value),
            sh_min.value,
            sh_max.value,
            np.where(
                (sh_origin == ud.MISSING).any(axis=0), ud.MISSING, sh_origin.max(axis=0)
            ).astype(np.int8),
        ),
        subcooling_k=Resolved(0.5 * (sc_low + sc_high), sc_low, sc_high, receiver_origin),
        head_setpoint_c=Resolved(setpoint, held_low, held_high, setpoint_origin),
        run_capacitor_tolerance_pct=Resolved(
            tol_pct, nan, nan, np.where(np.isnan(rating), ud.MISSING, tolerance.origin)
        ),
        ice_machine=ice,
        water_cooled=u.water_cooled,
        basis_mid=u.basis_mid,
        has_receiver=u.has_receiver,
        cr_typical_low=typical_low,
        # a freezer runs ratios a cooler never should: its own typical top where that is higher
        cr_limit=np.fmax(typical_high, tg.COMPRESSION_RATIO_LIMIT.value),
        cutout_kpa_gauge=f["high_pressure_cutout_kpa_gauge"],
        rla_a=f["rla_a"],
        lra_a=f["lra_a"],
        volts_low=volts * (1 - volt_tol),
        volts_high=upper * (1 + volt_tol),
        volts_nominal=0.5 * (volts + upper),
        phase=f["phase"],
        run_cap_uf=rating,
        run_cap_low=rating * (1 - tol_pct / 100.0),
        run_cap_high=rating * (1 + tol_pct / 100.0),
        start_cap_uf=0.5 * (s_min + s_max),
        start_cap_low=s_min,
        start_cap_high=s_max,
    )


def resolve_one(design: UnitDesign) -> dict[str, ResolvedTarget]:
    """The resolved quantities of one unit, by name (``DesignTargets.unit``)."""
    return columns_and_targets((design,))[1].unit(0)


@functools.lru_cache(maxsize=1024)
def columns_and_targets(designs: tuple[UnitDesign, ...]) -> tuple[UnitColumns, DesignTargets]:
    """The columns and targets of a few units, kept per design: a single reading would
    otherwise rebuild them on every POST, though a unit's design rarely changes (a changed
    design is another key). The arrays are read-only, as they are shared."""
    uc = UnitColumns.from_designs(designs)
    resolved = resolve(uc)
    for array in (*resolved.arrays(), *uc.arrays()):
        array.setflags(write=False)
    return uc, resolved
