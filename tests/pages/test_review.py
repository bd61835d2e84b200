"""The review queue: submitted visits with scores and findings; accept, or return with a
note; after a return, what the technician changed is shown from the audit trail."""

from __future__ import annotations

import pytest
from django.urls import reverse
from django.utils.html import escape

from diagnostics.core.findings import RULES_BY_CODE
from diagnostics.core.texts import CAUTIONS
from fleet import audit
from fleet.models import AuditAction
from tests.factories import ReadingSetFactory, VisitUnitFactory

pytestmark = pytest.mark.django_db


def test_it_lists_submitted_visits_with_score_and_findings(office, world):
    """The queue shows the waiting visit, its worst reading's condition (a superheat far off
    its aim needs attention) with the score, and its probable causes."""
    page = office.get(reverse("fleet:review-queue")).content.decode()
    assert world.submitted.reference in page
    assert world.own_visit.reference not in page
    assert "Needs attention \u00b7 72" in page
    assert RULES_BY_CODE["undercharge"].title in page
    assert "Leak rate over the limit" in page


def test_it_shows_the_diagnosis_findings_and_cautions_on_the_visit(office, world):
    """The review page lays out each reading against its aim, grouped by what it tells, the
    finding with its evidence and the technician's advice, and the safety cautions that go
    with advice to act."""
    page = office.get(reverse("fleet:visit", args=[world.submitted.pk])).content.decode()
    assert "Refrigerant charge and feed" in page
    assert "Evaporator superheat" in page
    assert "\u2716</span> far too high" in page
    assert "bubbles in the sight glass" in page
    assert escape(RULES_BY_CODE["undercharge"].advice) in page
    assert escape(CAUTIONS["electrical"]) in page
    assert "local codes and licensed practice" in page
    assert 'name="decision"' in page


def test_it_accepts_a_visit(office, office_user, world):
    """Accepting marks the visit reviewed by the coordinator and leaves the queue."""
    response = office.post(
        reverse("fleet:visit-review", args=[world.submitted.pk]), {"decision": "accept"}
    )
    assert response.status_code == 302
    world.submitted.refresh_from_db()
    assert world.submitted.status == "reviewed"
    assert world.submitted.reviewed_by == office_user
    queue = office.get(reverse("fleet:review-queue")).content.decode()
    assert reverse("fleet:visit", args=[world.submitted.pk]) not in queue
    assert "Nothing waiting" in queue


def test_it_wants_a_note_to_return_a_visit(office, world):
    """Returning without a note is refused beside the note field; the visit stays put."""
    response = office.post(
        reverse("fleet:visit-review", args=[world.submitted.pk]), {"decision": "return"}
    )
    assert response.status_code == 200
    page = response.content.decode()
    assert "Say what the technician should change" in page
    assert 'id="id_note_errors"' in page
    world.submitted.refresh_from_db()
    assert world.submitted.status == "submitted"


def test_it_shows_what_changed_after_a_return(office, technician, world):
    """After a return with a note, readings the technician adds and values they change are
    listed under the note and marked on the page; the earlier readings are not."""
    visit = world.submitted
    office.post(
        reverse("fleet:visit-review", args=[visit.pk]),
        {"decision": "return", "note": "Take as-left readings too"},
    )
    visit.refresh_from_db()
    assert (visit.status, visit.review_note) == ("in_progress", "Take as-left readings too")
    covered = visit.visit_units.get()
    first = covered.reading_sets.get()
    before = audit.snapshot(first)
    first.suction_kpa_gauge = 365.0
    first.save()
    audit.record_changed(first, before, by=technician)
    added = ReadingSetFactory(visit_unit=covered, stage="as_left")
    audit.record_created(added, by=technician)
    audit.record(
        visit, AuditAction.MOVED, by=technician, changes={"status": ["in_progress", "submitted"]}
    )
    visit.status = "submitted"
    visit.save()
    page = office.get(reverse("fleet:visit", args=[visit.pk])).content.decode()
    assert "Take as-left readings too" in page
    assert "What changed since" in page
    assert "added as left readings on" in page
    assert "suction kpa gauge" in page
    assert "50.8 psig" in page
    assert "52.9 psig" in page
    assert page.count("Since return</span>") >= 2


def test_it_shows_no_changes_when_nothing_came_after_the_return(office, world):
    """A visit returned and handed straight back says nothing was recorded since."""
    visit = world.submitted
    office.post(
        reverse("fleet:visit-review", args=[visit.pk]),
        {"decision": "return", "note": "Check the sight glass"},
    )
    page = office.get(reverse("fleet:visit", args=[visit.pk])).content.decode()
    assert "Nothing was recorded after the return." in page


def test_it_marks_a_visit_handed_in_again(office, world):
    """A visit that carries a return note shows as handed in again in the queue."""
    VisitUnitFactory(visit=world.submitted)
    world.submitted.review_note = "Redo the amps"
    world.submitted.save()
    page = office.get(reverse("fleet:review-queue")).content.decode()
    assert "Handed in again" in page
