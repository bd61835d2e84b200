"""API: the stored reports of a site, and the PDF of a site-month.

Both views read within the caller's reach (``MonthlyReport.objects.visible_to``, the rule
of ``fleet.reach``: office all sites, managers their granted sites), so a site outside it is
404 whatever the month or version asked.
"""

from __future__ import annotations

from django.db.models import QuerySet
from django.http import FileResponse, Http404, QueryDict
from django.shortcuts import get_object_or_404
from drf_spectacular.types import OpenApiTypes
from drf_spectacular.utils import (
    OpenApiParameter,
    OpenApiResponse,
    extend_schema,
    extend_schema_view,
)
from rest_framework import generics
from rest_framework.exceptions import ValidationError
from rest_framework.renderers import BaseRenderer, JSONRenderer
from rest_framework.request import Request
from rest_framework.views import APIView

from reports.models import MonthlyReport
from reports.months import Month

from .serializers import MonthlyReportSerializer

SITE_ID = OpenApiParameter("site_id", int, OpenApiParameter.PATH, description="The site's id.")
MONTH = OpenApiParameter(
    "month", str, OpenApiParameter.PATH, description="The month, YYYY-MM.", pattern=r"^\d{4}-\d{2}$"
)
VERSION = OpenApiParameter(
    "version",
    int,
    OpenApiParameter.QUERY,
    required=False,
    description="A stored version of the month; the latest when left out.",
)


def requested_version(params: QueryDict) -> int | None:
    raw = params.get("version")
    if raw is None or raw == "":
        return None
    try:
        version = int(raw)
    except (TypeError, ValueError):
        version = 0
    if version < 1:
        raise ValidationError({"version": ["must be a whole number from 1"]})
    return version


@extend_schema_view(
    get=extend_schema(parameters=[SITE_ID], tags=["reports"], operation_id="site_reports_list")
)
class SiteReportList(generics.ListAPIView):
    """Stored monthly reports of one site, newest month and version first."""

    serializer_class = MonthlyReportSerializer
    queryset = MonthlyReport.objects.none()

    def get_queryset(self) -> QuerySet[MonthlyReport]:
        sites = MonthlyReport.objects.sites_visible_to(self.request.user)
        site = get_object_or_404(sites, pk=self.kwargs["site_id"])
        return MonthlyReport.objects.filter(site=site).defer("html").order_by("-month", "-version")


class SiteReportPdf(APIView):
    """The PDF of a site-month: the latest version, or ``?version=``."""

    def perform_content_negotiation(
        self, request: Request, force: bool = False
    ) -> tuple[BaseRenderer, str]:
        # The PDF itself bypasses the renderers; errors are JSON whatever was asked for,
        # so an ``Accept: application/pdf`` never turns into a 406.
        renderer = JSONRenderer()
        return renderer, renderer.media_type

    @extend_schema(
        parameters=[SITE_ID, MONTH, VERSION],
        responses={
            (200, "application/pdf"): OpenApiResponse(OpenApiTypes.BINARY, description="The PDF."),
            400: OpenApiResponse(description="A malformed version number."),
            404: OpenApiResponse(description="No such report within your reach."),
        },
        tags=["reports"],
        operation_id="site_report_pdf",
    )
    def get(self, request: Request, site_id: int, month: str) -> FileResponse:
        try:
            first_day = Month.parse(month).first_day
        except ValueError as exc:
            raise Http404("no such month") from exc
        version = requested_version(request.query_params)
        reports = (
            MonthlyReport.objects.visible_to(request.user)
            .filter(site_id=site_id, month=first_day)
            .defer("html")
        )
        if version is not None:
            reports = reports.filter(version=version)
        report = reports.order_by("-version").first()
        if report is None:
            raise Http404("no such report")
        response = FileResponse(
            report.pdf.open("rb"), content_type="application/pdf", filename=report.filename
        )
        response["X-Report-Version"] = str(report.version)
        response["X-Report-Sha256"] = report.checksum_sha256
        return response
