"""What a technician writes from the phone beyond posting: correcting or withdrawing their own
reading sets while the visit is in progress, submitting with a summary and every unit read or
explained, and saying which cylinder and certification a refrigerant addition was made under.
Names and numbers are synthetic test inputs."""

from __future__ import annotations

import pytest

from fleet.models import AuditEntry, ReadingSet, RefrigerantEvent, VisitUnit
from tests.factories import (
    ReadingSetFactory,
    SiteFactory,
    UnitFactory,
    UserFactory,
    VisitFactory,
    VisitUnitFactory,
)

from .conftest import post_reading_set, token_client

pytestmark = pytest.mark.django_db


def _sets_url(visit_unit) -> str:
    return f"/api/v1/visits/{visit_unit.visit_id}/reading-sets/"


READING = {
    "units": {"temperature": "C", "pressure": "kPa"},
    "box_temp": 2.0,
    "suction_pressure": 300.0,
    "suction_line_temp": -3.0,
    "head_pressure": 1500.0,
    "entering_air_temp": 25.0,
    "liquid_line_temp": 34.0,
}


@pytest.fixture
def two_on_a_visit(technician, other_technician):
    """An in-progress visit with two technicians on it and one unit."""
    site = SiteFactory()
    visit = VisitFactory(
        site=site, status="in_progress", technicians=[technician, other_technician]
    )
    return VisitUnitFactory(visit=visit, unit=UnitFactory(site=site))


# --- correcting and withdrawing one's own reading set -------------------------------------


def test_a_technician_corrects_their_set_and_it_is_diagnosed_again(technician, two_on_a_visit):
    client = token_client(technician)
    posted = post_reading_set(client, two_on_a_visit, **READING).json()
    url = f"{_sets_url(two_on_a_visit)}{posted['id']}/"
    superheat_before = _superheat(posted)

    changed = client.patch(
        url, {"units": {"temperature": "C"}, "suction_line_temp": 3.0}, format="json"
    )

    assert changed.status_code == 200, changed.json()
    # 6 K warmer at the bulb is 10.8 F more superheat (the answer is in F, the default)
    assert changed.json()["units"]["temperature_difference"] == "F"
    assert _superheat(changed.json()) == pytest.approx(superheat_before + 10.8, abs=0.01)
    entry = AuditEntry.objects.get(action="changed", record_id=posted["id"])
    assert entry.actor == technician
    assert entry.changes["suction_line_temp_c"] == [-3.0, 3.0]


def _superheat(body: dict) -> float:
    metrics = {m["name"]: m for m in body["diagnosis"]["metrics"]}
    return metrics["superheat"]["measured"]


def test_a_technician_withdraws_their_set_and_the_trail_keeps_it(technician, two_on_a_visit):
    client = token_client(technician)
    posted = post_reading_set(client, two_on_a_visit, **READING).json()

    gone = client.delete(f"{_sets_url(two_on_a_visit)}{posted['id']}/")

    assert gone.status_code == 204
    assert not ReadingSet.objects.filter(pk=posted["id"]).exists()
    assert AuditEntry.objects.filter(action="deleted", record_id=posted["id"]).count() == 1
    history = client.get(f"/api/v1/visits/{two_on_a_visit.visit_id}/history/").json()
    assert "deleted" in [entry["action"] for entry in history["results"]]


def test_another_technicians_set_is_403_and_left_alone(
    technician, other_technician, two_on_a_visit
):
    posted = post_reading_set(token_client(other_technician), two_on_a_visit, **READING).json()
    url = f"{_sets_url(two_on_a_visit)}{posted['id']}/"
    client = token_client(technician)

    changed = client.patch(url, {"notes": "not mine"}, format="json")
    withdrawn = client.delete(url)

    assert changed.status_code == 403
    assert other_technician.username in changed.json()["detail"]
    assert withdrawn.status_code == 403
    assert ReadingSet.objects.get(pk=posted["id"]).notes == ""


