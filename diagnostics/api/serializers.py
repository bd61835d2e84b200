"""Stored diagnoses, leak rates, trends and flags on the wire, in the response's units.

A diagnosis is stored in SI as the core produced it (temperatures C, differences K,
pressures kPa gauge at the site); each value is converted here to the units the response
states, with the unit beside it.
"""

from __future__ import annotations

from typing import Any

from drf_spectacular.utils import extend_schema_field
from rest_framework import serializers

from diagnostics.core import wording
from diagnostics.models import Diagnosis, Flag, LeakRate
from fleet.api.serializers_.fields import RecordSerializer, StoredTimeField
from fleet.api.wire_units import pressure_difference_from_kpa, response_units
from fleet.display import from_si

#: The SI unit labels the core writes, and the quantity each stands for.
SI_LABELS = {"C": "temperature", "K": "temperature_difference", "kPa": "pressure"}


def _rounded(value: float | None) -> float | None:
    return None if value is None else round(value, 3)


class Converter:
    """Converts stored SI values to a response's units.

    Every conversion here is linear (a scale and an offset, the offset of a pressure
    depending on the site's elevation), so each is worked out once per response through
    ``from_si`` and then applied to the hundred-odd values of a diagnosis.
    """

    def __init__(self, units: dict[str, str], elevation_m: float) -> None:
        self.units = units
        self.elevation_m = elevation_m
        self._values = {
            label: _line(lambda v, q=quantity: from_si(v, q, units[q], elevation_m))
            for label, quantity in SI_LABELS.items()
        }
        difference = _line(
            lambda v: from_si(v, "temperature_difference", units["temperature_difference"])
        )
        self._differences = {
            "C": difference,
            "K": difference,
            "kPa": _line(lambda v: pressure_difference_from_kpa(v, units["pressure"])),
        }

    def label(self, si_label: str) -> str:
        quantity = SI_LABELS.get(si_label)
        return self.units[quantity] if quantity else si_label

    def value(self, value: float | None, si_label: str) -> float | None:
        return _apply(self._values.get(si_label), value)

    def difference(self, value: float | None, si_label: str) -> float | None:
        """A deviation: a difference of the quantity (no offset)."""
        return _apply(self._differences.get(si_label), value)


def _line(convert: Any) -> tuple[float, float]:
    """(scale, offset) of a linear conversion."""
    offset = float(convert(0.0))
    return float(convert(1.0)) - offset, offset


def _apply(line: tuple[float, float] | None, value: float | None) -> float | None:
    if value is None or line is None:
        return _rounded(value)
    return round(line[0] * value + line[1], 3)


#: What a diagnosis without a score says instead.
NOT_JUDGED = "not enough readings to judge"


class RangeSerializer(serializers.Serializer):
    low = serializers.FloatField(allow_null=True, help_text="Lowest value still ok; null: open.")
    high = serializers.FloatField(allow_null=True, help_text="Highest value still ok; null: open.")


class TargetSerializer(serializers.Serializer):
    name = serializers.CharField()
    value = serializers.FloatField()
    range = RangeSerializer()
    unit = serializers.CharField(help_text="The unit of value and range.")
    # A field named as Field's own ``source``: the stubs see the attribute, DRF's metaclass
    # takes the field off the class.
    source = serializers.CharField(  # type: ignore[assignment]
        help_text="Where the target and its range come from."
    )


class MetricSerializer(serializers.Serializer):
    name = serializers.CharField()
    measured = serializers.FloatField(allow_null=True)
    target = serializers.FloatField(allow_null=True)
    range = RangeSerializer()
    deviation = serializers.FloatField(
        allow_null=True, help_text="How far outside the ok range (0 inside), in unit."
    )
    unit = serializers.CharField()
    status = serializers.ChoiceField(choices=["ok", "watch", "fault", "not_scored"])
    points_lost = serializers.FloatField()
    reason = serializers.CharField(allow_blank=True, help_text="Why it was not scored.")


