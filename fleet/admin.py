"""Data upkeep for the office: search, filters and inlines over the fleet records.

Customers, sites, units, parts, visits, reading sets and refrigerant events are saved and
deleted here (inlines and the bulk action too) through ``fleet.services``, as on the pages
and the API: each change leaves its audit entry and computes again what rests on it (a
diagnosis, leak rates, the unit's flags), and a record the refrigerant rules keep is not
deleted (``services.why_kept``).
"""

from __future__ import annotations

import copy
from collections.abc import Callable, Sequence
from typing import Any

from django.contrib import admin
from django.contrib.auth.models import User
from django.core.exceptions import PermissionDenied
from django.db.models import Field as ModelField
from django.db.models import Model, QuerySet
from django.forms import BaseFormSet, ModelForm
from django.forms import Field as FormField
from django.http import HttpRequest

from diagnostics.models import Diagnosis, Flag, LeakRate
from diagnostics.services import implausible_fields

from . import models, services
from .display import SYSTEMS
from .forms import ReceiverSelect

#: Results computed from a record: read-only in their own admin, deleted with the record.
COMPUTED_FROM_RECORDS = (Diagnosis, LeakRate, Flag)


def acting(request: HttpRequest) -> User:
    """The staff user an admin change is recorded for (the admin signs everyone in first)."""
    if not isinstance(request.user, User):
        raise PermissionDenied
    return request.user


class ResultsGoWithTheirRecord(admin.ModelAdmin):
    """A record's computed results (no one may delete them by themselves) do not stop its
    own deletion: they go with it."""

    def get_deleted_objects(
        self, objs: Sequence[Model] | QuerySet[Model], request: HttpRequest
    ) -> tuple[list[Any], dict[str, int], set[str], list[Any]]:
        to_delete, counts, perms_needed, protected = super().get_deleted_objects(objs, request)
        computed = {str(model._meta.verbose_name) for model in COMPUTED_FROM_RECORDS}
        return to_delete, counts, perms_needed - computed, protected


class DeletesThroughServices(ResultsGoWithTheirRecord):
    """Deletion, one record or a selection, by ``services.delete_record``: a trail entry
    for each, what rested on it computed again, all in one transaction. A record the rules
    keep is listed with the reason on the confirmation page, which then deletes nothing."""

    def get_deleted_objects(
        self, objs: Sequence[Model] | QuerySet[Model], request: HttpRequest
    ) -> tuple[list[Any], dict[str, int], set[str], list[Any]]:
        to_delete, counts, perms_needed, protected = super().get_deleted_objects(objs, request)
        kept = [reason for obj in objs if (reason := services.why_kept(obj)) is not None]
        return to_delete, counts, perms_needed, [*protected, *kept]

    def delete_model(self, request: HttpRequest, obj: Model) -> None:
        services.delete_record(obj, by=acting(request))

    def delete_queryset(self, request: HttpRequest, queryset: QuerySet[Model]) -> None:
        services.delete_records(queryset, by=acting(request))


def _saving(record: Model) -> Callable[[], Model]:
    def save() -> Model:
        record.save()
        return record

    return save


class SavedWithTrail(DeletesThroughServices):
    """Saved by ``services.save_with_trail``, the record with its relations and inlines in
    one step, so the trail sees every change; each inline row is recorded the same way."""

    #: Whether inline rows get entries of their own (a visit's units are in the visit's).
    inline_rows_recorded = True

    def save_model(self, request: HttpRequest, obj: Model, form: Any, change: bool) -> None:
        """Saved in ``save_related``, together with its relations."""

    def save_related(
        self, request: HttpRequest, form: ModelForm, formsets: list[BaseFormSet], change: bool
    ) -> None:
        record: Model = form.instance

        def save() -> Model:
            record.save()
            super(SavedWithTrail, self).save_related(request, form, formsets, change)
            return record

        note = "changed in the admin" if change else "added in the admin"
        services.save_with_trail(
            record, save, by=acting(request), note=note, changed=form.changed_data
        )

    def save_formset(
        self, request: HttpRequest, form: ModelForm, formset: Any, change: bool
    ) -> None:
        if not self.inline_rows_recorded:
            super().save_formset(request, form, formset, change)
            return
        by = acting(request)
        formset.save(commit=False)
        services.delete_records(formset.deleted_objects, by=by)
        for row in formset.new_objects:
            services.save_with_trail(row, _saving(row), by=by, note="added in the admin")
        for row, fields in formset.changed_objects:
            services.save_with_trail(
                row, _saving(row), by=by, note="changed in the admin", changed=fields
            )
        formset.save_m2m()


