"""Units (refrigeration systems with their nameplate and design data) and their parts."""

from __future__ import annotations

from typing import Any

from rest_framework import serializers

from fleet import choices
from fleet.api.wire_units import Measure
from fleet.limits import UNIT_LIMITS
from fleet.models import PART_FIELDS, UNIT_PLATE_FIELDS, Component, Refrigerant, Unit

from .base import MeasuredSerializer, ValidatedModelSerializer
from .fields import NumberField, UnknownAsNullChoiceField, measure_field


class UnitSerializer(MeasuredSerializer):
    """A refrigeration system: its nameplate and the design data a technician knows. Design
    values left null fall back to the defaults of the unit's application."""

    measures = {
        "full_charge": Measure("full_charge_kg", "mass", UNIT_LIMITS["full_charge_kg"]),
        "design_box_temp": Measure(
            "design_box_temp_c", "temperature", UNIT_LIMITS["design_box_temp_c"]
        ),
        "design_evap_td": Measure(
            "design_evap_td_k", "temperature_difference", UNIT_LIMITS["design_evap_td_k"]
        ),
        "design_condenser_split": Measure(
            "design_condenser_split_k",
            "temperature_difference",
            UNIT_LIMITS["design_condenser_split_k"],
        ),
        "superheat_min": Measure(
            "superheat_min_k", "temperature_difference", UNIT_LIMITS["superheat_min_k"]
        ),
        "superheat_max": Measure(
            "superheat_max_k", "temperature_difference", UNIT_LIMITS["superheat_max_k"]
        ),
        "high_pressure_cutout": Measure(
            "high_pressure_cutout_kpa_gauge",
            "pressure",
            UNIT_LIMITS["high_pressure_cutout_kpa_gauge"],
        ),
        "head_pressure_setpoint": Measure(
            "head_pressure_setpoint_c", "temperature", UNIT_LIMITS["head_pressure_setpoint_c"]
        ),
    }
    refrigerant = serializers.SlugRelatedField(
        slug_field="designation", queryset=Refrigerant.objects.all()
    )
    full_charge = NumberField(source="full_charge_kg", help_text="Full charge (units.mass).")
    design_box_temp = NumberField(
        source="design_box_temp_c", help_text="Design box temperature (units.temperature)."
    )
    design_evap_td = measure_field(
        "Design evaporator TD (a difference); null: the application default.",
        source="design_evap_td_k",
    )
    design_condenser_split = measure_field(
        "Design condenser split (a difference); null: the application default.",
        source="design_condenser_split_k",
    )
    superheat_min = measure_field("Lowest evaporator superheat.", source="superheat_min_k")
    superheat_max = measure_field("Highest evaporator superheat.", source="superheat_max_k")
    high_pressure_cutout = measure_field(
        "High-pressure control cut-out (units.pressure).",
        source="high_pressure_cutout_kpa_gauge",
    )
    head_pressure_control = UnknownAsNullChoiceField(
        choices=choices.HeadPressureControl.choices,
        help_text="How the head is held up in cold weather; null: not known, the "
        "application default.",
    )
    head_pressure_setpoint = measure_field(
        "The condensing temperature the head-pressure control holds (units.temperature); "
        "null: the default for its kind. Refused with head_pressure_control none.",
        source="head_pressure_setpoint_c",
    )
    design_temperature_basis = serializers.ChoiceField(
        choices=choices.TemperatureBasis.choices,
        required=False,
        help_text="Which saturation temperature design_evap_td and design_condenser_split are "
        "given on for a blend with glide (dew point unless stated); no effect on a refrigerant "
        "without glide.",
    )

    class Meta:
        model = Unit
        fields = [
            "id",
            "site",
            "tag",
            "description",
            "application",
            "appliance_type",
            "refrigerant",
            "full_charge",
            "metering_device",
            "condenser_type",
            "has_receiver",
            "design_box_temp",
            "design_evap_td",
            "design_condenser_split",
            "superheat_min",
            "superheat_max",
            "high_pressure_cutout",
            "head_pressure_control",
            "head_pressure_setpoint",
            "design_temperature_basis",
            "nameplate_volts",
            "nameplate_volts_max",
            "phase",
            "hertz",
            "rla_a",
            "lra_a",
            "pm_interval_days",
            "installed_on",
            "retired_on",
            *UNIT_PLATE_FIELDS,
            "full_charge_basis",
            "units",
        ]
        extra_kwargs = {
            "has_receiver": {
                "help_text": "Whether the unit has a liquid receiver; null: not known, the "
                "application default (remote condensing units usually have one; "
                "self-contained reach-ins and ice machines usually do not)."
            },
            "nameplate_volts_max": {
                "help_text": "The upper end of a dual voltage rating such as 208-230 V "
                "(nameplate_volts is the lower end); null: a single rating."
            },
        }

    def elevation_for(self, attrs: dict[str, Any]) -> float:
        site = attrs.get("site") or (self.instance.site if self.instance else None)
        return site.elevation_m if site else 0.0

    def elevation_of(self, instance: Unit) -> float:
        return instance.site.elevation_m


class ComponentSerializer(ValidatedModelSerializer):
    """A replaceable part of a unit. A capacitor's rating is given as printed on the can:
    `rated_uf` with `tolerance_pct` (a run capacitor, e.g. 45 uF +/- 6 %; without a printed
    tolerance the typical 6 % applies), or the range `rating_uf_min` to `rating_uf_max` (a
    start capacitor, e.g. 88-108 uF); never both. Either way the response carries the band a
    measured value must lie in as `rating_uf_min` and `rating_uf_max`. To change a part from
    one way to the other, send the pair it leaves as null."""

    class Meta:
        model = Component
        fields = [
            "id",
            "unit",
            *PART_FIELDS,
            "make",
            "model_number",
            "serial_number",
            "installed_on",
            "removed_on",
            "changed_on_visit",
            "reason",
        ]

    def validate(self, attrs: dict[str, Any]) -> dict[str, Any]:
        unit = attrs.get("unit") or (self.instance.unit if self.instance else None)
        visit = attrs.get("changed_on_visit")
        if visit is not None and unit is not None and visit.site_id != unit.site_id:
            raise serializers.ValidationError(
                {"changed_on_visit": [f"visit {visit.reference} is at another site"]}
            )
        return super().validate(attrs)
