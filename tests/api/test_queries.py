"""List endpoints answer in a fixed number of queries whatever the page holds (no N+1)."""

from __future__ import annotations

from collections.abc import Callable

import pytest
from django.db import connection
from django.test.utils import CaptureQueriesContext
from django.utils import timezone

from diagnostics.models import Diagnosis, LeakRate
from fleet import audit
from tests.factories import (
    ComponentFactory,
    CustomerFactory,
    ReadingSetFactory,
    RefrigerantEventFactory,
    SiteFactory,
    UnitFactory,
    UserFactory,
    VisitFactory,
    VisitUnitFactory,
    document_for,
)

from .conftest import token_client

pytestmark = pytest.mark.django_db

MANY = 6


def _visit_with_unit(technician):
    visit = VisitFactory(technicians=[technician])
    VisitUnitFactory(visit=visit)
    return visit


class Fleet:
    """Adds one more record of a kind, reachable by the technician, and says where to list it."""

    def __init__(self, technician) -> None:
        self.technician = technician
        self.visit = _visit_with_unit(technician)
        self.visit_unit = self.visit.visit_units.get()
        self.site = self.visit.site

    def customer(self) -> str:
        CustomerFactory()
        return "/api/v1/customers/"

    def site_(self) -> str:
        SiteFactory(customer=self.site.customer).managers.add(UserFactory(role="manager"))
        return "/api/v1/sites/"

    def unit(self) -> str:
        UnitFactory(site=self.site)
        return "/api/v1/units/"

    def component(self) -> str:
        ComponentFactory(unit=self.visit_unit.unit)
        return "/api/v1/components/"

    def visit_(self) -> str:
        visit = _visit_with_unit(self.technician)
        visit.technicians.add(UserFactory(role="technician"))
        return "/api/v1/visits/"

    def reading_set(self) -> str:
        reading = ReadingSetFactory(visit_unit=self.visit_unit, created_by=self.technician)
        Diagnosis.objects.create(
            reading_set=reading,
            algorithm_version="synthetic",
            score=90,
            computed_at=timezone.now(),
            document=document_for(),
        )
        return f"/api/v1/visits/{self.visit.pk}/reading-sets/"

    def refrigerant_event(self) -> str:
        event = RefrigerantEventFactory(visit_unit=self.visit_unit, created_by=self.technician)
        LeakRate.objects.create(event=event, rule_set="synthetic", computed_at=timezone.now())
        return f"/api/v1/visits/{self.visit.pk}/refrigerant-events/"

    def history(self) -> str:
        audit.record_created(ReadingSetFactory(visit_unit=self.visit_unit), by=self.technician)
        return f"/api/v1/visits/{self.visit.pk}/history/"


KINDS: dict[str, Callable[[Fleet], str]] = {
    "customers": Fleet.customer,
    "sites": Fleet.site_,
    "units": Fleet.unit,
    "components": Fleet.component,
    "visits": Fleet.visit_,
    "reading sets": Fleet.reading_set,
    "refrigerant events": Fleet.refrigerant_event,
    "visit history": Fleet.history,
}


def _count(client, url: str) -> int:
    with CaptureQueriesContext(connection) as queries:
        response = client.get(url)
    assert response.status_code == 200, response.content
    return len(queries)


#: What a technician's lists grow with (the rest of the fleet stays out of their reach).
TECHNICIAN_KINDS = ["visits", "reading sets", "refrigerant events", "visit history"]


@pytest.mark.parametrize(
    ("role", "kind"),
    [("office_user", kind) for kind in KINDS] + [("technician", kind) for kind in TECHNICIAN_KINDS],
)
def test_a_list_costs_the_same_for_one_record_as_for_many(
    request, technician, role, kind, django_assert_max_num_queries
):
    """The query count of a list with one record bounds the count with many more."""
    fleet = Fleet(technician)
    client = token_client(request.getfixturevalue(role))
    url = KINDS[kind](fleet)
    one = _count(client, url)
    for _ in range(MANY):
        KINDS[kind](fleet)
    with django_assert_max_num_queries(one):
        response = client.get(url)
    assert response.json()["count"] > MANY


def test_refrigerants_list_in_fixed_queries(technician, django_assert_max_num_queries):
    """The refrigerant catalogue (21 rows, glide from cached tables) in a handful of queries."""
    client = token_client(technician)
    client.get("/api/v1/refrigerants/")  # warm the saturation tables
    with django_assert_max_num_queries(5):
        assert client.get("/api/v1/refrigerants/?page_size=100").status_code == 200
