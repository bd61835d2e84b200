"""The fleet records on the wire: what other code imports of the serializers, gathered from
``serializers_`` (the base layer in ``base`` and ``fields``, then one module per resource
family)."""

from __future__ import annotations

from .serializers_.base import MeasuredSerializer, RefusesUnknownFields, ValidatedModelSerializer
from .serializers_.customers import CustomerSerializer, SiteSerializer
from .serializers_.fields import UnitsField, UnknownAsNullChoiceField
from .serializers_.parts import PartFittedSerializer
from .serializers_.refrigerants import RefrigerantSerializer
from .serializers_.tokens import TokenRequestSerializer, TokenSerializer
from .serializers_.units import ComponentSerializer, UnitSerializer
from .serializers_.visit_records import (
    ReadingSetSerializer,
    RefrigerantEventSerializer,
    VisitRecordSerializer,
)
from .serializers_.visits import (
    AuditEntrySerializer,
    CancelSerializer,
    ReviewSerializer,
    SubmitSerializer,
    VisitSerializer,
)

__all__ = [
    "AuditEntrySerializer",
    "CancelSerializer",
    "ComponentSerializer",
    "CustomerSerializer",
    "MeasuredSerializer",
    "PartFittedSerializer",
    "ReadingSetSerializer",
    "RefrigerantEventSerializer",
    "RefrigerantSerializer",
    "RefusesUnknownFields",
    "ReviewSerializer",
    "SiteSerializer",
    "SubmitSerializer",
    "TokenRequestSerializer",
    "TokenSerializer",
    "UnitSerializer",
    "UnitsField",
    "UnknownAsNullChoiceField",
    "ValidatedModelSerializer",
    "VisitRecordSerializer",
    "VisitSerializer",
]
