"""The technician's app in a real browser at a phone's size: sign in, open today's visit,
start it, record readings online, lose the signal, record two more reading sets and a
refrigerant addition and submit, get the signal back: the server holds exactly those
records once each, and the office's review queue shows the visit. An answer lost on the way
back (the server stored the post, the phone never heard) is sent again and never doubles.
Screenshots of the screens go to tests/screenshots/."""

from __future__ import annotations

import datetime as dt
import re
import time

import httpx
import pytest
from django.db import OperationalError
from django.utils import timezone

from fleet.models import Component, ReadingSet, RefrigerantEvent, Visit
from tests.browser.test_production_static import production_server  # noqa: F401 (a fixture)
from tests.factories import (
    ComponentFactory,
    SiteFactory,
    UnitFactory,
    UserFactory,
    VisitFactory,
    VisitUnitFactory,
)

pytestmark = [
    pytest.mark.browser,
    pytest.mark.django_db(transaction=True, serialized_rollback=True),
]

PASSWORD = "test-pass-123"  # tests.factories.UserFactory's synthetic password
PHONE = {"width": 390, "height": 844}
TABLET = {"width": 820, "height": 1180}


def wait_until(check, timeout: float = 20.0) -> None:
    """Poll the database until ``check()`` holds (the phone sends in the background). The
    test database is SQLite in memory, shared with the server's thread: a read that meets
    the server's write in progress is refused at once ("table is locked") and tried again."""
    deadline = time.monotonic() + timeout
    while True:
        try:
            if check():
                return
        except OperationalError:
            pass
        if time.monotonic() > deadline:
            raise AssertionError("the phone's records did not arrive in time")
        time.sleep(0.2)


def _visit_today():
    UserFactory(username="dana", role="office")
    tech = UserFactory(username="marco", first_name="Marco", last_name="Ruiz", role="technician")
    site = SiteFactory(
        name="Harbour Deli",
        address="4 Pier Road\nBack door, code 1234",
        access_notes="Roof hatch key behind the bar.",
    )
    unit = UnitFactory(
        site=site, tag="HD-WIC-1", description="Walk-in cooler", metering_device="txv"
    )
    ComponentFactory(unit=unit, installed_on=dt.date(2023, 6, 1))
    now = timezone.now()
    visit = VisitFactory(
        site=site,
        status="scheduled",
        window_start=now - timezone.timedelta(hours=1),
        window_end=now + timezone.timedelta(hours=3),
        reported_problem="Box running warm since Monday.",
        technicians=[tech],
    )
    VisitUnitFactory(visit=visit, unit=unit)
    return visit, unit


def page_holds(page, expression: str, timeout: float = 20.0) -> None:
    """Poll ``expression`` in the page from the test until it is true. Playwright's
    ``wait_for_function`` re-evaluates a string inside the page, which the app's
    Content-Security-Policy refuses (no eval) as soon as a first check fails;
    ``page.evaluate`` goes through the browser's debugging protocol, outside the policy."""
    deadline = time.monotonic() + timeout
    while not page.evaluate(expression):
        if time.monotonic() > deadline:
            raise AssertionError(f"the page never held {expression}")
        time.sleep(0.1)


def nothing_waiting(page) -> None:
    """Wait until the phone has heard every answer: its outbox banner is gone."""
    from playwright.sync_api import expect  # imported here: without Playwright, a skip

    expect(page.locator("#outbox-status")).to_have_text("")


def sign_in(page, base: str, username: str = "marco", password: str = PASSWORD) -> None:
    page.goto(f"{base}/field/")
    page.get_by_label("Username").fill(username)
    page.get_by_label("Password").fill(password)
    page.get_by_role("button", name="Sign in").click()
    page.get_by_role("heading", name="Your visits").wait_for()


