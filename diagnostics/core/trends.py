"""Per-unit metric series and a robust slope through them, with its confidence.

Why a robust slope: field readings carry the odd wrong entry (a gauge on the wrong port, a
typo); the Theil-Sen estimator (the median of all pairwise slopes, Sen 1968) ignores up to about
29 % of such points where a least-squares line follows them. The confidence that a rise is real
is the one-sided Mann-Kendall test, built on the same pairs (Kendall's S and Sen's variance with
ties), so the number and the spread of the points both count.

Everything is computed over padded numpy arrays, one row per unit, so a fleet refresh is a few
array operations. The condenser-split drift built on it is in ``split_drift``.
"""

from __future__ import annotations

import math
from collections.abc import Iterable
from dataclasses import dataclass
from datetime import date

import numpy as np
from numpy.typing import ArrayLike, NDArray
from scipy.special import ndtr, ndtri

FloatArray = NDArray[np.float64]
IntArray = NDArray[np.int64]

# --- series -----------------------------------------------------------------------------------


@dataclass(frozen=True)
class MetricPoint:
    """One value of one metric from a diagnosed reading set."""

    taken_on: date
    value: float
    as_left: bool = False


@dataclass(frozen=True)
class MetricSeries:
    """A unit's series for one metric: as-found readings, with the as-left ones kept apart.

    As-found values show how the unit was running between visits (the trend); as-left values
    show what the technician left behind and would hide a drift if mixed in.
    """

    metric: str
    unit: str
    as_found: tuple[tuple[date, float], ...]
    as_left: tuple[tuple[date, float], ...]

    def as_found_arrays(self, origin: date) -> tuple[FloatArray, FloatArray]:
        """(days from ``origin``, values) of the as-found points, for fitting or charting."""
        days = np.array([(d - origin).days for d, _ in self.as_found], dtype=float)
        values = np.array([v for _, v in self.as_found], dtype=float)
        return days, values


def build_series(metric: str, unit: str, points: Iterable[MetricPoint]) -> MetricSeries:
    """Sort the points by date, drop missing values and split as-found from as-left."""
    found: list[tuple[date, float]] = []
    left: list[tuple[date, float]] = []
    for p in sorted(points, key=lambda p: p.taken_on):
        if p.value is None or not math.isfinite(p.value):
            continue
        (left if p.as_left else found).append((p.taken_on, float(p.value)))
    return MetricSeries(metric=metric, unit=unit, as_found=tuple(found), as_left=tuple(left))


# --- the robust slope ---------------------------------------------------------------------------


@dataclass(frozen=True, eq=False)
class TheilSenFit:
    """Theil-Sen fits of many rows at once (arrays of length m, one per row).

    ``intercept`` is the line's value at x = 0 (scipy's 'separate' method: median(y) minus slope
    times median(x)); ``trend_confidence`` is the one-sided Mann-Kendall probability that y
    rises with x (NaN where it cannot be computed).
    """

    slope: FloatArray
    intercept: FloatArray
    low_slope: FloatArray
    high_slope: FloatArray
    points: IntArray
    span: FloatArray
    trend_confidence: FloatArray


