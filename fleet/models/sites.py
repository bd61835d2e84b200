"""Who we serve and where: customers and their sites, whose elevation corrects every gauge
reading taken there."""

from __future__ import annotations

import zoneinfo
from decimal import Decimal

from django.conf import settings
from django.core.exceptions import ValidationError
from django.db import models
from django.db.models import Q

from .. import reach as scope
from ..limits import SITE_LIMITS
from ..validation import limit_constraints, limit_validators


def validate_time_zone(value: str) -> None:
    if value not in zoneinfo.available_timezones():
        raise ValidationError(f"{value!r} is not an IANA time zone such as 'America/Denver'")


class Customer(models.Model):
    """A business whose refrigeration we look after (a restaurant group, a grocer...)."""

    name = models.CharField(max_length=200, unique=True)
    contact_name = models.CharField(max_length=200, blank=True)
    contact_email = models.EmailField(blank=True)
    phone = models.CharField(max_length=40, blank=True)
    notes = models.TextField(blank=True)
    created_at = models.DateTimeField(auto_now_add=True)

    #: Who may see it: the customers of the sites within reach.
    reach = scope.Through(scope.customers)
    objects = scope.VisibleManager()

    class Meta:
        ordering = ["name"]

    def __str__(self) -> str:
        return self.name


class Site(models.Model):
    """One address with refrigeration on it; elevation corrects every gauge reading there."""

    customer = models.ForeignKey(Customer, on_delete=models.PROTECT, related_name="sites")
    name = models.CharField(max_length=200)
    address = models.TextField(blank=True)
    access_notes = models.TextField(
        blank=True,
        help_text="How a technician gets to the equipment: keys, roof hatch or ladder, "
        "whom to ask on arrival, hours the site is open.",
    )
    time_zone = models.CharField(
        max_length=64, default="America/Chicago", validators=[validate_time_zone]
    )
    elevation_m = models.FloatField(
        default=0.0,
        validators=limit_validators(SITE_LIMITS["elevation_m"]),
        help_text="Metres above sea level; converts gauge to absolute pressure.",
    )
    design_ambient_c = models.FloatField(
        default=35.0,
        validators=limit_validators(SITE_LIMITS["design_ambient_c"]),
        help_text="Design-day dry-bulb temperature, degrees C (the hottest day to plan for).",
    )
    # A Decimal default: a float one (0.15) reads back as 0.1499999999999999944... and
    # fails the field's own four-decimal check when a record is validated before saving.
    tariff_per_kwh = models.DecimalField(max_digits=8, decimal_places=4, default=Decimal("0.15"))
    currency = models.CharField(max_length=3, default="USD")
    managers = models.ManyToManyField(
        settings.AUTH_USER_MODEL,
        blank=True,
        related_name="managed_sites",
        help_text="Managers who may see this site and its reports.",
    )

    #: Who may see it: by role (``fleet.reach.sites``).
    reach = scope.Through(scope.sites)
    objects = scope.VisibleManager()

    class Meta:
        ordering = ["customer_id", "name"]
        constraints = [
            models.UniqueConstraint(
                fields=["customer", "name"], name="site_unique_name_per_customer"
            ),
            models.CheckConstraint(
                condition=Q(tariff_per_kwh__gte=0), name="site_tariff_not_negative"
            ),
            *limit_constraints("site", SITE_LIMITS),
        ]

    def __str__(self) -> str:
        return f"{self.customer.name} - {self.name}"
