"""Saturation temperature <-> pressure for every refrigerant in the catalogue, read from tables.

Every target and score starts here: a gauge reading (made absolute with the site's elevation
by ``diagnostics.core.units``) becomes a dew or bubble temperature, and back.

How a table is made (once per refrigerant per CoolProp version, then read from disk)
-----------------------------------------------------------------------------------------
CoolProp models the refrigerant as ``Refrigerant.coolprop_state()`` says: a pure fluid, one of
CoolProp's pseudo-pure blends (R-404A, R-407C, R-410A, R-507A), or a HEOS mixture of the
constituents. Four curves are tabulated, each on a uniform grid so that a lookup finds its
interval by arithmetic instead of a search:

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

Reading a table
---------------
Linear interpolation: ln p against temperature, temperature against ln p. Linear interpolation
of monotone data is monotone, so a higher pressure never reads a lower temperature. The error
against direct CoolProp calls, checked at the midpoint of every interval of every table of the
catalogue (tests/diagnostics/core/test_saturation.py; a pressure's error counted as the
temperature error it amounts to), is at most 0.005 K (R-448A's bubble curve 1.3 K below its
critical point) against a goal of 0.02 K; under 0.001 K for every pure fluid, and under
0.0005 K for every table more than 15 K below its critical point. ``ERROR_BOUND_K`` (0.01 K)
is what the tests hold every table to.

A million-value lookup runs in blocks that fit the processor's cache: about 130 million values
a second, 74 times or more CoolProp's fastest low-level call (a pure fluid, about 1.6 million
a second), over 9,000 times ``PropsSI`` and 5-10 times ``numpy.interp`` on the same nodes
(bench/saturation.py, on a shared two-core machine).

Ranges and errors
-----------------
Input below a table raises ``BelowRange`` (deep vacuum, or below the triple point), above it
``AboveCritical`` (the message names the critical point; above the critical pressure the
state is transcritical). ``strict=False`` returns NaN for such values instead, so a batch of a
million readings does not stop at one bad one. Anything that is not a number raises
``SaturationError`` either way. An unknown designation raises
``refrigerants.UnknownRefrigerant`` (a KeyError).

Cache
-----
``table(designation, cache_dir)`` keeps one table per refrigerant in memory and one ``.npz``
file per refrigerant on disk, under ``<cache_dir>/saturation/``, named by the CoolProp version,
``TABLE_FORMAT`` and a digest of how the refrigerant is modelled. ``cache_dir`` defaults to
``$RIMEWATCH_CACHE_DIR``, else ``~/.cache/rimewatch``. Files are written to a temporary name
and renamed into place, so concurrent processes never read half a file. Building one table
takes 0.01 s for a pure fluid or a pseudo-pure blend and 0.5-3.5 s for a HEOS mixture
(R-448A, five components, is the slowest), so tables are built lazily, one refrigerant on its
first use; reading one back from disk takes about 1-10 ms.
"""

from __future__ import annotations

import hashlib
import json
import logging
import math
import os
import tempfile
import threading
import zipfile
from pathlib import Path
from typing import Any, Literal

import CoolProp
import CoolProp.CoolProp as CP
import numpy as np
import numpy.typing as npt

from diagnostics.core import refrigerants
from diagnostics.core.numeric import FloatArray, NotNumeric, as_numbers
from diagnostics.core.refrigerants import Refrigerant
from diagnostics.core.units import ZERO_C_IN_K

logger = logging.getLogger(__name__)

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
CACHE_DIR_ENV = "RIMEWATCH_CACHE_DIR"
#: What the tests hold every table to against direct CoolProp calls (the goal was 0.02 K).
ERROR_BOUND_K = 0.01

Quantity = Literal["pressure", "temperature"]
Curve = Literal["dew", "bubble"]
CURVES: tuple[Curve, Curve] = ("bubble", "dew")
_QUALITY: dict[Curve, int] = {"bubble": 0, "dew": 1}
#: Slack, in grid steps, for a value a rounding error outside the table (its own end points).
_EDGE = 1e-9


class SaturationError(ValueError):
    """A saturation lookup that cannot be answered (non-numeric input, out of range...)."""


