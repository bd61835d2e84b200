"""The office's long lists (maintenance due, the review queue, the attention list) stay the
same size and cost whatever the fleet holds: a page at a time, narrowed by the query string,
in a fixed number of queries; the attention list acknowledges with one form. All values
are synthetic test inputs."""

from __future__ import annotations

import datetime as dt
import re

import pytest
from django.db import connection
from django.test.utils import CaptureQueriesContext
from django.urls import reverse
from django.utils import timezone

from diagnostics.models import Flag
from fleet.models import Visit
from fleet.views import attention, maintenance, review
from tests.factories import (
    CustomerFactory,
    ReadingSetFactory,
    SiteFactory,
    UnitFactory,
    UserFactory,
    VisitFactory,
    VisitUnitFactory,
)

from .conftest import open_flag, over_limit_addition, signed_in, store_diagnosis

pytestmark = pytest.mark.django_db

PAGES = ("maintenance", "review-queue", "attention")


def add_sites(count: int, technician, customer=None, first: int = 0) -> list:
    """``count`` sites, each with two 30-day units due for planned maintenance within the
    horizon (last seen on the visit handed in yesterday), that visit with a diagnosed
    reading and a leak rate over its limit on each unit, and an open flag on each unit."""
    customer = customer or CustomerFactory()
    now = timezone.now()
    sites = []
    for i in range(first, first + count):
        site = SiteFactory(customer=customer, name=f"Depot {i:02d}")
        units = [UnitFactory(site=site, tag=f"D{i:02d}-{n}", pm_interval_days=30) for n in (1, 2)]
        handed_in = VisitFactory(
            site=site,
            status="submitted",
            submitted_at=now - dt.timedelta(hours=i + 1),
            window_start=now - dt.timedelta(days=1, hours=i),
            technicians=[technician],
        )
        for unit in units:
            covered = VisitUnitFactory(visit=handed_in, unit=unit)
            store_diagnosis(ReadingSetFactory(visit_unit=covered))
            over_limit_addition(covered, timezone.localdate() - dt.timedelta(days=i))
            open_flag(unit)
        sites.append(site)
    return sites


def _get(client, name: str, query: str = "") -> tuple[int, str]:
    """The queries a page costs and its HTML."""
    with CaptureQueriesContext(connection) as queries:
        response = client.get(f"{reverse(f'fleet:{name}')}{query}")
    assert response.status_code == 200
    return len(queries), response.content.decode()


#: What marks one row of each list in its HTML.
ROW = {
    "maintenance": re.compile(r'<th scope="row"><a href="/units/'),
    "review-queue": re.compile(r'<th scope="row"><a href="/visits/'),
    "attention": re.compile(r'<li class="attention__item'),
}


@pytest.mark.parametrize("name", PAGES)
def test_a_list_costs_the_same_queries_and_size_at_3_and_12_sites(
    name, office_user, technician, monkeypatch
):
    """With two rows to a page, a fleet of 12 sites costs the same queries as one of 3 and
    its page holds the same rows and about the same HTML (only the totals' digits and the
    pager differ); the first page is the same whatever is behind it."""
    monkeypatch.setattr(maintenance, "PAGE_SIZE", 2)
    monkeypatch.setattr(review, "PAGE_SIZE", 2)
    monkeypatch.setattr(attention, "PAGE_SIZE", 2)
    client = signed_in(office_user)
    customer = CustomerFactory()
    add_sites(3, technician, customer)
    small_queries, small_page = _get(client, name)
    small_filtered, _ = _get(client, name, f"?customer={customer.pk}")
    add_sites(9, technician, customer, first=3)
    large_queries, large_page = _get(client, name)
    large_filtered, _ = _get(client, name, f"?customer={customer.pk}")
    assert large_queries == small_queries
    assert large_filtered == small_filtered
    assert len(ROW[name].findall(small_page)) == len(ROW[name].findall(large_page)) == 2
    assert abs(len(large_page) - len(small_page)) < 300


def test_the_review_queue_is_narrowed_by_technician_and_site_and_paged(
    office_user, technician, other_technician, monkeypatch
):
    """By technician only their visits are listed; by site only that site's; the pager's
    links keep the filter, and the second page holds the rest, oldest hand-in first."""
    monkeypatch.setattr(review, "PAGE_SIZE", 2)
    client = signed_in(office_user)
    mine = add_sites(3, technician)
    theirs = add_sites(1, other_technician, first=3)
    query = f"?technician={technician.pk}"
    _, first = _get(client, "review-queue", query)
    _, second = _get(client, "review-queue", f"{query}&page=2")
    assert "3 visits waiting" in first
    assert f'href="?technician={technician.pk}&amp;page=2"' in first
    listed = re.findall(r"Depot \d\d", first + second)
    assert listed == ["Depot 02", "Depot 01", "Depot 00"]  # handed in 3 h, 2 h, 1 h ago
    assert theirs[0].name not in first + second
    _, one_site = _get(client, "review-queue", f"?site={mine[1].pk}")
    assert re.findall(r"Depot \d\d</a>", one_site) == ["Depot 01</a>"]