class FindingSerializer(serializers.Serializer):
    code = serializers.CharField()
    title = serializers.CharField()
    evidence = serializers.ListField(child=serializers.CharField())
    confidence = serializers.FloatField(help_text="0 to 1.")
    advice = serializers.CharField()
    alternatives = serializers.ListField(
        child=serializers.CharField(),
        help_text="Codes of causes these readings cannot tell apart from this one.",
    )
    deciding_check = serializers.CharField(
        allow_blank=True, help_text="The check that would decide between them (empty if none)."
    )


class CautionSerializer(serializers.Serializer):
    code = serializers.CharField()
    text = serializers.CharField()


class ResponseUnitsSerializer(serializers.Serializer):
    temperature = serializers.ChoiceField(choices=["F", "C"])
    temperature_difference = serializers.ChoiceField(choices=["F", "K"])
    pressure = serializers.ChoiceField(choices=["psig", "kPa"], help_text="Gauge.")
    mass = serializers.ChoiceField(choices=["lb", "kg"])


class DiagnosisSerializer(RecordSerializer):
    """The stored judgement on one reading set, converted to the response's units."""

    score = serializers.FloatField(
        allow_null=True, help_text="0-100; null when the set held nothing to judge."
    )
    score_note = serializers.CharField(
        help_text="Why there is no score (empty when there is one).", read_only=True
    )
    targets = TargetSerializer(many=True, read_only=True)
    metrics = MetricSerializer(many=True, read_only=True)
    findings = FindingSerializer(many=True, read_only=True)
    cautions = CautionSerializer(many=True, read_only=True)
    units = serializers.SerializerMethodField()

    class Meta:
        model = Diagnosis
        fields = [
            "score",
            "score_note",
            "algorithm_version",
            "computed_at",
            "targets",
            "metrics",
            "findings",
            "cautions",
            "glide_choice",
            "energy_penalty_pct",
            "units",
        ]
        read_only_fields = fields

    @extend_schema_field(ResponseUnitsSerializer)
    def get_units(self, obj: Diagnosis) -> dict[str, str]:
        return response_units(self.context)

    def to_representation(self, instance: Diagnosis) -> dict[str, Any]:
        elevation_m = self.context.get("elevation_m")
        if elevation_m is None:
            elevation_m = instance.reading_set.visit_unit.unit.site.elevation_m
        convert = Converter(response_units(self.context), elevation_m)
        return {
            "score": _rounded(instance.score),
            "score_note": NOT_JUDGED if instance.score is None else "",
            "algorithm_version": instance.algorithm_version,
            "computed_at": StoredTimeField().to_representation(instance.computed_at),
            "targets": [
                {
                    "name": t["name"],
                    "value": convert.value(t["value"], t["unit"]),
                    "range": {
                        "low": convert.value(t.get("low"), t["unit"]),
                        "high": convert.value(t.get("high"), t["unit"]),
                    },
                    "unit": convert.label(t["unit"]),
                    "source": t.get("source", ""),
                }
                for t in instance.targets
            ],
            "metrics": [
                {
                    "name": m["name"],
                    "measured": convert.value(m.get("measured"), m["unit"]),
                    "target": convert.value(m.get("target"), m["unit"]),
                    "range": {
                        "low": convert.value(m.get("low"), m["unit"]),
                        "high": convert.value(m.get("high"), m["unit"]),
                    },
                    "deviation": convert.difference(m.get("deviation"), m["unit"]),
                    "unit": convert.label(m["unit"]),
                    "status": m["status"],
                    "points_lost": m.get("points_lost", 0.0),
                    "reason": m.get("reason", ""),
                }
                for m in instance.metrics
            ],
            "findings": [
                {
                    "code": f["code"],
                    "title": f["title"],
                    "evidence": list(f.get("evidence", ())),
                    "confidence": f.get("confidence", 0.0),
                    "advice": f.get("advice", ""),
                    "alternatives": list(f.get("alternatives", ())),
                    "deciding_check": f.get("deciding_check", ""),
                }
                for f in instance.findings
            ],
            "cautions": [{"code": c["code"], "text": c["text"]} for c in instance.cautions],
            "glide_choice": instance.glide_choice,
            "energy_penalty_pct": _rounded(instance.energy_penalty_pct),
            "units": convert.units,
        }


