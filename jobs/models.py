"""Claims that make scheduled work happen once, however many schedulers and workers run.

A scheduled job is enqueued in the same transaction that inserts its claim row; the unique
constraint on the claim is what decides, so a second scheduler (or the same one a minute
later) inserts nothing and enqueues nothing. A worker then takes the claim with one
conditional UPDATE before doing the work, so a job enqueued twice still does it once.
"""

from __future__ import annotations

from django.db import models

from fleet.models import Site
from reports.models import MonthlyReport


class ReportRun(models.Model):
    """The scheduled monthly report of one site-month: at most one, ever."""

    site = models.ForeignKey(Site, on_delete=models.CASCADE, related_name="report_runs")
    month = models.DateField(help_text="The first day of the month reported on.")
    enqueued_at = models.DateTimeField()
    started_at = models.DateTimeField(
        null=True, blank=True, help_text="When a worker took it; empty while it waits."
    )
    report = models.OneToOneField(
        MonthlyReport, null=True, blank=True, on_delete=models.SET_NULL, related_name="+"
    )
    emailed_at = models.DateTimeField(null=True, blank=True)

    class Meta:
        ordering = ["-month", "site"]
        constraints = [
            models.UniqueConstraint(fields=["site", "month"], name="reportrun_one_per_site_month")
        ]

    def __str__(self) -> str:
        return f"scheduled report of site {self.site_id} for {self.month:%Y-%m}"


class DailyRun(models.Model):
    """A once-a-day job (the flag refresh, the alert digest) claimed for its day."""

    class Name(models.TextChoices):
        FLAG_REFRESH = "flag_refresh", "Nightly flag refresh"
        DIGEST = "digest", "Daily alert digest"

    name = models.CharField(max_length=20, choices=Name.choices)
    day = models.DateField()
    enqueued_at = models.DateTimeField()
    finished_at = models.DateTimeField(null=True, blank=True)

    class Meta:
        ordering = ["-day", "name"]
        constraints = [
            models.UniqueConstraint(fields=["name", "day"], name="dailyrun_one_per_name_day")
        ]

    def __str__(self) -> str:
        return f"{self.get_name_display()} {self.day}"
