"""Per-unit metric series and the head-pressure drift: a robust slope, its confidence, projections.

Why a robust slope: field readings carry the odd wrong entry (a gauge on the wrong port, a
typo); the Theil-Sen estimator (the median of all pairwise slopes, Sen 1968) ignores up to about
29 % of such points where a least-squares line follows them. The confidence that a rise is real
is the one-sided Mann-Kendall test, built on the same pairs (Kendall's S and Sen's variance with
ties), so the number and the spread of the points both count.

Why the condenser split (condensing temperature minus entering air): it removes most of the
ambient effect, so readings from a mild spring day and a hot summer day sit on one line. Only
the splits the diagnosis judged are stored for trending: a split held up by head-pressure
control in cold weather or read with the compressor off never reaches the trend, so the trend
and the visit's judgement tell one story.

Everything is computed over padded numpy arrays, one row per unit, so a fleet refresh is a few
array operations; the property engine is called once per unit at most, never per point.
"""

from __future__ import annotations

import math
from collections.abc import Iterable, Sequence
from dataclasses import dataclass, field
from datetime import date, timedelta
from enum import StrEnum
from functools import lru_cache
from typing import Any, Literal

import numpy as np
from numpy.typing import ArrayLike, NDArray
from scipy.special import ndtr, ndtri

from diagnostics.core.scoring import SCORING_TABLE
from diagnostics.core.sources import cite

FloatArray = NDArray[np.float64]
IntArray = NDArray[np.int64]
CondensingPoint = Literal["mid_point", "bubble", "dew"]

DAYS_PER_YEAR = 365.25


@dataclass(frozen=True)
class DriftRules:
    """When a rising condenser split is worth a flag. Each value carries its source."""

    min_points: int = field(
        default=5,
        metadata=cite(
            "ours: with fewer than five points Kendall's S cannot reach 99 % one-sided confidence "
            "and one odd reading moves the Theil-Sen slope"
        ),
    )
    min_span_days: int = field(
        default=90,
        metadata=cite("ours: a quarter of a year, so one season's spread does not read as a trend"),
    )
    min_confidence: float = field(
        default=0.95,
        metadata=cite("ours: one-sided Mann-Kendall confidence that the split is rising"),
    )
    min_slope_k_per_year: float = field(
        default=1.0,
        metadata=cite(
            "ours: slower drift is within the reading noise of a yearly service interval"
        ),
    )
    split_excess_limit_k: float = field(
        default=5.6,
        metadata=cite(
            "ours: 10 °F over the design split; design split 14-15 K per Trott & Welch, "
            "Refrigeration and Air-Conditioning, 3rd ed., Table 10.2"
        ),
    )
    horizon_days: int = field(
        default=180,
        metadata=cite("ours: about the time to the next hot season, when the drift would bite"),
    )
    interval_confidence: float = field(
        default=0.90,
        metadata=cite("ours: two-sided confidence of the reported slope interval (Sen 1968)"),
    )
    max_projection_days: int = field(
        default=3653, metadata=cite("ours: projections beyond ten years are reported as none")
    )
    high_split_excess_k: float = field(
        default=SCORING_TABLE["condenser_split"].ok_high or 0.0,
        metadata=cite(
            "the condenser split's ok band in the scoring table: above it the visit names the "
            "condenser"
        ),
    )
    persistent_window: int = field(
        default=4, metadata=cite("ours: the last four judged visits, about a season")
    )
    persistent_min: int = field(
        default=3,
        metadata=cite(
            "ours: three of them high (the latest included) is a condenser that stays dirty, "
            "not one odd reading"
        ),
    )


DEFAULT_DRIFT_RULES = DriftRules()


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


# --- head-pressure drift --------------------------------------------------------------------------


@dataclass(frozen=True)
class SplitPoint:
    """A condenser split from one diagnosed reading set (as-found unless ``as_left``)."""

    taken_on: date
    split_k: float
    entering_air_c: float
    as_left: bool = False


def split_series(points: Iterable[SplitPoint]) -> MetricSeries:
    """The condenser-split series of a unit, as-found apart from as-left."""
    return build_series(
        "condenser_split",
        "K",
        (MetricPoint(p.taken_on, p.split_k, p.as_left) for p in points),
    )