def test_maintenance_groups_units_by_site_most_urgent_first_and_narrows_by_state(
    office_user, technician, monkeypatch
):
    """Each site heads its own units and proposed visit; the site whose unit is most overdue
    comes first; a site cut by the page's end goes on on the next page, said so;
    state=booked leaves out the units not booked; by customer, only that customer's units
    are listed, and only their visit is booked."""
    client = signed_in(office_user)
    add_sites(2, technician)
    late = SiteFactory(name="Depot late")
    unit = UnitFactory(site=late, tag="LATE-1", pm_interval_days=30)
    seen = VisitFactory(
        site=late,
        status="reviewed",
        window_start=timezone.now() - dt.timedelta(days=90),
        reviewed_by=UserFactory(),
        reviewed_at=timezone.now() - dt.timedelta(days=89),
    )
    VisitUnitFactory(visit=seen, unit=unit)
    _, page = _get(client, "maintenance")
    assert page.index("Depot late") < page.index("Depot 00") < page.index("Depot 01")
    group = page[page.index("Depot 00") : page.index("Depot 01")]
    assert "D00-1" in group
    assert "D00-2" in group
    assert "To book: a visit on" in group
    assert "Book these 3 visits" in page
    monkeypatch.setattr(maintenance, "PAGE_SIZE", 2)
    _, first = _get(client, "maintenance")
    _, second = _get(client, "maintenance", "?page=2")
    assert "LATE-1" in first
    assert "D00-1" in first
    assert "D00-2" not in first
    assert "D00-2" in second
    assert "Depot 00" in second
    assert "continued from the page before" in second
    assert "continued" not in first
    _, booked = _get(client, "maintenance", "?state=booked")
    assert "D00-1" not in booked
    assert "No unit is due within" in booked
    query = f"?customer={late.customer_id}"
    _, theirs = _get(client, "maintenance", query)
    assert "LATE-1" in theirs
    assert "Depot 00" not in theirs
    assert "Book this visit" in theirs
    assert f'action="{reverse("fleet:maintenance-propose")}{query}"' in theirs
    client.post(f"{reverse('fleet:maintenance-propose')}{query}")
    assert list(Visit.objects.filter(status="scheduled").values_list("site", flat=True)) == [
        late.pk
    ]


def test_the_attention_list_narrows_to_deadlines_and_pages(office_user, technician, monkeypatch):
    """show=deadlines lists leak deadlines and no flag; the pages split the rest."""
    monkeypatch.setattr(attention, "PAGE_SIZE", 3)
    client = signed_in(office_user)
    add_sites(2, technician)
    _, page = _get(client, "attention", "?show=deadlines")
    assert "Leak repair due" in page
    assert 'class="flag ' not in page
    assert "8 leak deadlines" in page  # repair and verification on four units
    assert "Page 1 of 3" in page
    _, last = _get(client, "attention", "?show=deadlines&page=3")
    assert len(ROW["attention"].findall(last)) == 2


@pytest.mark.parametrize(
    ("name", "query", "named"),
    [
        ("review-queue", "?page=9", "page"),
        ("review-queue", "?page=x", "page"),
        ("maintenance", "?customer=999999", "customer"),
        ("maintenance", "?state=whenever", "state"),
        ("attention", "?site=99999999999999999999999", "site"),
        ("attention", "?show=everything", "show"),
        ("review-queue", "?technician=abc", "technician"),
    ],
)
def test_a_filter_or_page_the_list_cannot_use_is_refused_by_name(
    name, query, named, office_user, technician
):
    """400 naming the parameter, never a 500 nor another page than the one asked for."""
    add_sites(1, technician)
    response = signed_in(office_user).get(f"{reverse(f'fleet:{name}')}{query}")
    assert response.status_code == 400
    assert f"<code>{named}=" in response.content.decode()


def test_the_attention_list_has_one_acknowledgement_form(office_user, technician):
    """One form for the page, one tick box per flag not yet acknowledged, no note field per
    flag."""
    add_sites(2, technician)
    _, page = _get(signed_in(office_user), "attention")
    assert page.count('id="acknowledge"') == 1
    assert page.count('name="flags"') == 4
    assert page.count("<textarea") == 1
    assert 'name="acknowledgement_note"' not in page