def test_a_set_recorded_by_the_office_is_not_the_technicians_to_change(technician, two_on_a_visit):
    office_set = ReadingSetFactory(visit_unit=two_on_a_visit, created_by=None)
    url = f"{_sets_url(two_on_a_visit)}{office_set.pk}/"
    assert token_client(technician).delete(url).status_code == 403


def test_after_submission_the_technicians_own_set_is_409(technician, two_on_a_visit):
    client = token_client(technician)
    posted = post_reading_set(client, two_on_a_visit, **READING).json()
    two_on_a_visit.visit.__class__.objects.filter(pk=two_on_a_visit.visit_id).update(
        status="submitted"
    )
    url = f"{_sets_url(two_on_a_visit)}{posted['id']}/"

    changed = client.patch(url, {"notes": "late fix"}, format="json")

    assert changed.status_code == 409
    assert "visit" in changed.json()
    assert client.delete(url).status_code == 409
    assert ReadingSet.objects.filter(pk=posted["id"]).exists()


def test_refrigerant_events_stay_the_offices_to_change(technician, two_on_a_visit):
    client = token_client(technician)
    url = f"/api/v1/visits/{two_on_a_visit.visit_id}/refrigerant-events/"
    posted = client.post(
        url, {"unit": two_on_a_visit.unit_id, "kind": "leak_found"}, format="json"
    ).json()
    assert client.patch(f"{url}{posted['id']}/", {"notes": "x"}, format="json").status_code == 403


# --- submitting ----------------------------------------------------------------------------


@pytest.fixture
def three_units(technician):
    """An in-progress visit on three units; readings on the first only."""
    site = SiteFactory()
    visit = VisitFactory(site=site, status="in_progress", technicians=[technician])
    units = [UnitFactory(site=site, tag=tag) for tag in ("WIC-1", "RI-2", "RI-3")]
    rows = [VisitUnitFactory(visit=visit, unit=unit) for unit in units]
    ReadingSetFactory(visit_unit=rows[0], created_by=technician)
    return visit, units


def _submit(client, visit, body):
    return client.post(f"/api/v1/visits/{visit.pk}/submit/", body, format="json")


def test_a_blank_summary_is_refused_naming_it(technician, three_units):
    visit, units = three_units
    not_read = [{"unit": u.pk, "reason": "not_accessible"} for u in units[1:]]
    response = _submit(
        token_client(technician), visit, {"work_summary": "  ", "units_not_read": not_read}
    )
    assert response.status_code == 400
    assert list(response.json()) == ["work_summary"]
    visit.refresh_from_db()
    assert visit.status == "in_progress"


def test_a_unit_without_readings_or_reason_is_refused_naming_it(technician, three_units):
    visit, units = three_units
    response = _submit(
        token_client(technician),
        visit,
        {
            "work_summary": "Cleaned the coil",
            "units_not_read": [{"unit": units[1].pk, "reason": "off_by_design"}],
        },
    )
    assert response.status_code == 400
    problems = response.json()["units_not_read"]
    assert len(problems) == 1
    assert f"RI-3 (id {units[2].pk})" in problems[0]
    assert not VisitUnit.objects.exclude(not_read_reason="").exists()


def test_each_unit_read_or_explained_submits_and_the_reasons_are_kept(technician, three_units):
    visit, units = three_units
    response = _submit(
        token_client(technician),
        visit,
        {
            "work_summary": "Cleaned the coil on WIC-1",
            "units_not_read": [
                {"unit": units[1].pk, "reason": "off_by_design", "note": "emptied for winter"},
                {"unit": units[2].pk, "reason": "not_accessible"},
            ],
        },
    )
    assert response.status_code == 200, response.json()
    assert response.json()["status"] == "submitted"
    kept = dict(VisitUnit.objects.filter(visit=visit).values_list("unit_id", "not_read_reason"))
    assert kept == {units[0].pk: "", units[1].pk: "off_by_design", units[2].pk: "not_accessible"}
    moved = AuditEntry.objects.get(action="moved", record_id=visit.pk)
    assert moved.changes["units_not_read"][1] == [
        {"unit": units[1].pk, "reason": "off_by_design", "note": "emptied for winter"},
        {"unit": units[2].pk, "reason": "not_accessible", "note": ""},
    ]


