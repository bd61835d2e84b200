"""What the browser is told and given in production: a Content-Security-Policy that allows
only our own scripts and styles (the pages have nothing inline), and static files with
hashed, compressed names served by WhiteNoise after collectstatic."""

from __future__ import annotations

import re

import pytest
from django.core.management import call_command
from django.test import Client

from tests.factories import SiteFactory
from tests.reports.factories import MonthlyReportFactory

pytestmark = pytest.mark.django_db

INLINE_SCRIPT = re.compile(r"<script(?![^>]*\bsrc=)[^>]*>", re.IGNORECASE)
INLINE_STYLE = re.compile(r"<style\b|\sstyle=|\son[a-z]+=", re.IGNORECASE)


def _policy(response) -> dict[str, list[str]]:
    header = response["Content-Security-Policy"]
    return {
        name: values
        for name, *values in (part.split() for part in header.split(";") if part.strip())
    }


def _has_nothing_inline(html: str) -> None:
    assert not INLINE_SCRIPT.search(html), INLINE_SCRIPT.search(html)
    assert not INLINE_STYLE.search(html), INLINE_STYLE.search(html)


@pytest.mark.parametrize("path", ["/accounts/login/", "/admin/login/"])
def test_sign_in_pages_allow_only_our_own_scripts_and_styles(client, path):
    response = client.get(path)
    assert response.status_code == 200
    policy = _policy(response)
    assert policy["script-src"] == ["'self'"]
    assert policy["style-src"] == ["'self'"]
    assert policy["default-src"] == ["'self'"]
    assert policy["object-src"] == ["'none'"]
    assert policy["frame-ancestors"] == ["'none'"]
    _has_nothing_inline(response.content.decode())


@pytest.mark.parametrize("path", ["/schedule/", "/maintenance/", "/sites/", "/admin/"])
def test_office_pages_run_nothing_inline(client, office_user, path):
    """Under that policy an inline script or style would be refused by the browser: the
    pages have none (htmx's own indicator styles are in site.css)."""
    office_user.is_staff = True
    office_user.save()
    client.force_login(office_user)
    response = client.get(path)
    assert response.status_code == 200
    assert _policy(response)["script-src"] == ["'self'"]
    html = response.content.decode()
    _has_nothing_inline(html)
    if path != "/admin/":
        assert '"includeIndicatorStyles": false' in html


def test_the_api_docs_page_may_style_itself_but_loads_scripts_only_from_us(client):
    response = client.get("/api/docs/")
    assert response.status_code == 200
    policy = _policy(response)
    assert policy["script-src"] == ["'self'"]
    assert policy["style-src"] == ["'self'", "'unsafe-inline'"]
    assert policy["worker-src"] == ["'self'", "blob:"]


def test_a_stored_report_may_style_itself_but_runs_no_script(client, manager):
    """A report is a self-contained file with inline styles (also the PDF's source)."""
    site = SiteFactory()
    site.managers.add(manager)
    report = MonthlyReportFactory(site=site, html="<html><style>h1{}</style><h1>R</h1></html>")
    client.force_login(manager)
    response = client.get(f"/reports/sites/{site.pk}/{report.month:%Y-%m}/")
    assert response.status_code == 200
    policy = _policy(response)
    assert policy["style-src"] == ["'self'", "'unsafe-inline'"]
    assert policy["script-src"] == ["'self'"]


def test_after_collectstatic_pages_link_hashed_files_that_are_served(settings, tmp_path):
    """Production's storage: collectstatic writes hashed, compressed copies; the pages link
    the hashed names and WhiteNoise serves them (compressed when asked), cached for long."""
    settings.STATIC_ROOT = tmp_path / "static"
    settings.STORAGES = {
        **settings.STORAGES,
        "staticfiles": {"BACKEND": "whitenoise.storage.CompressedManifestStaticFilesStorage"},
    }
    call_command("collectstatic", interactive=False, verbosity=0)
    browser = Client()  # a new client: WhiteNoise reads the collected files as it starts
    html = browser.get("/accounts/login/").content.decode()
    css = re.search(r'href="(/static/rimewatch/site\.[0-9a-f]{12}\.css)"', html)
    script = re.search(r'src="(/static/vendor/htmx-2\.0\.11\.min\.[0-9a-f]{12}\.js)"', html)
    assert css, html
    assert script, html
    served = browser.get(css.group(1))
    assert served.status_code == 200
    assert b".htmx-indicator" in b"".join(served.streaming_content)
    assert "immutable" in served["Cache-Control"]
    compressed = browser.get(script.group(1), HTTP_ACCEPT_ENCODING="gzip")
    assert compressed.status_code == 200
    assert compressed["Content-Encoding"] == "gzip"
