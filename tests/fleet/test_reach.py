"""One rule for who may see what (``fleet.reach``): every model's ``visible_to(user)`` and
the role function, used alike by the pages, the API and the reports.

A user in several role groups reaches the union of their roles' reaches, everywhere.
"""

from __future__ import annotations

from dataclasses import dataclass

import pytest
from django.contrib.auth.models import Group, User
from django.test import Client
from django.urls import reverse
from rest_framework.test import APIClient

from diagnostics.models import Diagnosis, Flag, LeakRate
from fleet.models import (
    AuditEntry,
    Component,
    Customer,
    ReadingSet,
    Refrigerant,
    RefrigerantEvent,
    Site,
    Unit,
    Visit,
    VisitUnit,
)
from fleet.reach import roles_of
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


@pytest.fixture(autouse=True)
def _report_files(settings, tmp_path):
    """Stored reports write their PDF: keep it in a temporary folder."""
    settings.MEDIA_ROOT = tmp_path / "media"


#: Every model that scopes itself to a user's reach.
SCOPED = (
    Customer,
    Site,
    Refrigerant,
    Unit,
    Visit,
    VisitUnit,
    Component,
    ReadingSet,
    RefrigerantEvent,
    AuditEntry,
    Diagnosis,
    LeakRate,
    Flag,
    MonthlyReport,
)


@dataclass
class Fleet:
    """Three sites: ``visited`` holds the user's assigned visit, ``granted`` is granted to
    them as a manager (with a visit of someone else's), ``foreign`` is neither."""

    user: User
    visited: Site
    granted: Site
    foreign: Site
    visited_unit: Unit
    granted_unit: Unit
    foreign_unit: Unit
    own_visit: Visit
    granted_visit: Visit
    foreign_visit: Visit


def _records_on(unit: Unit, visit: Visit) -> None:
    """A part, a reading set with its diagnosis, an addition with its leak rate, a flag and
    an audit entry, so every scoped model has a row per unit."""
    covered = VisitUnitFactory(visit=visit, unit=unit)
    ComponentFactory(unit=unit)
    DiagnosisFactory(reading_set__visit_unit=covered)
    LeakRateFactory(event__visit_unit=covered)
    FlagFactory(unit=unit)
    AuditEntry.objects.create(
        at=visit.window_start,
        action="created",
        record_type_id=_visit_type(),
        record_id=visit.pk,
        visit_id=visit.pk,
    )


def _visit_type() -> int:
    from django.contrib.contenttypes.models import ContentType

    return ContentType.objects.get_for_model(Visit).pk


def _fleet(groups: tuple[str, ...]) -> Fleet:
    user = UserFactory(username="both")
    for name in groups:
        user.groups.add(Group.objects.get(name=name))
    someone_else = UserFactory(username="someone-else", role="technician")
    sites = [SiteFactory(name=name) for name in ("Visited", "Granted", "Foreign")]
    sites[1].managers.add(user)
    units = [UnitFactory(site=site) for site in sites]
    visits = [
        VisitFactory(site=sites[0], status="in_progress", technicians=[user]),
        VisitFactory(site=sites[1], status="in_progress", technicians=[someone_else]),
        VisitFactory(site=sites[2], status="in_progress", technicians=[someone_else]),
    ]
    for unit, visit in zip(units, visits, strict=True):
        _records_on(unit, visit)
    for site in sites:
        MonthlyReportFactory(site=site)
    return Fleet(user, *sites, *units, *visits)


def _seen(user: User) -> dict[str, set[int]]:
    """The ids of every scoped model within ``user``'s reach (read afresh: no cached
    roles)."""
    fresh = User.objects.get(pk=user.pk)
    return {
        model.__name__: set(model.objects.visible_to(fresh).values_list("pk", flat=True))
        for model in SCOPED
    }


def _with_groups(user: User, groups: tuple[str, ...]) -> User:
    user.groups.set(Group.objects.filter(name__in=groups))
    return user


def test_it_gives_two_roles_the_union_of_their_reaches_on_every_model():
    """For every scoped model, a technician who is also a manager reaches exactly what the
    technician reaches plus what the manager reaches, nothing more."""
    fleet = _fleet(("technician", "manager"))
    as_technician = _seen(_with_groups(fleet.user, ("technician",)))
    as_manager = _seen(_with_groups(fleet.user, ("manager",)))
    as_both = _seen(_with_groups(fleet.user, ("technician", "manager")))
    for model in SCOPED:
        name = model.__name__
        assert as_both[name] == as_technician[name] | as_manager[name], name
    # and each role alone reaches what the rule says it does
    assert as_technician["Visit"] == {fleet.own_visit.pk}
    assert as_manager["Visit"] == set()
    assert as_technician["Site"] == {fleet.visited.pk}
    assert as_manager["Site"] == {fleet.granted.pk}
    assert as_technician["Unit"] == {fleet.visited_unit.pk}
    assert as_manager["Unit"] == {fleet.granted_unit.pk}
    assert as_technician["MonthlyReport"] == set()
    assert as_manager["MonthlyReport"] == set(
        MonthlyReport.objects.filter(site=fleet.granted).values_list("pk", flat=True)
    )
    assert as_both["Refrigerant"] == set(Refrigerant.objects.values_list("pk", flat=True))


