"""Start-component risk: will this compressor fail to start soon, and why do we think so.

A compressor that will not start on a hot afternoon spoils a box of product. The signs come
before: a capacitor losing microfarads visit after visit, a start that hums at locked-rotor
current, supply voltage sagging at start, a hard-start kit fitted to get it going, start parts
replaced again and again (which points past the parts, at the compressor or the supply).
Each sign is an item with its points and its evidence; the level follows from the total.
The points are our weighting (data in ``StartRiskRules``), the limits behind each sign cite
their standard.
"""

from __future__ import annotations

from collections.abc import Iterable, Mapping, Sequence
from dataclasses import dataclass, field
from datetime import date, timedelta
from enum import StrEnum
from typing import Any

import numpy as np
from numpy.typing import ArrayLike, NDArray

from diagnostics.core import electrical
from diagnostics.core.sources import cite
from diagnostics.core.trends import FloatArray, crossing_offsets, theil_sen

#: Which capacitor each component kind holds: a hard-start kit carries a start capacitor.
CAPACITOR_ROLES: dict[str, str] = {
    "run_capacitor": "run",
    "start_capacitor": "start",
    "hard_start_kit": "start",
}


def fitted_capacitor(
    parts: Iterable[Mapping[str, Any]], role: str, on: date | None = None
) -> Mapping[str, Any] | None:
    """The rated capacitor of ``role`` ("run" or "start") in service on ``on``, or still
    fitted when ``on`` is None; None if there is none. The newest installed wins (an unknown
    installation date counts as the oldest), then the latest recorded.

    ``parts``: mappings with ``kind``, ``installed_on``, ``removed_on``, ``rating_uf_min``
    and ``id``. One rule for the diagnosis, the start-risk history and the report.
    """

    def in_service(p: Mapping[str, Any]) -> bool:
        if on is None:
            return p["removed_on"] is None
        fitted_by = p["installed_on"] is None or p["installed_on"] <= on
        return fitted_by and (p["removed_on"] is None or p["removed_on"] > on)

    return max(
        (
            p
            for p in parts
            if CAPACITOR_ROLES.get(p["kind"]) == role
            and p["rating_uf_min"] is not None
            and in_service(p)
        ),
        key=lambda p: (p["installed_on"] or date.min, p["id"] or 0),
        default=None,
    )


class StartComponent(StrEnum):
    RUN_CAPACITOR = "run_capacitor"
    START_CAPACITOR = "start_capacitor"
    START_RELAY = "start_relay"
    HARD_START_KIT = "hard_start_kit"


class RiskLevel(StrEnum):
    LOW = "low"
    ELEVATED = "elevated"
    HIGH = "high"


@dataclass(frozen=True)
class StartRiskRules:
    """Limits and weights of the start-component risk, each with its source."""

    lookback_days: int = field(
        default=365, metadata=cite("ours: events older than a year say little about today")
    )
    locked_rotor_fraction: float = field(
        default=0.8,
        metadata=cite(
            "common practice: a compressor that hums near LRA without starting points at start "
            "components, a locked compressor or low voltage; 'near' = 80 % of LRA is ours"
        ),
    )
    voltage_tolerance_pct: float = field(
        default=electrical.NEMA_VOLTAGE_TOLERANCE_PCT,
        metadata=cite("NEMA MG-1 12.44: +/-10 % of nameplate"),
    )
    run_capacitor_tolerance_pct: float = field(
        default=electrical.DEFAULT_RUN_CAPACITOR_TOLERANCE_PCT,
        metadata=cite(
            "EIA-456-A / IEC 60252-1: typical run-capacitor tolerance when the can does not say"
        ),
    )
    drift_min_points: int = field(
        default=3, metadata=cite("ours: the fewest readings a capacitor slope rests on")
    )
    drift_min_confidence: float = field(
        default=0.90,
        metadata=cite("ours: one-sided Mann-Kendall confidence that the capacitance is falling"),
    )
    drift_horizon_days: int = field(
        default=365,
        metadata=cite(
            "ours: a capacitor projected out of rating within a year is worth replacing now"
        ),
    )
    repeat_replacements: int = field(
        default=2,
        metadata=cite(
            "common practice: start parts failing repeatedly point at the compressor or supply"
        ),
    )
    points_capacitor_out_of_rating: float = field(default=2.0, metadata=cite("ours"))
    points_capacitor_drift: float = field(default=1.0, metadata=cite("ours"))
    points_failed_start: float = field(default=1.0, metadata=cite("ours, per event"))
    points_locked_rotor: float = field(default=2.0, metadata=cite("ours, per event"))
    points_low_voltage: float = field(default=1.0, metadata=cite("ours, per event"))
    max_points_per_sign: float = field(
        default=4.0, metadata=cite("ours: one sign alone cannot exceed 'high'")
    )
    points_hard_start_kit: float = field(default=1.0, metadata=cite("ours"))
    points_repeat_replacements: float = field(default=2.0, metadata=cite("ours"))
    elevated_from: float = field(default=2.0, metadata=cite("ours"))
    high_from: float = field(default=4.0, metadata=cite("ours"))


