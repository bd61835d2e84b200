"""Energy cost of a high head: a simple vapour-compression cycle with CoolProp.

Method (docs/references.md §7): evaporating pressure ``p_e = p_dew(T_evap)``; state 1 at
``(p_e, T_dew + superheat)``; state 2s by a 1-D root-find on temperature at ``p_c`` so that
``s2s = s1``; ``h2 = h1 + (h2s - h1) / eta_is``; state 3 at ``(p_c, T_bubble - subcooling)``;
``COP = (h1 - h3) / (h2 - h1)``. CoolProp's mixture models accept only PT, PQ and QT inputs
(and their saturation flashes fail in bands), so every property call here is a PT flash with
the phase imposed (gas for states 1 and 2, liquid for state 3); saturation temperatures and
pressures come from the project's saturation tables.

The penalty compares the work per unit of cooling at the measured condensing pressure with
the work at the target condensing pressure, at the measured evaporating pressure:
``extra % = 100 x (COP_target / COP_actual - 1)``. Superheat and subcooling are held at
nominal values (``NOMINAL_SUPERHEAT_K``, ``NOMINAL_SUBCOOLING_K``) and the isentropic
efficiency at ``ISENTROPIC_EFFICIENCY`` so the figure isolates the head pressure. A head below
target is no penalty: the result is clipped at 0.

For batches the cycle is evaluated once per refrigerant on a grid of evaporating dew
temperature x lift (condensing dew - evaporating dew) and read back with a bicubic spline of
the work per unit of cooling (``cop_surface``); the exact cycle stays available as
``cycle_cop`` and the tests hold the grid to it.
"""

from __future__ import annotations

from dataclasses import dataclass
from functools import lru_cache

import CoolProp
import numpy as np
from CoolProp.CoolProp import AbstractState, phases
from numpy.typing import ArrayLike, NDArray
from scipy.interpolate import RectBivariateSpline
from scipy.optimize import brentq

from diagnostics.core import refrigerants, saturation

FloatArray = NDArray[np.float64]

#: Stated compressor isentropic efficiency (docs/references.md §7 worked example).
ISENTROPIC_EFFICIENCY = 0.65
#: Nominal evaporator superheat, 10 F (docs/references.md §7 worked example).
NOMINAL_SUPERHEAT_K = 10.0 / 1.8
#: Nominal subcooling, 5 F (docs/references.md §7 worked example).
NOMINAL_SUBCOOLING_K = 5.0 / 1.8

#: Grid of the batch surface: evaporating dew temperature (C) and lift (K).
GRID_EVAPORATING_C: FloatArray = np.arange(-50.0, 15.0 + 1e-9, 2.5)
GRID_LIFT_K: FloatArray = np.arange(5.0, 80.0 + 1e-9, 2.5)
#: Stay this far below the critical temperature: condensing near it is not a simple cycle.
CRITICAL_MARGIN_K = 3.0

_KELVIN = 273.15


class CycleError(ValueError):
    """The cycle cannot be evaluated at these conditions."""


@lru_cache(maxsize=32)
def _abstract_state(designation: str) -> AbstractState:
    """A CoolProp HEOS state for the refrigerant, modelled as the catalogue says (pseudo-pure
    where CoolProp ships one, else a HEOS mixture of the constituents)."""
    return refrigerants.get(designation).coolprop_state()


def _flash(state: AbstractState, p_pa: float, t_k: float, phase: phases) -> tuple[float, float]:
    """Enthalpy and entropy at (p, T) with the phase imposed (PT is all mixtures accept)."""
    state.specify_phase(phase)
    try:
        state.update(CoolProp.PT_INPUTS, p_pa, t_k)
        return state.hmass(), state.smass()
    finally:
        state.unspecify_phase()


