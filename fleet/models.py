"""The fleet records: who we serve, where, which systems, and what was found on each visit.

Everything is stored in SI (degrees C, kelvin for differences, kPa gauge as measured,
kg, A, V, uF); the API converts at the edge. Impossible values are refused twice: by
field validators (messages naming the field) and by database constraints.
"""

from __future__ import annotations

import math
import uuid
import zoneinfo
from typing import Any

from django.conf import settings
from django.core.exceptions import ValidationError
from django.db import models
from django.db.models import Q
from django.db.models.functions import Coalesce

from diagnostics.core.electrical import DEFAULT_RUN_CAPACITOR_TOLERANCE_PCT, run_capacitor_band

from . import choices
from . import reach as scope
from .limits import COMPONENT_LIMITS, EVENT_LIMITS, READING_LIMITS, SITE_LIMITS, UNIT_LIMITS
from .validation import limit_constraints, limit_validators


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
    tariff_per_kwh = models.DecimalField(max_digits=8, decimal_places=4, default=0.15)
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


class Unit(models.Model):
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


class Visit(models.Model):
    """A technician's time at a site: planned maintenance, a call, or a follow-up."""

    reference = models.CharField(max_length=30, unique=True, help_text="Our visit number.")
    site = models.ForeignKey(Site, on_delete=models.PROTECT, related_name="visits")
    units: models.ManyToManyField[Unit, VisitUnit] = models.ManyToManyField(
        Unit, through="VisitUnit", related_name="visits"
    )
    kind = models.CharField(max_length=20, choices=choices.VisitKind.choices)
    status = models.CharField(
        max_length=20, choices=choices.VisitStatus.choices, default=choices.VisitStatus.SCHEDULED
    )
    window_start = models.DateTimeField()
    window_end = models.DateTimeField()
    technicians = models.ManyToManyField(
        settings.AUTH_USER_MODEL, blank=True, related_name="assigned_visits"
    )
    reported_problem = models.TextField(blank=True)
    work_summary = models.TextField(blank=True)
    review_note = models.TextField(blank=True)
    reviewed_by = models.ForeignKey(
        settings.AUTH_USER_MODEL, null=True, blank=True, on_delete=models.PROTECT, related_name="+"
    )
    reviewed_at = models.DateTimeField(null=True, blank=True)
    submitted_at = models.DateTimeField(null=True, blank=True)
    created_at = models.DateTimeField(auto_now_add=True)
    updated_at = models.DateTimeField(auto_now=True)

    #: Who may see it: by role (``fleet.reach.visits``).
    reach = scope.Through(scope.visits)
    objects = scope.VisibleManager()

    class Meta:
        ordering = ["-window_start"]
        indexes = [models.Index(fields=["status", "window_start"])]
        constraints = [
            models.CheckConstraint(
                condition=Q(status__in=choices.VisitStatus.values), name="visit_status_valid"
            ),
            models.CheckConstraint(
                condition=Q(kind__in=choices.VisitKind.values), name="visit_kind_valid"
            ),
            models.CheckConstraint(
                condition=Q(window_end__gt=models.F("window_start")), name="visit_window_ordered"
            ),
            models.CheckConstraint(
                condition=~Q(status=choices.VisitStatus.REVIEWED)
                | Q(reviewed_by__isnull=False, reviewed_at__isnull=False),
                name="visit_reviewed_has_reviewer",
            ),
        ]

    def __str__(self) -> str:
        return f"{self.reference} {self.get_kind_display()} at {self.site.name}"

    def clean(self) -> None:
        if self.window_start and self.window_end and self.window_end <= self.window_start:
            raise ValidationError({"window_end": "must be after the start of the window"})


