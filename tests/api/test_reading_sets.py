"""Posting reading sets: units on the wire, field-level validation, the diagnosis in the
response, retries by client_id, and the audit trail of office edits."""

from __future__ import annotations

import datetime as dt
import uuid

import pytest
from django.utils import timezone

from fleet.api.views import ReadingSetViewSet
from fleet.models import AuditEntry, ReadingSet, Visit
from tests.factories import SiteFactory, UnitFactory, VisitFactory, VisitUnitFactory

from .conftest import token_client

pytestmark = pytest.mark.django_db

#: 1 psi in kPa, exact by definition (NIST SP 811, Appendix B.8: 6.894757 E+00 kPa).
KPA_PER_PSI = 6.894757293168361


@pytest.fixture
def visit_unit(technician):
    """An R-404A medium-temperature walk-in at sea level on an in-progress visit."""
    site = SiteFactory(elevation_m=0.0)
    unit = UnitFactory(site=site)
    visit = VisitFactory(site=site, status="in_progress", technicians=[technician])
    return VisitUnitFactory(visit=visit, unit=unit)


def _url(visit_unit, suffix: str = "") -> str:
    return f"/api/v1/visits/{visit_unit.visit_id}/reading-sets/{suffix}"


def _body(visit_unit, **fields) -> dict:
    """Synthetic as-found readings of an R-404A cooler in US units."""
    return {
        "unit": visit_unit.unit_id,
        "client_id": str(uuid.uuid4()),
        "stage": "as_found",
        "units": {"temperature": "F", "pressure": "psig"},
        "box_temp": 36.0,
        "entering_air_temp": 85.0,
        "suction_pressure": 62.0,
        "suction_line_temp": 35.0,
        "head_pressure": 235.0,
        "liquid_line_temp": 95.0,
        "compressor_amps": [8.1],
        "supply_volts": [231.0],
        "sight_glass": "clear",
        **fields,
    }


def test_it_stores_si_and_answers_in_the_units_asked_for(technician, visit_unit):
    """36 F and 62 psig are stored as 2.222 C and 427.47 kPa gauge (exact conversion
    factors, NIST SP 811; tolerance 0.001); ?units=si answers in C and kPa, the default
    (us) gives the technician's numbers back."""
    client = token_client(technician)
    response = client.post(_url(visit_unit), _body(visit_unit), format="json")
    assert response.status_code == 201, response.json()
    stored = ReadingSet.objects.get(pk=response.json()["id"])
    assert stored.box_temp_c == pytest.approx((36 - 32) * 5 / 9, abs=1e-3)
    assert stored.suction_kpa_gauge == pytest.approx(62 * KPA_PER_PSI, abs=1e-3)
    assert stored.entered_units == {"temperature": "F", "pressure": "psig"}
    us = response.json()
    assert us["units"]["temperature"] == "F"
    assert us["box_temp"] == pytest.approx(36.0, abs=1e-3)
    assert us["suction_pressure"] == pytest.approx(62.0, abs=1e-3)
    si = client.get(_url(visit_unit, f"{stored.pk}/") + "?units=si").json()
    assert si["units"] == {
        "temperature": "C",
        "temperature_difference": "K",
        "pressure": "kPa",
        "mass": "kg",
    }
    assert si["box_temp"] == pytest.approx(2.222, abs=1e-3)
    assert si["suction_pressure"] == pytest.approx(427.475, abs=1e-3)
    assert si["compressor_amps"] == [8.1]


def test_it_makes_absolute_readings_gauge_at_the_site_elevation(technician):
    """At 5000 ft (1524 m) 32.23 psia is 20.0 psig (ASHRAE Fundamentals 2017 ch. 1 eq. 3,
    worked in docs/references.md §5; tolerance 0.01 psi)."""
    site = SiteFactory(elevation_m=1524.0)
    visit = VisitFactory(site=site, status="in_progress", technicians=[technician])
    visit_unit = VisitUnitFactory(visit=visit, unit=UnitFactory(site=site))
    body = {
        "unit": visit_unit.unit_id,
        "units": {"pressure": "psia"},
        "suction_pressure": 32.23,
    }
    response = token_client(technician).post(_url(visit_unit), body, format="json")
    assert response.status_code == 201, response.json()
    assert response.json()["suction_pressure"] == pytest.approx(20.0, abs=0.01)
    stored = ReadingSet.objects.get(pk=response.json()["id"])
    assert stored.suction_kpa_gauge / KPA_PER_PSI == pytest.approx(20.0, abs=0.01)


