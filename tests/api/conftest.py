"""API fixtures: a small world with something of each kind inside and outside each role's
reach, and clients signed in by token as each role. Values are synthetic test inputs."""

from __future__ import annotations

import uuid
from dataclasses import dataclass

import pytest
from django.core.cache import cache
from django.utils import timezone
from rest_framework.authtoken.models import Token
from rest_framework.test import APIClient

from diagnostics.models import Diagnosis
from fleet.models import Site, Unit, Visit
from tests.factories import (
    ComponentFactory,
    ReadingSetFactory,
    RefrigerantEventFactory,
    SiteFactory,
    UnitFactory,
    UserFactory,
    VisitFactory,
    VisitUnitFactory,
)


@pytest.fixture(autouse=True)
def _fresh_throttles():
    """Throttle counters live in the cache; each test starts with none spent."""
    cache.clear()
    yield
    cache.clear()


def token_client(user) -> APIClient:
    client = APIClient()
    token, _ = Token.objects.get_or_create(user=user)
    client.credentials(HTTP_AUTHORIZATION=f"Token {token.key}")
    return client


@pytest.fixture
def cooler_visit_unit(technician):
    """An R-404A walk-in cooler at sea level on an in-progress visit of ``technician``."""
    site = SiteFactory(elevation_m=0.0)
    visit = VisitFactory(site=site, status="in_progress", technicians=[technician])
    return VisitUnitFactory(visit=visit, unit=UnitFactory(site=site))


def post_reading_set(client, visit_unit, **fields):
    """POST a reading set for ``visit_unit`` with a fresh client_id."""
    return client.post(
        f"/api/v1/visits/{visit_unit.visit_id}/reading-sets/",
        {"unit": visit_unit.unit_id, "client_id": str(uuid.uuid4()), **fields},
        format="json",
    )


@dataclass
class World:
    """``own_*`` is within the technician's and the manager's reach; ``other_*`` is not."""

    office: object
    technician: object
    other_technician: object
    manager: object
    own_site: Site
    other_site: Site
    own_unit: Unit
    other_unit: Unit
    own_visit: Visit
    other_visit: Visit
    own_component: object
    other_component: object
    own_reading: object
    other_reading: object
    own_event: object
    other_event: object

    def client(self, role: str) -> APIClient:
        return token_client(getattr(self, role))


def _side(technician, name: str):
    site = SiteFactory(name=f"{name} site", elevation_m=0.0)
    unit = UnitFactory(site=site, tag=f"{name.upper()}-1")
    visit = VisitFactory(site=site, status="in_progress", technicians=[technician])
    visit_unit = VisitUnitFactory(visit=visit, unit=unit)
    component = ComponentFactory(unit=unit)
    reading = ReadingSetFactory(visit_unit=visit_unit)
    Diagnosis.objects.create(
        reading_set=reading,
        algorithm_version="synthetic",
        score=88.0,
        computed_at=timezone.now(),
        condensing_c=40.0,
        condenser_split_k=15.0,
    )
    event = RefrigerantEventFactory(visit_unit=visit_unit, kind="leak_found", amount_kg=None)
    return site, unit, visit, component, reading, event


@pytest.fixture
def world(office_user, technician, other_technician, manager) -> World:
    own = _side(technician, "own")
    other = _side(other_technician, "other")
    own[0].managers.add(manager)
    return World(
        office=office_user,
        technician=technician,
        other_technician=other_technician,
        manager=manager,
        own_site=own[0],
        other_site=other[0],
        own_unit=own[1],
        other_unit=other[1],
        own_visit=own[2],
        other_visit=other[2],
        own_component=own[3],
        other_component=other[3],
        own_reading=own[4],
        other_reading=other[4],
        own_event=own[5],
        other_event=other[5],
    )


@pytest.fixture
def outsider(db):
    """Signed in, but in no role group."""
    return UserFactory(username="nobody")
