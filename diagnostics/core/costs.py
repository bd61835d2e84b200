"""What a drifting condenser costs: extra kWh and money per month, with the assumptions stated.

The penalty (extra energy per unit of cooling, ``COP_target / COP_actual - 1``) comes from the
cycle model in ``energy.py``, or from the published rule of thumb when no cycle can be run.
The measured compressor power already runs at the drifted condition, so the share of the
energy that the drift costs is ``penalty / (1 + penalty)`` of what the compressor uses: the
same cooling at the target condition would take ``1 / (1 + penalty)`` of it, whether the
difference shows up as higher power or as longer running.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field

import numpy as np
from numpy.typing import ArrayLike, NDArray

from diagnostics.core.sources import cite, source_of

FloatArray = NDArray[np.float64]


@dataclass(frozen=True)
class CostRules:
    """Defaults used when the site or the reading does not say; each is stated in the result."""

    run_time_fraction: float = field(
        default=16.0 / 24.0,
        metadata=cite(
            "common practice: refrigeration is sized to run about 16 hours a day (from memory)"
        ),
    )
    power_factor: float = field(
        default=0.85,
        metadata=cite(
            "from memory: typical of a loaded hermetic compressor motor; measure where possible"
        ),
    )
    days_per_month: float = field(default=365.25 / 12.0, metadata=cite("calendar average"))
    penalty_percent_per_k: float = field(
        default=3.0,
        metadata=cite(
            "Energie-Agentur der Wirtschaft (Switzerland), standard measure KA-03b: about 3 % more "
            "energy per K of condensing temperature; used only without a cycle model"
        ),
    )


DEFAULT_COST_RULES = CostRules()


@dataclass(frozen=True)
class Assumption:
    """One input of the estimate, where it came from (measured, site, or a default's source)."""

    name: str
    value: float
    unit: str
    source: str


@dataclass(frozen=True)
class EnergyCost:
    """Monthly energy of the compressor and the part of it the drift costs."""

    penalty_percent: float
    compressor_kw: float
    energy_kwh_per_month: float
    extra_kwh_per_month: float
    extra_cost_per_month: float
    currency: str
    assumptions: tuple[Assumption, ...]


def compressor_power_kw(
    volts: ArrayLike, amps: ArrayLike, power_factor: ArrayLike, phases: int = 1
) -> FloatArray | float:
    """Real power drawn: V x A x PF, times sqrt(3) for three-phase (line values)."""
    if phases not in (1, 3):
        raise ValueError("phases must be 1 or 3")
    factor = math.sqrt(3.0) if phases == 3 else 1.0
    kw = (
        np.asarray(volts, dtype=float)
        * np.asarray(amps, dtype=float)
        * np.asarray(power_factor, dtype=float)
        * factor
        / 1000.0
    )
    return float(kw) if kw.ndim == 0 else kw


def penalty_percent_from_excess_k(
    excess_k: ArrayLike, rules: CostRules = DEFAULT_COST_RULES
) -> FloatArray | float:
    """Rule-of-thumb penalty for a condensing temperature ``excess_k`` above target (>= 0)."""
    pct = np.clip(np.asarray(excess_k, dtype=float), 0.0, None) * rules.penalty_percent_per_k
    return float(pct) if pct.ndim == 0 else pct


def extra_energy_fraction(penalty_percent: ArrayLike) -> FloatArray | float:
    """Share of the measured energy that the drift costs: p / (1 + p)."""
    p = np.clip(np.asarray(penalty_percent, dtype=float), 0.0, None) / 100.0
    share = p / (1.0 + p)
    return float(share) if share.ndim == 0 else share


def energy_cost(
    penalty_percent: float,
    *,
    volts: float,
    amps: float,
    tariff_per_kwh: float,
    currency: str,
    phases: int = 1,
    power_factor: float | None = None,
    run_time_fraction: float | None = None,
    days_in_month: float | None = None,
    rules: CostRules = DEFAULT_COST_RULES,
) -> EnergyCost:
    """Extra kWh and money per month from the penalty, measured power and the site tariff.

    Anything not passed in comes from ``rules``; every value used is listed in
    ``assumptions`` with its origin so the report can show how the figure was reached.
    """
    measured = "measured at the visit"

    def pick(value: float | None, default: float, given: str, name: str) -> tuple[float, str]:
        if value is not None:
            return value, given
        return default, source_of(rules, name)

    pf, pf_src = pick(power_factor, rules.power_factor, measured, "power_factor")
    run, run_src = pick(
        run_time_fraction, rules.run_time_fraction, "site setting", "run_time_fraction"
    )
    days, days_src = pick(days_in_month, rules.days_per_month, "the month", "days_per_month")
    if not 0.0 <= run <= 1.0:
        raise ValueError("run-time fraction must lie between 0 and 1")
    kw = float(compressor_power_kw(volts, amps, pf, phases))
    energy = kw * run * 24.0 * days
    extra = energy * float(extra_energy_fraction(penalty_percent))
    assumptions = (
        Assumption("supply_volts", volts, "V", measured),
        Assumption("compressor_amps", amps, "A", measured),
        Assumption("phases", float(phases), "1", "unit nameplate"),
        Assumption("power_factor", pf, "1", pf_src),
        Assumption("run_time_fraction", run, "1", run_src),
        Assumption("days_in_month", days, "d", days_src),
        Assumption("penalty", penalty_percent, "%", "COP_target / COP_actual - 1"),
        Assumption("tariff", tariff_per_kwh, f"{currency}/kWh", "site tariff"),
    )
    return EnergyCost(
        penalty_percent=penalty_percent,
        compressor_kw=kw,
        energy_kwh_per_month=energy,
        extra_kwh_per_month=extra,
        extra_cost_per_month=extra * tariff_per_kwh,
        currency=currency,
        assumptions=assumptions,
    )
