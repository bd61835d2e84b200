"""Wire helpers shared by the resource serializers: the ``units`` object, measurement and
per-leg fields, numbers that refuse ``true``, text without control characters and with a
length cap, the times a record may carry, and choices a record may leave unknown."""

from __future__ import annotations

import datetime as dt
import unicodedata
from typing import Any

from django.db import models
from django.utils import timezone
from drf_spectacular.utils import extend_schema_field
from rest_framework import serializers

from fleet.api.wire_units import REQUEST_UNITS, response_units
from fleet.limits import SERVICE_ERA

#: How far ahead of the server clock a reading may be stamped (phone clocks drift a little).
FUTURE_SLACK = dt.timedelta(hours=1)
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


#: The most characters a free-text field (notes, an address, a work summary) takes: about a
#: page, far more than a technician types on a phone, and a bound on what one row holds.
FREE_TEXT_MAX_LENGTH = 2000
#: The control characters free text may carry: tab and line breaks.
FREE_TEXT_CONTROLS = frozenset("\t\n\r")


class NumberField(serializers.FloatField):
    """A number; ``true`` and ``false`` are refused (Python counts them as 1 and 0, which
    would store a temperature of 1.0 from a misplaced flag)."""

    default_error_messages = {"boolean": "must be a number, not true or false"}

    def to_internal_value(self, data: Any) -> float:
        if isinstance(data, bool):
            self.fail("boolean")
        return super().to_internal_value(data)


class LineField(serializers.CharField):
    """One line of text (a name, a tag, a phone number): no control characters at all."""

    allowed_controls: frozenset[str] = frozenset()
    default_error_messages = {
        "control": "contains the control character U+{code:04X}; {allowed}",
    }

    def to_internal_value(self, data: Any) -> str:
        value = super().to_internal_value(data)
        for char in value:
            if unicodedata.category(char) == "Cc" and char not in self.allowed_controls:
                allowed = (
                    "only tabs and line breaks are allowed"
                    if self.allowed_controls
                    else "this field is one line of plain text"
                )
                self.fail("control", code=ord(char), allowed=allowed)
        return value


class FreeTextField(LineField):
    """Free text over several lines (notes): tabs and line breaks, nothing else that is a
    control character, and at most ``FREE_TEXT_MAX_LENGTH`` characters."""

    allowed_controls = FREE_TEXT_CONTROLS

    def __init__(self, **kwargs: Any) -> None:
        kwargs.setdefault("max_length", FREE_TEXT_MAX_LENGTH)
        super().__init__(**kwargs)


class RecordIdField(serializers.PrimaryKeyRelatedField):
    """A related record by its id, a whole number: ``1.5`` is refused rather than read as
    record 1, ``true`` as DRF refuses it. Digits past 64 bits, which the JSON parser reads
    as a float, are looked up as the whole number they are and found in no record."""

    default_error_messages = {"not_whole": "must be a record id, a whole number; got {value}"}

    def to_internal_value(self, data: Any) -> Any:
        if isinstance(data, float):
            if not data.is_integer():
                self.fail("not_whole", value=data)
            data = int(data)
        return super().to_internal_value(data)


def measure_field(help_text: str, **kwargs: Any) -> serializers.FloatField:
    return NumberField(required=False, allow_null=True, help_text=help_text, **kwargs)


def check_in_service_era(value: dt.datetime) -> None:
    """Refuse times no service record can have. Before 1900 a zone's offset may be local
    mean time (Chicago's was -05:50:36), which an RFC 3339 date-time cannot even write."""
    if value not in SERVICE_ERA:
        raise serializers.ValidationError(
            f"must fall in the years {SERVICE_ERA.first.year} to {SERVICE_ERA.last.year}"
        )


def check_not_future(value: dt.datetime) -> None:
    check_in_service_era(value)
    if value > timezone.now() + FUTURE_SLACK:
        raise serializers.ValidationError(
            "is in the future (more than an hour ahead of the server clock)"
        )


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


def legs_field(help_text: str) -> serializers.ListField:
    return serializers.ListField(
        child=NumberField(), max_length=3, required=False, help_text=help_text
    )


class StoredTimeField(serializers.DateTimeField):
    """A date-time as DRF writes it, on the server's clock; but a stored time outside
    ``SERVICE_ERA`` (written straight into the database) is written as stored, in UTC,
    where DRF would answer the whole request 400 "Datetime value out of range" for a time
    the caller never sent (year 9999 has no last hour on a Tokyo clock)."""

    def to_representation(self, value: dt.datetime) -> str:
        if isinstance(value, dt.datetime) and value not in SERVICE_ERA:
            return value.astimezone(dt.UTC).isoformat().replace("+00:00", "Z")
        return super().to_representation(value)


class RecordSerializer(serializers.ModelSerializer):
    """The base of every model serializer on the wire: stored times go through
    ``StoredTimeField``."""

    serializer_field_mapping = {
        **serializers.ModelSerializer.serializer_field_mapping,
        models.DateTimeField: StoredTimeField,
    }
