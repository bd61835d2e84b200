"""Building a refrigerant's saturation table from CoolProp (done once, then read from disk).

How a table is made (once per refrigerant per CoolProp version)
----------------------------------------------------------------
CoolProp models the refrigerant as ``Refrigerant.coolprop_state()`` says: a pure fluid, one of
CoolProp's pseudo-pure blends (R-404A, R-407C, R-410A, R-507A), or a HEOS mixture of the
constituents. Four curves are tabulated, each on a uniform grid (see ``saturation.lookup``):

- ln p_bubble and ln p_dew (kPa) on a uniform grid in temperature, at most 1 degF apart, from
  the lowest temperature (-60 degC, or the triple point if higher: R-744 at -56.56 degC) to the
  top of the table (below);
- bubble and dew temperature on a uniform grid in ln p over each curve's pressure range,
  spaced no wider than the temperature grid anywhere.

Both grids come from CoolProp directly (QT and PQ inputs), never from each other. For HEOS
mixtures a plain saturation call fails in bands that matter (docs/references.md §1.4), so
the curves are traced by marching: each point is solved with
``AbstractState.update_with_guesses`` seeded with the previous point's pressure or
temperature, phase compositions and densities. Pure and pseudo-pure fluids take plain calls.

The table stops just below the critical point: 0.1 K below it for a pure fluid. A blend's
curves are followed from 0.5 K below it downwards (CoolProp's pseudo-pure R-410A and R-507A
fail here and there within 0.4 K of it) and cut at the first node where CoolProp fails, the
curve stops rising, or its step in ln p changes by more than 5 % from the step before (near
a mixture's critical point the solver can land on another branch). The temperatures at the
pressure nodes must then agree with the temperature grid within 0.01 K, or the table is cut
lower still. Blend tables end 0.5-2.2 K below the critical point, which for a HEOS mixture is
taken from CoolProp's phase envelope, where the liquid and vapour compositions cross.
"""

from __future__ import annotations

import json
import math
from typing import Any

import CoolProp
import CoolProp.CoolProp as CP
import numpy as np
import numpy.typing as npt

from diagnostics.core.numeric import FloatArray
from diagnostics.core.refrigerants import Refrigerant
from diagnostics.core.saturation.lookup import CURVES, Curve, Quantity
from diagnostics.core.units import ZERO_C_IN_K

#: Bump when the table's content or layout changes: old cache files are then ignored.
TABLE_FORMAT = 1
#: The lowest temperature a refrigeration system meets; the triple point if that is higher.
LOWEST_TEMP_C = -60.0
#: Widest spacing of the temperature grid: 1 degF.
MAX_STEP_K = 5.0 / 9.0
#: How close to the critical temperature a table may go: a pure fluid's, and a blend's
#: (CoolProp's pseudo-pure R-410A and R-507A fail here and there within 0.4 K of it).
CRITICAL_MARGIN_K = 0.1
BLEND_CRITICAL_MARGIN_K = 0.5
#: A blend's curve is cut where its step in ln p changes by more than this from one step to
#: the next.
MAX_STEP_CHANGE = 0.05
_QUALITY: dict[Curve, int] = {"bubble": 0, "dew": 1}


def _guesses(state: Any) -> Any:
    """The current saturated state as a seed for the next ``update_with_guesses``."""
    guess = CP.PyGuessesStructure()
    guess.T = state.T()
    guess.p = state.p()
    guess.x = state.mole_fractions_liquid()
    guess.y = state.mole_fractions_vapor()
    guess.rhomolar_liq = state.saturated_liquid_keyed_output(CP.iDmolar)
    guess.rhomolar_vap = state.saturated_vapor_keyed_output(CP.iDmolar)
    return guess


#: Widest step of a mixture march in ln p (about 1 degF near the critical point).
_MAX_LNP_STEP = 0.01
#: A marched point is refused (and the step retried in smaller parts) when it strays from the
#: straight-line extrapolation of the two before by more than this share of the step: near a
#: mixture's critical point the solver can otherwise land on another branch.
_MAX_STRAY = 0.25


