"""One site-month turned into plain data: every query of a monthly report lives here.

``gather_site_month`` runs a fixed number of queries (nine) whatever the number of units,
visits or readings: each asks for rows with ``values()`` over the whole site, and the rows are
grouped per unit in plain loops. Nothing past this module holds an ORM object, so the charts
and the templates cannot trigger a query.

What is read, and why:
- readings and their stored diagnoses over the twelve months ending with the report month
  (the trend charts read their targets and bands from the stored diagnoses through
  ``Diagnosis.numbers_of``; the month's checks have their details, metrics, findings and
  cautions, written out by ``Diagnosis.details_of``);
- the stored leak rates of the refrigerant additions in that window (computed by the
  diagnostics core when the addition was recorded; not recomputed here);
- the flags as they stood at the end of the month (or now, for a month not over yet): a
  report for a past month shows the fleet as it was then, so a flag opened after the
  month is left out and one cleared after it shows as open;
- the month's visits, their technicians and units;
- the components fitted or removed in the window.
"""

from __future__ import annotations

import math
from collections import defaultdict
from dataclasses import dataclass
from datetime import date, datetime, tzinfo
from statistics import fmean
from typing import Any
from zoneinfo import ZoneInfo

from django.db.models import Q

from diagnostics.core import leaks, start_risk
from diagnostics.core.scoring import SCORING_TABLE
from diagnostics.core.types import Caution
from diagnostics.models import Diagnosis, Flag, FlagKind, FlagSeverity
from fleet import choices
from fleet.models import Component, ReadingSet, RefrigerantEvent, Site, Unit, Visit, VisitUnit

from . import summary, words
from .months import Month

#: Months of history the trend charts cover, the report month included.
WINDOW_MONTHS = 12


# --- the plain data -----------------------------------------------------------------------------


@dataclass(frozen=True)
class SiteInfo:
    id: int
    name: str
    customer: str
    address: str
    time_zone: str
    elevation_m: float
    design_ambient_c: float
    tariff_per_kwh: float
    currency: str


@dataclass(frozen=True)
class CapacitorRating:
    kind_label: str
    low_uf: float
    high_uf: float


@dataclass(frozen=True)
class UnitInfo:
    """Nameplate and design data, as stored (SI)."""

    id: int
    tag: str
    description: str
    application: str
    application_label: str
    appliance_type_label: str
    refrigerant: str
    safety_class: str
    gwp: float
    full_charge_kg: float
    metering_label: str
    condenser_label: str
    has_receiver: bool
    design_box_temp_c: float
    design_evap_td_k: float | None
    design_condenser_split_k: float | None
    high_pressure_cutout_kpa_gauge: float | None
    nameplate_volts: float
    phase: int
    hertz: int
    rla_a: float
    lra_a: float
    installed_on: date | None
    run_capacitor: CapacitorRating | None
    start_capacitor: CapacitorRating | None

    @property
    def flammable(self) -> bool:
        """Safety classes 2L, 2 and 3 (ASHRAE 34) burn; class 1 does not."""
        return not self.safety_class.upper().endswith("1")

    @property
    def is_ice_machine(self) -> bool:
        """Judged on its refrigerant circuit and electrics, not on a box temperature."""
        return self.application == "ice_machine"


@dataclass(frozen=True)
class MetricRow:
    """A stored metric (the core's ``Metric``) with the label the report prints."""

    name: str
    label: str
    measured: float | None
    target: float | None
    low: float | None
    high: float | None
    deviation: float | None
    unit: str
    status: str
    points_lost: float
    reason: str

    @property
    def verdict(self) -> words.Verdict:
        return words.verdict(self.status, self.deviation)


@dataclass(frozen=True)
class FindingRow:
    """A stored finding as the report reads it; ``alternatives`` (codes the readings cannot
    tell apart from it) and ``deciding_check`` are empty where the stored form has none."""

    code: str
    title: str
    evidence: tuple[str, ...]
    confidence: float
    advice: str
    alternatives: tuple[str, ...] = ()
    deciding_check: str = ""

    @property
    def strength(self) -> str:
        return words.evidence_strength(len(self.evidence))

    @property
    def could_also_be(self) -> str:
        return words.could_also_be(self.alternatives, self.deciding_check)


