"""The permission matrix: every endpoint x every role x a record within / outside reach.

Expected: office may do everything; a technician reads their visits and what hangs off them,
posts readings and events, starts and submits; a manager reads their sites' records only.
Anything out of reach is 404 (never 403, which would confirm it exists); a forbidden action
on something within reach is 403; no role is 403; no credentials is 401.
"""

from __future__ import annotations

import datetime as dt
import uuid
from collections.abc import Callable
from dataclasses import dataclass, field

import pytest
from django.contrib.auth.models import User
from django.utils import timezone
from rest_framework.test import APIClient

from fleet.api.permissions import visit_in_reach
from fleet.models import Visit
from tests.factories import VisitFactory

from .conftest import World, token_client

pytestmark = pytest.mark.django_db

V1 = "/api/v1"


def _side(world: World, side: str, name: str):
    return getattr(world, f"{side}_{name}")


def _reading_body(world: World, side: str) -> dict:
    return {
        "unit": _side(world, side, "unit").pk,
        "client_id": str(uuid.uuid4()),
        "units": {"temperature": "F", "pressure": "psig"},
        "box_temp": 36.0,
        "suction_pressure": 60.0,
    }


def _visit_body(world: World, side: str) -> dict:
    start = timezone.now() + dt.timedelta(days=1)
    return {
        "reference": f"V-NEW-{uuid.uuid4().hex[:6]}",
        "site": world.own_site.pk,
        "kind": "call",
        "window_start": start.isoformat(),
        "window_end": (start + dt.timedelta(hours=2)).isoformat(),
    }


@dataclass(frozen=True)
class Case:
    """One endpoint and method; ``expect`` maps role -> (own, other) status codes."""

    name: str
    method: str
    url: Callable[[World, str], str]
    expect: dict[str, tuple[int, int]]
    body: Callable[[World, str], dict] | None = None
    visit_status: str | None = None
    extra: dict = field(default_factory=dict)


READ_ALL = {"office": (200, 200), "technician": (200, 200), "manager": (200, 200)}
READ_FLEET = {"office": (200, 200), "technician": (200, 404), "manager": (200, 404)}
READ_VISIT = {"office": (200, 200), "technician": (200, 404), "manager": (404, 404)}
WRITE_FLEET = {"office": (200, 200), "technician": (403, 404), "manager": (403, 404)}
CREATE_FLEET = {"office": (201, 201), "technician": (403, 403), "manager": (403, 403)}
OFFICE_VISIT_ACTION = {"office": (200, 200), "technician": (403, 404), "manager": (404, 404)}
TECH_VISIT_ACTION = {"office": (200, 200), "technician": (200, 404), "manager": (404, 404)}
POST_ON_VISIT = {"office": (201, 201), "technician": (201, 404), "manager": (404, 404)}
EDIT_ON_VISIT = {"office": (200, 200), "technician": (403, 404), "manager": (404, 404)}
DELETE_ON_VISIT = {"office": (204, 204), "technician": (403, 404), "manager": (404, 404)}

