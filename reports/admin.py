"""Stored reports in the admin: read-only and never deleted, since a stored version never
changes and is what the customer was sent."""

from __future__ import annotations

from django.contrib import admin
from django.db.models import QuerySet
from django.http import HttpRequest

from .models import MonthlyReport


@admin.register(MonthlyReport)
class MonthlyReportAdmin(admin.ModelAdmin):
    list_display = ("site", "month", "version", "generated_at", "page_count", "algorithm_version")
    list_filter = ("month",)
    list_select_related = ("site__customer",)
    search_fields = ("site__name", "site__customer__name", "checksum_sha256")
    date_hierarchy = "month"
    exclude = ("html",)
    readonly_fields = (
        "site",
        "month",
        "version",
        "generated_at",
        "algorithm_version",
        "layout_version",
        "display_units",
        "checksum_sha256",
        "pdf",
        "page_count",
        "unit_count",
    )

    def get_queryset(self, request: HttpRequest) -> QuerySet[MonthlyReport]:
        return super().get_queryset(request).defer("html")

    def has_add_permission(self, request: HttpRequest) -> bool:
        return False

    def has_change_permission(self, request: HttpRequest, obj: MonthlyReport | None = None) -> bool:
        return False

    def has_delete_permission(self, request: HttpRequest, obj: MonthlyReport | None = None) -> bool:
        """A stored version is what the customer was sent; it is kept."""
        return False
