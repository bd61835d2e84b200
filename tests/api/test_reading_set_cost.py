"""What a reading-set post costs: the statements it sends, a fixed number whatever the
visit holds."""

from __future__ import annotations

import uuid

import pytest
from django.db import connection
from django.test.utils import CaptureQueriesContext

from fleet.models import AuditEntry, ReadingSet
from tests.factories import ComponentFactory, UnitFactory, VisitUnitFactory

pytestmark = pytest.mark.django_db

#: Transaction bookkeeping, which pytest-django's own transaction around each test alters.
_BOOKKEEPING = ("SAVEPOINT", "RELEASE SAVEPOINT", "ROLLBACK", "BEGIN", "COMMIT")


def _statements(client, url: str, body: dict) -> tuple[int, list[str]]:
    with CaptureQueriesContext(connection) as queries:
        response = client.post(url, body, format="json")
    sql = [q["sql"] for q in queries.captured_queries]
    return response.status_code, [s for s in sql if not s.upper().startswith(_BOOKKEEPING)]


def _body(world) -> dict:
    """Synthetic as-found readings in US units."""
    return {
        "unit": world.own_unit.pk,
        "client_id": str(uuid.uuid4()),
        "units": {"temperature": "F", "pressure": "psig"},
        "box_temp": 36.0,
        "suction_pressure": 62.0,
        "suction_line_temp": 35.0,
        "head_pressure": 235.0,
        "liquid_line_temp": 95.0,
        "entering_air_temp": 85.0,
    }


def test_a_new_reading_set_costs_eight_statements_however_full_the_visit(world):
    """The token with its user, the user's role groups, the visit's units with the visit
    and each unit's site and refrigerant, the client_id look-up (the id only), the unit's
    capacitors for the diagnosis, the insert, the diagnosis and the audit entry: eight,
    once the per-process caches (content types) are warm, and still eight with more units
    on the visit and more parts on the unit. No read joins a table only to sort by it."""
    url = f"/api/v1/visits/{world.own_visit.pk}/reading-sets/"
    client = world.client("technician")
    assert client.post(url, _body(world), format="json").status_code == 201  # warm caches
    code, sql = _statements(client, url, _body(world))
    assert code == 201
    assert len(sql) == 8, "\n".join(s[:120] for s in sql)
    for _ in range(3):
        VisitUnitFactory(visit=world.own_visit, unit=UnitFactory(site=world.own_site))
        ComponentFactory(unit=world.own_unit)
    code, fuller = _statements(client, url, _body(world))
    assert code == 201
    assert len(fuller) == 8, "\n".join(s[:120] for s in fuller)
    look_up = next(s for s in sql if "client_id" in s and s.startswith("SELECT"))
    assert look_up.startswith('SELECT "fleet_readingset"."id" AS "pk" FROM'), look_up
    parts = next(s for s in sql if 'FROM "fleet_component"' in s)
    for statement in (look_up, parts):
        assert "JOIN" not in statement, statement


@pytest.mark.django_db(transaction=True, serialized_rollback=True)
def test_the_insert_needs_no_savepoint_of_its_own(world):
    """Outside any outer transaction (as under gunicorn) a new set is one transaction of
    three inserts, the readings first: BEGIN, the set, its diagnosis (computed before the
    transaction, so a failing core needs no savepoint to keep the readings), the audit
    entry, COMMIT."""
    url = f"/api/v1/visits/{world.own_visit.pk}/reading-sets/"
    client = world.client("technician")
    assert client.post(url, _body(world), format="json").status_code == 201  # warm caches
    with CaptureQueriesContext(connection) as queries:
        assert client.post(url, _body(world), format="json").status_code == 201
    sql = [q["sql"].split(" ", 1)[0].upper() for q in queries.captured_queries]
    begin = sql.index("BEGIN")
    assert sql[begin:] == ["BEGIN", "INSERT", "INSERT", "INSERT", "COMMIT"], sql
    tables = [q["sql"].split('"')[1] for q in queries.captured_queries[begin + 1 : -1]]
    assert tables == ["fleet_readingset", "diagnostics_diagnosis", "fleet_auditentry"]
    assert "SAVEPOINT" not in sql
    assert len(sql) == 10, sql


def test_a_retry_fetches_the_stored_set_without_its_visit_again(world):
    """A retry is answered from the visit already in hand: the stored set is fetched with
    its author and diagnosis only (no second join to unit, site and visit), and nothing is
    written."""
    client = world.client("technician")
    url = f"/api/v1/visits/{world.own_visit.pk}/reading-sets/"
    body = _body(world)
    first = client.post(url, body, format="json")
    code, sql = _statements(client, url, body)
    assert code == 200
    assert len(sql) == 5, sql
    assert not [s for s in sql if not s.startswith("SELECT")]
    assert 'JOIN "fleet_unit"' not in sql[-1]
    again = client.post(url, body, format="json").json()
    assert again == first.json()
    assert ReadingSet.objects.filter(client_id=body["client_id"]).count() == 1
    assert AuditEntry.objects.filter(record_id=first.json()["id"], action="created").count() == 1