def _cop(
    state: AbstractState,
    p_e_kpa: float,
    p_c_kpa: float,
    t_evap_dew_c: float,
    t_cond_dew_c: float,
    t_cond_bubble_c: float,
    superheat_k: float,
    subcooling_k: float,
    efficiency: float,
) -> float:
    p_e, p_c = p_e_kpa * 1e3, p_c_kpa * 1e3
    h1, s1 = _flash(state, p_e, t_evap_dew_c + _KELVIN + superheat_k, CoolProp.iphase_gas)

    def entropy_gap(t_k: float) -> float:
        return _flash(state, p_c, t_k, CoolProp.iphase_gas)[1] - s1

    low = t_cond_dew_c + _KELVIN + 1e-3
    high = low + 100.0
    while entropy_gap(high) < 0:
        high += 100.0
        if high > low + 600.0:
            raise CycleError("no isentropic discharge state found")
    t2s = brentq(entropy_gap, low, high, xtol=1e-6)
    h2s = _flash(state, p_c, t2s, CoolProp.iphase_gas)[0]
    h2 = h1 + (h2s - h1) / efficiency
    h3 = _flash(state, p_c, t_cond_bubble_c + _KELVIN - subcooling_k, CoolProp.iphase_liquid)[0]
    if not h2 > h1 > h3:
        raise CycleError("the states do not form a refrigeration cycle")
    return (h1 - h3) / (h2 - h1)


def cycle_cop(
    designation: str,
    evaporating_kpa_abs: float,
    condensing_kpa_abs: float,
    superheat_k: float = NOMINAL_SUPERHEAT_K,
    subcooling_k: float = NOMINAL_SUBCOOLING_K,
    isentropic_efficiency: float = ISENTROPIC_EFFICIENCY,
) -> float:
    """COP of the simple cycle between two absolute pressures (the exact, per-call path).

    Raises ``CycleError`` when the pressures give no cycle (condensing at or below
    evaporating) and the saturation module's errors when a pressure is outside the curve.
    """
    if not condensing_kpa_abs > evaporating_kpa_abs > 0:
        raise CycleError("condensing pressure must be above evaporating pressure")
    curve = saturation.table(designation)
    t_e = float(curve.dew_temp_c(evaporating_kpa_abs))
    t_cd = float(curve.dew_temp_c(condensing_kpa_abs))
    t_cb = float(curve.bubble_temp_c(condensing_kpa_abs))
    return _cop(
        _abstract_state(designation),
        evaporating_kpa_abs,
        condensing_kpa_abs,
        t_e,
        t_cd,
        t_cb,
        superheat_k,
        subcooling_k,
        isentropic_efficiency,
    )


def cycle_cop_at_dew_temperatures(
    designation: str,
    evaporating_dew_c: float,
    condensing_dew_c: float,
    superheat_k: float = NOMINAL_SUPERHEAT_K,
    subcooling_k: float = NOMINAL_SUBCOOLING_K,
    isentropic_efficiency: float = ISENTROPIC_EFFICIENCY,
) -> float:
    """COP with the two pressures given as dew temperatures (the form of docs/references.md §7)."""
    curve = saturation.table(designation)
    return cycle_cop(
        designation,
        float(curve.dew_pressure_kpa_abs(evaporating_dew_c)),
        float(curve.dew_pressure_kpa_abs(condensing_dew_c)),
        superheat_k,
        subcooling_k,
        isentropic_efficiency,
    )


@dataclass(frozen=True)
class CopSurface:
    """Work per unit of cooling (1 / COP) over evaporating dew temperature x lift.

    ``valid`` marks grid nodes computed at their own conditions; a query is answered only
    where all four nodes of its cell are valid, NaN elsewhere (outside the grid, lift below
    its first node, condensing too close to the critical point).
    """

    designation: str
    evaporating_c: FloatArray
    lift_k: FloatArray
    work: FloatArray
    valid: NDArray[np.bool_]
    spline: RectBivariateSpline

    def work_per_cooling(
        self, evaporating_dew_c: ArrayLike, condensing_dew_c: ArrayLike
    ) -> FloatArray:
        """1 / COP at each pair, NaN where the surface does not reach."""
        te = np.asarray(evaporating_dew_c, dtype=np.float64)
        lift = np.asarray(condensing_dew_c, dtype=np.float64) - te
        te, lift = np.broadcast_arrays(te, lift)
        out = np.full(te.shape, np.nan)
        inside = (
            np.isfinite(te)
            & np.isfinite(lift)
            & (te >= self.evaporating_c[0])
            & (te <= self.evaporating_c[-1])
            & (lift >= self.lift_k[0])
            & (lift <= self.lift_k[-1])
        )
        if not inside.any():
            return out
        ti, li = te[inside], lift[inside]
        i = np.clip(np.searchsorted(self.evaporating_c, ti) - 1, 0, len(self.evaporating_c) - 2)
        j = np.clip(np.searchsorted(self.lift_k, li) - 1, 0, len(self.lift_k) - 2)
        cell_ok = (
            self.valid[i, j]
            & self.valid[i + 1, j]
            & self.valid[i, j + 1]
            & self.valid[i + 1, j + 1]
        )
        values = self.spline.ev(ti, li)
        out[inside] = np.where(cell_ok, values, np.nan)
        return out


