"""Alerts in the admin: what was alerted and delivered (read-only), and people's choices."""

from __future__ import annotations

from django.contrib import admin

from jobs.admin import ReadOnly

from .models import AlertChoice, AlertDelivery, AlertEvent


@admin.register(AlertEvent)
class AlertEventAdmin(ReadOnly):
    list_display = ("title", "kind", "happened_at", "webhook_sent_at")
    list_filter = ("kind",)


@admin.register(AlertDelivery)
class AlertDeliveryAdmin(ReadOnly):
    list_display = ("event", "user", "way", "day", "sent_at")
    list_select_related = ("event", "user")


@admin.register(AlertChoice)
class AlertChoiceAdmin(admin.ModelAdmin):
    list_display = ("user", "urgent_fault", "flag_opened", "leak_deadline")
    list_select_related = ("user",)