@dataclass(frozen=True)
class HeadPressureLimit:
    """What the design-day projection needs: refrigerant, site and the unit's cut-out.

    ``condensing_point`` names which saturation temperature stands for "condensing" on a glide
    blend: the unit's design basis (``UnitDesign.temperature_basis``), the one its stored split
    was measured on, so the projection inverts exactly what was measured. "bubble" gives the
    highest pressure for a condensing temperature (the cut-out warning errs early); "dew" the
    lowest. Pure fluids and azeotropes
    give the same pressure for all three.
    """

    refrigerant: str
    design_day_ambient_c: float
    high_pressure_cutout_kpa_gauge: float
    elevation_m: float = 0.0
    condensing_point: CondensingPoint = "mid_point"


@dataclass(frozen=True, eq=False)
class SplitColumns:
    """A unit's split history as arrays, the cheap form for a fleet refresh.

    Build it straight from database columns with ``SplitColumns.of``; it means the same as a
    tuple of ``SplitPoint`` without one Python object per reading.
    """

    taken_on: NDArray[np.datetime64]
    split_k: FloatArray
    entering_air_c: FloatArray
    as_left: NDArray[np.bool_]

    @classmethod
    def of(
        cls,
        taken_on: Sequence[date] | ArrayLike,
        split_k: ArrayLike,
        entering_air_c: ArrayLike,
        as_left: ArrayLike | None = None,
    ) -> SplitColumns:
        days = np.asarray(taken_on, dtype="datetime64[D]")
        split = np.asarray(split_k, dtype=float)
        air = np.asarray(entering_air_c, dtype=float)
        left = (
            np.zeros(split.shape, dtype=bool)
            if as_left is None
            else np.asarray(as_left, dtype=bool)
        )
        return cls(days, split, air, left)


@dataclass(frozen=True)
class SplitDriftInput:
    """One unit's split history (points or columns) and design data."""

    points: tuple[SplitPoint, ...] | SplitColumns
    design_split_k: float
    head: HeadPressureLimit | None = None


class DriftStatus(StrEnum):
    INSUFFICIENT_HISTORY = "insufficient_history"
    NO_DRIFT = "no_drift"
    DRIFT = "drift"


@dataclass(frozen=True)
class SplitDrift:
    """The drift judgement of one unit, with what it rests on.

    The fitted split is a straight line through the as-found points (Theil-Sen); ``split_now_k``
    is its value today. Projections assume the split is the same at design-day ambient as on the
    days it was measured (what makes the split useful: it removes most of the ambient effect).
    """

    status: DriftStatus
    reason: str
    points_used: int
    span_days: int
    design_split_k: float
    split_limit_k: float
    slope_k_per_year: float | None = None
    slope_low_k_per_year: float | None = None
    slope_high_k_per_year: float | None = None
    confidence: float | None = None
    split_now_k: float | None = None
    limit_crossed_on: date | None = None
    cutout_reached_on: date | None = None
    design_day_head_now_kpa_gauge: float | None = None
    design_day_head_at_horizon_kpa_gauge: float | None = None
    high_pressure_cutout_kpa_gauge: float | None = None
    condensing_point: str | None = None
    #: The latest judged splits stay above the ok band, rising or not.
    persistently_high: bool = False
    #: A confident rise of at least the minimum slope.
    rising: bool = False

    @property
    def flag(self) -> bool:
        return self.status is DriftStatus.DRIFT


def _finite_call(fn: Any, x: FloatArray) -> FloatArray:
    """Call a saturation function on the finite entries only (strict=False: NaN out of range)."""
    out = np.full(x.shape, np.nan)
    mask = np.isfinite(x)
    if mask.any():
        out[mask] = np.asarray(fn(x[mask], strict=False), dtype=float)
    return out


def _sat_table(designation: str) -> Any:
    from diagnostics.core import saturation

    return saturation.table(designation)


