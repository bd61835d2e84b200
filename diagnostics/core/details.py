"""Stored diagnoses read back with their texts: targets, metrics, findings, cautions and the
glide choice as JSON-ready dicts (``expand``), or as the core's dataclasses
(``typed_details``).

``expand`` takes stored rows already decoded to columns (``StoredRows``: whatever the stored
form's version, ``stored.py`` decodes it), turns each column into a list once and writes each
text once per distinct case, so reading many rows costs little more than reading one.
"""

from __future__ import annotations

from collections.abc import Callable, Mapping
from dataclasses import dataclass
from typing import Any, TypedDict

import numpy as np
from numpy.typing import NDArray

from diagnostics.core import findings, refrigerants, texts
from diagnostics.core import scoring as sc
from diagnostics.core import targets as tg
from diagnostics.core.numeric import FloatArray, optionals
from diagnostics.core.reasons import NOT_APPLICABLE_BY_CODE, REASON_HIDDEN
from diagnostics.core.types import STATUSES, Caution, Finding, Metric, Target

Row = dict[str, Any]


class Details(TypedDict):
    """One stored diagnosis read back with its texts: JSON-ready rows (``expand``)."""

    targets: list[Row]
    metrics: list[Row]
    findings: list[Row]
    cautions: list[Row]
    glide_choice: str


#: The saturation targets with the edges of their ok bands (``BatchResult.saturation_targets``).
SATURATION_TARGETS: tuple[str, ...] = tuple(
    key + edge
    for key in ("evaporating_c", "suction_kpa_gauge", "condensing_c", "head_kpa_gauge")
    for edge in ("", "_low", "_high")
)


@dataclass(frozen=True)
class StoredMetric:
    """One metric over the rows read: its numbers (NaN where missing) and codes."""

    measured: FloatArray
    target: FloatArray
    low: FloatArray
    high: FloatArray
    deviation: FloatArray
    points: FloatArray
    #: Index into ``types.STATUSES``.
    status: NDArray[np.int64]
    #: ``reasons.REASON_*``.
    reason: NDArray[np.int64]
    #: What it lacked where not scored (``reasons.missing_keys``), 0 elsewhere.
    missing: NDArray[np.int64]


@dataclass(frozen=True)
class StoredRows:
    """Stored diagnoses decoded to columns, one entry per row read."""

    refrigerant: tuple[str, ...]
    box_measured: NDArray[np.bool_]
    context: tuple[texts.SourceContext, ...]
    #: ``SATURATION_TARGETS`` -> values.
    saturation: Mapping[str, FloatArray]
    metrics: Mapping[str, StoredMetric]
    #: Finding code -> its confidence on each row (where it fired).
    confidence: Mapping[str, FloatArray]
    #: Bit i: ``findings.RULES[i]`` fired.
    finding_mask: NDArray[np.int64]
    #: Signal name -> whether it held on each row.
    signals: Mapping[str, NDArray[np.bool_]]

    def __len__(self) -> int:
        return len(self.refrigerant)


def empty_details() -> Details:
    """The details of a diagnosis stored without them."""
    return {"targets": [], "metrics": [], "findings": [], "cautions": [], "glide_choice": ""}


