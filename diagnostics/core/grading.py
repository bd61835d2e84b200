"""The metric stage of the batch run: what each metric measures against which target, why
one is not scored (a reason of the unit or the moment), and each graded against its ok band
with what is excused.

Cycle metrics (TD, split, superheat, subcooling, compression ratio, discharge temperature)
are not scored when the compressor is reported stopped, nor the cycle and the box in a
defrost; a split the unit's head-pressure control holds up is excused, not judged.
"""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import dataclass

import numpy as np
from numpy.typing import NDArray

from diagnostics.core import design
from diagnostics.core import scoring as sc
from diagnostics.core import targets as tg
from diagnostics.core.inputs import ReadingColumns
from diagnostics.core.numeric import FloatArray
from diagnostics.core.reasons import (
    REASON_COMPRESSOR_OFF,
    REASON_DEFROST,
    REASON_HEAD_CONTROL,
    REASON_HIDDEN,
    REASON_ICE_MACHINE,
    REASON_RUNNING_UNKNOWN,
    REASON_SINGLE_PHASE,
    REASON_TRANSCRITICAL,
    REASON_WATER_COOLED,
)

IntArray = NDArray[np.int8]

CYCLE_METRICS = (
    "evaporator_td",
    "condenser_split",
    "superheat",
    "subcooling",
    "discharge_line_temp",
    "compression_ratio",
)


@dataclass(frozen=True)
class MetricColumns:
    """One metric over the batch."""

    measured: FloatArray
    target: FloatArray
    low: FloatArray
    high: FloatArray
    deviation: FloatArray
    status: IntArray
    points: FloatArray
    reason: IntArray


def _leg_extreme(values: FloatArray, largest: bool) -> FloatArray:
    """Largest (or smallest) leg per row, NaN when no leg was measured (no warnings)."""
    pick = np.fmax if largest else np.fmin
    out = values[:, 0].copy()
    for leg in range(1, values.shape[1]):
        pick(out, values[:, leg], out=out)
    return out


#: A metric's inputs: measured, target, and its own range (low, high) or None.
_Inputs = tuple[FloatArray, FloatArray, FloatArray | None, FloatArray | None]


def metric_inputs(
    r: ReadingColumns,
    t: design.DesignTargets,
    derived: Mapping[str, FloatArray],
    running: FloatArray,
) -> dict[str, _Inputs]:
    """What each metric measures and its target; the cycle and the box go unmeasured in a
    defrost, the cycle too with the compressor found off."""
    n = len(r)
    stopped = running == 0.0
    amps_max = _leg_extreme(r.compressor_amps, largest=True)
    volts_min = _leg_extreme(r.supply_volts, largest=False)
    volts_max = _leg_extreme(r.supply_volts, largest=True)
    volts_worst = np.where(
        np.abs(volts_min - t.volts_nominal) > np.abs(volts_max - t.volts_nominal),
        volts_min,
        volts_max,
    )
    single_phase = t.phase == 1.0
    inputs: dict[str, _Inputs] = {
        "box_temp": (r.box_temp_c, t.box_temp_c.value, None, None),
        "evaporator_td": (derived["evaporator_td_k"], t.evap_td_k.value, None, None),
        "condenser_split": (derived["condenser_split_k"], t.condenser_split_k.value, None, None),
        "superheat": (
            derived["superheat_k"],
            t.superheat_k.value,
            t.superheat_k.low,
            t.superheat_k.high,
        ),
        "subcooling": (
            derived["subcooling_k"],
            t.subcooling_k.value,
            t.subcooling_k.low,
            t.subcooling_k.high,
        ),
        "discharge_line_temp": (
            r.discharge_line_temp_c,
            np.full(n, tg.DISCHARGE_LINE_MAX_C.value),
            None,
            None,
        ),
        "compression_ratio": (derived["compression_ratio"], t.cr_limit, None, None),
        "head_pressure": (r.head_kpa_gauge, t.cutout_kpa_gauge, None, None),
        "gas_cooler_approach": (
            derived["gas_cooler_approach_k"],
            np.full(n, tg.GAS_COOLER_APPROACH_K.value),
            None,
            None,
        ),
        "running_amps": (np.where(running == 1.0, amps_max, np.nan), t.rla_a, None, None),
        "standstill_amps": (np.where(stopped, amps_max, np.nan), t.lra_a, None, None),
        "supply_voltage": (volts_worst, t.volts_nominal, t.volts_low, t.volts_high),
        "voltage_unbalance": (
            np.where(single_phase, np.nan, derived["voltage_unbalance_pct"]),
            np.zeros(n),
            None,
            None,
        ),
        "current_unbalance": (
            np.where(single_phase | stopped, np.nan, derived["current_unbalance_pct"]),
            np.zeros(n),
            None,
            None,
        ),
        "run_capacitor": (r.run_capacitor_uf, t.run_cap_uf, t.run_cap_low, t.run_cap_high),
        "start_capacitor": (
            r.start_capacitor_uf,
            t.start_cap_uf,
            t.start_cap_low,
            t.start_cap_high,
        ),
    }
    defrost = r.in_defrost == 1.0
    for name in (*CYCLE_METRICS, "box_temp"):
        measured, target, low, high = inputs[name]
        off = defrost | stopped if name != "box_temp" else defrost
        inputs[name] = (np.where(off, np.nan, measured), target, low, high)
    return inputs


