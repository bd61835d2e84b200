"""A whole visit through the API alone: the office schedules it, the technician's phone
does the work with a token, the office reviews it. Readings are synthetic test inputs."""

from __future__ import annotations

import datetime as dt
import uuid

import pytest
from django.utils import timezone
from rest_framework.test import APIClient

from tests.factories import ComponentFactory, SiteFactory, UnitFactory

from .conftest import token_client

pytestmark = pytest.mark.django_db


def test_a_technician_does_a_whole_visit_and_the_office_reviews_it(office_user, technician):
    """List today's visits, start, read the unit, post as-found readings (diagnosis back),
    add refrigerant (leak rate back), post as-left readings, submit; the office sees it in
    its queue, reads the results and accepts it; afterwards the phone can post nothing."""
    site = SiteFactory(name="Harbor Deli", elevation_m=180.0)
    unit = UnitFactory(site=site, tag="WIC-1", full_charge_kg=9.0)
    ComponentFactory(unit=unit, kind="run_capacitor", rating_uf_min=42.3, rating_uf_max=47.7)
    office = token_client(office_user)
    start = timezone.now().replace(microsecond=0)
    scheduled = office.post(
        "/api/v1/visits/",
        {
            "reference": "V-E2E-1",
            "site": site.pk,
            "kind": "planned",
            "window_start": start.isoformat(),
            "window_end": (start + dt.timedelta(hours=3)).isoformat(),
            "technicians": [technician.pk],
            "units": [unit.pk],
        },
        format="json",
    )
    assert scheduled.status_code == 201, scheduled.json()

    # The phone signs in and works only with its token from here on.
    signed_in = APIClient().post(
        "/api/v1/auth/token/", {"username": "tech1", "password": "test-pass-123"}, format="json"
    )
    phone = APIClient()
    phone.credentials(HTTP_AUTHORIZATION=f"Token {signed_in.json()['token']}")

    today = timezone.localdate().isoformat()
    visits = phone.get(f"/api/v1/visits/?mine=true&date={today}").json()["results"]
    assert [v["reference"] for v in visits] == ["V-E2E-1"]
    visit_id = visits[0]["id"]
    assert phone.post(f"/api/v1/visits/{visit_id}/start/").json()["status"] == "in_progress"

    nameplate = phone.get(f"/api/v1/units/{visits[0]['units'][0]}/").json()
    assert (nameplate["tag"], nameplate["refrigerant"]) == ("WIC-1", "R-404A")
    assert nameplate["units"]["mass"] == "lb"

    readings = f"/api/v1/visits/{visit_id}/reading-sets/"
    found = phone.post(
        readings,
        {
            "unit": unit.pk,
            "client_id": str(uuid.uuid4()),
            "stage": "as_found",
            "units": {"temperature": "F", "pressure": "psig"},
            "box_temp": 41.0,
            "entering_air_temp": 88.0,
            "suction_pressure": 48.0,
            "suction_line_temp": 45.0,
            "head_pressure": 205.0,
            "liquid_line_temp": 92.0,
            "compressor_amps": [7.2],
            "supply_volts": [229.0],
            "run_capacitor_uf": 44.8,
            "sight_glass": "bubbles",
        },
        format="json",
    )
    assert found.status_code == 201, found.json()
    assert 0 <= found.json()["diagnosis"]["score"] <= 100

    added = phone.post(
        f"/api/v1/visits/{visit_id}/refrigerant-events/",
        {
            "unit": unit.pk,
            "client_id": str(uuid.uuid4()),
            "kind": "added",
            "amount": 2.0,
            "units": {"mass": "lb"},
            "cylinder": "CYL-0417",  # synthetic
            "certification_number": "TEST-CERT-0001",
        },
        format="json",
    )
    assert added.status_code == 201, added.json()
    assert added.json()["leak_rate"] is not None
    assert added.json()["cylinder"] == "CYL-0417"

    left = phone.post(
        readings,
        {
            "unit": unit.pk,
            "client_id": str(uuid.uuid4()),
            "stage": "as_left",
            "units": {"temperature": "F", "pressure": "psig"},
            "box_temp": 37.0,
            "entering_air_temp": 88.0,
            "suction_pressure": 60.0,
            "suction_line_temp": 34.0,
            "head_pressure": 240.0,
            "liquid_line_temp": 95.0,
            "sight_glass": "clear",
        },
        format="json",
    )
    assert left.status_code == 201, left.json()
    submitted = phone.post(
        f"/api/v1/visits/{visit_id}/submit/", {"work_summary": "Added 2 lb R-404A"}, format="json"
    )
    assert submitted.json()["status"] == "submitted"

    queue = office.get("/api/v1/visits/?status=submitted").json()["results"]
    assert [v["id"] for v in queue] == [visit_id]
    stages = [r["stage"] for r in office.get(readings).json()["results"]]
    assert sorted(stages) == ["as_found", "as_left"]
    latest = office.get(f"/api/v1/units/{unit.pk}/diagnosis/").json()
    assert latest["reading_set"] == found.json()["id"]
    reviewed = office.post(
        f"/api/v1/visits/{visit_id}/review/", {"decision": "accept"}, format="json"
    )
    assert reviewed.json()["status"] == "reviewed"

    late = phone.post(readings, {"unit": unit.pk, "notes": "forgot one"}, format="json")
    assert late.status_code == 409
    history = token_client(office_user).get(f"/api/v1/visits/{visit_id}/history/").json()
    assert [h["action"] for h in history["results"]] == [
        "created",
        "moved",
        "created",
        "created",
        "created",
        "moved",
        "moved",
    ]
