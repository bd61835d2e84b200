"""factory_boy factories for every model. Values are synthetic test inputs, not references."""

from __future__ import annotations

import datetime as dt
import uuid

import factory
from django.contrib.auth.models import Group, User
from django.utils import timezone

from fleet import models


class UserFactory(factory.django.DjangoModelFactory):
    class Meta:
        model = User
        django_get_or_create = ("username",)
        skip_postgeneration_save = True

    username = factory.Sequence(lambda n: f"user{n}")
    email = factory.LazyAttribute(lambda u: f"{u.username}@example.invalid")
    password = factory.django.Password("test-pass-123")

    @factory.post_generation
    def role(self, create: bool, extracted: str | None, **kwargs) -> None:
        if create and extracted:
            self.groups.add(Group.objects.get(name=extracted))


class CustomerFactory(factory.django.DjangoModelFactory):
    class Meta:
        model = models.Customer

    name = factory.Sequence(lambda n: f"Customer {n}")


class SiteFactory(factory.django.DjangoModelFactory):
    class Meta:
        model = models.Site

    customer = factory.SubFactory(CustomerFactory)
    name = factory.Sequence(lambda n: f"Site {n}")
    time_zone = "America/Chicago"
    elevation_m = 0.0
    design_ambient_c = 35.0


def refrigerant(designation: str = "R-404A") -> models.Refrigerant:
    """Refrigerants are seeded by a migration; tests look them up rather than invent them."""
    return models.Refrigerant.objects.get(designation=designation)


class UnitFactory(factory.django.DjangoModelFactory):
    class Meta:
        model = models.Unit

    site = factory.SubFactory(SiteFactory)
    tag = factory.Sequence(lambda n: f"U-{n}")
    application = "medium_temp"
    refrigerant = factory.LazyFunction(refrigerant)
    full_charge_kg = 10.0
    metering_device = "txv"
    condenser_type = "air"
    has_receiver = True
    design_box_temp_c = 2.0
    design_evap_td_k = 5.5
    design_condenser_split_k = 11.0
    nameplate_volts = 230
    phase = 1
    hertz = 60
    rla_a = 10.0
    lra_a = 60.0


class ComponentFactory(factory.django.DjangoModelFactory):
    class Meta:
        model = models.Component

    unit = factory.SubFactory(UnitFactory)
    kind = "run_capacitor"
    rating_uf_min = 42.3
    rating_uf_max = 47.7
    rating_volts = 370
    installed_on = dt.date(2025, 1, 1)


class VisitFactory(factory.django.DjangoModelFactory):
    class Meta:
        model = models.Visit
        skip_postgeneration_save = True

    reference = factory.Sequence(lambda n: f"V-{n:05d}")
    site = factory.SubFactory(SiteFactory)
    kind = "planned"
    status = "in_progress"
    window_start = factory.LazyFunction(lambda: timezone.now() - dt.timedelta(hours=1))
    window_end = factory.LazyAttribute(lambda v: v.window_start + dt.timedelta(hours=4))

    @factory.post_generation
    def technicians(self, create: bool, extracted, **kwargs) -> None:
        if create and extracted:
            self.technicians.add(*extracted)


class VisitUnitFactory(factory.django.DjangoModelFactory):
    class Meta:
        model = models.VisitUnit

    visit = factory.SubFactory(VisitFactory)
    unit = factory.SubFactory(UnitFactory, site=factory.SelfAttribute("..visit.site"))


class ReadingSetFactory(factory.django.DjangoModelFactory):
    class Meta:
        model = models.ReadingSet

    visit_unit = factory.SubFactory(VisitUnitFactory)
    client_id = factory.LazyFunction(uuid.uuid4)
    taken_at = factory.LazyFunction(timezone.now)
    stage = "as_found"
    box_temp_c = 2.0
    entering_air_temp_c = 25.0
    suction_kpa_gauge = 350.0
    suction_line_temp_c = 0.0
    head_kpa_gauge = 1700.0
    liquid_line_temp_c = 33.0


class RefrigerantEventFactory(factory.django.DjangoModelFactory):
    class Meta:
        model = models.RefrigerantEvent

    visit_unit = factory.SubFactory(VisitUnitFactory)
    client_id = factory.LazyFunction(uuid.uuid4)
    kind = "added"
    amount_kg = 1.0
    occurred_on = factory.LazyFunction(timezone.localdate)
