"""Every stored diagnosis becomes a version 1 document (``diagnostics.core.stored``).

Until now a diagnosis's details were one float32 row of 188 columns (752 bytes), recognised
by its length. Each such row is decoded here by that layout, written down below as it was
(this migration must keep reading it whatever the code becomes), and written as the JSON
document the core writes today: the same numbers, rounded to four decimals as the old
reader rounded them, and the same codes, now named. A row of another length (empty, or of a
layout older still) held nothing readable and gets an empty document; ``manage.py rescore``
picks it up by its algorithm version, as before. The ``packed`` column goes in 0006.
"""

from __future__ import annotations

import math
from typing import Any

import numpy as np
from django.db import migrations, models

# --- the float32 layout, as it was --------------------------------------------------------

REFRIGERANTS = (
    "R-22", "R-32", "R-134a", "R-290", "R-600a", "R-717", "R-744", "R-1234yf", "R-1234ze(E)",
    "R-404A", "R-407A", "R-407C", "R-410A", "R-448A", "R-449A", "R-452A", "R-454B", "R-454C",
    "R-455A", "R-507A", "R-513A",
)  # fmt: skip
APPLICATIONS = ("medium_temp", "low_temp", "reach_in", "ice_machine", "other")
METERING_DEVICES = ("txv", "eev", "capillary", "fixed_orifice")
HEAD_PRESSURE_CONTROLS = ("none", "fan_cycling", "flooding", "variable_speed", "other")
STATUSES = ("ok", "watch", "fault", "not_scored")
NOT_SCORED = 3
ORIGINS = {0: "design", 1: "application_default", -1: "missing"}
#: Reason code -> its name (0: none).
REASONS = {
    1: "water_cooled",
    2: "transcritical",
    3: "head_control",
    5: "running_unknown",
    6: "single_phase",
    7: "compressor_off",
    8: "defrost",
    9: "ice_machine",
}
HIDDEN = 4
#: Metric -> the reading fields it needed, in the order of the missing key's bit pairs.
METRIC_NEEDS = {
    "box_temp": ("box_temp_c",),
    "evaporator_td": ("box_temp_c", "suction_kpa_gauge"),
    "condenser_split": ("entering_air_temp_c", "head_kpa_gauge"),
    "superheat": ("suction_kpa_gauge", "suction_line_temp_c"),
    "subcooling": ("head_kpa_gauge", "liquid_line_temp_c"),
    "discharge_line_temp": ("discharge_line_temp_c",),
    "compression_ratio": ("suction_kpa_gauge", "head_kpa_gauge"),
    "head_pressure": ("head_kpa_gauge",),
    "gas_cooler_approach": ("liquid_line_temp_c", "entering_air_temp_c"),
    "running_amps": ("compressor_amps", "compressor_running"),
    "standstill_amps": ("compressor_amps", "compressor_running"),
    "supply_voltage": ("supply_volts",),
    "voltage_unbalance": ("supply_volts",),
    "current_unbalance": ("compressor_amps",),
    "run_capacitor": ("run_capacitor_uf",),
    "start_capacitor": ("start_capacitor_uf",),
}
TARGET_MISSING, ATMOSPHERE_BAD = 16, 32
RULE_CODES = (
    "undercharge", "overcharge", "liquid_line_restriction", "metering_overfeeding",
    "metering_underfeeding", "low_evaporator_airflow", "condenser_heat_rejection",
    "non_condensables", "weak_compressor", "compressor_not_starting",
    "capacitor_out_of_rating", "supply_problem",
)  # fmt: skip
SIGNALS = (
    "td_high", "td_very_high", "td_low", "td_not_high", "split_high", "split_very_high",
    "split_low", "sh_high", "sh_low", "sh_very_low", "sh_not_high", "sh_ok", "sc_high",
    "sc_low", "sc_not_high", "sc_not_low", "amps_high", "amps_low", "cr_low",
    "discharge_high", "locked_rotor", "volts_low", "volts_high", "voltage_unbalanced",
    "current_unbalanced", "run_cap_bad", "start_cap_bad", "box_warm", "warm_but_fed",
    "called_not_running", "coil_iced", "evap_fans_off", "cond_fan_off", "bubbles",
    "sight_glass_clear",
)  # fmt: skip
SATURATION_KEYS = ("evaporating_c", "suction_kpa_gauge", "condensing_c", "head_kpa_gauge")
METRIC_FIELDS = (
    "measured", "target", "low", "high", "deviation", "status", "points", "reason", "missing",
)  # fmt: skip
COLUMNS = (
    "refrigerant",
    "box_measured",
    "application",
    "metering",
    "metering_given",
    "receiver",
    "receiver_given",
    "origin_box",
    "origin_evap_td",
    "origin_split",
    "origin_superheat",
    "origin_run_cap_tol",
    "control",
    "control_given",
    "origin_setpoint",
    "basis_mid",
    *(key + edge for key in SATURATION_KEYS for edge in ("", "_low", "_high")),
    *(f"{name}:{f}" for name in METRIC_NEEDS for f in METRIC_FIELDS),
    "finding_mask",
    *(f"confidence:{code}" for code in RULE_CODES),
    "signals:0",
    "signals:1",
    "signals:2",
)
ROW_BYTES = 4 * len(COLUMNS)
AT = {name: i for i, name in enumerate(COLUMNS)}
assert ROW_BYTES == 752

