"""The stored form written: every row of a batch as its document (``stored.py`` documents the
layout and reads it back), made column-wise, and the other stored columns beside it.

Numbers are formatted a column group at a time (one orjson dump of a matrix, split per row),
and every piece that depends on codes only (a unit's design, a metric's status and why it
was not scored, the findings and signals) is written once per distinct case; each row is
then one join. A million documents so cost a few seconds, not a dict per row.
"""

from __future__ import annotations

from collections.abc import Callable, Sequence
from typing import Any

import numpy as np
import orjson
from numpy.typing import NDArray

from diagnostics.core import findings
from diagnostics.core import scoring as sc
from diagnostics.core.batch import BatchResult
from diagnostics.core.design import ORIGINS, RESOLVED
from diagnostics.core.numeric import FloatArray, optionals
from diagnostics.core.reasons import (
    REASON_CODES,
    REASON_COMPRESSOR_OFF,
    REASON_DEFROST,
    REASON_HIDDEN,
    REASON_NONE,
    missing_codes,
    missing_keys,
)
from diagnostics.core.stored import DECIMALS, DOCUMENT_VERSION, METRIC_VALUES, SATURATION_KEYS
from diagnostics.core.types import APPLICATIONS, HEAD_PRESSURE_CONTROLS, METERING_DEVICES, STATUSES


def _number_rows(columns: Sequence[FloatArray], before: str = "", after: str = "") -> list[str]:
    """Row i of the columns as JSON numbers joined by commas (four decimals; null where
    missing or infinite) between ``before`` and ``after``, formatted in one pass over the
    batch: one dump of the matrix, the text around each row put in by one replace."""
    matrix = np.ascontiguousarray(np.round(np.column_stack(columns), DECIMALS))
    text = orjson.dumps(matrix, option=orjson.OPT_SERIALIZE_NUMPY).decode()[2:-2]
    if before or after:
        text = before + text.replace("],[", f"{after}],[{before}") + after
    return text.split("],[")


#: Keys below this are looked up in a table (one pass), larger ones sorted out.
_TABLE_KEYS = 1 << 16


def _by_case(keys: NDArray[np.int64], text: Callable[[int], str]) -> list[str]:
    """One text per row (``keys`` >= 0), written once per distinct key."""
    if keys.size and int(keys.max()) < _TABLE_KEYS:
        present = np.flatnonzero(np.bincount(keys))
        table = np.empty(present[-1] + 1, dtype=object)
        table[present] = [text(k) for k in present.tolist()]
        out: list[str] = table[keys].tolist()
        return out
    distinct, at = np.unique(keys, return_inverse=True)
    written = np.array([text(k) for k in distinct.tolist()], dtype=object)
    out = written[at].tolist()
    return out


def _unit_texts(res: BatchResult) -> list[str]:
    """Per unit: its refrigerant and what its design data said (the ``design`` object)."""
    uc, t = res.units, res.unit_targets
    out = []
    for i in range(len(uc)):
        receiver = float(uc.has_receiver[i])
        document = {
            "refrigerant": uc.refrigerants[uc.refrigerant_code[i]],
            "design": {
                "application": APPLICATIONS[uc.application_code[i]],
                "metering": METERING_DEVICES[uc.metering_code[i]],
                "metering_given": bool(uc.metering_given[i]),
                "receiver": None if np.isnan(receiver) else receiver == 1.0,
                "head_control": HEAD_PRESSURE_CONTROLS[uc.control_code[i]],
                "head_control_given": bool(uc.control_given[i]),
                "basis": "mid_point" if uc.basis_mid[i] else "dew",
                "origins": {name: ORIGINS[int(getattr(t, name).origin[i])] for name in RESOLVED},
            },
        }
        out.append(orjson.dumps(document).decode()[1:-1])
    return out


def _metric_head(name: str, key: int, first: bool) -> str:
    """The start of a metric's entry (its name and status) for one case of its key."""
    if key >> 2 & 15 == REASON_HIDDEN:
        return ""
    return ("" if first else ",") + f'"{name}":["{STATUSES[key & 3]}",'


def _metric_tail(name: str, key: int) -> str:
    """The end of a metric's entry: why it was not scored, for one case of its key."""
    status, reason, missing = key & 3, key >> 2 & 15, key >> 6
    if reason == REASON_HIDDEN:
        return ""
    if reason != REASON_NONE:
        return f',"{REASON_CODES[reason]}"]'
    if status == sc.NOT_SCORED:
        return "," + orjson.dumps(missing_codes(name, missing)).decode() + "]"
    return "]"


def _metric_columns(res: BatchResult, name: str, first: bool) -> list[list[str]]:
    """A metric's entry on every row, as three text columns (its name and status, its
    numbers, why it was not scored); empty where the metric is hidden (it does not apply to
    what was found). Texts that depend on codes only are written once per case of the key
    (status, reason, what was missing)."""
    c = res.metrics[name]
    hidden = c.reason == REASON_HIDDEN
    if first and hidden.any():
        raise ValueError(f"{name} opens the metrics and cannot be left out")
    unscored = (c.status == sc.NOT_SCORED) & (c.reason == REASON_NONE)
    missing = np.zeros(len(res), dtype=np.int64)
    if unscored.any():
        target_missing = ~np.isfinite(c.target) | np.isnan(c.low) | np.isnan(c.high)
        keys = missing_keys(res.readings, res.atmosphere_kpa, name, target_missing)
        missing = np.where(unscored, keys, 0)
    key = c.status.astype(np.int64) | c.reason.astype(np.int64) << 2 | missing << 6
    values = _number_rows([getattr(c, f) for f in METRIC_VALUES])
    for j in np.flatnonzero(hidden).tolist():
        values[j] = ""
    return [
        _by_case(key, lambda k: _metric_head(name, k, first)),
        values,
        _by_case(key, lambda k: _metric_tail(name, k)),
    ]