class SiteInline(admin.TabularInline):
    model = models.Site
    extra = 0
    fields = ("name", "time_zone", "elevation_m", "design_ambient_c")
    show_change_link = True


@admin.register(models.Customer)
class CustomerAdmin(SavedWithTrail):
    list_display = ("name", "contact_name", "contact_email", "phone")
    search_fields = ("name", "contact_name", "contact_email")
    inlines = [SiteInline]


class UnitInline(admin.TabularInline):
    model = models.Unit
    extra = 0
    fields = ("tag", "application", "refrigerant", "full_charge_kg", "retired_on")
    show_change_link = True


@admin.register(models.Site)
class SiteAdmin(SavedWithTrail):
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
        *models.PART_FIELDS,
        "make",
        "model_number",
        "serial_number",
        "installed_on",
        "removed_on",
        "reason",
    )


@admin.register(models.Unit)
class UnitAdmin(SavedWithTrail):
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
    search_fields = (
        "tag",
        "description",
        "serial_number",
        "model_number",
        "compressor_serial",
        "site__name",
        "site__customer__name",
    )
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
            "Equipment",
            {"fields": models.UNIT_PLATE_FIELDS},
        ),
        (
            "Refrigerant circuit",
            {
                "fields": (
                    "refrigerant",
                    "full_charge_kg",
                    "full_charge_basis",
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
class ComponentAdmin(SavedWithTrail):
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
class VisitAdmin(SavedWithTrail):
    """A visit's status moves only along its life cycle, on the pages or the API."""

    list_display = ("reference", "site", "kind", "status", "window_start")
    list_filter = ("status", "kind", "site__customer")
    search_fields = ("reference", "site__name", "reported_problem", "work_summary")
    date_hierarchy = "window_start"
    list_select_related = ("site__customer",)
    filter_horizontal = ("technicians",)
    autocomplete_fields = ("site",)
    inlines = [VisitUnitInline]
    readonly_fields = ("status", "submitted_at", "reviewed_by", "reviewed_at")
    inline_rows_recorded = False


class VisitRecordAdmin(DeletesThroughServices):
    """Reading sets and refrigerant events, stored by the services the API stores them by."""

    def save_model(
        self,
        request: HttpRequest,
        obj: models.ReadingSet | models.RefrigerantEvent,
        form: Any,
        change: bool,
    ) -> None:
        services.save_record(obj, by=acting(request), changed=form.changed_data)


class ReadingSetForm(ModelForm):
    """Refuses, as the API does, readings no working system can produce
    (``implausible_fields``), each limit written in the SI the form is in."""

    def clean(self) -> dict[str, Any]:
        super().clean()
        cleaned: dict[str, Any] = self.cleaned_data
        if self.errors or cleaned.get("visit_unit") is None:
            return cleaned
        candidate = copy.copy(self.instance)
        for name, value in cleaned.items():
            setattr(candidate, name, value)
        for problem in implausible_fields(candidate):
            why = problem.why
            if problem.limit is not None and problem.quantity is not None:
                unit = SYSTEMS["si"][problem.quantity]
                why = why.replace("{limit}", f"{problem.limit:.1f} {unit}")
            self.add_error(problem.field if problem.field in self.fields else None, why)
        return cleaned


@admin.register(models.ReadingSet)
class ReadingSetAdmin(VisitRecordAdmin):
    form = ReadingSetForm
    list_display = ("taken_at", "visit_unit", "stage", "suction_kpa_gauge", "head_kpa_gauge")
    list_filter = ("stage",)
    search_fields = ("visit_unit__unit__tag", "visit_unit__visit__reference", "client_id")
    list_select_related = ("visit_unit__unit__site", "visit_unit__visit")
    raw_id_fields = ("visit_unit", "created_by")
    date_hierarchy = "taken_at"


@admin.register(models.RefrigerantEvent)
class RefrigerantEventAdmin(VisitRecordAdmin):
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


@admin.register(models.UnitDocument)
class UnitDocumentAdmin(admin.ModelAdmin):
    """Files kept with units, listed for finding; they are added on the unit's page and
    kept with its history, so none is deleted here."""

    list_display = ("unit", "kind", "title", "original_name", "size_bytes", "uploaded_at")
    list_filter = ("kind",)
    search_fields = ("unit__tag", "title", "original_name")
    list_select_related = ("unit__site",)
    readonly_fields = (
        "unit",
        "file",
        "original_name",
        "content_type",
        "size_bytes",
        "uploaded_by",
        "uploaded_at",
    )

    def has_add_permission(self, request: Any) -> bool:
        return False

    def has_delete_permission(self, request: Any, obj: Any = None) -> bool:
        return False