def at_the_unit(browser_context, base: str, visit):
    """A phone signed in, the visit started (and the server told), the walk-in's screen open."""
    page = browser_context.new_page()
    page.set_viewport_size(PHONE)
    sign_in(page, base)
    page.get_by_role("link", name=re.compile("Harbour Deli")).click()
    page.get_by_role("button", name="Start the visit").click()
    page.get_by_text("In progress").wait_for()
    wait_until(lambda: Visit.objects.get(pk=visit.pk).status == "in_progress")
    page.get_by_role("link", name=re.compile("HD-WIC-1")).click()
    page.get_by_role("heading", name="Gauges and thermometers").wait_for()
    return page


def enter_readings(page, suction: str, head: str, stage: str = "as_found", look=None) -> None:
    form = page.locator("form.reading-form")
    form.get_by_label("Stage").select_option(stage)
    form.get_by_label(re.compile("^Box air")).fill("38")
    form.get_by_label(re.compile("^Air entering the condenser")).fill("88")
    form.get_by_label(re.compile("^Suction pressure")).fill(suction)
    form.get_by_label(re.compile("^Suction line")).fill("40")
    form.get_by_label(re.compile("^Head pressure")).fill(head)
    form.get_by_label(re.compile("^Liquid line")).fill("101")
    form.get_by_label("Leg 1").fill("9.1")
    form.get_by_label("Pair 1").fill("231")
    if look:
        look(form)
    form.get_by_role("button", name="Save the readings").click()
    page.get_by_text(re.compile("Readings saved on the phone")).wait_for()
    # The saved form gives way to an empty one for the next readings.
    page_holds(
        page, "document.querySelector('form.reading-form [name=suction_pressure]').value === ''"
    )