@dataclass(frozen=True)
class Check:
    """One diagnosed reading set taken in the report month."""

    reading_set_id: int
    visit_reference: str
    taken_at: datetime
    stage: str
    stage_label: str
    score: float | None
    algorithm_version: str
    glide_choice: str
    energy_penalty_pct: float | None
    metrics: tuple[MetricRow, ...]
    findings: tuple[FindingRow, ...]
    cautions: tuple[Caution, ...]
    compressor_running: bool | None
    mean_amps: float | None
    mean_volts: float | None


@dataclass(frozen=True)
class HistoryPoint:
    """One visit's values for the trend charts (the as-found reading where there is one)."""

    taken_on: date
    score: float | None
    box_temp_c: float | None
    entering_air_c: float | None
    evaporating_c: float | None
    evaporating_target_c: float | None
    condensing_c: float | None
    condensing_target_c: float | None
    superheat_k: float | None
    superheat_low_k: float | None
    superheat_high_k: float | None
    subcooling_k: float | None
    subcooling_low_k: float | None
    subcooling_high_k: float | None
    amps_a: float | None
    compressor_running: bool | None
    run_capacitor_uf: float | None
    start_capacitor_uf: float | None


@dataclass(frozen=True)
class EvidenceRow:
    """A flag's evidence: ``text`` names its ``quantities`` (SI) as ``{name}``; the report
    writes them in its display units (``report_format.said``)."""

    text: str
    observed_on: date | None
    quantities: tuple[tuple[str, float, str], ...]


@dataclass(frozen=True)
class FlagRow:
    id: int
    kind: str
    kind_label: str
    severity: str
    severity_label: str
    severity_rank: int
    summary: str
    evidence: tuple[EvidenceRow, ...]
    projected_on: date | None
    opened_on: date
    #: The flag's numbers (SI), which ``summary`` may name as ``{name}``.
    forecast: tuple[tuple[str, float, str], ...]
    #: Acknowledged by the office by the time the flags were read (the note stays internal).
    acknowledged: bool


@dataclass(frozen=True)
class LeakRateRow:
    """A refrigerant addition and the leak rate stored for it (None where none is stored)."""

    event_id: int
    occurred_on: date
    amount_kg: float
    exemption: str
    visit_reference: str
    computed: bool
    rule_set: str
    method: str
    annualizing_percent: float | None
    rolling_average_percent: float | None
    threshold_percent: float | None
    over_threshold: bool
    in_scope: bool
    repair_due_on: date | None
    verification_due_on: date | None
    note: str

    @property
    def leak_rate_percent(self) -> float | None:
        """The rate by the facility's chosen method (the one compared with the threshold)."""
        if self.method == "annualizing":
            return self.annualizing_percent
        return self.rolling_average_percent


@dataclass(frozen=True)
class ComponentRow:
    kind: str
    kind_label: str
    installed_on: date | None
    removed_on: date | None
    reason: str
    rating_uf_min: float | None
    rating_uf_max: float | None
    visit_reference: str


@dataclass(frozen=True)
class VisitInfo:
    id: int
    reference: str
    kind: str
    kind_label: str
    status: str
    status_label: str
    starts_at: datetime
    technicians: tuple[str, ...]
    unit_tags: tuple[str, ...]
    reported_problem: str
    work_summary: str


@dataclass(frozen=True)
class UnitMonth:
    """Everything the report says about one unit, raw and judged."""

    unit: UnitInfo
    checks: tuple[Check, ...]
    history: tuple[HistoryPoint, ...]
    flags: tuple[FlagRow, ...]
    leak_rates: tuple[LeakRateRow, ...]
    components: tuple[ComponentRow, ...]
    added_kg_month: float
    current: Check | None
    as_left: Check | None
    health: summary.Health
    story: summary.Story
    energy: summary.EnergyEstimate | None
    actions: tuple[str, ...]

    @property
    def trend(self) -> summary.Trend:
        return self.story.trend