def _reasons(
    name: str,
    t: design.DesignTargets,
    running: FloatArray,
    defrost: NDArray[np.bool_],
    transcritical: NDArray[np.bool_],
) -> IntArray:
    """Why each row's metric ``name`` is not scored, where a reason of the unit or the
    moment says so (``reasons.REASON_*``); 0 elsewhere."""
    stopped = running == 0.0
    reason = np.zeros(running.shape[0], dtype=np.int8)
    if name in CYCLE_METRICS:
        reason[stopped] = REASON_COMPRESSOR_OFF
    if name in (*CYCLE_METRICS, "box_temp"):
        reason[defrost] = REASON_DEFROST
    if name == "box_temp":
        reason[t.ice_machine] = REASON_ICE_MACHINE
    if name == "condenser_split":
        reason[t.water_cooled] = REASON_WATER_COOLED
        reason[transcritical] = REASON_TRANSCRITICAL
    elif name == "subcooling":
        reason[transcritical] = REASON_TRANSCRITICAL
    elif name == "gas_cooler_approach":
        reason[~transcritical] = REASON_HIDDEN
    elif name == "running_amps":
        reason[np.isnan(running)] = REASON_RUNNING_UNKNOWN
        reason[stopped] = REASON_HIDDEN
    elif name == "standstill_amps":
        reason[running != 0.0] = REASON_HIDDEN
    elif name in ("voltage_unbalance", "current_unbalance"):
        reason[t.phase == 1.0] = REASON_SINGLE_PHASE
        if name == "current_unbalance":
            reason[stopped] = REASON_HIDDEN
    return reason


def grade(
    inputs: Mapping[str, _Inputs],
    t: design.DesignTargets,
    slopes: tuple[FloatArray, FloatArray],
    transcritical: NDArray[np.bool_],
    running: FloatArray,
    defrost: NDArray[np.bool_],
    held: NDArray[np.bool_],
) -> dict[str, MetricColumns]:
    """Every metric graded against its band (widened by the instruments' error where its
    rule says: ``slopes``, the saturation curves' at the suction and head readings); a split
    the head-pressure control held up is excused, not judged."""
    margins = {
        "suction": sc.instrument_margin_k(slopes[0]),
        "head": sc.instrument_margin_k(slopes[1]),
    }
    metrics: dict[str, MetricColumns] = {}
    for name, rule in sc.SCORING_TABLE.items():
        measured, target, own_low, own_high = inputs[name]
        margin = None if rule.margin_from is None else margins[rule.margin_from]
        low, high = sc.ok_band(rule, target, own_low, own_high, margin)
        status, points, deviation = sc.grade(rule, measured, target, low, high)
        reason = _reasons(name, t, running, defrost, transcritical)
        if name == "condenser_split":
            excused = held & (status != sc.NOT_SCORED)
            status[excused] = sc.NOT_SCORED
            points[excused] = 0.0
            deviation[excused] = np.nan
            reason[excused] = REASON_HEAD_CONTROL
        metrics[name] = MetricColumns(
            measured, target, low, high, deviation, status, points, reason
        )
    return metrics
