"""A unit's page: nameplate and design data, the latest diagnosis, trend charts, open
flags, refrigerant records and leak rates, components and visits."""

from __future__ import annotations

import datetime as dt
from typing import Any

from django.http import HttpRequest, HttpResponse
from django.shortcuts import get_object_or_404
from django.utils import timezone
from django.views.decorators.http import require_GET

from fleet import forms
from fleet.choices import RefrigerantEventKind
from fleet.display import display_for
from fleet.models import ReadingSet, RefrigerantEvent, Unit, Visit
from fleet.reach import roles_of

from .base import ANY_ROLE, page, within_reach
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
        },
    )
