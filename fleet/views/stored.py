"""Stored results as the pages show them: a diagnosis judged by the report's rule, the
cautions of several, a record's diagnosis or leak rate when it has one, and the units of a
visit with what was recorded on them."""

from __future__ import annotations

from collections.abc import Iterable
from dataclasses import dataclass

from diagnostics.core.details import Details
from diagnostics.models import Diagnosis, Flag, LeakRate
from fleet.models import ReadingSet, RefrigerantEvent, Unit, Visit, VisitUnit
from reports.data import Health
from reports.summary import judge_stored, severity_rank, worst


def diagnosis_condition(
    diagnosis: Diagnosis, flags: Iterable[Flag] = (), application: str = ""
) -> Health:
    """A stored diagnosis (and the unit's open flags) judged by the rule the monthly report
    uses (``reports.summary.judge``), so a page and the report say the same."""
    return stored_condition(diagnosis.score, diagnosis.details, flags, application)


def stored_condition(
    score: float | None, details: Details, flags: Iterable[Flag] = (), application: str = ""
) -> Health:
    """``diagnosis_condition`` for a diagnosis read as values (its score and the details of
    its document), as the lists read many at once."""
    return judge_stored(
        score,
        details["metrics"],
        details["findings"],
        [
            (f.get_kind_display(), f.get_severity_display(), severity_rank(f.severity))
            for f in flags
        ],
        application=application,
    )


def cautions_of(diagnoses: Iterable[Diagnosis]) -> list[dict]:
    seen: dict[str, dict] = {}
    for diagnosis in diagnoses:
        for caution in diagnosis.cautions:
            seen.setdefault(caution["code"], caution)
    return list(seen.values())


def diagnosis_of(reading_set: ReadingSet) -> Diagnosis | None:
    try:
        return reading_set.diagnosis
    except Diagnosis.DoesNotExist:
        return None


def leak_rate_of(event: RefrigerantEvent) -> LeakRate | None:
    try:
        return event.leak_rate
    except LeakRate.DoesNotExist:
        return None


@dataclass
class CoveredUnit:
    """One unit on a visit with its readings, their diagnoses and refrigerant records."""

    visit_unit: VisitUnit
    readings: list[tuple[ReadingSet, Diagnosis | None]]
    events: list[tuple[RefrigerantEvent, LeakRate | None]]

    @property
    def unit(self) -> Unit:
        return self.visit_unit.unit

    @property
    def lowest_score(self) -> float | None:
        scores = [d.score for _, d in self.readings if d is not None and d.score is not None]
        return min(scores) if scores else None

    @property
    def condition(self) -> Health | None:
        """The most urgent condition among the unit's diagnosed readings on this visit."""
        application = self.unit.application
        return worst(
            diagnosis_condition(d, application=application)
            for _, d in self.readings
            if d is not None
        )


def covered_units(visit: Visit) -> list[CoveredUnit]:
    return [
        CoveredUnit(
            vu,
            [(rs, diagnosis_of(rs)) for rs in vu.reading_sets.all()],
            [(ev, leak_rate_of(ev)) for ev in vu.refrigerant_events.all()],
        )
        for vu in visit.visit_units.all()
    ]
