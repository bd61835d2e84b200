"""Booking and changing visits on the office pages: create, edit, cancel, and the units to
cover for the site picked."""

from __future__ import annotations

import datetime as dt

from django.contrib import messages
from django.http import HttpRequest, HttpResponse
from django.shortcuts import get_object_or_404, redirect, render
from django.views.decorators.http import require_GET, require_POST

from fleet import forms
from fleet.choices import Role, VisitKind, VisitStatus
from fleet.models import Visit
from fleet.services import (
    DEFAULT_VISIT_HOURS,
    DEFAULT_VISIT_START,
    IllegalTransition,
    move_visit,
    save_with_trail,
)

from .base import BadParameter, bad_parameter, page, query_date, signed_in, within_reach


def _initial_from_query(request: HttpRequest) -> dict:
    """Prefill from the schedule's 'add' links: ?day=YYYY-MM-DD&technician=ID&site=ID (a
    day the page cannot use raises ``BadParameter``)."""
    initial: dict = {"kind": VisitKind.PLANNED}
    day = query_date(request, "day")
    if day is not None:
        start = dt.datetime.combine(day, DEFAULT_VISIT_START)
        initial["window_start"] = start
        initial["window_end"] = start + dt.timedelta(hours=DEFAULT_VISIT_HOURS)
    if request.GET.get("technician", "").isdigit():
        initial["technicians"] = [int(request.GET["technician"])]
    if request.GET.get("site", "").isdigit():
        initial["site"] = int(request.GET["site"])
    return initial


def _warn_about_overlaps(request: HttpRequest, visit: Visit) -> None:
    """Booking a technician twice is allowed (a call may outrank maintenance), but said."""
    clashes = (
        Visit.objects.filter(
            technicians__in=visit.technicians.all(),
            window_start__lt=visit.window_end,
            window_end__gt=visit.window_start,
        )
        .exclude(pk=visit.pk)
        .exclude(status=VisitStatus.CANCELLED)
        .distinct()
        .values_list("reference", flat=True)
    )
    if clashes:
        messages.warning(
            request,
            f"Double booking: {visit.reference} overlaps {', '.join(clashes)} for the same "
            "technician. It is saved; move one of them if that was not intended.",
        )


@within_reach(Role.OFFICE)
def visit_create(request: HttpRequest) -> HttpResponse:
    try:
        initial = _initial_from_query(request)
    except BadParameter as error:
        return bad_parameter(request, error)
    form = forms.VisitForm(request.POST or None, initial=initial)
    if request.method == "POST" and form.is_valid():
        visit = save_with_trail(
            None, form.save, by=signed_in(request), note="booked on the office pages"
        )
        messages.success(request, f"Visit {visit.reference} booked.")
        _warn_about_overlaps(request, visit)
        return redirect("fleet:visit", pk=visit.pk)
    return page(request, "fleet/visit_form.html", {"form": form, "visit": None})


@within_reach(Role.OFFICE)
def visit_edit(request: HttpRequest, pk: int) -> HttpResponse:
    visit = get_object_or_404(Visit.objects.visible_to(request.user).select_related("site"), pk=pk)
    if visit.status not in forms.EDITABLE_STATUSES:
        messages.error(
            request,
            f"Visit {visit.reference} is {visit.get_status_display().lower()}; "
            "its time, people and units can no longer change.",
        )
        return redirect("fleet:visit", pk=visit.pk)
    form = forms.VisitForm(request.POST or None, instance=visit)
    if request.method == "POST" and form.is_valid():
        visit = save_with_trail(
            visit,
            form.save,
            by=signed_in(request),
            note="changed on the office pages",
            changed=form.changed_data,
        )
        messages.success(request, f"Visit {visit.reference} updated.")
        _warn_about_overlaps(request, visit)
        return redirect("fleet:visit", pk=visit.pk)
    return page(request, "fleet/visit_form.html", {"form": form, "visit": visit})


@within_reach(Role.OFFICE)
@require_GET
def unit_choices(request: HttpRequest) -> HttpResponse:
    """The 'units to cover' checkboxes for the site picked (swapped in by htmx)."""
    form = forms.VisitForm(initial={"site": request.GET.get("site")})
    return render(request, "fleet/_unit_choices.html", {"form": form})


@within_reach(Role.OFFICE)
@require_POST
def visit_cancel(request: HttpRequest, pk: int) -> HttpResponse:
    visit = get_object_or_404(Visit.objects.visible_to(request.user), pk=pk)
    form = forms.CancelVisitForm(request.POST)
    if not form.is_valid():
        # An ErrorList item is its message (Django unpacks the ValidationError on indexing);
        # the stubs type it as the list's stored items, ValidationError included.
        messages.error(request, form.errors["confirm"][0])  # type: ignore[arg-type]
    else:
        try:
            move_visit(visit, VisitStatus.CANCELLED, by=signed_in(request))
        except IllegalTransition as refused:
            messages.error(request, f"Not cancelled: {refused}.")
        else:
            messages.success(request, f"Visit {visit.reference} cancelled.")
    return redirect("fleet:visit", pk=visit.pk)