def _sorted_median(a: FloatArray, count: IntArray) -> FloatArray:
    """Median of each row of an array sorted with NaN last, given each row's finite count."""
    lo = np.clip((count - 1) // 2, 0, None)[:, None]
    hi = np.clip(count // 2, 0, None)[:, None]
    if a.shape[1] == 0:
        return np.full(a.shape[0], np.nan)
    med = 0.5 * (np.take_along_axis(a, lo, 1)[:, 0] + np.take_along_axis(a, hi, 1)[:, 0])
    return np.where(count > 0, med, np.nan)


def _tie_term(a: FloatArray, valid: NDArray[np.bool_]) -> FloatArray:
    """Sum over tie groups of k(k-1)(2k+5) per row (Sen 1968, eq. 2.6), without a Python loop.

    Each member of a group of size k sees k equal values, so summing (c-1)(2c+5) over the
    members gives k(k-1)(2k+5) per group.
    """
    c = (a[:, :, None] == a[:, None, :]).sum(axis=2)
    return np.asarray(np.where(valid, (c - 1) * (2 * c + 5), 0).sum(axis=1), dtype=np.float64)


def theil_sen(x: ArrayLike, y: ArrayLike, *, confidence: float = 0.90) -> TheilSenFit:
    """Theil-Sen slope, Sen's confidence interval and Mann-Kendall confidence, row by row.

    ``x`` and ``y`` are (m, n) arrays (or one row of n); NaN marks a missing point, so units
    with different numbers of visits share one padded array. The slope, intercept and interval
    are those of ``scipy.stats.theilslopes`` (tested against it); this version handles many
    rows in one pass, which a fleet refresh needs.
    """
    xa = np.atleast_2d(np.asarray(x, dtype=float))
    ya = np.atleast_2d(np.asarray(y, dtype=float))
    if xa.shape != ya.shape:
        raise ValueError(f"x and y shapes differ: {xa.shape} vs {ya.shape}")
    valid = np.isfinite(xa) & np.isfinite(ya)
    xa = np.where(valid, xa, np.nan)
    ya = np.where(valid, ya, np.nan)
    m, n = xa.shape
    i, j = np.triu_indices(n, 1)
    dx = xa[:, j] - xa[:, i]
    dy = ya[:, j] - ya[:, i]
    pair_ok = np.isfinite(dx) & (dx != 0)
    with np.errstate(divide="ignore", invalid="ignore"):
        slopes = np.where(pair_ok, dy / dx, np.nan)
    slopes.sort(axis=1)
    nt = pair_ok.sum(axis=1)
    slope = _sorted_median(slopes, nt)

    nv = valid.sum(axis=1)
    med_x = _sorted_median(np.sort(xa, axis=1), nv)
    med_y = _sorted_median(np.sort(ya, axis=1), nv)
    intercept = med_y - slope * med_x

    # Sen (1968) eq. 2.6: variance of Kendall's S with ties in x and in y.
    sigsq = (nv * (nv - 1) * (2 * nv + 5) - _tie_term(xa, valid) - _tie_term(ya, valid)) / 18.0
    sigma = np.sqrt(np.clip(sigsq, 0.0, None))
    alpha = 1.0 - confidence if confidence > 0.5 else confidence
    z = ndtri(alpha / 2.0)
    last = np.clip(nt - 1, 0, None)
    ru = np.minimum(np.round((nt - z * sigma) / 2.0).astype(np.int64), last)
    rl = np.maximum(np.round((nt + z * sigma) / 2.0).astype(np.int64) - 1, 0)
    has = nt > 0
    if n > 1:
        low = np.where(has, np.take_along_axis(slopes, rl[:, None], 1)[:, 0], np.nan)
        high = np.where(has, np.take_along_axis(slopes, ru[:, None], 1)[:, 0], np.nan)
    else:
        low = high = np.full(m, np.nan)

    kendall_s = np.where(pair_ok, np.sign(dx) * np.sign(dy), 0.0).sum(axis=1)
    with np.errstate(divide="ignore", invalid="ignore"):
        trend_confidence = np.where(sigma > 0, ndtr(kendall_s / sigma), np.nan)

    first = np.min(np.where(valid, xa, np.inf), axis=1)
    last_x = np.max(np.where(valid, xa, -np.inf), axis=1)
    span = np.where(nv > 0, last_x - first, np.nan)
    return TheilSenFit(
        slope=slope,
        intercept=intercept,
        low_slope=low,
        high_slope=high,
        points=nv.astype(np.int64),
        span=span,
        trend_confidence=trend_confidence,
    )


def crossing_offsets(intercept: ArrayLike, slope: ArrayLike, level: ArrayLike) -> FloatArray:
    """x at which each rising line reaches ``level``; NaN where the line is flat or falling."""
    b = np.asarray(intercept, dtype=float)
    s = np.asarray(slope, dtype=float)
    with np.errstate(divide="ignore", invalid="ignore", over="ignore"):
        t = (np.asarray(level, dtype=float) - b) / s
    return np.where(s > 0, t, np.nan)