DEFAULT_START_RULES = StartRiskRules()


@dataclass(frozen=True)
class CapacitorReading:
    """A capacitor measured at a visit, with the range its marking allows."""

    taken_on: date
    component: StartComponent
    measured_uf: float
    low_uf: float
    high_uf: float
    as_left: bool = False

    @classmethod
    def run(
        cls,
        taken_on: date,
        measured_uf: float,
        rated_uf: float,
        tolerance_pct: float = electrical.DEFAULT_RUN_CAPACITOR_TOLERANCE_PCT,
        *,
        as_left: bool = False,
    ) -> CapacitorReading:
        low, high = electrical.run_capacitor_band(rated_uf, tolerance_pct)
        return cls(taken_on, StartComponent.RUN_CAPACITOR, measured_uf, low, high, as_left)

    @classmethod
    def start(
        cls,
        taken_on: date,
        measured_uf: float,
        min_uf: float,
        max_uf: float,
        *,
        as_left: bool = False,
    ) -> CapacitorReading:
        return cls(taken_on, StartComponent.START_CAPACITOR, measured_uf, min_uf, max_uf, as_left)


@dataclass(frozen=True, eq=False)
class CapacitorColumns:
    """One capacitor's readings as arrays: the fleet form of many ``CapacitorReading``."""

    component: StartComponent
    taken_on: NDArray[np.datetime64]
    measured_uf: FloatArray
    low_uf: FloatArray
    high_uf: FloatArray
    as_left: NDArray[np.bool_]

    @classmethod
    def of(
        cls,
        component: StartComponent,
        taken_on: Sequence[date] | ArrayLike,
        measured_uf: ArrayLike,
        low_uf: ArrayLike,
        high_uf: ArrayLike,
        as_left: ArrayLike | None = None,
    ) -> CapacitorColumns:
        measured = np.asarray(measured_uf, dtype=float)
        shape = measured.shape
        return cls(
            component,
            np.asarray(taken_on, dtype="datetime64[D]"),
            measured,
            np.broadcast_to(np.asarray(low_uf, dtype=float), shape),
            np.broadcast_to(np.asarray(high_uf, dtype=float), shape),
            np.zeros(shape, dtype=bool) if as_left is None else np.asarray(as_left, dtype=bool),
        )


@dataclass(frozen=True)
class StartAttempt:
    """A start the technician watched, or a compressor found stopped.

    A stopped compressor is a failed start only when the control was calling for it
    (``called``) or it was drawing near locked-rotor current (trying and failing); found
    stopped without a call it is simply off-cycle, and says nothing about its start."""

    observed_on: date
    started: bool
    peak_amps: float | None = None
    volts_at_start: float | None = None
    #: The control was calling for cooling (None: not recorded).
    called: bool | None = None


@dataclass(frozen=True)
class ComponentReplacement:
    replaced_on: date
    component: StartComponent


@dataclass(frozen=True)
class StartHistory:
    """What the risk rests on; nameplate values may be missing (their checks are skipped)."""

    capacitor_readings: tuple[CapacitorReading | CapacitorColumns, ...] = ()
    start_attempts: tuple[StartAttempt, ...] = ()
    replacements: tuple[ComponentReplacement, ...] = ()
    lra_a: float | None = None
    nameplate_volts: float | None = None
    nameplate_volts_max: float | None = None


@dataclass(frozen=True)
class RiskItem:
    """One sign of start trouble with its points; quantities are (name, value, unit) in SI."""

    code: str
    text: str
    points: float
    observed_on: date | None = None
    quantities: tuple[tuple[str, float, str], ...] = ()


@dataclass(frozen=True)
class StartRiskAssessment:
    level: RiskLevel
    score: float
    items: tuple[RiskItem, ...]
    #: The earliest date a capacitor is projected to leave its rating, if one is drifting.
    projected_on: date | None = None


_CAPACITORS = (StartComponent.RUN_CAPACITOR, StartComponent.START_CAPACITOR)
_START_PARTS = (
    StartComponent.RUN_CAPACITOR,
    StartComponent.START_CAPACITOR,
    StartComponent.START_RELAY,
)


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


def _capped(count: int, per_event: float, rules: StartRiskRules) -> float:
    return min(count * per_event, rules.max_points_per_sign)