def test_it_gives_the_office_everything_and_no_role_nothing(office_user):
    """The office (or a superuser) reaches every row of every scoped model; a user in no
    role group, or an inactive one, reaches none."""
    fleet = _fleet(())
    superuser = User.objects.create_superuser("root", password="x")
    inactive = UserFactory(username="gone", role="office")
    inactive.is_active = False
    inactive.save()
    everything = {
        model.__name__: set(model.objects.values_list("pk", flat=True)) for model in SCOPED
    }
    assert _seen(office_user) == everything
    assert _seen(superuser) == everything
    nothing = {model.__name__: set() for model in SCOPED}
    assert _seen(fleet.user) == nothing
    assert _seen(inactive) == nothing
    assert not roles_of(User.objects.get(pk=inactive.pk))


def _named(html: str) -> list[str]:
    """Which of the three sites a page names."""
    return [name for name in ("Visited", "Granted", "Foreign") if name in html]


def _page(client: Client, name: str, *args: object) -> int:
    return client.get(reverse(name, args=args)).status_code


def test_a_technician_who_is_also_a_manager_reaches_both_on_pages_api_and_reports():
    """Pages, API and reports answer a technician-manager alike: their own visit and its
    site and unit (as a technician), their granted site with its unit and reports (as a
    manager); a visit at the granted site that is someone else's, and everything of a
    foreign site, is 404 on all three."""
    fleet = _fleet(("technician", "manager"))
    pages = Client()
    pages.force_login(fleet.user)
    api = APIClient()
    api.force_authenticate(fleet.user)
    month = "2026-03"

    # the office pages
    assert _page(pages, "fleet:schedule") == 200
    listed = pages.get(reverse("fleet:sites")).content.decode()
    assert _named(listed) == ["Visited", "Granted"]
    for site in (fleet.visited, fleet.granted):
        assert _page(pages, "fleet:site", site.pk) == 200
    for unit in (fleet.visited_unit, fleet.granted_unit):
        assert _page(pages, "fleet:unit", unit.pk) == 200
    assert _page(pages, "fleet:visit", fleet.own_visit.pk) == 200
    assert _page(pages, "fleet:site-report", fleet.granted.pk, month) == 200
    assert _page(pages, "fleet:visit", fleet.granted_visit.pk) == 404
    assert _page(pages, "fleet:site-report", fleet.visited.pk, month) == 404
    assert _page(pages, "fleet:site", fleet.foreign.pk) == 404
    assert _page(pages, "fleet:unit", fleet.foreign_unit.pk) == 404

    # the API
    sites = {row["id"] for row in api.get("/api/v1/sites/").json()["results"]}
    assert sites == {fleet.visited.pk, fleet.granted.pk}
    units = {row["id"] for row in api.get("/api/v1/units/").json()["results"]}
    assert units == {fleet.visited_unit.pk, fleet.granted_unit.pk}
    visits = {row["id"] for row in api.get("/api/v1/visits/").json()["results"]}
    assert visits == {fleet.own_visit.pk}
    assert api.get(f"/api/v1/units/{fleet.granted_unit.pk}/flags/").status_code == 200
    assert api.get(f"/api/v1/visits/{fleet.granted_visit.pk}/").status_code == 404
    assert api.get(f"/api/v1/units/{fleet.foreign_unit.pk}/flags/").status_code == 404

    # the reports, on their pages and on the API
    assert api.get(f"/api/v1/sites/{fleet.granted.pk}/reports/").json()["count"] == 1
    assert api.get(f"/api/v1/sites/{fleet.visited.pk}/reports/").status_code == 404
    index = pages.get(reverse("reports:index")).content.decode()
    assert _named(index) == ["Granted"]
    assert _page(pages, "reports:site", fleet.granted.pk) == 200
    assert _page(pages, "reports:site", fleet.foreign.pk) == 404


def test_the_unit_page_links_only_the_visits_within_reach():
    """A manager's unit page names the visits its readings come from without linking them
    (managers reach no visit); a technician's links their own visit only."""
    fleet = _fleet(("manager",))
    pages = Client()
    pages.force_login(fleet.user)
    html = pages.get(reverse("fleet:unit", args=[fleet.granted_unit.pk])).content.decode()
    assert fleet.granted_visit.reference in html
    assert reverse("fleet:visit", args=[fleet.granted_visit.pk]) not in html

    technician = UserFactory(username="on-both", role="technician")
    fleet.own_visit.technicians.add(technician)
    VisitUnitFactory(visit=fleet.own_visit, unit=fleet.granted_unit)
    pages.force_login(technician)
    html = pages.get(reverse("fleet:unit", args=[fleet.granted_unit.pk])).content.decode()
    assert reverse("fleet:visit", args=[fleet.own_visit.pk]) in html
    assert fleet.granted_visit.reference in html
    assert reverse("fleet:visit", args=[fleet.granted_visit.pk]) not in html


def test_a_month_without_a_report_is_not_found():
    """The stored-report page answers 404 for a month with no report, within reach or
    not (the same answer either way)."""
    fleet = _fleet(("manager",))
    pages = Client()
    pages.force_login(fleet.user)
    assert _page(pages, "fleet:site-report", fleet.granted.pk, "2026-03") == 200
    assert _page(pages, "fleet:site-report", fleet.granted.pk, "2026-04") == 404
    assert _page(pages, "fleet:site-report", fleet.foreign.pk, "2026-03") == 404