class LeakRateSerializer(RecordSerializer):
    """The leak rate an addition showed under the configured rule set."""

    class Meta:
        model = LeakRate
        fields = [
            "rule_set",
            "method",
            "annualizing_percent",
            "rolling_average_percent",
            "threshold_percent",
            "over_threshold",
            "in_scope",
            "repair_due_on",
            "verification_due_on",
            "note",
            "computed_at",
        ]
        read_only_fields = fields


class TrendPointSerializer(serializers.Serializer):
    taken_at = StoredTimeField()
    value = serializers.FloatField()


class TrendSeriesSerializer(serializers.Serializer):
    metric = serializers.CharField()
    unit = serializers.CharField()
    points = TrendPointSerializer(many=True)


class TrendsSerializer(serializers.Serializer):
    unit = serializers.IntegerField(help_text="The unit's id.")
    stage = serializers.CharField()
    series = TrendSeriesSerializer(many=True)
    units = ResponseUnitsSerializer()


class FlagEvidenceSerializer(serializers.Serializer):
    text = serializers.CharField(help_text="In the response's units.")
    observed_on = serializers.DateField(allow_null=True)


class ForecastQuantitySerializer(serializers.Serializer):
    value = serializers.FloatField()
    unit = serializers.CharField()


class FlagSerializer(RecordSerializer):
    """An open flag; its summary, evidence and forecast numbers in the response's units."""

    summary = serializers.SerializerMethodField()
    evidence = serializers.SerializerMethodField()
    forecast = serializers.SerializerMethodField()
    units = serializers.SerializerMethodField()

    class Meta:
        model = Flag
        fields = [
            "id",
            "unit",
            "kind",
            "severity",
            "summary",
            "evidence",
            "forecast",
            "projected_on",
            "opened_at",
            "updated_at",
            "acknowledged_at",
            "acknowledgement_note",
            "units",
        ]
        read_only_fields = fields

    def get_summary(self, obj: Flag) -> str:
        return obj.summary_for(response_units(self.context))

    @extend_schema_field(FlagEvidenceSerializer(many=True))
    def get_evidence(self, obj: Flag) -> list[dict[str, Any]]:
        return obj.evidence_for(response_units(self.context))

    @extend_schema_field(
        {
            "type": "object",
            "description": "The flag's numbers by name (e.g. split_slope, split_now, "
            "design_day_head_now, cutout), each {value, unit} in the response's units, and "
            "its projected dates (limit_crossed_on, cutout_reached_on) as ISO dates.",
            "additionalProperties": True,
        }
    )
    def get_forecast(self, obj: Flag) -> dict[str, Any]:
        reader = response_units(self.context)
        out: dict[str, Any] = {}
        for name, value, unit in obj.forecast_quantities:
            shown, shown_unit = wording.convert(value, unit, reader)
            per_year = "/year" if unit.endswith("/year") else ""
            out[name] = {"value": round(shown, 3), "unit": shown_unit + per_year}
        out.update(obj.forecast.get("dates", {}))
        return out

    @extend_schema_field(ResponseUnitsSerializer)
    def get_units(self, obj: Flag) -> dict[str, str]:
        return response_units(self.context)


class SaturationQuerySerializer(serializers.Serializer):
    """``?pressure=&pressure_unit=&elevation_m=`` or ``?temperature=&temperature_unit=``."""

    pressure = serializers.FloatField(required=False)
    pressure_unit = serializers.ChoiceField(
        choices=["psig", "psia", "kPa", "kPa_abs", "bar", "bar_abs"], required=False
    )
    temperature = serializers.FloatField(required=False)
    temperature_unit = serializers.ChoiceField(choices=["F", "C", "K"], required=False)
    elevation_m = serializers.FloatField(
        required=False,
        default=0.0,
        min_value=-500,
        max_value=5000,
        help_text="Site elevation for gauge pressures; 0 (sea level) if absent.",
    )

    def validate(self, attrs: dict[str, Any]) -> dict[str, Any]:
        has_p, has_t = "pressure" in attrs, "temperature" in attrs
        if has_p == has_t:
            raise serializers.ValidationError(
                {"pressure": ["give either pressure (with pressure_unit) or temperature"]}
            )
        if has_p and "pressure_unit" not in attrs:
            raise serializers.ValidationError(
                {"pressure_unit": ["say which unit the pressure is in"]}
            )
        if has_t and "temperature_unit" not in attrs:
            raise serializers.ValidationError(
                {"temperature_unit": ["say which unit the temperature is in"]}
            )
        return attrs


