"""Why a metric was not scored: the codes the batch run sets, the stored form keeps and the
texts explain when a diagnosis is read.

A metric goes unscored either for a reason of the unit or the moment (``REASON_*``: a
water-cooled condenser has no air split, a compressor found off says nothing of its cycle)
or for want of inputs: a reading not taken, a target the design data does not give, a site
elevation that makes no absolute pressure. The second kind is worked out per row from what
was missing (``missing_keys``), so its text is written once per distinct case.
"""

from __future__ import annotations

from collections.abc import Sequence

import numpy as np
from numpy.typing import NDArray

from diagnostics.core.inputs import ReadingColumns
from diagnostics.core.numeric import FloatArray

REASON_NONE = 0
REASON_WATER_COOLED = 1
REASON_TRANSCRITICAL = 2
REASON_HEAD_CONTROL = 3
#: Not shown at all: the metric does not apply to what was found (amps at standstill while
#: running, a gas-cooler approach below the critical pressure).
REASON_HIDDEN = 4
REASON_RUNNING_UNKNOWN = 5
REASON_SINGLE_PHASE = 6
REASON_COMPRESSOR_OFF = 7
REASON_DEFROST = 8
REASON_ICE_MACHINE = 9

#: Each reason by the name the stored form keeps (``REASON_NONE`` has none).
REASON_CODES: dict[int, str] = {
    REASON_WATER_COOLED: "water_cooled",
    REASON_TRANSCRITICAL: "transcritical",
    REASON_HEAD_CONTROL: "head_control",
    REASON_HIDDEN: "hidden",
    REASON_RUNNING_UNKNOWN: "running_unknown",
    REASON_SINGLE_PHASE: "single_phase",
    REASON_COMPRESSOR_OFF: "compressor_off",
    REASON_DEFROST: "defrost",
    REASON_ICE_MACHINE: "ice_machine",
}

#: Reasons that make a metric inapplicable to the unit (its target is not listed either).
NOT_APPLICABLE = (
    REASON_WATER_COOLED,
    REASON_TRANSCRITICAL,
    REASON_SINGLE_PHASE,
    REASON_ICE_MACHINE,
)
NOT_APPLICABLE_BY_CODE = np.isin(np.arange(REASON_ICE_MACHINE + 1), NOT_APPLICABLE)

#: Per metric: the reading fields it needs and the design data its target needs (for the
#: "not scored: missing ..." text, built per row).
METRIC_NEEDS: dict[str, tuple[tuple[str, ...], str]] = {
    "box_temp": (("box_temp_c",), "a design box temperature"),
    "evaporator_td": (("box_temp_c", "suction_kpa_gauge"), "a design evaporator TD"),
    "condenser_split": (("entering_air_temp_c", "head_kpa_gauge"), "a design condenser split"),
    "superheat": (("suction_kpa_gauge", "suction_line_temp_c"), "a superheat range"),
    "subcooling": (("head_kpa_gauge", "liquid_line_temp_c"), "whether it has a receiver"),
    "discharge_line_temp": (("discharge_line_temp_c",), "a discharge limit"),
    "compression_ratio": (("suction_kpa_gauge", "head_kpa_gauge"), "a compression-ratio limit"),
    "head_pressure": (("head_kpa_gauge",), "a high-pressure cut-out"),
    "gas_cooler_approach": (("liquid_line_temp_c", "entering_air_temp_c"), "an approach target"),
    "running_amps": (("compressor_amps", "compressor_running"), "the nameplate RLA"),
    "standstill_amps": (("compressor_amps", "compressor_running"), "the nameplate LRA"),
    "supply_voltage": (("supply_volts",), "the nameplate voltage"),
    "voltage_unbalance": (("supply_volts",), "an unbalance limit"),
    "current_unbalance": (("compressor_amps",), "an unbalance limit"),
    "run_capacitor": (("run_capacitor_uf",), "the run capacitor's rating"),
    "start_capacitor": (("start_capacitor_uf",), "the start capacitor's range"),
}

# What was missing, as a small integer per row: two bits per reading field the metric needs
# (not measured; measured on fewer than three legs), then the target, then the atmosphere.
FIELD_MISSING, FIELD_PARTIAL = 1, 2
TARGET_MISSING = 1 << 2 * max(len(fields) for fields, _ in METRIC_NEEDS.values())
ATMOSPHERE_BAD = TARGET_MISSING << 1


#: What a missing key's bits say, by the names the stored form keeps: a reading field not
#: measured (its name), measured on fewer than three legs (``<name>:legs``), the unit's data
#: not giving the target (``target``), the site's elevation unusable (``elevation``).
def missing_codes(name: str, key: int) -> list[str]:
    """The names of what metric ``name`` lacked, from its missing key."""
    fields, _ = METRIC_NEEDS[name]
    codes: list[str] = []
    for k, f in enumerate(fields):
        state = key >> 2 * k & 3
        if state == FIELD_MISSING:
            codes.append(f)
        elif state == FIELD_PARTIAL:
            codes.append(f"{f}:legs")
    if key & TARGET_MISSING:
        codes.append("target")
    if key & ATMOSPHERE_BAD:
        codes.append("elevation")
    return codes


def missing_key(name: str, codes: Sequence[str]) -> int:
    """The missing key of metric ``name`` from the names of what it lacked (unknown names,
    from a layout since changed, say nothing)."""
    fields, _ = METRIC_NEEDS[name]
    bits = {"target": TARGET_MISSING, "elevation": ATMOSPHERE_BAD}
    for k, f in enumerate(fields):
        bits[f] = FIELD_MISSING << 2 * k
        bits[f"{f}:legs"] = FIELD_PARTIAL << 2 * k
    key = 0
    for code in codes:
        key |= bits.get(code, 0)
    return key


def missing_keys(
    readings: ReadingColumns, atm: FloatArray, name: str, target_missing: NDArray[np.bool_]
) -> NDArray[np.int64]:
    """What metric ``name`` lacked on each row, as a key of the bits above."""
    fields, _ = METRIC_NEEDS[name]
    key = np.where(target_missing, TARGET_MISSING, 0).astype(np.int64)
    key[np.isnan(atm)] |= ATMOSPHERE_BAD
    for k, f in enumerate(fields):
        col = getattr(readings, f)
        nan = np.isnan(col)
        absent = nan.all(axis=1) if nan.ndim == 2 else nan
        key[absent] |= FIELD_MISSING << 2 * k
        if nan.ndim == 2 and name.endswith("unbalance"):
            key[~absent & nan.any(axis=1)] |= FIELD_PARTIAL << 2 * k
    return key
