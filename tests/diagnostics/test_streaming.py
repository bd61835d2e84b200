"""A rescore streams its rows into PostgreSQL by COPY and one upsert, storing exactly what
the statement path stores; a flag refresh works through the fleet a chunk of units at a
time, deciding exactly what one pass over the whole fleet decides."""

from __future__ import annotations

import datetime as dt

import pytest
from django.db import connection
from django.test.utils import CaptureQueriesContext
from django.utils import timezone

from diagnostics import services
from diagnostics.models import Diagnosis, Flag
from tests.factories import (
    ReadingSetFactory,
    RefrigerantEventFactory,
    UnitFactory,
    VisitUnitFactory,
)

pytestmark = pytest.mark.django_db

on_postgresql = pytest.mark.skipif(
    connection.vendor != "postgresql",
    reason="COPY is PostgreSQL's; `make test` runs this on a throwaway PostgreSQL",
)


def _readings() -> list:
    """Reading sets on two units with something missing in some of them, so the stored rows
    hold numbers, nulls and documents of several shapes."""
    out = []
    for unit_index in range(2):
        vu = VisitUnitFactory()
        for k in range(4):
            out.append(
                ReadingSetFactory(
                    visit_unit=vu,
                    head_kpa_gauge=1400.0 + 150 * k + 40 * unit_index,
                    suction_line_temp_c=None if k == 2 else 4.0 + k,
                    sight_glass=("bubbles", "clear", "")[k % 3],
                )
            )
    return out


def _stored() -> list[tuple]:
    """Every stored diagnosis as its columns, the document as PostgreSQL's jsonb text."""
    columns = ", ".join(connection.ops.quote_name(c) for c in services._UPSERT_COLUMNS)
    with connection.cursor() as cursor:
        cursor.execute(
            f"SELECT {columns}, document::text FROM {Diagnosis._meta.db_table} "
            "ORDER BY reading_set_id"
        )
        return cursor.fetchall()


@on_postgresql
def test_the_copy_path_stores_what_the_statement_path_stores(monkeypatch):
    """The same readings rescored by COPY and by the executemany upsert leave the same rows,
    column by column and document by document, both when inserting and when replacing."""
    readings = _readings()
    now = timezone.now()
    with CaptureQueriesContext(connection) as captured:
        assert services.rescore(now=now, batch_size=3) == len(readings)
    moved = [q["sql"] for q in captured.captured_queries if services._STAGE in q["sql"]]
    assert any(sql.startswith("WITH staged AS (DELETE FROM") for sql in moved)
    by_copy = _stored()
    assert len(by_copy) == len(readings)

    Diagnosis.objects.all().delete()
    monkeypatch.setattr(services, "_copies", lambda: False)
    services.rescore(now=now, batch_size=3)
    by_statement = _stored()
    assert by_statement == by_copy

    # Replacing stored rows (the conflict branch): stale rows rewritten by COPY.
    Diagnosis.objects.update(algorithm_version="old", score=0.0, document={})
    monkeypatch.undo()
    assert services.rescore(now=now) == len(readings)
    assert _stored() == by_statement


@on_postgresql
def test_a_rescore_in_a_callers_transaction_moves_each_row_once():
    """Inside a caller's transaction the stage outlives each batch; the move empties it, so
    every batch writes only its own rows (a row moved twice in one upsert is an error)."""
    readings = _readings()
    assert services.rescore(batch_size=2) == len(readings)
    with connection.cursor() as cursor:
        cursor.execute(f"SELECT count(*) FROM {services._STAGE}")
        assert cursor.fetchone() == (0,)
    assert Diagnosis.objects.count() == len(readings)


def _flag_rows() -> list[tuple]:
    return sorted(
        Flag.objects.values_list(
            "unit_id", "kind", "severity", "summary", "evidence", "projected_on", "forecast"
        )
    )


def test_a_refresh_in_chunks_decides_what_one_pass_decides():
    """Units with leak-rate and maintenance stories refreshed three units at a time open the
    flags one pass over all of them opens, and a re-run in chunks changes nothing."""
    today = timezone.localdate()
    for k in range(7):
        unit = UnitFactory(full_charge_kg=25.0, installed_on=dt.date(2020, 1, 1))
        vu = VisitUnitFactory(unit=unit, visit__site=unit.site)
        if k % 2 == 0:
            RefrigerantEventFactory(visit_unit=vu, amount_kg=2.0 + k, occurred_on=today)
    whole = services.refresh_flags(today=today, chunk_units=1000)
    expected = _flag_rows()
    assert whole.opened == len(expected) > 7

    Flag.objects.all().delete()
    chunked = services.refresh_flags(today=today, chunk_units=3)
    assert (chunked.opened, chunked.updated, chunked.cleared) == (whole.opened, 0, 0)
    assert _flag_rows() == expected
    again = services.refresh_flags(today=today, chunk_units=3)
    assert (again.opened, again.updated, again.cleared) == (0, 0, 0)


def test_a_refresh_reads_the_fleet_a_chunk_at_a_time(django_assert_num_queries):
    """The history's five reads and the open flags' one run per chunk of units (with one
    read of the units' ids), so no read holds more than a chunk's rows."""
    today = timezone.localdate()
    for _ in range(5):
        UnitFactory(installed_on=dt.date(2020, 1, 1))
    services.refresh_flags(today=today)  # opens the maintenance flags: the re-run writes none
    # ids, then per chunk of two (three chunks): five history reads and the open flags.
    with django_assert_num_queries(1 + 3 * 6):
        result = services.refresh_flags(today=today, chunk_units=2)
    assert (result.opened, result.updated, result.cleared) == (0, 0, 0)