def condensing_pressure_kpa_gauge(
    refrigerant: str,
    condensing_c: ArrayLike,
    *,
    elevation_m: float = 0.0,
    condensing_point: CondensingPoint = "mid_point",
) -> FloatArray:
    """Gauge head pressure at condensing temperatures (array), NaN where no saturation exists.

    The temperature is read on the named convention (see ``HeadPressureLimit``); the gauge
    reading is relative to the standard atmosphere at the site's elevation. One call to the
    saturation table for the whole array.
    """
    from diagnostics.core import targets, units

    curve = _sat_table(refrigerant)
    temps = np.atleast_1d(np.asarray(condensing_c, dtype=float))
    if condensing_point == "mid_point":
        p_abs = targets.mid_point_pressure_kpa_abs(curve, temps)
    elif condensing_point == "bubble":
        p_abs = _finite_call(curve.bubble_pressure_kpa_abs, temps)
    else:
        p_abs = _finite_call(curve.dew_pressure_kpa_abs, temps)
    return np.asarray(units.pressure_from_kpa_abs(p_abs, "kPa", elevation_m), dtype=float)


@lru_cache(maxsize=4096)
def highest_condensing_c(
    refrigerant: str,
    cutout_kpa_gauge: float,
    elevation_m: float = 0.0,
    condensing_point: CondensingPoint = "mid_point",
) -> float:
    """The condensing temperature (same convention) at which the head reaches the cut-out.

    Cached: a fleet has few distinct (refrigerant, cut-out, elevation) combinations, so a
    refresh calls the property engine a handful of times, not once per unit.
    """
    from diagnostics.core import targets, units

    curve = _sat_table(refrigerant)
    p_abs = np.array([float(units.pressure_to_kpa_abs(cutout_kpa_gauge, "kPa", elevation_m))])
    dew = targets.dew_temp_c(curve, p_abs)
    bubble = targets.bubble_temp_c(curve, p_abs)
    if condensing_point == "mid_point":
        t = 0.5 * (dew + bubble)
    else:
        t = bubble if condensing_point == "bubble" else dew
    return float(t[0])


@dataclass(frozen=True, eq=False)
class DriftArrays:
    """The drift of many units as arrays (one entry per unit); see ``assess_split_drift_arrays``.

    Offsets are days from ``today`` (negative: already in the past); NaN means never or unknown.
    """

    fit: TheilSenFit
    enough_history: NDArray[np.bool_]
    rising: NDArray[np.bool_]
    #: The latest judged splits stay above the split's ok band (a condenser left dirty).
    persistently_high: NDArray[np.bool_]
    flag: NDArray[np.bool_]
    split_limit_k: FloatArray
    limit_offset_days: FloatArray
    cutout_offset_days: FloatArray


def assess_split_drift_arrays(
    days: ArrayLike,
    split_k: ArrayLike,
    design_split_k: ArrayLike,
    split_at_cutout_k: ArrayLike | None = None,
    rules: DriftRules = DEFAULT_DRIFT_RULES,
) -> DriftArrays:
    """The vectorised drift decision for m units.

    ``days`` (m, n): day of each as-found point relative to today (negative in the past), NaN
    for padding; ``split_k`` (m, n); ``design_split_k`` (m,); ``split_at_cutout_k`` (m,): the
    split at which the design-day head pressure reaches the cut-out (NaN where unknown).
    A unit is flagged when it has enough history, a confident rise at least the minimum slope,
    and the fitted line reaches the split limit or the cut-out split within the horizon.
    """
    fit = theil_sen(days, split_k, confidence=rules.interval_confidence)
    design = np.asarray(design_split_k, dtype=float)
    limit = design + rules.split_excess_limit_k
    if split_at_cutout_k is None:
        cut = np.full_like(limit, np.nan)
    else:
        cut = np.asarray(split_at_cutout_k, dtype=float)
    enough = (fit.points >= rules.min_points) & (fit.span >= rules.min_span_days)
    rising = (
        enough
        & (fit.trend_confidence >= rules.min_confidence)
        & (fit.slope * DAYS_PER_YEAR >= rules.min_slope_k_per_year)
    )
    t_limit = crossing_offsets(fit.intercept, fit.slope, limit)
    t_cut = crossing_offsets(fit.intercept, fit.slope, cut)
    soon = (t_limit <= rules.horizon_days) | (t_cut <= rules.horizon_days)
    high = _persistently_high(np.asarray(split_k, dtype=float), design, rules)
    return DriftArrays(
        fit=fit,
        enough_history=enough,
        rising=rising,
        persistently_high=high,
        flag=(rising & soon) | high,
        split_limit_k=limit,
        limit_offset_days=t_limit,
        cutout_offset_days=t_cut,
    )


