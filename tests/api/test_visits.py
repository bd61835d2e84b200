"""Visits on the API: the life cycle endpoints, filters, validation and the audit trail."""

from __future__ import annotations

import datetime as dt
import zoneinfo

import pytest
from django.utils import timezone

from fleet.models import AuditEntry, Visit
from tests.factories import SiteFactory, UnitFactory, VisitFactory, VisitUnitFactory

from .conftest import token_client

pytestmark = pytest.mark.django_db


def _post(client, visit, what: str, body: dict | None = None):
    return client.post(f"/api/v1/visits/{visit.pk}/{what}/", body or {}, format="json")


def test_it_walks_a_visit_through_its_life(office_user, technician):
    """start -> submit (with a summary) -> review accept; each move is in the history."""
    visit = VisitFactory(status="scheduled", technicians=[technician])
    tech, office = token_client(technician), token_client(office_user)
    assert _post(tech, visit, "start").json()["status"] == "in_progress"
    submitted = _post(tech, visit, "submit", {"work_summary": "Cleaned the condenser coil"})
    assert submitted.json()["status"] == "submitted"
    assert submitted.json()["work_summary"] == "Cleaned the condenser coil"
    reviewed = _post(office, visit, "review", {"decision": "accept", "note": "Good"}).json()
    assert (reviewed["status"], reviewed["reviewed_by"]) == ("reviewed", office_user.pk)
    moves = [
        entry.changes["status"]
        for entry in AuditEntry.objects.filter(record_id=visit.pk, action="moved")
    ]
    assert moves == [
        ["scheduled", "in_progress"],
        ["in_progress", "submitted"],
        ["submitted", "reviewed"],
    ]


def test_the_office_returns_a_visit_with_a_note(office_user):
    """Returning needs a note; the visit goes back to in progress carrying it."""
    visit = VisitFactory(status="submitted")
    office = token_client(office_user)
    missing = _post(office, visit, "review", {"decision": "return"})
    assert missing.status_code == 400
    assert "note" in missing.json()
    back = _post(office, visit, "review", {"decision": "return", "note": "Add as-left readings"})
    assert back.json()["status"] == "in_progress"
    assert back.json()["review_note"] == "Add as-left readings"


@pytest.mark.parametrize(
    ("status", "what", "body"),
    [
        ("scheduled", "submit", {}),
        ("submitted", "start", {}),
        ("cancelled", "start", {}),
        ("in_progress", "review", {"decision": "accept"}),
        ("in_progress", "review", {"decision": "return", "note": "why"}),
    ],
)
def test_an_illegal_move_is_409_with_a_reason(office_user, status, what, body):
    """A move the status does not allow is 409 on ``status``, saying what is allowed."""
    visit = VisitFactory(status=status)
    response = _post(token_client(office_user), visit, what, body)
    assert response.status_code == 409
    assert f"visit {visit.reference} is {status}" in response.json()["status"][0]
    visit.refresh_from_db()
    assert visit.status == status


def test_mine_and_date_filters(technician, other_technician):
    """?mine=true keeps the caller's visits; ?date= the visits whose window overlaps that day
    in the contractor's time zone."""
    zone = zoneinfo.ZoneInfo("America/Chicago")
    day = timezone.localdate()
    morning = dt.datetime.combine(day, dt.time(8, 0), tzinfo=zone)
    today = VisitFactory(window_start=morning, technicians=[technician])
    VisitFactory(window_start=morning + dt.timedelta(days=2), technicians=[technician])
    VisitFactory(window_start=morning, technicians=[other_technician])
    client = token_client(technician)
    mine_today = client.get(f"/api/v1/visits/?mine=true&date={day.isoformat()}").json()
    assert [v["id"] for v in mine_today["results"]] == [today.pk]
    bad = client.get("/api/v1/visits/?date=someday")
    assert bad.status_code == 400
    assert "date" in bad.json()


def test_a_visits_units_must_be_at_its_site(office_user):
    """Units from another site are refused on ``units``; the model's window rule on
    ``window_end`` (the model's clean(), run by the serializer base)."""
    site = SiteFactory()
    elsewhere = UnitFactory()
    start = timezone.now()
    body = {
        "reference": "V-TEST-1",
        "site": site.pk,
        "kind": "planned",
        "window_start": start.isoformat(),
        "window_end": (start + dt.timedelta(hours=2)).isoformat(),
        "units": [elsewhere.pk],
    }
    office = token_client(office_user)
    response = office.post("/api/v1/visits/", body, format="json")
    assert response.status_code == 400
    assert response.json() == {"units": [f"not at the visit's site: {elsewhere.tag}"]}
    backwards = {**body, "units": [], "window_end": (start - dt.timedelta(hours=1)).isoformat()}
    response = office.post("/api/v1/visits/", backwards, format="json")
    assert response.status_code == 400
    assert response.json() == {"window_end": ["must be after the start of the window"]}


def test_a_window_outside_the_service_era_is_refused(office_user):
    """A window in 1275 would be answered with Chicago's local mean time offset
    (-05:50:36), which is no RFC 3339 date-time (the schema fuzzer found it)."""
    visit = VisitFactory(status="scheduled")
    office = token_client(office_user)
    for field, value in [
        ("window_start", "1275-06-14T05:40:39Z"),
        ("window_end", "2250-01-01T00:00:00Z"),
    ]:
        response = office.patch(f"/api/v1/visits/{visit.pk}/", {field: value}, format="json")
        assert response.status_code == 400
        assert response.json() == {field: ["must fall in the years 1970 to 2199"]}


def test_office_changes_to_a_visit_are_audited(office_user, technician):
    """Assigning a technician and a unit is recorded with the old and new lists."""
    visit = VisitFactory(status="scheduled")
    unit = UnitFactory(site=visit.site)
    response = token_client(office_user).patch(
        f"/api/v1/visits/{visit.pk}/",
        {"technicians": [technician.pk], "units": [unit.pk]},
        format="json",
    )
    assert response.status_code == 200, response.json()
    entry = AuditEntry.objects.get(record_id=visit.pk, action="changed")
    assert entry.changes == {"units": [[], [unit.pk]], "technicians": [[], [technician.pk]]}


def test_a_unit_with_readings_stays_on_its_visit(office_user):
    """Taking a unit off a visit it has readings on is refused (400), not a 500."""
    from tests.factories import ReadingSetFactory

    visit_unit = VisitUnitFactory()
    ReadingSetFactory(visit_unit=visit_unit)
    response = token_client(office_user).patch(
        f"/api/v1/visits/{visit_unit.visit_id}/", {"units": []}, format="json"
    )
    assert response.status_code == 400
    assert visit_unit.unit.tag in response.json()["units"][0]
    assert Visit.objects.get(pk=visit_unit.visit_id).units.count() == 1
