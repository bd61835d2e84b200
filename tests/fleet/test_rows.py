"""Statements written once (fleet.rows) give back the same instances the ORM would: every
stored field equal, and of the same Python type (dates, booleans and decimals included,
which SQLite stores as text and integers)."""

from __future__ import annotations

import pytest
from django.db import connection

from fleet.models import Component, Refrigerant, Site, Unit, Visit, VisitUnit
from fleet.rows import ModelColumns, column, split, table
from tests.factories import ComponentFactory, VisitFactory, VisitUnitFactory

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
