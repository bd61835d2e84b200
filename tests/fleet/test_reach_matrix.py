"""The permission matrix: every role and every combination of roles, on the pages, the API
and the reports (lists and details), sees exactly the records ``fleet.reach`` gives it.

For each kind of record the expected set is ``Model.objects.visible_to(user)``, the one
rule; each probe reads the ids a surface shows (the links of a list page, the rows of an
API list, the details that answer 200 rather than 404) and must find that same set. A
surface that is a role's tool rather than a view of its records (the office's attention
list, review queue and booking) is the office's, and its refusals are in
``tests/pages/test_access.py``.
"""

from __future__ import annotations

import datetime as dt
import re
from collections.abc import Callable
from dataclasses import dataclass

import pytest
from django.contrib.auth.models import Group, User
from django.db.models import Model
from django.test import Client
from django.utils import timezone
from rest_framework.test import APIClient

from diagnostics.models import Flag
from fleet.models import Component, Customer, ReadingSet, Site, Unit, Visit
from reports.models import MonthlyReport
from tests.factories import (
    ComponentFactory,
    SiteFactory,
    UnitFactory,
    UserFactory,
    VisitFactory,
    VisitUnitFactory,
)
from tests.reports.factories import (
    DiagnosisFactory,
    FlagFactory,
    LeakRateFactory,
    MonthlyReportFactory,
)

pytestmark = pytest.mark.django_db

MONTH = "2026-03"

#: Every role alone, every combination, none, and a superuser (office by rule).
COMBINATIONS = {
    "none": (),
    "office": ("office",),
    "technician": ("technician",),
    "manager": ("manager",),
    "technician+manager": ("technician", "manager"),
    "office+technician": ("office", "technician"),
    "office+manager": ("office", "manager"),
    "all three": ("office", "technician", "manager"),
    "superuser": None,
}


@pytest.fixture(autouse=True)
def _report_files(settings, tmp_path):
    """Stored reports write their PDF: keep it in a temporary folder."""
    settings.MEDIA_ROOT = tmp_path / "media"


@dataclass
class Matrix:
    """The fleet as seen by one user: their page and API clients, and every record."""

    user: User
    pages: Client
    api: APIClient
    sites: list[Site]
    units: list[Unit]
    visits: list[Visit]


def _midweek() -> dt.datetime:
    """Wednesday noon of this week: on this week's schedule in any site's time zone."""
    today = timezone.localdate()
    wednesday = today - dt.timedelta(days=today.weekday()) + dt.timedelta(days=2)
    return dt.datetime.combine(wednesday, dt.time(12), timezone.get_current_timezone())


def _user(roles: tuple[str, ...] | None) -> User:
    if roles is None:
        return User.objects.create_superuser("root", password="x")
    user = UserFactory(username="seer")
    user.groups.set(Group.objects.filter(name__in=roles))
    return user


def _matrix(roles: tuple[str, ...] | None) -> Matrix:
    """Three sites: the user's own visit is at ``Visited`` (beside a colleague's there),
    ``Granted`` is granted to them as a manager (with a colleague's visit), ``Foreign`` is
    neither. Every unit has a part, a diagnosed reading set, an addition with its leak
    rate, a flag; every site a stored report."""
    user = _user(roles)
    colleague = UserFactory(username="colleague", role="technician")
    sites = [SiteFactory(name=name) for name in ("Visited", "Granted", "Foreign")]
    sites[1].managers.add(user)
    units = [UnitFactory(site=site) for site in sites]
    start = _midweek()
    visits = [
        VisitFactory(site=sites[0], window_start=start, technicians=[user]),
        VisitFactory(site=sites[0], window_start=start, technicians=[colleague]),
        VisitFactory(site=sites[1], window_start=start, technicians=[colleague]),
        VisitFactory(site=sites[2], window_start=start, technicians=[colleague]),
    ]
    for visit, unit in zip(visits, (units[0], units[0], units[1], units[2]), strict=True):
        covered = VisitUnitFactory(visit=visit, unit=unit)
        DiagnosisFactory(reading_set__visit_unit=covered)
        LeakRateFactory(event__visit_unit=covered)
    for unit in units:
        ComponentFactory(unit=unit)
        FlagFactory(unit=unit)
    for site in sites:
        MonthlyReportFactory(site=site)
    pages = Client()
    pages.force_login(user)
    api = APIClient()
    api.force_authenticate(user)
    return Matrix(user, pages, api, sites, units, visits)


# --- what a surface shows --------------------------------------------------------------------


def _links(html: str, pattern: str) -> set[int]:
    return {int(pk) for pk in re.findall(pattern, html)}


