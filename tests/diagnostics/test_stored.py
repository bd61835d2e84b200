"""A stored diagnosis any tool can read: a versioned JSON document, queried in SQL, and every
diagnosis stored before it turned into one that reads as it did."""

from __future__ import annotations

import base64
import importlib
import json
from pathlib import Path

import pytest
from django.db import connection
from django.db.migrations.executor import MigrationExecutor

from diagnostics import services
from diagnostics.core import stored
from diagnostics.models import Diagnosis
from tests.factories import ReadingSetFactory, VisitUnitFactory, document_for

#: Float32 rows as the diagnosis stored them before documents (the varied batch of
#: tests/diagnostics/core/test_diagnose_batch.py, one row per case it covers: every finding,
#: R-744 above its critical point, a water-cooled condenser, a glide blend on the
#: mid-point, an unusable elevation, missing readings), each with the details the float32
#: reader wrote for it then (two source texts since carry the docs/references.md section
#: they cite; texts are written when read, so the stored numbers are untouched).
FLOAT32_ROWS = json.loads((Path(__file__).parent / "data" / "stored_float32.json").read_text())

to_documents = importlib.import_module("diagnostics.migrations.0005_diagnosis_document")

EMPTY = {"targets": [], "metrics": [], "findings": [], "cautions": [], "glide_choice": ""}


def test_every_float32_row_becomes_a_document_that_reads_as_it_did():
    """Each float32 row, turned into a document by the migration, reads back to the very
    details it read as before (targets, metrics, findings, cautions, every text and number),
    so no stored diagnosis goes blank or changes on the upgrade."""
    assert len(FLOAT32_ROWS) >= 10
    documents = [to_documents.document_of(base64.b64decode(r["blob"])) for r in FLOAT32_ROWS]
    assert all(d["document_version"] == 1 for d in documents)
    read = stored.read_details(documents)
    for row, details in zip(FLOAT32_ROWS, read, strict=True):
        assert details == row["details"], row["row"]


def test_a_row_of_no_known_layout_becomes_an_empty_document():
    """A float32 row of another length (empty, or of a layout older still) held nothing
    readable: it becomes an empty document, which reads as no details (``rescore`` picks its
    reading set up by its algorithm version)."""
    blob = base64.b64decode(FLOAT32_ROWS[0]["blob"])
    for other in (b"", blob[:-4]):
        assert to_documents.document_of(other) == {}
    assert stored.read_details([{}]) == [EMPTY]


@pytest.mark.django_db(transaction=True, serialized_rollback=True)
def test_the_migration_turns_every_stored_row_into_its_document():
    """Migrating the database, a stored float32 row becomes its document in place and the
    diagnosis reads as before; a row of no known layout becomes an empty document."""
    executor = MigrationExecutor(connection)
    executor.migrate([("diagnostics", "0004_flag_forecast")])
    old = executor.loader.project_state([("diagnostics", "0004_flag_forecast")]).apps
    OldDiagnosis = old.get_model("diagnostics", "Diagnosis")
    readings = [ReadingSetFactory(), ReadingSetFactory()]
    OldDiagnosis.objects.create(
        reading_set_id=readings[0].pk,
        algorithm_version="2026.1",
        computed_at="2026-03-01T10:00:00Z",
        packed=base64.b64decode(FLOAT32_ROWS[1]["blob"]),
    )
    OldDiagnosis.objects.create(
        reading_set_id=readings[1].pk,
        algorithm_version="2025.9",
        computed_at="2026-03-01T10:00:00Z",
        packed=b"",
    )
    executor = MigrationExecutor(connection)
    executor.loader.build_graph()
    executor.migrate(executor.loader.graph.leaf_nodes())
    converted = Diagnosis.objects.get(reading_set=readings[0])
    assert converted.document["document_version"] == 1
    assert converted.details == FLOAT32_ROWS[1]["details"]
    assert Diagnosis.objects.get(reading_set=readings[1]).details == EMPTY


def _stored_pair():
    """Two stored diagnoses: one that found an undercharge (bubbles in the sight glass) with
    a condenser split at fault, one that found nothing."""
    low = services.diagnose_reading_set(ReadingSetFactory())
    low.document = document_for(
        findings={"undercharge": 0.8}, signals=("bubbles",), split_k=17.0, status="fault"
    )
    low.save()
    clean = services.diagnose_reading_set(ReadingSetFactory())
    clean.document = document_for()
    clean.save()
    return low, clean


@pytest.mark.django_db
def test_it_finds_diagnoses_by_what_their_documents_hold():
    """The document is queried in SQL through the ORM's JSON lookups, the same on SQLite and
    PostgreSQL: by finding code (``with_finding``: a key lookup) and by a metric's status."""
    low, clean = _stored_pair()
    assert list(Diagnosis.objects.with_finding("undercharge")) == [low]
    assert not Diagnosis.objects.with_finding("overcharge").exists()
    faulted = Diagnosis.objects.filter(document__metrics__condenser_split__0="fault")
    assert list(faulted) == [low]
    assert Diagnosis.objects.filter(document__document_version=1).count() == 2


@pytest.mark.django_db
@pytest.mark.skipif(
    connection.vendor != "postgresql",
    reason="jsonb containment (@>) is PostgreSQL's; `make test` runs this on a throwaway "
    "PostgreSQL",
)
def test_it_finds_diagnoses_by_containment_in_jsonb():
    """On PostgreSQL the document is jsonb, so containment (``contains``, the @> operator)
    finds a diagnosis by finding code, by a signal that held and by a metric's status."""
    low, clean = _stored_pair()
    with connection.cursor() as cursor:
        cursor.execute(f"SELECT pg_typeof(document)::text FROM {Diagnosis._meta.db_table} LIMIT 1")
        assert cursor.fetchone() == ("jsonb",)
    by_code = Diagnosis.objects.filter(document__contains={"findings": {"undercharge": {}}})
    assert list(by_code) == [low]
    assert list(Diagnosis.objects.filter(document__signals__contains=["bubbles"])) == [low]
    fault = {"metrics": {"condenser_split": ["fault"]}}
    assert list(Diagnosis.objects.filter(document__contains=fault)) == [low]
    assert list(Diagnosis.objects.exclude(document__findings__has_any_keys=["undercharge"])) == [
        clean
    ]


@pytest.mark.django_db
def test_a_rescore_stores_the_document_a_single_post_stores():
    """The vectorised rescore writes each document as JSON text in one statement (cast to
    jsonb on PostgreSQL); read back, it is the document the one-row path stores for the same
    reading, and reads to the same details."""
    vu = VisitUnitFactory()
    readings = [
        ReadingSetFactory(visit_unit=vu, head_kpa_gauge=1500.0 + 100 * k, sight_glass="bubbles")
        for k in range(3)
    ]
    services.rescore()
    batch = {d.reading_set_id: d for d in Diagnosis.objects.all()}
    for reading in readings:
        alone = services.diagnosis_of(reading)
        assert batch[reading.id].document == alone.document
        assert batch[reading.id].details == alone.details