def test_a_visit_run_from_the_phone_online_and_off(live_server, browser_context, shot):
    visit, unit = _visit_today()
    base = live_server.url
    page = browser_context.new_page()
    page.set_viewport_size(PHONE)
    sign_in(page, base)
    page_holds(page, "navigator.serviceWorker.controller !== null")
    page.get_by_role("link", name=re.compile("Harbour Deli")).wait_for()
    shot(page, "field-day")

    page.get_by_role("link", name=re.compile("Harbour Deli")).click()
    page.get_by_text("Box running warm since Monday.").wait_for()
    assert "Back door, code 1234" in page.locator("main").inner_text()
    assert "Roof hatch key behind the bar." in page.locator("main").inner_text()
    page.get_by_role("button", name="Start the visit").click()
    wait_until(lambda: Visit.objects.get(pk=visit.pk).status == "in_progress")
    page.get_by_text("In progress").wait_for()
    shot(page, "field-visit")

    page.get_by_role("link", name=re.compile("HD-WIC-1")).click()
    page.get_by_role("heading", name="Before climbing").wait_for()
    page.get_by_role("group", name="Evaporator fans running?").get_by_label(
        "Yes", exact=True
    ).check()
    page.get_by_role("group", name="Ice on the evaporator coil?").get_by_label(
        "No", exact=True
    ).check()

    def live_numbers_shown(form) -> None:
        live = form.get_by_role("region", name="Live numbers")
        live.locator("[data-metric=superheat]").wait_for()
        text = live.inner_text()
        assert "Suction saturation: dew" in text  # R-404A glides: dew and bubble
        assert re.search(r"Superheat: \d+\.\d °F", text)
        assert re.search(r"Evaporating target: .* gauge \d+\.\d psig", text)
        assert "TXV: superheat" in text
        shot(page, "field-live")

    enter_readings(page, "52", "265", look=live_numbers_shown)
    wait_until(lambda: ReadingSet.objects.filter(visit_unit__visit=visit).count() == 1)
    page.locator("#history").get_by_text(re.compile("Score")).wait_for()
    first = ReadingSet.objects.get(visit_unit__visit=visit)
    assert first.evaporator_fans_running is True
    assert first.coil_iced is False
    shot(page, "field-unit")

    # No signal: two more reading sets and a refrigerant addition stay on the phone.
    browser_context.set_offline(True)
    page.get_by_text("No signal").wait_for()
    enter_readings(page, "48", "270", stage="adjusting")
    enter_readings(page, "55", "262", stage="as_left")
    # A third set typed by mistake is withdrawn before it was ever sent.
    enter_readings(page, "99", "299")
    page.get_by_text(re.compile("3 waiting to send")).wait_for()
    mistaken = page.locator("#history li", has_text="Suction 99 psig")
    mistaken.get_by_role("button", name="Withdraw (not sent)").click()
    page.get_by_text(re.compile("2 waiting to send")).wait_for()
    form = page.locator("form", has=page.get_by_role("heading", name="Refrigerant"))
    form.get_by_label("What was done").select_option("added")
    form.get_by_label(re.compile("^Amount")).fill("1.5")
    form.get_by_label("Cylinder").fill("CYL-0442")
    form.get_by_label("Your certification number").fill("EPA-T2-558812")
    form.get_by_role("button", name="Save the refrigerant record").click()
    page.get_by_text(re.compile("Refrigerant record saved on the phone")).wait_for()
    page.get_by_text(re.compile("3 waiting to send")).wait_for()
    # The run capacitor measured low is replaced: the recorded one is chosen by itself.
    parts = page.locator("form", has=page.get_by_role("heading", name="Part replaced"))
    parts.get_by_label("What went in").select_option("run_capacitor")
    parts.get_by_label("Rated (µF)").fill("45")
    parts.get_by_label("Tolerance (± %)").fill("6")
    parts.get_by_label("Volts").fill("440")
    parts.get_by_label("Why").fill("Measured 31 µF against 45 µF rated.")
    parts.get_by_role("button", name="Save the part").click()
    page.get_by_text(re.compile("Part saved on the phone")).wait_for()
    page.get_by_text(re.compile("4 waiting to send")).wait_for()
    shot(page, "field-offline-unit")

    # The app opens again with no signal: the shell from the service worker, the records
    # still waiting on the phone.
    page.reload()
    page.get_by_text(re.compile("4 waiting to send")).wait_for()
    page.get_by_role("heading", name="Before climbing").wait_for()

    page.get_by_role("link", name="← The visit").click()
    page.get_by_role("link", name="Finish and submit").click()
    page.get_by_role("button", name="Submit the visit").click()
    page.get_by_text("Write a summary of the work.").wait_for()
    page.get_by_label(re.compile("^Work summary")).fill("Set the TXV, added refrigerant.")
    shot(page, "field-submit")
    page.get_by_role("button", name="Submit the visit").click()
    page.get_by_text(re.compile("5 waiting to send")).wait_for()
    shot(page, "field-offline-visit")
    assert ReadingSet.objects.filter(visit_unit__visit=visit).count() == 1
    assert Visit.objects.get(pk=visit.pk).status == "in_progress"

    # The signal returns: everything goes, once, in the order it was made.
    browser_context.set_offline(False)
    wait_until(lambda: Visit.objects.get(pk=visit.pk).status == "submitted")
    sets = ReadingSet.objects.filter(visit_unit__visit=visit).order_by("taken_at")
    assert [s.stage for s in sets] == ["as_found", "adjusting", "as_left"]
    assert len({s.client_id for s in sets}) == 3
    events = RefrigerantEvent.objects.filter(visit_unit__visit=visit)
    assert [(e.kind, round(e.amount_kg, 3)) for e in events] == [("added", 0.680)]
    old, new = Component.objects.filter(unit=unit).order_by("id")
    assert old.removed_on is not None
    assert old.removed_on == new.installed_on
    assert (new.changed_on_visit_id, new.rated_uf, new.client_id is not None) == (
        visit.pk,
        45.0,
        True,
    )
    visit.refresh_from_db()
    assert visit.work_summary == "Set the TXV, added refrigerant."
    # The phone hears the last answer a moment after the server stored the move.
    nothing_waiting(page)
    page.get_by_text("Submitted", exact=True).wait_for()

    # The office's review queue shows it.
    office = browser_context.new_page()
    office.goto(f"{base}/accounts/login/")
    office.get_by_label("Username").fill("dana")
    office.get_by_label("Password").fill(PASSWORD)
    office.get_by_role("button", name="Sign in").click()
    office.goto(f"{base}/review/")
    assert office.locator("tr", has_text=visit.reference).is_visible()