class OutOfRange(SaturationError):
    """A value outside the table; ``BelowRange`` or ``AboveCritical`` says which side.

    ``value`` is the offending input and ``limit`` the table's end it passed, both in kPa
    absolute (``quantity == "pressure"``) or degrees C (``"temperature"``), so a caller can
    restate the limit in the user's units.
    """

    def __init__(self, message: str, *, quantity: Quantity, value: float, limit: float) -> None:
        super().__init__(message)
        self.quantity = quantity
        self.value = value
        self.limit = limit


class BelowRange(OutOfRange):
    """Below the table: deep vacuum, or below the triple point."""


class AboveCritical(OutOfRange):
    """Above the table, which ends just below the critical point; at or above the critical
    point itself the message says the state is transcritical."""


#: Values per block of an array lookup: small enough that a block's temporaries stay in the
#: processor's cache, which makes a million-value lookup about twice as fast as one pass.
_BLOCK = 1 << 14
#: Up to this many values a lookup runs ``at`` per value: numpy's per-call overhead costs
#: more than the arithmetic for the handful of values of a single reading.
_FEW = 8


class _Uniform:
    """One tabulated curve: y(x) piecewise linear between nodes spaced evenly from x_first to
    x_last. With ``log_x`` the input is a pressure whose ln is x; with ``exp_y`` the output is
    exp(y), a pressure."""

    __slots__ = (
        "dy",
        "dy_list",
        "exp_y",
        "inv_step",
        "last",
        "log_x",
        "x_first",
        "x_last",
        "y",
        "y_list",
    )

    def __init__(
        self, x_first: float, x_last: float, y: FloatArray, *, log_x: bool, exp_y: bool
    ) -> None:
        self.x_first = float(x_first)
        self.x_last = float(x_last)
        self.y = np.ascontiguousarray(y, dtype=np.float64)
        self.dy = np.diff(self.y)
        self.y_list: list[float] = self.y.tolist()
        self.dy_list: list[float] = self.dy.tolist()
        self.last = len(self.y) - 1
        self.inv_step = self.last / (self.x_last - self.x_first)
        self.log_x, self.exp_y = log_x, exp_y

    @property
    def nbytes(self) -> int:
        return int(self.y.nbytes + self.dy.nbytes)

    def at(self, value: float) -> float:
        """One value (NaN outside the table): ``__call__`` without numpy's per-call overhead."""
        x = (math.log(value) if value > 0 else -math.inf) if self.log_x else value
        s = (x - self.x_first) * self.inv_step
        if not -_EDGE <= s <= self.last + _EDGE:  # NaN is outside too
            return math.nan
        i = min(max(int(s), 0), self.last - 1)
        y = self.y_list[i] + self.dy_list[i] * (s - i)
        return math.exp(y) if self.exp_y else y

    def __call__(self, values: FloatArray) -> tuple[FloatArray, Any]:
        """Values at an array (NaN outside the table), and a mask of the entries outside
        (None if there are none)."""
        flat = values.reshape(-1)
        if flat.size <= _FEW:
            few = np.array([self.at(v) for v in flat.tolist()], dtype=np.float64)
            missed = np.isnan(few)  # only a value outside the table (or NaN) gives NaN
            return few.reshape(values.shape), missed.reshape(values.shape) if missed.any() else None
        out = np.empty(flat.shape)
        outside = None
        with np.errstate(divide="ignore", invalid="ignore"):  # p <= 0 and NaN are outside
            for start in range(0, flat.size, _BLOCK):
                block, x = out[start : start + _BLOCK], flat[start : start + _BLOCK]
                if self.log_x:
                    s = np.log(x)
                    s -= self.x_first
                else:
                    s = x - self.x_first
                s *= self.inv_step
                if not (s.min() >= -_EDGE and s.max() <= self.last + _EDGE):
                    if outside is None:
                        outside = np.zeros(flat.shape, dtype=bool)
                    mask = outside[start : start + _BLOCK]
                    np.logical_not((s >= -_EDGE) & (s <= self.last + _EDGE), out=mask)
                    s[mask] = 0.0
                i = s.astype(np.intp)
                np.minimum(i, self.last - 1, out=i)
                s -= i
                np.take(self.dy, i, out=block)
                block *= s
                block += np.take(self.y, i)
                if self.exp_y:
                    np.exp(block, out=block)
            if outside is not None:
                out[outside] = np.nan
        return out.reshape(values.shape), None if outside is None else outside.reshape(values.shape)


