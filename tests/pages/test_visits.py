"""Booking, rescheduling, assigning and cancelling visits from the office pages, with the
model's own validation shown beside the fields."""

from __future__ import annotations

import datetime as dt
from zoneinfo import ZoneInfo

import pytest
import time_machine
from django.urls import reverse
from django.utils import timezone

from fleet.models import AuditEntry, Visit
from tests.factories import CustomerFactory, SiteFactory, UnitFactory, VisitFactory

pytestmark = pytest.mark.django_db


@pytest.fixture(autouse=True)
def _spring_2026():
    """The bookings below are typed for spring 2026; the form books at most three years
    back (``fleet.limits.VISIT_BOOKING_BACK``), so their clock stays in 2026."""
    with time_machine.travel(dt.datetime(2026, 6, 1, 12, 0, tzinfo=dt.UTC)):
        yield


def _form(site, units, start: str, end: str, technicians=(), kind="planned") -> dict:
    return {
        "site": site.pk,
        "kind": kind,
        "window_start": start,
        "window_end": end,
        "units": [u.pk for u in units],
        "technicians": [t.pk for t in technicians],
        "reported_problem": "",
    }


def test_it_books_a_visit_in_the_sites_local_time(office, technician):
    """Times typed for a Denver site are Denver wall-clock times; the visit gets our next
    reference, its units and its technician, and the audit trail records the booking."""
    site = SiteFactory(time_zone="America/Denver")
    unit = UnitFactory(site=site)
    response = office.post(
        reverse("fleet:visit-create"),
        _form(site, [unit], "2026-03-10T08:00", "2026-03-10T12:00", [technician]),
    )
    assert response.status_code == 302
    visit = Visit.objects.get(site=site)
    denver = ZoneInfo("America/Denver")
    assert visit.window_start == dt.datetime(2026, 3, 10, 8, 0, tzinfo=denver)
    assert list(visit.units.all()) == [unit]
    assert list(visit.technicians.all()) == [technician]
    assert visit.reference.startswith("V-")
    assert AuditEntry.objects.filter(visit_id=visit.pk, action="created").exists()


def test_it_shows_the_models_own_messages_beside_the_fields(office):
    """An end before the start is refused by Visit.clean and said next to the end field; a
    unit of another site is refused next to the units."""
    site = SiteFactory()
    stranger = UnitFactory()
    response = office.post(
        reverse("fleet:visit-create"),
        _form(site, [stranger], "2026-03-10T12:00", "2026-03-10T08:00"),
    )
    assert response.status_code == 200
    page = response.content.decode()
    assert "must be after the start of the window" in page
    assert 'id="id_window_end_errors"' in page
    assert "Select a valid choice" in page or "not at this site" in page
    assert not Visit.objects.filter(site=site).exists()


def test_it_offers_sites_by_customer_name_then_site_name(office):
    """The booking form's site choices read as the office looks customers up: by customer
    name, then site name, whatever order they were created in."""
    later = SiteFactory(customer=CustomerFactory(name="Zephyr Foods"), name="Annex")
    second = SiteFactory(customer=CustomerFactory(name="Alder Market"), name="West")
    first = SiteFactory(customer=second.customer, name="East")
    page = office.get(reverse("fleet:visit-create")).content.decode()
    positions = [page.index(f'value="{site.pk}"') for site in (first, second, later)]
    assert positions == sorted(positions)


def test_it_lists_the_chosen_sites_units_for_htmx(office):
    """Picking a site swaps in that site's units, and only those."""
    site = SiteFactory()
    mine = UnitFactory(site=site, tag="MINE-1")
    UnitFactory(tag="ELSEWHERE-1")
    response = office.get(reverse("fleet:unit-choices"), {"site": site.pk})
    page = response.content.decode()
    assert "MINE-1" in page
    assert "ELSEWHERE-1" not in page
    assert f'value="{mine.pk}"' in page


def test_it_reschedules_and_reassigns_a_visit(office, world, other_technician):
    """The edit form moves the window and swaps the technician; the change is audited."""
    visit = world.own_visit
    response = office.post(
        reverse("fleet:visit-edit", args=[visit.pk]),
        _form(
            visit.site,
            [world.unit],
            "2026-04-02T13:00",
            "2026-04-02T15:30",
            [other_technician],
        ),
    )
    assert response.status_code == 302
    visit.refresh_from_db()
    chicago = ZoneInfo("America/Chicago")
    assert visit.window_start == dt.datetime(2026, 4, 2, 13, 0, tzinfo=chicago)
    assert list(visit.technicians.all()) == [other_technician]
    entry = AuditEntry.objects.get(visit_id=visit.pk, action="changed")
    # The trail keeps who was swapped, as the admin's and the API's edits record it.
    assert entry.changes["technicians"][1] == [other_technician.pk]
    assert "window_start" in entry.changes


def test_it_keeps_a_unit_that_already_has_readings(office, world):
    """A unit with readings on the visit cannot be dropped from it; the form says why."""
    visit = world.submitted
    visit.status = "in_progress"
    visit.save()
    other = UnitFactory(site=visit.site)
    response = office.post(
        reverse("fleet:visit-edit", args=[visit.pk]),
        _form(visit.site, [other], "2026-04-02T13:00", "2026-04-02T15:30"),
    )
    assert response.status_code == 200
    assert "such a unit stays on the visit" in response.content.decode()


