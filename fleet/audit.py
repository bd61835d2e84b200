"""The audit trail: who created, changed, moved or deleted a record (a visit, a reading set,
a refrigerant event, a customer, site, unit or part), when, and what changed (stored SI
values, ``[old, new]`` per field)."""

from __future__ import annotations

import datetime as dt
import json
from typing import Any

from django.contrib.auth.models import AnonymousUser, User
from django.contrib.contenttypes.models import ContentType
from django.core.serializers.json import DjangoJSONEncoder
from django.db import models
from django.db.models.fields.files import FieldFile
from django.utils import timezone

from fleet.models import AuditAction, AuditEntry, ReadingSet, RefrigerantEvent, Visit

#: Who acted: a user, or no one (a command, the system); an anonymous one is kept as no one.
Actor = User | AnonymousUser | None

#: Bookkeeping columns that change on every save and say nothing about the record.
_SKIPPED = {"id", "created_at", "updated_at"}


def _as_stored(value: Any) -> Any:
    """A moment in UTC, as the database gives it back: the same instant entered with
    another offset is no change."""
    if isinstance(value, dt.datetime) and timezone.is_aware(value):
        return value.astimezone(dt.UTC)
    if isinstance(value, FieldFile):
        return value.name  # where the file is kept, not its bytes
    return value


def snapshot(instance: models.Model) -> dict[str, Any]:
    """The record's stored values as JSON-ready data (foreign keys as ids)."""
    values = {
        field.attname: _as_stored(field.value_from_object(instance))
        for field in instance._meta.concrete_fields
        if field.attname not in _SKIPPED
    }
    stored: dict[str, Any] = json.loads(json.dumps(values, cls=DjangoJSONEncoder))
    return stored


def diff(before: dict[str, Any], after: dict[str, Any]) -> dict[str, list[Any]]:
    """``{field: [old, new]}`` for every field whose stored value changed."""
    return {
        name: [before.get(name), value]
        for name, value in after.items()
        if before.get(name) != value
    }


def _visit_id(instance: models.Model) -> int | None:
    if isinstance(instance, Visit):
        return instance.pk
    if isinstance(instance, ReadingSet | RefrigerantEvent):
        return instance.visit_unit.visit_id
    return None


def record(
    instance: models.Model,
    action: AuditAction,
    *,
    by: Actor,
    changes: dict[str, Any],
    note: str = "",
    now: dt.datetime | None = None,
) -> AuditEntry:
    """Append one entry to the trail (inside the caller's transaction)."""
    return AuditEntry.objects.create(
        at=now or timezone.now(),
        actor=by if by is not None and by.is_authenticated else None,
        action=action,
        record_type=ContentType.objects.get_for_model(type(instance)),
        record_id=instance.pk,
        visit_id=_visit_id(instance),
        changes=changes,
        note=note,
    )


def record_created(instance: models.Model, *, by: Actor, note: str = "") -> AuditEntry:
    return record(
        instance,
        AuditAction.CREATED,
        by=by,
        changes={name: [None, value] for name, value in snapshot(instance).items()},
        note=note,
    )


def record_changed(
    instance: models.Model, before: dict[str, Any], *, by: Actor, note: str = ""
) -> AuditEntry | None:
    """An entry for what changed since ``before``; none when nothing did."""
    changes = diff(before, snapshot(instance))
    if not changes:
        return None
    return record(instance, AuditAction.CHANGED, by=by, changes=changes, note=note)


def record_deleted(instance: models.Model, *, by: Actor) -> AuditEntry:
    """Called just before the deletion, in its transaction; keeps the last stored values."""
    return record(
        instance,
        AuditAction.DELETED,
        by=by,
        changes={name: [value, None] for name, value in snapshot(instance).items()},
    )