class SaturationTable:
    """Dew and bubble temperature and pressure for one refrigerant, read from a table.

    Pressures are kPa absolute, temperatures degrees C. Each lookup takes a float (returns a
    float) or an array (returns an array of the same shape). For a pure fluid dew and bubble
    are the same curve. For an azeotrope modelled as a mixture (R-513A) they differ by
    hundredths of a kelvin.
    """

    def __init__(self, refrigerant: Refrigerant, arrays: dict[str, Any]) -> None:
        self.refrigerant = refrigerant
        meta = json.loads(str(arrays["meta"]))
        self.coolprop_version: str = meta["coolprop_version"]
        self.min_temp_c, self.max_temp_c = (float(v) for v in arrays["temp_range_c"])
        self.min_temp_is_triple_point: bool = meta["min_temp_is_triple_point"]
        self.critical_temp_c, self.critical_pressure_kpa_abs = (
            float(v) for v in arrays["critical_point"]
        )
        self._lnp_of_t: dict[Curve, _Uniform] = {}
        self._t_of_lnp: dict[Curve, _Uniform] = {}
        for curve in CURVES:
            self._lnp_of_t[curve] = _Uniform(
                self.min_temp_c,
                self.max_temp_c,
                arrays[f"lnp_{curve}_of_temp"],
                log_x=False,
                exp_y=True,
            )
            lnp_first, lnp_last = arrays[f"lnp_range_{curve}"]
            self._t_of_lnp[curve] = _Uniform(
                lnp_first, lnp_last, arrays[f"temp_{curve}_of_lnp"], log_x=True, exp_y=False
            )

    def __repr__(self) -> str:
        return (
            f"<SaturationTable {self.refrigerant.designation} "
            f"{self.min_temp_c:.2f}..{self.max_temp_c:.2f} degC, CoolProp {self.coolprop_version}>"
        )

    # --- the interface ------------------------------------------------------------------

    def dew_temp_c(self, p_kpa_abs: npt.ArrayLike, *, strict: bool = True) -> float | FloatArray:
        """Dew-point temperature (degC) at an absolute pressure (kPa)."""
        return self._temp(p_kpa_abs, "dew", strict)

    def bubble_temp_c(self, p_kpa_abs: npt.ArrayLike, *, strict: bool = True) -> float | FloatArray:
        """Bubble-point temperature (degC) at an absolute pressure (kPa)."""
        return self._temp(p_kpa_abs, "bubble", strict)

    def dew_pressure_kpa_abs(
        self, t_c: npt.ArrayLike, *, strict: bool = True
    ) -> float | FloatArray:
        """Dew-point pressure (kPa absolute) at a temperature (degC)."""
        return self._pressure(t_c, "dew", strict)

    def bubble_pressure_kpa_abs(
        self, t_c: npt.ArrayLike, *, strict: bool = True
    ) -> float | FloatArray:
        """Bubble-point pressure (kPa absolute) at a temperature (degC)."""
        return self._pressure(t_c, "bubble", strict)

    def glide_k(self, p_kpa_abs: npt.ArrayLike, *, strict: bool = True) -> float | FloatArray:
        """Temperature glide at a pressure: dew minus bubble temperature (K); 0 for pure fluids."""
        return self._temp(p_kpa_abs, "dew", strict) - self._temp(p_kpa_abs, "bubble", strict)

    # --- more ---------------------------------------------------------------------------

    def pressure_range_kpa_abs(self, curve: Curve) -> tuple[float, float]:
        """Lowest and highest pressure the dew or bubble table covers."""
        t_of_lnp = self._t_of_lnp[curve]
        return math.exp(t_of_lnp.x_first), math.exp(t_of_lnp.x_last)

    @property
    def nbytes(self) -> int:
        """Memory held by the table's arrays."""
        return sum(c.nbytes for c in (*self._lnp_of_t.values(), *self._t_of_lnp.values()))

    def nodes(self, curve: Curve) -> tuple[FloatArray, FloatArray, FloatArray, FloatArray]:
        """The grids as stored: (temps_c, ln p at them, ln p nodes, temps_c at them)."""
        lnp_of_t, t_of_lnp = self._lnp_of_t[curve], self._t_of_lnp[curve]
        temps = np.linspace(lnp_of_t.x_first, lnp_of_t.x_last, lnp_of_t.last + 1)
        lnps = np.linspace(t_of_lnp.x_first, t_of_lnp.x_last, t_of_lnp.last + 1)
        return temps, lnp_of_t.y.copy(), lnps, t_of_lnp.y.copy()

    # --- lookups ------------------------------------------------------------------------

    def _temp(self, p_kpa_abs: Any, curve: Curve, strict: bool) -> float | FloatArray:
        return self._lookup(self._t_of_lnp[curve], p_kpa_abs, "pressure", curve, strict)

    def _pressure(self, t_c: Any, curve: Curve, strict: bool) -> float | FloatArray:
        return self._lookup(self._lnp_of_t[curve], t_c, "temperature", curve, strict)

    def _lookup(
        self, table: _Uniform, value: Any, quantity: Quantity, curve: Curve, strict: bool
    ) -> float | FloatArray:
        try:
            given = as_numbers(value, quantity)
        except NotNumeric as exc:
            raise SaturationError(f"{self.refrigerant.designation}: {exc}") from exc
        if isinstance(given, float):
            result = table.at(given)
            if strict and math.isnan(result):
                raise self._range_error(quantity, curve, given)
            return result
        out, outside = table(given)
        if outside is not None and strict:
            raise self._range_error(quantity, curve, float(given[outside].flat[0]))
        return out

    # --- messages -----------------------------------------------------------------------

    def _range_error(self, quantity: Quantity, curve: Curve, value: float) -> SaturationError:
        name = self.refrigerant.designation
        if math.isnan(value):
            return SaturationError(f"{name}: {quantity} is not a number (NaN)")
        p_lo, p_hi = self.pressure_range_kpa_abs(curve)
        unit = "kPa abs" if quantity == "pressure" else "°C"
        lo, hi = (p_lo, p_hi) if quantity == "pressure" else (self.min_temp_c, self.max_temp_c)
        given = f"{value:.6g} {unit}"
        critical = (
            f"the critical point ({self.critical_temp_c:.2f} °C, "
            f"{self.critical_pressure_kpa_abs:.6g} kPa abs)"
        )
        if value < lo:
            why = (
                "the triple point"
                if self.min_temp_is_triple_point
                else "the lowest temperature tabulated"
            )
            if quantity == "pressure" and value <= 0:
                given = f"{value:.6g} kPa abs is not a positive absolute pressure and"
            return BelowRange(
                f"{name}: {given} is below the {curve} table, which starts at "
                f"{p_lo:.6g} kPa abs and {self.min_temp_c:.2f} °C ({why})",
                quantity=quantity,
                value=value,
                limit=lo,
            )
        critical_value = (
            self.critical_pressure_kpa_abs if quantity == "pressure" else self.critical_temp_c
        )
        table_top = f"the {curve} table ends at {p_hi:.6g} kPa abs and {self.max_temp_c:.2f} °C"
        if value >= critical_value:
            message = (
                f"{name}: {given} is above {critical}: the state is supercritical "
                f"(transcritical operation), so it has no saturation temperature, "
                f"no condensing temperature and no subcooling; {table_top}"
            )
        else:
            message = (
                f"{name}: {given} is above the top of the table, just below {critical}: "
                f"{table_top}, {self.critical_temp_c - self.max_temp_c:.2f} K short of it"
            )
        return AboveCritical(message, quantity=quantity, value=value, limit=hi)


