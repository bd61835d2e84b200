"""Files kept with a unit: the office attaches a nameplate photo on the unit's page, the file
goes through Django's storage API (on disk, or an S3-compatible bucket), comes back byte for
byte to whoever may see the unit, and nothing else gets in. The image bytes are synthetic."""

from __future__ import annotations

import io
import os
import uuid

import pytest
from django.core.files.uploadedfile import SimpleUploadedFile
from PIL import Image

from fleet.models import AuditEntry, UnitDocument
from tests.factories import SiteFactory, UnitFactory

pytestmark = pytest.mark.django_db


def _png() -> bytes:
    out = io.BytesIO()
    Image.new("RGB", (8, 8), (200, 30, 30)).save(out, format="PNG")
    return out.getvalue()


@pytest.fixture
def on_disk(settings, tmp_path):
    settings.MEDIA_ROOT = tmp_path
    settings.STORAGES = {
        **settings.STORAGES,
        "default": {"BACKEND": "django.core.files.storage.FileSystemStorage"},
    }
    return tmp_path


@pytest.fixture
def unit():
    return UnitFactory(site=SiteFactory(name="Harbour Deli"), tag="HD-WIC-1")


def _attach(client, unit, content: bytes, name: str = "plate.png", kind: str = "nameplate_photo"):
    upload = SimpleUploadedFile(name, content, content_type="image/png")
    return client.post(
        f"/units/{unit.pk}/documents/", {"kind": kind, "title": "Nameplate", "file": upload}
    )


def _kept_and_served_back(office, unit) -> UnitDocument:
    content = _png()
    response = _attach(office, unit, content)
    assert response.status_code == 302
    document = UnitDocument.objects.get(unit=unit)
    assert (document.content_type, document.size_bytes) == ("image/png", len(content))
    served = office.get(f"/documents/{document.pk}/")
    assert served.status_code == 200
    assert served["Content-Type"] == "image/png"
    assert b"".join(served.streaming_content) == content
    assert "Nameplate" in office.get(f"/units/{unit.pk}/").content.decode()
    return document


def test_a_nameplate_photo_is_kept_on_disk_and_served_back(office, office_user, unit, on_disk):
    document = _kept_and_served_back(office, unit)
    assert (on_disk / document.file.name).read_bytes() == _png()
    entry = AuditEntry.objects.get(action="created", record_id=document.pk)
    assert entry.actor == office_user
    assert entry.changes["file"][1] == document.file.name


@pytest.mark.parametrize(
    ("content", "words"),
    [
        (b"", "empty"),
        (b"MZ\x90\x00 not a photo", "JPEG or PNG"),
        (b"<svg onload=alert(1)>", "JPEG or PNG"),
    ],
)
def test_what_is_not_a_photo_or_pdf_is_400_naming_file(office, unit, on_disk, content, words):
    response = _attach(office, unit, content, name="plate.png")
    assert response.status_code == 400
    assert words in response.content.decode()
    assert not UnitDocument.objects.exists()
    assert not any(on_disk.rglob("*.*"))


def test_too_large_a_file_is_refused(office, unit, on_disk, monkeypatch):
    monkeypatch.setattr("fleet.validation.DOCUMENT_MAX_BYTES", 100)
    response = _attach(office, unit, _png() + b"\0" * 200)
    assert response.status_code == 400
    assert "over" in response.content.decode()
    assert not UnitDocument.objects.exists()


def test_a_document_is_seen_only_by_who_sees_its_unit(office, tech, boss, unit, on_disk):
    document = _kept_and_served_back(office, unit)
    assert tech.get(f"/documents/{document.pk}/").status_code == 404
    assert boss.get(f"/documents/{document.pk}/").status_code == 404
    assert _attach(tech, unit, _png()).status_code == 404


def test_a_unit_with_documents_is_kept(office, unit, on_disk):
    from django.db.models import ProtectedError

    _kept_and_served_back(office, unit)
    with pytest.raises(ProtectedError):
        unit.delete()


S3_ENDPOINT = os.environ.get("RIMEWATCH_TEST_S3_ENDPOINT", "")


@pytest.mark.skipif(
    not S3_ENDPOINT,
    reason="no S3-compatible server: `make test` runs these inside scripts/with-s3.sh",
)
def test_a_file_kept_in_an_s3_compatible_bucket(office, unit, settings):
    """The same path with RIMEWATCH_FILE_STORAGE=s3's storage, against a local
    S3-compatible server (moto's, started by scripts/with-s3.sh)."""
    import boto3

    bucket = f"rimewatch-test-{uuid.uuid4().hex[:12]}"
    keys = {"access_key": "test-key", "secret_key": "test-secret"}
    s3 = boto3.client(
        "s3",
        endpoint_url=S3_ENDPOINT,
        region_name="us-east-1",
        aws_access_key_id=keys["access_key"],
        aws_secret_access_key=keys["secret_key"],
    )
    s3.create_bucket(Bucket=bucket)
    settings.STORAGES = {
        **settings.STORAGES,
        "default": {
            "BACKEND": settings.FILE_STORAGE_S3["BACKEND"],
            "OPTIONS": {
                **settings.FILE_STORAGE_S3["OPTIONS"],
                "bucket_name": bucket,
                "endpoint_url": S3_ENDPOINT,
                "region_name": "us-east-1",
                **keys,
            },
        },
    }
    document = _kept_and_served_back(office, unit)
    stored = s3.get_object(Bucket=bucket, Key=document.file.name)
    assert stored["Body"].read() == _png()
