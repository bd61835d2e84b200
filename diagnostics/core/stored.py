"""The stored form of a diagnosis: a versioned JSON document of numbers and codes, written
for a batch by ``encode.py`` and read back here; its texts are written when it is read
(``details.expand``).

Document version 1
------------------
One JSON object per diagnosis (``DOCUMENT_VERSION``; kept in the document itself, apart from
the algorithm version, which says how the numbers were judged)::

    {"document_version": 1,
     "refrigerant": "R-404A",
     "design": {"application": "medium_temp", "metering": "txv", "metering_given": true,
                "receiver": true, "head_control": "other", "head_control_given": false,
                "basis": "dew",
                "origins": {"box_temp_c": "design", "condenser_split_k": "application_default",
                            ...}},
     "box_measured": true,
     "saturation": {"evaporating_c": [-7.2, -9.2, -5.2], "suction_kpa_gauge": [...],
                    "condensing_c": [...], "head_kpa_gauge": [...]},
     "metrics": {"superheat": ["ok", 4.71, 4.44, 2.25, 6.64, 0.0, 0.0],
                 "condenser_split": ["not_scored", 13.0, 14.0, 10.0, 17.0, null, 0.0,
                                     "head_control"],
                 "box_temp": ["not_scored", null, 1.67, -0.33, 3.67, null, 0.0,
                              ["box_temp_c"]],
                 ...},
     "findings": {"undercharge": {"confidence": 0.8}},
     "signals": ["bubbles", "td_high"]}

- ``refrigerant``: the catalogue's designation. ``design``: what the unit's design data said
  and what it left to its application (``metering`` and ``head_control`` as resolved, with
  whether the unit gave them; ``receiver`` true, false or null for unknown; ``basis`` the
  saturation point its TD and split are taken on: ``dew`` or ``mid_point``) and where each
  resolved target came from (``origins``, by ``design.RESOLVED`` name: ``design``,
  ``application_default`` or ``missing``).
- ``box_measured``: the evaporating target was taken from the measured box (else the design
  box). ``saturation``: the evaporating and condensing temperature targets (C) and the
  gauge pressures at the site for them (kPa), each ``[target, ok low, ok high]``.
- ``metrics``: the metrics of ``scoring.SCORING_TABLE`` that apply to what was found (one
  that does not, such as the amps at standstill of a running compressor, is left out), each
  ``[status, measured, target, low, high, deviation, points_lost]`` and, where it was not
  scored, why: the status is ``ok``, ``watch``, ``fault`` or ``not_scored``; the numbers
  are in the metric's unit (``SCORING_TABLE[name].unit``: C, K, kPa gauge, A, V, uF,
  percent or a ratio); the why is a reason of the unit or the moment
  (``reasons.REASON_CODES``: ``compressor_off``, ``head_control``...) or, for want of
  inputs, the list of what was missing: the reading fields not measured, ``<field>:legs``
  for fewer than three legs, ``target`` (the design data does not give it), ``elevation``
  (no usable site elevation); an empty list: a pressure outside the refrigerant's
  saturation range.
- ``findings``: the rules that fired (``findings.RULES`` codes) with their confidence, 0-1.
  ``signals``: the observations that held (``findings.SIGNALS``), from which the evidence
  lines are written.

Numbers are SI and rounded to four decimals; null stands for missing, and for the open end
of a band. An object's key order means nothing (PostgreSQL's jsonb does not keep it).

Reading and versions
--------------------
``read_details`` and ``read_numbers`` take documents as stored and decode each by its own
``document_version`` (``_DECODERS``), so a document written under an older layout still
reads after an upgrade: a new layout gets a new version and a new decoder, and the old
decoders stay. A document of no known version (``{}``, nothing stored) reads as no details.
Version history: 1 (this one) replaced a float32 row recognised by its length; migration
``diagnostics 0005`` turned every such row into a version 1 document.
"""