@pytest.mark.parametrize(
    ("entry", "words"),
    [
        ({"unit": 0, "reason": "not_accessible"}, "greater than or equal to 1"),
        ({"unit": 999_999, "reason": "not_accessible"}, "is not on visit"),
        ({"reason": "not_running"}, "required"),
        ({"unit": "first", "reason": "not_running"}, "valid integer"),
        ({"unit": 1, "reason": "forgot"}, "not a valid choice"),
    ],
)
def test_a_bad_entry_is_400_on_units_not_read(technician, three_units, entry, words):
    visit, units = three_units
    entries = [entry, *({"unit": u.pk, "reason": "other"} for u in units[1:])]
    response = _submit(
        token_client(technician), visit, {"work_summary": "Done", "units_not_read": entries}
    )
    assert response.status_code == 400
    assert words in str(response.json()["units_not_read"])


def test_a_unit_with_readings_cannot_also_be_not_read(technician, three_units):
    visit, units = three_units
    entries = [{"unit": u.pk, "reason": "other"} for u in units]
    response = _submit(
        token_client(technician), visit, {"work_summary": "Done", "units_not_read": entries}
    )
    assert response.status_code == 400
    assert "WIC-1" in response.json()["units_not_read"][0]


def test_the_stored_summary_serves_when_none_is_sent(office_user):
    visit = VisitFactory(status="in_progress", work_summary="Replaced the fan motor")
    response = _submit(token_client(office_user), visit, {})
    assert response.status_code == 200, response.json()


def test_a_scheduled_visit_is_still_409_whatever_the_body(technician):
    visit = VisitFactory(status="scheduled", technicians=[technician])
    assert _submit(token_client(technician), visit, {}).status_code == 409


# --- which cylinder, whose certification ---------------------------------------------------


def _event(client, visit_unit, kind: str, **fields):
    return client.post(
        f"/api/v1/visits/{visit_unit.visit_id}/refrigerant-events/",
        {
            "unit": visit_unit.unit_id,
            "kind": kind,
            "amount": 1.5,
            "units": {"mass": "kg"},
            **fields,
        },
        format="json",
    )


@pytest.mark.parametrize("kind", ["added", "recovered"])
def test_a_technician_names_the_cylinder_and_certification(technician, two_on_a_visit, kind):
    client = token_client(technician)
    missing = _event(client, two_on_a_visit, kind)
    assert missing.status_code == 400
    assert set(missing.json()) == {"cylinder", "certification_number"}
    assert not RefrigerantEvent.objects.exists()
    stored = _event(
        client, two_on_a_visit, kind, cylinder="CYL-0417", certification_number="TEST-CERT-1"
    )
    assert stored.status_code == 201, stored.json()
    event = RefrigerantEvent.objects.get()
    assert (event.cylinder, event.certification_number) == ("CYL-0417", "TEST-CERT-1")


def test_the_office_may_enter_an_addition_without_them(office_user, two_on_a_visit):
    assert _event(token_client(office_user), two_on_a_visit, "added").status_code == 201


def test_other_kinds_need_neither(technician, two_on_a_visit):
    response = token_client(technician).post(
        f"/api/v1/visits/{two_on_a_visit.visit_id}/refrigerant-events/",
        {"unit": two_on_a_visit.unit_id, "kind": "leak_found"},
        format="json",
    )
    assert response.status_code == 201


def test_a_cylinder_is_one_line_of_text(technician, two_on_a_visit):
    response = _event(
        token_client(technician),
        two_on_a_visit,
        "added",
        cylinder="CYL\u00070417",
        certification_number="TEST-CERT-1",
    )
    assert response.status_code == 400
    assert "cylinder" in response.json()


def test_a_technician_who_is_also_office_is_not_asked(two_on_a_visit):
    both = UserFactory(username="both-roles", role="office")
    assert _event(token_client(both), two_on_a_visit, "recovered").status_code == 201
