"""The fleet records on the wire.

Validation lives once: the serializer base (``ValidatedModelSerializer``, after NetBox's
idea) builds the would-be instance and runs the model's ``full_clean()``, so the field
validators generated from ``fleet/limits.py`` and the models' ``clean()`` judge API writes
exactly as they judge the admin's. What stays here is the wire: the ``units`` object, the
conversion of measurements to the SI columns, and messages that name the wire field in the
units the client sent.
"""

from __future__ import annotations

import copy
import datetime as dt
import difflib
from collections.abc import Callable, Mapping
from typing import Any, ClassVar

from django.contrib.auth.models import User
from django.core.exceptions import ObjectDoesNotExist
from django.core.exceptions import ValidationError as DjangoValidationError
from django.db.models import Q
from django.db.models.manager import BaseManager
from django.utils import timezone
from drf_spectacular.utils import extend_schema_field
from rest_framework import serializers

from diagnostics.api.serializers import (
    DiagnosisSerializer,
    LeakRateSerializer,
    atmospheric_glide_k,
    response_units,
)
from diagnostics.models import Diagnosis
from diagnostics.services import implausible_fields
from fleet import audit, choices, services
from fleet.api.exceptions import django_errors
from fleet.api.wire_units import (
    REQUEST_KEY,
    REQUEST_UNITS,
    Measure,
    UnitError,
    in_units,
    limit_error,
)
from fleet.display import from_si, to_si
from fleet.limits import (
    CONFIRM_AMOUNT_ABOVE_FULL_CHARGE,
    EVENT_LIMITS,
    READING_LIMITS,
    SITE_LIMITS,
    UNIT_LIMITS,
)
from fleet.models import (
    AuditEntry,
    Component,
    Customer,
    ReadingSet,
    Refrigerant,
    RefrigerantEvent,
    Site,
    Unit,
    Visit,
    VisitUnit,
)

#: How far ahead of the server clock a reading may be stamped (phone clocks drift a little).
FUTURE_SLACK = dt.timedelta(hours=1)
#: The times a visit or a reading may carry: [start, end).
SERVICE_ERA = (
    dt.datetime(1970, 1, 1, tzinfo=dt.UTC),
    dt.datetime(2200, 1, 1, tzinfo=dt.UTC),
)

_REQUEST_UNITS_SCHEMA = {
    "type": "object",
    "description": "Request: the units its measurements are in (a temperature difference is "
    "stated with `temperature` unless `temperature_difference` is given). Response: the "
    "units it uses, chosen with `?units=si|us`.",
    "properties": {
        "temperature": {"type": "string", "enum": list(REQUEST_UNITS["temperature"])},
        "temperature_difference": {"type": "string", "enum": list(REQUEST_UNITS["temperature"])},
        "pressure": {
            "type": "string",
            "enum": list(REQUEST_UNITS["pressure"]),
            "description": "kPa and bar are gauge; the _abs units and psia are absolute.",
        },
        "mass": {"type": "string", "enum": list(REQUEST_UNITS["mass"])},
    },
    "additionalProperties": False,
}
_ALLOWED_UNIT_KEYS = {**REQUEST_UNITS, "temperature_difference": REQUEST_UNITS["temperature"]}


@extend_schema_field(_REQUEST_UNITS_SCHEMA)
class UnitsField(serializers.Field):
    """``units``: what a request's numbers are in; what a response's numbers are in."""

    default_error_messages = {
        # Braces doubled: DRF formats the message.
        "not_an_object": 'state units as an object, e.g. {{"temperature": "F", "pressure": '
        '"psig", "mass": "lb"}}'
    }

    def __init__(self, **kwargs: Any) -> None:
        kwargs.setdefault("required", False)
        super().__init__(**kwargs)

    def get_attribute(self, instance: Any) -> Any:
        return instance

    def to_representation(self, value: Any) -> dict[str, str]:
        return response_units(self.context)

    def to_internal_value(self, data: Any) -> dict[str, str]:
        if not isinstance(data, dict):
            self.fail("not_an_object")
        errors: dict[str, list[str]] = {}
        for key, value in data.items():
            allowed = _ALLOWED_UNIT_KEYS.get(key)
            if allowed is None:
                errors[key] = ["not a kind of unit here; state temperature, pressure or mass"]
            elif not isinstance(value, str) or value not in allowed:
                errors[key] = [f"{value!r} is not a {key} unit; use one of {', '.join(allowed)}"]
        if errors:
            raise serializers.ValidationError(errors)
        return dict(data)


