"""Model instances from statements written once, for the few reads and writes every API
request makes.

Building a query set compiles its SQL anew on every request: for the token and role, or a
visit with its units, sites and refrigerants, that compiling costs more CPU than the
database spends answering. The statements here are written once from the models' metadata
(table and column names, never spelled by hand), and each row is turned back into model
instances the way the ORM does it: every column passes through the backend's and the
field's converters (SQLite's booleans, dates and decimals), then ``Model.from_db``.
"""

from __future__ import annotations

from collections.abc import Callable, Sequence
from functools import cache, cached_property
from typing import Any

from django.db import DEFAULT_DB_ALIAS, connection
from django.db.models import Field, Model


def column(model: type[Model], name: str, alias: str | None = None) -> str:
    """The quoted column of ``model.name``, qualified by ``alias`` if given."""
    quoted = connection.ops.quote_name(model._meta.get_field(name).column)
    return f"{alias}.{quoted}" if alias else quoted


def table(model: type[Model], alias: str | None = None) -> str:
    """The quoted table of ``model``, named ``alias`` if given."""
    quoted = connection.ops.quote_name(model._meta.db_table)
    return f"{quoted} {alias}" if alias else quoted


class ModelColumns:
    """All the stored fields of ``model`` under a table alias in a hand-written SELECT."""

    def __init__(self, model: type[Model], alias: str) -> None:
        self.model, self.alias = model, alias
        self.fields = model._meta.concrete_fields
        self._attnames = [f.attname for f in self.fields]
        self._pk = self.fields.index(model._meta.pk)

    def __len__(self) -> int:
        return len(self.fields)

    @cached_property
    def sql(self) -> str:
        """The select list: ``alias."col", ...`` in the model's field order."""
        return ", ".join(column(self.model, f.name, self.alias) for f in self.fields)

    @cached_property
    def _converters(self) -> list[tuple[Any, list[Callable]]]:
        pairs = []
        for field in self.fields:
            col = field.get_col(self.alias)
            converters = connection.ops.get_db_converters(col) + col.get_db_converters(connection)
            pairs.append((col, converters))
        return pairs

    def instance(self, values: Sequence[Any]) -> Model | None:
        """The model instance of one row's slice of values (None for a LEFT JOIN's miss)."""
        if values[self._pk] is None:  # a LEFT JOIN that found no row
            return None
        converted = []
        for value, (col, converters) in zip(values, self._converters, strict=True):
            for convert in converters:
                value = convert(value, col, connection)
            converted.append(value)
        return self.model.from_db(DEFAULT_DB_ALIAS, self._attnames, converted)


def split(row: Sequence[Any], *parts: ModelColumns) -> list[Any]:
    """``row`` cut into one instance per part, in order; the rest of the row is dropped."""
    out, start = [], 0
    for part in parts:
        out.append(part.instance(row[start : start + len(part)]))
        start += len(part)
    return out


@cache
def _where_statement(model: type[Model], field: str) -> tuple[ModelColumns, str]:
    columns = ModelColumns(model, "x")
    return columns, (
        f"SELECT {columns.sql} FROM {table(model, 'x')} WHERE {column(model, field, 'x')} = %s"
    )


def instances_where(model: type[Model], field: str, value: Any) -> list[Model]:
    """The instances of ``model`` whose ``field`` equals ``value``, unordered."""
    columns, statement = _where_statement(model, field)
    prepared = model._meta.get_field(field).get_db_prep_value(value, connection)
    with connection.cursor() as cursor:
        cursor.execute(statement, [prepared])
        return [columns.instance(row) for row in cursor.fetchall()]


@cache
def _pk_statement(model: type[Model], field: str) -> str:
    return (
        f"SELECT {column(model, model._meta.pk.name)} "
        f"FROM {table(model)} WHERE {column(model, field)} = %s"
    )


def pk_where(model: type[Model], field: str, value: Any) -> Any | None:
    """The primary key of the row of ``model`` whose (unique) ``field`` equals ``value``;
    None if there is none."""
    prepared = model._meta.get_field(field).get_db_prep_value(value, connection)
    with connection.cursor() as cursor:
        cursor.execute(_pk_statement(model, field), [prepared])
        row = cursor.fetchone()
    return None if row is None else row[0]


@cache
def _insert_statement(model: type[Model]) -> tuple[list[Field], str]:
    meta = model._meta
    fields = [f for f in meta.local_concrete_fields if f is not meta.auto_field]
    names = ", ".join(column(model, f.name) for f in fields)
    marks = ", ".join(["%s"] * len(fields))
    statement = f"INSERT INTO {table(model)} ({names}) VALUES ({marks})"
    if connection.features.can_return_columns_from_insert:
        statement += f" RETURNING {column(model, meta.pk.name)}"
    return fields, statement


def insert(instance: Model) -> None:
    """Store a new ``instance`` as ``save(force_insert=True)`` would: each field's
    ``pre_save`` (``auto_now_add``) and database preparation, then its id from the
    database. Foreign keys must be set by id or by a saved instance. No model signals are
    sent; nothing in Rimewatch listens for them."""
    fields, statement = _insert_statement(type(instance))
    values = [f.get_db_prep_save(f.pre_save(instance, True), connection) for f in fields]
    with connection.cursor() as cursor:
        cursor.execute(statement, values)
        pk = cursor.fetchone()[0] if cursor.description else cursor.lastrowid
    instance.pk = pk
    instance._state.adding, instance._state.db = False, DEFAULT_DB_ALIAS
