"""Records hanging off a unit of a visit: reading sets (with their diagnosis) and
refrigerant events (with their leak rate)."""

from __future__ import annotations

import datetime as dt
import math
from collections.abc import Callable
from typing import Any, ClassVar

from django.contrib.auth.models import User
from django.core.exceptions import ObjectDoesNotExist
from django.db.models.manager import BaseManager
from django.utils import timezone
from drf_spectacular.utils import extend_schema_field
from rest_framework import serializers

from diagnostics.api.serializers import DiagnosisSerializer, LeakRateSerializer
from diagnostics.models import Diagnosis
from diagnostics.services import implausible_fields
from fleet import audit, choices, services
from fleet.api.wire_units import Measure, in_units, limit_error
from fleet.limits import CONFIRM_AMOUNT_ABOVE_FULL_CHARGE, EVENT_LIMITS, READING_LIMITS
from fleet.models import ReadingSet, RefrigerantEvent
from fleet.reach import roles_of

from .base import MeasuredSerializer
from .fields import StoredTimeField, check_not_future, legs_field, measure_field


class VisitRecordSerializer(MeasuredSerializer):
    """A record hanging off a unit of a visit (``context['visit']``, its units in
    ``context['visit_units']``); ``unit`` must be one of them."""

    clean_exclude = ("client_id", "visit_unit", "created_by")

    visit = serializers.IntegerField(source="visit_unit.visit_id", read_only=True)
    unit = serializers.IntegerField(
        source="visit_unit.unit_id", help_text="The unit's id; it must be on the visit."
    )
    created_by: serializers.SlugRelatedField[User] = serializers.SlugRelatedField(
        slug_field="username", read_only=True, allow_null=True
    )

    #: The services that store a new record (once per client_id, with what is computed of
    #: it and its audit entry) and save an office edit (``fleet.services``).
    store: ClassVar[Callable[..., services.Stored]]
    change: ClassVar[Callable[..., Any]]
    #: After ``save()`` of a new record: whether this request stored it (False: a
    #: concurrent request with the same client_id did, and this is that record).
    created: bool

    #: Wire fields a retry is not compared on: the retry key itself, the units the values
    #: are stated in (the values are compared once converted), and what is not stored.
    not_compared: ClassVar[frozenset[str]] = frozenset({"client_id", "units", "confirm_amount"})
    #: Wire fields stored in several columns (a list of per-leg values).
    legs: ClassVar[dict[str, tuple[str, str]]] = {}

    def differences(self, stored: Any) -> list[str]:
        """The wire fields of this (validated) request whose values differ from ``stored``,
        the record already kept under its client_id. Only fields the request sends are
        compared (one it leaves out takes a default such as now), each as stored: in SI,
        so 35.6 F and 2 C are the same box temperature."""
        data = self.validated_data
        differ = []
        for wire in self.initial_data:
            field = self.fields.get(wire)
            if field is None or field.read_only or wire in self.not_compared:
                continue
            if wire in self.measures:
                columns = [self.measures[wire].column]
            elif wire in self.legs:
                prefix = self.legs[wire][0]
                columns = [f"{prefix}_{leg}" for leg in (1, 2, 3)]
            elif wire == "unit":
                columns = ["visit_unit"]
            else:
                columns = [str(field.source)]
            if any(not _same(data.get(c), getattr(stored, c)) for c in columns):
                differ.append(wire)
        return differ

    def create(self, validated_data: dict[str, Any]) -> Any:
        result = self.store(self.record_model(**validated_data), by=self.context["request"].user)
        self.created = result.created
        return result.record

    def update(self, instance: Any, validated_data: dict[str, Any]) -> Any:
        before = audit.snapshot(instance)
        for key, value in validated_data.items():
            setattr(instance, key, value)
        return self.change(instance, before, by=self.context["request"].user)

    def _visit_unit(self, attrs: dict[str, Any], errors: dict[str, list[str]]) -> Any:
        visit = self.context["visit"]
        unit_id = attrs.pop("visit_unit", {}).get("unit_id")
        if unit_id is None:
            return self.instance.visit_unit if self.instance else None
        for visit_unit in self.context["visit_units"]:
            if visit_unit.unit_id == unit_id:
                attrs["visit_unit"] = visit_unit
                return visit_unit
        errors["unit"] = [f"unit {unit_id} is not on visit {visit.reference}"]
        return None

    def check_wire(self, attrs: dict[str, Any], errors: dict[str, list[str]]) -> None:
        self._visit_unit(attrs, errors)
        self.convert_measures(attrs, errors)

    def elevation_for(self, attrs: dict[str, Any]) -> float:
        visit_unit = attrs.get("visit_unit") or (
            self.instance.visit_unit if self.instance else None
        )
        return visit_unit.unit.site.elevation_m if visit_unit else 0.0

    def elevation_of(self, instance: ReadingSet | RefrigerantEvent) -> float:
        return instance.visit_unit.unit.site.elevation_m