def test_the_response_carries_the_diagnosis_in_the_response_units(technician, visit_unit):
    """The stored diagnosis comes back at once: score 0-100, the algorithm version, targets
    and metrics stated in F / psig, findings and cautions."""
    response = token_client(technician).post(_url(visit_unit), _body(visit_unit), format="json")
    assert response.status_code == 201
    diagnosis = response.json()["diagnosis"]
    assert diagnosis is not None
    assert 0 <= diagnosis["score"] <= 100
    assert diagnosis["algorithm_version"]
    assert diagnosis["units"]["temperature"] == "F"
    labels = {t["name"]: t["unit"] for t in diagnosis["targets"]}
    assert labels.get("evaporating_temp") == "F"
    assert labels.get("suction_pressure") == "psig"
    assert {m["status"] for m in diagnosis["metrics"]} <= {"ok", "watch", "fault", "not_scored"}
    for finding in diagnosis["findings"]:
        assert set(finding) == {"code", "title", "evidence", "confidence", "advice"}
    stored = ReadingSet.objects.get(pk=response.json()["id"])
    assert stored.diagnosis.score == pytest.approx(diagnosis["score"], abs=0.05)


def test_a_list_expands_its_diagnoses_in_one_pass(technician, visit_unit, monkeypatch):
    """A page of reading sets writes out every stored diagnosis (the same as each one's own
    answer) from one reading of their stored documents, not one per set."""
    from diagnostics.core import diagnose as core_diagnose

    client = token_client(technician)
    posted = [
        client.post(_url(visit_unit), _body(visit_unit, box_temp=36.0 + k), format="json").json()
        for k in range(3)
    ]
    passes = []
    read = core_diagnose.read_details
    monkeypatch.setattr(
        core_diagnose, "read_details", lambda docs: passes.append(len(docs)) or read(docs)
    )
    listed = client.get(_url(visit_unit)).json()["results"]
    assert passes == [3]
    by_id = {row["id"]: row["diagnosis"] for row in listed}
    for row in posted:
        assert by_id[row["id"]] == row["diagnosis"]


@pytest.mark.parametrize(
    ("fields", "expected"),
    [
        (
            {"suction_pressure": -15.0},
            {"suction_pressure": ["below the lowest gauge reading possible (-14.7 psig)"]},
        ),
        ({"box_temp": 500.0}, {"box_temp": ["above the highest reading possible (122 F)"]}),
        (
            {"compressor_amps": [-2.0]},
            {"compressor_amps": ["leg 1: below the lowest reading possible (0 A)"]},
        ),
        (
            {"run_capacitor_uf": 10000.0},
            {"run_capacitor_uf": ["above the highest reading possible (200 uF)"]},
        ),
        (
            {"units": {"temperature": "F", "pressure": "psia"}, "suction_pressure": -1.0},
            {"suction_pressure": ["below the lowest absolute pressure possible (0 psia)"]},
        ),
    ],
)
def test_it_refuses_impossible_values_naming_the_wire_field(
    technician, visit_unit, fields, expected
):
    """A physically impossible value is a 400 naming the wire field, in the client's units;
    nothing is stored."""
    response = token_client(technician).post(
        _url(visit_unit), _body(visit_unit, **fields), format="json"
    )
    assert response.status_code == 400
    assert response.json() == expected
    assert not ReadingSet.objects.exists()


def test_it_states_bounds_in_the_clients_own_units(technician, visit_unit):
    """In C and kPa the same limits read 50 C and -101.3 kPa."""
    body = {
        "unit": visit_unit.unit_id,
        "units": {"temperature": "C", "pressure": "kPa"},
        "box_temp": 80.0,
        "suction_pressure": -120.0,
    }
    response = token_client(technician).post(_url(visit_unit), body, format="json")
    assert response.status_code == 400
    assert response.json() == {
        "box_temp": ["above the highest reading possible (50 C)"],
        "suction_pressure": ["below the lowest gauge reading possible (-101.3 kPa)"],
    }


