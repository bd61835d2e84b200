"""Django's JSON serialization format with times kept to the microsecond, for exports.

Django's own JSON encoder cuts a time to the millisecond (as ECMA-262 writes dates), so
``dumpdata --format json`` followed by ``loaddata`` changes every stored timestamp that has
microseconds. This format differs from ``json`` in that only; ``loaddata`` reads its files
as plain JSON fixtures. ``fleet.backup`` registers it for ``dumpdata``.
"""

from __future__ import annotations

import datetime as dt
from typing import Any

from django.core.serializers import json as django_json
from django.core.serializers.json import DjangoJSONEncoder

Deserializer = django_json.Deserializer


class ExactEncoder(DjangoJSONEncoder):
    """DjangoJSONEncoder, but datetimes and times written whole (ISO 8601)."""

    def default(self, o: Any) -> Any:
        if isinstance(o, dt.datetime):
            text = o.isoformat()
            return text.removesuffix("+00:00") + "Z" if text.endswith("+00:00") else text
        if isinstance(o, dt.time) and o.utcoffset() is None:
            return o.isoformat()
        return super().default(o)


class Serializer(django_json.Serializer):
    """Django's JSON serializer with ``ExactEncoder``."""

    def start_serialization(self) -> None:
        super().start_serialization()  # sets json_kwargs, DjangoJSONEncoder by default
        self.json_kwargs["cls"] = ExactEncoder