class SaturationSerializer(serializers.Serializer):
    """Dew and bubble points; the ``*_c`` / ``*_kpa*`` keys are SI, the rest in ``units``."""

    refrigerant = serializers.CharField()
    elevation_m = serializers.FloatField()
    absolute_pressure_kpa = serializers.FloatField(required=False)
    dew_temperature_c = serializers.FloatField(required=False)
    bubble_temperature_c = serializers.FloatField(required=False)
    dew_temperature = serializers.FloatField(required=False)
    bubble_temperature = serializers.FloatField(required=False)
    temperature_c = serializers.FloatField(required=False)
    dew_pressure_kpa_abs = serializers.FloatField(required=False)
    bubble_pressure_kpa_abs = serializers.FloatField(required=False)
    dew_pressure = serializers.FloatField(required=False, help_text="Gauge, at elevation_m.")
    bubble_pressure = serializers.FloatField(required=False, help_text="Gauge, at elevation_m.")
    glide = serializers.FloatField(help_text="Dew minus bubble temperature, a difference.")
    units = ResponseUnitsSerializer()


class TableGridSerializer(serializers.Serializer):
    """One grid: ``values`` at nodes spaced evenly from ``first`` to ``last`` inclusive."""

    first = serializers.FloatField(help_text="The first node's input (C, or ln of kPa absolute).")
    last = serializers.FloatField(help_text="The last node's input, in the same unit.")
    values = serializers.ListField(
        child=serializers.FloatField(),
        help_text="The output at each node (ln of kPa absolute, or C), first to last.",
    )


class TableCurveSerializer(serializers.Serializer):
    ln_p_of_temp = TableGridSerializer(
        help_text="ln of the pressure (kPa absolute) against the temperature (C)."
    )
    temp_of_ln_p = TableGridSerializer(
        help_text="The temperature (C) against ln of the pressure (kPa absolute)."
    )


class TableCurvesSerializer(serializers.Serializer):
    bubble = TableCurveSerializer()
    dew = TableCurveSerializer()


class SaturationTableSerializer(serializers.Serializer):
    """A refrigerant's saturation table, node for node as the server reads it (SI)."""

    refrigerant = serializers.CharField()
    kind = serializers.ChoiceField(choices=["pure", "azeotrope", "zeotrope"])
    version = serializers.CharField(
        help_text="Names the content: the same version holds the same nodes (also the ETag)."
    )
    min_temp_c = serializers.FloatField()
    max_temp_c = serializers.FloatField()
    critical_temp_c = serializers.FloatField()
    critical_pressure_kpa_abs = serializers.FloatField()
    curves = TableCurvesSerializer()


class ResolvedTargetSerializer(serializers.Serializer):
    value = serializers.FloatField(allow_null=True)
    low = serializers.FloatField(allow_null=True, help_text="The ok range's lower end.")
    high = serializers.FloatField(allow_null=True, help_text="The ok range's upper end.")
    origin = serializers.ChoiceField(choices=["design", "application_default", "missing"])


class ResolvedTargetsSerializer(serializers.Serializer):
    box_temp_c = ResolvedTargetSerializer()
    evap_td_k = ResolvedTargetSerializer()
    condenser_split_k = ResolvedTargetSerializer()
    superheat_k = ResolvedTargetSerializer()
    subcooling_k = ResolvedTargetSerializer()
    head_setpoint_c = ResolvedTargetSerializer(
        help_text="The head-pressure control's set point; low and high: the condensing "
        "temperatures a held head is found between."
    )
    run_capacitor_tolerance_pct = ResolvedTargetSerializer()


class ChosenSerializer(serializers.Serializer):
    value = serializers.CharField(allow_null=True)
    origin = serializers.ChoiceField(choices=["design", "application_default", "missing"])


class HeadControlSerializer(ChosenSerializer):
    held_low_c = serializers.FloatField(allow_null=True)
    held_high_c = serializers.FloatField(allow_null=True)


