"""Stored results in the admin, to read only: each is computed from the records (a reading
set's diagnosis, an addition's leak rate, a unit's flags), so it changes only when they do,
through ``fleet.services``; a flag is acknowledged on the office pages."""

from __future__ import annotations

from django.contrib import admin
from django.db.models import Model
from django.http import HttpRequest

from . import models


class ComputedResultAdmin(admin.ModelAdmin):
    """Viewing only: an edit would contradict the records it was computed from, and a
    deletion would lose a result the reports and the leak-rate records rest on."""

    def has_add_permission(self, request: HttpRequest) -> bool:
        return False

    def has_change_permission(self, request: HttpRequest, obj: Model | None = None) -> bool:
        return False

    def has_delete_permission(self, request: HttpRequest, obj: Model | None = None) -> bool:
        return False


@admin.register(models.Diagnosis)
class DiagnosisAdmin(ComputedResultAdmin):
    list_display = ("reading_set", "score", "algorithm_version", "computed_at")
    list_filter = ("algorithm_version",)
    search_fields = ("reading_set__visit_unit__unit__tag", "reading_set__client_id")
    list_select_related = ("reading_set",)


@admin.register(models.LeakRate)
class LeakRateAdmin(ComputedResultAdmin):
    list_display = (
        "event",
        "annualizing_percent",
        "rolling_average_percent",
        "threshold_percent",
        "over_threshold",
    )
    list_filter = ("over_threshold", "in_scope", "method")
    list_select_related = ("event",)


@admin.register(models.Flag)
class FlagAdmin(ComputedResultAdmin):
    list_display = (
        "unit",
        "kind",
        "severity",
        "projected_on",
        "opened_at",
        "cleared_at",
        "acknowledged_at",
    )
    list_filter = ("kind", "severity", ("cleared_at", admin.EmptyFieldListFilter))
    search_fields = ("unit__tag", "summary")
    list_select_related = ("unit__site",)
