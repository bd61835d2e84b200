"""Data upkeep for the office: search, filters and inlines over the fleet records."""

from __future__ import annotations

from typing import Any

from django.contrib import admin
from django.db.models import Field as ModelField
from django.forms import Field as FormField
from django.http import HttpRequest

from . import models
from .forms import ReceiverSelect


class SiteInline(admin.TabularInline):
    model = models.Site
    extra = 0
    fields = ("name", "time_zone", "elevation_m", "design_ambient_c")
    show_change_link = True


@admin.register(models.Customer)
class CustomerAdmin(admin.ModelAdmin):
    list_display = ("name", "contact_name", "contact_email", "phone")
    search_fields = ("name", "contact_name", "contact_email")
    inlines = [SiteInline]


class UnitInline(admin.TabularInline):
    model = models.Unit
    extra = 0
    fields = ("tag", "application", "refrigerant", "full_charge_kg", "retired_on")
    show_change_link = True


@admin.register(models.Site)
class SiteAdmin(admin.ModelAdmin):
    list_display = ("name", "customer", "elevation_m", "design_ambient_c", "time_zone")
    list_filter = ("customer", "time_zone")
    search_fields = ("name", "address", "customer__name")
    list_select_related = ("customer",)
    ordering = ("customer__name", "name")
    filter_horizontal = ("managers",)
    inlines = [UnitInline]


@admin.register(models.Refrigerant)
class RefrigerantAdmin(admin.ModelAdmin):
    list_display = ("designation", "kind", "safety_class", "gwp")
    list_filter = ("kind", "safety_class")
    search_fields = ("designation",)


class ComponentInline(admin.TabularInline):
    model = models.Component
    fk_name = "unit"
    extra = 0
    fields = (
        "kind",
        "rated_uf",
        "tolerance_pct",
        "rating_uf_min",
        "rating_uf_max",
        "rating_volts",
        "installed_on",
        "removed_on",
        "reason",
    )


@admin.register(models.Unit)
class UnitAdmin(admin.ModelAdmin):
    list_display = (
        "tag",
        "site",
        "application",
        "refrigerant",
        "full_charge_kg",
        "metering_device",
        "retired_on",
    )
    list_filter = (
        "application",
        "refrigerant",
        "metering_device",
        "condenser_type",
        "site__customer",
    )
    search_fields = ("tag", "description", "site__name", "site__customer__name")
    list_select_related = ("site__customer", "refrigerant")
    ordering = ("site__customer__name", "site__name", "tag")
    autocomplete_fields = ("site",)
    inlines = [ComponentInline]
    fieldsets = (
        (
            None,
            {
                "fields": (
                    "site",
                    "tag",
                    "description",
                    "application",
                    "appliance_type",
                    "installed_on",
                    "retired_on",
                    "pm_interval_days",
                )
            },
        ),
        (
            "Refrigerant circuit",
            {
                "fields": (
                    "refrigerant",
                    "full_charge_kg",
                    "metering_device",
                    "condenser_type",
                    "has_receiver",
                )
            },
        ),
        (
            "Design",
            {
                "fields": (
                    "design_box_temp_c",
                    "design_evap_td_k",
                    "design_condenser_split_k",
                    "design_temperature_basis",
                    "superheat_min_k",
                    "superheat_max_k",
                )
            },
        ),
        (
            "Head pressure",
            {
                "fields": (
                    "head_pressure_control",
                    "head_pressure_setpoint_c",
                    "high_pressure_cutout_kpa_gauge",
                )
            },
        ),
        (
            "Electrical nameplate",
            {
                "fields": (
                    "nameplate_volts",
                    "nameplate_volts_max",
                    "phase",
                    "hertz",
                    "rla_a",
                    "lra_a",
                )
            },
        ),
    )

    def formfield_for_dbfield(
        self, db_field: ModelField[Any, Any], request: HttpRequest, **kwargs: Any
    ) -> FormField | None:
        if db_field.name == "has_receiver":
            kwargs["widget"] = ReceiverSelect()
        return super().formfield_for_dbfield(db_field, request, **kwargs)


@admin.register(models.Component)
class ComponentAdmin(admin.ModelAdmin):
    list_display = ("kind", "unit", "installed_on", "removed_on", "reason")
    list_filter = ("kind",)
    search_fields = ("unit__tag", "reason")
    list_select_related = ("unit__site",)
    ordering = (
        "unit__site__customer__name",
        "unit__site__name",
        "unit__tag",
        "kind",
        "-installed_on",
    )
    raw_id_fields = ("unit", "changed_on_visit")


class VisitUnitInline(admin.TabularInline):
    model = models.VisitUnit
    extra = 0
    raw_id_fields = ("unit",)


@admin.register(models.Visit)
class VisitAdmin(admin.ModelAdmin):
    list_display = ("reference", "site", "kind", "status", "window_start")
    list_filter = ("status", "kind", "site__customer")
    search_fields = ("reference", "site__name", "reported_problem", "work_summary")
    date_hierarchy = "window_start"
    list_select_related = ("site__customer",)
    filter_horizontal = ("technicians",)
    autocomplete_fields = ("site",)
    inlines = [VisitUnitInline]


@admin.register(models.ReadingSet)
class ReadingSetAdmin(admin.ModelAdmin):
    list_display = ("taken_at", "visit_unit", "stage", "suction_kpa_gauge", "head_kpa_gauge")
    list_filter = ("stage",)
    search_fields = ("visit_unit__unit__tag", "visit_unit__visit__reference", "client_id")
    list_select_related = ("visit_unit__unit__site", "visit_unit__visit")
    raw_id_fields = ("visit_unit", "created_by")
    date_hierarchy = "taken_at"


@admin.register(models.RefrigerantEvent)
class RefrigerantEventAdmin(admin.ModelAdmin):
    list_display = ("occurred_on", "kind", "amount_kg", "visit_unit")
    list_filter = ("kind", "leak_rate_exemption")
    search_fields = ("visit_unit__unit__tag", "visit_unit__visit__reference", "client_id")
    list_select_related = ("visit_unit__unit__site", "visit_unit__visit")
    raw_id_fields = ("visit_unit", "created_by")
    date_hierarchy = "occurred_on"


@admin.register(models.AuditEntry)
class AuditEntryAdmin(admin.ModelAdmin):
    """The trail is evidence: readable here, never edited."""

    list_display = ("at", "actor", "action", "record_type", "record_id", "visit_id")
    list_filter = ("action", "record_type")
    search_fields = ("actor__username", "note")
    list_select_related = ("actor", "record_type")
    readonly_fields = (
        "at",
        "actor",
        "action",
        "record_type",
        "record_id",
        "visit_id",
        "changes",
        "note",
    )

    def has_add_permission(self, request: HttpRequest) -> bool:
        return False

    def has_change_permission(
        self, request: HttpRequest, obj: models.AuditEntry | None = None
    ) -> bool:
        return False

    def has_delete_permission(
        self, request: HttpRequest, obj: models.AuditEntry | None = None
    ) -> bool:
        return False
