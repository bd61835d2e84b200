"""Writes on fleet records that touch several rows or have side effects, each in one
transaction and each leaving the audit trail (``fleet.audit``): book visits, move them along
their life cycle, store reading sets and refrigerant events once (whatever the retries) with
their diagnosis or leak rate, and delete records (never one the refrigerant rules say to keep).

The API, the office pages and the admin all call these; none writes such rows by itself. They sit
above the diagnostics layer (they ask it for diagnoses, leak rates and flags) and below the
pages and the API (``.importlinter``): the records beneath them import neither.

A phone may post the same ``client_id`` twice, even at the same instant. The unique
constraint on ``client_id`` settles it: the insert is the first statement of its
transaction, and an IntegrityError on it means another request stored the record first; the
transaction is rolled back (nothing else was in it) and the stored record is returned. No
read-then-write decides it, so two concurrent posts store exactly one row.
"""

from __future__ import annotations

import datetime as dt
import logging
import uuid
from collections.abc import Callable, Collection, Iterable, Iterator, Mapping, Sequence
from contextlib import contextmanager, nullcontext
from dataclasses import dataclass
from typing import Any, Generic, TypeVar
from zoneinfo import ZoneInfo

from django.contrib.auth.models import User
from django.core.files.uploadedfile import UploadedFile
from django.db import IntegrityError, models, transaction
from django.utils import timezone

from diagnostics.core.maintenance import VisitProposal
from diagnostics.models import Flag, LeakRate
from diagnostics.services import (
    configured_leak_rules,
    diagnose_reading_set,
    diagnosis_of,
    record_leak_rate,
    record_leak_rates,
    refresh_flags,
    rescore,
)

from . import audit
from .choices import VISIT_TRANSITIONS, VisitKind, VisitStatus
from .models import (
    AuditAction,
    Component,
    ReadingSet,
    RefrigerantEvent,
    Unit,
    UnitDocument,
    Visit,
    VisitUnit,
)

log = logging.getLogger(__name__)

R = TypeVar("R", ReadingSet, RefrigerantEvent)
#: A record stored once per client_id.
K = TypeVar("K", ReadingSet, RefrigerantEvent, Component)
M = TypeVar("M", bound=models.Model)

#: What a stored record is returned with, so it serialises without further queries.
RECORD_RELATIONS = ("visit_unit__unit__site", "visit_unit__visit", "created_by")

#: A new or proposed visit fills a morning at the site unless the coordinator says otherwise.
DEFAULT_VISIT_START = dt.time(8, 0)
DEFAULT_VISIT_HOURS = 4


@contextmanager
def _logged_failure(message: str, *args: object, savepoint: bool = True) -> Iterator[None]:
    """Run what follows a write (a diagnosis, leak rates, flags) in a savepoint (none is
    needed for a computation that writes nothing); a failure is logged, not raised. The
    write stands, and ``manage.py rescore`` or ``manage.py refresh_flags`` computes the rest
    again once the core is fixed."""
    try:
        with transaction.atomic() if savepoint else nullcontext():
            yield
    except Exception:
        log.exception(message, *args)


# --- visits: booking ----------------------------------------------------------------------


def next_reference(day: dt.date) -> str:
    """Our next visit number for the month of ``day``: V-YYMM-NNNN."""
    prefix = f"V-{day:%y%m}-"
    last = (
        Visit.objects.filter(reference__startswith=prefix)
        .order_by("-reference")
        .values_list("reference", flat=True)
        .first()
    )
    number = int(last.rsplit("-", 1)[1]) + 1 if last else 1
    return f"{prefix}{number:04d}"


def save_new_visit(visit: Visit, units: Iterable[Unit], people: Iterable[User] = ()) -> Visit:
    """Store a new visit under our next free reference, with its units and people.

    Two coordinators saving at the same moment could pick the same number; the unique
    constraint refuses the second, which then takes the following number.
    """
    for _attempt in range(5):
        visit.reference = next_reference(timezone.localdate())
        try:
            with transaction.atomic():
                visit.save()
                VisitUnit.objects.bulk_create(VisitUnit(visit=visit, unit=u) for u in units)
                if people:
                    visit.technicians.set(people)
                return visit
        except IntegrityError:
            visit.pk = None
            visit._state.adding = True
    raise IntegrityError("could not find a free visit reference")


