"""Refrigerant events: mass units on the wire, the leak rate of an addition, retries."""

from __future__ import annotations

import datetime as dt
import uuid

import pytest
import time_machine
from django.utils import timezone

from diagnostics.models import LeakRate
from fleet import services
from fleet.models import AuditEntry, RefrigerantEvent
from tests.factories import (
    RefrigerantEventFactory,
    SiteFactory,
    UnitFactory,
    VisitFactory,
    VisitUnitFactory,
)

from .conftest import token_client

pytestmark = pytest.mark.django_db

#: 1 lb in kg, exact by definition (international pound; NIST SP 811, Appendix B.8).
KG_PER_LB = 0.45359237
TODAY = dt.date(2026, 6, 15)


@pytest.fixture
def visit_unit(technician):
    """A commercial R-404A system with a 60 lb full charge on an in-progress visit."""
    site = SiteFactory()
    unit = UnitFactory(
        site=site, full_charge_kg=60 * KG_PER_LB, appliance_type="commercial_refrigeration"
    )
    visit = VisitFactory(site=site, status="in_progress", technicians=[technician])
    return VisitUnitFactory(visit=visit, unit=unit)


def _url(visit_unit) -> str:
    return f"/api/v1/visits/{visit_unit.visit_id}/refrigerant-events/"


def _added(visit_unit, pounds: float, **fields) -> dict:
    return {
        "unit": visit_unit.unit_id,
        "client_id": str(uuid.uuid4()),
        "kind": "added",
        "amount": pounds,
        "units": {"mass": "lb"},
        # a technician says which cylinder and under which certification (synthetic values)
        "cylinder": "CYL-0417",
        "certification_number": "TEST-CERT-0001",
        **fields,
    }


@time_machine.travel(dt.datetime(2026, 6, 15, 17, 0, tzinfo=dt.UTC), tick=False)
def test_an_addition_comes_back_with_its_leak_rate(technician, visit_unit):
    """60 lb full charge, 8 lb added 73 days after a 5 lb addition: annualizing 66.67 %,
    rolling average 21.67 %, over the 20 % commercial threshold, repair due in 30 days
    (40 CFR 82.152 / 84.102 definitions, worked example in docs/references.md §3;
    thresholds 82.157(c)(2) / 84.106; tolerance 0.01 %)."""
    earlier = VisitUnitFactory(
        visit=VisitFactory(site=visit_unit.unit.site),
        unit=visit_unit.unit,
    )
    RefrigerantEventFactory(
        visit_unit=earlier,
        kind="added",
        amount_kg=5 * KG_PER_LB,
        occurred_on=TODAY - dt.timedelta(days=73),
    )
    response = token_client(technician).post(
        _url(visit_unit), _added(visit_unit, 8.0, occurred_on=TODAY.isoformat()), format="json"
    )
    assert response.status_code == 201, response.json()
    body = response.json()
    assert body["amount"] == pytest.approx(8.0, abs=1e-6)
    assert body["units"]["mass"] == "lb"
    leak = body["leak_rate"]
    assert leak["annualizing_percent"] == pytest.approx(66.67, abs=0.01)
    assert leak["rolling_average_percent"] == pytest.approx(21.67, abs=0.01)
    assert leak["threshold_percent"] == pytest.approx(20.0)
    assert leak["over_threshold"] is True
    assert leak["repair_due_on"] == (TODAY + dt.timedelta(days=30)).isoformat()
    stored = RefrigerantEvent.objects.get(pk=body["id"])
    assert stored.amount_kg == pytest.approx(8 * KG_PER_LB, abs=1e-9)


def test_other_kinds_carry_no_leak_rate(technician, visit_unit):
    """A leak found is recorded without an amount and without a leak rate."""
    body = {"unit": visit_unit.unit_id, "kind": "leak_found", "notes": "oil at the flare"}
    response = token_client(technician).post(_url(visit_unit), body, format="json")
    assert response.status_code == 201, response.json()
    assert response.json()["leak_rate"] is None
    assert response.json()["amount"] is None


@pytest.mark.parametrize(
    ("body", "expected"),
    [
        ({"amount": -2.0}, {"amount": ["below the lowest amount possible (0 lb)"]}),
        ({"amount": None}, {"amount": ["an addition or recovery needs a positive amount"]}),
        (
            {"units": {"mass": "stone"}},
            {"units": {"mass": ["'stone' is not a mass unit; use one of kg, lb, oz"]}},
        ),
        ({"occurred_on": "2999-01-01"}, {"occurred_on": ["is in the future"]}),
        ({"kind": "vented"}, {"kind": ['"vented" is not a valid choice.']}),
    ],
)
def test_it_refuses_bad_events_naming_the_field(technician, visit_unit, body, expected):
    """Bad amounts, units, dates and kinds are 400s on the wire field; nothing is stored."""
    response = token_client(technician).post(
        _url(visit_unit), {**_added(visit_unit, 3.0), **body}, format="json"
    )
    assert response.status_code == 400
    assert response.json() == expected
    assert not RefrigerantEvent.objects.exists()


def test_a_retried_event_is_stored_once(technician, visit_unit):
    """The same client_id twice: 201 then 200, one row."""
    client = token_client(technician)
    body = _added(visit_unit, 2.5)
    assert client.post(_url(visit_unit), body, format="json").status_code == 201
    assert client.post(_url(visit_unit), body, format="json").status_code == 200
    assert RefrigerantEvent.objects.count() == 1


def test_the_api_refuses_to_delete_a_kept_record(office_user):
    """DELETE answers 409 naming the rule; the event and its leak rate stay. One past the
    period is deleted (204) with its trail entry."""
    visit = VisitFactory(status="submitted")
    visit_unit = VisitUnitFactory(visit=visit)
    today = timezone.localdate()
    kept = RefrigerantEventFactory(visit_unit=visit_unit, occurred_on=today - dt.timedelta(days=30))
    old = RefrigerantEventFactory(
        visit_unit=visit_unit, occurred_on=today - dt.timedelta(days=4 * 366)
    )
    services.record_leak_rates(visit_unit.unit)
    client = token_client(office_user)
    url = f"/api/v1/visits/{visit.pk}/refrigerant-events/"

    response = client.delete(f"{url}{kept.pk}/")

    assert response.status_code == 409
    assert "40 CFR 82.157(l)" in response.json()["non_field_errors"][0]
    assert LeakRate.objects.filter(event=kept).exists()
    assert client.delete(f"{url}{old.pk}/").status_code == 204
    assert AuditEntry.objects.filter(action="deleted", record_id=old.pk).count() == 1


def test_a_retried_event_with_another_amount_is_a_conflict(technician, visit_unit):
    """The same client_id with another amount and kind is 409 naming both fields and the
    stored event; the stored event keeps its amount."""
    client = token_client(technician)
    body = _added(visit_unit, 2.5)
    first = client.post(_url(visit_unit), body, format="json")
    assert first.status_code == 201
    response = client.post(
        _url(visit_unit), {**body, "kind": "recovered", "amount": 3.0}, format="json"
    )
    assert response.status_code == 409, response.json()
    errors = response.json()
    assert set(errors) == {"client_id", "stored", "kind", "amount"}
    assert errors["stored"].endswith(f"{_url(visit_unit)}{first.json()['id']}/")
    assert RefrigerantEvent.objects.get().amount_kg == pytest.approx(2.5 * KG_PER_LB)
