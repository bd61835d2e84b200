"""Writes the API makes that touch several rows: store a reading set or a refrigerant event
once (whatever the retries), diagnose it, and leave the audit trail; move a visit.

A phone may post the same ``client_id`` twice, even at the same instant. The unique
constraint on ``client_id`` settles it: the insert runs in a savepoint, and an
IntegrityError on it means another request stored the record first, which is then returned.
No read-then-write decides it, so two concurrent posts store exactly one row.
"""

from __future__ import annotations

import logging
from dataclasses import dataclass
from typing import Generic, TypeVar

from django.db import IntegrityError, models, transaction

from diagnostics.models import Diagnosis, LeakRate
from diagnostics.services import diagnose_reading_set, record_leak_rate, record_leak_rates
from fleet.api import audit
from fleet.models import AuditAction, ReadingSet, RefrigerantEvent, Visit
from fleet.services import move_visit

log = logging.getLogger(__name__)

R = TypeVar("R", ReadingSet, RefrigerantEvent)

#: What a stored record is returned with, so it serialises without further queries.
RECORD_RELATIONS = ("visit_unit__unit__site", "visit_unit__visit", "created_by")


@dataclass(frozen=True)
class Stored(Generic[R]):
    """The record now in the database, and whether this call stored it."""

    record: R
    created: bool


def stored_with_client_id(model: type[R], client_id) -> R | None:
    """The record stored under ``client_id``, ready to serialise; None if there is none."""
    extra = ("diagnosis",) if model is ReadingSet else ("leak_rate",)
    return (
        model.objects.select_related(*RECORD_RELATIONS, *extra).filter(client_id=client_id).first()
    )


def _insert_once(record: R) -> Stored[R]:
    try:
        with transaction.atomic():  # a savepoint: the IntegrityError leaves the outer intact
            record.save(force_insert=True)
    except IntegrityError:
        stored = stored_with_client_id(type(record), record.client_id)
        if stored is None:
            raise  # some other constraint: the exception handler answers 409
        return Stored(stored, created=False)
    return Stored(record, created=True)


def _diagnose(reading_set: ReadingSet) -> Diagnosis | None:
    """The stored diagnosis; None if the core failed. The readings are the record and are
    kept either way; ``manage.py rescore`` diagnoses them again once the core is fixed."""
    try:
        with transaction.atomic():
            return diagnose_reading_set(reading_set)
    except Exception:
        log.exception("diagnosis failed for reading set %s", reading_set.pk)
        return None


def _leak_rate(event: RefrigerantEvent) -> LeakRate | None:
    """The stored leak rate of an addition; None for other kinds or if the core failed."""
    try:
        with transaction.atomic():
            return record_leak_rate(event)
    except Exception:
        log.exception("leak rate failed for refrigerant event %s", event.pk)
        return None


@transaction.atomic
def record_reading_set(reading_set: ReadingSet, *, by) -> Stored[ReadingSet]:
    """Store a validated reading set unless its ``client_id`` is stored; diagnose it."""
    result = _insert_once(reading_set)
    if result.created:
        diagnosis = _diagnose(reading_set)
        if diagnosis is not None:
            reading_set.diagnosis = diagnosis
        audit.record_created(reading_set, by=by)
    return result


@transaction.atomic
def change_reading_set(reading_set: ReadingSet, before: dict, *, by) -> ReadingSet:
    """After an office edit: diagnose again and record what changed."""
    reading_set.save()
    diagnosis = _diagnose(reading_set)
    if diagnosis is not None:
        reading_set.diagnosis = diagnosis
    audit.record_changed(reading_set, before, by=by)
    return reading_set


@transaction.atomic
def record_refrigerant_event(event: RefrigerantEvent, *, by) -> Stored[RefrigerantEvent]:
    """Store a validated event unless its ``client_id`` is stored; for an addition, compute
    and store its leak rate."""
    result = _insert_once(event)
    if result.created:
        leak_rate = _leak_rate(event)
        if leak_rate is not None:
            event.leak_rate = leak_rate
        audit.record_created(event, by=by)
    return result


@transaction.atomic
def change_refrigerant_event(event: RefrigerantEvent, before: dict, *, by) -> RefrigerantEvent:
    event.save()
    leak_rate = _leak_rate(event)
    if leak_rate is not None:
        event.leak_rate = leak_rate
    audit.record_changed(event, before, by=by)
    return event


@transaction.atomic
def delete_record(record: models.Model, *, by) -> None:
    """Delete with its trail entry in the same transaction."""
    audit.record_deleted(record, by=by)
    record.delete()
    if isinstance(record, RefrigerantEvent):
        # Later additions' leak rates depend on this one (rolling window, annualizing clock).
        try:
            with transaction.atomic():
                record_leak_rates(record.visit_unit.unit)
        except Exception:
            log.exception("leak rates failed for unit %s", record.visit_unit.unit_id)


@transaction.atomic
def move(visit: Visit, target: str, *, by, note: str = "", work_summary: str | None = None):
    """Move a visit along its life cycle (``fleet.services.move_visit``) and record it."""
    before_status = visit.status
    changes: dict[str, list] = {}
    if work_summary is not None and work_summary != visit.work_summary:
        changes["work_summary"] = [visit.work_summary, work_summary]
        visit.work_summary = work_summary
        Visit.objects.filter(pk=visit.pk).update(work_summary=work_summary)
    move_visit(visit, target, by=by, note=note)
    changes["status"] = [before_status, visit.status]
    audit.record(visit, AuditAction.MOVED, by=by, changes=changes, note=note)
    return visit
