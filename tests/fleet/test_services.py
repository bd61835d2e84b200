"""Visits move only along the legal transitions."""

from __future__ import annotations

import pytest
from django.utils import timezone

from fleet.services import IllegalTransition, move_visit
from tests.factories import UserFactory, VisitFactory

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