def _finding_keys(res: BatchResult) -> tuple[NDArray[np.int64], list[FloatArray]] | None:
    """A key per row that tells its findings apart (which rules fired, with what
    confidence), and each rule's distinct confidences: the mask in the low bits, then each
    rule's confidence as a digit of a mixed radix. None if the key would not fit 63 bits."""
    mask = res.finding_mask.astype(np.int64)
    key = mask.copy()
    radix = 1 << len(findings.RULES)
    values: list[FloatArray] = []
    for bit in range(len(findings.RULES)):
        fired = (mask >> bit & 1) == 1
        distinct, digit = np.unique(
            np.round(res.finding_confidence[bit][fired], DECIMALS), return_inverse=True
        )
        values.append(distinct)
        if distinct.size > 1:
            if radix * distinct.size >= 1 << 62:
                return None
            key[fired] += digit.ravel().astype(np.int64) * radix
            radix *= distinct.size
    return key, values


def _findings_object(fired: int, confidence: Sequence[float]) -> str:
    entry = {
        code: {"confidence": confidence[bit]}
        for bit, code in enumerate(findings.RULE_CODES)
        if fired >> bit & 1
    }
    return '},"findings":' + orjson.dumps(entry).decode()


def _findings_texts(res: BatchResult) -> list[str]:
    """The ``findings`` object of each row (after the metrics' end), written once per
    distinct case."""
    keyed = _finding_keys(res)
    if keyed is None:  # more cases than one key can tell apart: one text per row
        return [
            _findings_object(int(m), [round(c, DECIMALS) for c in confidence])
            for m, confidence in zip(
                res.finding_mask.tolist(), res.finding_confidence.T.tolist(), strict=True
            )
        ]
    key, values = keyed
    rules = len(findings.RULES)

    def text(k: int) -> str:
        fired, rest = k & (1 << rules) - 1, k >> rules
        confidence = []
        for bit in range(rules):
            size = values[bit].size
            digit = 0
            if size > 1:
                rest, digit = divmod(rest, size)
            confidence.append(float(values[bit][digit]) if fired >> bit & 1 else 0.0)
        return _findings_object(fired, confidence)

    return _by_case(key, text)


_SIGNAL_NAMES: tuple[str, ...] = tuple(findings.SIGNALS)
if len(_SIGNAL_NAMES) > 63:
    raise ValueError("signals are written from one 64-bit word: at most 63 signals")


def _signal_texts(res: BatchResult) -> list[str]:
    """The ``signals`` list of each row (and the document's end), written once per
    distinct combination."""
    bits = np.zeros(len(res), dtype=np.int64)
    for j, name in enumerate(_SIGNAL_NAMES):
        bits |= res.signals[name].astype(np.int64) << j
    return _by_case(
        bits,
        lambda held: ',"signals":'
        + orjson.dumps([n for j, n in enumerate(_SIGNAL_NAMES) if held >> j & 1]).decode()
        + "}",
    )


def documents(res: BatchResult) -> list[str]:
    """Every row of the batch as its stored document, JSON text (``DOCUMENT_VERSION``).

    Built on columns: numbers are formatted a column group at a time, and every piece that
    depends on codes only (a unit's design, a metric's status and reason, the findings and
    signals) is written once per distinct case; each row is then one join.
    """
    n = len(res)
    if n == 0:
        return []
    units = _unit_texts(res)
    measured = np.isfinite(res.readings.box_temp_c)
    opening = _by_case(
        res.unit_index.astype(np.int64) * 2 + measured,
        lambda k: f'{{"document_version":{DOCUMENT_VERSION},{units[k // 2]},'
        f'"box_measured":{"true" if k % 2 else "false"},"saturation":{{',
    )
    columns: list[list[str]] = [opening]
    last = len(SATURATION_KEYS) - 1
    for j, key in enumerate(SATURATION_KEYS):
        edges = [res.saturation_targets[key + e] for e in ("", "_low", "_high")]
        after = ']},"metrics":{' if j == last else "],"
        columns.append(_number_rows(edges, before=f'"{key}":[', after=after))
    for j, name in enumerate(sc.SCORING_TABLE):
        columns += _metric_columns(res, name, first=j == 0)
    columns += [_findings_texts(res), _signal_texts(res)]
    return ["".join(parts) for parts in zip(*columns, strict=True)]


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
    missing): the score, the energy penalty, the derived values trends read, and
    ``document`` (the stored document, as JSON text)."""
    return {
        "score": optionals(res.score),
        "energy_penalty_pct": optionals(res.energy_penalty_pct),
        **{name: optionals(judged_derived(res, name)) for name in STORED_DERIVED},
        "document": documents(res),
    }