class RefusesUnknownFields:
    """A request body naming a field the serializer does not have is refused with a 400
    naming it (a misspelt field is never silently dropped). Read-only fields a client sends
    back, such as ``id`` or ``diagnosis`` from a response it kept, are known and ignored as
    DRF ignores them: only names the contract does not know are refused."""

    #: What the body describes, for the message ("not a field of a <noun>"); model
    #: serializers default to their model's verbose name.
    noun: ClassVar[str] = ""

    def _unknown_field_errors(self, data: Any) -> dict[str, list[str]]:
        if not isinstance(data, Mapping):
            return {}  # DRF answers that the body is not an object
        fields = self.fields  # type: ignore[attr-defined]
        unknown = [name for name in data if name not in fields]
        if not unknown:
            return {}
        noun = self.noun or self.Meta.model._meta.verbose_name  # type: ignore[attr-defined]
        writable = [name for name, field in fields.items() if not field.read_only]
        errors = {}
        for name in unknown:
            close = difflib.get_close_matches(str(name), writable, n=1)
            hint = f"did you mean {close[0]}?" if close else "the schema lists its fields"
            errors[str(name)] = [f"not a field of a {noun}; {hint}"]
        return errors

    def to_internal_value(self, data: Any) -> Any:
        unknown = self._unknown_field_errors(data)
        try:
            value = super().to_internal_value(data)  # type: ignore[misc]
        except serializers.ValidationError as exc:
            if unknown and isinstance(exc.detail, dict):
                raise serializers.ValidationError({**unknown, **exc.detail}) from exc
            raise
        if unknown:
            raise serializers.ValidationError(unknown)
        return value


class ValidatedModelSerializer(RefusesUnknownFields, serializers.ModelSerializer):
    """Runs the model's ``full_clean()`` on the would-be instance (NetBox's
    ``ValidatedModelSerializer``), reporting errors under the wire names."""

    #: Columns full_clean skips: ones the view sets from trusted objects (foreign keys it
    #: already holds would cost a query each to re-check) and the retry key ``client_id``,
    #: whose uniqueness the insert settles (a repeat is answered with the stored record).
    clean_exclude: ClassVar[tuple[str, ...]] = ()
    #: Check constraints cost a query each; off where every one of them is the twin of a
    #: field validator generated from the same limits table (fleet/validation.py).
    clean_constraints: ClassVar[bool] = True

    def wire_names(self) -> dict[str, str]:
        """Model field -> wire field, for messages from the model."""
        return {}

    def run_full_clean(self, attrs: dict[str, Any]) -> None:
        model = self.Meta.model
        many = {f.name for f in model._meta.many_to_many}
        plain = {k: v for k, v in attrs.items() if k not in many}
        if self.instance is None:
            instance = model(**plain)
        else:
            instance = copy.copy(self.instance)
            for key, value in plain.items():
                setattr(instance, key, value)
        try:
            instance.full_clean(
                exclude=list(self.clean_exclude), validate_constraints=self.clean_constraints
            )
        except DjangoValidationError as exc:
            raise serializers.ValidationError(django_errors(exc, self.wire_names())) from exc
        self.check_instance(instance)

    def check_instance(self, instance: Any) -> None:
        """Judge the would-be instance as a whole, after the model's own rules passed."""

    def validate(self, attrs: dict[str, Any]) -> dict[str, Any]:
        attrs = super().validate(attrs)
        self.run_full_clean(attrs)
        return attrs


