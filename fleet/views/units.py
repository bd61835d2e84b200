"""A unit's page: nameplate and design data, the latest diagnosis, trend charts, open
flags, refrigerant records and leak rates, components and visits."""

from __future__ import annotations

import datetime as dt
from typing import Any

from django.contrib import messages
from django.http import FileResponse, HttpRequest, HttpResponse
from django.shortcuts import get_object_or_404, redirect
from django.urls import reverse
from django.utils import timezone
from django.views.decorators.http import require_GET, require_POST

from fleet import forms
from fleet.choices import RefrigerantEventKind, Role
from fleet.display import display_for
from fleet.models import ReadingSet, RefrigerantEvent, Unit, UnitDocument, Visit
from fleet.reach import roles_of
from fleet.services import attach_document

from .base import ANY_ROLE, page, signed_in, within_reach
from .stored import diagnosis_condition, leak_rate_of


def unit_charts(unit: Unit, today: dt.date) -> dict[str, Any]:
    """The unit's trend charts over the last twelve months of as-found readings: the monthly
    report's trend panels (``reports.figures.trend_panels``) and chart module, in one query.

    Returns the SVG (or "" when there is too little history) and the panels' descriptions.
    """
    from reports.charts import Window, chart_svg
    from reports.figures import trend_panels
    from reports.queries import unit_trend_history
    from reports.summary import DEFAULT_RULES

    first = dt.date(today.year - 1, today.month, 1)
    history = unit_trend_history(unit.pk, first, timezone.get_current_timezone())
    panels = trend_panels(history, unit.rla_a, display_for(), unit.application)
    shown = [p for p in panels if p.point_count() >= DEFAULT_RULES.chart_min_points]
    if not shown:
        return {"svg": "", "described": [], "min_points": DEFAULT_RULES.chart_min_points}
    window = Window.months(first, today)
    return {
        "svg": chart_svg(shown, window, columns=2),
        "described": [f"{p.title}: {p.alt}" for p in shown],
        "min_points": DEFAULT_RULES.chart_min_points,
    }


@within_reach(*ANY_ROLE)
@require_GET
def unit_detail(request: HttpRequest, pk: int) -> HttpResponse:
    """A unit: nameplate and design data, latest diagnosis, trends, flags, leaks, history."""
    return unit_page(request, pk)


def unit_page(
    request: HttpRequest,
    pk: int,
    document_form: forms.DocumentForm | None = None,
    status: int = 200,
) -> HttpResponse:
    """The unit's page, with a document form sent back with its errors if there is one."""
    unit = get_object_or_404(
        Unit.objects.visible_to(request.user).select_related("site__customer", "refrigerant"),
        pk=pk,
    )
    components = list(
        unit.components.select_related("changed_on_visit").order_by(
            "removed_on", "kind", "-installed_on"
        )
    )
    latest = (
        ReadingSet.objects.filter(visit_unit__unit=unit, diagnosis__isnull=False)
        .select_related("diagnosis", "visit_unit__visit")
        .order_by("-taken_at")
        .first()
    )
    flags = list(
        unit.flags.filter(cleared_at__isnull=True)
        .select_related("acknowledged_by")
        .order_by("-opened_at")
    )
    documents = list(unit.documents.select_related("uploaded_by").order_by("-uploaded_at"))
    events = list(
        RefrigerantEvent.objects.filter(visit_unit__unit=unit)
        .select_related("leak_rate", "visit_unit__visit")
        .order_by("-occurred_on", "-id")
    )
    of_unit = Visit.objects.visible_to(request.user).filter(visit_units__unit=unit)
    visits = list(of_unit.prefetch_related("technicians").order_by("-window_start")[:24])
    # The readings, refrigerant records and parts link their visits where within reach.
    roles = roles_of(request.user)
    reachable = None if roles.office else set(of_unit.values_list("pk", flat=True))
    added_kg = sum(e.amount_kg or 0 for e in events if e.kind == RefrigerantEventKind.ADDED)
    diagnosis = latest.diagnosis if latest else None
    return page(
        request,
        "fleet/unit_detail.html",
        {
            "unit": unit,
            "site": unit.site,
            "components": components,
            "fitted": [c for c in components if c.removed_on is None],
            "removed": [c for c in components if c.removed_on is not None],
            "latest": latest,
            "diagnosis": diagnosis,
            "condition": diagnosis_condition(diagnosis, flags, unit.application)
            if diagnosis
            else None,
            "flags": flags,
            "events": [(e, leak_rate_of(e)) for e in events],
            "added_kg": added_kg,
            "visits": visits,
            "reachable_visits": reachable,
            "charts": unit_charts(unit, timezone.localdate()),
            "flammable_list": [unit.refrigerant.designation] if unit.refrigerant.flammable else [],
            "can_acknowledge": roles.office,
            "ack_form": forms.AcknowledgeFlagForm(),
            "documents": documents,
            "document_form": document_form or forms.DocumentForm(),
        },
        status=status,
    )


@within_reach(Role.OFFICE)
@require_POST
def document_add(request: HttpRequest, pk: int) -> HttpResponse:
    """Keep a file with the unit; a refused one comes back on the unit's page, named."""
    unit = get_object_or_404(Unit.objects.visible_to(request.user), pk=pk)
    form = forms.DocumentForm(request.POST, request.FILES)
    if not form.is_valid():
        return unit_page(request, pk, document_form=form, status=400)
    attach_document(
        unit,
        form.cleaned_data["file"],
        kind=form.cleaned_data["kind"],
        title=form.cleaned_data["title"],
        by=signed_in(request),
    )
    messages.success(request, f"{form.cleaned_data['file'].name} kept with {unit.tag}.")
    return redirect(f"{reverse('fleet:unit', args=[unit.pk])}#documents-title")


@within_reach(*ANY_ROLE)
@require_GET
def document_file(request: HttpRequest, pk: int) -> FileResponse:
    """A unit's file, to whoever may see the unit, with the type it was checked to be."""
    document = get_object_or_404(UnitDocument.objects.visible_to(request.user), pk=pk)
    response = FileResponse(
        document.file.open("rb"),
        content_type=document.content_type,
        as_attachment=False,
        filename=document.original_name,
    )
    response["Cache-Control"] = "private, max-age=3600"
    return response