@dataclass(frozen=True)
class SiteMonth:
    """A site-month as plain data: the input of the charts and the templates."""

    site: SiteInfo
    month: Month
    window_start: Month
    #: When the flags were read: the end of the month, or when the report was made if the
    #: month was not over yet.
    as_of: datetime
    units: tuple[UnitMonth, ...]
    visits: tuple[VisitInfo, ...]
    refrigerant: leaks.SiteLeakTotals
    overview: summary.SiteOverview
    attention: tuple[UnitMonth, ...]
    algorithm_versions: tuple[str, ...]
    glide_choices: tuple[str, ...]
    leak_rules: tuple[tuple[str, str], ...]
    #: Where the flags' limits come from, taken out of their texts for the methods appendix.
    provenance: tuple[str, ...] = ()

    @property
    def month_closed(self) -> bool:
        """The flags are read at the month's end (the month was over when it was made)."""
        return self.as_of >= self.month.end_in(self.as_of.tzinfo)

    @property
    def has_visits(self) -> bool:
        return bool(self.visits)

    @property
    def algorithm_version(self) -> str:
        """The diagnosis algorithm version(s) behind the numbers, as stored on the report."""
        return ", ".join(self.algorithm_versions)


# --- small conversions --------------------------------------------------------------------------


def _num(value: Any) -> float | None:
    """A JSON or column number as float; None, NaN and non-numbers as None."""
    if value is None or isinstance(value, bool):
        return None
    try:
        number = float(value)
    except (TypeError, ValueError):
        return None
    return None if number != number else number


def _mean(values: list[float | None]) -> float | None:
    present = [v for v in values if v is not None]
    return fmean(present) if present else None


def _labels(choice_class: Any) -> dict[str, str]:
    return {value: str(label) for value, label in choice_class.choices}


def _person(first: str, last: str, username: str) -> str:
    full = f"{first} {last}".strip()
    return full or username


_SEVERITY_LABELS = _labels(FlagSeverity)
_KIND_LABELS = _labels(FlagKind)


def _evidence_rows(raw: Any, provenance: list[str]) -> tuple[EvidenceRow, ...]:
    """A flag's stored evidence; the asides saying where a limit came from go to
    ``provenance`` (the methods appendix), not into the customer's copy."""
    rows = []
    for item in raw if isinstance(raw, list) else []:
        if isinstance(item, str):
            rows.append(EvidenceRow(_customer_text(item, provenance), None, ()))
            continue
        if not isinstance(item, dict):
            continue
        observed = item.get("observed_on")
        try:
            observed_on = date.fromisoformat(observed) if observed else None
        except (TypeError, ValueError):
            observed_on = None
        quantities = []
        for q in item.get("quantities") or ():
            if isinstance(q, list | tuple) and len(q) == 3 and _num(q[1]) is not None:
                quantities.append((str(q[0]), float(q[1]), str(q[2])))
        text = _customer_text(str(item.get("text", "")), provenance)
        rows.append(EvidenceRow(text, observed_on, tuple(quantities)))
    return tuple(rows)


def _customer_text(text: str, provenance: list[str]) -> str:
    kept, moved = words.split_provenance(text)
    provenance.extend(moved)
    return kept


# --- the queries --------------------------------------------------------------------------------


_READING_COLUMNS = (
    "id",
    "visit_unit__unit_id",
    "visit_unit__visit__reference",
    "taken_at",
    "stage",
    "box_temp_c",
    "entering_air_temp_c",
    "compressor_amps_1",
    "compressor_amps_2",
    "compressor_amps_3",
    "supply_volts_1",
    "supply_volts_2",
    "supply_volts_3",
    "run_capacitor_uf",
    "start_capacitor_uf",
    "compressor_running",
    "diagnosis__id",
    "diagnosis__score",
    "diagnosis__algorithm_version",
    "diagnosis__evaporating_c",
    "diagnosis__condensing_c",
    "diagnosis__superheat_k",
    "diagnosis__subcooling_k",
    "diagnosis__energy_penalty_pct",
    "diagnosis__document",
)

#: The stored targets and ok bands a trend point draws: HistoryPoint field -> the number's
#: name in a stored diagnosis (``Diagnosis.numbers_of``).
_TREND_TARGETS = {
    "evaporating_target_c": "evaporating_c",
    "condensing_target_c": "condensing_c",
    "superheat_low_k": "superheat:low",
    "superheat_high_k": "superheat:high",
    "subcooling_low_k": "subcooling:low",
    "subcooling_high_k": "subcooling:high",
}


def _with_trend_targets(rows: list[dict[str, Any]]) -> list[dict[str, Any]]:
    """Reading rows with their stored targets and bands (``_TREND_TARGETS``) added, read
    from their stored diagnoses in one pass; None where a diagnosis has none."""
    columns = Diagnosis.numbers_of(
        [r["diagnosis__document"] for r in rows], list(_TREND_TARGETS.values())
    )
    for key, name in _TREND_TARGETS.items():
        for row, value in zip(rows, columns[name].tolist(), strict=True):
            row[key] = value if math.isfinite(value) else None
    return rows


