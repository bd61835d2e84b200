"""What a compressor's start risk rests on: its capacitor readings, starts and replacements.

The inputs of ``start_risk.assess_start_risk``: the parts as the diagnosis and the records
name them, a capacitor's readings against the range its marking allows (one at a time or as
columns for a fleet), the starts a technician watched and the start parts replaced; and which
rated capacitor is in service on a day (``fitted_capacitor``), one rule for the diagnosis, the
start-risk history and the report.
"""

from __future__ import annotations

from collections.abc import Iterable, Mapping, Sequence
from dataclasses import dataclass
from datetime import date
from enum import StrEnum
from typing import Any

import numpy as np
from numpy.typing import ArrayLike, NDArray

from diagnostics.core import electrical
from diagnostics.core.trends import FloatArray

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
