"""The limits and weights of the start-component risk, and what an assessment says.

The points are our weighting; the limits behind each sign cite their standard.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from datetime import date
from enum import StrEnum

from diagnostics.core import electrical
from diagnostics.core.sources import cite


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
