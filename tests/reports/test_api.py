"""API: GET /api/v1/sites/{id}/reports/ and /api/v1/sites/{id}/reports/{YYYY-MM}.pdf."""

from __future__ import annotations

import datetime as dt

import pytest
from rest_framework.test import APIClient

from tests.factories import SiteFactory, UserFactory
from tests.reports.factories import FAKE_PDF, MonthlyReportFactory

pytestmark = pytest.mark.django_db


@pytest.fixture
def site(manager):
    site = SiteFactory()
    site.managers.add(manager)
    return site


def client_for(user) -> APIClient:
    client = APIClient()
    if user is not None:
        client.force_authenticate(user)
    return client


def test_it_lists_a_sites_reports_for_the_office(office_user, site):
    """The office sees every stored version, newest month then newest version first, with
    month, version, checksum and links to the PDFs."""
    MonthlyReportFactory(site=site, month=dt.date(2026, 2, 1), version=1)
    MonthlyReportFactory(site=site, month=dt.date(2026, 3, 1), version=1)
    MonthlyReportFactory(site=site, month=dt.date(2026, 3, 1), version=2)
    response = client_for(office_user).get(f"/api/v1/sites/{site.pk}/reports/")
    assert response.status_code == 200
    rows = response.json()["results"]
    assert [(r["month"], r["version"]) for r in rows] == [
        ("2026-03", 2),
        ("2026-03", 1),
        ("2026-02", 1),
    ]
    assert len(rows[0]["checksum_sha256"]) == 64
    assert rows[0]["links"]["pdf"].endswith(
        f"/api/v1/sites/{site.pk}/reports/2026-03.pdf?version=2"
    )
    assert rows[0]["links"]["latest_pdf"].endswith("/reports/2026-03.pdf")
    assert f"/reports/sites/{site.pk}/2026-03/?version=2" in rows[0]["links"]["html"]


def test_a_manager_sees_only_the_sites_they_manage(manager, site):
    """A manager of the site gets its list; another site is 404, not 403."""
    MonthlyReportFactory(site=site)
    other = MonthlyReportFactory()
    client = client_for(manager)
    assert client.get(f"/api/v1/sites/{site.pk}/reports/").status_code == 200
    assert client.get(f"/api/v1/sites/{other.site_id}/reports/").status_code == 404
    assert client.get(f"/api/v1/sites/{other.site_id}/reports/2026-03.pdf").status_code == 404


@pytest.mark.parametrize("who", ["technician", "other_manager", "nobody_in_particular"])
def test_anyone_else_gets_404(who, technician, site, request):
    """A technician, a manager of other sites and a user with no role get 404 for both the
    list and the PDF of a site that has reports."""
    MonthlyReportFactory(site=site)
    user = {
        "technician": technician,
        "other_manager": UserFactory(username="manager9", role="manager"),
        "nobody_in_particular": UserFactory(username="plain"),
    }[who]
    client = client_for(user)
    assert client.get(f"/api/v1/sites/{site.pk}/reports/").status_code == 404
    assert client.get(f"/api/v1/sites/{site.pk}/reports/2026-03.pdf").status_code == 404


def test_anonymous_requests_must_authenticate(site):
    """Without credentials the API answers 401 and names no report."""
    MonthlyReportFactory(site=site)
    assert client_for(None).get(f"/api/v1/sites/{site.pk}/reports/").status_code == 401
    assert client_for(None).get(f"/api/v1/sites/{site.pk}/reports/2026-03.pdf").status_code == 401


def test_the_pdf_endpoint_serves_the_latest_version_or_the_one_asked_for(manager, site):
    """`{YYYY-MM}.pdf` returns the latest version's file as application/pdf; `?version=1`
    the first; an absent version or month is 404 and a malformed version a 400 naming it."""
    MonthlyReportFactory(site=site, version=1)
    latest = MonthlyReportFactory(site=site, version=2)
    client = client_for(manager)
    response = client.get(
        f"/api/v1/sites/{site.pk}/reports/2026-03.pdf", HTTP_ACCEPT="application/pdf"
    )
    assert response.status_code == 200
    assert response["Content-Type"] == "application/pdf"
    assert response["X-Report-Version"] == str(latest.version)
    assert b"".join(response.streaming_content) == FAKE_PDF
    first = client.get(f"/api/v1/sites/{site.pk}/reports/2026-03.pdf?version=1")
    assert first["X-Report-Version"] == "1"
    assert client.get(f"/api/v1/sites/{site.pk}/reports/2026-03.pdf?version=7").status_code == 404
    assert client.get(f"/api/v1/sites/{site.pk}/reports/2026-04.pdf").status_code == 404
    assert client.get(f"/api/v1/sites/{site.pk}/reports/2026-13.pdf").status_code == 404
    bad = client.get(
        f"/api/v1/sites/{site.pk}/reports/2026-03.pdf?version=two", HTTP_ACCEPT="application/pdf"
    )
    assert bad.status_code == 400
    assert "version" in bad.json()


def test_listing_costs_the_same_queries_for_1_and_many_reports(
    office_user, django_assert_max_num_queries
):
    """The list endpoint runs a fixed number of queries whether the site has 1 report or
    12 (no query per row)."""
    one, many = SiteFactory(), SiteFactory()
    MonthlyReportFactory(site=one)
    for month in range(1, 13):
        MonthlyReportFactory(site=many, month=dt.date(2025, month, 1), version=1)
    client = client_for(office_user)
    for site, count in ((one, 1), (many, 12)):
        with django_assert_max_num_queries(4):
            response = client.get(f"/api/v1/sites/{site.pk}/reports/")
        assert response.json()["count"] == count