class _MixtureMarch:
    """A march along one saturation curve of a HEOS mixture with ``update_with_guesses``.

    Works in (x, y) = (T, ln p) for temperature inputs and (ln p, T) for pressure inputs,
    both rising along the curve.
    """

    def __init__(self, state: Any, given: Quantity, quality: int) -> None:
        self.state, self.given, self.quality = state, given, quality
        self.max_step = MAX_STEP_K if given == "temperature" else _MAX_LNP_STEP
        state.update(CP.QT_INPUTS, quality, _lowest_temp_k(state))
        self.points = [self._point()]
        self.guess = _guesses(state)

    def _point(self) -> tuple[float, float]:
        t, lnp = self.state.T(), math.log(self.state.p())
        return (t, lnp) if self.given == "temperature" else (lnp, t)

    def _step(self, x: float) -> bool:
        pair, a, b = (
            (CP.QT_INPUTS, self.quality, x)
            if self.given == "temperature"
            else (CP.PQ_INPUTS, math.exp(x), self.quality)
        )
        try:
            self.state.update_with_guesses(pair, a, b, self.guess)
            x_new, y_new = self._point()
        except (ValueError, RuntimeError):
            return False
        x1, y1 = self.points[-1]
        if not (math.isfinite(y_new) and y_new > y1):
            return False
        if len(self.points) > 1:
            x0, y0 = self.points[-2]
            rise = (y1 - y0) / (x1 - x0) * (x_new - x1)
            if abs(y_new - y1 - rise) > _MAX_STRAY * abs(rise):
                return False
        self.points = [self.points[-1], (x_new, y_new)]
        self.guess = _guesses(self.state)
        return True

    def advance(self, x: float) -> bool:
        """Solve at x (a temperature in K, or ln of a pressure in Pa), in steps no wider than
        the table's, halving them up to three times where the solver fails or strays."""
        start, saved = self.points[-1][0], (list(self.points), self.guess)
        if x == start:
            return True
        parts = max(1, math.ceil(abs(x - start) / self.max_step))
        for _ in range(4):
            if all(self._step(float(sub)) for sub in np.linspace(start, x, parts + 1)[1:]):
                return True
            self.points, self.guess = list(saved[0]), saved[1]
            parts *= 2
        return False


def _march(
    refrigerant: Refrigerant, given: Quantity, values_si: FloatArray, curve: Curve
) -> FloatArray:
    """CoolProp's saturation pressure (Pa) at ascending temperatures (K), or temperature (K)
    at ascending pressures (Pa), along one curve; NaN from the first failure on.

    Pure and pseudo-pure fluids take plain calls; a HEOS mixture is marched (``_MixtureMarch``)
    from the lowest tabulated temperature.
    """
    state = refrigerant.coolprop_state()
    quality = _QUALITY[curve]
    out = np.full(len(values_si), np.nan)
    march = _MixtureMarch(state, given, quality) if refrigerant.is_coolprop_mixture else None
    for k, value in enumerate(values_si):
        try:
            if march is not None:
                if not march.advance(float(value if given == "temperature" else np.log(value))):
                    break
            elif given == "temperature":
                state.update(CP.QT_INPUTS, quality, float(value))
            else:
                state.update(CP.PQ_INPUTS, float(value), quality)
        except (ValueError, RuntimeError):
            break
        out[k] = state.p() if given == "temperature" else state.T()
    return out


def coolprop_pressure_kpa_abs(refrigerant: Refrigerant, t_c: npt.ArrayLike, curve: Curve) -> Any:
    """Saturation pressure straight from CoolProp (no table), for checks and benchmarks.

    Slow: microseconds per value for pure fluids, up to a millisecond for mixtures, which are
    marched along the sorted inputs from the lowest tabulated temperature.
    """
    return _direct(refrigerant, "temperature", np.asarray(t_c, float) + ZERO_C_IN_K, curve) / 1e3


