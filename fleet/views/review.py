"""The office's review: the queue of submitted visits and the decision on one (accept, or
return to the technician with a note)."""

from __future__ import annotations

from django.contrib import messages
from django.http import HttpRequest, HttpResponse
from django.shortcuts import get_object_or_404, redirect
from django.views.decorators.http import require_GET, require_POST

from diagnostics.models import Diagnosis
from fleet import forms
from fleet.choices import RefrigerantEventKind, Role, VisitStatus
from fleet.models import Visit
from fleet.services import IllegalTransition, move_visit
from reports.summary import worst

from .base import page, signed_in, within_reach
from .stored import covered_units
from .visit_page import visit_page, visit_with_everything


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


@within_reach(Role.OFFICE)
@require_GET
def review_queue(request: HttpRequest) -> HttpResponse:
    """Submitted visits, oldest hand-in first, with what a reviewer looks at first."""
    visits = list(
        visit_with_everything(request)
        .filter(status=VisitStatus.SUBMITTED)
        .order_by("submitted_at", "window_start")
    )
    rows = []
    covered_of = {visit.pk: covered_units(visit) for visit in visits}
    Diagnosis.attach_details(
        d for covered in covered_of.values() for c in covered for _, d in c.readings
    )
    for visit in visits:
        covered = covered_of[visit.pk]
        diagnoses = [d for c in covered for _, d in c.readings if d is not None]
        added = sum(
            ev.amount_kg or 0
            for c in covered
            for ev, _ in c.events
            if ev.kind == RefrigerantEventKind.ADDED
        )
        rows.append(
            {
                "visit": visit,
                "diagnosed": bool(diagnoses),
                "condition": worst(c.condition for c in covered if c.condition),
                "lowest_score": min(
                    (d.score for d in diagnoses if d.score is not None), default=None
                ),
                "faults": sum(1 for d in diagnoses for m in d.metrics if m["status"] == "fault"),
                "findings": sorted({f["title"] for d in diagnoses for f in d.findings}),
                "reading_count": sum(len(c.readings) for c in covered),
                "unit_count": len(covered),
                "added_kg": added or None,
                "over_threshold": any(
                    lr is not None and lr.over_threshold for c in covered for _, lr in c.events
                ),
                "resubmitted": bool(visit.review_note),
            }
        )
    return page(request, "fleet/review_queue.html", {"rows": rows})
