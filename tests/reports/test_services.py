"""Generating, storing and emailing reports; the PDF read back with pypdf."""

from __future__ import annotations

import base64
import datetime as dt
import hashlib
import io
import re
from zoneinfo import ZoneInfo

import pytest
from django.core import mail
from pypdf import PdfReader

from fleet.display import display_for
from reports.models import MonthlyReport
from reports.months import Month
from reports.services import build_report, email_report, generate_monthly_report
from tests.factories import UserFactory
from tests.reports.factories import FAKE_PDF, MonthlyReportFactory, bulk_site_history

pytestmark = pytest.mark.django_db

MARCH = Month(2026, 3)
NOW = dt.datetime(2026, 4, 1, 7, 0, tzinfo=ZoneInfo("America/Chicago"))


def page_texts(report: MonthlyReport) -> list[str]:
    with report.pdf.open("rb") as fh:
        reader = PdfReader(io.BytesIO(fh.read()))
    return [" ".join((page.extract_text() or "").split()) for page in reader.pages]


def test_regenerating_a_month_stores_a_new_version_and_keeps_the_old(settings):
    """Generating March twice gives versions 1 and 2 as two rows and two files; each row's
    checksum is the SHA-256 of its own file, and version 1's file is left as it was. The
    PDF has a first page, one section per unit starting on its own page, and the method
    notes with the safety cautions last; every page carries the site, the month and
    'Page n of N'."""
    history = bulk_site_history(2, MARCH)
    site = history.site
    first = generate_monthly_report(site, MARCH, NOW)
    with first.pdf.open("rb") as fh:
        first_bytes = fh.read()
    second = generate_monthly_report(site, MARCH, NOW + dt.timedelta(hours=1))

    assert (first.version, second.version) == (1, 2)
    assert MonthlyReport.objects.filter(site=site, month=MARCH.first_day).count() == 2
    assert first.pdf.name != second.pdf.name
    first.refresh_from_db()
    with first.pdf.open("rb") as fh:
        assert fh.read() == first_bytes
    for report in (first, second):
        with report.pdf.open("rb") as fh:
            assert hashlib.sha256(fh.read()).hexdigest() == report.checksum_sha256
    assert second.algorithm_version == "test-1"
    assert second.unit_count == 2

    pages = page_texts(second)
    assert len(pages) == second.page_count
    assert "How the refrigeration did in March 2026" in pages[0]
    n = len(pages)
    for number, text in enumerate(pages, start=1):
        assert site.name in text
        assert "Health report for March 2026" in text
        assert f"Page {number} of {n}" in text
    starts = {
        tag: next(i for i, t in enumerate(pages) if f"{tag} · " in t) for tag in ("B-001", "B-002")
    }
    assert 0 < starts["B-001"] < starts["B-002"]
    notes = next(i for i, t in enumerate(pages) if "How these numbers are made" in t)
    assert notes > starts["B-002"]
    assert "Safety cautions" in " ".join(pages[notes:])
    # What each unit's pages say, read back from the PDF.
    b001 = " ".join(pages[starts["B-001"] : starts["B-002"]])
    b002 = " ".join(pages[starts["B-002"] : notes])
    assert "Head pressure drifting up" in b001
    assert "31.0 %" in b002  # the stored rolling average
    assert "37.2 %" in b002  # the stored annualizing rate
    assert re.search(r"Repair due", b002)


def test_it_emails_the_pdf_to_each_manager_of_the_site():
    """Each active manager with an address gets one message with the PDF attached; a manager
    without an address, an inactive one and users who do not manage the site get nothing."""
    report = MonthlyReportFactory()
    ann = UserFactory(username="ann", email="ann@example.invalid", role="manager")
    bob = UserFactory(username="bob", email="bob@example.invalid", role="manager")
    silent = UserFactory(username="silent", email="", role="manager")
    gone = UserFactory(username="gone", email="gone@example.invalid", role="manager")
    gone.is_active = False
    gone.save()
    UserFactory(username="outsider", email="out@example.invalid", role="manager")
    report.site.managers.add(ann, bob, silent, gone)

    assert email_report(report) == 2
    assert sorted(m.to[0] for m in mail.outbox) == ["ann@example.invalid", "bob@example.invalid"]
    message = mail.outbox[0]
    assert report.site.name in message.subject
    assert "March 2026" in message.subject
    name, content, mimetype = message.attachments[0]
    assert (name, mimetype) == (report.filename, "application/pdf")
    assert content == FAKE_PDF
    assert report.checksum_sha256 in message.body


def test_charts_go_into_the_pdf_as_drawn_not_encoded_again():
    """Each unit's chart is written into the PDF byte for byte as it was drawn (a JPEG the
    PDF carries as it is), at the size it was drawn, one image per chart: no pixel is
    decoded and encoded a second time while the PDF is written."""
    site = bulk_site_history(3, MARCH).site
    built = build_report(site.pk, MARCH, now=NOW, display=display_for("us"), workers=1)
    drawn = [
        base64.b64decode(uri)
        for uri in re.findall(r'src="data:image/jpeg;base64,([^"]+)"', built.html)
    ]
    assert len(drawn) == 3
    images = [
        obj
        for page in PdfReader(io.BytesIO(built.pdf)).pages
        for obj in page["/Resources"].get("/XObject", {}).values()
        if obj.get_object()["/Subtype"] == "/Image"
    ]
    assert len({id(i.get_object()) for i in images}) == 3
    for data in drawn:
        assert data in built.pdf  # the very bytes, not a re-encoded copy
    for image in images:
        stream = image.get_object()
        assert stream["/Filter"] == "/DCTDecode"
        assert stream.get_data() in drawn
        assert (stream["/Width"], stream["/ColorSpace"]) == (1080, "/DeviceGray")
