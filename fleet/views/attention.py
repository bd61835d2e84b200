"""The attention list: every open flag, every open leak-repair or verification deadline and
every box found far off its design temperature within reach, soonest first."""

from __future__ import annotations

import datetime as dt
from dataclasses import dataclass
from typing import Any

from django.db.models import OuterRef, Q, Subquery
from django.http import HttpRequest, HttpResponse
from django.utils import timezone
from django.views.decorators.http import require_GET

from diagnostics.deadlines import open_leak_deadlines
from diagnostics.models import Diagnosis, Flag, LeakRate
from fleet import forms
from fleet.choices import Application, Role, Stage
from fleet.limits import day_on_clock
from fleet.models import ReadingSet, Unit

from .base import page, within_reach


@dataclass(frozen=True)
class AttentionItem:
    """One thing that needs the office, dated for sorting: a deadline, a flag, or a box
    found far off its design temperature."""

    due_on: dt.date
    kind: str  # "flag", "repair", "verification" or "warm_box"
    unit: Unit
    flag: Flag | None = None
    leak_rate: LeakRate | None = None
    diagnosis: Diagnosis | None = None
    metric: dict | None = None

    @property
    def is_deadline(self) -> bool:
        return self.kind in ("repair", "verification")


def _open_leak_deadlines(user: Any) -> list[AttentionItem]:
    """Repair and initial-verification deadlines not yet met, from the stored leak rates
    within reach (the rule of ``diagnostics.deadlines``)."""
    rates = list(
        LeakRate.objects.visible_to(user)
        .filter(Q(repair_due_on__isnull=False) | Q(verification_due_on__isnull=False))
        .select_related("event__visit_unit__unit__site__customer", "event__visit_unit__visit")
    )
    return [
        AttentionItem(d.due_on, d.kind, d.rate.event.visit_unit.unit, leak_rate=d.rate)
        for d in open_leak_deadlines(rates)
    ]


def _warm_boxes(user: Any) -> list[AttentionItem]:
    """Units in service whose latest as-found check found the box far off its design
    temperature (the stored box-temperature metric at ``fault``): the stock may be at risk.

    One query: the latest diagnosed as-found reading of every unit in service, with its
    diagnosis; their details are expanded in one pass. Ice machines hold no box.
    """
    latest = (
        ReadingSet.objects.filter(
            visit_unit__unit=OuterRef("pk"), stage=Stage.AS_FOUND, diagnosis__isnull=False
        )
        .order_by("-taken_at", "-id")
        .values("id")[:1]
    )
    in_service = (
        Unit.objects.visible_to(user)
        .filter(retired_on__isnull=True)
        .exclude(application=Application.ICE_MACHINE)
    )
    diagnoses = list(
        Diagnosis.objects.filter(
            reading_set_id__in=in_service.annotate(latest=Subquery(latest)).values("latest")
        ).select_related(
            "reading_set__visit_unit__unit__site__customer", "reading_set__visit_unit__visit"
        )
    )
    Diagnosis.attach_details(diagnoses)
    items = []
    for d in diagnoses:
        box = next(
            (m for m in d.metrics if m["name"] == "box_temp" and m["status"] == "fault"), None
        )
        if box is not None:
            rs = d.reading_set
            items.append(
                AttentionItem(
                    day_on_clock(rs.taken_at, timezone.get_current_timezone()),
                    "warm_box",
                    rs.visit_unit.unit,
                    diagnosis=d,
                    metric=box,
                )
            )
    return items


@within_reach(Role.OFFICE)
@require_GET
def attention(request: HttpRequest) -> HttpResponse:
    """Every open flag, every open leak deadline and every box found far off its design
    temperature across the fleet, soonest first."""
    today = timezone.localdate()
    flags = list(
        Flag.objects.visible_to(request.user)
        .filter(cleared_at__isnull=True)
        .select_related("unit__site__customer", "acknowledged_by")
    )
    items = [
        AttentionItem(
            f.projected_on or day_on_clock(f.opened_at, timezone.get_current_timezone()),
            "flag",
            f.unit,
            flag=f,
        )
        for f in flags
    ]
    items.extend(_open_leak_deadlines(request.user))
    items.extend(_warm_boxes(request.user))
    items.sort(key=lambda i: (i.due_on, i.unit.tag, i.kind))
    return page(
        request,
        "fleet/attention.html",
        {
            "items": items,
            "today": today,
            "overdue": sum(1 for i in items if i.is_deadline and i.due_on < today),
            "flag_count": len(flags),
            "deadline_count": sum(1 for i in items if i.is_deadline),
            "warm_box_count": sum(1 for i in items if i.kind == "warm_box"),
            "nav_flag_count": len(flags),
            "can_acknowledge": True,
            "ack_form": forms.AcknowledgeFlagForm(),
        },
    )
