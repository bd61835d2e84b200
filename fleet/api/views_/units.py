"""Units and their parts."""

from __future__ import annotations

from django.db.models import QuerySet

from fleet import filtersets
from fleet.api.permissions import visible_components, visible_units
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
        qs = Unit.objects.select_related("site", "refrigerant").order_by("site_id", "tag", "id")
        return visible_units(self.request.user, qs)


class ComponentViewSet(RecordViewSet):
    """Replaceable parts of units (capacitors, relays, motors...) and their history."""

    serializer_class = ComponentSerializer
    filterset_class = filtersets.ComponentFilterSet
    queryset = Component.objects.all()

    def get_queryset(self) -> QuerySet[Component]:
        qs = Component.objects.select_related("changed_on_visit").order_by("unit_id", "kind", "id")
        return visible_components(self.request.user, qs)
