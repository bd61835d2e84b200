"""Office pages: list the reports within reach, view the stored HTML, download the PDF."""

from __future__ import annotations

import datetime as dt

import pytest

from tests.factories import SiteFactory, UserFactory
from tests.reports.factories import FAKE_PDF, MonthlyReportFactory

pytestmark = pytest.mark.django_db


@pytest.fixture
def report(manager):
    site = SiteFactory(name="Harbour Deli")
    site.managers.add(manager)
    return MonthlyReportFactory(site=site, html="<html><body><h1>Stored v1</h1></body></html>")


def test_pages_need_a_sign_in(client, report):
    """An anonymous visitor is sent to the sign-in page."""
    response = client.get("/reports/")
    assert response.status_code == 302
    assert "/accounts/login/" in response["Location"]


def test_a_manager_lists_views_and_downloads_their_sites_reports(client, manager, report):
    """The index names the manager's site; the site page lists the version with view and
    download links; the view serves the stored HTML; the download is the stored PDF."""
    client.force_login(manager)
    index = client.get("/reports/")
    assert index.status_code == 200
    assert "Harbour Deli" in index.content.decode()
    listing = client.get(f"/reports/sites/{report.site_id}/").content.decode()
    assert f"/reports/sites/{report.site_id}/2026-03/?version={report.version}" in listing
    assert f"/reports/sites/{report.site_id}/2026-03.pdf?version={report.version}" in listing
    page = client.get(f"/reports/sites/{report.site_id}/2026-03/")
    assert page.status_code == 200
    assert page.content.decode() == report.html
    pdf = client.get(f"/reports/sites/{report.site_id}/2026-03.pdf")
    assert pdf["Content-Type"] == "application/pdf"
    assert "attachment" in pdf["Content-Disposition"]
    assert b"".join(pdf.streaming_content) == FAKE_PDF


def test_the_office_sees_every_site(client, office_user, report):
    """The office reaches any site's reports."""
    client.force_login(office_user)
    assert client.get(f"/reports/sites/{report.site_id}/2026-03/").status_code == 200


def test_outsiders_get_404(client, technician, report):
    """A technician and a manager of another site get 404 on the site page, the report and
    its PDF, and the index does not name the site."""
    stranger = UserFactory(username="manager8", role="manager")
    stranger_site = SiteFactory()
    stranger_site.managers.add(stranger)
    for user in (technician, stranger):
        client.force_login(user)
        assert "Harbour Deli" not in client.get("/reports/").content.decode()
        for url in (
            f"/reports/sites/{report.site_id}/",
            f"/reports/sites/{report.site_id}/2026-03/",
            f"/reports/sites/{report.site_id}/2026-03.pdf",
        ):
            assert client.get(url).status_code == 404, (user.username, url)


def test_an_earlier_version_stays_readable(client, office_user, report):
    """A regenerated month keeps version 1 readable with ?version=1 while the plain address
    shows the latest; an unknown or malformed version is 404."""
    MonthlyReportFactory(
        site=report.site,
        month=dt.date(2026, 3, 1),
        version=report.version + 1,
        html="<html><body><h1>Stored v2</h1></body></html>",
    )
    client.force_login(office_user)
    base = f"/reports/sites/{report.site_id}/2026-03/"
    assert "Stored v2" in client.get(base).content.decode()
    assert "Stored v1" in client.get(f"{base}?version={report.version}").content.decode()
    assert client.get(f"{base}?version=99").status_code == 404
    assert client.get(f"{base}?version=x").status_code == 404


@pytest.mark.parametrize("url", ["/reports/", "/reports/sites/{site}/"], ids=["index", "site"])
def test_the_report_pages_use_the_site_layout(client, manager, report, url):
    """The reports' own pages carry the site's layout: its style sheet, the menu with the
    reports marked as the current page, the user's name and role."""
    client.force_login(manager)
    html = client.get(url.format(site=report.site_id)).content.decode()
    assert "rimewatch/site.css" in html
    assert 'class="mainnav"' in html
    assert '<a href="/reports/" aria-current="page">Reports</a>' in html
    assert "(manager)" in html


@pytest.mark.parametrize(
    ("role", "linked"),
    [("office", True), ("manager", True), ("technician", False)],
)
def test_the_menu_links_the_reports_for_roles_that_read_them(client, role, linked):
    """The menu links /reports/ for the office and managers, not for technicians (who read
    no report)."""
    client.force_login(UserFactory(username=f"menu-{role}", role=role))
    html = client.get("/sites/").content.decode()
    assert ('href="/reports/"' in html) is linked