def _persistently_high(
    split_k: FloatArray, design_split_k: FloatArray, rules: DriftRules
) -> NDArray[np.bool_]:
    """Per row (points in date order, NaN padding after them): at least
    ``persistent_min`` of the last ``persistent_window`` points above the split's ok band,
    the latest among them."""
    split = np.atleast_2d(split_k)
    count = np.isfinite(split).sum(axis=1)
    window = rules.persistent_window
    at = count[:, None] - window + np.arange(window)
    last = np.take_along_axis(split, np.clip(at, 0, None), axis=1)
    with np.errstate(invalid="ignore"):
        above = (at >= 0) & (last > (design_split_k + rules.high_split_excess_k)[:, None])
    return np.asarray((above.sum(axis=1) >= rules.persistent_min) & above[:, -1], dtype=np.bool_)


def _usable(inp: SplitDriftInput, today: date, rules: DriftRules) -> tuple[FloatArray, FloatArray]:
    """(days before today, splits) of the as-found points up to today, in date order."""
    pts = inp.points
    if isinstance(pts, SplitColumns):
        days = (pts.taken_on - np.datetime64(today, "D")).astype(float)
        keep = ~pts.as_left & (days <= 0) & np.isfinite(pts.split_k)
        days, split = days[keep], pts.split_k[keep]
        order = np.argsort(days, kind="stable")
        return days[order], split[order]
    today_ord = today.toordinal()
    kept = sorted(
        (p.taken_on.toordinal() - today_ord, p.split_k)
        for p in pts
        if not p.as_left and p.taken_on <= today and math.isfinite(p.split_k)
    )
    return (
        np.array([d for d, _ in kept], dtype=float),
        np.array([v for _, v in kept], dtype=float),
    )


def _offset_to_date(
    offset: float, today: date, earliest: date | None, rules: DriftRules
) -> date | None:
    if not math.isfinite(offset) or offset > rules.max_projection_days:
        return None
    if earliest is not None and offset < (earliest - today).days:
        # The line was over the level before the first point: say "since the first point"
        # (a nearly flat line crosses it ages before any reading, past any calendar).
        return earliest
    if offset < -rules.max_projection_days:
        return None
    return today + timedelta(days=round(offset))


def _finite(value: float) -> float | None:
    return float(value) if math.isfinite(value) else None


def assess_split_drift_many(
    inputs: Sequence[SplitDriftInput],
    today: date,
    rules: DriftRules = DEFAULT_DRIFT_RULES,
) -> list[SplitDrift]:
    """The drift judgement of many units in one vectorised pass (one row per unit)."""
    usable = [_usable(inp, today, rules) for inp in inputs]
    width = max((len(d) for d, _ in usable), default=0)
    m = len(inputs)
    days = np.full((m, max(width, 1)), np.nan)
    values = np.full((m, max(width, 1)), np.nan)
    for row, (d, v) in enumerate(usable):
        days[row, : len(d)] = d
        values[row, : len(v)] = v
    design = np.array([inp.design_split_k for inp in inputs], dtype=float)
    cut_split = np.full(m, np.nan)
    for row, inp in enumerate(inputs):
        if inp.head is not None:
            h = inp.head
            t_max = highest_condensing_c(
                h.refrigerant, h.high_pressure_cutout_kpa_gauge, h.elevation_m, h.condensing_point
            )
            cut_split[row] = t_max - h.design_day_ambient_c
    arrays = assess_split_drift_arrays(days, values, design, cut_split, rules)
    head_now, head_later = _design_day_heads(inputs, arrays, rules)
    return [
        _judgement(row, inputs[row], usable[row][0], arrays, head_now, head_later, today, rules)
        for row in range(m)
    ]


