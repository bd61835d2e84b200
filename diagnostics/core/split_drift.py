"""The head-pressure drift: when a rising condenser split is worth a flag, and when it bites.

Why the condenser split (condensing temperature minus entering air): it removes most of the
ambient effect, so readings from a mild spring day and a hot summer day sit on one line. Only
the splits the diagnosis judged are stored for trending: a split held up by head-pressure
control in cold weather or read with the compressor off never reaches the trend, so the trend
and the visit's judgement tell one story.

The splits of many units are fitted in one Theil-Sen pass (``trends.theil_sen``); the
property engine is called once per unit at most, never per point: the design-day head now and
at the horizon, and the condensing temperature at which the head reaches the cut-out.
"""

from __future__ import annotations

import math
from collections.abc import Sequence
from dataclasses import dataclass, field
from datetime import date, timedelta
from typing import Any

import numpy as np
from numpy.typing import ArrayLike, NDArray

from diagnostics.core.head_pressure import (
    CondensingPoint,
    condensing_pressure_kpa_gauge,
    highest_condensing_c,
)
from diagnostics.core.scoring import SCORING_TABLE
from diagnostics.core.sources import cite
from diagnostics.core.split_drift_types import (
    DriftStatus,
    SplitColumns,
    SplitDrift,
    SplitDriftInput,
)
from diagnostics.core.trends import FloatArray, TheilSenFit, crossing_offsets, theil_sen

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