@transaction.atomic
def book_proposed_visits(
    proposals: Sequence[VisitProposal],
    units: Mapping[int, Unit],
    *,
    by: User | None,
    now: dt.datetime | None = None,
) -> list[Visit]:
    """Book the planned visits the maintenance core proposed, unassigned (the coordinator
    assigns them after), each on a morning at its site still ahead of ``now``."""
    now = now or timezone.now()
    booked = []
    for proposal in proposals:
        site = units[proposal.unit_ids[0]].site
        start = dt.datetime.combine(
            proposal.proposed_on, DEFAULT_VISIT_START, ZoneInfo(site.time_zone)
        )
        while start < now:  # overdue units: the next morning still ahead
            start += dt.timedelta(days=1)
        visit = Visit(
            site=site,
            kind=VisitKind.PLANNED,
            status=VisitStatus.SCHEDULED,
            window_start=start,
            window_end=start + dt.timedelta(hours=DEFAULT_VISIT_HOURS),
            reported_problem="",
        )
        visit.full_clean(exclude=["reference"])
        save_new_visit(visit, [units[pk] for pk in proposal.unit_ids])
        audit.record_created(visit, by=by, note="proposed for planned maintenance")
        booked.append(visit)
    return booked


# --- visits: the life cycle ---------------------------------------------------------------


class IllegalTransition(Exception):
    """A visit was asked to move to a status its current status does not lead to."""

    def __init__(self, visit: Visit, current: str, target: str) -> None:
        self.visit = visit
        self.current = current
        self.target = target
        allowed = sorted(VISIT_TRANSITIONS.get(current, ()))
        super().__init__(
            f"visit {visit.reference} is {current}; it can move to "
            f"{', '.join(allowed) or 'nothing'}, not to {target}"
        )


def _change_status(
    visit: Visit, target: str, *, by: User | None, note: str, now: dt.datetime
) -> Visit:
    """Move a visit to ``target`` if its status allows it.

    The UPDATE is conditional on the status read, so two people acting at once cannot
    both succeed: the second sees zero rows changed and gets IllegalTransition.
    """
    current = visit.status
    if target not in VISIT_TRANSITIONS.get(current, ()):
        raise IllegalTransition(visit, current, target)
    changes: dict = {"status": target, "updated_at": now}
    if target == VisitStatus.SUBMITTED:
        changes["submitted_at"] = now
    if target == VisitStatus.REVIEWED:
        changes.update(reviewed_by=by, reviewed_at=now, review_note=note)
    elif current == VisitStatus.SUBMITTED and target == VisitStatus.IN_PROGRESS:
        changes["review_note"] = note
    updated = Visit.objects.filter(pk=visit.pk, status=current).update(**changes)
    if not updated:
        visit.refresh_from_db()
        raise IllegalTransition(visit, visit.status, target)
    for field, value in changes.items():
        setattr(visit, field, value)
    return visit


def _refresh_flags_of_units(unit_ids: list[int]) -> None:
    """Raise, update and clear the flags of these units from their records as they now are."""
    with _logged_failure("flag refresh failed for units %s", unit_ids):
        refresh_flags(unit_ids=unit_ids)


def _refresh_flags_of(visit: Visit) -> None:
    """Raise and clear the flags of the visit's units now that its readings are reviewed."""
    _refresh_flags_of_units(
        list(VisitUnit.objects.filter(visit=visit).values_list("unit_id", flat=True))
    )


@transaction.atomic
def move_visit(
    visit: Visit,
    target: str,
    *,
    by: User | None = None,
    note: str = "",
    work_summary: str | None = None,
    now: dt.datetime | None = None,
    also_changed: Mapping[str, list] | None = None,
) -> Visit:
    """Move a visit along its life cycle and record it; the one way a visit changes status.

    A visit moved to ``reviewed`` has its units' flags refreshed in the same transaction.
    ``also_changed``: what else the move changed, for its audit entry.
    """
    now = now or timezone.now()
    before_status = visit.status
    changes: dict[str, list] = dict(also_changed or {})
    if work_summary is not None and work_summary != visit.work_summary:
        changes["work_summary"] = [visit.work_summary, work_summary]
        visit.work_summary = work_summary
        Visit.objects.filter(pk=visit.pk).update(work_summary=work_summary)
    _change_status(visit, target, by=by, note=note, now=now)
    changes["status"] = [before_status, visit.status]
    audit.record(visit, AuditAction.MOVED, by=by, changes=changes, note=note)
    if target == VisitStatus.REVIEWED:
        _refresh_flags_of(visit)
    return visit


