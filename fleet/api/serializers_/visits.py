"""Visits, their audit trail, and the bodies of their life-cycle actions."""

from __future__ import annotations

from typing import Any

from django.contrib.auth.models import User
from django.db.models import Q
from rest_framework import serializers

from fleet import choices
from fleet.models import AuditEntry, Unit, Visit, VisitUnit
from fleet.validation import MAX_RECORD_ID

from .base import RefusesUnknownFields, ValidatedModelSerializer
from .fields import FreeTextField, RecordIdField, RecordSerializer, check_in_service_era


class VisitSerializer(ValidatedModelSerializer):
    technicians = RecordIdField(
        many=True,
        required=False,
        queryset=User.objects.filter(groups__name=choices.Role.TECHNICIAN),
        help_text="User ids of the technicians assigned (role technician).",
    )
    units = RecordIdField(
        many=True,
        required=False,
        queryset=Unit.objects.all(),
        help_text="Unit ids covered by the visit; all at the visit's site.",
    )

    class Meta:
        model = Visit
        fields = [
            "id",
            "reference",
            "site",
            "kind",
            "status",
            "window_start",
            "window_end",
            "technicians",
            "units",
            "reported_problem",
            "work_summary",
            "review_note",
            "reviewed_by",
            "reviewed_at",
            "submitted_at",
            "created_at",
            "updated_at",
        ]
        read_only_fields = [
            "status",
            "review_note",
            "reviewed_by",
            "reviewed_at",
            "submitted_at",
            "created_at",
            "updated_at",
        ]
        extra_kwargs = {
            "window_start": {"validators": [check_in_service_era]},
            "window_end": {"validators": [check_in_service_era]},
        }

    def validate(self, attrs: dict[str, Any]) -> dict[str, Any]:
        site = attrs.get("site") or (self.instance.site if self.instance else None)
        units = attrs.get("units")
        if units is None and self.instance is not None and "site" in attrs:
            units = list(self.instance.units.all())
        if units is not None and site is not None:
            elsewhere = sorted(u.tag for u in units if u.site_id != site.pk)
            if elsewhere:
                raise serializers.ValidationError(
                    {"units": [f"not at the visit's site: {', '.join(elsewhere)}"]}
                )
        if self.instance is not None and "units" in attrs:
            kept = {u.pk for u in attrs["units"]}
            tags = sorted(
                set(
                    VisitUnit.objects.filter(visit=self.instance)
                    .exclude(unit__in=kept)
                    .filter(Q(reading_sets__isnull=False) | Q(refrigerant_events__isnull=False))
                    .values_list("unit__tag", flat=True)
                )
            )
            if tags:
                raise serializers.ValidationError(
                    {
                        "units": [
                            f"have readings or refrigerant events on this visit: {', '.join(tags)}"
                        ]
                    }
                )
        return super().validate(attrs)


class AuditEntrySerializer(RecordSerializer):
    """One entry of a visit's trail; ``changes`` are the stored (SI) values."""

    actor: serializers.SlugRelatedField[User] = serializers.SlugRelatedField(
        slug_field="username", read_only=True, allow_null=True
    )
    record = serializers.CharField(source="record_type.model", read_only=True)

    class Meta:
        model = AuditEntry
        fields = ["id", "at", "actor", "action", "record", "record_id", "changes", "note"]
        read_only_fields = fields


class NotReadSerializer(RefusesUnknownFields, serializers.Serializer):
    noun = "unit not read"

    unit = serializers.IntegerField(
        min_value=1, max_value=MAX_RECORD_ID, help_text="The id of a unit on the visit."
    )
    reason = serializers.ChoiceField(choices=choices.NotReadReason.choices)
    note = FreeTextField(required=False, allow_blank=True, default="")


class SubmitSerializer(RefusesUnknownFields, serializers.Serializer):
    noun = "submission"

    work_summary = FreeTextField(
        required=False,
        allow_blank=True,
        help_text="What was done; replaces the stored summary. The visit is submitted only "
        "with a summary, sent now or stored before, that is not blank.",
    )
    units_not_read = NotReadSerializer(
        many=True,
        required=False,
        help_text="Each unit on the visit without a reading set, and why. Every unit needs "
        "readings or an entry here.",
    )


class ReviewSerializer(RefusesUnknownFields, serializers.Serializer):
    noun = "review"

    decision = serializers.ChoiceField(
        choices=[("accept", "Accept"), ("return", "Return to the technician")]
    )
    note = FreeTextField(
        required=False, allow_blank=True, help_text="Required when the visit is returned."
    )

    def validate(self, attrs: dict[str, Any]) -> dict[str, Any]:
        if attrs["decision"] == "return" and not attrs.get("note", "").strip():
            raise serializers.ValidationError(
                {"note": ["say what the technician should do when returning a visit"]}
            )
        return attrs


class CancelSerializer(RefusesUnknownFields, serializers.Serializer):
    noun = "cancellation"

    note = FreeTextField(required=False, allow_blank=True, help_text="Why.")