class MeasuredSerializer(ValidatedModelSerializer):
    """A record whose measurements travel in the units the client states.

    Each wire field in ``measures`` is declared with ``source=<SI column>``; ``validate``
    converts it with the request's ``units`` and checks it against its limit, and
    ``to_representation`` converts the column to the response's units.
    """

    measures: ClassVar[dict[str, Measure]] = {}
    #: Whether the record keeps the units the client entered (``entered_units``).
    keeps_entered_units: ClassVar[bool] = False
    #: The ``units`` object of the request being validated (set by ``convert_measures``).
    request_units: dict[str, str]
    units = UnitsField()

    def elevation_for(self, attrs: dict[str, Any]) -> float:
        """The site elevation of a record being written (for absolute pressure units)."""
        return 0.0

    def elevation_of(self, instance: Any) -> float:
        return 0.0

    def wire_names(self) -> dict[str, str]:
        return {m.column: wire for wire, m in self.measures.items()}

    def convert_measures(self, attrs: dict[str, Any], errors: dict[str, list[str]]) -> None:
        units = attrs.pop("units", None) or {}
        self.request_units = units
        elevation_m = self.elevation_for(attrs)
        for wire, measure in self.measures.items():
            value = attrs.get(measure.column)
            if value is None:
                continue
            unit = self._request_unit(measure, units)
            if unit is None:
                key = REQUEST_KEY[measure.quantity]  # type: ignore[index]
                errors[wire] = [f"state its unit in units.{key} ({', '.join(REQUEST_UNITS[key])})"]
                continue
            try:
                value_si = to_si(value, measure.quantity, unit, elevation_m)
            except (UnitError, ValueError, ArithmeticError) as exc:
                errors[wire] = [str(exc)]
                continue
            problem = limit_error(value_si, measure, unit, elevation_m)
            if problem:
                errors[wire] = [problem]
                continue
            attrs[measure.column] = value_si
        if units:
            attrs["_entered_units"] = units

    def check_wire(self, attrs: dict[str, Any], errors: dict[str, list[str]]) -> None:
        """Turn the wire fields into columns, collecting what is wrong in ``errors``."""
        self.convert_measures(attrs, errors)

    def new_record_defaults(self) -> dict[str, Any]:
        """Values a new record takes when the request leaves them out."""
        return {}

    def validate(self, attrs: dict[str, Any]) -> dict[str, Any]:
        errors: dict[str, list[str]] = {}
        self.check_wire(attrs, errors)
        if errors:
            raise serializers.ValidationError(errors)
        entered = attrs.pop("_entered_units", None)
        if entered is not None and self.keeps_entered_units:
            attrs["entered_units"] = entered
        if self.instance is None:
            for name, value in self.new_record_defaults().items():
                attrs.setdefault(name, value)
        return super().validate(attrs)

    def message_unit(self, quantity: str, instance: Any = None) -> str:
        """The unit to word a message about ``quantity`` in: the request's, else the one the
        record was entered in, else the response's."""
        key = REQUEST_KEY[quantity]  # type: ignore[index]
        entered = getattr(instance, "entered_units", None) or {}
        return (
            getattr(self, "request_units", {}).get(key)
            or entered.get(key)
            or response_units(self.context)[quantity]
        )

    @staticmethod
    def _request_unit(measure: Measure, units: dict[str, str]) -> str | None:
        if measure.quantity is None:
            return measure.label
        if measure.quantity == "temperature_difference" and "temperature_difference" in units:
            return units["temperature_difference"]
        return units.get(REQUEST_KEY[measure.quantity])

    def to_representation(self, instance: Any) -> dict[str, Any]:
        data = super().to_representation(instance)
        units = response_units(self.context)
        elevation_m = self.elevation_of(instance)
        for wire, measure in self.measures.items():
            value = data.get(wire)
            if value is None or measure.quantity is None:
                continue
            data[wire] = round(
                from_si(value, measure.quantity, units[measure.quantity], elevation_m), 3
            )
        return data


def _measure_field(help_text: str, **kwargs: Any) -> serializers.FloatField:
    return serializers.FloatField(required=False, allow_null=True, help_text=help_text, **kwargs)


def _check_in_service_era(value: dt.datetime) -> dt.datetime:
    """Refuse times no service record can have. Before 1900 a zone's offset may be local
    mean time (Chicago's was -05:50:36), which an RFC 3339 date-time cannot even write."""
    if not SERVICE_ERA[0] <= value < SERVICE_ERA[1]:
        raise serializers.ValidationError(
            f"must fall in the years {SERVICE_ERA[0].year} to {SERVICE_ERA[1].year - 1}"
        )
    return value