def expand(rows: StoredRows) -> list[Details]:
    """The details of stored rows: targets, metrics, findings, cautions and the glide choice
    as JSON-ready dicts with their texts (reasons, sources, evidence, advice)."""
    k = len(rows)
    if k == 0:
        return []
    statuses = np.array(STATUSES, dtype=object)
    metric_cols: list[list[Row | None]] = []
    values: dict[str, dict[str, list[float | None]]] = {}
    for name, rule in sc.SCORING_TABLE.items():
        m = rows.metrics[name]
        v = {f: optionals(getattr(m, f)) for f in ("measured", "target", "low", "high")}
        values[name] = v
        reasons = [""] * k
        unscored = np.flatnonzero(m.status == sc.NOT_SCORED)
        for j, why, key in zip(
            unscored.tolist(),
            m.reason[unscored].tolist(),
            m.missing[unscored].tolist(),
            strict=True,
        ):
            reasons[j] = texts.reason_text(name, why, key)
        unit_name = rule.unit
        metric_cols.append(
            [
                None
                if hidden
                else {
                    "name": name,
                    "measured": measured,
                    "target": t,
                    "low": lo,
                    "high": hi,
                    "deviation": d,
                    "unit": unit_name,
                    "status": s,
                    "points_lost": p,
                    "reason": r,
                }
                for hidden, measured, t, lo, hi, d, s, p, r in zip(
                    (m.reason == REASON_HIDDEN).tolist(),
                    v["measured"],
                    v["target"],
                    v["low"],
                    v["high"],
                    optionals(m.deviation),
                    statuses[m.status].tolist(),
                    m.points.tolist(),
                    reasons,
                    strict=True,
                )
            ]
        )

    # targets: the saturation targets, then every metric target that applies to the unit
    basis_mid = np.array([c.basis_mid for c in rows.context], dtype=bool)
    target_cols = _saturation_target_cols(rows, basis_mid)
    for name, rule in sc.SCORING_TABLE.items():
        m, v = rows.metrics[name], values[name]
        show = (
            np.isfinite(m.target) & (m.reason != REASON_HIDDEN) & ~NOT_APPLICABLE_BY_CODE[m.reason]
        )
        unit_name = rule.unit
        target_cols.append(
            [
                {
                    "name": name,
                    "value": t,
                    "low": lo,
                    "high": hi,
                    "unit": unit_name,
                    "source": texts.metric_target_source(name, ctx),
                }
                if shown
                else None
                for shown, t, lo, hi, ctx in zip(
                    show.tolist(), v["target"], v["low"], v["high"], rows.context, strict=True
                )
            ]
        )

    found = _finding_rows(rows, values)
    opens = ((rows.finding_mask & texts.OPENS_CIRCUIT_MASK) != 0).tolist()
    cautions = [
        [{"code": c, "text": texts.CAUTIONS[c]} for c in texts.caution_codes(r, o)]
        for r, o in zip(rows.refrigerant, opens, strict=True)
    ]
    basis_text = [tg.BASIS_TEXT["mid_point" if mid else "dew"] for mid in basis_mid.tolist()]
    return [
        {
            "targets": [d for d in t if d is not None],
            "metrics": [d for d in m if d is not None],
            "findings": found.get(j, []),
            "cautions": c,
            "glide_choice": basis_text[j],
        }
        for j, (t, m, c) in enumerate(
            zip(
                zip(*target_cols, strict=True),
                zip(*metric_cols, strict=True),
                cautions,
                strict=True,
            )
        )
    ]


def _saturation_target_cols(
    rows: StoredRows, basis_mid: NDArray[np.bool_]
) -> list[list[Row | None]]:
    """The evaporating and condensing targets and their pressures, one column each; None
    where a row has no such target."""
    blend = np.array([refrigerants.get(d).is_blend for d in rows.refrigerant], dtype=bool)
    glide = np.where(
        blend,
        np.where(basis_mid, "mid-point of dew and bubble", "dew point"),
        "saturation",
    ).tolist()
    box_note = np.where(
        rows.box_measured, "measured box temperature", "design box temperature"
    ).tolist()
    out: list[list[Row | None]] = []
    for side, temp_key, pressure_key, temp_name, pressure_name in (
        (
            "evaporating",
            "evaporating_c",
            "suction_kpa_gauge",
            "evaporating_temp",
            "suction_pressure",
        ),
        ("condensing", "condensing_c", "head_kpa_gauge", "condensing_temp", "condensing_pressure"),
    ):
        if side == "evaporating":
            temp_sources = [
                f"{note} - evaporator TD ({g})" for note, g in zip(box_note, glide, strict=True)
            ]
        else:
            temp_sources = [f"entering air + condenser split ({g})" for g in glide]
        temp, pressure = (
            [optionals(rows.saturation[key + edge]) for edge in ("", "_low", "_high")]
            for key in (temp_key, pressure_key)
        )
        out.append(
            [
                {"name": temp_name, "value": t, "low": lo, "high": hi, "unit": "C", "source": s}
                if t is not None
                else None
                for t, lo, hi, s in zip(*temp, temp_sources, strict=True)
            ]
        )
        out.append(
            [
                {
                    "name": pressure_name,
                    "value": p,
                    "low": lo,
                    "high": hi,
                    "unit": "kPa",
                    "source": f"pressure at the {side} target ({g}), gauge at the site elevation",
                }
                if p is not None
                else None
                for p, lo, hi, g in zip(*pressure, glide, strict=True)
            ]
        )
    return out


