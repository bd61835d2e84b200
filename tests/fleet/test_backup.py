"""An export of every record imports into an empty database with nothing lost: the demo
fleet exported, imported and exported again reads the same, byte for byte."""

from __future__ import annotations

import datetime as dt
import importlib
import json
from io import StringIO

import pytest
from axes.models import AccessAttempt
from django.apps import apps
from django.contrib.auth.models import User
from django.contrib.contenttypes.models import ContentType
from django.core.files.storage import default_storage
from django.core.management import call_command
from django.core.management.base import CommandError
from django.db import connection
from rest_framework.authtoken.models import Token

from diagnostics.models import Diagnosis, Flag, LeakRate
from fixtures.load import load_demo_fleet
from fleet import audit, models
from fleet.backup import EXCLUDED, FORMAT_VERSION, exported_models
from reports.models import MonthlyReport
from tests.reports.factories import FAKE_PDF, MonthlyReportFactory

pytestmark = pytest.mark.django_db

SEED = importlib.import_module("fleet.migrations.0002_seed_refrigerants_and_roles").seed


@pytest.fixture(autouse=True)
def _fresh_content_types():
    """Flushing and importing inside a test gives the content types other ids, which
    Django's ContentType cache keeps after the test's rollback has restored the old ones:
    a later test would then write audit entries under the wrong record type."""
    yield
    ContentType.objects.clear_cache()


@pytest.fixture
def media(settings, tmp_path):
    settings.MEDIA_ROOT = tmp_path / "media"
    return settings.MEDIA_ROOT


def _empty_the_database() -> None:
    """What a new database holds after migrate: the content types and permissions, the
    role groups and the refrigerant catalogue (with other ids than before), no records."""
    connection.check_constraints()  # PostgreSQL truncates no table with checks pending
    call_command("flush", interactive=False, verbosity=0)
    SEED(apps, None)


def _counts() -> dict[str, int]:
    return {m._meta.label_lower: m._base_manager.count() for m in exported_models()}


def _export(path, *options: str) -> dict:
    call_command("export_records", str(path), *options, stdout=StringIO())
    return json.loads(path.read_text())


def test_the_demo_fleet_round_trips_with_nothing_lost(tmp_path, media):
    load_demo_fleet(dt.date(2026, 12, 1))
    office = User.objects.get(groups__name="office")
    reading = models.ReadingSet.objects.order_by("pk").first()
    audit.record_created(reading, by=office, note="entered on the phone")
    report = MonthlyReportFactory(site=models.Site.objects.order_by("pk").first())
    Token.objects.create(user=office)
    AccessAttempt.objects.create(
        username=office.username, ip_address="192.0.2.7", user_agent="", failures_since_start=3
    )
    Flag.objects.filter(pk=Flag.objects.order_by("pk").first().pk).update(
        acknowledged_by=office, acknowledged_at=dt.datetime(2026, 11, 3, 9, 30, 0, 123456, dt.UTC)
    )
    before = _counts()
    for label in (
        "diagnostics.diagnosis",
        "diagnostics.flag",
        "diagnostics.leakrate",
        "fleet.auditentry",
        "fleet.refrigerantevent",
        "auth.user",
        "reports.monthlyreport",
    ):
        assert before[label] > 0, label
    hashes = dict(User.objects.values_list("username", "password"))

    first = _export(tmp_path / "first.json")
    assert first["format_version"] == FORMAT_VERSION
    assert first["counts"] == before
    assert not any(r["model"].startswith(tuple(EXCLUDED)) for r in first["records"])

    _empty_the_database()
    default_storage.delete(report.pdf.name)  # a new machine: no media either
    assert not models.Customer.objects.exists()
    out = StringIO()
    call_command("import_records", str(tmp_path / "first.json"), stdout=out)
    assert "Imported" in out.getvalue()

    assert _counts() == before
    second = tmp_path / "second.json"
    _export(second)
    assert second.read_bytes() == (tmp_path / "first.json").read_bytes()
    # Sign-ins survive, tokens do not (phones sign in again); the stored PDF is back.
    assert dict(User.objects.values_list("username", "password")) == hashes
    assert not Token.objects.exists()
    assert not AccessAttempt.objects.exists()  # lockouts are not carried over
    with default_storage.open(MonthlyReport.objects.get().pdf.name, "rb") as pdf:
        assert pdf.read() == FAKE_PDF
    assert Flag.objects.get(acknowledged_by=office).acknowledged_at.microsecond == 123456
    assert LeakRate.objects.filter(over_threshold=True).exists()
    assert Diagnosis.objects.count() == models.ReadingSet.objects.count()


def test_a_database_with_records_is_refused_untouched(tmp_path, office_user):
    _export(tmp_path / "export.json")
    models.Customer.objects.create(name="Already here")
    with pytest.raises(
        CommandError, match=r"already holds records \(1 auth.user, 1 fleet.customer\)"
    ):
        call_command("import_records", str(tmp_path / "export.json"), stdout=StringIO())
    assert models.Customer.objects.count() == 1


@pytest.mark.parametrize(
    ("change", "message"),
    [
        ({"format_version": FORMAT_VERSION + 1}, "format version 2; this release reads version 1"),
        ({"format": "something-else"}, "not a Rimewatch export"),
        ({"migrations": {"fleet": ["0001_records"]}}, "other migrations than this database"),
    ],
)
def test_an_export_of_another_format_or_schema_is_refused(tmp_path, change, message):
    document = _export(tmp_path / "export.json")
    _empty_the_database()
    (tmp_path / "changed.json").write_text(json.dumps({**document, **change}))
    with pytest.raises(CommandError, match=message):
        call_command("import_records", str(tmp_path / "changed.json"), stdout=StringIO())
    assert not User.objects.exists()


def test_another_file_under_a_stored_name_is_refused(tmp_path, media):
    report = MonthlyReportFactory()
    _export(tmp_path / "export.json")
    name = report.pdf.name
    _empty_the_database()
    default_storage.delete(name)
    default_storage.save(name, StringIO("another file"))
    with pytest.raises(CommandError, match="another file is stored as"):
        call_command("import_records", str(tmp_path / "export.json"), stdout=StringIO())
    assert not MonthlyReport.objects.exists()


def test_an_export_without_passwords_leaves_every_password_unusable(tmp_path, office_user):
    hashed = User.objects.get().password
    document = _export(tmp_path / "export.json", "--no-passwords")
    assert hashed not in (tmp_path / "export.json").read_text()
    _empty_the_database()
    call_command("import_records", str(tmp_path / "export.json"), stdout=StringIO())
    user = User.objects.get()
    assert user.username == office_user.username
    assert not user.has_usable_password()
    assert [r for r in document["records"] if r["model"] == "auth.user"]