def _same(sent: Any, stored: Any) -> bool:
    """Whether a value of a retry is the one stored (floats to within their last digits,
    which a database's round trip may change)."""
    if isinstance(sent, float) and isinstance(stored, float):
        return math.isclose(sent, stored, rel_tol=1e-9, abs_tol=1e-9)
    return bool(sent == stored)


class ReadingSetListSerializer(serializers.ListSerializer):
    """A page of reading sets: their stored diagnoses are expanded in one pass first, not
    one by one as each set is written out."""

    def to_representation(self, data: Any) -> list[dict[str, Any]]:
        sets = list(data.all() if isinstance(data, BaseManager) else data)
        # A set without a diagnosis raises RelatedObjectDoesNotExist, an AttributeError.
        Diagnosis.attach_details(getattr(rs, "diagnosis", None) for rs in sets)
        return super().to_representation(sets)


class ReadingSetSerializer(VisitRecordSerializer):
    clean_constraints = False
    store = staticmethod(services.record_reading_set)
    change = staticmethod(services.change_reading_set)
    keeps_entered_units = True
    measures = {
        "box_temp": Measure("box_temp_c", "temperature", READING_LIMITS["box_temp_c"]),
        "entering_air_temp": Measure(
            "entering_air_temp_c", "temperature", READING_LIMITS["entering_air_temp_c"]
        ),
        "suction_pressure": Measure(
            "suction_kpa_gauge", "pressure", READING_LIMITS["suction_kpa_gauge"]
        ),
        "suction_line_temp": Measure(
            "suction_line_temp_c", "temperature", READING_LIMITS["suction_line_temp_c"]
        ),
        "head_pressure": Measure("head_kpa_gauge", "pressure", READING_LIMITS["head_kpa_gauge"]),
        "liquid_line_temp": Measure(
            "liquid_line_temp_c", "temperature", READING_LIMITS["liquid_line_temp_c"]
        ),
        "discharge_line_temp": Measure(
            "discharge_line_temp_c", "temperature", READING_LIMITS["discharge_line_temp_c"]
        ),
        "run_capacitor_uf": Measure(
            "run_capacitor_uf", None, READING_LIMITS["run_capacitor_uf"], "uF"
        ),
        "start_capacitor_uf": Measure(
            "start_capacitor_uf", None, READING_LIMITS["start_capacitor_uf"], "uF"
        ),
    }
    #: The list fields and the columns (one per leg) they are stored in.
    legs: ClassVar[dict[str, tuple[str, str]]] = {
        "compressor_amps": ("compressor_amps", "A"),
        "supply_volts": ("supply_volts", "V"),
    }

    client_id = serializers.UUIDField(
        required=False, help_text="Chosen by the phone; a repeat returns the stored set (200)."
    )
    taken_at = StoredTimeField(
        required=False, validators=[check_not_future], help_text="Default: now."
    )
    box_temp = measure_field("Box (air) temperature.", source="box_temp_c")
    entering_air_temp = measure_field("Air entering the condenser.", source="entering_air_temp_c")
    suction_pressure = measure_field("Suction pressure.", source="suction_kpa_gauge")
    suction_line_temp = measure_field(
        "Suction line at the evaporator outlet.", source="suction_line_temp_c"
    )
    head_pressure = measure_field("Head (discharge) pressure.", source="head_kpa_gauge")
    liquid_line_temp = measure_field("Liquid line temperature.", source="liquid_line_temp_c")
    discharge_line_temp = measure_field(
        "Discharge line temperature.", source="discharge_line_temp_c"
    )
    compressor_amps = legs_field("Compressor amps, one per leg measured (A).")
    supply_volts = legs_field("Supply volts, line to line, one per pair measured (V).")
    run_capacitor_uf = measure_field("Run capacitor, measured (uF).")
    start_capacitor_uf = measure_field("Start capacitor, measured (uF).")
    sight_glass = serializers.ChoiceField(
        choices=choices.SightGlass.choices, required=False, allow_blank=True
    )
    diagnosis = serializers.SerializerMethodField()

    class Meta:
        model = ReadingSet
        list_serializer_class = ReadingSetListSerializer
        fields = [
            "id",
            "client_id",
            "visit",
            "unit",
            "taken_at",
            "stage",
            "units",
            "box_temp",
            "entering_air_temp",
            "suction_pressure",
            "suction_line_temp",
            "head_pressure",
            "liquid_line_temp",
            "discharge_line_temp",
            "compressor_amps",
            "supply_volts",
            "run_capacitor_uf",
            "start_capacitor_uf",
            "call_for_cooling",
            "in_defrost",
            "compressor_running",
            "condenser_fan_running",
            "evaporator_fans_running",
            "coil_iced",
            "sight_glass",
            "notes",
            "diagnosis",
            "created_by",
            "created_at",
        ]
        read_only_fields = ["created_at"]
        extra_kwargs = {
            "call_for_cooling": {"required": False, "allow_null": True},
            "in_defrost": {"required": False, "allow_null": True},
            "compressor_running": {"required": False, "allow_null": True},
            "condenser_fan_running": {"required": False, "allow_null": True},
            "evaporator_fans_running": {"required": False, "allow_null": True},
            "coil_iced": {"required": False, "allow_null": True},
        }

    @extend_schema_field(DiagnosisSerializer(allow_null=True))
    def get_diagnosis(self, obj: ReadingSet) -> dict[str, Any] | None:
        try:
            diagnosis = obj.diagnosis
        except ObjectDoesNotExist:
            return None
        if diagnosis is None:
            return None
        context = {**self.context, "elevation_m": self.elevation_of(obj)}
        return DiagnosisSerializer(diagnosis, context=context).data

    def check_wire(self, attrs: dict[str, Any], errors: dict[str, list[str]]) -> None:
        self._visit_unit(attrs, errors)
        if "unit" not in errors:  # pressures need the unit's site (its elevation)
            self.convert_measures(attrs, errors)
        for wire, (prefix, label) in self.legs.items():
            values = attrs.pop(wire, None)
            if values is None:
                continue
            problems = []
            for leg in range(3):
                column = f"{prefix}_{leg + 1}"
                value = values[leg] if leg < len(values) else None
                if value is not None:
                    measure = Measure(column, None, READING_LIMITS[column], label)
                    problem = limit_error(value, measure, label)
                    if problem:
                        problems.append(f"leg {leg + 1}: {problem}")
                attrs[column] = value
            if problems:
                errors[wire] = problems

    def new_record_defaults(self) -> dict[str, Any]:
        return {"taken_at": timezone.now()}

    def check_instance(self, instance: ReadingSet) -> None:
        """Refuse readings no working system can produce (a gauge on the wrong port, a
        digit too many), each under its wire field with the limit in the request's units."""
        problems = implausible_fields(instance)
        if not problems:
            return
        elevation_m = instance.visit_unit.unit.site.elevation_m
        names = self.wire_names()
        errors: dict[str, list[str]] = {}
        for problem in problems:
            why = problem.why
            if problem.limit is not None and problem.quantity is not None:
                unit = self.message_unit(problem.quantity, instance)
                limit = in_units(problem.limit, problem.quantity, unit, elevation_m)
                why = why.replace("{limit}", limit)
            errors.setdefault(names.get(problem.field, problem.field), []).append(why)
        raise serializers.ValidationError(errors)

    def wire_names(self) -> dict[str, str]:
        names = super().wire_names()
        for wire, (prefix, _label) in self.legs.items():
            names.update({f"{prefix}_{leg}": wire for leg in (1, 2, 3)})
        return names


