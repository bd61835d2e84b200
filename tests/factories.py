"""factory_boy factories for every model. Values are synthetic test inputs, not references."""

from __future__ import annotations

import datetime as dt
import uuid

import factory
from django.contrib.auth.models import Group, User
from django.utils import timezone

from diagnostics.core import stored
from diagnostics.core.design import RESOLVED
from diagnostics.core.findings import RULES_BY_CODE, SIGNALS
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
    #: Given, so tests judge a unit with a receiver; None leaves it to the application.
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
    #: A range (42.3-47.7 uF, the band of 45 uF +/- 6 %); a test of a rating as printed
    #: passes rated_uf and sets these to None.
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


def document_for(
    *,
    superheat_k: float = 4.5,
    subcooling_k: float = 3.0,
    split_k: float = 11.0,
    split_target_k: float = 11.0,
    amps: float = 7.5,
    rla: float = 10.0,
    status: str = "ok",
    evaporating_target_c: float = -3.5,
    condensing_target_c: float = 36.0,
    findings: dict[str, float] | None = None,
    signals: tuple[str, ...] = (),
    metrics: dict[str, tuple[float, float, float, float, str, float]] | None = None,
) -> dict:
    """A stored diagnosis document (``diagnostics.core.stored``, synthetic values) of an
    R-404A TXV medium-temperature unit: four metrics shown (the rest left out; ``metrics``
    adds or replaces some as name -> (measured, target, low, high, status, points)), the
    evaporating and condensing targets, and ``findings`` (rule code -> confidence) held by
    their first trigger and ``signals``."""
    shown = {
        "superheat": (superheat_k, 5.0, 3.3, 5.6, "ok", 0.0),
        "subcooling": (subcooling_k, 2.0, 0.0, 2.8, "ok", 0.0),
        "condenser_split": (
            split_k,
            split_target_k,
            split_target_k - 4.0,
            split_target_k + 3.0,
            status,
            0.0 if status == "ok" else 15.0,
        ),
        "running_amps": (amps, rla, None, rla, "ok", 0.0),
        **(metrics or {}),
    }
    held = set(signals)
    for code in findings or {}:
        held |= RULES_BY_CODE[code].triggers[0]
    return {
        "document_version": stored.DOCUMENT_VERSION,
        "refrigerant": "R-404A",
        "design": {
            "application": "medium_temp",
            "metering": "txv",
            "metering_given": True,
            "receiver": False,
            "head_control": "none",
            "head_control_given": False,
            "basis": "dew",
            "origins": dict.fromkeys(RESOLVED, "design"),
        },
        "box_measured": False,
        "saturation": {
            "evaporating_c": [
                evaporating_target_c,
                evaporating_target_c - 2.0,
                evaporating_target_c + 2.0,
            ],
            "suction_kpa_gauge": [None, None, None],
            "condensing_c": [
                condensing_target_c,
                condensing_target_c - 4.0,
                condensing_target_c + 3.0,
            ],
            "head_kpa_gauge": [None, None, None],
        },
        "metrics": {
            name: [
                metric_status,
                measured,
                target,
                low,
                high,
                measured - high if metric_status != "ok" else 0.0,
                points,
            ]
            for name, (measured, target, low, high, metric_status, points) in shown.items()
        },
        "findings": {code: {"confidence": c} for code, c in (findings or {}).items()},
        "signals": [name for name in SIGNALS if name in held],
    }
