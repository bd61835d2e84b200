"""Numbers in and out: a float, or a float array, from whatever a caller passes (refused
clearly when it is not a number), and floats back out with None for what is missing.

Shared by the unit conversions (``units.py``), the standard atmosphere (``atmosphere.py``)
and the saturation tables (``saturation.lookup``); it imports nothing of ours, so none of them
imports another for it.
"""

from __future__ import annotations

import math
import numbers
from decimal import Decimal
from typing import Any

import numpy as np
import numpy.typing as npt

FloatArray = npt.NDArray[np.float64]


class NotNumeric(ValueError):
    """A value that is not a number or an array of numbers (a string, None, a bool...)."""


def _is_scalar_number(value: object) -> bool:
    return isinstance(value, numbers.Real | Decimal) and not isinstance(value, bool | np.bool_)


def as_numbers(value: Any, name: str = "value") -> float | FloatArray:
    """``value`` as a float (scalar in) or a float64 ndarray (list, tuple or array in).

    Accepts ints, floats, Decimals and numpy numbers; rejects strings, None, bools and
    anything else with ``NotNumeric``, even a string that would parse as a number: a
    measurement arrives here already parsed.
    """
    if _is_scalar_number(value):
        return float(value)
    if isinstance(value, np.ndarray) and value.ndim == 0:
        value = value.item()
        if _is_scalar_number(value):
            return float(value)
        raise NotNumeric(f"{name} is not a number: {value!r}")
    if isinstance(value, str | bytes) or not isinstance(value, list | tuple | np.ndarray):
        raise NotNumeric(f"{name} is not a number: {value!r}")
    try:
        arr = np.asarray(value)
    except ValueError as exc:  # ragged nesting
        raise NotNumeric(f"{name} is not a regular array of numbers") from exc
    if arr.dtype.kind in "iuf":
        return arr.astype(np.float64, copy=False)
    if arr.dtype.kind == "O" and all(_is_scalar_number(v) for v in arr.flat):
        return arr.astype(np.float64)
    # Look again without numpy's coercion, which turns [1, "a"] into ["1", "a"].
    bad = next(v for v in np.asarray(value, dtype=object).flat if not _is_scalar_number(v))
    bad = bad.item() if isinstance(bad, np.generic) else bad
    raise NotNumeric(f"{name} holds something that is not a number: {bad!r}")


def optional(x: float) -> float | None:
    """A float for a stored or shown value: NaN and the open ends of a band (+/-inf) become
    None."""
    x = float(x)
    return None if not math.isfinite(x) else x


#: Below this many rows plain Python beats numpy's per-call overhead (the one-row path).
_FEW_ROWS = 16


def optionals(values: FloatArray) -> list[float | None]:
    """``optional`` over a column: one ``tolist`` and a patch of the few non-finite entries."""
    out: list[Any] = values.tolist()
    if len(out) < _FEW_ROWS:
        return [v if math.isfinite(v) else None for v in out]
    for j in np.flatnonzero(~np.isfinite(values)).tolist():
        out[j] = None
    return out
