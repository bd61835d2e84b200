"""Sites: the list within reach, a site's page (its units with health and flags, its open
visits, its monthly reports) and a stored report as it was sent."""

from __future__ import annotations

import datetime as dt
from dataclasses import dataclass
from typing import Any

from django.db.models import F, Func, IntegerField, OuterRef, Prefetch, QuerySet, Subquery
from django.db.models.functions import Coalesce
from django.http import FileResponse, HttpRequest, HttpResponse
from django.http.response import HttpResponseBase
from django.shortcuts import get_object_or_404
from django.urls import reverse
from django.views.decorators.http import require_GET

from diagnostics.models import Diagnosis, Flag
from fleet.choices import VisitStatus
from fleet.models import Site, Unit, Visit
from reports.data import Health
from reports.models import MonthlyReport
from reports.views import stored_html, stored_report

from .base import ANY_ROLE, page, within_reach
from .stored import diagnosis_condition


@dataclass(frozen=True)
class SiteUnit:
    """A unit as its site's page shows it: with its latest diagnosis and the condition
    judged from it and the unit's open flags (None: not checked yet)."""

    unit: Unit
    latest: Diagnosis | None
    condition: Health | None


def _latest_diagnosis(field_name: str) -> Subquery:
    latest = Diagnosis.objects.filter(reading_set__visit_unit__unit=OuterRef("pk")).order_by(
        "-reading_set__taken_at"
    )
    return Subquery(latest.values(field_name)[:1])


def _how_many(rows: QuerySet[Any]) -> Coalesce:
    """How many ``rows`` there are, as a subquery correlated to the outer query (0 for
    none): counts within reach stay one query."""
    counted = rows.order_by().annotate(n=Func(F("pk"), function="COUNT")).values("n")
    return Coalesce(Subquery(counted, output_field=IntegerField()), 0)


@within_reach(*ANY_ROLE)
@require_GET
def site_list(request: HttpRequest) -> HttpResponse:
    """The sites within reach, with how many of their units in service and open flags are
    within reach too."""
    units = Unit.objects.visible_to(request.user).filter(site=OuterRef("pk"))
    flags = Flag.objects.visible_to(request.user).filter(unit__site=OuterRef("pk"))
    sites = (
        Site.objects.visible_to(request.user)
        .select_related("customer")
        .annotate(
            unit_count=_how_many(units.filter(retired_on__isnull=True)),
            open_flags=_how_many(flags.filter(cleared_at__isnull=True)),
        )
        .order_by("customer__name", "name")
    )
    return page(request, "fleet/site_list.html", {"sites": list(sites)})


def _reports_for(request: HttpRequest, site: Site) -> list[dict[str, Any]]:
    """The site's monthly reports within reach (the latest version of each month), newest
    first, in one query, each linked to its stored copy."""
    latest: dict[dt.date, MonthlyReport] = {}
    for report in (
        MonthlyReport.objects.visible_to(request.user)
        .filter(site=site)
        .only("id", "site_id", "month", "version", "generated_at", "page_count")
        .order_by("-month", "-version")
    ):
        latest.setdefault(report.month, report)
    out = []
    for month, report in latest.items():
        key = f"{month:%Y-%m}"
        url = reverse("fleet:site-report", args=[site.pk, key])
        out.append(
            {
                "label": f"{month:%B %Y}",
                "url": url,
                "pdf_url": f"{url}?format=pdf",
                "version": report.version,
                "generated_at": report.generated_at,
            }
        )
    return out


@within_reach(*ANY_ROLE)
@require_GET
def site_report(request: HttpRequest, pk: int, month: str) -> HttpResponseBase:
    """The stored monthly report of a site as generated (HTML, or the PDF with
    ?format=pdf, shown in the browser): what the manager was sent, not a fresh computation.
    Found as the reports' own pages find it (``reports.views.stored_report``)."""
    report = stored_report(request, pk, month)
    if request.GET.get("format") == "pdf":
        return FileResponse(
            report.pdf.open("rb"), content_type="application/pdf", filename=report.filename
        )
    return stored_html(report)


@within_reach(*ANY_ROLE)
@require_GET
def site_detail(request: HttpRequest, pk: int) -> HttpResponse:
    """A site: its units within reach with health and flags at a glance, open visits, its
    reports."""
    site = get_object_or_404(
        Site.objects.visible_to(request.user).select_related("customer"), pk=pk
    )
    open_flags = Flag.objects.filter(cleared_at__isnull=True).order_by("-opened_at")
    units = list(
        Unit.objects.visible_to(request.user)
        .filter(site=site, retired_on__isnull=True)
        .select_related("refrigerant")
        .annotate(
            latest_score=_latest_diagnosis("score"),
            latest_document=_latest_diagnosis("document"),
            latest_at=_latest_diagnosis("reading_set__taken_at"),
        )
        .prefetch_related(Prefetch("flags", queryset=open_flags, to_attr="open_flags"))
        .order_by("tag")
    )
    # The latest diagnosis of each unit, rebuilt from the annotations (no query per unit):
    # its details are judged with the unit's open flags, as the monthly report judges them.
    latest = [
        Diagnosis(score=u.latest_score, document=u.latest_document)
        if u.latest_at is not None
        else None
        for u in units
    ]
    Diagnosis.attach_details(d for d in latest if d is not None)
    shown = [
        SiteUnit(
            u,
            d,
            diagnosis_condition(d, u.open_flags, u.application) if d is not None else None,
        )
        for u, d in zip(units, latest, strict=True)
    ]
    upcoming = list(
        Visit.objects.visible_to(request.user)
        .filter(
            site=site,
            status__in=[VisitStatus.SCHEDULED, VisitStatus.IN_PROGRESS, VisitStatus.SUBMITTED],
        )
        .prefetch_related("technicians")
        .order_by("window_start")[:12]
    )
    return page(
        request,
        "fleet/site_detail.html",
        {
            "site": site,
            "units": shown,
            "flag_total": sum(len(u.open_flags) for u in units),
            "upcoming": upcoming,
            "reports": _reports_for(request, site),
            "flammable": sorted(
                {u.refrigerant.designation for u in units if u.refrigerant.flammable}
            ),
        },
    )
