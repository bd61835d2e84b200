"""The capacitor signs of start trouble: a capacitor out of its rating band, or drifting out.

The capacitor now fitted is read from its readings since its last replacement: its latest
reading outside the range its marking allows is a sign; inside it, a capacitance falling
visit after visit (a confident Theil-Sen slope reaching the low rating within the horizon)
is another, with the day it is projected to leave its rating.
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass, field
from datetime import date, timedelta

import numpy as np
from numpy.typing import NDArray

from diagnostics.core.start_history import (
    CapacitorColumns,
    CapacitorReading,
    StartComponent,
    StartHistory,
)
from diagnostics.core.start_risk_rules import RiskItem, StartRiskRules
from diagnostics.core.trends import FloatArray, crossing_offsets, theil_sen

_CAPACITORS = (StartComponent.RUN_CAPACITOR, StartComponent.START_CAPACITOR)


@dataclass(frozen=True, eq=False)
class _Series:
    """The readings of the capacitor now fitted, in date order (as-left after as-found)."""

    component: StartComponent
    days: FloatArray  # days before today (negative)
    measured: FloatArray
    low: FloatArray
    high: FloatArray
    as_left: NDArray[np.bool_]


def _current_series(
    history: StartHistory, component: StartComponent, today: date
) -> _Series | None:
    """Readings after the capacitor's last replacement (its as-left reading on the day counts)."""
    parts: list[
        tuple[NDArray[np.datetime64], FloatArray, FloatArray, FloatArray, NDArray[np.bool_]]
    ] = []
    singles = [
        r
        for r in history.capacitor_readings
        if isinstance(r, CapacitorReading) and r.component is component
    ]
    if singles:
        parts.append(
            (
                np.array([r.taken_on for r in singles], dtype="datetime64[D]"),
                np.array([r.measured_uf for r in singles], dtype=float),
                np.array([r.low_uf for r in singles], dtype=float),
                np.array([r.high_uf for r in singles], dtype=float),
                np.array([r.as_left for r in singles], dtype=bool),
            )
        )
    for c in history.capacitor_readings:
        if isinstance(c, CapacitorColumns) and c.component is component:
            parts.append((c.taken_on, c.measured_uf, c.low_uf, c.high_uf, c.as_left))
    if not parts:
        return None
    if len(parts) == 1:
        taken, measured, low, high, as_left = parts[0]
    else:
        taken, measured, low, high, as_left = (
            np.concatenate(col) for col in zip(*parts, strict=True)
        )
    days = (taken - np.datetime64(today, "D")).astype(float)
    keep = (days <= 0) & np.isfinite(measured)
    replaced = max(
        (r.replaced_on for r in history.replacements if r.component is component), default=None
    )
    if replaced is not None:
        since = float((replaced - today).days)
        keep &= (days > since) | ((days == since) & as_left)
    if not keep.any():
        return None
    days, measured, low, high, as_left = (
        days[keep],
        measured[keep],
        low[keep],
        high[keep],
        as_left[keep],
    )
    order = np.lexsort((as_left, days))
    return _Series(component, days[order], measured[order], low[order], high[order], as_left[order])


@dataclass(frozen=True, eq=False)
class _DriftCandidate:
    """A capacitor in rating with enough as-found readings to fit a slope."""

    row: int
    series: _Series


def _name(component: StartComponent) -> str:
    return component.value.replace("_", " ")


def _last_quantities(series: _Series) -> tuple[tuple[str, float, str], ...]:
    return (
        ("measured", float(series.measured[-1]), "uF"),
        ("rating_low", float(series.low[-1]), "uF"),
        ("rating_high", float(series.high[-1]), "uF"),
    )


def _out_of_rating_item(series: _Series, today: date, rules: StartRiskRules) -> RiskItem | None:
    measured, low, high = (float(a[-1]) for a in (series.measured, series.low, series.high))
    if low <= measured <= high:
        return None
    return RiskItem(
        f"{series.component.value}_out_of_rating",
        f"{_name(series.component)} reads {measured:.1f} uF, outside its rating "
        f"{low:.1f}-{high:.1f} uF",
        rules.points_capacitor_out_of_rating,
        today + timedelta(days=int(series.days[-1])),
        _last_quantities(series),
    )


def _drift_items(
    candidates: list[_DriftCandidate], today: date, rules: StartRiskRules
) -> dict[int, tuple[RiskItem, date]]:
    """Fit every candidate's capacitance in one vectorised Theil-Sen pass.

    Capacitance falls as a capacitor ages, so the negated values are fitted and the crossing
    helper's "rising" applies; the projection is the day the line leaves the low rating.
    """
    if not candidates:
        return {}
    found = [~c.series.as_left for c in candidates]
    width = max(int(f.sum()) for f in found)
    x = np.full((len(candidates), width), np.nan)
    y = np.full((len(candidates), width), np.nan)
    for i, (c, f) in enumerate(zip(candidates, found, strict=True)):
        n = int(f.sum())
        x[i, :n] = c.series.days[f]
        y[i, :n] = -c.series.measured[f]
    fit = theil_sen(x, y)
    low = np.array([-float(c.series.low[-1]) for c in candidates])
    offsets = crossing_offsets(fit.intercept, fit.slope, low)
    hits = (
        (fit.trend_confidence >= rules.drift_min_confidence)
        & (offsets <= rules.drift_horizon_days)
        & np.isfinite(offsets)
    )
    out: dict[int, tuple[RiskItem, date]] = {}
    for i in np.flatnonzero(hits).tolist():
        series = candidates[i].series
        projected = today + timedelta(days=max(round(float(offsets[i])), 0))
        per_year = float(fit.slope[i]) * 365.25  # slope of -uF per day: the loss
        item = RiskItem(
            f"{series.component.value}_drift",
            f"{_name(series.component)} losing {per_year:.1f} uF a year over "
            f"{int(fit.points[i])} readings; projected below {float(series.low[-1]):.1f} uF "
            f"on {projected.isoformat()}",
            rules.points_capacitor_drift,
            today + timedelta(days=int(series.days[-1])),
            (*_last_quantities(series), ("loss_per_year", per_year, "uF/year")),
        )
        out[i] = (item, projected)
    return out


@dataclass(frozen=True)
class CapacitorSigns:
    """One compressor's capacitor signs: those out of rating, those drifting out, and the days
    the drifting ones are projected to leave their rating."""

    out_of_rating: list[RiskItem] = field(default_factory=list)
    drifting: list[RiskItem] = field(default_factory=list)
    projected_on: list[date] = field(default_factory=list)


def capacitor_signs(
    histories: Sequence[StartHistory], today: date, rules: StartRiskRules
) -> list[CapacitorSigns]:
    """The capacitor signs of many compressors; all capacitor slopes are fitted in one pass."""
    signs = [CapacitorSigns() for _ in histories]
    candidates: list[_DriftCandidate] = []
    for row, history in enumerate(histories):
        present = {c.component for c in history.capacitor_readings}
        for component in (c for c in _CAPACITORS if c in present):
            series = _current_series(history, component, today)
            if series is None:
                continue
            bad = _out_of_rating_item(series, today, rules)
            if bad is not None:
                signs[row].out_of_rating.append(bad)
            elif int((~series.as_left).sum()) >= rules.drift_min_points:
                candidates.append(_DriftCandidate(row, series))
    for i, (item, projected) in _drift_items(candidates, today, rules).items():
        row = candidates[i].row
        signs[row].drifting.append(item)
        signs[row].projected_on.append(projected)
    return signs
