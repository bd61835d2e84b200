"""The attention list: every open flag, every open leak-repair or verification deadline and
every box found far off its design temperature within reach, soonest first."""

from __future__ import annotations

import datetime as dt
from collections.abc import Sequence
from dataclasses import dataclass, replace
from typing import Any

from django.contrib import messages
from django.db.models import Exists, OuterRef, Q, QuerySet
from django.http import HttpRequest, HttpResponse
from django.shortcuts import redirect
from django.template.defaultfilters import pluralize
from django.urls import reverse
from django.utils import timezone
from django.views.decorators.http import require_GET, require_POST

from diagnostics.deadlines import open_leak_deadlines
from diagnostics.models import Diagnosis, Flag, LeakRate
from fleet import forms
from fleet.choices import Application, Role, Stage
from fleet.limits import day_on_clock
from fleet.models import ReadingSet, Unit
from fleet.services import acknowledge_flags

from .base import BadParameter, bad_parameter, page, signed_in, within_reach
from .lists import UnitPlaceFilter, choice_only, filtered, kept_query, page_of


@dataclass(frozen=True)
class AttentionItem:
    """One thing that needs the office, dated for sorting: a deadline, a flag, or a box
    found far off its design temperature."""

    due_on: dt.date
    kind: str  # "flag", "repair", "verification" or "warm_box"
    #: The unit's tag, to sort by; a flag's unit is read with the flag on its page only.
    tag: str
    unit: Unit | None = None
    flag_id: int | None = None
    flag: Flag | None = None
    leak_rate: LeakRate | None = None
    diagnosis: Diagnosis | None = None
    metric: dict | None = None

    @property
    def is_deadline(self) -> bool:
        return self.kind in ("repair", "verification")


def _open_leak_deadlines(user: Any, units: QuerySet[Unit]) -> list[AttentionItem]:
    """Repair and initial-verification deadlines not yet met, from the stored leak rates
    of ``units`` within reach (the rule of ``diagnostics.deadlines``)."""
    rates = list(
        LeakRate.objects.visible_to(user)
        .filter(Q(repair_due_on__isnull=False) | Q(verification_due_on__isnull=False))
        .filter(event__visit_unit__unit__in=units)
        .select_related("event__visit_unit__unit__site__customer", "event__visit_unit__visit")
    )
    items = []
    for deadline in open_leak_deadlines(rates):
        unit = deadline.rate.event.visit_unit.unit
        items.append(
            AttentionItem(deadline.due_on, deadline.kind, unit.tag, unit, leak_rate=deadline.rate)
        )
    return items


def _warm_boxes(units: QuerySet[Unit]) -> list[AttentionItem]:
    """Of ``units``, those in service whose latest as-found check found the box far off its
    design temperature (the stored box-temperature metric at ``fault``): the stock may be
    at risk.

    One query, starting from the few diagnoses that judged a box a fault (a partial index
    holds just those, ``Diagnosis.Meta``), keeping each only when no later as-found set of
    its unit was diagnosed: the cost follows the warm boxes, not the fleet's history.
    Ice machines hold no box.
    """
    later = ReadingSet.objects.filter(
        visit_unit__unit=OuterRef("reading_set__visit_unit__unit"),
        stage=Stage.AS_FOUND,
        diagnosis__isnull=False,
    ).filter(
        Q(taken_at__gt=OuterRef("reading_set__taken_at"))
        | Q(taken_at=OuterRef("reading_set__taken_at"), id__gt=OuterRef("reading_set_id"))
    )
    in_service = units.filter(retired_on__isnull=True).exclude(application=Application.ICE_MACHINE)
    diagnoses = list(
        Diagnosis.objects.with_metric_status("box_temp", "fault")
        .filter(reading_set__stage=Stage.AS_FOUND, reading_set__visit_unit__unit__in=in_service)
        .exclude(Exists(later))
        .select_related(
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
                    rs.visit_unit.unit.tag,
                    rs.visit_unit.unit,
                    diagnosis=d,
                    metric=box,
                )
            )
    return items


#: Items on one page of the list.
PAGE_SIZE = 50

#: What the list may be narrowed to besides a customer or site.
SHOW = [
    ("flags", "Open flags"),
    ("deadlines", "Leak deadlines"),
    ("overdue", "Overdue leak deadlines"),
    ("warm_boxes", "Boxes far off design"),
]


class AttentionFilter(UnitPlaceFilter):
    show = choice_only("Show", SHOW, "Everything")


