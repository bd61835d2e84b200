"""Parts a technician fits on a visit (``visits/{visit_pk}/parts-fitted/``): the new part
with its rating as printed, and the part it replaces, which is marked removed that day."""

from __future__ import annotations

import datetime as dt
import zoneinfo
from typing import Any

from django.utils import timezone
from rest_framework import serializers

from fleet import services
from fleet.models import PART_FIELDS, Component, Unit, Visit

from .base import ValidatedModelSerializer
from .units import ComponentSerializer


def fitted_on(unit: Unit) -> dt.date:
    """The day a part goes in: today on the calendar of the unit's site, which is the date
    the office and the reports read the part's history by."""
    return timezone.localdate(timezone=zoneinfo.ZoneInfo(unit.site.time_zone))


class PartFittedSerializer(ComponentSerializer):
    """A part fitted on a unit of this visit. Give the rating as printed on the new part
    (see the components resource) and, when it takes the place of a recorded part, that
    part's id in `replaces`: the old part is marked removed on the day the new one went in.
    `installed_on` is that day on the site's calendar. A repeat of a stored `client_id`
    returns the stored part with 200 and changes nothing."""

    noun = "part fitted on a visit"
    #: Set from the validated body: the recorded part this one takes the place of.
    replaced: Component | None = None
    #: After ``save()``: whether this request stored the part (False: a concurrent request
    #: with the same client_id did, and this is that part).
    created: bool

    client_id = serializers.UUIDField(
        required=False, help_text="Chosen by the phone; a repeat returns the stored part (200)."
    )
    visit = serializers.IntegerField(source="changed_on_visit_id", read_only=True)
    unit = serializers.IntegerField(
        source="unit_id", help_text="The unit's id; it must be on the visit."
    )
    replaces = serializers.IntegerField(
        required=False,
        allow_null=True,
        write_only=True,
        help_text="The id of the part on the same unit that this one replaces; it is marked "
        "removed on the day the new one went in.",
    )

    class Meta(ComponentSerializer.Meta):
        fields = [
            "id",
            "client_id",
            "visit",
            "unit",
            *PART_FIELDS,
            "installed_on",
            "replaces",
            "reason",
        ]
        read_only_fields = ["installed_on"]

    def validate(self, attrs: dict[str, Any]) -> dict[str, Any]:
        visit: Visit = self.context["visit"]
        unit_id = attrs.pop("unit_id")
        unit = next((vu.unit for vu in self.context["visit_units"] if vu.unit_id == unit_id), None)
        if unit is None:
            raise serializers.ValidationError(
                {"unit": [f"unit {unit_id} is not on visit {visit.reference}"]}
            )
        day = fitted_on(unit)
        self.replaced = self._replaced(attrs.pop("replaces", None), unit, day)
        attrs.update(unit=unit, changed_on_visit=visit, installed_on=day)
        # The visit and the unit are already known to match: the components resource's own
        # check of them is not needed, only the model's rules.
        return ValidatedModelSerializer.validate(self, attrs)

    @staticmethod
    def _replaced(part_id: int | None, unit: Unit, day: dt.date) -> Component | None:
        if part_id is None:
            return None
        part = Component.objects.filter(pk=part_id, unit=unit).first()
        problem = None
        if part is None:
            problem = f"part {part_id} is not a recorded part of unit {unit.tag}"
        elif part.removed_on is not None:
            problem = f"part {part_id} was already removed on {part.removed_on.isoformat()}"
        elif part.installed_on is not None and part.installed_on > day:
            problem = (
                f"part {part_id} was installed on {part.installed_on.isoformat()}, after today"
            )
        if problem:
            raise serializers.ValidationError({"replaces": [problem]})
        return part

    def create(self, validated_data: dict[str, Any]) -> Component:
        stored = services.record_part_fitted(
            Component(**validated_data), replaces=self.replaced, by=self.context["request"].user
        )
        self.created = stored.created
        return stored.record
