"""The stored monthly reports as the API lists them."""

from __future__ import annotations

from django.urls import reverse
from drf_spectacular.utils import extend_schema_field
from rest_framework import serializers

from fleet.api.serializers_.fields import RecordSerializer
from reports.models import MonthlyReport


class ReportLinksSerializer(serializers.Serializer):
    pdf = serializers.URLField(help_text="This version's PDF.")
    latest_pdf = serializers.URLField(help_text="The latest version of this month's PDF.")
    html = serializers.URLField(help_text="This version on the office pages (sign-in needed).")


class MonthlyReportSerializer(RecordSerializer):
    month = serializers.SerializerMethodField(help_text="The month reported on, YYYY-MM.")
    links = serializers.SerializerMethodField()

    class Meta:
        model = MonthlyReport
        fields = [
            "id",
            "site",
            "month",
            "version",
            "generated_at",
            "algorithm_version",
            "layout_version",
            "display_units",
            "checksum_sha256",
            "page_count",
            "unit_count",
            "links",
        ]
        read_only_fields = fields

    def get_month(self, report: MonthlyReport) -> str:
        return f"{report.month:%Y-%m}"

    @extend_schema_field(ReportLinksSerializer)
    def get_links(self, report: MonthlyReport) -> dict[str, str]:
        request = self.context["request"]
        month = f"{report.month:%Y-%m}"
        # Relative to the list endpoint itself, so the links hold whatever prefix the API
        # is mounted under.
        base = request.build_absolute_uri(request.path)
        html = reverse("reports:report-page", kwargs={"site_id": report.site_id, "month": month})
        return {
            "pdf": f"{base}{month}.pdf?version={report.version}",
            "latest_pdf": f"{base}{month}.pdf",
            "html": request.build_absolute_uri(f"{html}?version={report.version}"),
        }
