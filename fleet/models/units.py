"""The refrigeration systems we look after: the refrigerants they run on and each unit's
design data and nameplate, which every diagnosis of it reads."""

from __future__ import annotations

from django.apps import apps
from django.core.exceptions import ValidationError
from django.db import models
from django.db.models import Q

from .. import choices
from .. import reach as scope
from ..limits import UNIT_LIMITS
from ..validation import limit_constraints, limit_validators, record_date_errors
from .equipment import Nameplate
from .sites import Site


class Refrigerant(models.Model):
    """A refrigerant as ASHRAE 34 designates it; seeded from the diagnostics core catalogue."""

    designation = models.CharField(max_length=20, unique=True)
    kind = models.CharField(max_length=12, choices=choices.RefrigerantKind.choices)
    composition = models.JSONField(help_text="Mass fractions: [[constituent, fraction], ...]")
    safety_class = models.CharField(max_length=4)
    gwp = models.FloatField()
    gwp_source = models.CharField(max_length=200)

    #: Who may see it: every role (reference data).
    reach = scope.Through(scope.reference)
    objects = scope.VisibleManager()

    class Meta:
        ordering = ["designation"]
        constraints = [
            models.CheckConstraint(condition=Q(gwp__gte=0), name="refrigerant_gwp_not_negative"),
            models.CheckConstraint(
                condition=Q(kind__in=choices.RefrigerantKind.values), name="refrigerant_kind_valid"
            ),
        ]

    def __str__(self) -> str:
        return self.designation

    @property
    def flammable(self) -> bool:
        return not self.safety_class.endswith("1")


#: A unit's plate beyond its nameplate ratings: what the admin's "Equipment" section and
#: the API show of it.
UNIT_PLATE_FIELDS = (
    "make",
    "model_number",
    "serial_number",
    "compressor_model",
    "compressor_serial",
    "warranty_ends_on",
)