def test_an_answer_lost_on_the_way_back_is_sent_again_and_stored_once(live_server, browser_context):
    """A post reached the server but its answer never reached the phone (here the first
    attempt is made from outside the page, with the very body the phone holds): the phone
    still holds the record, sends it again with the same client_id, the server answers 200
    with the stored record, the phone lets it go, and the server has one set."""
    visit, _unit = _visit_today()
    base = live_server.url
    page = at_the_unit(browser_context, base, visit)

    browser_context.set_offline(True)
    enter_readings(page, "52", "265")
    held = page.evaluate(
        """async () => {
            const store = await import("/static/field/store.js");
            const token = await store.kvGet("token");
            return {token, entries: await store.outboxAll()};
        }"""
    )
    [entry] = held["entries"]
    with httpx.Client(base_url=f"{base}/api/v1/", timeout=30) as api:
        first = api.post(
            entry["path"], json=entry["body"], headers={"Authorization": f"Token {held['token']}"}
        )
    assert first.status_code == 201, first.text

    browser_context.set_offline(False)
    page.locator("#history").get_by_text(re.compile("Score")).wait_for()
    nothing_waiting(page)
    stored = ReadingSet.objects.get(visit_unit__visit=visit)
    assert str(stored.client_id) == entry["client_id"]
    # The phone let the record go on the server's answer to its retry: the stored record.
    heard = page.evaluate(
        f"""async () => (await (await import("/static/field/outbox.js")).sentFor({visit.pk}))"""
    )
    assert [(h["client_id"], h["answer"]["id"]) for h in heard if h["kind"] == "reading_set"] == [
        (entry["client_id"], stored.pk)
    ]


def test_it_fits_a_tablet_and_a_narrow_phone(live_server, browser_context, shot):
    """Nothing runs off the side at 360 px or on a tablet, every control is at least 48 px
    tall, and the chosen units are remembered."""
    visit, unit = _visit_today()
    base = live_server.url
    page = browser_context.new_page()
    page.set_viewport_size({"width": 360, "height": 740})
    sign_in(page, base)
    page.get_by_role("link", name=re.compile("Harbour Deli")).click()
    page.get_by_role("button", name="Start the visit").click()
    page.get_by_text("In progress").wait_for()
    for name, size in (("narrow", {"width": 360, "height": 740}), ("tablet", TABLET)):
        page.set_viewport_size(size)
        page.goto(f"{base}/field/#/visit/{visit.pk}/unit/{unit.pk}")
        page.get_by_role("heading", name="Gauges and thermometers").wait_for()
        overflow = page.evaluate("document.documentElement.scrollWidth - window.innerWidth")
        assert overflow <= 0, f"{name}: the page is {overflow} px wider than the screen"
        small = page.evaluate(
            """[...document.querySelectorAll(
                'main button, main select, main input:not([type=radio]), main .choice, '
                + 'main a.button')].filter((el) => el.getBoundingClientRect().height < 48)
                 .map((el) => el.outerHTML.slice(0, 80))"""
        )
        assert small == [], small
        shot(page, f"field-unit-{name}")

    page.goto(f"{base}/field/#/settings")
    page.get_by_label("°C and bar").check()
    page.get_by_text("Kept on this phone: °C and bar.").wait_for()
    page.reload()
    page.goto(f"{base}/field/#/visit/{visit.pk}/unit/{unit.pk}")
    page.get_by_label("Suction pressure (bar)").wait_for()