@dataclass(frozen=True)
class NotRead:
    """A unit of a visit left without readings, and why (``choices.NotReadReason``)."""

    unit_id: int
    reason: str
    note: str = ""


class IncompleteSubmission(Exception):
    """A submission without what the office reviews: each field at fault with its reasons."""

    def __init__(self, errors: dict[str, list[str]]) -> None:
        super().__init__("; ".join(f"{k}: {' '.join(v)}" for k, v in errors.items()))
        self.errors = errors


def _not_read_state(visit_units: Iterable[VisitUnit]) -> list[dict[str, Any]]:
    return [
        {"unit": vu.unit_id, "reason": vu.not_read_reason, "note": vu.not_read_note}
        for vu in visit_units
        if vu.not_read_reason
    ]


@transaction.atomic
def submit_visit(
    visit: Visit,
    *,
    by: User | None,
    work_summary: str | None = None,
    units_not_read: Sequence[NotRead] = (),
    now: dt.datetime | None = None,
) -> Visit:
    """Hand a visit in progress to the office: the one rule for what a submission needs.

    A summary of the work (the one sent, else the one stored) that is not blank, and every
    unit on the visit with at least one reading set or a reason in ``units_not_read`` (kept
    on the unit's row of the visit, in the move's audit entry). Raises IncompleteSubmission
    naming each field and unit at fault, or IllegalTransition for a visit not in progress.
    """
    if VisitStatus.SUBMITTED not in VISIT_TRANSITIONS.get(visit.status, ()):
        raise IllegalTransition(visit, visit.status, VisitStatus.SUBMITTED)
    errors: dict[str, list[str]] = {}
    summary = visit.work_summary if work_summary is None else work_summary
    if not summary.strip():
        errors["work_summary"] = ["say what was done: a visit is submitted with a summary"]
    visit_units = list(
        VisitUnit.objects.filter(visit=visit)
        .select_related("unit")
        .annotate(
            has_readings=models.Exists(ReadingSet.objects.filter(visit_unit=models.OuterRef("pk")))
        )
        .order_by("id")
    )
    on_visit = {vu.unit_id: vu for vu in visit_units}
    reasons: dict[int, NotRead] = {}
    problems: list[str] = []
    for entry in units_not_read:
        vu = on_visit.get(entry.unit_id)
        if vu is None:
            problems.append(f"unit {entry.unit_id} is not on visit {visit.reference}")
        elif entry.unit_id in reasons:
            problems.append(f"unit {vu.unit.tag} (id {vu.unit_id}) is listed more than once")
        elif vu.has_readings:
            problems.append(
                f"unit {vu.unit.tag} (id {vu.unit_id}) has readings on this visit; "
                "leave it out of units_not_read"
            )
        else:
            reasons[entry.unit_id] = entry
    listed = {entry.unit_id for entry in units_not_read}
    for vu in visit_units:
        if not vu.has_readings and vu.unit_id not in listed:
            problems.append(
                f"unit {vu.unit.tag} (id {vu.unit_id}) has no readings on this visit: record "
                "a reading set, or give the reason in units_not_read (not_accessible, "
                "off_by_design, not_running or other)"
            )
    if problems:
        errors["units_not_read"] = problems
    if errors:
        raise IncompleteSubmission(errors)
    before = _not_read_state(visit_units)
    for vu in visit_units:
        given = reasons.get(vu.unit_id)
        reason, note = (given.reason, given.note) if given else ("", "")
        if (vu.not_read_reason, vu.not_read_note) != (reason, note):
            vu.not_read_reason, vu.not_read_note = reason, note
            VisitUnit.objects.filter(pk=vu.pk).update(not_read_reason=reason, not_read_note=note)
    after = _not_read_state(visit_units)
    return move_visit(
        visit,
        VisitStatus.SUBMITTED,
        by=by,
        work_summary=work_summary,
        now=now,
        also_changed={"units_not_read": [before, after]} if before != after else None,
    )


# --- edits to visits and to the fleet's records --------------------------------------------


def _keep_stored(record: models.Model, stored: models.Model, changed: Collection[str]) -> None:
    """Put back on ``record`` the stored value of every field a form did not change: a form
    shows a moment to the second and would otherwise cut the stored microseconds."""
    for field in record._meta.concrete_fields:
        if field.name not in changed and not field.primary_key:
            setattr(record, field.attname, getattr(stored, field.attname))