@pytest.mark.parametrize(
    ("units", "field"),
    [
        ({"temperature": "F", "pressure": "psx"}, "pressure"),
        ({"temperature": "Rankine", "pressure": "psig"}, "temperature"),
        ({"temperature": "F", "pressure": "psig", "speed": "mph"}, "speed"),
    ],
)
def test_it_refuses_units_that_do_not_exist(technician, visit_unit, units, field):
    """An unknown unit (or kind of unit) is named inside ``units``."""
    response = token_client(technician).post(
        _url(visit_unit), _body(visit_unit, units=units), format="json"
    )
    assert response.status_code == 400
    assert field in response.json()["units"]


def test_it_wants_the_unit_of_every_measurement(technician, visit_unit):
    """A pressure without units.pressure cannot be read: the field says which unit is missing."""
    body = _body(visit_unit, units={"temperature": "F"})
    response = token_client(technician).post(_url(visit_unit), body, format="json")
    assert response.status_code == 400
    assert response.json() == {
        "suction_pressure": [
            "state its unit in units.pressure (psig, psia, kPa, kPa_abs, bar, bar_abs)"
        ],
        "head_pressure": [
            "state its unit in units.pressure (psig, psia, kPa, kPa_abs, bar, bar_abs)"
        ],
    }


def test_it_refuses_a_unit_not_on_the_visit(technician, visit_unit):
    """Readings for a unit that is not on the visit are refused on ``unit``."""
    stranger = UnitFactory(site=visit_unit.unit.site)
    response = token_client(technician).post(
        _url(visit_unit), _body(visit_unit, unit=stranger.pk), format="json"
    )
    assert response.status_code == 400
    assert response.json()["unit"] == [
        f"unit {stranger.pk} is not on visit {visit_unit.visit.reference}"
    ]


def test_it_refuses_a_reading_from_the_future(technician, visit_unit):
    """A taken_at a day ahead is refused; a minute ahead (a drifting phone clock) is not."""
    client = token_client(technician)
    ahead = (timezone.now() + dt.timedelta(days=1)).isoformat()
    response = client.post(_url(visit_unit), _body(visit_unit, taken_at=ahead), format="json")
    assert response.status_code == 400
    assert "future" in response.json()["taken_at"][0]
    soon = (timezone.now() + dt.timedelta(minutes=1)).isoformat()
    assert (
        client.post(_url(visit_unit), _body(visit_unit, taken_at=soon), format="json").status_code
        == 201
    )
    ancient = "1800-01-01T12:00:00Z"
    response = client.post(_url(visit_unit), _body(visit_unit, taken_at=ancient), format="json")
    assert response.status_code == 400
    assert response.json() == {"taken_at": ["must fall in the years 1970 to 2199"]}


@pytest.mark.parametrize(
    "payload",
    [
        [1, 2, 3],
        "readings",
        {"unit": "first", "units": "F"},
        {"units": {"temperature": "F"}, "box_temp": "warm"},
        {"units": {"temperature": "F"}, "box_temp": "NaN"},
        {"units": ["F"], "box_temp": 3},
        {"compressor_amps": [1, 2, 3, 4]},
        {"compressor_amps": "8"},
        {"client_id": "not-a-uuid"},
        {"stage": "halfway"},
        {"sight_glass": {"clear": True}},
        {"taken_at": "yesterday"},
    ],
)
def test_malformed_requests_are_400_never_500(technician, visit_unit, payload):
    """Whatever arrives, the answer is a 4xx with a JSON body, and nothing is stored."""
    if isinstance(payload, dict):
        payload = {"unit": visit_unit.unit_id, **payload}
    response = token_client(technician).post(_url(visit_unit), payload, format="json")
    assert response.status_code == 400
    assert isinstance(response.json(), dict)
    assert response.json()
    assert not ReadingSet.objects.exists()