@lru_cache(maxsize=32)
def cop_surface(designation: str) -> CopSurface:
    """Build (once per process and refrigerant) the work surface for batch penalties."""
    curve = saturation.table(designation)
    state = _abstract_state(designation)
    t_max = min(float(curve.critical_temp_c) - CRITICAL_MARGIN_K, float(curve.max_temp_c))
    te_axis, lift_axis = GRID_EVAPORATING_C, GRID_LIFT_K
    te_grid, lift_grid = np.meshgrid(te_axis, lift_axis, indexing="ij")
    tc_grid = te_grid + lift_grid
    valid = tc_grid <= t_max
    tc_used = np.minimum(tc_grid, t_max)
    p_e = np.asarray(curve.dew_pressure_kpa_abs(te_axis, strict=False), dtype=np.float64)
    p_c = np.asarray(curve.dew_pressure_kpa_abs(tc_used.ravel(), strict=False)).reshape(
        tc_used.shape
    )
    t_cb = np.asarray(curve.bubble_temp_c(p_c.ravel(), strict=False)).reshape(p_c.shape)
    work = np.full(te_grid.shape, np.nan)
    for i in range(len(te_axis)):
        for j in range(len(lift_axis)):
            try:
                cop = _cop(
                    state,
                    float(p_e[i]),
                    float(p_c[i, j]),
                    float(te_axis[i]),
                    float(tc_used[i, j]),
                    float(t_cb[i, j]),
                    NOMINAL_SUPERHEAT_K,
                    NOMINAL_SUBCOOLING_K,
                    ISENTROPIC_EFFICIENCY,
                )
                work[i, j] = 1.0 / cop
            except (CycleError, ValueError):
                work[i, j] = np.nan
    valid &= np.isfinite(work)
    # The spline needs a full grid: carry the last good value along each row into the holes
    # (queries there are refused through ``valid`` anyway).
    filled = work.copy()
    for i in range(filled.shape[0]):
        row = filled[i]
        good = np.isfinite(row)
        if not good.any():
            row[:] = 1.0
            continue
        idx = np.where(good, np.arange(row.size), 0)
        np.maximum.accumulate(idx, out=idx)
        first = int(np.argmax(good))
        idx[:first] = first
        filled[i] = row[idx]
    spline = RectBivariateSpline(te_axis, lift_axis, filled, kx=3, ky=3)
    return CopSurface(designation, te_axis, lift_axis, work, valid, spline)


def energy_penalty_pct(
    designation: str,
    evaporating_dew_c: ArrayLike,
    condensing_dew_c: ArrayLike,
    target_condensing_dew_c: ArrayLike,
) -> FloatArray:
    """Extra compressor energy per unit of cooling at the measured head, in % (>= 0, NaN
    where either state is outside the surface)."""
    surface = cop_surface(designation)
    w_actual = surface.work_per_cooling(evaporating_dew_c, condensing_dew_c)
    w_target = surface.work_per_cooling(evaporating_dew_c, target_condensing_dew_c)
    with np.errstate(invalid="ignore", divide="ignore"):
        pct = 100.0 * (w_actual / w_target - 1.0)
    return np.where(np.isnan(pct), np.nan, np.maximum(pct, 0.0))
