"""Statements written once (fleet.rows) give back the same instances the ORM would (every
stored field equal, and of the same Python type: dates, booleans and decimals included,
which SQLite stores as text and integers), and store the same rows the ORM would."""

from __future__ import annotations

import pytest
from django.db import connection
from django.utils import timezone

from diagnostics.models import Diagnosis
from fleet import audit
from fleet.models import (
    AuditEntry,
    Component,
    ReadingSet,
    Refrigerant,
    Site,
    Unit,
    Visit,
    VisitUnit,
)
from fleet.rows import ModelColumns, column, insert, split, table
from tests.factories import ComponentFactory, ReadingSetFactory, VisitFactory, VisitUnitFactory

pytestmark = pytest.mark.django_db


def _fields(instance) -> dict:
    return {f.attname: getattr(instance, f.attname) for f in type(instance)._meta.concrete_fields}


def _same(ours, orm) -> None:
    assert type(ours) is type(orm)
    for name, value in _fields(orm).items():
        mine = getattr(ours, name)
        assert mine == value, name
        assert type(mine) is type(value), name


def test_each_model_reads_back_as_the_orm_reads_it():
    visit_unit = VisitUnitFactory(visit=VisitFactory(status="in_progress"))
    component = ComponentFactory(unit=visit_unit.unit)
    for model, pk in [
        (Visit, visit_unit.visit_id),
        (VisitUnit, visit_unit.pk),
        (Unit, visit_unit.unit_id),
        (Site, visit_unit.unit.site_id),
        (Refrigerant, visit_unit.unit.refrigerant_id),
        (Component, component.pk),
    ]:
        columns = ModelColumns(model, "x")
        with connection.cursor() as cursor:
            cursor.execute(
                f"SELECT {columns.sql} FROM {table(model, 'x')} "
                f"WHERE {column(model, 'id', 'x')} = %s",
                [pk],
            )
            (row,) = cursor.fetchall()
        (ours,) = split(row, columns)
        _same(ours, model.objects.get(pk=pk))
        assert ours._state.adding is False  # a stored row, as the ORM marks it


def test_a_left_join_that_found_nothing_is_none():
    visit = VisitFactory()
    visits, units = ModelColumns(Visit, "v"), ModelColumns(VisitUnit, "vu")
    with connection.cursor() as cursor:
        cursor.execute(
            f"SELECT {visits.sql}, {units.sql} FROM {table(Visit, 'v')} "
            f"LEFT JOIN {table(VisitUnit, 'vu')} "
            f"ON {column(VisitUnit, 'visit', 'vu')} = {column(Visit, 'id', 'v')} "
            f"WHERE {column(Visit, 'id', 'v')} = %s",
            [visit.pk],
        )
        (row,) = cursor.fetchall()
    found, missing = split(row, visits, units)
    assert found.pk == visit.pk
    assert missing is None


def test_an_insert_stores_what_the_orm_save_stores():
    """A reading set (a UUID, a JSON dict, auto_now_add), its diagnosis (bytes) and an
    audit entry (JSON, a content type), each stored once by ``insert`` and once by
    ``save``: the rows read back equal but for their ids and the creation stamps."""
    reading_set = ReadingSetFactory.build(
        visit_unit=VisitUnitFactory(),
        entered_units={"temperature": "F"},
        coil_iced=False,
        compressor_amps_1=8.5,
    )
    twin = ReadingSetFactory.build(
        visit_unit=reading_set.visit_unit,
        entered_units={"temperature": "F"},
        coil_iced=False,
        compressor_amps_1=8.5,
    )
    twin.taken_at = reading_set.taken_at
    insert(reading_set)
    twin.save(force_insert=True)
    assert reading_set.pk is not None
    assert reading_set._state.adding is False
    skip = {"id", "client_id", "created_at"}
    _equal_rows(ReadingSet, reading_set.pk, twin.pk, skip)

    values = dict(
        algorithm_version="t",
        score=71.5,
        computed_at=timezone.now(),
        document={"signals": ["bubbles"]},
    )
    ours, theirs = (
        Diagnosis(reading_set=reading_set, **values),
        Diagnosis(reading_set=twin, **values),
    )
    insert(ours)
    theirs.save(force_insert=True)
    _equal_rows(Diagnosis, ours.pk, theirs.pk, {"id", "reading_set_id"})

    entry = audit.record_created(reading_set, by=None)  # stored by insert
    orm = AuditEntry.objects.create(
        **{f.attname: getattr(entry, f.attname) for f in AuditEntry._meta.concrete_fields[1:]}
    )
    _equal_rows(AuditEntry, entry.pk, orm.pk, {"id"})
    assert entry.changes["client_id"] == [None, str(reading_set.client_id)]


def _equal_rows(model, first: int, second: int, skip: set[str]) -> None:
    a, b = (_fields(model.objects.get(pk=pk)) for pk in (first, second))
    assert {k: v for k, v in a.items() if k not in skip} == {
        k: v for k, v in b.items() if k not in skip
    }
