"""The phone on the demo fleet, end to end: a demo technician finishes one of today's visits
in progress from the phone, partly with no signal (as-left readings on the walk-in, a part
replaced, the submit), and the office accepts it on the visit's page. The demo fleet is the
invented scenario `make run` serves; its users and passwords are in fixtures/demo/fleet.py."""

from __future__ import annotations

import re

import pytest
from django.utils import timezone

from fixtures.demo.fleet import USERS
from fixtures.load import load_demo_fleet
from fleet.models import Component, ReadingSet, Visit
from tests.browser.test_field_app import (
    PHONE,
    enter_readings,
    nothing_waiting,
    sign_in,
    wait_until,
)

pytestmark = [
    pytest.mark.browser,
    pytest.mark.django_db(transaction=True, serialized_rollback=True),
]

PASSWORDS = {user[0]: user[4] for user in USERS}


def test_a_demo_visit_finished_on_the_phone_and_accepted_by_the_office(
    live_server, browser_context, shot
):
    load_demo_fleet(timezone.localdate())
    visit = Visit.objects.get(site__name="Copper Kettle Riverside", status="in_progress")
    technician = visit.technicians.get().username
    sets_before = ReadingSet.objects.filter(visit_unit__visit=visit).count()
    base = live_server.url

    page = browser_context.new_page()
    page.set_viewport_size(PHONE)
    sign_in(page, base, technician, PASSWORDS[technician])
    page.get_by_role("link", name=re.compile("Copper Kettle Riverside")).first.click()
    page.get_by_text("hatch key").wait_for()  # the site's access notes
    page.get_by_role("link", name=re.compile("CKR-WIC-1")).click()
    page.get_by_role("heading", name="Gauges and thermometers").wait_for()

    browser_context.set_offline(True)
    page.get_by_text("No signal").wait_for()
    enter_readings(page, "52", "265", stage="as_left")
    parts = page.locator("form", has=page.get_by_role("heading", name="Part replaced"))
    parts.get_by_label("What went in").select_option("contactor")
    parts.get_by_label("Why").fill("Contacts pitted.")
    parts.get_by_role("button", name="Save the part").click()
    page.get_by_text(re.compile("2 waiting to send")).wait_for()
    page.get_by_role("link", name="← The visit").click()
    page.get_by_role("link", name="Finish and submit").click()
    page.get_by_label(re.compile("^Work summary")).fill("As-left readings, new contactor.")
    page.get_by_role("button", name="Submit the visit").click()
    page.get_by_text(re.compile("3 waiting to send")).wait_for()
    shot(page, "field-demo-offline")

    browser_context.set_offline(False)
    wait_until(lambda: Visit.objects.get(pk=visit.pk).status == "submitted")
    nothing_waiting(page)
    on_visit = ReadingSet.objects.filter(visit_unit__visit=visit)
    assert on_visit.count() == sets_before + 1
    assert on_visit.filter(stage="as_left", visit_unit__unit__tag="CKR-WIC-1").count() == 1
    assert Component.objects.filter(changed_on_visit=visit, kind="contactor").count() == 1

    office = browser_context.new_page()
    office.goto(f"{base}/accounts/login/")
    office.get_by_label("Username").fill("office")
    office.get_by_label("Password").fill(PASSWORDS["office"])
    office.get_by_role("button", name="Sign in").click()
    office.goto(f"{base}/review/")
    office.get_by_role("link", name=visit.reference).click()
    assert "As-left readings, new contactor." in office.locator("main").inner_text()
    office.get_by_label("Accept the visit").check()
    office.get_by_role("button", name="Record the decision").click()
    office.get_by_text("accepted").wait_for()
    assert Visit.objects.get(pk=visit.pk).status == "reviewed"
