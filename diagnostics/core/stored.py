"""The stored form of a diagnosis: numbers and codes in one float32 row; the texts are
written when it is read (``details.expand``).

What is stored per row is ``pack``'s, made on columns for the whole batch; ``expand_blobs``
reads rows back, so what is shown is always what was stored.
"""

from __future__ import annotations

from collections.abc import Sequence
from typing import Any

import numpy as np
from numpy.typing import ArrayLike, NDArray

from diagnostics.core import findings, refrigerants, texts
from diagnostics.core import scoring as sc
from diagnostics.core.batch import BatchResult, MetricColumns
from diagnostics.core.design import ORIGINS
from diagnostics.core.details import (
    SATURATION_TARGETS,
    Row,
    StoredMetric,
    StoredRows,
    empty_details,
    expand,
)
from diagnostics.core.numeric import FloatArray, optionals
from diagnostics.core.reasons import REASON_COMPRESSOR_OFF, REASON_DEFROST, missing_keys
from diagnostics.core.types import APPLICATIONS, HEAD_PRESSURE_CONTROLS, METERING_DEVICES

_METRIC_FIELDS = (*MetricColumns.__dataclass_fields__, "missing")
_REFRIGERANTS: tuple[str, ...] = tuple(refrigerants.CATALOGUE)
_SIGNAL_NAMES: tuple[str, ...] = tuple(findings.SIGNALS)
_SIGNAL_INDEX = {name: j for j, name in enumerate(_SIGNAL_NAMES)}
#: Signal bits per stored column: float32 holds whole numbers exactly up to 2**24.
_WORD = 16
#: What decides the texts saying where a row's targets came from.
_SOURCE_CONTEXT: tuple[str, ...] = (
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
)
#: The stored form of a diagnosis: one float32 per column, in this order. Changing it
#: changes what is stored: bump ``ALGORITHM_VERSION`` with it.
PACKED_COLUMNS: tuple[str, ...] = (
    "refrigerant",
    "box_measured",
    *_SOURCE_CONTEXT,
    *SATURATION_TARGETS,
    *(f"{name}:{f}" for name in sc.SCORING_TABLE for f in _METRIC_FIELDS),
    "finding_mask",
    *(f"confidence:{code}" for code in findings.RULE_CODES),
    *(f"signals:{k}" for k in range(-(-len(_SIGNAL_NAMES) // _WORD))),
)
PACKED_DTYPE = np.dtype("<f4")
PACKED_BYTES = len(PACKED_COLUMNS) * PACKED_DTYPE.itemsize
_AT = {name: i for i, name in enumerate(PACKED_COLUMNS)}
if len(findings.RULES) > 24:
    raise ValueError("the stored finding mask is one float32 column: at most 24 rules")
if len(_SIGNAL_NAMES) > 64:
    raise ValueError("signals are packed from one 64-bit word: at most 64 signals")

#: Stored numbers are float32 (7 significant digits); read back they are rounded to this many
#: decimals so 5.1 stays 5.1 and not 5.099999904632568.
_DECIMALS = 4


def pack(res: BatchResult) -> NDArray[np.float32]:
    """Every row of the batch in its stored form: an (n, len(PACKED_COLUMNS)) float32 array."""
    n = len(res)
    out = np.zeros((n, len(PACKED_COLUMNS)), dtype=PACKED_DTYPE)

    def put(name: str, values: ArrayLike) -> None:
        out[:, _AT[name]] = values

    uc, u, t = res.units, res.unit_index, res.unit_targets
    catalogue = np.array([_REFRIGERANTS.index(d) for d in uc.refrigerants], dtype=np.intp)
    per_unit: dict[str, ArrayLike] = {
        "refrigerant": catalogue[uc.refrigerant_code],
        "application": uc.application_code,
        "metering": uc.metering_code,
        "metering_given": uc.metering_given,
        "receiver": uc.has_receiver,
        "receiver_given": [d.has_receiver is not None for d in uc.designs],
        "origin_box": t.box_temp_c.origin,
        "origin_evap_td": t.evap_td_k.origin,
        "origin_split": t.condenser_split_k.origin,
        "origin_superheat": t.superheat_k.origin,
        "origin_run_cap_tol": t.run_capacitor_tolerance_pct.origin,
        "control": uc.control_code,
        "control_given": uc.control_given,
        "origin_setpoint": t.head_setpoint_c.origin,
        "basis_mid": uc.basis_mid,
    }
    for name, values in per_unit.items():
        put(name, np.asarray(values)[u])
    put("box_measured", np.isfinite(res.readings.box_temp_c))
    for name in SATURATION_TARGETS:
        put(name, res.saturation_targets[name])
    for name in sc.SCORING_TABLE:
        c = res.metrics[name]
        for f in MetricColumns.__dataclass_fields__:
            put(f"{name}:{f}", getattr(c, f))
        unscored = c.status == sc.NOT_SCORED
        if unscored.any():
            target_missing = ~np.isfinite(c.target) | np.isnan(c.low) | np.isnan(c.high)
            keys = missing_keys(res.readings, res.atmosphere_kpa, name, target_missing)
            put(f"{name}:missing", np.where(unscored, keys, 0))
    put("finding_mask", res.finding_mask)
    for bit, code in enumerate(findings.RULE_CODES):
        put(f"confidence:{code}", res.finding_confidence[bit])
    bits = np.zeros(n, dtype=np.uint64)
    for name, held in res.signals.items():
        bits |= held.astype(np.uint64) << np.uint64(_SIGNAL_INDEX[name])
    for k in range(-(-len(_SIGNAL_NAMES) // _WORD)):
        put(f"signals:{k}", (bits >> np.uint64(k * _WORD)) & np.uint64((1 << _WORD) - 1))
    return out


def to_blobs(packed: NDArray[np.float32]) -> list[bytes]:
    """One ``bytes`` per packed row, as the database keeps it."""
    data = np.ascontiguousarray(packed, dtype=PACKED_DTYPE).tobytes()
    return [data[i : i + PACKED_BYTES] for i in range(0, len(data), PACKED_BYTES)]


def _fitting(blobs: Sequence[bytes | memoryview]) -> tuple[list[int], NDArray[np.float32]]:
    """The positions of the blobs of this layout, and those blobs as one matrix."""
    fit = [j for j, blob in enumerate(blobs) if len(blob) == PACKED_BYTES]
    data = b"".join(bytes(blobs[j]) for j in fit)
    return fit, np.frombuffer(data, dtype=PACKED_DTYPE).reshape(len(fit), len(PACKED_COLUMNS))


def unpack(packed: NDArray[np.float32]) -> StoredRows:
    """Packed rows as the columns ``details.expand`` reads."""
    cols = np.round(packed.astype(np.float64), _DECIMALS).T

    def num(name: str) -> FloatArray:
        return cols[_AT[name]]

    def code(name: str) -> NDArray[np.int64]:
        return cols[_AT[name]].astype(np.int64)

    words = [code(f"signals:{w}") for w in range(-(-len(_SIGNAL_NAMES) // _WORD))]
    signals = {
        name: ((words[j // _WORD] >> (j % _WORD)) & 1) == 1 for j, name in enumerate(_SIGNAL_NAMES)
    }
    context = np.nan_to_num(packed[:, [_AT[c] for c in _SOURCE_CONTEXT]], nan=-1.0).tolist()
    return StoredRows(
        refrigerant=tuple(_REFRIGERANTS[r] for r in code("refrigerant").tolist()),
        box_measured=code("box_measured") == 1,
        context=tuple(
            texts.SourceContext(
                application=APPLICATIONS[int(c[0])],
                metering=METERING_DEVICES[int(c[1])],
                metering_given=c[2] == 1,
                receiver=None if c[3] < 0 else c[3] == 1,
                receiver_given=c[4] == 1,
                box=ORIGINS[int(c[5])],
                evap_td=ORIGINS[int(c[6])],
                split=ORIGINS[int(c[7])],
                superheat=ORIGINS[int(c[8])],
                run_cap_tolerance=ORIGINS[int(c[9])],
                control=HEAD_PRESSURE_CONTROLS[int(c[10])],
                control_given=c[11] == 1,
                setpoint=ORIGINS[int(c[12])],
                basis_mid=c[13] == 1,
            )
            for c in context
        ),
        saturation={name: num(name) for name in SATURATION_TARGETS},
        metrics={
            name: StoredMetric(
                measured=num(f"{name}:measured"),
                target=num(f"{name}:target"),
                low=num(f"{name}:low"),
                high=num(f"{name}:high"),
                deviation=num(f"{name}:deviation"),
                points=num(f"{name}:points"),
                status=code(f"{name}:status"),
                reason=code(f"{name}:reason"),
                missing=code(f"{name}:missing"),
            )
            for name in sc.SCORING_TABLE
        },
        confidence={c: num(f"confidence:{c}") for c in findings.RULE_CODES},
        finding_mask=code("finding_mask"),
        signals=signals,
    )


def expand_blobs(blobs: Sequence[bytes | memoryview]) -> list[Row]:
    """Stored blobs back to their details, all at once. A blob of another length (empty,
    or stored under another layout) has empty details until it is rescored."""
    fit, matrix = _fitting(blobs)
    out = [empty_details() for _ in blobs]
    if fit:
        for j, row in zip(fit, expand(unpack(matrix)), strict=True):
            out[j] = row
    return out


def packed_columns(
    blobs: Sequence[bytes | memoryview], names: Sequence[str]
) -> dict[str, FloatArray]:
    """Some numbers of stored rows as float columns (NaN where a blob does not fit), for
    readers that want values, not texts: ``"superheat:low"``, ``"condensing_c"``..."""
    out = {name: np.full(len(blobs), np.nan) for name in names}
    fit, matrix = _fitting(blobs)
    for name in names:
        out[name][fit] = np.round(matrix[:, _AT[name]].astype(np.float64), _DECIMALS)
    return out


#: Derived values stored as columns (trends read them without reading the details), each
#: where it was judged only (``judged_derived``).
STORED_DERIVED: tuple[str, ...] = (
    "evaporating_c",
    "condensing_c",
    "superheat_k",
    "subcooling_k",
    "evaporator_td_k",
    "condenser_split_k",
    "compression_ratio",
)

#: Stored derived value -> the metric whose judgement it follows (the others: running only).
_JUDGED_BY: dict[str, str] = {
    "superheat_k": "superheat",
    "subcooling_k": "subcooling",
    "evaporator_td_k": "evaporator_td",
    "condenser_split_k": "condenser_split",
    "compression_ratio": "compression_ratio",
}


def judged_derived(res: BatchResult, name: str) -> FloatArray:
    """A stored derived value where the diagnosis judged it (``STORED_DERIVED``), NaN
    elsewhere: trends and charts then follow exactly what was judged, never a split the
    head-pressure control held up or a pressure read with the compressor off."""
    metric = _JUDGED_BY.get(name)
    values = res.derived[name]
    if metric is None:
        off = np.isin(res.metrics["superheat"].reason, (REASON_COMPRESSOR_OFF, REASON_DEFROST))
        return np.where(off, np.nan, values)
    return np.where(res.metrics[metric].status != sc.NOT_SCORED, values, np.nan)


def stored_columns(res: BatchResult) -> dict[str, list[Any]]:
    """Every stored field of the batch but the version, one list per column (None where
    missing): the score, the energy penalty, the derived values trends read, and ``packed``
    (the stored form, one ``bytes`` per row)."""
    return {
        "score": optionals(res.score),
        "energy_penalty_pct": optionals(res.energy_penalty_pct),
        **{name: optionals(judged_derived(res, name)) for name in STORED_DERIVED},
        "packed": to_blobs(pack(res)),
    }