def _page_links(m: Matrix, url: str, pattern: str) -> set[int]:
    response = m.pages.get(url)
    return _links(response.content.decode(), pattern) if response.status_code == 200 else set()


def _pages_found(m: Matrix, template: str, pks: list[int]) -> set[int]:
    """The ids whose page answers 200 (anything else must be 404, never a hint)."""
    found = set()
    for pk in pks:
        status = m.pages.get(template.format(pk=pk, month=MONTH)).status_code
        assert status in (200, 404), (template, pk, status)
        if status == 200:
            found.add(pk)
    return found


def _api_rows(m: Matrix, url: str) -> set[int]:
    response = m.api.get(url)
    if response.status_code != 200:
        assert response.status_code in (403, 404), (url, response.status_code)
        return set()
    body = response.json()
    rows = body["results"] if isinstance(body, dict) else body
    return {row["id"] for row in rows}


def _api_found(m: Matrix, template: str, pks: list[int]) -> set[int]:
    found = set()
    for pk in pks:
        status = m.api.get(template.format(pk=pk, month=MONTH)).status_code
        assert status in (200, 403, 404), (template, pk, status)
        if status == 200:
            found.add(pk)
    return found


def _all(model: type[Model]) -> list[int]:
    return list(model.objects.order_by("pk").values_list("pk", flat=True))


def _site_pages_links(m: Matrix, pattern: str) -> set[int]:
    """The ``pattern`` links on every site page the user opens."""
    return set().union(*(_page_links(m, f"/sites/{s.pk}/", pattern) for s in m.sites))


def _unit_pages_links(m: Matrix, pattern: str) -> set[int]:
    return set().union(*(_page_links(m, f"/units/{u.pk}/", pattern) for u in m.units))


Probe = Callable[[Matrix], set[int]]

#: kind -> (the records the rule gives, as ids; the probes of every surface showing them)
KINDS: dict[str, tuple[Callable[[User], set[int]], dict[str, Probe]]] = {
    "customers": (
        lambda user: set(Customer.objects.visible_to(user).values_list("pk", flat=True)),
        {
            "page: site list": lambda m: _page_links(m, "/sites/", r'id="customer-(\d+)"'),
            "API: list": lambda m: _api_rows(m, "/api/v1/customers/"),
            "API: detail": lambda m: _api_found(m, "/api/v1/customers/{pk}/", _all(Customer)),
        },
    ),
    "sites": (
        lambda user: set(Site.objects.visible_to(user).values_list("pk", flat=True)),
        {
            "page: site list": lambda m: _page_links(m, "/sites/", r'href="/sites/(\d+)/"'),
            "page: site": lambda m: _pages_found(m, "/sites/{pk}/", _all(Site)),
            "API: list": lambda m: _api_rows(m, "/api/v1/sites/"),
            "API: detail": lambda m: _api_found(m, "/api/v1/sites/{pk}/", _all(Site)),
        },
    ),
    "units": (
        lambda user: set(Unit.objects.visible_to(user).values_list("pk", flat=True)),
        {
            "page: unit": lambda m: _pages_found(m, "/units/{pk}/", _all(Unit)),
            "page: site's units": lambda m: _site_pages_links(m, r'href="/units/(\d+)/"'),
            "API: list": lambda m: _api_rows(m, "/api/v1/units/"),
            "API: detail": lambda m: _api_found(m, "/api/v1/units/{pk}/", _all(Unit)),
            "API: diagnosis": lambda m: _api_found(m, "/api/v1/units/{pk}/diagnosis/", _all(Unit)),
            "API: trends": lambda m: _api_found(m, "/api/v1/units/{pk}/trends/", _all(Unit)),
            "API: targets": lambda m: _api_found(m, "/api/v1/units/{pk}/targets/", _all(Unit)),
            "API: flags": lambda m: _api_found(m, "/api/v1/units/{pk}/flags/", _all(Unit)),
        },
    ),
    "components": (
        lambda user: set(Component.objects.visible_to(user).values_list("pk", flat=True)),
        {
            "API: list": lambda m: _api_rows(m, "/api/v1/components/"),
            "API: detail": lambda m: _api_found(m, "/api/v1/components/{pk}/", _all(Component)),
        },
    ),
    "flags": (
        lambda user: set(Flag.objects.visible_to(user).values_list("pk", flat=True)),
        {
            "page: unit's flags": lambda m: _unit_pages_links(m, r'id="flag-(\d+)"'),
            "API: unit's flags": lambda m: set().union(
                *(_api_rows(m, f"/api/v1/units/{u.pk}/flags/") for u in m.units)
            ),
        },
    ),
    "visits": (
        lambda user: set(Visit.objects.visible_to(user).values_list("pk", flat=True)),
        {
            "page: visit": lambda m: _pages_found(m, "/visits/{pk}/", _all(Visit)),
            "page: schedule": lambda m: _page_links(m, "/schedule/", r'href="/visits/(\d+)/"'),
            "page: site's visits": lambda m: _site_pages_links(m, r'href="/visits/(\d+)/"'),
            "page: unit's visits": lambda m: _unit_pages_links(m, r'href="/visits/(\d+)/"'),
            "API: list": lambda m: _api_rows(m, "/api/v1/visits/"),
            "API: detail": lambda m: _api_found(m, "/api/v1/visits/{pk}/", _all(Visit)),
            "API: history": lambda m: _api_found(m, "/api/v1/visits/{pk}/history/", _all(Visit)),
            "API: reading sets": lambda m: _api_found(
                m, "/api/v1/visits/{pk}/reading-sets/", _all(Visit)
            ),
            "API: refrigerant events": lambda m: _api_found(
                m, "/api/v1/visits/{pk}/refrigerant-events/", _all(Visit)
            ),
        },
    ),
    "reading sets": (
        lambda user: set(ReadingSet.objects.visible_to(user).values_list("pk", flat=True)),
        {"page: reading": lambda m: _pages_found(m, "/readings/{pk}/", _all(ReadingSet))},
    ),
    # Reports by their site: the reports are listed and opened per site.
    "reports": (
        lambda user: set(MonthlyReport.objects.visible_to(user).values_list("site_id", flat=True)),
        {
            "reports page: index": lambda m: _page_links(
                m, "/reports/", r'href="/reports/sites/(\d+)/"'
            ),
            "reports page: site": lambda m: _pages_found(m, "/reports/sites/{pk}/", _all(Site)),
            "reports page: report": lambda m: _pages_found(
                m, "/reports/sites/{pk}/{month}/", _all(Site)
            ),
            "reports page: PDF": lambda m: _pages_found(
                m, "/reports/sites/{pk}/{month}.pdf", _all(Site)
            ),
            "page: site's reports": lambda m: _site_pages_links(
                m, rf'href="/sites/(\d+)/reports/{MONTH}/"'
            ),
            "page: stored report": lambda m: _pages_found(
                m, "/sites/{pk}/reports/{month}/", _all(Site)
            ),
            "API: list": lambda m: _api_found(m, "/api/v1/sites/{pk}/reports/", _all(Site)),
            "API: PDF": lambda m: _api_found(
                m, "/api/v1/sites/{pk}/reports/{month}.pdf", _all(Site)
            ),
        },
    ),
}


