"""The scoring table: for every metric, its ok band, where watch turns to fault, and the points.

This is the one place where score thresholds and weights live. ``targets.py`` says what a
metric should be (the design value or the application default); this table says how far
from it is still fine, how far is worth watching, and how far is a fault, with the source of
each band beside it.

How a row is read (``grade``):

- the ok band is ``[target + ok_low, target + ok_high]`` (or ``target x (1 + ...)`` for a
  ``relative`` row); an ``ok_low`` / ``ok_high`` of ``None`` means the target itself brings that
  edge (a superheat range, a capacitor's tolerance band); ``-inf`` / ``+inf`` means that side is
  never scored (a low discharge temperature is no fault);
- a measurement outside the ok band is ``watch``; beyond the edge by more than ``fault_low`` /
  ``fault_high`` (same units, or fraction of the target when ``relative``) it is ``fault``;
  ``0`` means straight to fault, ``inf`` means that side never faults;
- a missing measurement or target is ``not_scored`` and costs nothing;
- the visit score is ``100 - sum(points lost)``, clipped to 0..100.

Weights (points) are Rimewatch's own judgement of how much each kind of problem matters to
the equipment and the food it keeps; they are not from a standard and say so.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import Literal

import numpy as np
from numpy.typing import ArrayLike, NDArray

FloatArray = NDArray[np.float64]
IntArray = NDArray[np.int8]

INF = math.inf

#: Status codes in the columnar results, in the order of ``types.STATUSES``.
OK, WATCH, FAULT, NOT_SCORED = 0, 1, 2, 3

OURS = "Rimewatch choice"

#: Ordinary field instruments, as expanded (about 95 %) uncertainties: a clamp thermometer
#: and a service gauge (from memory: about +/-1 K and +/-1 psi).
THERMOMETER_K = 1.0
GAUGE_KPA = 7.0
_INSTRUMENTS_SOURCE = (
    "the instruments' error: a clamp thermometer's 1 K with a gauge's 7 kPa (1 psi) read as "
    "a saturation temperature, combined in quadrature (from memory), so wider where the "
    "saturation curve is flat at low pressure (docs/references.md §9)"
)


def instrument_margin_k(saturation_slope_k_per_kpa: ArrayLike) -> FloatArray:
    """The uncertainty of a line temperature less a saturation temperature read off a
    gauge, K: the two errors in quadrature, the gauge's through the curve's slope (a
    missing slope leaves the thermometer's alone)."""
    slope = np.nan_to_num(np.asarray(saturation_slope_k_per_kpa, dtype=np.float64))
    return np.hypot(THERMOMETER_K, GAUGE_KPA * slope)


@dataclass(frozen=True)
class ScoreRule:
    """How one metric is graded. See the module docstring for how the fields are read."""

    metric: str
    label: str
    unit: str
    ok_low: float | None
    ok_high: float | None
    fault_low: float
    fault_high: float
    watch_points: float
    fault_points: float
    source: str
    relative: bool = False
    #: The ok band is widened each side by the instruments' error, worked out per reading
    #: from the saturation curve at this pressure (``instrument_margin_k``): a reading is off
    #: its band only when it is off by more than the instruments can be wrong.
    margin_from: Literal["suction", "head"] | None = None


#: metric -> rule. Temperatures in C, differences in K, pressures in kPa, currents in A.
SCORING_TABLE: dict[str, ScoreRule] = {
    rule.metric: rule
    for rule in (
        ScoreRule(
            "box_temp",
            "box temperature",
            "C",
            ok_low=-2.0,
            ok_high=2.0,
            fault_low=INF,
            fault_high=3.0,
            watch_points=5,
            fault_points=15,
            source=f"{OURS}: +/-2 K around the design box temperature, fault 5 K warm; "
            "too cold is only watched",
        ),
        ScoreRule(
            "evaporator_td",
            "evaporator TD",
            "K",
            ok_low=-2.0,
            ok_high=2.0,
            fault_low=INF,
            fault_high=4.0,
            watch_points=5,
            fault_points=15,
            source="common practice: a general cooler runs a 10-12 F (about 1 K wide) TD; "
            f"{OURS}: +/-2 K for reading error, fault 6 K above design",
        ),
        ScoreRule(
            "condenser_split",
            "condenser split",
            "K",
            ok_low=-4.0,
            ok_high=3.0,
            fault_low=INF,
            fault_high=5.0,
            watch_points=5,
            fault_points=15,
            source="common practice: medium-temperature splits of 15-30 F; "
            f"{OURS}: -4/+3 K around design, fault 8 K above; a low split is only watched",
        ),
        ScoreRule(
            "superheat",
            "evaporator superheat",
            "K",
            ok_low=None,
            ok_high=None,
            fault_low=2.0,
            fault_high=5.6,
            watch_points=5,
            fault_points=15,
            source="range by metering device and application (targets.py), widened by "
            f"{_INSTRUMENTS_SOURCE}; {OURS}: fault 2 K below (flood-back risk) or 10 F above",
            margin_from="suction",
        ),
        ScoreRule(
            "subcooling",
            "subcooling",
            "K",
            ok_low=None,
            ok_high=None,
            fault_low=2.8,
            fault_high=5.6,
            watch_points=5,
            fault_points=10,
            source="range with and without a receiver (targets.py), widened by "
            f"{_INSTRUMENTS_SOURCE}; {OURS}: fault 5 F below or 10 F above",
            margin_from="head",
        ),
        ScoreRule(
            "discharge_line_temp",
            "discharge line temperature",
            "C",
            ok_low=-INF,
            ok_high=0.0,
            fault_low=INF,
            fault_high=13.9,
            watch_points=10,
            fault_points=20,
            source="Tomczyk, ACHR News, 'Compressor Superheated Discharge Temps': at most "
            f"225 F 6 in from the compressor; {OURS}: fault above 250 F",
        ),
        ScoreRule(
            "compression_ratio",
            "compression ratio",
            "",
            ok_low=-INF,
            ok_high=0.0,
            fault_low=INF,
            fault_high=2.0,
            watch_points=5,
            fault_points=15,
            source=f"common practice: single-stage limit about 10:1; {OURS}: fault above 12:1",
        ),
        ScoreRule(
            "head_pressure",
            "head pressure against the high-pressure cut-out",
            "kPa",
            ok_low=-INF,
            ok_high=-0.10,
            fault_low=INF,
            fault_high=0.10,
            watch_points=10,
            fault_points=30,
            relative=True,
            source=f"{OURS}: watch within 10 % of the unit's cut-out, fault at or above it",
        ),
        ScoreRule(
            "gas_cooler_approach",
            "gas-cooler approach",
            "K",
            ok_low=-INF,
            ok_high=0.0,
            fault_low=INF,
            fault_high=4.0,
            watch_points=5,
            fault_points=15,
            source="common practice (from memory): gas coolers are selected for a 2-3 K "
            f"approach; {OURS}: fault 4 K past it",
        ),
        ScoreRule(
            "running_amps",
            "running amps against RLA",
            "A",
            ok_low=-INF,
            ok_high=0.0,
            fault_low=INF,
            fault_high=0.25,
            watch_points=10,
            fault_points=20,
            relative=True,
            source="nameplate RLA (UL 984: RLA = MCC / 1.56); "
            f"{OURS}: watch above RLA, fault above 125 % of RLA",
        ),
        ScoreRule(
            "standstill_amps",
            "current drawn by a compressor that is not running",
            "A",
            ok_low=-INF,
            ok_high=-0.50,
            fault_low=INF,
            fault_high=0.0,
            watch_points=0,
            fault_points=40,
            relative=True,
            source="common practice: a compressor that hums without starting draws about its "
            f"LRA; {OURS}: fault from half the nameplate LRA",
        ),
        ScoreRule(
            "supply_voltage",
            "supply voltage",
            "V",
            ok_low=None,
            ok_high=None,
            fault_low=0.0,
            fault_high=0.0,
            watch_points=0,
            fault_points=20,
            source="NEMA MG-1 12.44: +/-10 % of nameplate (across a dual rating)",
        ),
        ScoreRule(
            "voltage_unbalance",
            "voltage unbalance",
            "%",
            ok_low=-INF,
            ok_high=1.0,
            fault_low=INF,
            fault_high=4.0,
            watch_points=10,
            fault_points=25,
            source="NEMA MG-1 14.36: designed for 1 %, derate above 1 %, do not operate "
            "above 5 %",
        ),
        ScoreRule(
            "current_unbalance",
            "current unbalance",
            "%",
            ok_low=-INF,
            ok_high=10.0,
            fault_low=INF,
            fault_high=10.0,
            watch_points=5,
            fault_points=15,
            source=f"common practice: investigate above 10 %; {OURS}: fault above 20 %",
        ),
        ScoreRule(
            "run_capacitor",
            "run capacitor",
            "uF",
            ok_low=None,
            ok_high=None,
            fault_low=0.0,
            fault_high=0.0,
            watch_points=0,
            fault_points=15,
            source="marked tolerance, typically +/-6 % (EIA-456-A, IEC 60252-1)",
        ),
        ScoreRule(
            "start_capacitor",
            "start capacitor",
            "uF",
            ok_low=None,
            ok_high=None,
            fault_low=0.0,
            fault_high=0.0,
            watch_points=0,
            fault_points=10,
            source="marked range (IEC 60252-2)",
        ),
    )
}

METRIC_NAMES: tuple[str, ...] = tuple(SCORING_TABLE)


def ok_band(
    rule: ScoreRule,
    target: FloatArray,
    range_low: FloatArray | None = None,
    range_high: FloatArray | None = None,
    margin: FloatArray | None = None,
) -> tuple[FloatArray, FloatArray]:
    """The ok band's edges for each row: from the rule's offsets or the target's own range,
    widened each side by ``margin`` (the instruments' error) where the rule takes one."""
    target = np.asarray(target, dtype=np.float64)

    def edge(offset: float | None, own: FloatArray | None) -> FloatArray:
        if offset is None:
            if own is None:
                raise ValueError(f"{rule.metric}: the target must bring its own range")
            return np.asarray(own, dtype=np.float64)
        if math.isinf(offset):
            return np.full_like(target, offset)
        if rule.relative:
            return target * (1.0 + offset)
        return target + offset

    low, high = edge(rule.ok_low, range_low), edge(rule.ok_high, range_high)
    if rule.margin_from is not None and margin is not None:
        low, high = low - margin, high + margin
    return low, high


def grade(
    rule: ScoreRule,
    measured: FloatArray,
    target: FloatArray,
    low: FloatArray,
    high: FloatArray,
) -> tuple[IntArray, FloatArray, FloatArray]:
    """Status code, points lost and deviation (outside the ok band, signed) for each row."""
    m = np.asarray(measured, dtype=np.float64)
    t = np.asarray(target, dtype=np.float64)
    with np.errstate(invalid="ignore"):
        above = m - high
        below = low - m
        is_above = above > 0
        is_below = below > 0
        if rule.relative:
            fault_high: FloatArray | float = rule.fault_high * np.abs(t)
            fault_low: FloatArray | float = rule.fault_low * np.abs(t)
        else:
            fault_high, fault_low = rule.fault_high, rule.fault_low
        is_fault = (is_above & (above > fault_high)) | (is_below & (below > fault_low))
    scored = np.isfinite(m) & ~(np.isnan(low) | np.isnan(high) | np.isnan(t))
    # off the band -> 1 (watch); off and past the fault margin -> 2 (fault)
    status = (is_above | is_below).astype(np.int8)
    status += is_fault
    status[~scored] = NOT_SCORED
    points = np.array([0.0, rule.watch_points, rule.fault_points, 0.0]).take(status)
    # the band has low <= high, so at most one side is positive: the signed excess
    deviation = np.maximum(above, 0.0, out=above)
    deviation -= np.maximum(below, 0.0, out=below)
    deviation[~scored] = np.nan
    return status, points, deviation


def visit_score(points_lost: FloatArray, judged: NDArray[np.bool_] | None = None) -> FloatArray:
    """100 minus the points lost, kept within 0..100; NaN for a row where nothing was
    judged (``judged`` false): a set with nothing to judge is not a healthy one."""
    score = np.clip(100.0 - np.asarray(points_lost, dtype=np.float64), 0.0, 100.0)
    return score if judged is None else np.where(judged, score, np.nan)