CASES = [
    Case("list customers", "get", lambda w, s: f"{V1}/customers/", READ_ALL),
    Case(
        "read customer",
        "get",
        lambda w, s: f"{V1}/customers/{_side(w, s, 'site').customer_id}/",
        READ_FLEET,
    ),
    Case(
        "create customer",
        "post",
        lambda w, s: f"{V1}/customers/",
        CREATE_FLEET,
        body=lambda w, s: {"name": f"New customer {uuid.uuid4().hex[:6]}"},
    ),
    Case(
        "change customer",
        "patch",
        lambda w, s: f"{V1}/customers/{_side(w, s, 'site').customer_id}/",
        WRITE_FLEET,
        body=lambda w, s: {"phone": "555-0100"},
    ),
    Case("list sites", "get", lambda w, s: f"{V1}/sites/", READ_ALL),
    Case("read site", "get", lambda w, s: f"{V1}/sites/{_side(w, s, 'site').pk}/", READ_FLEET),
    Case(
        "change site",
        "patch",
        lambda w, s: f"{V1}/sites/{_side(w, s, 'site').pk}/",
        WRITE_FLEET,
        body=lambda w, s: {"address": "1 Cold Storage Road"},
    ),
    Case("list units", "get", lambda w, s: f"{V1}/units/", READ_ALL),
    Case("read unit", "get", lambda w, s: f"{V1}/units/{_side(w, s, 'unit').pk}/", READ_FLEET),
    Case(
        "change unit",
        "patch",
        lambda w, s: f"{V1}/units/{_side(w, s, 'unit').pk}/",
        WRITE_FLEET,
        body=lambda w, s: {"description": "walk-in, back of house"},
    ),
    Case(
        "unit diagnosis",
        "get",
        lambda w, s: f"{V1}/units/{_side(w, s, 'unit').pk}/diagnosis/",
        READ_FLEET,
    ),
    Case(
        "unit trends",
        "get",
        lambda w, s: f"{V1}/units/{_side(w, s, 'unit').pk}/trends/",
        READ_FLEET,
    ),
    Case(
        "unit targets",
        "get",
        lambda w, s: f"{V1}/units/{_side(w, s, 'unit').pk}/targets/",
        READ_FLEET,
    ),
    Case(
        "unit flags", "get", lambda w, s: f"{V1}/units/{_side(w, s, 'unit').pk}/flags/", READ_FLEET
    ),
    Case("list components", "get", lambda w, s: f"{V1}/components/", READ_ALL),
    Case(
        "read component",
        "get",
        lambda w, s: f"{V1}/components/{_side(w, s, 'component').pk}/",
        READ_FLEET,
    ),
    Case(
        "change component",
        "patch",
        lambda w, s: f"{V1}/components/{_side(w, s, 'component').pk}/",
        WRITE_FLEET,
        body=lambda w, s: {"reason": "checked with a meter"},
    ),
    Case(
        "delete component",
        "delete",
        lambda w, s: f"{V1}/components/{_side(w, s, 'component').pk}/",
        {"office": (204, 204), "technician": (403, 404), "manager": (403, 404)},
    ),
    Case("list refrigerants", "get", lambda w, s: f"{V1}/refrigerants/", READ_ALL),
    Case("read refrigerant", "get", lambda w, s: f"{V1}/refrigerants/R-404A/", READ_ALL),
    Case(
        "saturation",
        "get",
        lambda w, s: f"{V1}/refrigerants/R-134a/saturation/?pressure=100&pressure_unit=kPa_abs",
        READ_ALL,
    ),
    Case(
        "saturation table",
        "get",
        lambda w, s: f"{V1}/refrigerants/R-448A/saturation-table/",
        READ_ALL,
    ),
    Case(
        "list visits",
        "get",
        lambda w, s: f"{V1}/visits/",
        {"office": (200, 200), "technician": (200, 200), "manager": (200, 200)},
    ),
    Case(
        "create visit",
        "post",
        lambda w, s: f"{V1}/visits/",
        CREATE_FLEET,
        body=_visit_body,
    ),
    Case("read visit", "get", lambda w, s: f"{V1}/visits/{_side(w, s, 'visit').pk}/", READ_VISIT),
    Case(
        "change visit",
        "patch",
        lambda w, s: f"{V1}/visits/{_side(w, s, 'visit').pk}/",
        OFFICE_VISIT_ACTION,
        body=lambda w, s: {"reported_problem": "box warm since Monday"},
    ),
    Case(
        "visit history",
        "get",
        lambda w, s: f"{V1}/visits/{_side(w, s, 'visit').pk}/history/",
        READ_VISIT,
    ),
    Case(
        "start visit",
        "post",
        lambda w, s: f"{V1}/visits/{_side(w, s, 'visit').pk}/start/",
        TECH_VISIT_ACTION,
        visit_status="scheduled",
    ),
    Case(
        "submit visit",
        "post",
        lambda w, s: f"{V1}/visits/{_side(w, s, 'visit').pk}/submit/",
        TECH_VISIT_ACTION,
        body=lambda w, s: {"work_summary": "cleaned the condenser"},
    ),
    Case(
        "review visit",
        "post",
        lambda w, s: f"{V1}/visits/{_side(w, s, 'visit').pk}/review/",
        OFFICE_VISIT_ACTION,
        body=lambda w, s: {"decision": "accept"},
        visit_status="submitted",
    ),
    Case(
        "cancel visit",
        "post",
        lambda w, s: f"{V1}/visits/{_side(w, s, 'visit').pk}/cancel/",
        OFFICE_VISIT_ACTION,
        body=lambda w, s: {"note": "customer closed"},
    ),
    Case(
        "list reading sets",
        "get",
        lambda w, s: f"{V1}/visits/{_side(w, s, 'visit').pk}/reading-sets/",
        READ_VISIT,
    ),
    Case(
        "read reading set",
        "get",
        lambda w, s: (
            f"{V1}/visits/{_side(w, s, 'visit').pk}/reading-sets/{_side(w, s, 'reading').pk}/"
        ),
        READ_VISIT,
    ),
    Case(
        "post reading set",
        "post",
        lambda w, s: f"{V1}/visits/{_side(w, s, 'visit').pk}/reading-sets/",
        POST_ON_VISIT,
        body=_reading_body,
    ),
    Case(
        "change reading set",
        "patch",
        lambda w, s: (
            f"{V1}/visits/{_side(w, s, 'visit').pk}/reading-sets/{_side(w, s, 'reading').pk}/"
        ),
        EDIT_ON_VISIT,
        body=lambda w, s: {"notes": "suction read twice"},
    ),
    Case(
        "delete reading set",
        "delete",
        lambda w, s: (
            f"{V1}/visits/{_side(w, s, 'visit').pk}/reading-sets/{_side(w, s, 'reading').pk}/"
        ),
        DELETE_ON_VISIT,
    ),
    Case(
        "list refrigerant events",
        "get",
        lambda w, s: f"{V1}/visits/{_side(w, s, 'visit').pk}/refrigerant-events/",
        READ_VISIT,
    ),
    Case(
        "post refrigerant event",
        "post",
        lambda w, s: f"{V1}/visits/{_side(w, s, 'visit').pk}/refrigerant-events/",
        POST_ON_VISIT,
        body=lambda w, s: {
            "unit": _side(w, s, "unit").pk,
            "client_id": str(uuid.uuid4()),
            "kind": "leak_found",
            "notes": "oil at the flare nut",
        },
    ),
    Case(
        "change refrigerant event",
        "patch",
        lambda w, s: (
            f"{V1}/visits/{_side(w, s, 'visit').pk}/refrigerant-events/{_side(w, s, 'event').pk}/"
        ),
        EDIT_ON_VISIT,
        body=lambda w, s: {"notes": "found with bubbles"},
    ),
]