class VisitUnit(models.Model):
    """A unit covered by a visit. Readings and refrigerant events hang off this row, so the
    database itself refuses a reading for a unit that is not on its visit."""

    visit = models.ForeignKey(Visit, on_delete=models.CASCADE, related_name="visit_units")
    unit = models.ForeignKey(Unit, on_delete=models.PROTECT, related_name="visit_units")

    #: Who may see it: whoever sees its visit.
    reach = scope.Through(scope.visits, "visit__")
    objects = scope.VisibleManager()

    class Meta:
        constraints = [models.UniqueConstraint(fields=["visit", "unit"], name="visitunit_unique")]

    def __str__(self) -> str:
        return f"{self.unit.tag} on {self.visit.reference}"


def _band_of_rating() -> Q:
    """The range columns hold the band of the printed rating (``Component.rating_band_uf``,
    to a billionth of the rating), so no row can carry a rating and a range of its own.
    A change of the core's typical run-capacitor tolerance therefore comes with a migration
    that moves the stored bands of parts printed without one."""
    rated = models.F("rated_uf")
    tolerance = Coalesce("tolerance_pct", models.Value(DEFAULT_RUN_CAPACITOR_TOLERANCE_PCT))
    slack = rated * 1e-9
    low = rated * (1.0 - tolerance / 100.0)
    high = rated * (1.0 + tolerance / 100.0)
    return Q(
        rating_uf_min__gte=low - slack,
        rating_uf_min__lte=low + slack,
        rating_uf_max__gte=high - slack,
        rating_uf_max__lte=high + slack,
    )


