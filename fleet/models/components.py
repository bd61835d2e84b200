"""A unit's replaceable parts and their ratings: a capacitor's rating is stored as printed
and as the band a measured value must lie in, one rule for every reader."""

from __future__ import annotations

import math
from typing import Any

from django.core.exceptions import ValidationError
from django.db import models
from django.db.models import Q
from django.db.models.functions import Coalesce

from diagnostics.core.electrical import DEFAULT_RUN_CAPACITOR_TOLERANCE_PCT, run_capacitor_band

from .. import choices
from .. import reach as scope
from ..limits import COMPONENT_LIMITS
from ..validation import limit_constraints, limit_validators, record_date_errors
from .equipment import Nameplate
from .units import Unit
from .visits import Visit


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


#: What a part is and its rating as printed: the fields of every form that writes a part.
PART_FIELDS = (
    "kind",
    "rated_uf",
    "tolerance_pct",
    "rating_uf_min",
    "rating_uf_max",
    "rating_volts",
)


class Component(Nameplate):
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
    #: Chosen by the phone when a technician records a part fitted on a visit, so a retried
    #: post stores nothing new; blank for parts the office enters.
    client_id = models.UUIDField(null=True, blank=True, unique=True, editable=False)

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
        errors.update(record_date_errors(self, ("installed_on", "removed_on")))
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
        the reports and ``start_history.fitted_capacitor`` read."""
        if self.rated_uf is None:
            return
        band = self.rating_band_uf()
        if band is not None:
            self.rating_uf_min, self.rating_uf_max = band
            self._filled_band = band