def coolprop_temp_c(refrigerant: Refrigerant, p_kpa_abs: npt.ArrayLike, curve: Curve) -> Any:
    """Saturation temperature straight from CoolProp (no table); see coolprop_pressure_kpa_abs."""
    return _direct(refrigerant, "pressure", np.asarray(p_kpa_abs, float) * 1e3, curve) - ZERO_C_IN_K


def _direct(refrigerant: Refrigerant, given: Quantity, values_si: FloatArray, curve: Curve) -> Any:
    order = np.argsort(values_si, axis=None)
    out = np.empty(values_si.size)
    out[order] = _march(refrigerant, given, values_si.ravel()[order], curve)
    return out.reshape(values_si.shape)


def _lowest_temp_k(state: Any) -> float:
    return max(LOWEST_TEMP_C + ZERO_C_IN_K, float(state.Tmin()))


def _sound_prefix(lnp: FloatArray, check_steps: bool) -> int:
    """How many leading nodes of a curve on a uniform grid to keep: finite and rising, and,
    with ``check_steps``, without a step in ln p that differs from the one before by more than
    MAX_STEP_CHANGE."""
    keep = int(np.argmin(np.isfinite(lnp))) if not np.all(np.isfinite(lnp)) else len(lnp)
    steps = np.diff(lnp[:keep])
    if np.any(steps <= 0):
        keep = int(np.argmax(steps <= 0)) + 1
        steps = steps[: keep - 1]
    if check_steps and len(steps) > 1:
        change = np.abs(steps[1:] / steps[:-1] - 1.0)
        if np.any(change > MAX_STEP_CHANGE):
            keep = int(np.argmax(change > MAX_STEP_CHANGE)) + 2
    return keep


def _critical_point(refrigerant: Refrigerant, state: Any) -> tuple[float, float]:
    """(K, Pa). For a HEOS mixture: where CoolProp's phase envelope passes from the dew side to
    the bubble side (liquid and vapour compositions cross), nearest the highest pressure.
    ``all_critical_points()`` agrees within 0.05 K but takes up to 6 s (R-448A); the envelope
    takes under 0.1 s."""
    if not refrigerant.is_coolprop_mixture:
        return float(state.T_critical()), float(state.p_critical())
    state.build_phase_envelope("")
    envelope = state.get_phase_envelope_data()
    t, p = np.asarray(envelope.T), np.asarray(envelope.p)
    split = np.asarray(envelope.x) - np.asarray(envelope.y)  # component x point
    side = split.T @ split[:, 0]  # > 0 on the dew side the envelope starts from
    crossings = np.flatnonzero(np.sign(side[:-1]) != np.sign(side[1:]))
    k = int(crossings[np.argmin(np.abs(crossings - np.argmax(p)))])
    w = side[k] / (side[k] - side[k + 1])
    return float(t[k] + w * (t[k + 1] - t[k])), float(p[k] + w * (p[k + 1] - p[k]))


#: How far CoolProp's temperature at a pressure node may sit from the temperature grid's
#: reading there before the node counts as a wrong solution (the grid's own error is < 0.003 K).
_AGREE_K = 0.01


def _temps_at_pressure_nodes(
    refrigerant: Refrigerant, curve: Curve, lnp: FloatArray, temps_k: FloatArray
) -> tuple[FloatArray, FloatArray, int]:
    """Pressure nodes evenly spaced in ln p over the curve's range, as fine as the temperature
    grid's finest step, and CoolProp's temperatures (K) at them. The third item is how many
    leading temperature-grid nodes these cover soundly (all of them unless CoolProp failed)."""
    n = math.ceil((lnp[-1] - lnp[0]) / np.min(np.diff(lnp)) - 1e-9) + 1
    lnp_nodes = np.linspace(lnp[0], lnp[-1], n)
    temps = _march(refrigerant, "pressure", np.exp(lnp_nodes) * 1e3, curve)
    with np.errstate(invalid="ignore"):
        good = np.abs(temps - np.interp(lnp_nodes, lnp, temps_k)) <= _AGREE_K
        good[1:] &= np.diff(temps) > 0
    if good.all():
        return lnp_nodes, temps, len(temps_k)
    first_bad = int(np.argmin(good))
    if first_bad == 0:
        return lnp_nodes, temps, 0
    return lnp_nodes, temps, int(np.searchsorted(lnp, lnp_nodes[first_bad - 1], side="right"))


