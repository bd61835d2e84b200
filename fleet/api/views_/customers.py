"""Customers and their sites."""

from __future__ import annotations

from django.db.models import QuerySet

from fleet.api import filtersets
from fleet.api.serializers import CustomerSerializer, SiteSerializer
from fleet.models import Customer, Site

from .base import RecordViewSet


class CustomerViewSet(RecordViewSet):
    """Customers: the businesses whose refrigeration the contractor looks after."""

    serializer_class = CustomerSerializer
    filterset_class = filtersets.CustomerFilterSet
    queryset = Customer.objects.all()

    def get_queryset(self) -> QuerySet[Customer]:
        return Customer.objects.visible_to(self.request.user).order_by("name", "id")


class SiteViewSet(RecordViewSet):
    """Sites: addresses with refrigeration; the elevation corrects gauge readings there."""

    serializer_class = SiteSerializer
    filterset_class = filtersets.SiteFilterSet
    queryset = Site.objects.all()
    states_units = True

    def get_queryset(self) -> QuerySet[Site]:
        qs = Site.objects.visible_to(self.request.user).prefetch_related("managers")
        return qs.order_by("customer__name", "name", "id")
