"""Planned maintenance: the units due or overdue, the visits the core proposes, and booking
them in one step."""

from __future__ import annotations

import datetime as dt
from dataclasses import dataclass

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

from .base import page, signed_in, within_reach


@dataclass(frozen=True)
class MaintenanceRow:
    unit: Unit
    status: maintenance.MaintenanceStatus
    last_done_on: dt.date | None


@dataclass(frozen=True)
class LeftOut:
    """A unit within reach that no plan can be made for, and why (a stored date no
    arithmetic can use): shown, so that someone corrects its record."""

    unit: Unit
    problems: tuple[str, ...]


def _plans_and_units(
    today: dt.date, within_reach: QuerySet[Unit]
) -> tuple[list[maintenance.MaintenancePlan], dict[int, Unit], list[LeftOut]]:
    """The maintenance plans the flag refresh decides on for the units within reach, with
    the units to show them by, and the units left out of them."""
    skipped: list[SkippedUnit] = []
    plans = maintenance_plans(today, skipped=skipped)
    units = within_reach.filter(pk__in=[p.unit_id for p in plans] + [s.unit_id for s in skipped])
    by_id = {u.pk: u for u in units.select_related("site__customer")}
    left_out = [LeftOut(by_id[s.unit_id], s.problems) for s in skipped if s.unit_id in by_id]
    return [p for p in plans if p.unit_id in by_id], by_id, left_out


@within_reach(Role.OFFICE)
@require_GET
def maintenance_due(request: HttpRequest) -> HttpResponse:
    """Units due or overdue for planned maintenance, and the visits the core proposes."""
    today = timezone.localdate()
    rules = maintenance.DEFAULT_MAINTENANCE_RULES
    plans, units, left_out = _plans_and_units(today, Unit.objects.visible_to(request.user))
    horizon = today + dt.timedelta(days=rules.proposal_horizon_days)
    rows = []
    for plan in plans:
        status = maintenance.maintenance_status(plan, today)
        if status.due_on <= horizon:
            rows.append(MaintenanceRow(units[plan.unit_id], status, plan.last_completed_on))
    rows.sort(key=lambda r: (r.status.scheduled_on is not None, r.status.due_on, r.unit.tag))
    proposals = [
        {
            "proposal": p,
            "site": units[p.unit_ids[0]].site,
            "units": [units[pk] for pk in p.unit_ids],
            "overdue": len(p.overdue_unit_ids),
        }
        for p in maintenance.propose_visits(plans, today, rules)
    ]
    return page(
        request,
        "fleet/maintenance.html",
        {
            "rows": rows,
            "proposals": proposals,
            "left_out": left_out,
            "today": today,
            "horizon_days": rules.proposal_horizon_days,
            "overdue_count": sum(1 for r in rows if r.status.overdue and not r.status.scheduled_on),
        },
    )


@within_reach(Role.OFFICE)
@require_POST
def maintenance_propose(request: HttpRequest) -> HttpResponse:
    """Book the proposed planned visits (unassigned; the coordinator assigns them after)."""
    today = timezone.localdate()
    plans, units, _ = _plans_and_units(today, Unit.objects.visible_to(request.user))
    proposals = maintenance.propose_visits(plans, today)
    booked = book_proposed_visits(proposals, units, by=signed_in(request))
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
