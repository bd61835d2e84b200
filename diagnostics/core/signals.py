"""Which signals hold for a batch: read off the graded metrics and the technician's flags.

The signals by name, with the evidence each stands for, are ``findings.SIGNALS``; this module
decides, row by row on numpy boolean arrays, which of them hold.
"""

from __future__ import annotations

from collections.abc import Mapping

import numpy as np
from numpy.typing import NDArray

from diagnostics.core.scoring import FAULT, NOT_SCORED, OK, WATCH
from diagnostics.core.types import SIGHT_GLASS_STATES

BoolArray = NDArray[np.bool_]
FloatArray = NDArray[np.float64]

#: Signal thresholds that are not already score bands (source beside each).
SIGNAL_THRESHOLDS: dict[str, tuple[float, str]] = {
    "amps_low_fraction_of_rla": (
        0.5,
        "Rimewatch choice: a loaded compressor rarely draws under half its RLA",
    ),
    "superheat_very_low_k": (
        3.0 / 1.8,
        "docs/references.md §6: an overfeeding valve leaves 0-3 F superheat",
    ),
}


def derive_signals(
    metrics: Mapping[str, tuple[FloatArray, FloatArray, FloatArray, NDArray[np.int8]]],
    flags: Mapping[str, FloatArray],
    compression_ratio_typical_low: FloatArray,
    receiverless: BoolArray,
    condenser_fan_may_stop: BoolArray | None = None,
    receiver_backed_up: BoolArray | None = None,
) -> dict[str, BoolArray]:
    """Every signal for a batch, from the graded metrics and the technician's flags.

    A fan seen stopped is a symptom only while the compressor runs (off-cycle, both fans may
    rest), and a condenser fan only where no control stops it on purpose
    (``condenser_fan_may_stop``: a fan-cycling or variable-speed control holding the head).

    ``metrics`` maps a metric name to (measured, target, deviation, status); a metric that was
    not scored makes every signal about it false. Subcooling signals are raised for
    receiverless units: with a receiver, subcooling is no charge indicator (docs/references.md §6),
    except that a subcooling above its band while the head is not held up
    (``receiver_backed_up`` may be raised for such units) says the receiver is full and
    liquid is backing into the condenser.
    """

    def parts(name: str) -> tuple[FloatArray, FloatArray, FloatArray, NDArray[np.int8]]:
        return metrics[name]

    def scored(name: str) -> BoolArray:
        return np.not_equal(parts(name)[3], NOT_SCORED)

    def off_band(name: str) -> BoolArray:
        status = parts(name)[3]
        return np.equal(status, WATCH) | np.equal(status, FAULT)

    # A NaN deviation (not scored) compares false either way.
    def above(name: str) -> BoolArray:
        return off_band(name) & (parts(name)[2] > 0)

    def below(name: str) -> BoolArray:
        return off_band(name) & (parts(name)[2] < 0)

    def far_above(name: str) -> BoolArray:
        return above(name) & np.equal(parts(name)[3], FAULT)

    def less_than(name: str, limit: FloatArray | float) -> BoolArray:
        with np.errstate(invalid="ignore"):
            return scored(name) & (parts(name)[0] < limit)

    def flag_is(name: str, value: float) -> BoolArray:
        return np.equal(flags[name], value)

    running = flag_is("compressor_running", 1.0)
    n = len(running)
    backed_up = np.zeros(n, dtype=bool) if receiver_backed_up is None else receiver_backed_up
    may_stop = np.zeros(n, dtype=bool) if condenser_fan_may_stop is None else condenser_fan_may_stop
    amps_low_fraction = SIGNAL_THRESHOLDS["amps_low_fraction_of_rla"][0]
    very_low_superheat = SIGNAL_THRESHOLDS["superheat_very_low_k"][0]
    cr = parts("compression_ratio")[0]
    with np.errstate(invalid="ignore"):
        cr_low = (
            np.isfinite(cr)
            & (parts("compression_ratio")[3] != NOT_SCORED)
            & (cr < compression_ratio_typical_low)
        )
    return {
        "td_high": above("evaporator_td"),
        "td_very_high": far_above("evaporator_td"),
        "td_low": below("evaporator_td"),
        "td_not_high": scored("evaporator_td") & ~above("evaporator_td"),
        "split_high": above("condenser_split"),
        "split_very_high": far_above("condenser_split"),
        "split_low": below("condenser_split"),
        "sh_high": above("superheat"),
        "sh_low": below("superheat"),
        "sh_very_low": less_than("superheat", very_low_superheat),
        "sh_not_high": scored("superheat") & ~above("superheat"),
        "sh_ok": parts("superheat")[3] == OK,
        "sc_high": (receiverless | backed_up) & above("subcooling"),
        "sc_low": receiverless & below("subcooling"),
        "sc_not_high": receiverless & scored("subcooling") & ~above("subcooling"),
        "sc_not_low": receiverless & scored("subcooling") & ~below("subcooling"),
        "amps_high": above("running_amps"),
        "amps_low": less_than("running_amps", amps_low_fraction * parts("running_amps")[1]),
        "cr_low": cr_low,
        "discharge_high": above("discharge_line_temp"),
        "locked_rotor": parts("standstill_amps")[3] == FAULT,
        "volts_low": below("supply_voltage"),
        "volts_high": above("supply_voltage"),
        "voltage_unbalanced": above("voltage_unbalance"),
        "current_unbalanced": above("current_unbalance"),
        "run_cap_bad": parts("run_capacitor")[3] == FAULT,
        "start_cap_bad": parts("start_capacitor")[3] == FAULT,
        "box_warm": above("box_temp"),
        "warm_but_fed": above("box_temp") & scored("evaporator_td") & ~above("evaporator_td"),
        "called_not_running": flag_is("call_for_cooling", 1.0) & flag_is("compressor_running", 0.0),
        "coil_iced": flag_is("coil_iced", 1.0),
        "evap_fans_off": flag_is("evaporator_fans_running", 0.0) & running,
        "cond_fan_off": flag_is("condenser_fan_running", 0.0) & running & ~may_stop,
        "bubbles": flag_is("sight_glass", float(SIGHT_GLASS_STATES.index("bubbles"))),
        "sight_glass_clear": flag_is("sight_glass", float(SIGHT_GLASS_STATES.index("clear"))),
    }
