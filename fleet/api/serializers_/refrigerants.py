"""Refrigerants as ASHRAE 34 designates them, read-only."""

from __future__ import annotations

from rest_framework import serializers

from diagnostics.lookups import atmospheric_glide_k
from fleet.api.wire_units import response_units
from fleet.display import from_si
from fleet.models import Refrigerant

from .fields import RecordSerializer, UnitsField


class RefrigerantSerializer(RecordSerializer):
    composition = serializers.JSONField(
        read_only=True, help_text="Mass fractions: [[constituent, fraction], ...]."
    )
    flammable = serializers.BooleanField(read_only=True)
    glide = serializers.SerializerMethodField(
        help_text="Dew minus bubble temperature at atmospheric pressure (101.325 kPa "
        "absolute), in units.temperature_difference; null where the fluid is not liquid there."
    )
    units = UnitsField(read_only=True)

    class Meta:
        model = Refrigerant
        fields = [
            "designation",
            "kind",
            "composition",
            "safety_class",
            "flammable",
            "gwp",
            "gwp_source",
            "glide",
            "units",
        ]
        read_only_fields = fields

    def get_glide(self, obj: Refrigerant) -> float | None:
        glide_k = atmospheric_glide_k(obj.designation)
        if glide_k is None:
            return None
        unit = response_units(self.context)["temperature_difference"]
        return round(from_si(glide_k, "temperature_difference", unit), 3)