def _attempt_items(
    history: StartHistory, since: date, today: date, rules: StartRiskRules
) -> list[RiskItem]:
    attempts = [a for a in history.start_attempts if since <= a.observed_on <= today]
    items: list[RiskItem] = []
    lra = history.lra_a
    locked = [
        a
        for a in attempts
        if not a.started
        and lra is not None
        and a.peak_amps is not None
        and a.peak_amps >= rules.locked_rotor_fraction * lra
    ]
    failed = [a for a in attempts if not a.started and a not in locked and a.called is True]
    # Only a real start says anything about the voltage at start: a watched start, a locked
    # rotor or a failed call; an off-cycle compressor's supply is the idle line voltage.
    starts = [a for a in attempts if a.started or a in locked or a in failed]
    if locked:
        worst = max(a.peak_amps or 0.0 for a in locked)
        items.append(
            RiskItem(
                "locked_rotor",
                f"{len(locked)} start(s) drew near locked-rotor current without starting "
                f"(up to {worst:.1f} A, LRA {lra:.1f} A)",
                _capped(len(locked), rules.points_locked_rotor, rules),
                max(a.observed_on for a in locked),
                (("peak_amps", worst, "A"), ("lra", float(lra or 0.0), "A")),
            )
        )
    if failed:
        items.append(
            RiskItem(
                "failed_start",
                f"{len(failed)} failed start(s) in the last {rules.lookback_days} days",
                _capped(len(failed), rules.points_failed_start, rules),
                max(a.observed_on for a in failed),
                (("count", float(len(failed)), "1"),),
            )
        )
    if history.nameplate_volts is not None:
        low, _ = electrical.voltage_tolerance_band(
            history.nameplate_volts, history.nameplate_volts_max, rules.voltage_tolerance_pct
        )
        sagging = [a for a in starts if a.volts_at_start is not None and a.volts_at_start < low]
        if sagging:
            lowest = min(a.volts_at_start or 0.0 for a in sagging)
            items.append(
                RiskItem(
                    "low_voltage_at_start",
                    f"supply fell to {lowest:.0f} V at start, below {low:.0f} V "
                    f"({rules.voltage_tolerance_pct:.0f} % under nameplate)",
                    _capped(len(sagging), rules.points_low_voltage, rules),
                    max(a.observed_on for a in sagging),
                    (("lowest_volts", lowest, "V"), ("limit_volts", low, "V")),
                )
            )
    return items


def _replacement_items(
    history: StartHistory, since: date, today: date, rules: StartRiskRules
) -> list[RiskItem]:
    items: list[RiskItem] = []
    kits = [r for r in history.replacements if r.component is StartComponent.HARD_START_KIT]
    if kits:
        fitted = max(r.replaced_on for r in kits)
        items.append(
            RiskItem(
                "hard_start_kit",
                f"a hard-start kit was fitted on {fitted.isoformat()}: it gets a weak start "
                "going but can hide a failing compressor or a low supply",
                rules.points_hard_start_kit,
                fitted,
            )
        )
    recent = [
        r
        for r in history.replacements
        if r.component in _START_PARTS and since <= r.replaced_on <= today
    ]
    if len(recent) >= rules.repeat_replacements:
        parts = sorted({r.component.value.replace("_", " ") for r in recent})
        items.append(
            RiskItem(
                "repeat_replacements",
                f"{len(recent)} start components replaced in the last {rules.lookback_days} "
                f"days ({', '.join(parts)})",
                rules.points_repeat_replacements,
                max(r.replaced_on for r in recent),
                (("count", float(len(recent)), "1"),),
            )
        )
    return items


def assess_start_risk_many(
    histories: Sequence[StartHistory], today: date, rules: StartRiskRules = DEFAULT_START_RULES
) -> list[StartRiskAssessment]:
    """The risk of many compressors; all capacitor slopes are fitted in one array pass."""
    since = today - timedelta(days=rules.lookback_days)
    items: list[list[RiskItem]] = [[] for _ in histories]
    candidates: list[_DriftCandidate] = []
    for row, history in enumerate(histories):
        present = {c.component for c in history.capacitor_readings}
        for component in (c for c in _CAPACITORS if c in present):
            series = _current_series(history, component, today)
            if series is None:
                continue
            bad = _out_of_rating_item(series, today, rules)
            if bad is not None:
                items[row].append(bad)
            elif int((~series.as_left).sum()) >= rules.drift_min_points:
                candidates.append(_DriftCandidate(row, series))
        items[row].extend(_attempt_items(history, since, today, rules))
        items[row].extend(_replacement_items(history, since, today, rules))
    projections: list[list[date]] = [[] for _ in histories]
    for i, (item, projected) in _drift_items(candidates, today, rules).items():
        row = candidates[i].row
        items[row].append(item)
        projections[row].append(projected)
    return [
        _assessment(row_items, row_projections, rules)
        for row_items, row_projections in zip(items, projections, strict=True)
    ]


def _assessment(
    items: list[RiskItem], projections: list[date], rules: StartRiskRules
) -> StartRiskAssessment:
    score = sum(i.points for i in items)
    if score >= rules.high_from:
        level = RiskLevel.HIGH
    elif score >= rules.elevated_from:
        level = RiskLevel.ELEVATED
    else:
        level = RiskLevel.LOW
    return StartRiskAssessment(
        level=level,
        score=score,
        items=tuple(sorted(items, key=lambda i: -i.points)),
        projected_on=min(projections, default=None),
    )


def assess_start_risk(
    history: StartHistory, today: date, rules: StartRiskRules = DEFAULT_START_RULES
) -> StartRiskAssessment:
    """Score the start-component risk of one compressor from its history up to ``today``."""
    return assess_start_risk_many([history], today, rules)[0]
