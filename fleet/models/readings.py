"""What was found on a unit at a visit: the reading sets (SI) and the refrigerant put in,
taken out, leaked or tested; both carry the phone's ``client_id`` so a retry stores nothing."""

from __future__ import annotations

import uuid

from django.conf import settings
from django.core.exceptions import ValidationError
from django.db import models
from django.db.models import Q

from .. import choices
from .. import reach as scope
from ..limits import EVENT_LIMITS, READING_LIMITS
from ..validation import limit_constraints, limit_validators
from .visits import VisitUnit


def _reading_field(name: str) -> models.FloatField:
    return models.FloatField(
        null=True, blank=True, validators=limit_validators(READING_LIMITS[name])
    )


class ReadingSet(models.Model):
    """The measurements taken on one unit at one moment of a visit, in SI.

    ``client_id`` is chosen by the phone; the unique constraint makes a retried post store
    nothing new, whatever the timing.
    """

    visit_unit = models.ForeignKey(VisitUnit, on_delete=models.PROTECT, related_name="reading_sets")
    client_id = models.UUIDField(unique=True, default=uuid.uuid4)
    taken_at = models.DateTimeField()
    stage = models.CharField(
        max_length=10, choices=choices.Stage.choices, default=choices.Stage.AS_FOUND
    )
    box_temp_c = _reading_field("box_temp_c")
    entering_air_temp_c = _reading_field("entering_air_temp_c")
    suction_kpa_gauge = _reading_field("suction_kpa_gauge")
    suction_line_temp_c = _reading_field("suction_line_temp_c")
    head_kpa_gauge = _reading_field("head_kpa_gauge")
    liquid_line_temp_c = _reading_field("liquid_line_temp_c")
    discharge_line_temp_c = _reading_field("discharge_line_temp_c")
    compressor_amps_1 = _reading_field("compressor_amps_1")
    compressor_amps_2 = _reading_field("compressor_amps_2")
    compressor_amps_3 = _reading_field("compressor_amps_3")
    supply_volts_1 = _reading_field("supply_volts_1")
    supply_volts_2 = _reading_field("supply_volts_2")
    supply_volts_3 = _reading_field("supply_volts_3")
    run_capacitor_uf = _reading_field("run_capacitor_uf")
    start_capacitor_uf = _reading_field("start_capacitor_uf")
    call_for_cooling = models.BooleanField(
        null=True,
        blank=True,
        help_text="The control was calling for the compressor: a stopped compressor with a "
        "call is a failed start, without one it is off-cycle.",
    )
    in_defrost = models.BooleanField(
        null=True,
        blank=True,
        help_text="The unit was defrosting when read: the box and the cycle are not judged.",
    )
    compressor_running = models.BooleanField(null=True, blank=True)
    condenser_fan_running = models.BooleanField(null=True, blank=True)
    evaporator_fans_running = models.BooleanField(null=True, blank=True)
    coil_iced = models.BooleanField(null=True, blank=True)
    sight_glass = models.CharField(max_length=10, choices=choices.SightGlass.choices, blank=True)
    notes = models.TextField(blank=True)
    entered_units = models.JSONField(
        default=dict, blank=True, help_text="The units the technician used."
    )
    created_by = models.ForeignKey(
        settings.AUTH_USER_MODEL, null=True, blank=True, on_delete=models.PROTECT, related_name="+"
    )
    created_at = models.DateTimeField(auto_now_add=True)

    #: Who may see it: whoever sees its unit (its history goes with it).
    reach = scope.Through(scope.units, "visit_unit__unit__")
    objects = scope.VisibleManager()

    class Meta:
        ordering = ["taken_at"]
        constraints = [
            models.CheckConstraint(
                condition=Q(stage__in=choices.Stage.values), name="readingset_stage_valid"
            ),
            models.CheckConstraint(
                condition=Q(sight_glass__in=["", *choices.SightGlass.values]),
                name="readingset_sight_glass_valid",
            ),
            *limit_constraints("readingset", READING_LIMITS),
        ]

    def __str__(self) -> str:
        return f"{self.get_stage_display()} readings {self.taken_at:%Y-%m-%d %H:%M}"

    @property
    def compressor_amps(self) -> list[float]:
        return [
            a
            for a in (self.compressor_amps_1, self.compressor_amps_2, self.compressor_amps_3)
            if a is not None
        ]

    @property
    def supply_volts(self) -> list[float]:
        return [
            v
            for v in (self.supply_volts_1, self.supply_volts_2, self.supply_volts_3)
            if v is not None
        ]


class RefrigerantEvent(models.Model):
    """Refrigerant put in or taken out, a leak found or fixed, a verification test."""

    visit_unit = models.ForeignKey(
        VisitUnit, on_delete=models.PROTECT, related_name="refrigerant_events"
    )
    client_id = models.UUIDField(unique=True, default=uuid.uuid4)
    kind = models.CharField(max_length=30, choices=choices.RefrigerantEventKind.choices)
    amount_kg = models.FloatField(
        null=True, blank=True, validators=limit_validators(EVENT_LIMITS["amount_kg"])
    )
    occurred_on = models.DateField()
    leak_rate_exemption = models.CharField(
        max_length=20, choices=choices.LeakRateExemption.choices, blank=True, default=""
    )
    passed = models.BooleanField(
        null=True, blank=True, help_text="Verification tests: did the repair hold?"
    )
    #: The cylinder the refrigerant came from or went to (its label or serial number).
    cylinder = models.CharField(max_length=100, blank=True, default="")
    #: The certification number of the technician who handled the refrigerant.
    certification_number = models.CharField(max_length=60, blank=True, default="")
    notes = models.TextField(blank=True)
    created_by = models.ForeignKey(
        settings.AUTH_USER_MODEL, null=True, blank=True, on_delete=models.PROTECT, related_name="+"
    )
    created_at = models.DateTimeField(auto_now_add=True)

    #: Who may see it: whoever sees its unit (its history goes with it).
    reach = scope.Through(scope.units, "visit_unit__unit__")
    objects = scope.VisibleManager()

    class Meta:
        ordering = ["occurred_on", "id"]
        constraints = [
            models.CheckConstraint(
                condition=Q(kind__in=choices.RefrigerantEventKind.values),
                name="refrigerantevent_kind_valid",
            ),
            models.CheckConstraint(
                condition=~Q(kind__in=["added", "recovered"])
                | Q(amount_kg__isnull=False, amount_kg__gt=0),
                name="refrigerantevent_amount_for_mass_events",
            ),
            *limit_constraints("refrigerantevent", EVENT_LIMITS),
        ]

    def __str__(self) -> str:
        return f"{self.get_kind_display()} on {self.occurred_on}"

    def clean(self) -> None:
        if self.kind in {"added", "recovered"} and not self.amount_kg:
            raise ValidationError({"amount_kg": "an addition or recovery needs a positive amount"})
