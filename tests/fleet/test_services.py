"""Visits move only along the legal transitions, and a review refreshes the units' flags."""

from __future__ import annotations

import pytest
from django.utils import timezone

from diagnostics.core import units
from diagnostics.models import Diagnosis, Flag
from fleet.models import AuditAction, AuditEntry
from fleet.services import IllegalTransition, move_visit
from tests.factories import (
    ReadingSetFactory,
    RefrigerantEventFactory,
    UnitFactory,
    UserFactory,
    VisitFactory,
    VisitUnitFactory,
)

pytestmark = pytest.mark.django_db


def test_it_walks_a_visit_through_its_whole_life(office_user):
    """scheduled -> in progress -> submitted -> reviewed, stamping the reviewer."""
    visit = VisitFactory(status="scheduled")
    move_visit(visit, "in_progress")
    move_visit(visit, "submitted")
    assert visit.submitted_at is not None
    move_visit(visit, "reviewed", by=office_user, note="Looks right")
    visit.refresh_from_db()
    assert (visit.status, visit.reviewed_by, visit.review_note) == (
        "reviewed",
        office_user,
        "Looks right",
    )


def test_it_returns_a_submitted_visit_with_a_note():
    """The office may hand a submitted visit back to the technician."""
    visit = VisitFactory(status="submitted")
    move_visit(visit, "in_progress", note="Add the as-left readings")
    visit.refresh_from_db()
    assert (visit.status, visit.review_note) == ("in_progress", "Add the as-left readings")


@pytest.mark.parametrize(
    ("start", "target"),
    [
        ("scheduled", "submitted"),
        ("reviewed", "in_progress"),
        ("cancelled", "scheduled"),
        ("scheduled", "reviewed"),
    ],
)
def test_it_refuses_an_illegal_move(start, target):
    """An illegal move raises with a message that says what is allowed; nothing changes."""
    stamps = (
        {"reviewed_by": UserFactory(), "reviewed_at": timezone.now()} if start == "reviewed" else {}
    )
    visit = VisitFactory(status=start, **stamps)
    with pytest.raises(IllegalTransition, match=f"not to {target}"):
        move_visit(visit, target)
    visit.refresh_from_db()
    assert visit.status == start


def test_it_refuses_a_move_made_stale_by_someone_else():
    """The update is conditional: if the status changed underneath, the move is refused."""
    visit = VisitFactory(status="in_progress")
    stale = type(visit).objects.get(pk=visit.pk)
    move_visit(visit, "cancelled")
    with pytest.raises(IllegalTransition):
        move_visit(stale, "submitted")
    visit.refresh_from_db()
    assert visit.status == "cancelled"


def test_it_records_each_move_in_the_audit_trail(office_user):
    """Every move leaves one trail entry with the old and the new status and its actor."""
    visit = VisitFactory(status="submitted")
    move_visit(visit, "in_progress", by=office_user, note="Add the as-left readings")
    entry = AuditEntry.objects.get(visit_id=visit.pk)
    assert (entry.action, entry.actor, entry.changes["status"], entry.note) == (
        AuditAction.MOVED,
        office_user,
        ["submitted", "in_progress"],
        "Add the as-left readings",
    )


def test_a_reviewed_visit_raises_the_flags_of_its_units(office_user):
    """Accepting a visit refreshes its units' flags at once: 20 lb added to a 60 lb system
    with no earlier addition is a 33 % leak rate (40 CFR 82.152: the addition over the full
    charge, over 365 days when there is no earlier addition), over the 20 % threshold for
    commercial refrigeration (40 CFR 82.157(c)(2)(i)), so a leak_rate flag opens; returning
    a visit to the technician refreshes nothing."""
    unit = UnitFactory(full_charge_kg=units.mass_to_kg(60, "lb"))
    visit = VisitFactory(status="submitted", site=unit.site)
    vu = VisitUnitFactory(visit=visit, unit=unit)
    RefrigerantEventFactory(
        visit_unit=vu, amount_kg=units.mass_to_kg(20, "lb"), occurred_on=timezone.localdate()
    )
    open_flags = Flag.objects.filter(unit=unit, kind="leak_rate", cleared_at__isnull=True)

    move_visit(visit, "in_progress", by=office_user, note="Weigh the cylinder again")
    assert not open_flags.exists()

    move_visit(visit, "submitted")
    move_visit(visit, "reviewed", by=office_user)
    assert open_flags.count() == 1


def test_a_reading_set_is_stored_even_when_the_core_fails(monkeypatch, caplog, office_user):
    """The readings are the record: if the diagnosis cannot be computed, the set is stored
    (with its audit entry) without a diagnosis, the failure is logged, and a repeat of its
    client_id returns it; ``manage.py rescore`` diagnoses it later."""
    from diagnostics.core import diagnose as core_diagnose
    from fleet import services

    def broken(*args, **kwargs):
        raise RuntimeError("core out of order")

    monkeypatch.setattr(core_diagnose, "diagnose_row", broken)
    reading = ReadingSetFactory.build(visit_unit=VisitUnitFactory(), box_temp_c=2.0)
    stored = services.record_reading_set(reading, by=office_user)
    assert stored.created
    assert stored.record.pk is not None
    assert not Diagnosis.objects.filter(reading_set=stored.record).exists()
    assert AuditEntry.objects.filter(record_id=stored.record.pk, action="created").exists()
    assert "diagnosis failed" in caplog.text
    again = services.record_reading_set(
        ReadingSetFactory.build(visit_unit=reading.visit_unit, client_id=reading.client_id),
        by=office_user,
    )
    assert not again.created
    assert again.record.pk == stored.record.pk
