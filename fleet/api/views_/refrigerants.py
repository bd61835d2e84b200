"""Refrigerants (read-only for everyone), found by any common spelling."""

from __future__ import annotations

from django.shortcuts import get_object_or_404
from rest_framework import mixins
from rest_framework.exceptions import NotFound

from diagnostics.core.refrigerants import UnknownRefrigerant, normalise_designation
from fleet.api import filtersets
from fleet.api.serializers import RefrigerantSerializer
from fleet.models import Refrigerant

from .base import RimewatchViewSet


class RefrigerantViewSet(mixins.ListModelMixin, mixins.RetrieveModelMixin, RimewatchViewSet):
    """Refrigerants as ASHRAE 34 designates them (read-only for everyone)."""

    serializer_class = RefrigerantSerializer
    filterset_class = filtersets.RefrigerantFilterSet
    queryset = Refrigerant.objects.order_by("designation")
    lookup_field = "designation"
    lookup_value_regex = r"[^/]+"
    states_units = True

    def get_object(self) -> Refrigerant:
        """Any common spelling finds it: r404a, R404A, R-404A."""
        raw = self.kwargs[self.lookup_field]
        try:
            designation = normalise_designation(raw)
        except UnknownRefrigerant as exc:
            raise NotFound({"designation": [str(exc)]}) from exc
        obj: Refrigerant = get_object_or_404(self.get_queryset(), designation=designation)
        self.check_object_permissions(self.request, obj)
        return obj
