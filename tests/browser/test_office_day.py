"""A coordinator's day in a real browser: book a visit and see it on the schedule; the
technician posts readings and submits through the REST API; the office reviews and accepts;
the site's manager opens the site report. Screenshots of the pages go to tests/screenshots/."""

from __future__ import annotations

import re
import uuid

import httpx
import pytest
from django.utils import timezone

from fleet.models import Visit
from tests.factories import SiteFactory, UnitFactory, UserFactory

pytestmark = [
    pytest.mark.browser,
    pytest.mark.django_db(transaction=True, serialized_rollback=True),
]

PASSWORD = "test-pass-123"  # tests.factories.UserFactory's synthetic password


def sign_in(page, base: str, username: str) -> None:
    page.goto(f"{base}/accounts/login/")
    page.get_by_label("Username").fill(username)
    page.get_by_label("Password").fill(PASSWORD)
    page.get_by_role("button", name="Sign in").click()
    page.wait_for_load_state()


def _people_and_site():
    office = UserFactory(username="dana", first_name="Dana", last_name="Whitcombe", role="office")
    tech = UserFactory(username="marco", first_name="Marco", last_name="Ruiz", role="technician")
    boss = UserFactory(username="priya", first_name="Priya", last_name="Anand", role="manager")
    site = SiteFactory(name="Harbour Deli", address="4 Pier Road", time_zone="America/Chicago")
    site.managers.add(boss)
    unit = UnitFactory(site=site, tag="HD-WIC-1", description="Walk-in cooler")
    UnitFactory(site=site, tag="HD-RI-1", description="Reach-in", application="reach_in")
    return office, tech, boss, site, unit