def test_a_refused_record_is_shown_for_correcting_and_holds_back_the_submit(
    live_server, browser_context, shot
):
    """A reading no gauge can give (suction below a perfect vacuum), saved offline, is refused by
    the server when the signal returns: the phone says why, names the fields, keeps the
    visit's submit back, and the corrected readings go under a new client_id."""
    visit, _unit = _visit_today()
    base = live_server.url
    page = at_the_unit(browser_context, base, visit)

    browser_context.set_offline(True)
    enter_readings(page, "-20", "265")
    page.get_by_role("link", name="← The visit").click()
    page.get_by_role("link", name="Finish and submit").click()
    page.get_by_label(re.compile("^Work summary")).fill("Checked the box.")
    page.get_by_role("button", name="Submit the visit").click()
    page.get_by_text(re.compile("2 waiting to send")).wait_for()
    browser_context.set_offline(False)

    page.get_by_role("link", name=re.compile("1 need correcting")).click()
    problem = page.locator("main .problem").first
    problem.wait_for()
    assert "suction pressure: below the lowest gauge reading possible" in problem.inner_text()
    shot(page, "field-outbox-refused")
    assert Visit.objects.get(pk=visit.pk).status == "in_progress"  # the submit waits

    page.get_by_role("link", name="Correct it").first.click()
    form = page.locator("form.reading-form")
    assert form.get_by_label(re.compile("^Suction pressure")).input_value() == "-20"
    form.get_by_label(re.compile("^Suction pressure")).fill("52")
    form.get_by_role("button", name="Save the readings").click()
    wait_until(lambda: Visit.objects.get(pk=visit.pk).status == "submitted")
    [stored] = ReadingSet.objects.filter(visit_unit__visit=visit)
    assert round(stored.suction_kpa_gauge) == round(52 * 6.894757)


def test_the_app_runs_from_production_static_files_under_the_policy(
    production_server,  # noqa: F811 (the fixture imported above)
    browser_context,
):
    """Under collectstatic's hashed files served by WhiteNoise: app.js (hashed) finds its
    modules, the service worker keeps them, the live numbers work, and the browser refuses
    nothing under the Content-Security-Policy."""
    visit, unit = _visit_today()
    Visit.objects.filter(pk=visit.pk).update(status="in_progress")
    page = browser_context.new_page()
    page.set_viewport_size(PHONE)
    refused: list[str] = []
    page.on("console", lambda m: refused.append(m.text) if "Content Security" in m.text else None)
    missing: list[str] = []
    page.on(
        "response",
        lambda r: missing.append(r.url) if r.status >= 400 and "/api/" not in r.url else None,
    )
    sign_in(page, production_server)
    script = page.locator("script[type=module]").get_attribute("src") or ""
    assert re.fullmatch(r"/static/field/app\.[0-9a-f]{12}\.js", script)
    page_holds(page, "navigator.serviceWorker.controller !== null")
    page.goto(f"{production_server}/field/#/visit/{visit.pk}/unit/{unit.pk}")
    form = page.locator("form.reading-form")
    form.get_by_label(re.compile("^Suction pressure")).fill("52")
    form.get_by_label(re.compile("^Suction line")).fill("40")
    live = form.get_by_role("region", name="Live numbers")
    live.locator("[data-metric=superheat]").wait_for()
    assert refused == []
    assert missing == []


def test_a_revoked_token_or_signing_out_clears_the_phone(live_server, browser_context):
    """A 401 (the office revoked the phone's token) and signing out both leave nothing on
    the phone: no token, no choices, no unsent records, no kept API answers."""
    from rest_framework.authtoken.models import Token

    _visit_today()
    base = live_server.url
    page = browser_context.new_page()
    page.set_viewport_size(PHONE)
    held = """async () => {
        const store = await import("/static/field/store.js");
        const kept = await caches.has("rimewatch-field-api")
            ? (await (await caches.open("rimewatch-field-api")).keys()).length : 0;
        return {token: await store.kvGet("token"), outbox: (await store.outboxAll()).length,
                kept};
    }"""

    sign_in(page, base)
    page_holds(page, "navigator.serviceWorker.controller !== null")
    page.get_by_role("link", name=re.compile("Harbour Deli")).click()
    page.get_by_role("button", name="Start the visit").click()
    page.get_by_text("In progress").wait_for()
    before = page.evaluate(held)
    assert before["token"]
    assert before["kept"] > 0  # the service worker kept the API's answers
    Token.objects.filter(user__username="marco").delete()
    page.goto(f"{base}/field/#/")
    page.get_by_role("heading", name="Sign in").wait_for()
    assert page.evaluate(held) == {"token": None, "outbox": 0, "kept": 0}

    sign_in(page, base)
    page.get_by_role("link", name=re.compile("Harbour Deli")).wait_for()
    page.get_by_role("link", name="Units and sign out").click()
    page.get_by_role("button", name="Sign out").click()
    page.get_by_role("heading", name="Sign in").wait_for()
    assert page.evaluate(held) == {"token": None, "outbox": 0, "kept": 0}
    assert not Token.objects.filter(user__username="marco").exists()


