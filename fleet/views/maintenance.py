"""Planned maintenance: the units due or overdue grouped by site with the visit the core
proposes for each, a page of sites at a time, and booking every proposed visit in one
step."""

from __future__ import annotations

import datetime as dt
from collections import defaultdict
from collections.abc import Mapping
from dataclasses import dataclass, field
from typing import Any

from django.contrib import messages
from django.http import HttpRequest, HttpResponse
from django.shortcuts import redirect
from django.urls import reverse
from django.utils import timezone
from django.views.decorators.http import require_GET, require_POST

from diagnostics.core import maintenance
from diagnostics.history import SkippedUnit, maintenance_plans
from fleet.choices import Role
from fleet.models import Unit
from fleet.services import book_proposed_visits

from .base import BadParameter, bad_parameter, page, signed_in, within_reach
from .lists import UnitPlaceFilter, choice_only, filtered, kept_query, page_of

#: Units on one page, grouped by site: a site with more units due than the page holds goes
#: on to the next page, so a page's size does not depend on how large a site is.
PAGE_SIZE = 100

STATES = [
    ("overdue", "Overdue, not booked"),
    ("due", "Due soon, not booked"),
    ("booked", "Booked"),
]


class MaintenanceFilter(UnitPlaceFilter):
    state = choice_only("State", STATES, "Every state")


@dataclass(frozen=True)
class MaintenanceRow:
    """A unit due, as the page shows it: its status, and (on the page shown) the unit read
    as values (tag, description, interval), not built as a model with site and customer."""

    status: maintenance.MaintenanceStatus
    last_done_on: dt.date | None
    tag: str
    unit: Mapping[str, Any] = field(default_factory=dict)

    @property
    def state(self) -> str:
        if self.status.scheduled_on:
            return "booked"
        return "overdue" if self.status.overdue else "due"

    @property
    def urgency(self) -> tuple[bool, dt.date]:
        """Most urgent first: not yet booked before booked, then the earliest due."""
        return (self.status.scheduled_on is not None, self.status.due_on)


@dataclass
class SiteGroup:
    """One site's units due on the page and the visit proposed there (None: every unit is
    booked); ``continued`` when the site's first units are on the page before."""

    site_id: int
    rows: list[MaintenanceRow]
    proposal: maintenance.VisitProposal | None
    continued: bool
    site: dict[str, Any]


@dataclass(frozen=True)
class LeftOut:
    """A unit within reach that no plan can be made for, and why (a stored date no
    arithmetic can use): shown, so that someone corrects its record."""

    unit: Mapping[str, Any]
    problems: tuple[str, ...]


def _plans(
    request: HttpRequest, today: dt.date
) -> tuple[MaintenanceFilter, list[maintenance.MaintenancePlan], list[SkippedUnit], dict[int, str]]:
    """The list's filter, the maintenance plans the flag refresh decides on for the units
    it leaves (a customer's or a site's: only theirs are planned), those of the units left
    out of them, and the tag of each unit (to sort by)."""
    narrowed = filtered(MaintenanceFilter, request, Unit.objects.visible_to(request.user))
    tags = dict(narrowed.qs.values_list("pk", "tag"))
    place = narrowed.form.cleaned_data
    only = list(tags) if place["customer"] or place["site"] else None
    skipped: list[SkippedUnit] = []
    plans = maintenance_plans(today, only, skipped=skipped)
    return (
        narrowed,
        [p for p in plans if p.unit_id in tags],
        [s for s in skipped if s.unit_id in tags],
        tags,
    )


def _rows(
    plans: list[maintenance.MaintenancePlan],
    tags: dict[int, str],
    today: dt.date,
    rules: maintenance.MaintenanceRules,
    state: str,
) -> list[MaintenanceRow]:
    """The units due within the horizon (in ``state`` when one is asked for), site by site,
    the site with the most urgent unit first, and the most urgent first within a site."""
    horizon = today + dt.timedelta(days=rules.proposal_horizon_days)
    by_site: dict[int, list[MaintenanceRow]] = defaultdict(list)
    for plan in plans:
        status = maintenance.maintenance_status(plan, today)
        if status.due_on <= horizon:
            row = MaintenanceRow(status, plan.last_completed_on, tags[plan.unit_id])
            if not state or row.state == state:
                by_site[plan.site_id].append(row)
    sites = sorted(by_site.items(), key=lambda s: (min(r.urgency for r in s[1]), s[0]))
    return [row for _, rows in sites for row in sorted(rows, key=lambda r: (r.urgency, r.tag))]


