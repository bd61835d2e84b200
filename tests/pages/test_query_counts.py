"""No N+1: every page costs the same number of queries for one object as for many."""

from __future__ import annotations

import pytest
from django.urls import reverse

from tests.factories import ReadingSetFactory, UnitFactory, VisitUnitFactory

from .conftest import build_world, over_limit_addition, signed_in, store_diagnosis

pytestmark = pytest.mark.django_db

#: page -> the most queries it may cost (session, user and role lookups included).
BOUNDS = {
    "schedule": 10,  # the filter's customers and technicians
    "review-queue": 11,
    "attention": 10,  # the filter's customers, the page's flags read in full
    "maintenance": 11,  # the filter's customers, the page's units, those left out
    "sites": 4,
    "site": 9,
    "unit": 14,  # with its documents (one query for all of them)
    "visit": 11,
    "reading": 6,  # one reading set with its diagnosis, visit, site, unit
}


def _url(name: str, world) -> str:
    if name == "site":
        return reverse("fleet:site", args=[world.site.pk])
    if name == "unit":
        return reverse("fleet:unit", args=[world.unit.pk])
    if name == "visit":
        return reverse("fleet:visit", args=[world.submitted.pk])
    if name == "reading":
        reading = world.submitted.visit_units.get(unit=world.unit).reading_sets.get()
        return reverse("fleet:reading", args=[reading.pk])
    return reverse(f"fleet:{name}")


def _grow_visit(world, extra: int) -> None:
    """More units on the submitted visit, each with readings, a diagnosis and a leak rate."""
    for _ in range(extra):
        covered = VisitUnitFactory(visit=world.submitted, unit=UnitFactory(site=world.site))
        store_diagnosis(ReadingSetFactory(visit_unit=covered))
        over_limit_addition(covered, world.leak.event.occurred_on)


@pytest.mark.parametrize("extra", [0, 4])
@pytest.mark.parametrize("name", BOUNDS)
def test_it_costs_the_same_queries_for_one_and_many(
    name, extra, office_user, manager, technician, other_technician, django_assert_max_num_queries
):
    """The page stays within one fixed bound whether the fleet holds one of each record or
    several (sites, units, visits, readings, flags, leak rates)."""
    world = build_world(technician, other_technician, manager, extra=extra)
    _grow_visit(world, extra)
    client = signed_in(manager if name in ("sites", "site") else office_user)
    url = _url(name, world)
    with django_assert_max_num_queries(BOUNDS[name]):
        response = client.get(url)
    assert response.status_code == 200
