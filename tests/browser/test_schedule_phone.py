"""The technician's week on a phone (390 px wide): one day under the other, today first and
on the first screen, nothing wider than the screen; on a desktop the week stays a table."""

from __future__ import annotations

import datetime as dt

import pytest
from django.utils import timezone

from tests.browser.test_office_day import sign_in
from tests.factories import SiteFactory, UnitFactory, UserFactory, VisitFactory, VisitUnitFactory

pytestmark = [
    pytest.mark.browser,
    pytest.mark.django_db(transaction=True, serialized_rollback=True),
]


def _visit(tech, site, day: dt.date, hour: int):
    start = timezone.make_aware(dt.datetime.combine(day, dt.time(hour)))
    visit = VisitFactory(
        site=site,
        status="scheduled",
        window_start=start,
        window_end=start + dt.timedelta(hours=2),
        technicians=[tech],
    )
    VisitUnitFactory(visit=visit, unit=UnitFactory(site=site))
    return visit


def test_on_a_phone_today_comes_first_and_fits(live_server, browser_context, shot):
    tech = UserFactory(username="marco", role="technician")
    today = timezone.localdate()
    monday = today - dt.timedelta(days=today.weekday())
    sunday = monday + dt.timedelta(days=6)
    # A visit on the first and last day of the week, and one today: today's must lead.
    for day, name in ((monday, "Monday Market"), (sunday, "Sunday Deli"), (today, "Today Bakery")):
        _visit(tech, SiteFactory(name=name), day, 9)

    page = browser_context.new_page()
    page.set_viewport_size({"width": 390, "height": 844})
    sign_in(page, live_server.url, "marco")
    page.goto(f"{live_server.url}/schedule/")
    today_card = page.locator(".visit-card", has_text="Today Bakery")
    box = today_card.bounding_box()
    assert box is not None
    assert box["x"] >= 0
    assert box["x"] + box["width"] <= 390
    assert box["y"] + box["height"] <= 844, "today's visit is on the first screen"
    width = page.evaluate("document.documentElement.scrollWidth")
    assert width <= 390, f"the page is {width} px wide on a 390 px screen"
    first_day = page.locator(".schedule td").evaluate_all(
        "cells => cells.sort((a, b) => a.getBoundingClientRect().top"
        " - b.getBoundingClientRect().top)[0].dataset.day"
    )
    assert first_day.endswith("today")
    assert page.locator("td.is-today").evaluate("td => getComputedStyle(td, '::before').content")
    shot(page, "schedule-phone-390")

    page.set_viewport_size({"width": 1280, "height": 900})
    assert page.locator(".schedule thead").is_visible(), "a desktop keeps the week's table"