def test_a_coordinators_day(live_server, browser_context, shot):
    """Office books a visit (the model's error shown beside the field first), sees it on the
    week; the technician posts readings and submits over the API; the office sees the score
    in the review queue and accepts; the manager opens the site's report."""
    _office, _tech, _boss, site, unit = _people_and_site()
    base = live_server.url
    page = browser_context.new_page()
    sign_in(page, base, "dana")
    assert page.get_by_role("heading", name=re.compile("Schedule")).is_visible()

    day = timezone.localdate()
    page.goto(f"{base}/visits/new/")
    page.locator("#id_site").select_option(str(site.pk))
    page.locator(f"input[name=units][value='{unit.pk}']").wait_for()  # swapped in by htmx
    page.locator(f"input[name=units][value='{unit.pk}']").check()
    page.get_by_label("Marco Ruiz").check()
    page.locator("#id_window_start").fill(f"{day:%Y-%m-%d}T13:00")
    page.locator("#id_window_end").fill(f"{day:%Y-%m-%d}T09:00")
    page.get_by_role("button", name="Book the visit").click()
    error = page.locator("#id_window_end_errors")
    assert "must be after the start of the window" in error.inner_text()
    shot(page, "visit-form-errors")
    page.locator("#id_window_end").fill(f"{day:%Y-%m-%d}T16:00")
    page.get_by_role("button", name="Book the visit").click()
    page.get_by_text("booked.").wait_for()
    visit = Visit.objects.get(site=site)
    assert visit.status == "scheduled"

    page.get_by_role("link", name="Schedule", exact=True).click()
    card = page.locator(".visit-card", has_text=visit.reference)
    assert card.is_visible()
    assert "Harbour Deli" in card.inner_text()
    shot(page, "schedule")

    # The technician's phone, over the REST API with a token.
    with httpx.Client(base_url=base, timeout=60) as api:
        token = api.post(
            "/api/v1/auth/token/", json={"username": "marco", "password": PASSWORD}
        ).json()["token"]
        api.headers["Authorization"] = f"Token {token}"
        assert api.post(f"/api/v1/visits/{visit.pk}/start/").status_code == 200
        posted = api.post(
            f"/api/v1/visits/{visit.pk}/reading-sets/",
            json={
                "unit": unit.pk,
                "client_id": str(uuid.uuid4()),
                "taken_at": timezone.now().isoformat(),
                "stage": "as_found",
                "units": {"temperature": "F", "pressure": "psig", "mass": "lb"},
                "box_temp": 38.0,
                "entering_air_temp": 88.0,
                "suction_pressure": 52.0,
                "suction_line_temp": 40.0,
                "head_pressure": 265.0,
                "liquid_line_temp": 101.0,
                "compressor_amps": [9.1],
                "supply_volts": [231],
                "notes": "Condenser coil dusty.",
            },
        )
        assert posted.status_code == 201, posted.text
        submitted = api.post(
            f"/api/v1/visits/{visit.pk}/submit/", json={"work_summary": "Readings, coil check."}
        )
        assert submitted.status_code == 200, submitted.text

    page.get_by_role("link", name=re.compile("Review")).click()
    row = page.locator("tr", has_text=visit.reference)
    assert row.is_visible()
    shot(page, "review-queue")
    row.get_by_role("link", name=visit.reference).click()
    assert page.locator(".tally").first.is_visible()
    shot(page, "visit-review")
    page.get_by_label("Accept the visit").check()
    page.get_by_role("button", name="Record the decision").click()
    page.get_by_text("accepted").wait_for()
    visit.refresh_from_db()
    assert visit.status == "reviewed"

    page.goto(f"{base}/units/{unit.pk}/")
    assert page.get_by_role("heading", name="Latest diagnosis").is_visible()
    shot(page, "unit")
    page.goto(f"{base}/attention/")
    shot(page, "attention")
    page.goto(f"{base}/maintenance/")
    shot(page, "maintenance")

    # The manager's monthly report for the site.
    from reports.months import Month
    from reports.services import generate_monthly_report

    generate_monthly_report(site, Month.of(day))
    browser_context.clear_cookies()
    sign_in(page, base, "priya")
    page.get_by_role("link", name="Harbour Deli").click()
    shot(page, "site-manager")
    page.get_by_role("link", name=f"{day:%B %Y}", exact=True).click()
    page.wait_for_load_state()
    assert "Harbour Deli" in page.content()
    shot(page, "site-report")
    assert page.goto(f"{base}/attention/").status == 404


def test_it_is_usable_by_keyboard_and_on_a_tablet(live_server, browser_context, shot):
    """The skip link shows when focused; signing in works from the keyboard alone; the
    focused control shows an outline; at a tablet's width nothing overflows the page (the
    schedule scrolls inside its own frame) and the unit page stacks."""
    _people_and_site()
    base = live_server.url
    page = browser_context.new_page()
    page.set_viewport_size({"width": 820, "height": 1180})
    page.goto(f"{base}/accounts/login/")
    skip = page.locator(".skip-link")
    skip.focus()  # hidden off-screen until focused, then shown at the top
    assert skip.bounding_box()["y"] >= 0
    page.get_by_label("Username").focus()
    page.keyboard.type("dana")
    page.keyboard.press("Tab")
    page.keyboard.type(PASSWORD)
    outline = page.evaluate("getComputedStyle(document.activeElement).outlineStyle")
    assert outline != "none"
    page.keyboard.press("Enter")
    page.wait_for_url(re.compile(r"/schedule/"))
    width = page.evaluate("document.documentElement.scrollWidth")
    assert width <= 820
    shot(page, "schedule-tablet")
    unit_id = UnitFactory._meta.model.objects.get(tag="HD-WIC-1").pk
    page.goto(f"{base}/units/{unit_id}/")
    assert page.evaluate("document.documentElement.scrollWidth") <= 820
    shot(page, "unit-tablet")
    page.goto(f"{base}/review/")
    page.keyboard.press("Tab")
    page.keyboard.press("Tab")
    assert page.evaluate("document.activeElement.tagName") == "A"