def _check_not_future(value: dt.datetime) -> dt.datetime:
    _check_in_service_era(value)
    if value > timezone.now() + FUTURE_SLACK:
        raise serializers.ValidationError(
            "is in the future (more than an hour ahead of the server clock)"
        )
    return value


class UnknownAsNullChoiceField(serializers.ChoiceField):
    """A choice a record may leave unknown: stored blank, written ``null`` (like every other
    design value left to a default); ``null`` or ``""`` in a request mean unknown."""

    def __init__(self, **kwargs: Any) -> None:
        kwargs.setdefault("required", False)
        super().__init__(allow_null=True, allow_blank=True, **kwargs)

    def run_validation(self, data: Any = serializers.empty) -> Any:
        value = super().run_validation(data)
        return "" if value is None else value

    def to_representation(self, value: Any) -> Any:
        return None if value in ("", None) else super().to_representation(value)


# --- fleet records -------------------------------------------------------------------------


class CustomerSerializer(ValidatedModelSerializer):
    class Meta:
        model = Customer
        fields = ["id", "name", "contact_name", "contact_email", "phone", "notes", "created_at"]
        read_only_fields = ["created_at"]


class SiteSerializer(MeasuredSerializer):
    measures = {
        "design_ambient": Measure(
            "design_ambient_c", "temperature", SITE_LIMITS["design_ambient_c"]
        )
    }
    design_ambient = _measure_field(
        "Design-day dry-bulb temperature (units.temperature).", source="design_ambient_c"
    )
    managers = serializers.PrimaryKeyRelatedField(
        many=True,
        required=False,
        queryset=User.objects.filter(groups__name=choices.Role.MANAGER),
        help_text="Managers (user ids, role manager) who may see this site and its reports.",
    )

    class Meta:
        model = Site
        fields = [
            "id",
            "customer",
            "name",
            "address",
            "time_zone",
            "elevation_m",
            "design_ambient",
            "tariff_per_kwh",
            "currency",
            "managers",
            "units",
        ]