class Unit(Nameplate):
    """One refrigeration system: an evaporator (or several) and its condensing unit."""

    site = models.ForeignKey(Site, on_delete=models.PROTECT, related_name="units")
    tag = models.CharField(max_length=60, help_text="The label on the equipment, e.g. 'WIC-1'.")
    description = models.CharField(max_length=200, blank=True)
    application = models.CharField(max_length=20, choices=choices.Application.choices)
    appliance_type = models.CharField(
        max_length=30,
        choices=choices.ApplianceType.choices,
        default=choices.ApplianceType.COMMERCIAL_REFRIGERATION,
    )
    refrigerant = models.ForeignKey(Refrigerant, on_delete=models.PROTECT, related_name="units")
    full_charge_kg = models.FloatField(validators=limit_validators(UNIT_LIMITS["full_charge_kg"]))
    metering_device = models.CharField(max_length=20, choices=choices.MeteringDevice.choices)
    condenser_type = models.CharField(
        max_length=10, choices=choices.CondenserType.choices, default=choices.CondenserType.AIR
    )
    has_receiver = models.BooleanField(
        null=True,
        blank=True,
        default=None,
        help_text="Blank: not known, the application default (remote condensing units "
        "usually have a receiver; self-contained reach-ins and ice machines usually do not).",
    )
    design_box_temp_c = models.FloatField(
        validators=limit_validators(UNIT_LIMITS["design_box_temp_c"])
    )
    design_evap_td_k = models.FloatField(
        null=True,
        blank=True,
        validators=limit_validators(UNIT_LIMITS["design_evap_td_k"]),
        help_text="Blank: the application default.",
    )
    design_condenser_split_k = models.FloatField(
        null=True,
        blank=True,
        validators=limit_validators(UNIT_LIMITS["design_condenser_split_k"]),
        help_text="Blank: the application default.",
    )
    superheat_min_k = models.FloatField(
        null=True, blank=True, validators=limit_validators(UNIT_LIMITS["superheat_min_k"])
    )
    superheat_max_k = models.FloatField(
        null=True, blank=True, validators=limit_validators(UNIT_LIMITS["superheat_max_k"])
    )
    high_pressure_cutout_kpa_gauge = models.FloatField(
        null=True,
        blank=True,
        validators=limit_validators(UNIT_LIMITS["high_pressure_cutout_kpa_gauge"]),
    )
    head_pressure_control = models.CharField(
        max_length=20,
        choices=choices.HeadPressureControl.choices,
        blank=True,
        default="",
        help_text="How the head is held up in cold weather. Blank: not known, the "
        "application default.",
    )
    head_pressure_setpoint_c = models.FloatField(
        null=True,
        blank=True,
        validators=limit_validators(UNIT_LIMITS["head_pressure_setpoint_c"]),
        help_text="The condensing temperature the head-pressure control holds, degrees C. "
        "Blank: the default for its kind.",
    )
    design_temperature_basis = models.CharField(
        max_length=10,
        choices=choices.TemperatureBasis.choices,
        default=choices.TemperatureBasis.DEW,
        help_text="Which saturation temperature the design evaporator TD and condenser split "
        "are given on for a blend with glide; no effect on a refrigerant without glide.",
    )
    nameplate_volts = models.FloatField(
        validators=limit_validators(UNIT_LIMITS["nameplate_volts"]),
        help_text="The nameplate voltage, or the lower end of a dual rating such as 208-230 V.",
    )
    nameplate_volts_max = models.FloatField(
        null=True,
        blank=True,
        validators=limit_validators(UNIT_LIMITS["nameplate_volts_max"]),
        help_text="The upper end of a dual rating such as 208-230 V. Blank: a single rating.",
    )
    phase = models.PositiveSmallIntegerField(choices=[(1, "Single-phase"), (3, "Three-phase")])
    hertz = models.PositiveSmallIntegerField(choices=[(50, "50 Hz"), (60, "60 Hz")], default=60)
    rla_a = models.FloatField(validators=limit_validators(UNIT_LIMITS["rla_a"]))
    lra_a = models.FloatField(validators=limit_validators(UNIT_LIMITS["lra_a"]))
    pm_interval_days = models.PositiveIntegerField(
        default=90, validators=limit_validators(UNIT_LIMITS["pm_interval_days"])
    )
    installed_on = models.DateField(null=True, blank=True)
    retired_on = models.DateField(null=True, blank=True)
    full_charge_basis = models.CharField(
        max_length=20,
        choices=choices.ChargeBasis.choices,
        blank=True,
        help_text="How the full charge was determined; blank: not recorded.",
    )
    warranty_ends_on = models.DateField(null=True, blank=True)
    compressor_model = models.CharField(max_length=100, blank=True)
    compressor_serial = models.CharField(max_length=100, blank=True, db_index=True)

    #: Who may see it: by role (``fleet.reach.units``).
    reach = scope.Through(scope.units)
    objects = scope.VisibleManager()

    class Meta:
        ordering = ["site_id", "tag"]
        constraints = [
            models.UniqueConstraint(fields=["site", "tag"], name="unit_unique_tag_per_site"),
            models.CheckConstraint(
                condition=Q(lra_a__gt=models.F("rla_a")), name="unit_lra_above_rla"
            ),
            models.CheckConstraint(
                condition=Q(superheat_min_k__isnull=True)
                | Q(superheat_max_k__isnull=True)
                | Q(superheat_max_k__gte=models.F("superheat_min_k")),
                name="unit_superheat_range_ordered",
            ),
            models.CheckConstraint(
                condition=Q(retired_on__isnull=True)
                | Q(installed_on__isnull=True)
                | Q(retired_on__gte=models.F("installed_on")),
                name="unit_retired_after_installed",
            ),
            models.CheckConstraint(
                condition=Q(application__in=choices.Application.values),
                name="unit_application_valid",
            ),
            models.CheckConstraint(condition=Q(phase__in=[1, 3]), name="unit_phase_valid"),
            models.CheckConstraint(
                condition=Q(full_charge_basis__in=["", *choices.ChargeBasis.values]),
                name="unit_full_charge_basis_valid",
            ),
            models.CheckConstraint(
                condition=Q(head_pressure_control__in=["", *choices.HeadPressureControl.values]),
                name="unit_head_pressure_control_valid",
            ),
            models.CheckConstraint(
                condition=~Q(head_pressure_control=choices.HeadPressureControl.NONE)
                | Q(head_pressure_setpoint_c__isnull=True),
                name="unit_no_setpoint_without_control",
            ),
            models.CheckConstraint(
                condition=Q(design_temperature_basis__in=choices.TemperatureBasis.values),
                name="unit_temperature_basis_valid",
            ),
            models.CheckConstraint(
                condition=Q(nameplate_volts_max__isnull=True)
                | Q(nameplate_volts_max__gt=models.F("nameplate_volts")),
                name="unit_dual_rating_ordered",
            ),
            *limit_constraints("unit", UNIT_LIMITS),
        ]

    @classmethod
    def plate_matches(cls, text: str) -> Q:
        """Units whose tag, make-model-serial or compressor's model or serial holds
        ``text``, or one of whose parts' model or serial does: the one rule the office's
        search and the API's ``?plate=`` both use (a subquery, so a unit comes once)."""
        text = text.strip()
        # Component is defined on top of this module: found by name, not imported.
        parts = apps.get_model("fleet", "Component")._default_manager.filter(
            Q(serial_number__icontains=text) | Q(model_number__icontains=text)
        )
        return (
            Q(tag__icontains=text)
            | Q(serial_number__icontains=text)
            | Q(model_number__icontains=text)
            | Q(compressor_serial__icontains=text)
            | Q(compressor_model__icontains=text)
            | Q(pk__in=parts.values("unit_id"))
        )

    def __str__(self) -> str:
        return f"{self.tag} ({self.site.name})"

    def clean(self) -> None:
        errors = {}
        if self.rla_a is not None and self.lra_a is not None and self.lra_a <= self.rla_a:
            errors["lra_a"] = "locked-rotor amps must be above rated-load amps"
        if (
            self.superheat_min_k is not None
            and self.superheat_max_k is not None
            and self.superheat_max_k < self.superheat_min_k
        ):
            errors["superheat_max_k"] = "must not be below the minimum superheat"
        if self.installed_on and self.retired_on and self.retired_on < self.installed_on:
            errors["retired_on"] = "cannot be before the installation date"
        errors.update(record_date_errors(self, ("installed_on", "retired_on", "warranty_ends_on")))
        if (
            self.head_pressure_control == choices.HeadPressureControl.NONE
            and self.head_pressure_setpoint_c is not None
        ):
            errors["head_pressure_setpoint_c"] = (
                "a unit without head-pressure control has no set point; leave it blank or "
                "say which control holds it"
            )
        if (
            self.nameplate_volts is not None
            and self.nameplate_volts_max is not None
            and self.nameplate_volts_max <= self.nameplate_volts
        ):
            errors["nameplate_volts_max"] = (
                "must be above the nameplate voltage (the upper end of a dual rating such as "
                "208-230 V); leave it blank for a single rating"
            )
        if errors:
            raise ValidationError(errors)