def _site(site_id: int) -> SiteInfo:
    row = (
        Site.objects.filter(pk=site_id)
        .values(
            "id",
            "name",
            "customer__name",
            "address",
            "time_zone",
            "elevation_m",
            "design_ambient_c",
            "tariff_per_kwh",
            "currency",
        )
        .get()
    )
    return SiteInfo(
        id=row["id"],
        name=row["name"],
        customer=row["customer__name"],
        address=row["address"],
        time_zone=row["time_zone"],
        elevation_m=row["elevation_m"],
        design_ambient_c=row["design_ambient_c"],
        tariff_per_kwh=float(row["tariff_per_kwh"]),
        currency=row["currency"],
    )


def _components(site_id: int) -> dict[int, list[dict[str, Any]]]:
    by_unit: dict[int, list[dict[str, Any]]] = defaultdict(list)
    for row in (
        Component.objects.filter(unit__site_id=site_id)
        .order_by("unit_id", "installed_on", "id")
        .values(
            "id",
            "unit_id",
            "kind",
            "rating_uf_min",
            "rating_uf_max",
            "installed_on",
            "removed_on",
            "reason",
            "changed_on_visit__reference",
        )
    ):
        by_unit[row["unit_id"]].append(row)
    return by_unit


def _fitted_rating(parts: list[dict[str, Any]], role: str, on: date) -> CapacitorRating | None:
    """The rating of the capacitor of a role in service on ``on``."""
    newest = start_risk.fitted_capacitor(parts, role, on)
    if newest is None:
        return None
    high = newest["rating_uf_max"]
    return CapacitorRating(
        _labels(choices.ComponentKind).get(newest["kind"], newest["kind"]),
        newest["rating_uf_min"],
        high if high is not None else newest["rating_uf_min"],
    )


def _units(
    site_id: int, month: Month, components: dict[int, list[dict[str, Any]]]
) -> list[UnitInfo]:
    app = _labels(choices.Application)
    appliance = _labels(choices.ApplianceType)
    metering = _labels(choices.MeteringDevice)
    condenser = _labels(choices.CondenserType)
    rows = (
        Unit.objects.filter(site_id=site_id)
        .filter(Q(retired_on__isnull=True) | Q(retired_on__gte=month.first_day))
        .filter(Q(installed_on__isnull=True) | Q(installed_on__lte=month.last_day))
        .order_by("tag")
        .values(
            "id",
            "tag",
            "description",
            "application",
            "appliance_type",
            "refrigerant__designation",
            "refrigerant__safety_class",
            "refrigerant__gwp",
            "full_charge_kg",
            "metering_device",
            "condenser_type",
            "has_receiver",
            "design_box_temp_c",
            "design_evap_td_k",
            "design_condenser_split_k",
            "high_pressure_cutout_kpa_gauge",
            "nameplate_volts",
            "phase",
            "hertz",
            "rla_a",
            "lra_a",
            "installed_on",
        )
    )
    out = []
    for r in rows:
        parts = components.get(r["id"], [])
        out.append(
            UnitInfo(
                id=r["id"],
                tag=r["tag"],
                description=r["description"],
                application=r["application"],
                application_label=app.get(r["application"], r["application"]),
                appliance_type_label=appliance.get(r["appliance_type"], r["appliance_type"]),
                refrigerant=r["refrigerant__designation"],
                safety_class=r["refrigerant__safety_class"],
                gwp=r["refrigerant__gwp"],
                full_charge_kg=r["full_charge_kg"],
                metering_label=metering.get(r["metering_device"], r["metering_device"]),
                condenser_label=condenser.get(r["condenser_type"], r["condenser_type"]),
                has_receiver=r["has_receiver"],
                design_box_temp_c=r["design_box_temp_c"],
                design_evap_td_k=r["design_evap_td_k"],
                design_condenser_split_k=r["design_condenser_split_k"],
                high_pressure_cutout_kpa_gauge=r["high_pressure_cutout_kpa_gauge"],
                nameplate_volts=r["nameplate_volts"],
                phase=r["phase"],
                hertz=r["hertz"],
                rla_a=r["rla_a"],
                lra_a=r["lra_a"],
                installed_on=r["installed_on"],
                run_capacitor=_fitted_rating(parts, "run", month.last_day),
                start_capacitor=_fitted_rating(parts, "start", month.last_day),
            )
        )
    return out


