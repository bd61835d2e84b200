"""A technician's time at a site and the units it covers; the visit's readings and
refrigerant events hang off its units (``readings``)."""

from __future__ import annotations

from django.conf import settings
from django.core.exceptions import ValidationError
from django.db import models
from django.db.models import Q

from .. import choices
from .. import reach as scope
from ..validation import visit_window_problems
from .sites import Site
from .units import Unit


class Visit(models.Model):
    """A technician's time at a site: planned maintenance, a call, or a follow-up."""

    reference = models.CharField(max_length=30, unique=True, help_text="Our visit number.")
    site = models.ForeignKey(Site, on_delete=models.PROTECT, related_name="visits")
    units: models.ManyToManyField[Unit, VisitUnit] = models.ManyToManyField(
        Unit, through="VisitUnit", related_name="visits"
    )
    kind = models.CharField(max_length=20, choices=choices.VisitKind.choices)
    status = models.CharField(
        max_length=20, choices=choices.VisitStatus.choices, default=choices.VisitStatus.SCHEDULED
    )
    window_start = models.DateTimeField()
    window_end = models.DateTimeField()
    technicians = models.ManyToManyField(
        settings.AUTH_USER_MODEL, blank=True, related_name="assigned_visits"
    )
    reported_problem = models.TextField(blank=True)
    work_summary = models.TextField(blank=True)
    review_note = models.TextField(blank=True)
    reviewed_by = models.ForeignKey(
        settings.AUTH_USER_MODEL, null=True, blank=True, on_delete=models.PROTECT, related_name="+"
    )
    reviewed_at = models.DateTimeField(null=True, blank=True)
    submitted_at = models.DateTimeField(null=True, blank=True)
    created_at = models.DateTimeField(auto_now_add=True)
    updated_at = models.DateTimeField(auto_now=True)

    #: Who may see it: by role (``fleet.reach.visits``).
    reach = scope.Through(scope.visits)
    objects = scope.VisibleManager()

    class Meta:
        ordering = ["-window_start"]
        indexes = [models.Index(fields=["status", "window_start"])]
        constraints = [
            models.CheckConstraint(
                condition=Q(status__in=choices.VisitStatus.values), name="visit_status_valid"
            ),
            models.CheckConstraint(
                condition=Q(kind__in=choices.VisitKind.values), name="visit_kind_valid"
            ),
            models.CheckConstraint(
                condition=Q(window_end__gt=models.F("window_start")), name="visit_window_ordered"
            ),
            models.CheckConstraint(
                condition=~Q(status=choices.VisitStatus.REVIEWED)
                | Q(reviewed_by__isnull=False, reviewed_at__isnull=False),
                name="visit_reviewed_has_reviewer",
            ),
        ]

    def __str__(self) -> str:
        return f"{self.reference} {self.get_kind_display()} at {self.site.name}"

    def clean(self) -> None:
        if self.window_start and self.window_end:
            problems = visit_window_problems(self.window_start, self.window_end)
            if problems:
                raise ValidationError(problems)


class VisitUnit(models.Model):
    """A unit covered by a visit. Readings and refrigerant events hang off this row, so the
    database itself refuses a reading for a unit that is not on its visit."""

    visit = models.ForeignKey(Visit, on_delete=models.CASCADE, related_name="visit_units")
    unit = models.ForeignKey(Unit, on_delete=models.PROTECT, related_name="visit_units")
    #: Why the unit has no readings, said when the visit was submitted without any.
    not_read_reason = models.CharField(
        max_length=20, choices=choices.NotReadReason.choices, blank=True, default=""
    )
    not_read_note = models.TextField(blank=True, default="")

    #: Who may see it: whoever sees its visit.
    reach = scope.Through(scope.visits, "visit__")
    objects = scope.VisibleManager()

    class Meta:
        constraints = [models.UniqueConstraint(fields=["visit", "unit"], name="visitunit_unique")]

    def __str__(self) -> str:
        return f"{self.unit.tag} on {self.visit.reference}"