def _call(client: APIClient, case: Case, world: World, side: str):
    body = case.body(world, side) if case.body else None
    return getattr(client, case.method)(case.url(world, side), body, format="json")


@pytest.mark.parametrize("role", ["office", "technician", "manager"])
@pytest.mark.parametrize("case", CASES, ids=lambda c: c.name)
def test_permission_matrix(world, case, role):
    """Each role gets the expected status on a record within its reach and one outside it."""
    if case.visit_status:
        Visit.objects.update(status=case.visit_status)
    client = world.client(role)
    got = (
        _call(client, case, world, "own").status_code,
        _call(client, case, world, "other").status_code,
    )
    assert got == case.expect[role], f"{case.name} as {role}"


@pytest.mark.parametrize("case", CASES, ids=lambda c: c.name)
def test_it_refuses_a_user_with_no_role(world, outsider, case):
    """A signed-in user in no role group is refused (403) everywhere."""
    assert _call(token_client(outsider), case, world, "own").status_code == 403


@pytest.mark.parametrize("case", CASES, ids=lambda c: c.name)
def test_it_asks_anonymous_callers_to_sign_in(world, case):
    """Without credentials every endpoint answers 401."""
    assert _call(APIClient(), case, world, "own").status_code == 401


def test_lists_hold_only_what_is_within_reach(world):
    """The technician's and the manager's lists hold their own records, never the others'."""
    tech = world.client("technician")
    manager = world.client("manager")
    office = world.client("office")
    assert [u["id"] for u in tech.get(f"{V1}/units/").json()["results"]] == [world.own_unit.pk]
    assert [s["id"] for s in manager.get(f"{V1}/sites/").json()["results"]] == [world.own_site.pk]
    assert [v["id"] for v in tech.get(f"{V1}/visits/").json()["results"]] == [world.own_visit.pk]
    assert manager.get(f"{V1}/visits/").json()["count"] == 0
    assert tech.get(f"{V1}/components/").json()["count"] == 1
    assert office.get(f"{V1}/units/").json()["count"] == 2