def _groups(
    rows: list[MaintenanceRow],
    proposals: dict[int, maintenance.VisitProposal],
    before: MaintenanceRow | None,
) -> list[SiteGroup]:
    """A page's rows by site, each with what it shows: one query for the page's units with
    their sites, whatever the fleet's size. ``before``: the row ending the page before."""
    units = {
        u["id"]: u
        for u in Unit.objects.filter(pk__in=[r.status.unit_id for r in rows]).values(
            "id", "tag", "description", "pm_interval_days", "site__name", "site__customer__name"
        )
    }
    groups: list[SiteGroup] = []
    for row in rows:
        unit = units[row.status.unit_id]
        site_id = row.status.site_id
        if not groups or groups[-1].site_id != site_id:
            continued = not groups and before is not None and before.status.site_id == site_id
            site = {"name": unit["site__name"], "customer": unit["site__customer__name"]}
            groups.append(SiteGroup(site_id, [], proposals.get(site_id), continued, site))
        groups[-1].rows.append(MaintenanceRow(row.status, row.last_done_on, row.tag, unit))
    return groups


@within_reach(Role.OFFICE)
@require_GET
def maintenance_due(request: HttpRequest) -> HttpResponse:
    """Units due or overdue for planned maintenance grouped by site, most urgent first, with
    the visit the core proposes for each site, a page at a time; by customer, site or state
    as the query string asks."""
    today = timezone.localdate()
    rules = maintenance.DEFAULT_MAINTENANCE_RULES
    try:
        narrowed, plans, skipped, tags = _plans(request, today)
        rows = _rows(plans, tags, today, rules, narrowed.choice("state"))
        shown = page_of(request, rows, PAGE_SIZE)
    except BadParameter as error:
        return bad_parameter(request, error)
    proposals = {p.site_id: p for p in maintenance.propose_visits(plans, today, rules)}
    before = rows[shown.start_index() - 2] if shown.start_index() > 1 else None
    problems = {s.unit_id: s.problems for s in skipped}
    left_out = [
        LeftOut(u, problems[u["id"]])
        for u in Unit.objects.filter(pk__in=list(problems)).values("id", "tag", "site__name")
    ]
    return page(
        request,
        "fleet/maintenance.html",
        {
            "page": shown,
            "groups": _groups(list(shown.object_list), proposals, before),
            "filter": narrowed,
            "query": kept_query(request),
            "proposed_count": len(proposals),
            "overdue_count": sum(1 for r in rows if r.state == "overdue"),
            "site_count": len({r.status.site_id for r in rows}),
            "left_out": left_out,
            "today": today,
            "horizon_days": rules.proposal_horizon_days,
        },
    )


@within_reach(Role.OFFICE)
@require_POST
def maintenance_propose(request: HttpRequest) -> HttpResponse:
    """Book the proposed planned visits (unassigned; the coordinator assigns them after):
    those the list shows, for the customer or site its query string names."""
    today = timezone.localdate()
    try:
        _, plans, _, _ = _plans(request, today)
    except BadParameter as error:
        return bad_parameter(request, error)
    proposals = maintenance.propose_visits(plans, today)
    units = Unit.objects.filter(pk__in=[pk for p in proposals for pk in p.unit_ids])
    by_id = {u.pk: u for u in units.select_related("site__customer")}
    booked = book_proposed_visits(proposals, by_id, by=signed_in(request))
    if booked:
        messages.success(
            request,
            f"Booked {len(booked)} planned visit{'s' if len(booked) != 1 else ''} "
            f"({', '.join(v.reference for v in booked)}); assign technicians on the schedule.",
        )
        first = min(v.window_start for v in booked)
        return redirect(f"{reverse('fleet:schedule')}?week={timezone.localdate(first)}")
    messages.info(request, "Nothing to book: every unit due soon already has a visit.")
    back = reverse("fleet:maintenance")
    return redirect(f"{back}?{request.GET.urlencode()}" if request.GET else back)