class Component(models.Model):
    """A replaceable part of a unit, with its rating and its history.

    A capacitor's rating is given the way it is printed on the can: a run capacitor as
    microfarads plus or minus a tolerance (``rated_uf``, ``tolerance_pct``; EIA-456-A,
    IEC 60252-1), a start capacitor as a range (``rating_uf_min`` to ``rating_uf_max``;
    IEC 60252-2). ``rating_band_uf`` turns either into the band a measured value must lie
    in, and a part given as printed stores that band in the range columns too, so every
    reader of the range columns sees the same band.
    """

    unit = models.ForeignKey(Unit, on_delete=models.CASCADE, related_name="components")
    kind = models.CharField(max_length=30, choices=choices.ComponentKind.choices)
    rated_uf = models.FloatField(
        null=True,
        blank=True,
        validators=limit_validators(COMPONENT_LIMITS["rated_uf"]),
        help_text="Capacitors marked with a nominal value (run capacitors): the microfarads "
        "printed on the can. Give this or the range, not both.",
    )
    tolerance_pct = models.FloatField(
        null=True,
        blank=True,
        validators=limit_validators(COMPONENT_LIMITS["tolerance_pct"]),
        help_text="The plus-or-minus percent printed beside rated_uf. Blank on a run "
        "capacitor: the typical 6 %.",
    )
    rating_uf_min = models.FloatField(
        null=True,
        blank=True,
        help_text="Capacitors marked with a range (start capacitors): the lower end. For a "
        "part given by rated_uf, the lower end of its band, filled in from it.",
    )
    rating_uf_max = models.FloatField(
        null=True,
        blank=True,
        help_text="Capacitors marked with a range: the upper end. For a part given by "
        "rated_uf, the upper end of its band, filled in from it.",
    )
    rating_volts = models.FloatField(null=True, blank=True)
    installed_on = models.DateField(null=True, blank=True)
    removed_on = models.DateField(null=True, blank=True)
    changed_on_visit = models.ForeignKey(
        Visit, null=True, blank=True, on_delete=models.SET_NULL, related_name="components_changed"
    )
    reason = models.CharField(max_length=200, blank=True)

    #: Who may see it: whoever sees its unit.
    reach = scope.Through(scope.units, "unit__")
    objects = scope.VisibleManager()
    #: The band the range columns were filled with from the printed rating, as loaded or
    #: last saved (``_range_given``); unset on a part given by its range.
    _filled_band: tuple[float, float]

    class Meta:
        ordering = ["unit_id", "kind", "-installed_on"]
        constraints = [
            models.CheckConstraint(
                condition=Q(kind__in=choices.ComponentKind.values), name="component_kind_valid"
            ),
            models.CheckConstraint(
                condition=Q(rating_uf_min__isnull=True) | Q(rating_uf_min__gt=0),
                name="component_uf_min_positive",
            ),
            models.CheckConstraint(
                condition=Q(rating_uf_min__isnull=True)
                | Q(rating_uf_max__isnull=True)
                | Q(rating_uf_max__gte=models.F("rating_uf_min")),
                name="component_uf_range_ordered",
            ),
            models.CheckConstraint(
                condition=Q(tolerance_pct__isnull=True) | Q(rated_uf__isnull=False),
                name="component_tolerance_needs_rating",
            ),
            models.CheckConstraint(
                condition=Q(rated_uf__isnull=True)
                | Q(tolerance_pct__isnull=False)
                | Q(kind=choices.ComponentKind.RUN_CAPACITOR),
                name="component_default_tolerance_only_for_run",
            ),
            models.CheckConstraint(
                condition=Q(rated_uf__isnull=True) | _band_of_rating(),
                name="component_band_follows_rating",
            ),
            models.CheckConstraint(
                condition=Q(removed_on__isnull=True)
                | Q(installed_on__isnull=True)
                | Q(removed_on__gte=models.F("installed_on")),
                name="component_removed_after_installed",
            ),
            *limit_constraints("component", COMPONENT_LIMITS),
        ]

    def __str__(self) -> str:
        return f"{self.get_kind_display()} on {self.unit.tag}"

    def save(self, *args: Any, **kwargs: Any) -> None:
        self._store_band()
        update_fields = kwargs.get("update_fields")
        if update_fields is not None and {"rated_uf", "tolerance_pct"} & set(update_fields):
            kwargs["update_fields"] = {*update_fields, "rating_uf_min", "rating_uf_max"}
        super().save(*args, **kwargs)

    def clean(self) -> None:
        errors = {}
        if self.rated_uf is None:
            if self.tolerance_pct is not None:
                errors["tolerance_pct"] = "a tolerance belongs to a printed rating: give rated_uf"
            elif self.kind == choices.ComponentKind.RUN_CAPACITOR and (
                self.rating_uf_min is not None and self.rating_uf_max in (None, self.rating_uf_min)
            ):
                errors["rating_uf_max"] = (
                    "a run capacitor marked with one value is given as rated_uf (with the "
                    "printed tolerance_pct, or the typical 6 %), not as a range of one value"
                )
        elif self.tolerance_pct is None and self.kind != choices.ComponentKind.RUN_CAPACITOR:
            errors["tolerance_pct"] = (
                "give the tolerance printed beside rated_uf, or the range printed on the can "
                "(rating_uf_min to rating_uf_max), as start capacitors are marked"
            )
        elif self._range_given():
            errors["rated_uf"] = (
                "give the rating as printed: rated_uf (with tolerance_pct) or the range "
                "rating_uf_min to rating_uf_max, not both"
            )
        if (
            self.rating_uf_min is not None
            and self.rating_uf_max is not None
            and self.rating_uf_max < self.rating_uf_min
        ):
            errors["rating_uf_max"] = "must not be below the lowest rating"
        if self.installed_on and self.removed_on and self.removed_on < self.installed_on:
            errors["removed_on"] = "cannot be before the installation date"
        if errors:
            raise ValidationError(errors)
        self._store_band()

    def rating_band_uf(self) -> tuple[float, float] | None:
        """The microfarads a measured value of this part must lie in; None when unrated.

        The one rule for every reader: a printed rating plus or minus its tolerance (a run
        capacitor with none printed: the typical 6 %, docs/references.md §4), else the range, whose
        upper end defaults to its lower one.
        """
        if self.rated_uf is not None:
            tolerance = self.applied_tolerance_pct
            if tolerance is None:
                return None  # refused by clean() and a constraint
            return run_capacitor_band(self.rated_uf, tolerance)
        if self.rating_uf_min is None:
            return None
        high = self.rating_uf_max if self.rating_uf_max is not None else self.rating_uf_min
        return self.rating_uf_min, high

    @property
    def applied_tolerance_pct(self) -> float | None:
        """The tolerance a printed rating is judged with: the printed one, else (on a run
        capacitor only) the typical 6 %."""
        if self.tolerance_pct is not None:
            return self.tolerance_pct
        if self.kind == choices.ComponentKind.RUN_CAPACITOR:
            return DEFAULT_RUN_CAPACITOR_TOLERANCE_PCT
        return None

    @classmethod
    def from_db(cls, db: str | None, field_names: Any, values: Any) -> Component:
        instance = super().from_db(db, field_names, values)
        loaded = instance.__dict__
        if loaded.get("rated_uf") is not None:
            # A printed rating always stores its band (a check constraint holds them equal).
            low, high = loaded.get("rating_uf_min"), loaded.get("rating_uf_max")
            if low is not None and high is not None:
                instance._filled_band = (low, high)
        return instance

    def _range_given(self) -> bool:
        """Whether the range columns of a part with a printed rating hold a range of their
        own: neither empty, nor the band filled in from a rating (this one, or the one
        stored before an edit), nor that band echoed back by a client (to a millionth)."""
        given = (self.rating_uf_min, self.rating_uf_max)
        if given == (None, None):
            return False
        return not any(
            band is not None
            and all(
                value is not None and math.isclose(value, edge, rel_tol=1e-6)
                for value, edge in zip(given, band, strict=True)
            )
            for band in (self.rating_band_uf(), getattr(self, "_filled_band", None))
        )

    def _store_band(self) -> None:
        """A part given as printed keeps its band in the range columns, which the history,
        the reports and ``start_risk.fitted_capacitor`` read."""
        if self.rated_uf is None:
            return
        band = self.rating_band_uf()
        if band is not None:
            self.rating_uf_min, self.rating_uf_max = band
            self._filled_band = band


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


