"""Two posts of the same client_id at the same instant store one record (PostgreSQL).

Each thread has its own database connection and its own transaction, as two gunicorn
workers would. A barrier holds both requests after their look-up for a stored record and
before the insert, so both miss it and both insert: the unique constraint must settle it.
"""

from __future__ import annotations

import threading
import uuid

import pytest
from django.db import connection

from fleet.api.views import ReadingSetViewSet, RefrigerantEventViewSet
from fleet.models import ReadingSet, RefrigerantEvent
from tests.factories import SiteFactory, UnitFactory, UserFactory, VisitFactory, VisitUnitFactory

from .conftest import token_client

pytestmark = [
    pytest.mark.django_db(transaction=True, serialized_rollback=True),
    pytest.mark.skipif(
        connection.vendor != "postgresql",
        reason="SQLite serialises all writers with one file lock, so there is no race to "
        "settle; `make test` runs this on a throwaway PostgreSQL",
    ),
]


def _race(monkeypatch, viewset, url: str, body: dict, user) -> list[int]:
    """Post ``body`` from two threads at once; their status codes."""
    barrier = threading.Barrier(2, timeout=30)
    original = viewset._repeat

    def look_then_wait(self, data):
        found = original(self, data)
        barrier.wait()
        return found

    monkeypatch.setattr(viewset, "_repeat", look_then_wait)
    codes: list[int] = []
    errors: list[BaseException] = []

    def post() -> None:
        try:
            codes.append(token_client(user).post(url, body, format="json").status_code)
        except BaseException as exc:  # surfaced below; a thread cannot fail the test itself
            errors.append(exc)
        finally:
            connection.close()

    threads = [threading.Thread(target=post) for _ in range(2)]
    for thread in threads:
        thread.start()
    for thread in threads:
        thread.join(timeout=60)
    assert not errors, errors
    return sorted(codes)


@pytest.fixture
def visit_unit():
    technician = UserFactory(username="racer", role="technician")
    site = SiteFactory()
    visit = VisitFactory(site=site, status="in_progress", technicians=[technician])
    return VisitUnitFactory(visit=visit, unit=UnitFactory(site=site)), technician


def test_two_concurrent_reading_sets_store_one(monkeypatch, visit_unit):
    """Both posts answer (201 and 200), and exactly one row holds the client_id."""
    vu, technician = visit_unit
    client_id = str(uuid.uuid4())
    body = {
        "unit": vu.unit_id,
        "client_id": client_id,
        "units": {"temperature": "F", "pressure": "psig"},
        "box_temp": 36.0,
        "suction_pressure": 62.0,
    }
    url = f"/api/v1/visits/{vu.visit_id}/reading-sets/"
    assert _race(monkeypatch, ReadingSetViewSet, url, body, technician) == [200, 201]
    assert ReadingSet.objects.filter(client_id=client_id).count() == 1


def test_two_concurrent_refrigerant_events_store_one(monkeypatch, visit_unit):
    """The same for a refrigerant addition (and its leak rate is computed once)."""
    vu, technician = visit_unit
    client_id = str(uuid.uuid4())
    body = {
        "unit": vu.unit_id,
        "client_id": client_id,
        "kind": "added",
        "amount": 1.5,
        "units": {"mass": "lb"},
        "cylinder": "CYL-0417",  # what a technician must give (synthetic values)
        "certification_number": "TEST-CERT-0001",
    }
    url = f"/api/v1/visits/{vu.visit_id}/refrigerant-events/"
    assert _race(monkeypatch, RefrigerantEventViewSet, url, body, technician) == [200, 201]
    assert RefrigerantEvent.objects.filter(client_id=client_id).count() == 1