def visit_state(visit: Visit) -> dict[str, Any]:
    """A visit as the trail compares it: its stored values, its units and technicians."""
    return {
        **audit.snapshot(visit),
        "units": sorted(u.pk for u in visit.units.all()),
        "technicians": sorted(u.pk for u in visit.technicians.all()),
    }


def _state(record: models.Model) -> dict[str, Any]:
    return visit_state(record) if isinstance(record, Visit) else audit.snapshot(record)


def _compute_after_edit(record: models.Model) -> None:
    """What rests on a unit's own data: its diagnoses (its design), its leak rates (its
    full charge, appliance type, refrigerant) and its flags; on a part (a capacitor's
    rating), its unit's flags."""
    if isinstance(record, Unit):
        with _logged_failure("rescore and leak rates failed for unit %s", record.pk):
            rescore(ReadingSet.objects.filter(visit_unit__unit=record))
            record_leak_rates(record)
        _refresh_flags_of_units([record.pk])
    elif isinstance(record, Component):
        _refresh_flags_of_units([record.unit_id])


@transaction.atomic
def save_with_trail(
    record: M | None,
    save: Callable[[], M],
    *,
    by: User | None,
    note: str = "",
    changed: Collection[str] | None = None,
) -> M:
    """Store a new record, or an edit to ``record``, as ``save`` writes it (a form or a
    serializer, with its relations: a visit's units and people), record it in the trail
    (created, or each value changed since the stored one, read before ``save`` runs; a
    form names the fields it ``changed``, the others keep their stored values), and compute
    again what rests on it. For visits, customers, sites, units and parts; a visit's status
    moves only by ``move_visit``, readings and refrigerant events go by ``save_record``."""
    if record is None or record._state.adding:
        created = save()
        audit.record_created(created, by=by, note=note)
        _compute_after_edit(created)
        return created
    stored = type(record)._default_manager.get(pk=record.pk)
    if changed is not None:
        _keep_stored(record, stored, changed)
    before = _state(stored)
    saved = save()
    changes = audit.diff(before, _state(saved))
    if changes:
        audit.record(saved, AuditAction.CHANGED, by=by, changes=changes, note=note)
    _compute_after_edit(saved)
    return saved


# --- reading sets and refrigerant events ----------------------------------------------------


@dataclass(frozen=True)
class Stored(Generic[K]):
    """The record now in the database, and whether this call stored it."""

    record: K
    created: bool


#: What a record stored under a client_id is read with to be serialised.
_STORED_RELATIONS: dict[type[models.Model], tuple[str, ...]] = {
    ReadingSet: (*RECORD_RELATIONS, "diagnosis"),
    RefrigerantEvent: (*RECORD_RELATIONS, "leak_rate"),
    Component: ("unit", "changed_on_visit"),
}


def stored_with_client_id(model: type[K], client_id: uuid.UUID) -> K | None:
    """The record stored under ``client_id``, ready to serialise; None if there is none."""
    relations = _STORED_RELATIONS[model]
    return model.objects.select_related(*relations).filter(client_id=client_id).first()


def _insert_once(record: K, then: Callable[[K], None]) -> Stored[K]:
    """Insert ``record`` and run ``then`` on it, in one transaction whose first statement is
    the insert; or return the record already stored under its client_id.

    A repeated client_id fails the insert on the unique constraint. As nothing else has been
    done in the transaction by then, rolling it back loses nothing, so no savepoint is
    needed around the insert (two statements fewer on every new record). Called inside an
    outer transaction, ``atomic`` makes this a savepoint and the outer one stays intact.
    """
    inserted = False
    try:
        with transaction.atomic():
            record.save(force_insert=True)
            inserted = True
            then(record)
    except IntegrityError:
        if inserted:
            raise  # not the client_id: some later write; the exception handler answers 409
        stored = (
            None
            if record.client_id is None
            else stored_with_client_id(type(record), record.client_id)
        )
        if stored is None:
            raise  # some other constraint: the exception handler answers 409
        return Stored(stored, created=False)
    return Stored(record, created=True)


def _diagnose(reading_set: ReadingSet) -> None:
    """Store the diagnosis of an edited set and attach it. The readings are the record and
    are kept even if the core fails."""
    with _logged_failure("diagnosis failed for reading set %s", reading_set.pk):
        reading_set.diagnosis = diagnose_reading_set(reading_set)