def _readings(site_id: int, start: datetime, end: datetime) -> dict[int, list[dict[str, Any]]]:
    by_unit: dict[int, list[dict[str, Any]]] = defaultdict(list)
    rows = (
        ReadingSet.objects.filter(
            visit_unit__unit__site_id=site_id, taken_at__gte=start, taken_at__lt=end
        )
        .exclude(visit_unit__visit__status=choices.VisitStatus.CANCELLED)
        .order_by("taken_at", "id")
        .values(*_READING_COLUMNS)
    )
    for row in _with_trend_targets(list(rows)):
        by_unit[row["visit_unit__unit_id"]].append(row)
    return by_unit


def _month_details(rows: list[dict[str, Any]]) -> dict[int, dict[str, Any]]:
    """The details (metrics, findings, cautions, glide choice) of the month's diagnoses, by
    reading set, read from their stored diagnoses in one pass."""
    expanded = Diagnosis.details_of([r["diagnosis__document"] for r in rows])
    return {row["id"]: details for row, details in zip(rows, expanded, strict=True)}


def _visits(site_id: int, start: datetime, end: datetime, tz: ZoneInfo) -> list[VisitInfo]:
    in_month = Q(visit__site_id=site_id, visit__window_start__gte=start)
    in_month &= Q(visit__window_start__lt=end)
    technicians: dict[int, list[str]] = defaultdict(list)
    for row in (
        Visit.technicians.through.objects.filter(in_month)
        .order_by("user__last_name", "user__username")
        .values("visit_id", "user__first_name", "user__last_name", "user__username")
    ):
        technicians[row["visit_id"]].append(
            _person(row["user__first_name"], row["user__last_name"], row["user__username"])
        )
    tags: dict[int, list[str]] = defaultdict(list)
    for row in (
        VisitUnit.objects.filter(in_month).order_by("unit__tag").values("visit_id", "unit__tag")
    ):
        tags[row["visit_id"]].append(row["unit__tag"])
    kind = _labels(choices.VisitKind)
    status = _labels(choices.VisitStatus)
    rows = (
        Visit.objects.filter(site_id=site_id, window_start__gte=start, window_start__lt=end)
        .order_by("window_start", "id")
        .values(
            "id", "reference", "kind", "status", "window_start", "reported_problem", "work_summary"
        )
    )
    return [
        VisitInfo(
            id=v["id"],
            reference=v["reference"],
            kind=v["kind"],
            kind_label=kind.get(v["kind"], v["kind"]),
            status=v["status"],
            status_label=status.get(v["status"], v["status"]),
            starts_at=v["window_start"].astimezone(tz),
            technicians=tuple(technicians.get(v["id"], ())),
            unit_tags=tuple(tags.get(v["id"], ())),
            reported_problem=v["reported_problem"],
            work_summary=v["work_summary"],
        )
        for v in rows
    ]


def _refrigerant_events(site_id: int, first: date, last: date) -> dict[int, list[LeakRateRow]]:
    by_unit: dict[int, list[LeakRateRow]] = defaultdict(list)
    rows = (
        RefrigerantEvent.objects.filter(
            visit_unit__unit__site_id=site_id,
            kind=choices.RefrigerantEventKind.ADDED,
            occurred_on__gte=first,
            occurred_on__lte=last,
        )
        .order_by("occurred_on", "id")
        .values(
            "id",
            "visit_unit__unit_id",
            "visit_unit__visit__reference",
            "occurred_on",
            "amount_kg",
            "leak_rate_exemption",
            "leak_rate__id",
            "leak_rate__rule_set",
            "leak_rate__method",
            "leak_rate__annualizing_percent",
            "leak_rate__rolling_average_percent",
            "leak_rate__threshold_percent",
            "leak_rate__over_threshold",
            "leak_rate__in_scope",
            "leak_rate__repair_due_on",
            "leak_rate__verification_due_on",
            "leak_rate__note",
        )
    )
    for r in rows:
        by_unit[r["visit_unit__unit_id"]].append(
            LeakRateRow(
                event_id=r["id"],
                occurred_on=r["occurred_on"],
                amount_kg=r["amount_kg"] or 0.0,
                exemption=r["leak_rate_exemption"],
                visit_reference=r["visit_unit__visit__reference"],
                computed=r["leak_rate__id"] is not None,
                rule_set=r["leak_rate__rule_set"] or "",
                method=r["leak_rate__method"] or "",
                annualizing_percent=r["leak_rate__annualizing_percent"],
                rolling_average_percent=r["leak_rate__rolling_average_percent"],
                threshold_percent=r["leak_rate__threshold_percent"],
                over_threshold=bool(r["leak_rate__over_threshold"]),
                in_scope=bool(r["leak_rate__in_scope"]),
                repair_due_on=r["leak_rate__repair_due_on"],
                verification_due_on=r["leak_rate__verification_due_on"],
                note=r["leak_rate__note"] or "",
            )
        )
    return by_unit


