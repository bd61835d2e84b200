"""Units and their parts."""

from __future__ import annotations

from django.db.models import QuerySet

from fleet.api import filtersets
from fleet.api.serializers import ComponentSerializer, UnitSerializer
from fleet.models import Component, Unit

from .base import RecordViewSet


class UnitViewSet(RecordViewSet):
    """Units: one refrigeration system each, with its nameplate and design data."""

    serializer_class = UnitSerializer
    filterset_class = filtersets.UnitFilterSet
    queryset = Unit.objects.all()
    states_units = True

    def get_queryset(self) -> QuerySet[Unit]:
        qs = Unit.objects.visible_to(self.request.user).select_related("site", "refrigerant")
        return qs.order_by("site_id", "tag", "id")


class ComponentViewSet(RecordViewSet):
    """Replaceable parts of units (capacitors, relays, motors...) and their history."""

    serializer_class = ComponentSerializer
    filterset_class = filtersets.ComponentFilterSet
    queryset = Component.objects.all()

    def get_queryset(self) -> QuerySet[Component]:
        qs = Component.objects.visible_to(self.request.user).select_related("changed_on_visit")
        return qs.order_by("unit_id", "kind", "id")
