"""Reading a saturation table: dew and bubble temperature <-> pressure, and its range errors.

A table (built by ``saturation.build``) holds four curves, each on a uniform grid so that a
lookup finds its interval by arithmetic instead of a search: ln p_bubble and ln p_dew against
temperature, and bubble and dew temperature against ln p.

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
``SaturationError`` either way.
"""

from __future__ import annotations

import json
import math
from typing import Any, Literal

import numpy as np
import numpy.typing as npt

from diagnostics.core.numeric import FloatArray, NotNumeric, as_numbers
from diagnostics.core.refrigerants import Refrigerant

#: What the tests hold every table to against direct CoolProp calls (the goal was 0.02 K).
ERROR_BOUND_K = 0.01

Quantity = Literal["pressure", "temperature"]
Curve = Literal["dew", "bubble"]
CURVES: tuple[Curve, Curve] = ("bubble", "dew")
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

    def grid(self, curve: Curve, given: Quantity) -> tuple[float, float, list[float]]:
        """One curve's grid exactly as lookups read it: the first and last input node (a
        temperature in C, or ln of kPa absolute for ``given == "pressure"``) and the output
        at every node, evenly spaced between them (ln kPa absolute, or C). A client that
        interpolates these linearly, finding its interval as ``_Uniform.at`` does, reads
        the same values as the server."""
        uniform = self._t_of_lnp[curve] if given == "pressure" else self._lnp_of_t[curve]
        return uniform.x_first, uniform.x_last, list(uniform.y_list)

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