def _compute_leak_rate(event: RefrigerantEvent) -> None:
    """Store the leak rate of an addition and attach it; other kinds have none."""
    with _logged_failure("leak rate failed for refrigerant event %s", event.pk):
        leak_rate = record_leak_rate(event)
        if leak_rate is not None:
            event.leak_rate = leak_rate


def _recompute_leak_rates(event: RefrigerantEvent) -> None:
    """After an edit: every addition of the unit again (a repair or a date moved changes the
    later rates too), and no rate left on an event that is no longer an addition."""
    with _logged_failure("leak rates failed for refrigerant event %s", event.pk):
        rates = record_leak_rates(event.visit_unit.unit)
        if event.pk in rates:
            event.leak_rate = rates[event.pk]
        else:
            LeakRate.objects.filter(event=event).delete()


def _record_once(record: R, compute: Callable[[R], None], *, by: User | None) -> Stored[R]:
    def compute_and_audit(inserted: R) -> None:
        compute(inserted)
        audit.record_created(inserted, by=by)

    return _insert_once(record, compute_and_audit)


def _unit_ids_of(*visit_unit_ids: int) -> list[int]:
    return list(
        VisitUnit.objects.filter(pk__in=set(visit_unit_ids)).values_list("unit_id", flat=True)
    )


def _change(
    record: R, before: dict[str, Any], compute: Callable[[R], None], *, by: User | None
) -> R:
    """Save an edit, compute again what is computed of it, record what changed, and refresh
    the flags of its unit (of both units, if it was moved to another)."""
    record.save()
    compute(record)
    audit.record_changed(record, before, by=by)
    _refresh_flags_of_units(_unit_ids_of(before["visit_unit_id"], record.visit_unit_id))
    return record


def record_reading_set(reading_set: ReadingSet, *, by: User | None) -> Stored[ReadingSet]:
    """Store a validated reading set unless its ``client_id`` is stored, with its diagnosis.

    The diagnosis is computed first, before any write (the core reads only what is in
    hand), so the transaction is three inserts: the set, its diagnosis, the audit entry.
    If the core fails, the readings are stored without a diagnosis and the failure logged.
    """
    diagnosis = None
    with _logged_failure(
        "diagnosis failed for a reading set of unit-on-visit %s",
        reading_set.visit_unit_id,
        savepoint=False,
    ):
        diagnosis = diagnosis_of(reading_set)

    def store_diagnosis(inserted: ReadingSet) -> None:
        if diagnosis is not None:  # built on this very set, which now has its id
            diagnosis.reading_set = inserted
            diagnosis.save(force_insert=True)
            inserted.diagnosis = diagnosis

    return _record_once(reading_set, store_diagnosis, by=by)


@transaction.atomic
def change_reading_set(
    reading_set: ReadingSet, before: dict[str, Any], *, by: User | None
) -> ReadingSet:
    """After an edit (the office's, or a technician's of their own set): diagnose again and
    record what changed."""
    return _change(reading_set, before, _diagnose, by=by)


def record_refrigerant_event(
    event: RefrigerantEvent, *, by: User | None
) -> Stored[RefrigerantEvent]:
    """Store a validated event unless its ``client_id`` is stored; for an addition, compute
    and store its leak rate."""
    return _record_once(event, _compute_leak_rate, by=by)


def record_part_fitted(
    part: Component, *, replaces: Component | None, by: User | None
) -> Stored[Component]:
    """Store a part a technician fitted on a visit unless its ``client_id`` is stored; the
    part it ``replaces`` is marked removed on the day the new one went in, both in the trail,
    and the unit's flags (a start capacitor's band) follow the new part."""

    def remove_replaced(inserted: Component) -> None:
        audit.record_created(inserted, by=by)
        if replaces is not None:
            before = audit.snapshot(replaces)
            replaces.removed_on = inserted.installed_on
            replaces.save(update_fields=["removed_on"])
            audit.record_changed(replaces, before, by=by, note="replaced on a visit")

    stored = _insert_once(part, remove_replaced)
    if stored.created:
        _refresh_flags_of_units([part.unit_id])
    return stored


@transaction.atomic
def change_refrigerant_event(
    event: RefrigerantEvent, before: dict[str, Any], *, by: User | None
) -> RefrigerantEvent:
    """After an office edit: compute the leak rates again and record what changed."""
    return _change(event, before, _recompute_leak_rates, by=by)