# --- building a table from CoolProp -----------------------------------------------------------


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
            _spec(refrigerant)
            | {
                "min_temp_is_triple_point": bool(
                    not refrigerant.is_coolprop_mixture and t_min_k > LOWEST_TEMP_C + ZERO_C_IN_K
                ),
            }
        )
    )
    return arrays


# --- the cache ----------------------------------------------------------------------------------


def _spec(refrigerant: Refrigerant) -> dict[str, Any]:
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


def default_cache_dir() -> Path:
    """$RIMEWATCH_CACHE_DIR, else ~/.cache/rimewatch (var/cache where there is no home)."""
    if env := os.environ.get(CACHE_DIR_ENV):
        return Path(env)
    try:
        return Path.home() / ".cache" / "rimewatch"
    except RuntimeError:
        return Path("var") / "cache"


def cache_path(refrigerant: Refrigerant, cache_dir: str | os.PathLike[str] | None = None) -> Path:
    """Where the table of ``refrigerant`` is kept on disk."""
    spec = _spec(refrigerant)
    digest = hashlib.sha256(json.dumps(spec, sort_keys=True).encode()).hexdigest()[:12]
    slug = "".join(ch for ch in refrigerant.designation if ch.isalnum() or ch == "-")
    name = f"{slug}.coolprop-{CoolProp.__version__}.format-{TABLE_FORMAT}.{digest}.npz"
    return Path(cache_dir if cache_dir is not None else default_cache_dir()) / "saturation" / name