def _items(user: Any, units: QuerySet[Unit], show: str, today: dt.date) -> list[AttentionItem]:
    """What needs the office among ``units``, soonest first: only the sources ``show``
    asks for are read."""
    items: list[AttentionItem] = []
    if show in ("", "flags"):
        flags = Flag.objects.visible_to(user).filter(cleared_at__isnull=True, unit__in=units)
        zone = timezone.get_current_timezone()
        items.extend(
            AttentionItem(projected_on or day_on_clock(opened_at, zone), "flag", tag, flag_id=pk)
            for pk, projected_on, opened_at, tag in flags.values_list(
                "pk", "projected_on", "opened_at", "unit__tag"
            )
        )
    if show in ("", "deadlines", "overdue"):
        deadlines = _open_leak_deadlines(user, units)
        if show == "overdue":
            deadlines = [d for d in deadlines if d.due_on < today]
        items.extend(deadlines)
    if show in ("", "warm_boxes"):
        items.extend(_warm_boxes(units))
    items.sort(key=lambda i: (i.due_on, i.tag, i.kind))
    return items


def _with_flags(items: Sequence[AttentionItem]) -> list[AttentionItem]:
    """A page's items with their flags read in full (unit, site, who acknowledged): one
    query for the page, not one for every open flag of the fleet."""
    flags = Flag.objects.filter(pk__in=[i.flag_id for i in items if i.flag_id]).select_related(
        "unit__site__customer", "acknowledged_by"
    )
    by_id = {f.pk: f for f in flags}
    return [
        replace(i, flag=by_id[i.flag_id], unit=by_id[i.flag_id].unit) if i.flag_id else i
        for i in items
    ]


def attention_page(
    request: HttpRequest, ack_form: forms.AcknowledgeFlagsForm | None = None, status: int = 200
) -> HttpResponse:
    """The list as the query string narrows it, one page of it at a time, with the one
    acknowledgement form (the one sent back beside its errors, or a fresh one)."""
    today = timezone.localdate()
    try:
        narrowed = filtered(AttentionFilter, request, Unit.objects.visible_to(request.user))
        items = _items(request.user, narrowed.qs, narrowed.choice("show"), today)
        shown = page_of(request, items, PAGE_SIZE)
    except BadParameter as error:
        return bad_parameter(request, error)
    flag_count = sum(1 for i in items if i.kind == "flag")
    listed = _with_flags(list(shown.object_list))
    context = {
        "page": shown,
        "items": listed,
        "filter": narrowed,
        "query": kept_query(request),
        "today": today,
        "overdue": sum(1 for i in items if i.is_deadline and i.due_on < today),
        "flag_count": flag_count,
        "deadline_count": sum(1 for i in items if i.is_deadline),
        "warm_box_count": sum(1 for i in items if i.kind == "warm_box"),
        "to_acknowledge": any(
            i.flag is not None and i.flag.acknowledged_at is None for i in listed
        ),
        "ack_form": ack_form or forms.AcknowledgeFlagsForm(user=signed_in(request)),
        "ticked": ack_form.ticked() if ack_form else set(),
    }
    if not any(narrowed.form.cleaned_data.values()):
        context["nav_flag_count"] = flag_count  # every open flag within reach: counted
    return page(request, "fleet/attention.html", context, status=status)


@within_reach(Role.OFFICE)
@require_GET
def attention(request: HttpRequest) -> HttpResponse:
    """Every open flag, every open leak deadline and every box found far off its design
    temperature within reach (or a customer's or site's), soonest first, a page at a
    time."""
    return attention_page(request)


@within_reach(Role.OFFICE)
@require_POST
def attention_acknowledge(request: HttpRequest) -> HttpResponse:
    """Acknowledge the flags ticked on the list with one note; a flag outside the user's
    reach is refused (400, naming ``flags``) and nothing is acknowledged."""
    form = forms.AcknowledgeFlagsForm(request.POST, user=signed_in(request))
    if not form.is_valid():
        return attention_page(request, form, status=400)
    done = acknowledge_flags(
        form.cleaned_data["flags"], form.cleaned_data["note"].strip(), by=signed_in(request)
    )
    if done:
        messages.success(request, f"{done} flag{pluralize(done)} acknowledged.")
    else:
        messages.info(
            request, "Nothing changed: those flags were acknowledged already or have cleared."
        )
    back = reverse("fleet:attention")
    return redirect(f"{back}?{request.GET.urlencode()}" if request.GET else back)