def _flags(
    site_id: int, as_of: datetime, tz: ZoneInfo, provenance: list[str]
) -> dict[int, list[FlagRow]]:
    """Flags open at ``as_of``: opened before it and not cleared by then (one cleared later
    shows as open, as it was)."""
    by_unit: dict[int, list[FlagRow]] = defaultdict(list)
    rows = (
        Flag.objects.filter(unit__site_id=site_id, opened_at__lt=as_of)
        .filter(Q(cleared_at__isnull=True) | Q(cleared_at__gte=as_of))
        .order_by("unit_id", "opened_at", "id")
        .values(
            "id",
            "unit_id",
            "kind",
            "severity",
            "summary",
            "evidence",
            "projected_on",
            "opened_at",
            "acknowledged_at",
            "forecast",
        )
    )
    for r in rows:
        by_unit[r["unit_id"]].append(
            FlagRow(
                id=r["id"],
                kind=r["kind"],
                kind_label=_KIND_LABELS.get(r["kind"], r["kind"].replace("_", " ")),
                severity=r["severity"],
                severity_label=_SEVERITY_LABELS.get(r["severity"], r["severity"].title()),
                severity_rank=summary.severity_rank(r["severity"]),
                summary=_customer_text(r["summary"], provenance),
                evidence=_evidence_rows(r["evidence"], provenance),
                projected_on=r["projected_on"],
                opened_on=r["opened_at"].astimezone(tz).date(),
                forecast=tuple(
                    (str(n), float(v), str(u)) for n, v, u in r["forecast"].get("quantities", ())
                ),
                acknowledged=r["acknowledged_at"] is not None and r["acknowledged_at"] < as_of,
            )
        )
    return by_unit


# --- per unit, in plain loops -------------------------------------------------------------------


def history_point(row: dict[str, Any], tz: tzinfo) -> HistoryPoint:
    """One reading row (``_READING_COLUMNS`` with ``_with_trend_targets``) as a trend point
    dated in ``tz``."""
    amps = [
        a
        for a in (row["compressor_amps_1"], row["compressor_amps_2"], row["compressor_amps_3"])
        if a is not None
    ]
    return HistoryPoint(
        taken_on=row["taken_at"].astimezone(tz).date(),
        score=row["diagnosis__score"],
        box_temp_c=row["box_temp_c"],
        entering_air_c=row["entering_air_temp_c"],
        evaporating_c=row["diagnosis__evaporating_c"],
        evaporating_target_c=row["evaporating_target_c"],
        condensing_c=row["diagnosis__condensing_c"],
        condensing_target_c=row["condensing_target_c"],
        superheat_k=row["diagnosis__superheat_k"],
        superheat_low_k=row["superheat_low_k"],
        superheat_high_k=row["superheat_high_k"],
        subcooling_k=row["diagnosis__subcooling_k"],
        subcooling_low_k=row["subcooling_low_k"],
        subcooling_high_k=row["subcooling_high_k"],
        # The highest leg: the one closest to its limit.
        amps_a=max(amps) if amps else None,
        compressor_running=row["compressor_running"],
        run_capacitor_uf=row["run_capacitor_uf"],
        start_capacitor_uf=row["start_capacitor_uf"],
    )