from __future__ import annotations

from collections.abc import Callable, Mapping, Sequence
from typing import Any, cast

import numpy as np

from diagnostics.core import findings, texts
from diagnostics.core import scoring as sc
from diagnostics.core.details import (
    Details,
    StoredMetric,
    StoredRows,
    empty_details,
    expand,
)
from diagnostics.core.numeric import FloatArray
from diagnostics.core.reasons import (
    REASON_CODES,
    REASON_NONE,
    missing_key,
)
from diagnostics.core.types import STATUSES

#: The layout the documents written now follow; an older one keeps its decoder.
DOCUMENT_VERSION = 1

#: Stored numbers keep this many decimals (5.1 stays 5.1, not 5.099999904632568).
DECIMALS = 4

#: The order of a metric's ``values``.
METRIC_VALUES: tuple[str, ...] = ("measured", "target", "low", "high", "deviation", "points")
#: The saturation targets, each stored as ``[target, low, high]``.
SATURATION_KEYS: tuple[str, ...] = (
    "evaporating_c",
    "suction_kpa_gauge",
    "condensing_c",
    "head_kpa_gauge",
)

#: A stored document: JSON object as the database gives it back.
Document = Mapping[str, Any]


def _version(document: object) -> int | None:
    """The document's layout version, None for none this code reads."""
    if isinstance(document, Mapping):
        version = document.get("document_version")
        if isinstance(version, int) and version in _DECODERS:
            return version
    return None


def _by_version(docs: Sequence[object]) -> dict[int, list[tuple[int, Document]]]:
    """The documents of each known version, with their positions."""
    out: dict[int, list[tuple[int, Document]]] = {}
    for j, doc in enumerate(docs):
        version = _version(doc)
        if version is not None:
            out.setdefault(version, []).append((j, cast(Document, doc)))
    return out


def _floats(values: list[Any]) -> FloatArray:
    """JSON numbers as floats, NaN for null."""
    return np.array(values, dtype=np.float64)


_STATUS_CODE = {status: k for k, status in enumerate(STATUSES)}
_REASON_CODE = {code: k for k, code in REASON_CODES.items()}
#: A metric a document leaves out (it did not apply, or it is newer than the document).
_LEFT_OUT = ["not_scored", None, None, None, None, None, 0.0, "hidden"]


def _why(name: str, entry: list[Any]) -> tuple[int, int]:
    """A version 1 metric entry's reason code and missing key (its optional last item)."""
    why = entry[len(METRIC_VALUES) + 1] if len(entry) > len(METRIC_VALUES) + 1 else None
    if isinstance(why, str):
        return _REASON_CODE.get(why, REASON_NONE), 0
    return REASON_NONE, missing_key(name, why or ())


def _rows_v1(docs: Sequence[Document]) -> StoredRows:
    """Version 1 documents as the columns ``details.expand`` reads. What the code no longer
    knows (a metric, rule or signal since removed) is left out; what a document does not
    hold (one since added) reads as not shown."""
    metrics: dict[str, StoredMetric] = {}
    for name in sc.SCORING_TABLE:
        entries = [d["metrics"].get(name, _LEFT_OUT) for d in docs]
        values = _floats([e[1 : len(METRIC_VALUES) + 1] for e in entries]).reshape(
            len(docs), len(METRIC_VALUES)
        )
        measured, target, low, high, deviation, points = values.T
        why = np.array([_why(name, e) for e in entries], dtype=np.int64).reshape(len(docs), 2)
        metrics[name] = StoredMetric(
            measured=measured,
            target=target,
            low=low,
            high=high,
            deviation=deviation,
            points=points,
            status=np.array([_STATUS_CODE[e[0]] for e in entries], dtype=np.int64),
            reason=why[:, 0],
            missing=why[:, 1],
        )
    confidence = {
        code: _floats([d["findings"].get(code, {}).get("confidence") for d in docs])
        for code in findings.RULE_CODES
    }
    mask = np.zeros(len(docs), dtype=np.int64)
    for bit, code in enumerate(findings.RULE_CODES):
        mask |= np.isfinite(confidence[code]).astype(np.int64) << bit
    held = [set(d["signals"]) for d in docs]
    saturation = {
        key + edge: _floats([d["saturation"][key][k] for d in docs])
        for key in SATURATION_KEYS
        for k, edge in enumerate(("", "_low", "_high"))
    }
    return StoredRows(
        refrigerant=tuple(d["refrigerant"] for d in docs),
        box_measured=np.array([d["box_measured"] for d in docs], dtype=bool),
        context=tuple(_context_v1(d["design"]) for d in docs),
        saturation=saturation,
        metrics=metrics,
        confidence=confidence,
        finding_mask=mask,
        signals={
            name: np.array([name in h for h in held], dtype=bool) for name in findings.SIGNALS
        },
    )


