"""What a reading-set post costs: the statements it sends, and responses built without
DRF's per-instance field machinery that still say exactly what DRF would say."""

from __future__ import annotations

import uuid

import pytest
from django.db import connection
from django.test.utils import CaptureQueriesContext
from rest_framework import serializers

from fleet.api import serializers as api_serializers
from fleet.models import AuditEntry, ReadingSet

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


def test_a_new_reading_set_costs_seven_statements(world):
    """The token with its user and role, the visit with its units (their unit, site and
    refrigerant), the client_id look-up (the id only), the unit's capacitors for the
    diagnosis, the insert, the diagnosis and the audit entry: seven, once the per-process
    caches (content types) are warm. The first four are statements written once
    (fleet.rows), not compiled by the ORM on each request."""
    url = f"/api/v1/visits/{world.own_visit.pk}/reading-sets/"
    client = world.client("technician")
    assert client.post(url, _body(world), format="json").status_code == 201  # warm caches
    code, sql = _statements(client, url, _body(world))
    assert code == 201
    assert len(sql) == 7, "\n".join(s[:120] for s in sql)
    look_up = next(s for s in sql if "client_id" in s and s.startswith("SELECT"))
    assert look_up.startswith('SELECT "id" FROM "fleet_readingset"'), look_up
    assert "JOIN" not in look_up, look_up


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
    assert len(sql) == 9, sql


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
    assert len(sql) == 4, sql
    assert not [s for s in sql if not s.startswith("SELECT")]
    assert 'JOIN "fleet_unit"' not in sql[-1]
    again = client.post(url, body, format="json").json()
    assert again == first.json()
    assert ReadingSet.objects.filter(client_id=body["client_id"]).count() == 1
    assert AuditEntry.objects.filter(record_id=first.json()["id"], action="created").count() == 1


def _records(world) -> list[tuple[type, object]]:
    return [
        (api_serializers.ReadingSetSerializer, world.own_reading),
        (api_serializers.RefrigerantEventSerializer, world.own_event),
        (api_serializers.UnitSerializer, world.own_unit),
        (api_serializers.SiteSerializer, world.own_site),
        (api_serializers.VisitSerializer, world.own_visit),
        (api_serializers.ComponentSerializer, world.own_component),
        (api_serializers.CustomerSerializer, world.own_site.customer),
    ]


@pytest.mark.parametrize("units", [None, "si", "us"])
def test_the_plain_representation_is_what_drf_would_answer(world, rf, units):
    """For every fleet record the response built from fields made once per class equals
    DRF's own ``Serializer.to_representation`` field by field, key order included."""
    request = rf.get("/")
    for serializer_class, instance in _records(world):
        context = {"request": request, "unit_system": units, "visit": world.own_visit}
        serializer = serializer_class(instance, context=context)
        assert serializer_class._plan() is not None, serializer_class
        plain = api_serializers.PlainRepresentation.to_representation(serializer, instance)
        drf = serializers.Serializer.to_representation(serializer, instance)
        assert list(plain.items()) == list(drf.items()), serializer_class


def test_a_serializer_with_a_field_that_reads_its_context_keeps_drfs_path(world):
    """A field outside the known context-free kinds (here a hyperlink, which reads the
    request) makes the class fall back to DRF's own representation."""

    class Linked(api_serializers.CustomerSerializer):
        link = serializers.HyperlinkedIdentityField(view_name="customer-detail")

        class Meta(api_serializers.CustomerSerializer.Meta):
            fields = [*api_serializers.CustomerSerializer.Meta.fields, "link"]

    assert Linked._plan() is None
    assert api_serializers.CustomerSerializer._plan() is not None


def test_fields_built_once_per_class_validate_as_drfs_own(world, rf):
    """Each serializer instance binds its own copies of the class's fields (never the
    prototypes, never another instance's), of the same names and kinds DRF builds; and a
    body validated through them gives DRF's own validated data and errors."""
    request = rf.post("/")
    for serializer_class, _ in _records(world):
        first, second = (serializer_class(context={"request": request}) for _ in range(2))
        drf = serializers.ModelSerializer.get_fields(first)
        assert list(first.fields) == list(drf), serializer_class
        for name, field in first.fields.items():
            assert type(field) is type(drf[name]), (serializer_class, name)
            assert field.parent is first
            assert field is not second.fields[name]
            assert (
                field is not api_serializers.PlainRepresentation._prototypes[serializer_class][name]
            )
    context = {
        "request": request,
        "visit": world.own_visit,
        "visit_units": list(world.own_visit.visit_units.select_related("unit__site")),
    }

    class Fresh(api_serializers.ReadingSetSerializer):
        def get_fields(self):
            return serializers.ModelSerializer.get_fields(self)

    good = {
        **_body(world),
        "compressor_amps": [8.1, 8.3],
        "sight_glass": "clear",
        "taken_at": "2026-01-05T10:00:00-06:00",
    }
    bad = {**good, "box_temp": "warm", "unit": 0, "supply_volts": [-5]}
    for body in (good, bad):
        ours = api_serializers.ReadingSetSerializer(data=body, context=context)
        theirs = Fresh(data=body, context=context)
        assert ours.is_valid() is theirs.is_valid() is (body is good)
        assert ours.errors == theirs.errors
        assert ours.validated_data == theirs.validated_data


def test_a_serializer_with_a_field_that_reads_its_context_builds_fields_as_drf(world):
    class Linked(api_serializers.CustomerSerializer):
        link = serializers.HyperlinkedIdentityField(view_name="customer-detail")

        class Meta(api_serializers.CustomerSerializer.Meta):
            fields = [*api_serializers.CustomerSerializer.Meta.fields, "link"]

    assert Linked().fields["link"].parent is not None
    assert api_serializers.PlainRepresentation._prototypes[Linked] is None
