"""The office's review: the queue of submitted visits and the decision on one (accept, or
return to the technician with a note)."""

from __future__ import annotations

from typing import Any

from django.contrib import messages
from django.db.models import Aggregate, Count, Exists, OuterRef, QuerySet, Subquery, Sum
from django.db.models.functions import Coalesce
from django.http import HttpRequest, HttpResponse
from django.shortcuts import get_object_or_404, redirect
from django.views.decorators.http import require_GET, require_POST

from diagnostics.models import Diagnosis, LeakRate
from fleet import forms
from fleet.choices import RefrigerantEventKind, Role, VisitStatus
from fleet.models import ReadingSet, RefrigerantEvent, Visit
from fleet.services import IllegalTransition, move_visit
from reports.summary import worst

from .base import BadParameter, bad_parameter, page, signed_in, within_reach
from .lists import VisitPlaceFilter, filtered, kept_query, page_of
from .stored import stored_condition
from .visit_page import visit_page


@within_reach(Role.OFFICE)
@require_POST
def visit_review(request: HttpRequest, pk: int) -> HttpResponse:
    """Accept a submitted visit, or return it to the technician with a note."""
    visit = get_object_or_404(Visit.objects.visible_to(request.user), pk=pk)
    form = forms.ReviewForm(request.POST)
    if not form.is_valid():
        return visit_page(request, pk, review_form=form)
    accept = form.cleaned_data["decision"] == forms.ReviewForm.ACCEPT
    target = VisitStatus.REVIEWED if accept else VisitStatus.IN_PROGRESS
    try:
        move_visit(visit, target, by=signed_in(request), note=form.cleaned_data["note"].strip())
    except IllegalTransition as refused:
        messages.error(request, f"Nothing changed: {refused}.")
        return redirect("fleet:visit", pk=visit.pk)
    if accept:
        messages.success(request, f"Visit {visit.reference} accepted.")
    else:
        messages.success(request, f"Visit {visit.reference} returned to the technician.")
    return redirect("fleet:review-queue")


#: Visits on one page of the queue.
PAGE_SIZE = 25


def _per_visit(rows: QuerySet[Any], aggregate: Aggregate) -> Subquery:
    """One number per visit of the outer query, from ``rows`` (records of the visit's
    units): a correlated subquery, so no join multiplies another's rows."""
    return Subquery(
        rows.order_by().values("visit_unit__visit").annotate(value=aggregate).values("value")[:1]
    )


def _queue(visits: QuerySet[Visit]) -> QuerySet[Visit]:
    """The submitted visits, oldest hand-in first, with each one's counts from aggregates
    in the same query."""
    mine = OuterRef("pk")
    return (
        visits.filter(status=VisitStatus.SUBMITTED)
        .select_related("site")
        .prefetch_related("technicians")
        .annotate(
            unit_count=Count("visit_units", distinct=True),
            reading_count=Coalesce(
                _per_visit(ReadingSet.objects.filter(visit_unit__visit=mine), Count("pk")), 0
            ),
            added_kg=_per_visit(
                RefrigerantEvent.objects.filter(
                    visit_unit__visit=mine, kind=RefrigerantEventKind.ADDED
                ),
                Sum("amount_kg"),
            ),
            over_threshold=Exists(
                LeakRate.objects.filter(event__visit_unit__visit=mine, over_threshold=True)
            ),
        )
        .order_by("submitted_at", "window_start", "pk")
    )


def _judged(visit_ids: list[int]) -> dict[int, dict[str, Any]]:
    """What the stored diagnoses of these visits say, per visit: one query for all of them,
    their documents read in one pass."""
    rows = list(
        Diagnosis.objects.filter(reading_set__visit_unit__visit__in=visit_ids).values_list(
            "reading_set__visit_unit__visit",
            "reading_set__visit_unit__unit__application",
            "score",
            "document",
        )
    )
    judged: dict[int, dict[str, Any]] = {}
    for (visit_id, application, score, _), details in zip(
        rows, Diagnosis.details_of([r[3] for r in rows]), strict=True
    ):
        seen = judged.setdefault(
            visit_id, {"conditions": [], "scores": [], "faults": 0, "findings": set()}
        )
        seen["conditions"].append(stored_condition(score, details, application=application))
        if score is not None:
            seen["scores"].append(score)
        seen["faults"] += sum(1 for m in details["metrics"] if m["status"] == "fault")
        seen["findings"].update(f["title"] for f in details["findings"])
    return judged


@within_reach(Role.OFFICE)
@require_GET
def review_queue(request: HttpRequest) -> HttpResponse:
    """Submitted visits, oldest hand-in first, with what a reviewer looks at first, a page at
    a time; by customer, site or technician as the query string asks."""
    visits = Visit.objects.visible_to(request.user)
    try:
        narrowed = filtered(VisitPlaceFilter, request, visits)
        shown = page_of(request, _queue(narrowed.qs), PAGE_SIZE)
    except BadParameter as error:
        return bad_parameter(request, error)
    judged = _judged([v.pk for v in shown.object_list])
    rows = []
    for visit in shown.object_list:
        seen = judged.get(visit.pk)
        rows.append(
            {
                "visit": visit,
                "diagnosed": seen is not None,
                "condition": worst(seen["conditions"]) if seen else None,
                "lowest_score": min(seen["scores"], default=None) if seen else None,
                "faults": seen["faults"] if seen else 0,
                "findings": sorted(seen["findings"]) if seen else [],
                "reading_count": visit.reading_count,
                "unit_count": visit.unit_count,
                "added_kg": visit.added_kg or None,
                "over_threshold": visit.over_threshold,
                "resubmitted": bool(visit.review_note),
            }
        )
    context: dict[str, Any] = {
        "rows": rows,
        "page": shown,
        "filter": narrowed,
        "query": kept_query(request),
    }
    if not any(narrowed.form.cleaned_data.values()):
        context["nav_queue_count"] = shown.paginator.count  # the whole queue within reach
    return page(request, "fleet/review_queue.html", context)
