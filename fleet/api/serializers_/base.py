"""The base classes every fleet serializer builds on.

Validation lives once: ``ValidatedModelSerializer`` (after NetBox's idea) builds the
would-be instance and runs the model's ``full_clean()``, so the field validators generated
from ``fleet/limits.py`` and the models' ``clean()`` judge API writes exactly as they judge
the admin's. ``MeasuredSerializer`` adds the wire: the ``units`` object, the conversion of
measurements to the SI columns, and messages that name the wire field in the units the
client sent. ``RefusesUnknownFields`` refuses field names a body should not carry.
"""

from __future__ import annotations

import copy
import difflib
from collections.abc import Mapping
from typing import Any, ClassVar

from django.core.exceptions import ValidationError as DjangoValidationError
from django.db import models
from django.db.models import Model
from rest_framework import serializers

from fleet.api.exceptions import django_errors
from fleet.api.wire_units import (
    REQUEST_KEY,
    REQUEST_UNITS,
    Measure,
    UnitError,
    limit_error,
    response_units,
)
from fleet.display import Quantity, from_si, to_si

from .fields import (
    FreeTextField,
    LineField,
    NumberField,
    RecordIdField,
    RecordSerializer,
    UnitsField,
)


class RefusesUnknownFields(serializers.Serializer):
    """A request body naming a field the serializer does not have is refused with a 400
    naming it (a misspelt field is never silently dropped). Read-only fields a client sends
    back, such as ``id`` or ``diagnosis`` from a response it kept, are known and ignored as
    DRF ignores them: only names the contract does not know are refused."""

    #: What the body describes, for the message ("not a field of a <noun>"); model
    #: serializers default to their model's verbose name.
    noun: ClassVar[str] = ""

    def body_noun(self) -> str:
        return self.noun

    def _unknown_field_errors(self, data: Any) -> dict[str, list[str]]:
        if not isinstance(data, Mapping):
            return {}  # DRF answers that the body is not an object
        fields = self.fields
        unknown = [name for name in data if name not in fields]
        if not unknown:
            return {}
        noun = self.body_noun()
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
            value = super().to_internal_value(data)
        except serializers.ValidationError as exc:
            if unknown and isinstance(exc.detail, dict):
                raise serializers.ValidationError({**unknown, **exc.detail}) from exc
            raise
        if unknown:
            raise serializers.ValidationError(unknown)
        return value


class ValidatedModelSerializer(RefusesUnknownFields, RecordSerializer):
    """Runs the model's ``full_clean()`` on the would-be instance (NetBox's
    ``ValidatedModelSerializer``), reporting errors under the wire names."""

    # (Said here rather than in the docstring, which the schema shows to integrators.) A
    # model's float columns take numbers but not true; its text columns refuse control
    # characters (free text keeps tabs and line breaks) and free text is capped in length;
    # a related record is named by a whole number.
    serializer_field_mapping = {
        **RecordSerializer.serializer_field_mapping,
        models.FloatField: NumberField,
        models.CharField: LineField,
        models.TextField: FreeTextField,
    }
    serializer_related_field = RecordIdField

    #: Columns full_clean skips: ones the view sets from trusted objects (foreign keys it
    #: already holds would cost a query each to re-check) and the retry key ``client_id``,
    #: whose uniqueness the insert settles (a repeat is answered with the stored record).
    clean_exclude: ClassVar[tuple[str, ...]] = ()
    #: Check constraints cost a query each; off where every one of them is the twin of a
    #: field validator generated from the same limits table (fleet/validation.py).
    clean_constraints: ClassVar[bool] = True

    @property
    def record_model(self) -> type[Model]:
        """``Meta.model`` (the stubs type the nested ``Meta`` apart from the class's model)."""
        model: type[Model] = self.Meta.model
        return model

    def body_noun(self) -> str:
        return self.noun or str(self.record_model._meta.verbose_name)

    def wire_names(self) -> dict[str, str]:
        """Model field -> wire field, for messages from the model."""
        return {}

    def run_full_clean(self, attrs: dict[str, Any]) -> None:
        model = self.record_model
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
            if measure.quantity is None:
                unit = measure.label
            else:
                given = self._request_unit(measure.quantity, units)
                if given is None:
                    key = REQUEST_KEY[measure.quantity]
                    errors[wire] = [
                        f"state its unit in units.{key} ({', '.join(REQUEST_UNITS[key])})"
                    ]
                    continue
                unit = given
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

    def message_unit(self, quantity: Quantity, instance: Any = None) -> str:
        """The unit to word a message about ``quantity`` in: the request's, else the one the
        record was entered in, else the response's."""
        key = REQUEST_KEY[quantity]
        entered = getattr(instance, "entered_units", None) or {}
        return (
            getattr(self, "request_units", {}).get(key)
            or entered.get(key)
            or response_units(self.context)[quantity]
        )

    @staticmethod
    def _request_unit(quantity: Quantity, units: dict[str, str]) -> str | None:
        """The unit the request states for ``quantity``, if it does."""
        if quantity == "temperature_difference" and "temperature_difference" in units:
            return units["temperature_difference"]
        return units.get(REQUEST_KEY[quantity])

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
