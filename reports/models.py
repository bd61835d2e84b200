"""Generated reports, stored as rows: each regeneration of a site-month is a new version.

A stored report keeps what it showed (the HTML and the PDF, with the PDF's checksum) and what
it was computed with (the diagnosis algorithm version and the report layout version), so an
old report reads the same after the code changes.
"""

from __future__ import annotations

from django.core.exceptions import ValidationError
from django.db import models
from django.db.models import Q, QuerySet

from fleet import reach as scope
from fleet.models import Site

from .months import Month


def report_pdf_path(report: MonthlyReport, filename: str) -> str:
    """reports/<site id>/<YYYY-MM>/v<version>-<checksum prefix>.pdf under MEDIA_ROOT."""
    return (
        f"reports/{report.site_id}/{report.month:%Y-%m}/"
        f"v{report.version}-{report.checksum_sha256[:12]}.pdf"
    )


class MonthlyReportQuerySet(scope.VisibleQuerySet["MonthlyReport"]):
    """Stored reports, scoped to a user's reach (``visible_to``)."""

    def sites_visible_to(self, user: object) -> QuerySet[Site]:
        """The sites whose reports are within ``user``'s reach, by the rule of
        ``visible_to`` (``fleet.reach.report_sites``), a site without a report yet
        included."""
        condition = scope.report_sites(scope.roles_of(user), user)
        return Site.objects.none() if condition is None else Site.objects.filter(condition)


class MonthlyReport(models.Model):
    """One generated version of a site's monthly health report."""

    site = models.ForeignKey(Site, on_delete=models.PROTECT, related_name="monthly_reports")
    month = models.DateField(help_text="The first day of the month reported on.")
    version = models.PositiveIntegerField()
    generated_at = models.DateTimeField()
    algorithm_version = models.CharField(
        max_length=100, blank=True, help_text="Diagnosis algorithm version(s) behind the numbers."
    )
    layout_version = models.CharField(max_length=20)
    display_units = models.CharField(max_length=10, help_text="'us' or 'si'.")
    checksum_sha256 = models.CharField(max_length=64, help_text="SHA-256 of the PDF file.")
    pdf = models.FileField(upload_to=report_pdf_path, max_length=200)
    html = models.TextField()
    page_count = models.PositiveIntegerField()
    unit_count = models.PositiveIntegerField()

    #: Who may see it: the office, and the managers granted its site.
    reach = scope.Through(scope.report_sites, "site__")
    objects = MonthlyReportQuerySet.as_manager()

    class Meta:
        ordering = ["site", "-month", "-version"]
        constraints = [
            models.UniqueConstraint(
                fields=["site", "month", "version"], name="monthlyreport_one_row_per_version"
            ),
            models.CheckConstraint(
                condition=Q(version__gte=1), name="monthlyreport_version_from_1"
            ),
        ]

    def __str__(self) -> str:
        return f"{self.site.name} {self.month:%Y-%m} v{self.version}"

    def clean(self) -> None:
        if self.month and self.month.day != 1:
            raise ValidationError({"month": "must be the first day of the month"})

    @property
    def month_key(self) -> Month:
        return Month.of(self.month)

    @property
    def filename(self) -> str:
        """The name a downloaded PDF is saved under."""
        return f"health-report-site{self.site_id}-{self.month:%Y-%m}-v{self.version}.pdf"
