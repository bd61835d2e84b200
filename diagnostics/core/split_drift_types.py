"""What the condenser-split drift takes and gives: a unit's split history, its head-pressure
limit, and the judgement (``split_drift`` decides it).
"""

from __future__ import annotations

from collections.abc import Iterable, Sequence
from dataclasses import dataclass
from datetime import date
from enum import StrEnum

import numpy as np
from numpy.typing import ArrayLike, NDArray

from diagnostics.core.head_pressure import CondensingPoint
from diagnostics.core.trends import FloatArray, MetricPoint, MetricSeries, build_series


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
