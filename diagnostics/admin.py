"""Read-mostly admin over stored results; flags can be acknowledged here too."""

from django.contrib import admin

from . import models


@admin.register(models.Diagnosis)
class DiagnosisAdmin(admin.ModelAdmin):
    list_display = ("reading_set", "score", "algorithm_version", "computed_at")
    list_filter = ("algorithm_version",)
    search_fields = ("reading_set__visit_unit__unit__tag", "reading_set__client_id")
    list_select_related = ("reading_set",)
    raw_id_fields = ("reading_set",)
    readonly_fields = ("computed_at",)


@admin.register(models.LeakRate)
class LeakRateAdmin(admin.ModelAdmin):
    list_display = (
        "event",
        "annualizing_percent",
        "rolling_average_percent",
        "threshold_percent",
        "over_threshold",
    )
    list_filter = ("over_threshold", "in_scope", "method")
    list_select_related = ("event",)
    raw_id_fields = ("event",)


@admin.register(models.Flag)
class FlagAdmin(admin.ModelAdmin):
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
    raw_id_fields = ("unit", "acknowledged_by")