@pytest.mark.parametrize(
    "raw",
    [
        "{not json",
        '{"unit": UNIT, "units": {"temperature": "F"}, "box_temp": NaN}',
        '{"unit": UNIT, "units": {"temperature": "F"}, "box_temp": 1e400}',
    ],
)
def test_it_refuses_a_body_that_is_not_json(technician, visit_unit, raw):
    """A body that does not parse, or holds a number JSON cannot carry, is 400."""
    response = token_client(technician).post(
        _url(visit_unit),
        data=raw.replace("UNIT", str(visit_unit.unit_id)),
        content_type="application/json",
    )
    assert response.status_code == 400
    assert list(response.json()) in (["detail"], ["box_temp"])
    assert not ReadingSet.objects.exists()


def test_a_retry_returns_the_stored_set_and_stores_nothing(technician, visit_unit):
    """The same client_id and body twice: 201, then 200 with the same record; one row, one
    audit entry."""
    client = token_client(technician)
    body = _body(visit_unit)
    first = client.post(_url(visit_unit), body, format="json")
    second = client.post(_url(visit_unit), body, format="json")
    assert (first.status_code, second.status_code) == (201, 200)
    assert second.json()["id"] == first.json()["id"]
    assert second.json()["box_temp"] == pytest.approx(36.0, abs=1e-3)
    assert ReadingSet.objects.count() == 1
    assert AuditEntry.objects.filter(action="created", record_id=first.json()["id"]).count() == 1


def test_a_retry_with_other_values_is_a_conflict_naming_them(technician, visit_unit):
    """The same client_id with new readings is 409 naming each differing field and the
    stored set's URL; nothing is stored or changed, so the phone can tell the technician."""
    client = token_client(technician)
    body = _body(visit_unit)
    first = client.post(_url(visit_unit), body, format="json")
    changed = {**body, "box_temp": 41.0, "compressor_amps": [8.1, 8.3], "notes": "fan noisy"}
    response = client.post(_url(visit_unit), changed, format="json")
    assert response.status_code == 409, response.json()
    errors = response.json()
    stored_url = f"http://testserver{_url(visit_unit, str(first.json()['id']) + '/')}"
    assert errors["stored"] == stored_url
    assert set(errors) == {"client_id", "stored", "box_temp", "compressor_amps", "notes"}
    assert "box_temp, compressor_amps, notes" in errors["client_id"][0]
    assert stored_url in errors["client_id"][0]
    assert ReadingSet.objects.get().box_temp_c == pytest.approx((36.0 - 32) / 1.8)
    assert ReadingSet.objects.get().notes == ""


def test_a_retry_of_the_same_values_in_other_units_is_the_same_set(technician, visit_unit):
    """Values are compared as stored (SI): 36 F and 62 psig sent again as 2.2222 C and
    427.4749 kPa... within a float's last digits is the same set; a value left out of the
    retry (taken_at defaults to now) is not compared."""
    client = token_client(technician)
    body = _body(visit_unit)
    first = client.post(_url(visit_unit), body, format="json")
    again = client.post(
        _url(visit_unit),
        {
            **body,
            "units": {"temperature": "C", "temperature_difference": "F", "pressure": "kPa"},
            "box_temp": (36.0 - 32) * 5 / 9,
            "entering_air_temp": (85.0 - 32) * 5 / 9,
            "suction_line_temp": (35.0 - 32) * 5 / 9,
            "liquid_line_temp": (95.0 - 32) * 5 / 9,
            "suction_pressure": 62.0 * KPA_PER_PSI,
            "head_pressure": 235.0 * KPA_PER_PSI,
        },
        format="json",
    )
    assert again.status_code == 200, again.json()
    assert again.json()["id"] == first.json()["id"]


def test_a_retry_after_submission_still_gets_its_record(technician, visit_unit):
    """A phone that lost the answer and retries after the visit was submitted gets 200."""
    client = token_client(technician)
    body = _body(visit_unit)
    assert client.post(_url(visit_unit), body, format="json").status_code == 201
    Visit.objects.filter(pk=visit_unit.visit_id).update(status="submitted")
    assert client.post(_url(visit_unit), body, format="json").status_code == 200