# --- row -> version 1 document --------------------------------------------------------------


def _number(value: float) -> float | None:
    return value if math.isfinite(value) else None


def _missing(name: str, key: int) -> list[str]:
    codes = []
    for k, field in enumerate(METRIC_NEEDS[name]):
        state = key >> 2 * k & 3
        if state == 1:
            codes.append(field)
        elif state == 2:
            codes.append(f"{field}:legs")
    if key & TARGET_MISSING:
        codes.append("target")
    if key & ATMOSPHERE_BAD:
        codes.append("elevation")
    return codes


def document_of(blob: bytes) -> dict[str, Any]:
    """The version 1 document of one float32 row; ``{}`` for a row of another length."""
    if len(blob) != ROW_BYTES:
        return {}
    row = np.round(np.frombuffer(blob, dtype="<f4").astype(np.float64), 4).tolist()

    def code(name: str) -> int:
        return int(row[AT[name]])

    def origin(name: str) -> str:
        return ORIGINS[code(name)]

    metrics: dict[str, Any] = {}
    for name in METRIC_NEEDS:
        status, reason = code(f"{name}:status"), code(f"{name}:reason")
        if reason == HIDDEN:
            continue  # does not apply to what was found: the document leaves it out
        entry: list[Any] = [STATUSES[status]]
        entry += [
            _number(row[AT[f"{name}:{f}"]])
            for f in ("measured", "target", "low", "high", "deviation", "points")
        ]
        if reason:
            entry.append(REASONS[reason])
        elif status == NOT_SCORED:
            entry.append(_missing(name, code(f"{name}:missing")))
        metrics[name] = entry
    receiver = row[AT["receiver"]]
    rated = math.isfinite(row[AT["run_capacitor:target"]])
    mask = code("finding_mask")
    words = [code(f"signals:{w}") for w in range(3)]
    return {
        "document_version": 1,
        "refrigerant": REFRIGERANTS[code("refrigerant")],
        "design": {
            "application": APPLICATIONS[code("application")],
            "metering": METERING_DEVICES[code("metering")],
            "metering_given": code("metering_given") == 1,
            "receiver": None if math.isnan(receiver) else receiver == 1.0,
            "head_control": HEAD_PRESSURE_CONTROLS[code("control")],
            "head_control_given": code("control_given") == 1,
            "basis": "mid_point" if code("basis_mid") == 1 else "dew",
            "origins": {
                "box_temp_c": origin("origin_box"),
                "evap_td_k": origin("origin_evap_td"),
                "condenser_split_k": origin("origin_split"),
                "superheat_k": origin("origin_superheat"),
                "subcooling_k": "design"
                if code("receiver_given") == 1
                else "missing"
                if math.isnan(receiver)
                else "application_default",
                "head_setpoint_c": origin("origin_setpoint"),
                # a tolerance means nothing without a rating: missing, as the core says now
                "run_capacitor_tolerance_pct": origin("origin_run_cap_tol") if rated else "missing",
            },
        },
        "box_measured": code("box_measured") == 1,
        "saturation": {
            key: [_number(row[AT[key + edge]]) for edge in ("", "_low", "_high")]
            for key in SATURATION_KEYS
        },
        "metrics": metrics,
        "findings": {
            rule: {"confidence": row[AT[f"confidence:{rule}"]]}
            for bit, rule in enumerate(RULE_CODES)
            if mask >> bit & 1
        },
        "signals": [name for j, name in enumerate(SIGNALS) if words[j // 16] >> (j % 16) & 1],
    }


def to_documents(apps, schema_editor) -> None:
    """Every stored row as its document, a batch of rows at a time."""
    stored = apps.get_model("diagnostics", "Diagnosis").objects.using(
        schema_editor.connection.alias
    )
    batch = []
    for diagnosis in stored.only("id", "packed").order_by("id").iterator(chunk_size=2000):
        diagnosis.document = document_of(bytes(diagnosis.packed))
        batch.append(diagnosis)
        if len(batch) == 2000:
            stored.bulk_update(batch, ["document"])
            batch = []
    stored.bulk_update(batch, ["document"])


class Migration(migrations.Migration):
    dependencies = [
        ("diagnostics", "0004_flag_forecast"),
    ]

    operations = [
        migrations.AddField(
            model_name="diagnosis",
            name="document",
            field=models.JSONField(
                default=dict,
                help_text="The core's stored form: numbers and codes, with its "
                "document_version (diagnostics.core.stored); empty when nothing was stored.",
            ),
        ),
        # Going back leaves the float32 rows empty: their details read blank until rescored.
        migrations.RunPython(to_documents, migrations.RunPython.noop),
    ]
