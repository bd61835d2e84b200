"""A visit's page: its people, units, readings with their scores and findings, refrigerant
records, and what changed since the office last returned it; the office reviews here."""

from __future__ import annotations

from django.db.models import Prefetch, QuerySet
from django.http import HttpRequest, HttpResponse
from django.shortcuts import get_object_or_404
from django.views.decorators.http import require_GET

from diagnostics.models import Diagnosis
from fleet import forms
from fleet.choices import VisitStatus
from fleet.models import Component, ReadingSet, RefrigerantEvent, Visit, VisitUnit
from fleet.reach import roles_of

from .base import ANY_ROLE, page, site_window, within_reach
from .stored import cautions_of, covered_units, diagnosis_of
from .trail import return_history


def visit_with_everything(request: HttpRequest) -> QuerySet[Visit]:
    """A visit with all its detail page shows, in a fixed number of queries.

    One Prefetch per ``prefetch_related`` call: the stubs type a call's Prefetch objects
    as one query set type, and these prefetch different models.
    """
    readings = ReadingSet.objects.select_related("diagnosis", "created_by").order_by("taken_at")
    events = RefrigerantEvent.objects.select_related("leak_rate", "created_by").order_by(
        "occurred_on", "id"
    )
    covered = (
        VisitUnit.objects.select_related("unit__refrigerant")
        .prefetch_related(Prefetch("reading_sets", queryset=readings))
        .prefetch_related(Prefetch("refrigerant_events", queryset=events))
        .order_by("unit__tag")
    )
    return (
        Visit.objects.visible_to(request.user)
        .select_related("site__customer", "reviewed_by")
        .prefetch_related("technicians", Prefetch("visit_units", queryset=covered))
        .prefetch_related(
            Prefetch(
                "components_changed",
                queryset=Component.objects.select_related("unit").order_by(
                    "unit__tag", "kind", "-installed_on"
                ),
            )
        )
    )


@within_reach(*ANY_ROLE)
@require_GET
def visit_detail(request: HttpRequest, pk: int) -> HttpResponse:
    """A visit: its people, units, readings with scores and findings, refrigerant records.
    The office reviews submitted visits here."""
    return visit_page(request, pk)


def visit_page(
    request: HttpRequest, pk: int, review_form: forms.ReviewForm | None = None
) -> HttpResponse:
    """The visit's page, with the review form given (a refused review) or a fresh one."""
    visit = get_object_or_404(visit_with_everything(request), pk=pk)
    covered = covered_units(visit)
    diagnoses = [d for c in covered for _, d in c.readings if d is not None]
    Diagnosis.attach_details(diagnoses)
    office = roles_of(request.user).office
    can_review = office and visit.status == VisitStatus.SUBMITTED
    window = site_window(visit)
    return page(
        request,
        "fleet/visit_detail.html",
        {
            "visit": visit,
            "covered": covered,
            "local_start": window[0] if window else None,
            "local_end": window[1] if window else None,
            "cautions": cautions_of(diagnoses),
            "flammable": sorted(
                {c.unit.refrigerant.designation for c in covered if c.unit.refrigerant.flammable}
            ),
            "has_findings": any(d.findings for d in diagnoses),
            "history": return_history(visit, covered),
            "can_edit": office and visit.status in forms.EDITABLE_STATUSES,
            "can_review": can_review,
            "review_form": review_form or (forms.ReviewForm() if can_review else None),
            "cancel_form": forms.CancelVisitForm(),
        },
    )


@within_reach(*ANY_ROLE)
@require_GET
def reading_detail(request: HttpRequest, pk: int) -> HttpResponse:
    """One reading set with its whole table of readings against their aims: where a visit
    page of many units links an all-in-range table instead of carrying it."""
    reading = get_object_or_404(
        ReadingSet.objects.visible_to(request.user).select_related(
            "diagnosis",
            "created_by",
            "visit_unit__visit__site__customer",
            "visit_unit__unit__refrigerant",
        ),
        pk=pk,
    )
    diagnosis = diagnosis_of(reading)
    unit = reading.visit_unit.unit
    return page(
        request,
        "fleet/reading_detail.html",
        {
            "reading": reading,
            "visit": reading.visit_unit.visit,
            "unit": unit,
            "diagnosis": diagnosis,
            "cautions": cautions_of([diagnosis]) if diagnosis else [],
            "flammable": [unit.refrigerant.designation] if unit.refrigerant.flammable else [],
        },
    )