class ReceiverSerializer(serializers.Serializer):
    value = serializers.BooleanField(allow_null=True)
    origin = serializers.ChoiceField(choices=["design", "application_default", "missing"])


class TargetsRefrigerantSerializer(serializers.Serializer):
    designation = serializers.CharField()
    kind = serializers.CharField()
    safety_class = serializers.CharField()
    flammable = serializers.BooleanField()
    glide_k = serializers.FloatField(
        allow_null=True, help_text="Dew minus bubble at 101.325 kPa absolute, K."
    )


class TargetsSiteSerializer(serializers.Serializer):
    id = serializers.IntegerField()
    name = serializers.CharField()
    elevation_m = serializers.FloatField()
    time_zone = serializers.CharField()


class CapacitorBandSerializer(serializers.Serializer):
    rated_uf = serializers.FloatField(allow_null=True)
    low_uf = serializers.FloatField(allow_null=True)
    high_uf = serializers.FloatField(allow_null=True)


class TargetsElectricalSerializer(serializers.Serializer):
    nameplate_volts = serializers.FloatField(allow_null=True)
    nameplate_volts_max = serializers.FloatField(allow_null=True)
    volts_low = serializers.FloatField(allow_null=True)
    volts_high = serializers.FloatField(allow_null=True)
    volts_nominal = serializers.FloatField(allow_null=True)
    phase = serializers.IntegerField(allow_null=True)
    hertz = serializers.IntegerField(allow_null=True)
    rla_a = serializers.FloatField(allow_null=True)
    lra_a = serializers.FloatField(allow_null=True)
    run_capacitor = CapacitorBandSerializer(allow_null=True)
    start_capacitor = CapacitorBandSerializer(allow_null=True)


class TargetsLimitsSerializer(serializers.Serializer):
    high_pressure_cutout_kpa_gauge = serializers.FloatField(allow_null=True)
    compression_ratio_max = serializers.FloatField(allow_null=True)
    compression_ratio_typical_low = serializers.FloatField(allow_null=True)
    discharge_line_max_c = serializers.FloatField()
    gas_cooler_approach_k = serializers.FloatField()


class ScoreRuleSerializer(serializers.Serializer):
    ok_low = serializers.JSONField(
        help_text='Offset from the target (a number), "range" (the target\'s own low), or '
        "null (that side is never judged)."
    )
    ok_high = serializers.JSONField(help_text="As ok_low, for the upper edge.")
    fault_low = serializers.FloatField(
        allow_null=True, help_text="How far below the ok band turns watch into fault; null: never."
    )
    fault_high = serializers.FloatField(allow_null=True)
    relative = serializers.BooleanField(
        help_text="Offsets and fault margins are fractions of the target."
    )
    margin_from = serializers.ChoiceField(choices=["suction", "head"], allow_null=True)
    watch_points = serializers.FloatField()
    fault_points = serializers.FloatField()
    # named as Field's own ``source``, as TargetSerializer's (DRF's metaclass takes it)
    source = serializers.CharField()  # type: ignore[assignment]


class InstrumentsSerializer(serializers.Serializer):
    thermometer_k = serializers.FloatField()
    gauge_kpa = serializers.FloatField()
    slope_step_kpa = serializers.FloatField()


class JudgementSerializer(serializers.Serializer):
    instruments = InstrumentsSerializer()
    metrics = serializers.DictField(child=ScoreRuleSerializer())


class UnitTargetsSerializer(serializers.Serializer):
    """What the core resolved for a unit, SI (temperatures C, differences K, kPa gauge)."""

    unit = serializers.IntegerField()
    tag = serializers.CharField()
    application = serializers.CharField()
    algorithm_version = serializers.CharField()
    refrigerant = TargetsRefrigerantSerializer()
    site = TargetsSiteSerializer()
    design_temperature_basis = serializers.ChoiceField(choices=["dew", "mid_point"])
    metering_device = ChosenSerializer()
    condenser_type = serializers.CharField()
    has_receiver = ReceiverSerializer()
    head_pressure_control = HeadControlSerializer()
    targets = ResolvedTargetsSerializer()
    limits = TargetsLimitsSerializer()
    electrical = TargetsElectricalSerializer()
    judgement = JudgementSerializer()
