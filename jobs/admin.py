"""The claims of scheduled work, read-only: the scheduler and the worker write them."""

from __future__ import annotations

from django.contrib import admin
from django.http import HttpRequest

from .models import DailyRun, ReportRun


class ReadOnly(admin.ModelAdmin):
    """Listed and viewed, never added or edited by hand."""

    def has_add_permission(self, request: HttpRequest) -> bool:
        return False

    def has_change_permission(self, request: HttpRequest, obj: object = None) -> bool:
        return False


@admin.register(ReportRun)
class ReportRunAdmin(ReadOnly):
    list_display = ("site", "month", "enqueued_at", "started_at", "report", "emailed_at")
    list_select_related = ("site", "report__site")


@admin.register(DailyRun)
class DailyRunAdmin(ReadOnly):
    list_display = ("name", "day", "enqueued_at", "finished_at")