def test_the_unique_constraint_settles_a_race(technician, visit_unit, monkeypatch):
    """When the early look-up misses (the other request had not committed yet), the insert
    hits the unique constraint and the stored record is returned with 200."""
    client = token_client(technician)
    body = _body(visit_unit)
    assert client.post(_url(visit_unit), body, format="json").status_code == 201
    monkeypatch.setattr(ReadingSetViewSet, "_repeat", lambda self, data: None)
    again = client.post(_url(visit_unit), body, format="json")
    assert again.status_code == 200
    assert ReadingSet.objects.count() == 1


def test_a_race_lost_with_other_values_is_a_conflict(technician, visit_unit, monkeypatch):
    """When the early look-up misses and the insert meets the stored set, a body with other
    values is still a 409 naming them, not the other request's record with 200."""
    client = token_client(technician)
    body = _body(visit_unit)
    assert client.post(_url(visit_unit), body, format="json").status_code == 201
    monkeypatch.setattr(ReadingSetViewSet, "_repeat", lambda self, data: None)
    again = client.post(_url(visit_unit), {**body, "suction_pressure": 58.0}, format="json")
    assert again.status_code == 409
    assert set(again.json()) == {"client_id", "stored", "suction_pressure"}
    assert ReadingSet.objects.get().suction_kpa_gauge == pytest.approx(62.0 * KPA_PER_PSI)


def test_a_client_id_from_another_visit_is_a_conflict(technician, visit_unit):
    """A client_id already used on another visit is 409 on client_id, not someone's record."""
    client = token_client(technician)
    body = _body(visit_unit)
    assert client.post(_url(visit_unit), body, format="json").status_code == 201
    other = VisitFactory(site=visit_unit.unit.site, technicians=[technician])
    other_vu = VisitUnitFactory(visit=other, unit=visit_unit.unit)
    response = client.post(_url(other_vu), {**body, "unit": other_vu.unit_id}, format="json")
    assert response.status_code == 409
    assert "client_id" in response.json()


def test_office_edits_after_submission_are_audited(office_user, technician, visit_unit):
    """The office corrects a reading on a submitted visit: the change (SI, old and new), who
    and when are in the visit's history, and the diagnosis is recomputed."""
    created = token_client(technician).post(_url(visit_unit), _body(visit_unit), format="json")
    reading_id = created.json()["id"]
    Visit.objects.filter(pk=visit_unit.visit_id).update(status="submitted")
    office = token_client(office_user)
    response = office.patch(
        _url(visit_unit, f"{reading_id}/"),
        {"units": {"temperature": "C"}, "box_temp": 4.0},
        format="json",
    )
    assert response.status_code == 200, response.json()
    entry = AuditEntry.objects.get(action="changed", record_id=reading_id)
    assert entry.actor == office_user
    old, new = entry.changes["box_temp_c"]
    assert old == pytest.approx(2.222, abs=1e-3)
    assert new == pytest.approx(4.0)
    history = office.get(f"/api/v1/visits/{visit_unit.visit_id}/history/").json()["results"]
    assert [(h["action"], h["actor"]) for h in history] == [
        ("created", technician.username),
        ("changed", office_user.username),
    ]
    assert response.json()["diagnosis"] is not None


def test_office_deletion_is_audited(office_user, technician, visit_unit):
    """A deleted reading set leaves its last values in the trail."""
    created = token_client(technician).post(_url(visit_unit), _body(visit_unit), format="json")
    reading_id = created.json()["id"]
    response = token_client(office_user).delete(_url(visit_unit, f"{reading_id}/"))
    assert response.status_code == 204
    entry = AuditEntry.objects.get(action="deleted", record_id=reading_id)
    assert entry.changes["box_temp_c"][1] is None
    assert not ReadingSet.objects.filter(pk=reading_id).exists()


def test_it_refuses_a_bad_units_query(technician, visit_unit):
    """?units= takes si or us only."""
    response = token_client(technician).get(_url(visit_unit) + "?units=metric")
    assert response.status_code == 400
    assert "units" in response.json()