def unit_trend_history(unit_id: int, since: date, tz: tzinfo) -> tuple[HistoryPoint, ...]:
    """Every diagnosed as-found reading of a unit taken on or after ``since`` (a date in the
    current time zone), as trend points dated in ``tz``, in one query: the office unit
    page's charts, drawn by ``figures.trend_panels`` as the report draws its own."""
    rows = (
        ReadingSet.objects.filter(
            visit_unit__unit_id=unit_id,
            stage=choices.Stage.AS_FOUND,
            diagnosis__isnull=False,
            taken_at__date__gte=since,
        )
        .order_by("taken_at", "id")
        .values(*_READING_COLUMNS)
    )
    return tuple(history_point(r, tz) for r in _with_trend_targets(list(rows)))


def _one_per_visit(rows: list[dict[str, Any]]) -> list[dict[str, Any]]:
    """The as-found reading of each visit (else its first): trends compare like with like."""
    chosen: dict[str, dict[str, Any]] = {}
    for row in rows:
        ref = row["visit_unit__visit__reference"]
        kept = chosen.get(ref)
        if kept is None or (
            kept["stage"] != choices.Stage.AS_FOUND and row["stage"] == choices.Stage.AS_FOUND
        ):
            chosen[ref] = row
    return sorted(chosen.values(), key=lambda r: (r["taken_at"], r["id"]))


def _metric_row(m: dict[str, Any]) -> MetricRow:
    rule = SCORING_TABLE.get(m["name"])
    return MetricRow(
        name=m["name"],
        label=rule.label if rule else m["name"].replace("_", " "),
        measured=m["measured"],
        target=m["target"],
        low=m["low"],
        high=m["high"],
        deviation=m["deviation"],
        unit=m["unit"],
        status=m["status"],
        points_lost=m["points_lost"],
        reason=m.get("reason", ""),
    )


def _finding_row(f: dict[str, Any]) -> FindingRow:
    return FindingRow(
        code=f["code"],
        title=f["title"],
        evidence=tuple(f["evidence"]),
        confidence=f["confidence"],
        advice=f["advice"],
        alternatives=tuple(f.get("alternatives") or ()),
        deciding_check=f.get("deciding_check") or "",
    )


def _check(row: dict[str, Any], details: dict[str, Any], tz: ZoneInfo, unit: UnitInfo) -> Check:
    """A month's diagnosed reading set. An ice machine's box metrics are left out: it is
    judged on its circuit and electrics (``words.ICE_MACHINE_BASIS``)."""
    stage = _labels(choices.Stage)
    skip = words.NOT_FOR_ICE_MACHINES if unit.is_ice_machine else frozenset()
    findings = sorted(details["findings"], key=lambda f: -f["confidence"])
    return Check(
        reading_set_id=row["id"],
        visit_reference=row["visit_unit__visit__reference"],
        taken_at=row["taken_at"].astimezone(tz),
        stage=row["stage"],
        stage_label=stage.get(row["stage"], row["stage"]),
        score=row["diagnosis__score"],
        algorithm_version=row["diagnosis__algorithm_version"] or "",
        glide_choice=details["glide_choice"],
        energy_penalty_pct=row["diagnosis__energy_penalty_pct"],
        metrics=tuple(_metric_row(m) for m in details["metrics"] if m["name"] not in skip),
        findings=tuple(_finding_row(f) for f in findings),
        cautions=tuple(Caution(c["code"], c["text"]) for c in details["cautions"]),
        compressor_running=row["compressor_running"],
        mean_amps=_mean(
            [row["compressor_amps_1"], row["compressor_amps_2"], row["compressor_amps_3"]]
        ),
        mean_volts=_mean([row["supply_volts_1"], row["supply_volts_2"], row["supply_volts_3"]]),
    )


def _component_rows(parts: list[dict[str, Any]], first: date, last: date) -> list[ComponentRow]:
    """Parts fitted or taken out in the window; the original equipment is not news."""
    labels = _labels(choices.ComponentKind)
    out = []
    for p in parts:
        fitted = p["installed_on"] is not None and first <= p["installed_on"] <= last
        removed = p["removed_on"] is not None and first <= p["removed_on"] <= last
        if fitted or removed:
            out.append(
                ComponentRow(
                    kind=p["kind"],
                    kind_label=labels.get(p["kind"], p["kind"]),
                    installed_on=p["installed_on"],
                    removed_on=p["removed_on"],
                    reason=p["reason"],
                    rating_uf_min=p["rating_uf_min"],
                    rating_uf_max=p["rating_uf_max"],
                    visit_reference=p["changed_on_visit__reference"] or "",
                )
            )
    return out