class AuditAction(models.TextChoices):
    CREATED = "created", "Created"
    CHANGED = "changed", "Changed"
    MOVED = "moved", "Status changed"
    DELETED = "deleted", "Deleted"


class AuditEntry(models.Model):
    """Who created, changed, moved or deleted a visit, reading set or refrigerant event, and
    what changed, so an office edit after submission can always be told from the original.

    ``changes`` maps each field to ``[old, new]`` (SI, as stored); a creation lists the stored
    values as ``[null, new]``. The record is named by content type and id rather than by a
    foreign key, so the trail outlives a deleted record.
    """

    at = models.DateTimeField()
    actor = models.ForeignKey(
        settings.AUTH_USER_MODEL,
        null=True,
        blank=True,
        on_delete=models.PROTECT,
        related_name="audit_entries",
    )
    action = models.CharField(max_length=10, choices=AuditAction.choices)
    record_type = models.ForeignKey(
        "contenttypes.ContentType", on_delete=models.PROTECT, related_name="+"
    )
    record_id = models.PositiveBigIntegerField()
    #: The visit the record belongs to, kept as a plain id so the trail survives deletion.
    visit_id = models.PositiveBigIntegerField(null=True, blank=True)
    changes = models.JSONField(default=dict, blank=True)
    note = models.TextField(blank=True)

    #: Who may see it: whoever sees its visit.
    reach = scope.Through(scope.visit_trail)
    objects = scope.VisibleManager()

    class Meta:
        ordering = ["at", "id"]
        verbose_name_plural = "audit entries"
        indexes = [
            models.Index(fields=["record_type", "record_id"]),
            models.Index(fields=["visit_id", "at"]),
        ]
        constraints = [
            models.CheckConstraint(
                condition=Q(action__in=AuditAction.values),
                name="auditentry_action_valid",
            ),
        ]

    def __str__(self) -> str:
        return f"{self.get_action_display()} {self.record_type.model} {self.record_id} at {self.at}"
