"""Each page answers each role by the one rule of reach (``fleet.reach``, the API's and the
reports' too): office everything; technicians their own visits and the units and sites of
those visits; managers their granted sites and their units, no visits; anything outside
reach is 404. The office's tools (booking, review, maintenance, attention) are the
office's."""

from __future__ import annotations

import pytest
from django.urls import reverse

pytestmark = pytest.mark.django_db


def _url(name: str, world) -> str:
    targets = {
        "visit-own": ("fleet:visit", world.own_visit.pk),
        "visit-other": ("fleet:visit", world.other_visit.pk),
        "unit-own": ("fleet:unit", world.unit.pk),
        "unit-other": ("fleet:unit", world.other_unit.pk),
        "site-own": ("fleet:site", world.site.pk),
        "site-other": ("fleet:site", world.other_site.pk),
        "visit-edit": ("fleet:visit-edit", world.own_visit.pk),
    }
    if name in targets:
        view, pk = targets[name]
        return reverse(view, args=[pk])
    return reverse(f"fleet:{name}")


# page -> expected status for office, technician, manager
MATRIX = {
    "schedule": (200, 200, 404),
    "maintenance": (200, 404, 404),
    "review-queue": (200, 404, 404),
    "attention": (200, 404, 404),
    "sites": (200, 200, 200),
    "visit-create": (200, 404, 404),
    "visit-edit": (200, 404, 404),
    "visit-own": (200, 200, 404),
    "visit-other": (200, 404, 404),
    "unit-own": (200, 200, 200),
    "unit-other": (200, 404, 404),
    "site-own": (200, 200, 200),
    "site-other": (200, 404, 404),
}


@pytest.mark.parametrize("name", MATRIX)
def test_it_answers_each_role_within_its_reach(name, world, office, tech, boss):
    """Office opens every page; a technician only their own visits and the units and sites
    of those visits; a manager only the sites granted to them and their units (no visit);
    everything else is 404, never 403."""
    url = _url(name, world)
    got = tuple(client.get(url).status_code for client in (office, tech, boss))
    assert got == MATRIX[name]


@pytest.mark.parametrize("name", ["schedule", "review-queue", "sites", "attention"])
def test_it_sends_strangers_to_sign_in(client, name, world):
    """Without a session every page redirects to the sign-in page, keeping where it was."""
    url = reverse(f"fleet:{name}")
    response = client.get(url)
    assert response.status_code == 302
    assert response["Location"].startswith(reverse("login"))
    assert "next=" in response["Location"]


def test_it_sends_each_role_home_to_its_first_page(office, tech, boss):
    """The root opens the schedule for office and technicians, the site list for managers."""
    home = reverse("fleet:home")
    assert office.get(home)["Location"] == reverse("fleet:schedule")
    assert tech.get(home)["Location"] == reverse("fleet:schedule")
    assert boss.get(home)["Location"] == reverse("fleet:sites")


@pytest.mark.parametrize(
    ("view", "attr"),
    [
        ("fleet:visit-cancel", "own_visit"),
        ("fleet:visit-review", "submitted"),
    ],
)
def test_it_refuses_writes_outside_the_office(view, attr, world, tech, boss):
    """Technicians and managers cannot cancel or review from the pages: 404, nothing moves."""
    visit = getattr(world, attr)
    for client in (tech, boss):
        response = client.post(
            reverse(view, args=[visit.pk]), {"confirm": "on", "decision": "accept"}
        )
        assert response.status_code == 404
    visit.refresh_from_db()
    assert visit.status == getattr(world, attr).status


def test_it_lets_only_the_office_acknowledge_a_flag(world, tech, boss):
    """A flag acknowledged by a technician or a manager is a 404 and stays unacknowledged."""
    url = reverse("fleet:flag-acknowledge", args=[world.flag.pk])
    for client in (tech, boss):
        assert client.post(url, {"acknowledgement_note": "seen"}).status_code == 404
    world.flag.refresh_from_db()
    assert world.flag.acknowledged_at is None


def test_it_shows_a_technician_only_their_own_visits_on_the_schedule(world, tech):
    """The technician's week lists their visit and not a colleague's."""
    page = tech.get(reverse("fleet:schedule")).content.decode()
    assert world.own_visit.reference in page
    assert world.other_visit.reference not in page
