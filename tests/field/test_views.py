"""The app's three views: the shell opens without a session (the app signs in with a token),
runs nothing inline under the Content-Security-Policy, installs with our own manifest, and
its service worker keeps every file the app loads."""

from __future__ import annotations

import json
import re
from pathlib import Path

import pytest
from django.test import Client

from field.views import ASSETS, MODULES

pytestmark = pytest.mark.django_db

STATIC = Path(__file__).resolve().parents[2] / "field" / "static" / "field"
INLINE_SCRIPT = re.compile(r"<script(?![^>]*\bsrc=)[^>]*>", re.IGNORECASE)
INLINE_STYLE = re.compile(r"<style\b|\sstyle=|\son[a-z]+=", re.IGNORECASE)


def test_the_shell_opens_without_signing_in_and_runs_nothing_inline():
    response = Client().get("/field/")
    assert response.status_code == 200
    html = response.content.decode()
    assert not INLINE_SCRIPT.search(html)
    assert not INLINE_STYLE.search(html)
    assert 'type="module" src="/static/field/app.js"' in html
    assert 'rel="manifest" href="/field/manifest.webmanifest"' in html
    policy = response["Content-Security-Policy"]
    assert "script-src 'self'" in policy
    assert "style-src 'self'" in policy


def test_the_manifest_names_our_app_and_its_icons():
    response = Client().get("/field/manifest.webmanifest")
    assert response.status_code == 200
    assert response["Content-Type"] == "application/manifest+json"
    manifest = json.loads(response.content)
    assert manifest["name"] == "Rimewatch Field"
    assert manifest["start_url"] == manifest["scope"] == "/field/"
    assert manifest["display"] == "standalone"
    assert {icon["sizes"] for icon in manifest["icons"]} == {"any", "192x192", "512x512"}
    for icon in manifest["icons"]:
        assert (STATIC / Path(icon["src"]).name).is_file(), icon["src"]


def test_the_service_worker_is_scoped_to_the_app_and_keeps_every_file_it_loads():
    response = Client().get("/field/sw.js")
    assert response.status_code == 200
    assert response["Content-Type"].startswith("text/javascript")
    assert response["Service-Worker-Allowed"] == "/field/"
    assert response["Cache-Control"] == "no-cache"
    script = response.content.decode()
    files = json.loads(re.search(r"^const FILES = (.*);$", script, re.MULTILINE).group(1))
    # Every module and asset in the app's folder is kept, so no import fails offline.
    on_disk = {p.name for p in STATIC.iterdir() if p.suffix in {".js", ".css", ".svg", ".png"}}
    assert on_disk == set(MODULES) | set(ASSETS)
    for name in on_disk:
        assert f"/static/field/{name}" in files, name
    assert "/field/" in files
    assert "/field/manifest.webmanifest" in files


@pytest.mark.parametrize("path", ["/field/", "/field/manifest.webmanifest", "/field/sw.js"])
def test_the_views_read_no_records(path, django_assert_num_queries):
    """The app reads everything through the API: its own views ask the database nothing."""
    client = Client()
    with django_assert_num_queries(0):
        assert client.get(path).status_code == 200


def test_the_views_take_no_writes():
    for path in ("/field/", "/field/manifest.webmanifest", "/field/sw.js"):
        assert Client().post(path).status_code == 405