def save_record(
    record: ReadingSet | RefrigerantEvent,
    *,
    by: User | None,
    changed: Collection[str] | None = None,
) -> None:
    """Store a new reading set or refrigerant event, or an edit made to one in memory (the
    admin's form, which ``changed`` those fields), by the same services as the API: the
    stored values are read first for the trail."""
    if isinstance(record, ReadingSet):
        if record._state.adding:
            record_reading_set(record, by=by)
            return
        stored_set = ReadingSet.objects.get(pk=record.pk)
        if changed is not None:
            _keep_stored(record, stored_set, changed)
        change_reading_set(record, audit.snapshot(stored_set), by=by)
    elif record._state.adding:
        record_refrigerant_event(record, by=by)
    else:
        stored_event = RefrigerantEvent.objects.get(pk=record.pk)
        if changed is not None:
            _keep_stored(record, stored_event, changed)
        change_refrigerant_event(record, audit.snapshot(stored_event), by=by)


# --- deletion -------------------------------------------------------------------------------


class KeptRecord(Exception):
    """A record the refrigerant rules require to be kept was asked to be deleted."""


def why_kept(record: models.Model, today: dt.date | None = None) -> str | None:
    """Why ``record`` may not be deleted yet, or None: the one rule the admin, the pages and
    the API ask.

    Every refrigerant event (refrigerant added or recovered, a leak found or repaired, a
    verification test) is part of the service records the leak-repair rules require, and
    is kept for the configured rule set's record-keeping period from the day of the work:
    3 years under the US rules (40 CFR 82.157(l); the rule set names its source). Its leak
    rate goes with it, so it is kept as long. Local regulation may ask for longer.
    """
    if not isinstance(record, RefrigerantEvent):
        return None
    rules = configured_leak_rules()
    kept_until = rules.kept_until(record.occurred_on)
    if (today or timezone.localdate()) >= kept_until:
        return None
    return (
        f"{record} is a refrigerant service record, kept until {kept_until:%Y-%m-%d} "
        f"({rules.record_keeping_years.source}); it cannot be deleted before then"
    )


@transaction.atomic
def delete_record(record: models.Model, *, by: User | None) -> None:
    """Delete with its trail entry in the same transaction, and compute again what rested
    on the record; a record the rules keep (``why_kept``) raises KeptRecord instead."""
    reason = why_kept(record)
    if reason is not None:
        raise KeptRecord(reason)
    audit.record_deleted(record, by=by)
    record.delete()
    if isinstance(record, RefrigerantEvent):
        # Later additions' leak rates depend on this one (rolling window, annualizing clock).
        with _logged_failure("leak rates failed for unit %s", record.visit_unit.unit_id):
            record_leak_rates(record.visit_unit.unit)
    if isinstance(record, ReadingSet | RefrigerantEvent):
        _refresh_flags_of_units([record.visit_unit.unit_id])


@transaction.atomic
def delete_records(records: Iterable[models.Model], *, by: User | None) -> int:
    """Delete several records as ``delete_record`` does each, all or none; how many."""
    count = 0
    for record in records:
        delete_record(record, by=by)
        count += 1
    return count


def attach_document(
    unit: Unit, upload: UploadedFile, *, kind: str, title: str, by: User | None
) -> UnitDocument:
    """Keep a checked file (``forms.DocumentForm``) with the unit: written through the
    default storage, recorded in the trail. A file written for a record that then fails to
    save is removed again, so the storage holds no file without its record."""
    document = UnitDocument(
        unit=unit,
        kind=kind,
        title=title,
        original_name=(upload.name or "file")[-200:],
        content_type=upload.content_type or "application/octet-stream",
        size_bytes=upload.size or 0,
        uploaded_by=by,
    )
    document.file.save(upload.name or "file", upload, save=False)
    try:
        return save_with_trail(None, lambda: _saved(document), by=by)
    except Exception:
        document.file.delete(save=False)
        raise


def _saved(record: M) -> M:
    record.save()
    return record


def acknowledge_flags(flags: models.QuerySet[Flag], note: str, *, by: User) -> int:
    """The office has seen these flags and says what it is doing: every one still open and
    not yet acknowledged records the note, who and when, in one update (a form sent twice
    changes nothing the first did). The flags stay open until the diagnostics clear them.
    How many were acknowledged."""
    return flags.filter(cleared_at__isnull=True, acknowledged_at__isnull=True).update(
        acknowledgement_note=note, acknowledged_by=by, acknowledged_at=timezone.now()
    )