class RefrigerantEventSerializer(VisitRecordSerializer):
    store = staticmethod(services.record_refrigerant_event)
    change = staticmethod(services.change_refrigerant_event)
    measures = {"amount": Measure("amount_kg", "mass", EVENT_LIMITS["amount_kg"])}

    client_id = serializers.UUIDField(
        required=False, help_text="Chosen by the phone; a repeat returns the stored event (200)."
    )
    amount = measure_field(
        "Refrigerant mass (units.mass); required for added and recovered. More than "
        f"{CONFIRM_AMOUNT_ABOVE_FULL_CHARGE:g} times the unit's full charge is refused unless "
        "confirm_amount is true.",
        source="amount_kg",
    )
    confirm_amount = serializers.BooleanField(
        write_only=True,
        required=False,
        help_text="True when an amount far beyond the unit's full charge is right (a new "
        "line set, a nameplate charge that was wrong); not stored.",
    )
    occurred_on = serializers.DateField(required=False, help_text="Default: today.")
    leak_rate_exemption = serializers.ChoiceField(
        choices=choices.LeakRateExemption.choices, required=False, allow_blank=True
    )
    leak_rate = serializers.SerializerMethodField()

    class Meta:
        model = RefrigerantEvent
        fields = [
            "id",
            "client_id",
            "visit",
            "unit",
            "kind",
            "amount",
            "confirm_amount",
            "units",
            "occurred_on",
            "leak_rate_exemption",
            "passed",
            "cylinder",
            "certification_number",
            "notes",
            "leak_rate",
            "created_by",
            "created_at",
        ]
        read_only_fields = ["created_at"]
        extra_kwargs = {
            "passed": {"required": False, "allow_null": True},
            "cylinder": {
                "help_text": "The cylinder the refrigerant came from or went into (its label "
                "or serial); required for added and recovered when a technician posts."
            },
            "certification_number": {
                "help_text": "The certification number of the technician handling the "
                "refrigerant; required for added and recovered when a technician posts."
            },
        }

    @extend_schema_field(LeakRateSerializer(allow_null=True))
    def get_leak_rate(self, obj: RefrigerantEvent) -> dict[str, Any] | None:
        if obj.kind != choices.RefrigerantEventKind.ADDED:
            return None
        try:
            leak_rate = obj.leak_rate
        except ObjectDoesNotExist:
            return None
        return None if leak_rate is None else LeakRateSerializer(leak_rate).data

    def check_wire(self, attrs: dict[str, Any], errors: dict[str, list[str]]) -> None:
        # A retry of a stored event needs no new confirmation: the amount is compared with
        # the stored one instead (a different amount is a 409).
        confirmed = attrs.pop("confirm_amount", False) or "repeat_of" in self.context
        visit_unit = self._visit_unit(attrs, errors)
        self.convert_measures(attrs, errors)
        amount_kg = attrs.get("amount_kg")
        kind = attrs.get("kind") or (self.instance.kind if self.instance else None)
        self._check_handling(attrs, kind, errors)
        if (
            confirmed
            or visit_unit is None
            or "amount" in errors
            or amount_kg is None
            or kind
            not in {choices.RefrigerantEventKind.ADDED, choices.RefrigerantEventKind.RECOVERED}
        ):
            return
        full_charge_kg = visit_unit.unit.full_charge_kg
        if amount_kg > CONFIRM_AMOUNT_ABOVE_FULL_CHARGE * full_charge_kg:
            full = in_units(full_charge_kg, "mass", self.message_unit("mass", self.instance))
            errors["amount"] = [
                f"over {CONFIRM_AMOUNT_ABOVE_FULL_CHARGE:g} times the unit's full charge "
                f"({full}); if the amount is right, send it again with "
                '"confirm_amount": true'
            ]

    def _check_handling(
        self, attrs: dict[str, Any], kind: str | None, errors: dict[str, list[str]]
    ) -> None:
        """A technician who puts refrigerant in or takes it out says from or into which
        cylinder, and under which certification (the office, entering a paper record
        afterwards, may not know them)."""
        if self.instance is not None or kind not in {
            choices.RefrigerantEventKind.ADDED,
            choices.RefrigerantEventKind.RECOVERED,
        }:
            return
        if roles_of(self.context["request"].user).office:
            return
        for field in ("cylinder", "certification_number"):
            if not str(attrs.get(field, "")).strip():
                errors[field] = [
                    f"required when a technician records refrigerant {kind}: "
                    + ("which cylinder" if field == "cylinder" else "your certification number")
                ]

    def validate_occurred_on(self, value: dt.date) -> dt.date:
        if value > timezone.localdate() + dt.timedelta(days=1):
            raise serializers.ValidationError("is in the future")
        return value

    def new_record_defaults(self) -> dict[str, Any]:
        return {"occurred_on": timezone.localdate()}