def test_it_refuses_to_change_a_visit_already_handed_in(office, world):
    """A submitted visit's edit page sends the coordinator back with the reason."""
    response = office.get(reverse("fleet:visit-edit", args=[world.submitted.pk]), follow=True)
    assert "can no longer change" in response.content.decode()


def test_it_cancels_only_when_confirmed(office, world):
    """Without the confirmation box nothing happens; with it the visit is cancelled."""
    url = reverse("fleet:visit-cancel", args=[world.own_visit.pk])
    office.post(url, {})
    world.own_visit.refresh_from_db()
    assert world.own_visit.status == "scheduled"
    office.post(url, {"confirm": "on"})
    world.own_visit.refresh_from_db()
    assert world.own_visit.status == "cancelled"


def test_it_says_when_a_cancel_is_not_allowed(office, world):
    """Cancelling a submitted visit is an illegal move: the page says so, nothing changes."""
    response = office.post(
        reverse("fleet:visit-cancel", args=[world.submitted.pk]), {"confirm": "on"}, follow=True
    )
    assert "Not cancelled" in response.content.decode()
    world.submitted.refresh_from_db()
    assert world.submitted.status == "submitted"


def test_it_marks_a_double_booked_technician(office, technician):
    """Two overlapping visits of one technician are both marked and listed as a clash; a
    visit that starts as the other ends is not."""
    start = timezone.localtime().replace(hour=9, minute=0, second=0, microsecond=0)
    first = VisitFactory(
        status="scheduled",
        window_start=start,
        window_end=start + dt.timedelta(hours=3),
        technicians=[technician],
    )
    second = VisitFactory(
        status="scheduled",
        window_start=start + dt.timedelta(hours=1),
        window_end=start + dt.timedelta(hours=2),
        technicians=[technician],
    )
    touching = VisitFactory(
        status="scheduled",
        window_start=start + dt.timedelta(hours=3),
        window_end=start + dt.timedelta(hours=4),
        technicians=[technician],
    )
    page = office.get(reverse("fleet:schedule")).content.decode()
    assert "Double bookings this week (1)" in page
    assert f"Overlaps {second.reference}" in page
    assert f"Overlaps {first.reference}" in page
    assert f"Overlaps {touching.reference}" not in page


def test_it_warns_when_a_booking_overlaps(office, technician):
    """Saving a visit that double-books a technician succeeds with a visible warning."""
    site = SiteFactory(time_zone="America/Chicago")
    unit = UnitFactory(site=site)
    chicago = ZoneInfo("America/Chicago")
    VisitFactory(
        reference="V-EXISTING",
        status="scheduled",
        window_start=dt.datetime(2026, 5, 4, 9, 0, tzinfo=chicago),
        window_end=dt.datetime(2026, 5, 4, 11, 0, tzinfo=chicago),
        technicians=[technician],
    )
    response = office.post(
        reverse("fleet:visit-create"),
        _form(site, [unit], "2026-05-04T10:00", "2026-05-04T12:00", [technician]),
        follow=True,
    )
    assert "Double booking" in response.content.decode()
    assert "V-EXISTING" in response.content.decode()


def test_a_visit_links_an_all_in_range_table_and_carries_one_off_its_aim(office, world, tech):
    """A visit of many units stays small: a reading set whose every reading is in range
    gets a link to its own page instead of its table inline; one with a reading off its
    aim keeps the table open on the visit page. The reading's page holds the table, within
    the same reach as the visit (a technician of another site gets a 404)."""
    from tests.factories import ReadingSetFactory, VisitUnitFactory, document_for
    from tests.pages.conftest import store_diagnosis

    healthy_unit = UnitFactory(site=world.site, tag="HD-RI-9")
    covered = VisitUnitFactory(visit=world.submitted, unit=healthy_unit)
    healthy = ReadingSetFactory(visit_unit=covered)
    store_diagnosis(healthy, score=100.0, document=document_for())
    off = world.submitted.visit_units.get(unit=world.unit).reading_sets.get()

    page = office.get(reverse("fleet:visit", args=[world.submitted.pk])).content.decode()
    link = reverse("fleet:reading", args=[healthy.pk])
    assert f'href="{link}"' in page
    assert f'href="{reverse("fleet:reading", args=[off.pk])}"' not in page
    assert page.count('<details class="readings-fold" open>') == 1  # the superheat fault

    reading = office.get(link)
    assert reading.status_code == 200
    html = reading.content.decode()
    assert '<details class="readings-fold" open>' in html
    assert "HD-RI-9" in html
    assert world.submitted.reference in html
    assert html.count('class="reading-row ') == 4  # document_for's four metrics

    other = UnitFactory(site=world.other_site)
    elsewhere = ReadingSetFactory(visit_unit=VisitUnitFactory(visit=world.other_visit, unit=other))
    assert tech.get(reverse("fleet:reading", args=[elsewhere.pk])).status_code == 404
