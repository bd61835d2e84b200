"""What the office changed after returning a visit, in words: the audit trail since the
last return, shown on the visit's page."""

from __future__ import annotations

import datetime as dt
from collections.abc import Callable
from dataclasses import dataclass, field
from typing import Any

from fleet.choices import VisitStatus
from fleet.models import AuditAction, AuditEntry, Visit
from fleet.templatetags import rimewatch as shown

from .stored import CoveredUnit


@dataclass(frozen=True)
class Change:
    """One line of the audit trail, in words."""

    at: dt.datetime
    actor: object
    text: str
    fields: tuple[tuple[str, str, str], ...] = ()


@dataclass
class ReturnHistory:
    """What the office said when it last handed a visit back, and what came in since."""

    note: str
    returned_at: dt.datetime | None
    changes: list[Change] = field(default_factory=list)
    new_reading_ids: set[int] = field(default_factory=set)
    new_event_ids: set[int] = field(default_factory=set)


#: Audit field-name endings and the display filter that shows their SI value (pressures,
#: ``_kpa_gauge``, are shown at the site's elevation).
_FIELD_DISPLAY: tuple[tuple[str, Callable[[float], str]], ...] = (
    ("_temp_c", shown.temp),
    ("_c", shown.temp),
    ("_k", shown.tempdiff),
    ("_kg", shown.mass),
)


def _shown(name: str, value: Any, elevation_m: float) -> str:
    if value is None or value == "":
        return "\u2014"
    if isinstance(value, int | float) and not isinstance(value, bool):
        if name.endswith("_kpa_gauge"):
            return shown.pressure(value, elevation_m)
        for ending, show in _FIELD_DISPLAY:
            if name.endswith(ending):
                return show(value)
    return str(value)


def _describe(entry: AuditEntry, labels: dict[tuple[str, int], str], elevation_m: float) -> Change:
    model = entry.record_type.model
    what = {"readingset": "reading set", "refrigerantevent": "refrigerant record"}.get(model, model)
    subject = labels.get((model, entry.record_id), f"{what} {entry.record_id}")
    if model == "visit":
        subject = "the visit"
    if entry.action == AuditAction.MOVED:
        old, new = (entry.changes.get("status") or [None, None])[:2]
        words = dict(VisitStatus.choices)
        text = f"moved the visit from {words.get(old, old)} to {words.get(new, new)}"
        return Change(entry.at, entry.actor, text)
    verbs: dict[str, str] = {
        AuditAction.CREATED: "added",
        AuditAction.CHANGED: "changed",
        AuditAction.DELETED: "deleted",
    }
    verb = verbs.get(entry.action, entry.action)
    fields: tuple[tuple[str, str, str], ...] = ()
    if entry.action == AuditAction.CHANGED:
        fields = tuple(
            (
                name.replace("_", " "),
                _shown(name, pair[0], elevation_m),
                _shown(name, pair[1], elevation_m),
            )
            for name, pair in sorted(entry.changes.items())
            if isinstance(pair, list) and len(pair) == 2
        )
    return Change(entry.at, entry.actor, f"{verb} {subject}", fields)


def _is_return(entry: AuditEntry) -> bool:
    status = entry.changes.get("status") if isinstance(entry.changes, dict) else None
    return (
        entry.action == AuditAction.MOVED
        and isinstance(status, list)
        and status[:2] == [VisitStatus.SUBMITTED, VisitStatus.IN_PROGRESS]
    )


def return_history(visit: Visit, covered: list[CoveredUnit]) -> ReturnHistory | None:
    """None for a visit never returned; otherwise the office's note and, from the audit
    trail, what the technician changed after the last return.

    Visits returned before the trail existed have no dated return; the note is still shown.
    """
    if not visit.review_note or visit.status not in (
        VisitStatus.SUBMITTED,
        VisitStatus.IN_PROGRESS,
    ):
        return None
    entries = list(
        AuditEntry.objects.filter(visit_id=visit.pk)
        .select_related("actor", "record_type")
        .order_by("at", "id")
    )
    returns = [e for e in entries if _is_return(e)]
    history = ReturnHistory(note=visit.review_note, returned_at=None)
    if not returns:
        return history
    history.returned_at = returns[-1].at
    labels = {}
    for c in covered:
        for rs, _ in c.readings:
            labels[("readingset", rs.pk)] = (
                f"{rs.get_stage_display().lower()} readings on {c.unit.tag}"
            )
        for ev, _ in c.events:
            labels[("refrigerantevent", ev.pk)] = (
                f"{ev.get_kind_display().lower()} record on {c.unit.tag}"
            )
    after = [e for e in entries if e.at > history.returned_at]
    history.changes = [_describe(e, labels, visit.site.elevation_m) for e in after]
    for e in after:
        if e.action in (AuditAction.CREATED, AuditAction.CHANGED):
            if e.record_type.model == "readingset":
                history.new_reading_ids.add(e.record_id)
            elif e.record_type.model == "refrigerantevent":
                history.new_event_ids.add(e.record_id)
    return history
