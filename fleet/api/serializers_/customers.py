"""Customers and their sites."""

from __future__ import annotations

from django.contrib.auth.models import User

from fleet import choices
from fleet.api.wire_units import Measure
from fleet.limits import SITE_LIMITS
from fleet.models import Customer, Site

from .base import MeasuredSerializer, ValidatedModelSerializer
from .fields import RecordIdField, measure_field


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
    design_ambient = measure_field(
        "Design-day dry-bulb temperature (units.temperature).", source="design_ambient_c"
    )
    managers = RecordIdField(
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
            "access_notes",
            "time_zone",
            "elevation_m",
            "design_ambient",
            "tariff_per_kwh",
            "currency",
            "managers",
            "units",
        ]