def test_a_technician_cannot_write_after_submission(world):
    """Once the visit is submitted, the technician's posts are refused with 409 and the
    reason; the office may still add to it (and the addition is audited)."""
    Visit.objects.filter(pk=world.own_visit.pk).update(status="submitted")
    url = f"{V1}/visits/{world.own_visit.pk}/reading-sets/"
    tech = world.client("technician").post(url, _reading_body(world, "own"), format="json")
    assert tech.status_code == 409
    assert "submitted" in tech.json()["visit"][0]
    office = world.client("office").post(url, _reading_body(world, "own"), format="json")
    assert office.status_code == 201


@pytest.mark.parametrize(
    "url",
    [
        f"{V1}/units/99999999999999999999/",
        f"{V1}/units/99999999999999999999/diagnosis/",
        f"{V1}/visits/99999999999999999999/reading-sets/",
        f"{V1}/visits/1/reading-sets/99999999999999999999/",
        f"{V1}/units/?site=99999999999999999999",
        f"{V1}/visits/?date=9999-12-31",
        f"{V1}/visits/?page=abc",
        f"{V1}/refrigerants/%00/",
    ],
)
def test_absurd_ids_and_queries_are_4xx_never_500(world, url):
    """Ids past any integer column, odd dates and pages: a 4xx or an empty answer."""
    response = world.client("office").get(url)
    assert response.status_code in (200, 400, 404)
    if response.status_code == 200:
        assert response.json()["count"] == 0


def test_the_reach_of_a_visits_records_agrees_with_the_visits_visible_to_a_user(world, outsider):
    """``visit_in_reach`` (the visit's units with their visit, one query) reaches exactly
    the visits that ``Visit.objects.visible_to`` (the query set every list uses) holds, for every
    role, and brings each visit's units with it; a visit without units is reached too,
    with none."""
    superuser = User.objects.create_superuser("root", password="x")  # no role group: office
    users = [world.office, world.technician, world.other_technician, world.manager, outsider]
    empty = VisitFactory(site=world.own_site, status="in_progress", technicians=[world.technician])
    for user in [*users, superuser]:
        for visit in (world.own_visit, world.other_visit, empty):
            found = visit_in_reach(User.objects.get(pk=user.pk), visit.pk)
            visible = (
                Visit.objects.visible_to(User.objects.get(pk=user.pk)).filter(pk=visit.pk).exists()
            )
            assert (found is not None) is visible, (user.username, visit.reference)
            if found is not None:
                got, units = found
                assert got.pk == visit.pk
                assert [vu.pk for vu in units] == list(
                    visit.visit_units.order_by("id").values_list("pk", flat=True)
                )
                assert all(vu.unit.site.pk == visit.site_id for vu in units)
                assert all(vu.visit is got for vu in units)
    assert visit_in_reach(User.objects.get(pk=world.technician.pk), empty.pk)[1] == []