def _confidence(finding: Row) -> float:
    return -float(finding["confidence"])


#: A fired rule over the rows it fired on: the rule, those rows, the signals behind it on
#: each, its confidence on each and the alternatives still open on each.
_Fired = tuple[
    findings.Rule,
    list[int],
    list[tuple[str, ...]],
    list[float],
    list[tuple[findings.Alternative, ...]],
]


def _fired_rule(
    bit: int, fired: NDArray[np.intp], rows: StoredRows, signal: Callable[[str], NDArray[np.bool_]]
) -> _Fired:
    rule = findings.RULES[bit]
    first = np.full(fired.size, -1, dtype=np.int64)
    for t, trigger in enumerate(rule.triggers):
        hit = np.ones(fired.size, dtype=bool)
        for name in trigger:
            hit &= signal(name)[fired]
        first[(first < 0) & hit] = t
    support = np.zeros(fired.size, dtype=np.int64)
    for j, name in enumerate(rule.supporting):
        support[signal(name)[fired]] |= 1 << j
    names = [
        texts.evidence_names(bit, f, s)
        for f, s in zip(first.tolist(), support.tolist(), strict=True)
    ]
    confidence = [round(c, 3) for c in rows.confidence[rule.code][fired].tolist()]
    open_: list[tuple[findings.Alternative, ...]] = [()] * fired.size
    for alternative in rule.alternatives:
        ruled_out = np.zeros(fired.size, dtype=bool)
        for name in alternative.unless:
            ruled_out |= signal(name)[fired]
        open_ = [
            (*kept, alternative) if not out else kept
            for kept, out in zip(open_, ruled_out.tolist(), strict=True)
        ]
    return rule, fired.tolist(), names, confidence, open_


def _finding_rows(rows: StoredRows, values: texts.MetricValues) -> dict[int, list[Row]]:
    """The findings of every row that has any (row position -> findings, most confident
    first); the evidence lines are formatted once per signal over the rows that show it."""
    mask = rows.finding_mask
    has_finding = mask != 0
    if not has_finding.any():
        return {}

    def signal(name: str) -> NDArray[np.bool_]:
        return rows.signals[name]

    fired_rules = [
        _fired_rule(bit, fired, rows, signal)
        for bit in range(len(findings.RULES))
        if (fired := np.flatnonzero(mask & (1 << bit))).size
    ]
    evidence: dict[str, list[str | None]] = {}
    for name in set().union(*(set(n) for _, _, names, _, _ in fired_rules for n in set(names))):
        at = np.flatnonzero(signal(name) & has_finding).tolist()
        column: list[str | None] = [None] * len(mask)
        for j, text in zip(at, texts.evidence_texts(name, at, values), strict=True):
            column[j] = text
        evidence[name] = column

    out: dict[int, list[Row]] = {}
    for rule, fired_at, names, confidence, alternatives in fired_rules:
        for j, behind, c, alt in zip(fired_at, names, confidence, alternatives, strict=True):
            out.setdefault(j, []).append(
                {
                    "code": rule.code,
                    "title": rule.title,
                    "evidence": [evidence[s][j] for s in behind],
                    "confidence": c,
                    "advice": rule.advice,
                    "alternatives": [a.code for a in alt],
                    "deciding_check": " ".join(dict.fromkeys(a.check for a in alt)),
                }
            )
    for found in out.values():
        if len(found) > 1:
            found.sort(key=_confidence)
    return out


def typed_details(
    details: Details,
) -> tuple[tuple[Target, ...], tuple[Metric, ...], tuple[Finding, ...], tuple[Caution, ...]]:
    """Expanded details (``expand``) as the core's dataclasses: targets, metrics, findings
    (most confident first) and cautions."""
    return (
        tuple(Target(**t) for t in details["targets"]),
        tuple(Metric(**m) for m in details["metrics"]),
        tuple(
            Finding(
                **{**f, "evidence": tuple(f["evidence"]), "alternatives": tuple(f["alternatives"])}
            )
            for f in details["findings"]
        ),
        tuple(Caution(**c) for c in details["cautions"]),
    )