def _read(path: Path, refrigerant: Refrigerant) -> dict[str, Any] | None:
    try:
        with np.load(path, allow_pickle=False) as npz:
            arrays = {key: npz[key] for key in npz.files}
        meta = json.loads(str(arrays["meta"]))
    except FileNotFoundError:
        return None
    except (OSError, ValueError, KeyError, zipfile.BadZipFile) as exc:
        logger.warning("ignoring unreadable saturation table %s: %s", path, exc)
        return None
    if any(meta.get(key) != value for key, value in _spec(refrigerant).items()):
        return None
    return arrays


def _write(path: Path, arrays: dict[str, Any]) -> None:
    """Write beside the final name, then rename: readers see the old file or the whole new one."""
    try:
        path.parent.mkdir(parents=True, exist_ok=True)
        fd, tmp = tempfile.mkstemp(dir=path.parent, prefix=path.name + ".", suffix=".tmp")
        try:
            with os.fdopen(fd, "wb") as f:
                np.savez(f, **arrays)
            os.replace(tmp, path)
        except BaseException:
            Path(tmp).unlink(missing_ok=True)
            raise
    except OSError as exc:
        logger.warning("could not cache the saturation table at %s: %s", path, exc)


_memo: dict[tuple[str, str], SaturationTable] = {}
#: The same tables by the arguments they were asked with (and the cache directory setting).
_asked: dict[tuple[Any, ...], SaturationTable] = {}
_memo_lock = threading.Lock()


def table(designation: str, cache_dir: str | os.PathLike[str] | None = None) -> SaturationTable:
    """The saturation table of a refrigerant (any common spelling: 'R404A', 'r-404a').

    Kept in memory per process, and on disk under ``cache_dir`` (default: see
    ``default_cache_dir``); built from CoolProp on first use. Raises
    ``refrigerants.UnknownRefrigerant`` for a designation the catalogue does not hold.
    """
    asked = (designation, cache_dir, os.environ.get(CACHE_DIR_ENV))
    found = _asked.get(asked)  # no hashing of the spec on every call
    if found is not None:
        return found
    refrigerant = refrigerants.get(designation)
    path = cache_path(refrigerant, cache_dir)
    key = (refrigerant.designation, str(path))
    with _memo_lock:
        if key not in _memo:
            arrays = _read(path, refrigerant)
            if arrays is None:
                arrays = build_arrays(refrigerant)
                _write(path, arrays)
            _memo[key] = SaturationTable(refrigerant, arrays)
        _asked[asked] = _memo[key]
        return _memo[key]


def clear_memo() -> None:
    """Forget the tables held in memory (the disk cache stays)."""
    with _memo_lock:
        _memo.clear()
        _asked.clear()
