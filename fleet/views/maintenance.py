"""Planned maintenance: the units due or overdue grouped by site with the visit the core
proposes for each, a page of sites at a time, and booking every proposed visit in one
step."""

from __future__ import annotations

import datetime as dt
from collections import defaultdict
from dataclasses import dataclass, field
from typing import Any

from django.contrib import messages
from django.db.models import QuerySet
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

#: Sites (each with all its units due) on one page.
SITES_PER_PAGE = 20

STATES = [
    ("overdue", "Overdue, not booked"),
    ("due", "Due soon, not booked"),
    ("booked", "Booked"),
]


class MaintenanceFilter(UnitPlaceFilter):
    state = choice_only(STATES, "Every state")


@dataclass(frozen=True)
class MaintenanceRow:
    """A unit due, as the page shows it: read as values (tag, description, interval), not
    built as a model with its site and customer."""

    status: maintenance.MaintenanceStatus
    last_done_on: dt.date | None
    unit: dict[str, Any] = field(default_factory=dict)

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
    """One site's units due and the visit proposed there (None: every unit is booked)."""

    site_id: int
    rows: list[MaintenanceRow]
    proposal: maintenance.VisitProposal | None
    site: dict[str, Any] = field(default_factory=dict)

    @property
    def urgency(self) -> tuple[bool, dt.date]:
        return min(r.urgency for r in self.rows)


@dataclass(frozen=True)
class LeftOut:
    """A unit within reach that no plan can be made for, and why (a stored date no
    arithmetic can use): shown, so that someone corrects its record."""

    unit: dict[str, Any]
    problems: tuple[str, ...]


def _plans(
    today: dt.date, units: QuerySet[Unit]
) -> tuple[list[maintenance.MaintenancePlan], list[SkippedUnit]]:
    """The maintenance plans the flag refresh decides on, for ``units``, and those of
    ``units`` left out of them."""
    skipped: list[SkippedUnit] = []
    plans = maintenance_plans(today, skipped=skipped)
    ids = set(units.values_list("pk", flat=True))
    return [p for p in plans if p.unit_id in ids], [s for s in skipped if s.unit_id in ids]


def _groups(
    plans: list[maintenance.MaintenancePlan],
    today: dt.date,
    rules: maintenance.MaintenanceRules,
    state: str,
) -> list[SiteGroup]:
    """The sites with a unit due within the horizon (in ``state`` when one is asked for),
    most urgent first, each with its rows and proposal."""
    horizon = today + dt.timedelta(days=rules.proposal_horizon_days)
    by_site: dict[int, list[MaintenanceRow]] = defaultdict(list)
    for plan in plans:
        status = maintenance.maintenance_status(plan, today)
        if status.due_on <= horizon:
            row = MaintenanceRow(status, plan.last_completed_on)
            if not state or row.state == state:
                by_site[plan.site_id].append(row)
    proposals = {p.site_id: p for p in maintenance.propose_visits(plans, today, rules)}
    groups = [SiteGroup(site_id, rows, proposals.get(site_id)) for site_id, rows in by_site.items()]
    groups.sort(key=lambda g: (g.urgency, g.site_id))
    return groups


def _fill(groups: list[SiteGroup]) -> None:
    """The names the page's groups show: one query for the page's units with their sites,
    whatever the fleet's size."""
    unit_ids = [r.status.unit_id for g in groups for r in g.rows]
    units = {
        u["id"]: u
        for u in Unit.objects.filter(pk__in=unit_ids).values(
            "id", "tag", "description", "pm_interval_days", "site__name", "site__customer__name"
        )
    }
    for group in groups:
        group.rows = sorted(
            (
                MaintenanceRow(r.status, r.last_done_on, units[r.status.unit_id])
                for r in group.rows
            ),
            key=lambda r: (r.urgency, r.unit["tag"]),
        )
        first = group.rows[0].unit
        group.site = {"name": first["site__name"], "customer": first["site__customer__name"]}


@within_reach(Role.OFFICE)
@require_GET
def maintenance_due(request: HttpRequest) -> HttpResponse:
    """Units due or overdue for planned maintenance grouped by site, most urgent first, with
    the visit the core proposes for each site; by customer, site or state as the query
    string asks."""
    today = timezone.localdate()
    rules = maintenance.DEFAULT_MAINTENANCE_RULES
    try:
        narrowed = filtered(MaintenanceFilter, request, Unit.objects.visible_to(request.user))
        plans, skipped = _plans(today, narrowed.qs)
        groups = _groups(plans, today, rules, narrowed.choice("state"))
        shown = page_of(request, groups, SITES_PER_PAGE)
    except BadParameter as error:
        return bad_parameter(request, error)
    _fill(list(shown.object_list))
    problems = {s.unit_id: s.problems for s in skipped}
    left_out = [
        LeftOut(u, problems[u["id"]])
        for u in Unit.objects.filter(pk__in=list(problems)).values("id", "tag", "site__name")
    ]
    proposed = [g.proposal for g in groups if g.proposal is not None]
    return page(
        request,
        "fleet/maintenance.html",
        {
            "page": shown,
            "filter": narrowed,
            "query": kept_query(request),
            "proposed_count": len(proposed),
            "overdue_count": sum(1 for g in groups for r in g.rows if r.state == "overdue"),
            "unit_count": sum(len(g.rows) for g in groups),
            "left_out": left_out,
            "today": today,
            "horizon_days": rules.proposal_horizon_days,
        },
    )


@within_reach(Role.OFFICE)
@require_POST
def maintenance_propose(request: HttpRequest) -> HttpResponse:
    """Book the proposed planned visits (unassigned; the coordinator assigns them after)."""
    today = timezone.localdate()
    plans, _ = _plans(today, Unit.objects.visible_to(request.user))
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
    return redirect("fleet:maintenance")