def _design_day_heads(
    inputs: Sequence[SplitDriftInput], arrays: DriftArrays, rules: DriftRules
) -> tuple[FloatArray, FloatArray]:
    """Design-day head now and at the horizon, one property call per refrigerant group."""
    m = len(inputs)
    now = np.full(m, np.nan)
    later = np.full(m, np.nan)
    # (refrigerant, elevation, condensing point) -> [(row, design-day ambient)]
    groups: dict[tuple[str, float, CondensingPoint], list[tuple[int, float]]] = {}
    for row, inp in enumerate(inputs):
        if inp.head is not None and arrays.enough_history[row]:
            h = inp.head
            groups.setdefault((h.refrigerant, h.elevation_m, h.condensing_point), []).append(
                (row, h.design_day_ambient_c)
            )
    fit = arrays.fit
    for (refrigerant, elevation_m, point), members in groups.items():
        rows = [row for row, _ in members]
        idx = np.array(rows)
        ambient = np.array([a for _, a in members])
        split_now = fit.intercept[idx]
        split_later = fit.intercept[idx] + fit.slope[idx] * rules.horizon_days
        temps = np.concatenate([ambient + split_now, ambient + split_later])
        p = condensing_pressure_kpa_gauge(
            refrigerant,
            temps,
            elevation_m=elevation_m,
            condensing_point=point,
        )
        now[idx] = p[: len(rows)]
        later[idx] = p[len(rows) :]
    return now, later


def _judgement(
    row: int,
    inp: SplitDriftInput,
    days: FloatArray,
    arrays: DriftArrays,
    head_now: FloatArray,
    head_later: FloatArray,
    today: date,
    rules: DriftRules,
) -> SplitDrift:
    fit = arrays.fit
    n = int(fit.points[row])
    span = int(fit.span[row]) if n else 0
    limit = float(arrays.split_limit_k[row])
    base: dict[str, Any] = {
        "points_used": n,
        "span_days": span,
        "design_split_k": float(inp.design_split_k),
        "split_limit_k": limit,
    }
    if inp.head is not None:
        base["high_pressure_cutout_kpa_gauge"] = inp.head.high_pressure_cutout_kpa_gauge
        base["condensing_point"] = inp.head.condensing_point
    if not arrays.enough_history[row]:
        reason = (
            f"{n} as-found point(s) over {span} day(s); the trend needs at least "
            f"{rules.min_points} points over {rules.min_span_days} days"
        )
        return SplitDrift(status=DriftStatus.INSUFFICIENT_HISTORY, reason=reason, **base)
    earliest = today + timedelta(days=int(days[0])) if len(days) else None
    slope_y = float(fit.slope[row]) * DAYS_PER_YEAR
    conf = _finite(float(fit.trend_confidence[row]))
    limit_on = _offset_to_date(float(arrays.limit_offset_days[row]), today, earliest, rules)
    cut_on = _offset_to_date(float(arrays.cutout_offset_days[row]), today, earliest, rules)
    if arrays.flag[row] and not arrays.rising[row]:
        status = DriftStatus.DRIFT
        reason = (
            f"split above its ok band at {rules.persistent_min} or more of the last "
            f"{rules.persistent_window} judged visits"
        )
    elif arrays.flag[row]:
        status = DriftStatus.DRIFT
        reason = f"split rising {slope_y:.1f} K/year (confidence {conf or 0:.2f})"
    elif arrays.rising[row]:
        status = DriftStatus.NO_DRIFT
        reason = (
            f"split rising {slope_y:.1f} K/year but no limit is reached within "
            f"{rules.horizon_days} days"
        )
    else:
        status = DriftStatus.NO_DRIFT
        reason = f"no confident rise (slope {slope_y:.1f} K/year, confidence {conf or 0:.2f})"
    return SplitDrift(
        status=status,
        reason=reason,
        persistently_high=bool(arrays.persistently_high[row]),
        rising=bool(arrays.rising[row]),
        slope_k_per_year=slope_y,
        slope_low_k_per_year=_finite(float(fit.low_slope[row]) * DAYS_PER_YEAR),
        slope_high_k_per_year=_finite(float(fit.high_slope[row]) * DAYS_PER_YEAR),
        confidence=conf,
        split_now_k=_finite(float(fit.intercept[row])),
        limit_crossed_on=limit_on,
        cutout_reached_on=cut_on,
        design_day_head_now_kpa_gauge=_finite(float(head_now[row])),
        design_day_head_at_horizon_kpa_gauge=_finite(float(head_later[row])),
        **base,
    )


def assess_split_drift(
    inp: SplitDriftInput, today: date, rules: DriftRules = DEFAULT_DRIFT_RULES
) -> SplitDrift:
    """The drift judgement of one unit (the fleet path runs ``assess_split_drift_many``)."""
    return assess_split_drift_many([inp], today, rules)[0]