def test_correcting_withdrawing_and_a_unit_not_read(live_server, browser_context, shot):
    """A stored reading set is corrected (PATCH) and another withdrawn (DELETE) from the
    unit's list; the submit asks why the unit with no readings has none, and sends it."""
    visit, unit = _visit_today()
    other = UnitFactory(site=visit.site, tag="HD-RI-1", description="Reach-in")
    VisitUnitFactory(visit=visit, unit=other)
    base = live_server.url
    page = at_the_unit(browser_context, base, visit)
    enter_readings(page, "52", "265")
    enter_readings(page, "48", "270")
    on_visit = ReadingSet.objects.filter(visit_unit__visit=visit)
    wait_until(lambda: on_visit.count() == 2)
    listed = page.locator("#history li")
    listed.filter(has_text="Suction 48.0 psig").get_by_role("button", name="Withdraw").wait_for()

    listed.filter(has_text="Suction 52.0 psig").get_by_role("link", name="Correct").click()
    form = page.locator("form.reading-form")
    form.get_by_role("heading", name="Correct the readings").wait_for()
    assert form.get_by_label(re.compile("^Suction pressure")).input_value() == "52"
    form.get_by_label(re.compile("^Suction pressure")).fill("53")
    form.get_by_role("button", name="Save the readings").click()
    first = on_visit.order_by("taken_at").first()
    wait_until(lambda: round(ReadingSet.objects.get(pk=first.pk).suction_kpa_gauge, 1) == 365.4)

    page.get_by_role("heading", name="Gauges and thermometers").wait_for()
    listed.filter(has_text="Suction 53.0 psig").wait_for()
    listed.filter(has_text="Suction 48.0 psig").get_by_role("button", name="Withdraw").click()
    wait_until(lambda: on_visit.count() == 1)
    listed.filter(has_text="Suction 48.0 psig").wait_for(state="detached")
    assert list(on_visit.values_list("pk", flat=True)) == [first.pk]

    page.get_by_role("link", name="← The visit").click()
    page.get_by_role("link", name="Finish and submit").click()
    page.get_by_label(re.compile("^Work summary")).fill("Readings on the walk-in.")
    page.get_by_role("button", name="Submit the visit").click()
    page.get_by_text("Say why HD-RI-1 has no readings.").wait_for()
    reason = page.get_by_role("group", name=re.compile("HD-RI-1"))
    reason.get_by_label("Reason").select_option("off_by_design")
    reason.get_by_label("Note (optional)").fill("Emptied for the winter.")
    shot(page, "field-submit-not-read")
    page.get_by_role("button", name="Submit the visit").click()
    wait_until(lambda: Visit.objects.get(pk=visit.pk).status == "submitted")
    kept = visit.visit_units.get(unit=other)
    assert (kept.not_read_reason, kept.not_read_note) == (
        "off_by_design",
        "Emptied for the winter.",
    )


def test_a_flammable_refrigerant_brings_its_caution(live_server, browser_context):
    """A unit on an A3 refrigerant (R-290) shows the flammable-refrigerant caution."""
    from tests.factories import refrigerant

    visit, unit = _visit_today()
    unit.refrigerant = refrigerant("R-290")
    unit.save()
    Visit.objects.filter(pk=visit.pk).update(status="in_progress")
    page = browser_context.new_page()
    page.set_viewport_size(PHONE)
    sign_in(page, live_server.url)
    page.goto(f"{live_server.url}/field/#/visit/{visit.pk}/unit/{unit.pk}")
    warning = page.locator(".caution", has_text="Flammable refrigerant (R-290, safety class A3)")
    warning.wait_for()
    assert "No open flames" in warning.inner_text()
