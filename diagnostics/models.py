"""Stored results of the diagnostics core: one diagnosis per reading set, leak rates per
refrigerant addition, and open flags per unit.

A stored result keeps the algorithm version and the targets it used, so an old report
shows what was computed then; `manage.py rescore` replaces diagnoses whose version is stale.
"""

from __future__ import annotations

from collections.abc import Iterable, Mapping, Sequence
from functools import cached_property
from typing import Any

from django.conf import settings
from django.db import models
from django.db.models import Q

from diagnostics.core import diagnose as core_diagnose
from diagnostics.core import wording
from diagnostics.core.numeric import FloatArray
from fleet import reach as scope
from fleet.display import display_for
from fleet.models import ReadingSet, RefrigerantEvent, Unit


class DiagnosisQuerySet(scope.VisibleQuerySet["Diagnosis"]):
    """Stored diagnoses, queried by what their documents hold and scoped to a user's reach."""

    def with_finding(self, code: str) -> DiagnosisQuerySet:
        """Diagnoses that found ``code`` (a ``findings.RULES`` code): a key lookup in the
        document, the same SQL question on SQLite and PostgreSQL."""
        return self.filter(document__findings__has_key=code)

    def with_metric_status(self, name: str, status: str) -> DiagnosisQuerySet:
        """Diagnoses whose metric ``name`` was judged ``status`` (``ok``, ``watch``,
        ``fault``, ``not_scored``: the first item of the metric's row in the document), so
        a list reads only the rows it shows; the same SQL question on SQLite and
        PostgreSQL."""
        return self.filter(**{f"document__metrics__{name}__0": status})


class Diagnosis(models.Model):
    """The core's judgement on one reading set: the score and the values trends read as
    columns, everything else (targets, metrics, findings, cautions) in ``document``, the
    core's stored form (``diagnostics.core.stored``: versioned JSON of numbers and codes),
    whose texts ``details`` writes when it is read."""

    reading_set = models.OneToOneField(
        ReadingSet, on_delete=models.CASCADE, related_name="diagnosis"
    )
    algorithm_version = models.CharField(max_length=20)
    score = models.FloatField(
        null=True, blank=True, help_text="0-100; empty when the set held nothing to judge."
    )
    energy_penalty_pct = models.FloatField(null=True, blank=True)
    # Derived values kept as columns so trends read a unit's history without reading the
    # details; each only where the diagnosis judged it (a held head's split is empty).
    evaporating_c = models.FloatField(null=True, blank=True)
    condensing_c = models.FloatField(null=True, blank=True)
    superheat_k = models.FloatField(null=True, blank=True)
    subcooling_k = models.FloatField(null=True, blank=True)
    evaporator_td_k = models.FloatField(null=True, blank=True)
    condenser_split_k = models.FloatField(null=True, blank=True)
    compression_ratio = models.FloatField(null=True, blank=True)
    computed_at = models.DateTimeField()
    document = models.JSONField(
        default=dict,
        help_text="The core's stored form: numbers and codes, with its document_version "
        "(diagnostics.core.stored); empty when nothing was stored.",
    )

    #: Who may see it: whoever sees its unit.
    reach = scope.Through(scope.units, "reading_set__visit_unit__unit__")
    objects = DiagnosisQuerySet.as_manager()

    class Meta:
        verbose_name_plural = "diagnoses"
        indexes = [
            models.Index(fields=["algorithm_version"]),
            # The few boxes judged far off design, which the attention list starts from
            # (``with_metric_status("box_temp", "fault")`` is this condition).
            models.Index(
                fields=["reading_set"],
                condition=Q(document__metrics__box_temp__0="fault"),
                name="diagnosis_box_fault",
            ),
        ]
        constraints = [
            models.CheckConstraint(
                condition=Q(score__isnull=True) | Q(score__gte=0, score__lte=100),
                name="diagnosis_score_0_100",
            ),
        ]

    def __str__(self) -> str:
        if self.score is None:
            return f"not enough readings to judge ({self.algorithm_version})"
        return f"score {self.score:.0f} ({self.algorithm_version})"

    @cached_property
    def details(self) -> core_diagnose.Details:
        """Targets, metrics, findings, cautions and glide choice with their texts."""
        return core_diagnose.read_details([self.document])[0]

    @staticmethod
    def attach_details(diagnoses: Iterable[Diagnosis | None]) -> None:
        """Read many diagnoses in one pass (a page or report of them) instead of one by one."""
        rows = [d for d in diagnoses if d is not None and "details" not in d.__dict__]
        for diagnosis, details in zip(
            rows, core_diagnose.read_details([d.document for d in rows]), strict=True
        ):
            diagnosis.details = details

    @staticmethod
    def details_of(documents: Sequence[object]) -> list[core_diagnose.Details]:
        """The details of stored documents fetched as values (``details``' texts), in one
        pass: for readers that select the documents with other columns."""
        return core_diagnose.read_details(documents)

    @staticmethod
    def numbers_of(documents: Sequence[object], names: Sequence[str]) -> dict[str, FloatArray]:
        """Some numbers of stored documents (``stored.read_numbers`` names them: a
        saturation target such as ``condensing_c``, or a metric's ``superheat:low``), NaN
        where a document holds none."""
        return core_diagnose.read_numbers(documents, names)

    @property
    def targets(self) -> list[dict[str, Any]]:
        return self.details["targets"]

    @property
    def metrics(self) -> list[dict[str, Any]]:
        return self.details["metrics"]

    @property
    def findings(self) -> list[dict[str, Any]]:
        return self.details["findings"]

    @property
    def cautions(self) -> list[dict[str, Any]]:
        return self.details["cautions"]

    @property
    def glide_choice(self) -> str:
        return self.details["glide_choice"]