@pytest.mark.parametrize("kind", KINDS)
@pytest.mark.parametrize("combination", COMBINATIONS)
def test_every_surface_shows_each_role_combination_what_the_rule_gives(combination, kind):
    """Pages, API and reports, lists and details, show the same records for every role and
    combination of roles: the union of the roles' reaches, as ``visible_to`` decides."""
    m = _matrix(COMBINATIONS[combination])
    rule, probes = KINDS[kind]
    expected = rule(User.objects.get(pk=m.user.pk))
    seen = {surface: probe(m) for surface, probe in probes.items()}
    assert {s: ids for s, ids in seen.items() if ids != expected} == {}, expected


#: combination -> the sites, visits (by site) and report sites the rule gives it, by name.
ANCHORS = {
    "none": ((), (), ()),
    "technician": (("Visited",), ("Visited",), ()),
    "manager": (("Granted",), (), ("Granted",)),
    "technician+manager": (("Visited", "Granted"), ("Visited",), ("Granted",)),
}


@pytest.mark.parametrize("combination", ANCHORS)
def test_the_fleet_tells_the_roles_apart(combination):
    """The matrix is not empty-handed: on its fleet each role reaches a different set (the
    technician their own visit and not a colleague's at the same site), so a surface that
    showed everyone everything, or nothing, would fail it."""
    m = _matrix(COMBINATIONS[combination])
    user = User.objects.get(pk=m.user.pk)
    sites = Site.objects.visible_to(user).order_by("pk").values_list("name", flat=True)
    visits = Visit.objects.visible_to(user).order_by("pk").values_list("site__name", flat=True)
    reports = MonthlyReport.objects.visible_to(user).order_by("pk")
    assert (
        tuple(sites),
        tuple(visits),
        tuple(reports.values_list("site__name", flat=True)),
    ) == ANCHORS[combination]
    everything = User.objects.get(username="colleague")  # a technician on three sites
    assert Visit.objects.visible_to(everything).count() == 3
