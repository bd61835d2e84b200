"""Browser tests: Playwright driving Debian's chromium against Django's live server.

Never downloads a browser: it uses /usr/bin/chromium (``make test`` installs it through
scripts/ensure-browser.sh when it is missing and the user is root). Without chromium or
Playwright the tests are skipped with a loud reason, unless REQUIRE_BROWSER=1 (CI), where the
skip becomes a failure.
"""

from __future__ import annotations

import os
import shutil
import tempfile
from pathlib import Path

import pytest

CHROMIUM = os.environ.get("RIMEWATCH_CHROMIUM", "/usr/bin/chromium")
HEADLESS_FLAGS = [
    "--headless",
    "--no-sandbox",
    "--disable-gpu",
    "--disable-quic",
    "--no-first-run",
    "--disable-background-networking",
    "--disable-component-update",
    "--disable-sync",
]
SCREENSHOTS = Path(__file__).resolve().parent.parent / "screenshots"


def browser_missing() -> str | None:
    """Why the browser tests cannot run here, or None when they can."""
    try:
        import playwright.sync_api  # noqa: F401
    except ImportError:
        return "the Playwright package is not installed (pip install -e '.[dev]')"
    if not (os.path.exists(CHROMIUM) and os.access(CHROMIUM, os.X_OK)):
        return f"no chromium at {CHROMIUM} (apt-get install chromium, or `make test` as root)"
    return None


def pytest_runtest_setup(item: pytest.Item) -> None:
    """Skip browser tests loudly where no browser is available; fail under REQUIRE_BROWSER=1."""
    if item.get_closest_marker("browser") is None:
        return
    reason = browser_missing()
    if reason is None:
        return
    message = f"BROWSER TESTS NOT RUN: {reason}"
    if os.environ.get("REQUIRE_BROWSER") == "1":
        pytest.fail(f"{message} (REQUIRE_BROWSER=1 turns this skip into a failure)")
    pytest.skip(message)


@pytest.fixture
def browser_context(monkeypatch):
    """A fresh chromium with an empty profile, closed (and its profile removed) afterwards."""
    from playwright.sync_api import sync_playwright

    # Playwright's sync API runs an event loop in this thread; the test's own ORM calls are
    # still plain synchronous code, so Django's async-safety guard is told so (this test only).
    monkeypatch.setenv("DJANGO_ALLOW_ASYNC_UNSAFE", "true")

    profile = tempfile.mkdtemp(prefix="rimewatch-chromium-")
    SCREENSHOTS.mkdir(exist_ok=True)
    with sync_playwright() as p:
        context = p.chromium.launch_persistent_context(
            profile,
            executable_path=CHROMIUM,
            headless=True,
            args=HEADLESS_FLAGS,
            viewport={"width": 1280, "height": 900},
        )
        context.set_default_timeout(20_000)
        try:
            yield context
        finally:
            context.close()
            shutil.rmtree(profile, ignore_errors=True)


@pytest.fixture
def shot():
    """Save a full-page screenshot under tests/screenshots/ (kept after the run)."""

    def take(page, name: str) -> Path:
        path = SCREENSHOTS / f"{name}.png"
        page.screenshot(path=str(path), full_page=True)
        return path

    return take


@pytest.fixture(scope="session", autouse=True)
def _no_session_left_on_the_test_database(django_db_setup, django_db_blocker):
    """The browser tests leave one idle PostgreSQL session behind. Its last statement is
    one of a test body's own queries, made while Playwright's sync API runs; most likely
    that code runs in a context of its own, where Django holds another connection that its
    teardown never closes. PostgreSQL refuses to drop a database with a session open, so
    any such session is ended before the test database is dropped."""
    yield
    from django.db import connection

    if connection.vendor != "postgresql":
        return
    with django_db_blocker.unblock(), connection.cursor() as cursor:
        cursor.execute(
            "SELECT pg_terminate_backend(pid) FROM pg_stat_activity "
            "WHERE datname = current_database() AND pid <> pg_backend_pid()"
        )
