"""Parts a technician fits on a visit from the phone: the new part with its printed rating,
the part it replaces marked removed that day, once per client_id, both in the trail. Ratings
and names are synthetic test inputs; a run capacitor's band is 45 uF +/- 6 % (EIA-456-A's
marking, docs/references.md §4)."""

from __future__ import annotations

import datetime as dt
import uuid
import zoneinfo

import pytest
from django.utils import timezone

from fleet.models import AuditEntry, Component
from tests.factories import (
    ComponentFactory,
    SiteFactory,
    UnitFactory,
    VisitFactory,
    VisitUnitFactory,
)

from .conftest import token_client

pytestmark = pytest.mark.django_db


@pytest.fixture
def on_the_roof(technician):
    """An in-progress visit at a site far from the server's zone, one unit with an old run
    capacitor recorded on it."""
    site = SiteFactory(time_zone="Pacific/Auckland")
    visit = VisitFactory(site=site, status="in_progress", technicians=[technician])
    unit = UnitFactory(site=site)
    VisitUnitFactory(visit=visit, unit=unit)
    old = ComponentFactory(unit=unit, installed_on=dt.date(2024, 5, 1))
    return visit, unit, old


def _url(visit) -> str:
    return f"/api/v1/visits/{visit.pk}/parts-fitted/"


def _new_capacitor(unit, **fields):
    return {
        "client_id": str(uuid.uuid4()),
        "unit": unit.pk,
        "kind": "run_capacitor",
        "rated_uf": 45.0,
        "tolerance_pct": 6.0,
        "rating_volts": 440,
        "reason": "measured 31 uF against 45 uF rated",
        **fields,
    }


def test_a_replacement_stores_the_part_and_retires_the_old_one(technician, on_the_roof):
    visit, unit, old = on_the_roof
    response = token_client(technician).post(
        _url(visit), _new_capacitor(unit, replaces=old.pk), format="json"
    )

    assert response.status_code == 201, response.json()
    body = response.json()
    today_there = timezone.localdate(timezone=zoneinfo.ZoneInfo("Pacific/Auckland"))
    assert body["installed_on"] == today_there.isoformat()
    assert body["visit"] == visit.pk
    assert (body["rating_uf_min"], body["rating_uf_max"]) == pytest.approx((42.3, 47.7))
    new = Component.objects.get(pk=body["id"])
    assert new.changed_on_visit == visit
    old.refresh_from_db()
    assert old.removed_on == today_there
    actions = sorted(AuditEntry.objects.filter(actor=technician).values_list("action", "record_id"))
    assert actions == sorted([("created", new.pk), ("changed", old.pk)])
    listed = token_client(technician).get(_url(visit)).json()["results"]
    assert [part["id"] for part in listed] == [new.pk]


def test_a_retry_stores_nothing_more(technician, on_the_roof):
    visit, unit, old = on_the_roof
    client = token_client(technician)
    body = _new_capacitor(unit, replaces=old.pk)

    first = client.post(_url(visit), body, format="json")
    again = client.post(_url(visit), body, format="json")

    assert (first.status_code, again.status_code) == (201, 200)
    assert again.json()["id"] == first.json()["id"]
    assert Component.objects.filter(unit=unit).count() == 2
    assert AuditEntry.objects.filter(actor=technician).count() == 2


def test_a_retry_with_another_kind_is_a_conflict(technician, on_the_roof):
    visit, unit, _old = on_the_roof
    client = token_client(technician)
    body = _new_capacitor(unit)
    assert client.post(_url(visit), body, format="json").status_code == 201

    changed = client.post(
        _url(visit), {**body, "kind": "start_capacitor", "tolerance_pct": 10.0}, format="json"
    )

    assert changed.status_code == 409
    assert set(changed.json()) == {"client_id", "kind"}


@pytest.mark.parametrize(
    ("change", "field"),
    [
        ({"unit": 999_999}, "unit"),
        ({"replaces": 999_999}, "replaces"),
        ({"rating_uf_min": 10.0, "rating_uf_max": 20.0}, "rated_uf"),
        ({"kind": "flux_capacitor"}, "kind"),
    ],
)
def test_bad_input_is_400_naming_the_field(technician, on_the_roof, change, field):
    visit, unit, old = on_the_roof
    response = token_client(technician).post(
        _url(visit), {**_new_capacitor(unit, replaces=old.pk), **change}, format="json"
    )
    assert response.status_code == 400
    assert field in response.json()
    old.refresh_from_db()
    assert old.removed_on is None
    assert Component.objects.filter(unit=unit).count() == 1


def test_a_part_already_removed_cannot_be_replaced_again(technician, on_the_roof):
    visit, unit, old = on_the_roof
    Component.objects.filter(pk=old.pk).update(removed_on=dt.date(2025, 3, 1))
    response = token_client(technician).post(
        _url(visit), _new_capacitor(unit, replaces=old.pk), format="json"
    )
    assert response.status_code == 400
    assert "2025-03-01" in response.json()["replaces"][0]


def test_a_part_of_another_unit_is_not_replaced(technician, on_the_roof):
    visit, unit, _old = on_the_roof
    elsewhere = ComponentFactory(unit=UnitFactory(site=unit.site))
    response = token_client(technician).post(
        _url(visit), _new_capacitor(unit, replaces=elsewhere.pk), format="json"
    )
    assert response.status_code == 400
    assert unit.tag in response.json()["replaces"][0]


def test_after_submission_the_technician_is_told_409(technician, on_the_roof):
    visit, unit, _old = on_the_roof
    type(visit).objects.filter(pk=visit.pk).update(status="submitted")
    response = token_client(technician).post(_url(visit), _new_capacitor(unit), format="json")
    assert response.status_code == 409
    assert "visit" in response.json()


def test_a_visit_out_of_reach_is_404(other_technician, on_the_roof):
    visit, unit, _old = on_the_roof
    response = token_client(other_technician).post(_url(visit), _new_capacitor(unit), format="json")
    assert response.status_code == 404
    assert not Component.objects.filter(changed_on_visit=visit).exists()


def test_the_list_asks_a_fixed_number_of_queries(
    technician, on_the_roof, django_assert_max_num_queries
):
    visit, unit, _old = on_the_roof
    client = token_client(technician)
    for _ in range(3):
        client.post(_url(visit), _new_capacitor(unit), format="json")
    with django_assert_max_num_queries(6) as few:
        client.get(_url(visit))
    asked = len(few)
    for _ in range(5):
        client.post(_url(visit), _new_capacitor(unit), format="json")
    with django_assert_max_num_queries(asked):
        assert len(client.get(_url(visit)).json()["results"]) == 8