class RefrigerantSerializer(serializers.ModelSerializer):
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
    full_charge = serializers.FloatField(
        source="full_charge_kg", help_text="Full charge (units.mass)."
    )
    design_box_temp = serializers.FloatField(
        source="design_box_temp_c", help_text="Design box temperature (units.temperature)."
    )
    design_evap_td = _measure_field(
        "Design evaporator TD (a difference); null: the application default.",
        source="design_evap_td_k",
    )
    design_condenser_split = _measure_field(
        "Design condenser split (a difference); null: the application default.",
        source="design_condenser_split_k",
    )
    superheat_min = _measure_field("Lowest evaporator superheat.", source="superheat_min_k")
    superheat_max = _measure_field("Highest evaporator superheat.", source="superheat_max_k")
    high_pressure_cutout = _measure_field(
        "High-pressure control cut-out (units.pressure).",
        source="high_pressure_cutout_kpa_gauge",
    )
    head_pressure_control = UnknownAsNullChoiceField(
        choices=choices.HeadPressureControl.choices,
        help_text="How the head is held up in cold weather; null: not known, the "
        "application default.",
    )
    head_pressure_setpoint = _measure_field(
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
            "kind",
            "rated_uf",
            "tolerance_pct",
            "rating_uf_min",
            "rating_uf_max",
            "rating_volts",
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


# --- visits --------------------------------------------------------------------------------


class VisitSerializer(ValidatedModelSerializer):
    technicians = serializers.PrimaryKeyRelatedField(
        many=True,
        required=False,
        queryset=User.objects.filter(groups__name=choices.Role.TECHNICIAN),
        help_text="User ids of the technicians assigned (role technician).",
    )
    units = serializers.PrimaryKeyRelatedField(
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
            "window_start": {"validators": [_check_in_service_era]},
            "window_end": {"validators": [_check_in_service_era]},
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


class AuditEntrySerializer(serializers.ModelSerializer):
    """One entry of a visit's trail; ``changes`` are the stored (SI) values."""

    actor = serializers.SlugRelatedField(slug_field="username", read_only=True, allow_null=True)
    record = serializers.CharField(source="record_type.model", read_only=True)

    class Meta:
        model = AuditEntry
        fields = ["id", "at", "actor", "action", "record", "record_id", "changes", "note"]
        read_only_fields = fields


class SubmitSerializer(RefusesUnknownFields, serializers.Serializer):
    noun = "submission"

    work_summary = serializers.CharField(
        required=False, allow_blank=True, help_text="What was done; replaces the stored summary."
    )


class ReviewSerializer(RefusesUnknownFields, serializers.Serializer):
    noun = "review"

    decision = serializers.ChoiceField(
        choices=[("accept", "Accept"), ("return", "Return to the technician")]
    )
    note = serializers.CharField(
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

    note = serializers.CharField(required=False, allow_blank=True, help_text="Why.")


# --- readings and refrigerant events -------------------------------------------------------


def _legs_field(help_text: str) -> serializers.ListField:
    return serializers.ListField(
        child=serializers.FloatField(), max_length=3, required=False, help_text=help_text
    )


class VisitRecordSerializer(MeasuredSerializer):
    """A record hanging off a unit of a visit (``context['visit']``, its units in
    ``context['visit_units']``); ``unit`` must be one of them."""

    clean_exclude = ("client_id", "visit_unit", "created_by")

    visit = serializers.IntegerField(source="visit_unit.visit_id", read_only=True)
    unit = serializers.IntegerField(
        source="visit_unit.unit_id", help_text="The unit's id; it must be on the visit."
    )
    created_by = serializers.SlugRelatedField(
        slug_field="username", read_only=True, allow_null=True
    )

    #: The services that store a new record (once per client_id, with what is computed of
    #: it and its audit entry) and save an office edit (``fleet.services``).
    store: ClassVar[Callable[..., services.Stored]]
    change: ClassVar[Callable[..., Any]]
    #: After ``save()`` of a new record: whether this request stored it (False: a
    #: concurrent request with the same client_id did, and this is that record).
    created: bool

    def create(self, validated_data: dict[str, Any]) -> Any:
        result = self.store(self.Meta.model(**validated_data), by=self.context["request"].user)
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

    def elevation_of(self, instance: Any) -> float:
        return instance.visit_unit.unit.site.elevation_m


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
    taken_at = serializers.DateTimeField(
        required=False, validators=[_check_not_future], help_text="Default: now."
    )
    box_temp = _measure_field("Box (air) temperature.", source="box_temp_c")
    entering_air_temp = _measure_field("Air entering the condenser.", source="entering_air_temp_c")
    suction_pressure = _measure_field("Suction pressure.", source="suction_kpa_gauge")
    suction_line_temp = _measure_field(
        "Suction line at the evaporator outlet.", source="suction_line_temp_c"
    )
    head_pressure = _measure_field("Head (discharge) pressure.", source="head_kpa_gauge")
    liquid_line_temp = _measure_field("Liquid line temperature.", source="liquid_line_temp_c")
    discharge_line_temp = _measure_field(
        "Discharge line temperature.", source="discharge_line_temp_c"
    )
    compressor_amps = _legs_field("Compressor amps, one per leg measured (A).")
    supply_volts = _legs_field("Supply volts, line to line, one per pair measured (V).")
    run_capacitor_uf = _measure_field("Run capacitor, measured (uF).")
    start_capacitor_uf = _measure_field("Start capacitor, measured (uF).")
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
    amount = _measure_field(
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
            "notes",
            "leak_rate",
            "created_by",
            "created_at",
        ]
        read_only_fields = ["created_at"]
        extra_kwargs = {"passed": {"required": False, "allow_null": True}}

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
        confirmed = attrs.pop("confirm_amount", False)
        visit_unit = self._visit_unit(attrs, errors)
        self.convert_measures(attrs, errors)
        amount_kg = attrs.get("amount_kg")
        kind = attrs.get("kind") or (self.instance.kind if self.instance else None)
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

    def validate_occurred_on(self, value: dt.date) -> dt.date:
        if value > timezone.localdate() + dt.timedelta(days=1):
            raise serializers.ValidationError("is in the future")
        return value

    def new_record_defaults(self) -> dict[str, Any]:
        return {"occurred_on": timezone.localdate()}
