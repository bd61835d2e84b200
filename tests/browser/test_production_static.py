"""The pages as production serves them: collectstatic's hashed files served by WhiteNoise
(not the development server's finders) under the Content-Security-Policy, in a real browser:
styled, htmx loaded and swapping, the admin's scripts and the API reference page working,
and nothing refused by the policy."""

from __future__ import annotations

import re
from collections.abc import Iterator

import pytest
from django.core.management import call_command
from django.db import connections
from django.test.testcases import LiveServerThread

from tests.factories import SiteFactory, UnitFactory, UserFactory

pytestmark = [
    pytest.mark.browser,
    pytest.mark.django_db(transaction=True, serialized_rollback=True),
]

PASSWORD = "test-pass-123"  # tests.factories.UserFactory's synthetic password


@pytest.fixture
def production_server(settings, tmp_path) -> Iterator[str]:
    """A live server whose static files come only from collectstatic's output, through
    WhiteNoise in the middleware, as under gunicorn."""
    settings.STATIC_ROOT = tmp_path / "static"
    settings.STORAGES = {
        **settings.STORAGES,
        "staticfiles": {"BACKEND": "whitenoise.storage.CompressedManifestStaticFilesStorage"},
    }
    call_command("collectstatic", interactive=False, verbosity=0)
    in_memory = {
        conn.alias: conn
        for conn in connections.all()
        if conn.vendor == "sqlite" and conn.is_in_memory_db()
    }
    for conn in in_memory.values():
        conn.inc_thread_sharing()
    thread = LiveServerThread(
        "127.0.0.1", static_handler=lambda app: app, connections_override=in_memory
    )
    thread.daemon = True
    thread.start()
    thread.is_ready.wait()
    if thread.error:
        raise thread.error
    try:
        yield f"http://127.0.0.1:{thread.port}"
    finally:
        thread.terminate()
        for conn in in_memory.values():
            conn.dec_thread_sharing()


def test_pages_are_styled_and_scripted_from_hashed_files_under_the_policy(
    production_server, browser_context
):
    UserFactory(username="dana", role="office", is_staff=True)
    site = SiteFactory(name="Harbour Deli")
    unit = UnitFactory(site=site, tag="HD-WIC-1")
    page = browser_context.new_page()
    refused: list[str] = []
    page.on("console", lambda m: refused.append(m.text) if "Content Security" in m.text else None)

    page.goto(f"{production_server}/accounts/login/")
    page.get_by_label("Username").fill("dana")
    page.get_by_label("Password").fill(PASSWORD)
    page.get_by_role("button", name="Sign in").click()
    page.wait_for_load_state()

    page.goto(f"{production_server}/schedule/")
    stylesheet = page.locator("link[rel=stylesheet]").get_attribute("href") or ""
    assert re.fullmatch(r"/static/rimewatch/site\.[0-9a-f]{12}\.css", stylesheet)
    topbar = page.locator(".topbar").evaluate("e => getComputedStyle(e).display")
    assert topbar == "flex"  # site.css applied
    assert page.evaluate("typeof window.htmx") == "object"

    page.goto(f"{production_server}/visits/new/")
    page.locator("#id_site").select_option(str(site.pk))
    page.locator(f"input[name=units][value='{unit.pk}']").wait_for()  # swapped in by htmx

    # The admin's own scripts and styles are files too: its pages work under the policy.
    page.goto(f"{production_server}/admin/fleet/site/")
    page.locator("#action-toggle").check()  # the admin's actions.js selects every row
    assert page.locator("input.action-select").first.is_checked()
    page.goto(f"{production_server}/admin/fleet/site/{site.pk}/change/")
    assert page.locator("#site_form").is_visible()

    # The reports' pages: the site's layout and its hashed stylesheet, in the menu.
    for path in ("/reports/", f"/reports/sites/{site.pk}/"):
        page.goto(f"{production_server}{path}")
        stylesheet = page.locator("link[rel=stylesheet]").get_attribute("href") or ""
        assert re.fullmatch(r"/static/rimewatch/site\.[0-9a-f]{12}\.css", stylesheet), path
        assert page.locator(".topbar").evaluate("e => getComputedStyle(e).display") == "flex"
        assert page.get_by_role("link", name="Reports").first.is_visible()
    assert refused == []

    # The API reference page: Redoc from our static files, styling itself inline and
    # parsing the schema in a worker, as its page's policy allows. Only what Redoc would
    # fetch from another host (its maker's logo) is refused.
    page.goto(f"{production_server}/api/docs/")
    page.get_by_role("heading", name=re.compile("Rimewatch API")).first.wait_for()
    assert [text for text in refused if "'https://" not in text] == []