def build_arrays(refrigerant: Refrigerant) -> dict[str, Any]:
    """Compute a refrigerant's table from CoolProp (the disk cache stores exactly this)."""
    state = refrigerant.coolprop_state()
    t_min_k = _lowest_temp_k(state)
    t_crit_k, p_crit_pa = _critical_point(refrigerant, state)
    t_cap_k = t_crit_k - (BLEND_CRITICAL_MARGIN_K if refrigerant.is_blend else CRITICAL_MARGIN_K)
    temps_k = np.linspace(t_min_k, t_cap_k, math.ceil((t_cap_k - t_min_k) / MAX_STEP_K) + 1)

    curves: tuple[Curve, ...] = ("bubble", "dew") if refrigerant.is_blend else ("bubble",)
    lnp_of_t = {
        curve: np.log(_march(refrigerant, "temperature", temps_k, curve) / 1e3) for curve in curves
    }
    keep = min(_sound_prefix(lnp, refrigerant.is_blend) for lnp in lnp_of_t.values())
    if keep < 2:
        raise RuntimeError(f"{refrigerant.designation}: CoolProp gave no saturation curve")

    # The temperature at each pressure node comes from CoolProp too (PQ inputs). Near a blend's
    # critical point that solve can fail or land on the other branch: where it disagrees with
    # the temperature grid, the table ends lower and the pressure nodes are solved again.
    while True:
        temp_of_lnp = {
            curve: _temps_at_pressure_nodes(
                refrigerant, curve, lnp_of_t[curve][:keep], temps_k[:keep]
            )
            for curve in curves
        }
        agreed = min(k for _, _, k in temp_of_lnp.values())
        if agreed == keep:
            break
        if agreed < 2:
            raise RuntimeError(f"{refrigerant.designation}: CoolProp's PQ and QT curves disagree")
        keep = agreed

    arrays: dict[str, Any] = {
        "temp_range_c": np.array([temps_k[0], temps_k[keep - 1]]) - ZERO_C_IN_K,
        "critical_point": np.array([t_crit_k - ZERO_C_IN_K, p_crit_pa / 1e3]),
    }
    for curve in CURVES:
        # a pure fluid's dew curve is its bubble curve
        source: Curve = curve if curve in curves else "bubble"
        lnp_nodes, temps, _ = temp_of_lnp[source]
        arrays[f"lnp_{curve}_of_temp"] = lnp_of_t[source][:keep]
        arrays[f"lnp_range_{curve}"] = lnp_nodes[[0, -1]]
        arrays[f"temp_{curve}_of_lnp"] = temps - ZERO_C_IN_K
    arrays["meta"] = np.array(
        json.dumps(
            table_spec(refrigerant)
            | {
                "min_temp_is_triple_point": bool(
                    not refrigerant.is_coolprop_mixture and t_min_k > LOWEST_TEMP_C + ZERO_C_IN_K
                ),
            }
        )
    )
    return arrays


def table_spec(refrigerant: Refrigerant) -> dict[str, Any]:
    """What a table depends on; a cache file is used only if its copy matches."""
    return {
        "designation": refrigerant.designation,
        "coolprop_name": refrigerant.coolprop_name,
        "composition": [list(part) for part in refrigerant.composition],
        "coolprop_version": CoolProp.__version__,
        "table_format": TABLE_FORMAT,
        "lowest_temp_c": LOWEST_TEMP_C,
        "max_step_k": MAX_STEP_K,
        "critical_margin_k": CRITICAL_MARGIN_K,
        "blend_critical_margin_k": BLEND_CRITICAL_MARGIN_K,
        "max_step_change": MAX_STEP_CHANGE,
    }