def test_it_acknowledges_the_ticked_flags_with_one_note(office_user, technician):
    """The ticked flags record the note, who and when; the others stay as they were; the
    answer goes back to the list as it was filtered; sent again, it changes nothing."""
    client = signed_in(office_user)
    site = add_sites(2, technician)[0]
    ticked = list(Flag.objects.filter(unit__site=site))
    url = f"{reverse('fleet:attention-acknowledge')}?site={site.pk}"
    response = client.post(url, {"flags": [f.pk for f in ticked], "note": "Coil clean booked"})
    assert response.status_code == 302
    assert response["Location"] == f"{reverse('fleet:attention')}?site={site.pk}"
    for flag in ticked:
        flag.refresh_from_db()
        assert flag.acknowledged_by == office_user
        assert flag.acknowledgement_note == "Coil clean booked"
        assert flag.cleared_at is None
    assert not Flag.objects.exclude(pk__in=[f.pk for f in ticked]).filter(
        acknowledged_at__isnull=False
    )
    first = {f.pk: f.acknowledged_at for f in ticked}
    client.post(url, {"flags": [f.pk for f in ticked], "note": "Something else"})
    for flag in ticked:
        flag.refresh_from_db()
        assert (flag.acknowledged_at, flag.acknowledgement_note) == (
            first[flag.pk],
            "Coil clean booked",
        )


@pytest.mark.parametrize("stranger", ["gone", "not a number", str(2**64)])
def test_a_flag_beyond_reach_is_refused_by_name_and_nothing_acknowledged(
    stranger, office_user, technician
):
    """A flag id the user cannot acknowledge (no such flag within reach, not a number, past
    any id) beside one they can: 400 naming ``flags``, the note kept in the form, the other
    flag ticked again and left unacknowledged."""
    client = signed_in(office_user)
    add_sites(1, technician)
    mine = Flag.objects.first()
    if stranger == "gone":
        gone = open_flag(UnitFactory())
        stranger = str(gone.pk)
        gone.delete()
    response = client.post(
        reverse("fleet:attention-acknowledge"),
        {"flags": [mine.pk, stranger], "note": "Parts ordered"},
    )
    assert response.status_code == 400
    assert "flags" in response.context["ack_form"].errors
    page = response.content.decode()
    assert 'id="flags-errors"' in page
    assert "Parts ordered" in page
    assert f'value="{mine.pk}" form="acknowledge" checked' in page
    assert not Flag.objects.filter(acknowledged_at__isnull=False).exists()


def test_acknowledging_wants_a_note_and_the_office(office_user, technician):
    """No note: 400 naming the note. Someone outside the office: the page does not exist."""
    add_sites(1, technician)
    flag = Flag.objects.first()
    url = reverse("fleet:attention-acknowledge")
    response = signed_in(office_user).post(url, {"flags": [flag.pk], "note": " "})
    assert response.status_code == 400
    assert "note" in response.context["ack_form"].errors
    assert signed_in(technician).post(url, {"flags": [flag.pk], "note": "x"}).status_code == 404
    assert not Flag.objects.filter(acknowledged_at__isnull=False).exists()


# --- the week's schedule at a large office -----------------------------------------------


def _crowded_day(technician, other_technician, count: int):
    """``count`` overlapping visits today for one technician, one for another."""
    from tests.factories import SiteFactory, VisitFactory

    start = timezone.localtime().replace(hour=10, minute=0, second=0, microsecond=0)
    crowded = [
        VisitFactory(
            site=SiteFactory(),
            window_start=start,
            window_end=start + dt.timedelta(hours=2),
            technicians=[technician],
        )
        for _ in range(count)
    ]
    VisitFactory(
        site=SiteFactory(),
        window_start=start,
        window_end=start + dt.timedelta(hours=1),
        technicians=[other_technician],
    )
    return crowded


def test_the_schedule_narrows_to_one_technician(office, technician, other_technician):
    _crowded_day(technician, other_technician, 2)
    everyone = office.get("/schedule/").context
    one = office.get("/schedule/", {"technician": other_technician.pk}).context
    assert len(everyone["rows"]) >= 3  # two technicians and the unassigned row
    assert [row.person_id for row in one["rows"]] == [other_technician.pk]
    assert one["visit_count"] == 1
    assert f"technician={other_technician.pk}" in one["filters_query"]


def test_double_bookings_are_summed_up_past_twenty(office, technician, other_technician):
    _crowded_day(technician, other_technician, 8)  # 8 visits at once: 28 pairs
    page = office.get("/schedule/").content.decode()
    assert page.count("</li>") >= 20
    assert "… and 8 more" in page
    assert "and 4 more</span>" in page  # each card names three of the seven it overlaps


def test_an_unknown_technician_is_400_naming_it(office):
    response = office.get("/schedule/", {"technician": "999999"})
    assert response.status_code == 400
    assert "technician=999999" in response.content.decode()