class LeakRate(models.Model):
    """The leak rate an addition showed, by both EPA methods, under the rule set in force."""

    event = models.OneToOneField(
        RefrigerantEvent, on_delete=models.CASCADE, related_name="leak_rate"
    )
    rule_set = models.CharField(max_length=60)
    method = models.CharField(
        max_length=20, help_text="The facility's method: annualizing or rolling_average."
    )
    annualizing_percent = models.FloatField(null=True, blank=True)
    rolling_average_percent = models.FloatField(null=True, blank=True)
    threshold_percent = models.FloatField(null=True, blank=True)
    over_threshold = models.BooleanField(default=False)
    in_scope = models.BooleanField(default=True)
    repair_due_on = models.DateField(null=True, blank=True)
    verification_due_on = models.DateField(null=True, blank=True)
    note = models.TextField(blank=True)
    computed_at = models.DateTimeField()

    #: Who may see it: whoever sees its unit.
    reach = scope.Through(scope.units, "event__visit_unit__unit__")
    objects = scope.VisibleManager()

    class Meta:
        ordering = ["event__occurred_on"]

    def __str__(self) -> str:
        return f"leak rate for event {self.event_id}"


class FlagKind(models.TextChoices):
    HEAD_PRESSURE_DRIFT = "head_pressure_drift", "Head pressure drifting up"
    START_COMPONENTS = "start_components", "Start components at risk"
    LEAK_RATE = "leak_rate", "Leak rate over the threshold"
    MAINTENANCE_OVERDUE = "maintenance_overdue", "Planned maintenance overdue"


class FlagSeverity(models.TextChoices):
    NOTICE = "notice", "Notice"
    WARNING = "warning", "Warning"
    URGENT = "urgent", "Urgent"


class Flag(models.Model):
    """Something about a unit that needs the office's attention before it becomes a failure."""

    unit = models.ForeignKey(Unit, on_delete=models.CASCADE, related_name="flags")
    kind = models.CharField(max_length=30, choices=FlagKind.choices)
    severity = models.CharField(max_length=10, choices=FlagSeverity.choices)
    summary = models.CharField(
        max_length=300, help_text="May name forecast quantities as {name} (SI, filled when read)."
    )
    evidence = models.JSONField(default=list)
    projected_on = models.DateField(null=True, blank=True)
    forecast = models.JSONField(
        default=dict,
        blank=True,
        help_text="The flag's numbers: quantities [[name, value, SI unit], ...] and dates "
        "{name: ISO date}.",
    )
    opened_at = models.DateTimeField()
    updated_at = models.DateTimeField()
    cleared_at = models.DateTimeField(null=True, blank=True)
    acknowledged_by = models.ForeignKey(
        settings.AUTH_USER_MODEL, null=True, blank=True, on_delete=models.PROTECT, related_name="+"
    )
    acknowledged_at = models.DateTimeField(null=True, blank=True)
    acknowledgement_note = models.TextField(blank=True)

    #: Who may see it: whoever sees its unit.
    reach = scope.Through(scope.units, "unit__")
    objects = scope.VisibleManager()

    class Meta:
        ordering = ["-opened_at"]
        constraints = [
            models.UniqueConstraint(
                fields=["unit", "kind"],
                condition=Q(cleared_at__isnull=True),
                name="flag_one_open_per_unit_kind",
            ),
            models.CheckConstraint(condition=Q(kind__in=FlagKind.values), name="flag_kind_valid"),
        ]

    def __str__(self) -> str:
        return f"{self.get_kind_display()} on unit {self.unit_id}"

    @property
    def forecast_quantities(self) -> list[tuple[str, float, str]]:
        return [tuple(q) for q in self.forecast.get("quantities", ())]

    def summary_for(self, reader: Mapping[str, str]) -> str:
        """The summary with its numbers in the reader's units (``display_for(...).units``)."""
        return wording.fill(self.summary, self.forecast_quantities, reader)

    @property
    def shown_summary(self) -> str:
        """The summary in the contractor's display units (the office pages)."""
        return self.summary_for(display_for().units)

    @property
    def shown_evidence(self) -> list[dict[str, Any]]:
        """The evidence in the contractor's display units (the office pages)."""
        return self.evidence_for(display_for().units)

    def evidence_for(self, reader: Mapping[str, str]) -> list[dict[str, Any]]:
        """Each piece of evidence as text in the reader's units, with its date."""
        return [
            {
                "text": wording.fill(
                    e.get("text", ""), map(tuple, e.get("quantities", ())), reader
                ),
                "observed_on": e.get("observed_on"),
            }
            if isinstance(e, dict)
            else {"text": str(e), "observed_on": None}
            for e in self.evidence
        ]