def _context_v1(design: Document) -> texts.SourceContext:
    origins = design["origins"]
    return texts.SourceContext(
        application=design["application"],
        metering=design["metering"],
        metering_given=design["metering_given"],
        receiver=design["receiver"],
        receiver_given=origins["subcooling_k"] == "design",
        box=origins["box_temp_c"],
        evap_td=origins["evap_td_k"],
        split=origins["condenser_split_k"],
        superheat=origins["superheat_k"],
        run_cap_tolerance=origins["run_capacitor_tolerance_pct"],
        control=design["head_control"],
        control_given=design["head_control_given"],
        setpoint=origins["head_setpoint_c"],
        basis_mid=design["basis"] == "mid_point",
    )


#: A saturation target's name (``condensing_c``, its band ``condensing_c_low``...) -> its
#: key and place in ``[target, low, high]``.
_SATURATION_AT: dict[str, tuple[str, int]] = {
    key + edge: (key, k) for key in SATURATION_KEYS for k, edge in enumerate(("", "_low", "_high"))
}


def _number_v1(doc: Document, name: str) -> float | None:
    """One number of a version 1 document: a saturation target or a metric's value
    (``superheat:low``)."""
    if name in _SATURATION_AT:
        key, k = _SATURATION_AT[name]
        value = doc["saturation"][key][k]
    else:
        metric, field = name.split(":")
        entry = doc["metrics"].get(metric)
        value = None if entry is None else entry[1 + METRIC_VALUES.index(field)]
    return None if value is None else float(value)


#: Document version -> (its decoder to columns, its reader of one number).
_DECODERS: dict[
    int,
    tuple[Callable[[Sequence[Document]], StoredRows], Callable[[Document, str], float | None]],
] = {
    1: (_rows_v1, _number_v1),
}


def read_details(docs: Sequence[object]) -> list[Details]:
    """Stored documents back to their details (``details.expand``), all at once, each by its
    own version; a document of no known version (nothing stored) has empty details."""
    out = [empty_details() for _ in docs]
    for version, found in _by_version(docs).items():
        decode, _ = _DECODERS[version]
        for (j, _doc), row in zip(found, expand(decode([d for _, d in found])), strict=True):
            out[j] = row
    return out


def read_numbers(docs: Sequence[object], names: Sequence[str]) -> dict[str, FloatArray]:
    """Some numbers of stored documents as float columns (NaN where a document has none),
    for readers that want values, not texts: a saturation target (``condensing_c``, with
    its band ``condensing_c_low`` and ``condensing_c_high``) or a metric's value
    (``superheat:low``, by ``METRIC_VALUES`` name)."""
    out = {name: np.full(len(docs), np.nan) for name in names}
    for version, found in _by_version(docs).items():
        _, number = _DECODERS[version]
        for j, doc in found:
            for name in names:
                value = number(doc, name)
                if value is not None:
                    out[name][j] = value
    return out