def gather_site_month(site_id: int, month: Month, *, now: datetime) -> SiteMonth:
    """The site-month as plain data, in a fixed number of queries.

    Readings, visits and additions are those of the month (and the eleven before it for
    the trends); flags are those open at the month's end, or at ``now`` (the moment the
    report is made) for a month not over yet.
    """
    site = _site(site_id)
    tz = ZoneInfo(site.time_zone)
    window_start = month.shift(-(WINDOW_MONTHS - 1))
    start, month_start, end = window_start.start_in(tz), month.start_in(tz), month.end_in(tz)
    as_of = min(now, end)
    provenance: list[str] = []

    components = _components(site_id)
    units = _units(site_id, month, components)
    readings = _readings(site_id, start, end)
    details = _month_details(
        [r for rows in readings.values() for r in rows if r["taken_at"] >= month_start]
    )
    visits = _visits(site_id, month_start, end, tz)
    additions = _refrigerant_events(site_id, window_start.first_day, month.last_day)
    flags = _flags(site_id, as_of, tz, provenance)

    unit_months = []
    for unit in units:
        rows = readings.get(unit.id, [])
        month_rows = [r for r in rows if r["taken_at"] >= month_start]
        checks = tuple(_check(r, details[r["id"]], tz, unit) for r in month_rows)
        history = tuple(history_point(r, tz) for r in _one_per_visit(rows))
        unit_flags = tuple(flags.get(unit.id, ()))
        unit_leaks = tuple(additions.get(unit.id, ()))
        added_month = sum(
            a.amount_kg for a in unit_leaks if month.first_day <= a.occurred_on <= month.last_day
        )
        current = summary.current_check(checks)
        as_left = summary.as_left_check(checks, current)
        health = summary.grade_unit(current, unit_flags, unit_leaks, month)
        energy = summary.energy_estimate(
            current,
            phase=unit.phase,
            tariff_per_kwh=site.tariff_per_kwh,
            currency=site.currency,
            days_in_month=month.days,
        )
        unit_months.append(
            UnitMonth(
                unit=unit,
                checks=checks,
                history=history,
                flags=unit_flags,
                leak_rates=unit_leaks,
                components=tuple(
                    _component_rows(
                        components.get(unit.id, []), window_start.first_day, month.last_day
                    )
                ),
                added_kg_month=added_month,
                current=current,
                as_left=as_left,
                health=health,
                story=summary.story_of(current, history, unit_flags, month),
                energy=energy,
                actions=summary.actions_for(
                    current, unit_flags, unit_leaks, month, today=as_of.astimezone(tz).date()
                ),
            )
        )

    totals = leaks.site_totals(
        [
            leaks.UnitAdditions(
                u.unit.id,
                u.unit.refrigerant,
                tuple(
                    leaks.RefrigerantAddition(
                        a.occurred_on,
                        a.amount_kg,
                        leaks.ExcludedReason(a.exemption) if a.exemption else None,
                    )
                    for a in u.leak_rates
                ),
            )
            for u in unit_months
        ],
        month.first_day,
        month.last_day,
    )
    all_checks = [c for u in unit_months for c in u.checks]
    return SiteMonth(
        site=site,
        month=month,
        window_start=window_start,
        as_of=as_of.astimezone(tz),
        units=tuple(unit_months),
        visits=tuple(visits),
        refrigerant=totals,
        overview=summary.overview(unit_months, visits),
        attention=summary.rank_attention(unit_months),
        algorithm_versions=tuple(sorted({c.algorithm_version for c in all_checks} - {""})),
        glide_choices=tuple(sorted({c.glide_choice for c in all_checks} - {""})),
        leak_rules=tuple(
            sorted(
                {
                    (a.rule_set, a.method)
                    for u in unit_months
                    for a in u.leak_rates
                    if a.computed and a.rule_set
                }
            )
        ),
        provenance=tuple(dict.fromkeys(provenance)),
    )


__all__ = [
    "WINDOW_MONTHS",
    "Check",
    "ComponentRow",
    "EvidenceRow",
    "FindingRow",
    "FlagRow",
    "HistoryPoint",
    "LeakRateRow",
    "MetricRow",
    "SiteInfo",
    "SiteMonth",
    "UnitInfo",
    "UnitMonth",
    "VisitInfo",
    "gather_site_month",
    "history_point",
    "unit_trend_history",
]
