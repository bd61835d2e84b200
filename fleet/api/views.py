"""The fleet's REST endpoints, gathered from ``views_`` (the shared base in ``base``, then
one module per resource family). Thin: scope the queryset, parse, call a service, serialise.

Every queryset is scoped to the caller's reach (``Model.objects.visible_to``, the rule of
``fleet.reach``) before anything is fetched, and prefetches what its serializer reads, so
a list costs the same number of queries for one record as for a page of them.
"""

from __future__ import annotations

from .views_.base import Conflict, RecordViewSet, RimewatchViewSet, UnitSystemMixin
from .views_.customers import CustomerViewSet, SiteViewSet
from .views_.refrigerants import RefrigerantViewSet
from .views_.tokens import TokenView
from .views_.units import ComponentViewSet, UnitViewSet
from .views_.visit_records import (
    PartFittedViewSet,
    ReadingSetViewSet,
    RefrigerantEventViewSet,
    VisitRecordViewSet,
)
from .views_.visits import VisitViewSet

__all__ = [
    "ComponentViewSet",
    "Conflict",
    "CustomerViewSet",
    "PartFittedViewSet",
    "ReadingSetViewSet",
    "RecordViewSet",
    "RefrigerantEventViewSet",
    "RefrigerantViewSet",
    "RimewatchViewSet",
    "SiteViewSet",
    "TokenView",
    "UnitSystemMixin",
    "UnitViewSet",
    "VisitRecordViewSet",
    "VisitViewSet",
]
