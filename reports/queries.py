"""Every query of a monthly report: each returns plain data (``data.py``) or plain rows.

A site-month (``gather.gather_site_month``) runs a fixed number of them (nine) whatever the
number of units, visits or readings: each asks for rows with ``values()`` over the whole
site, and ``gather`` groups the rows per unit in plain loops.

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
from datetime import date, datetime, tzinfo
from typing import Any
from zoneinfo import ZoneInfo

from django.db.models import Q

from diagnostics.core import start_history
from diagnostics.models import Diagnosis, Flag, FlagKind, FlagSeverity
from fleet import choices
from fleet.models import Component, ReadingSet, RefrigerantEvent, Site, Unit, Visit, VisitUnit

from . import summary, words
from .data import (
    CapacitorRating,
    EvidenceRow,
    FlagRow,
    HistoryPoint,
    LeakRateRow,
    SiteInfo,
    UnitInfo,
    VisitInfo,
)
from .months import Month

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


def choice_labels(choice_class: Any) -> dict[str, str]:
    return {value: str(label) for value, label in choice_class.choices}


def _person(first: str, last: str, username: str) -> str:
    full = f"{first} {last}".strip()
    return full or username


_SEVERITY_LABELS = choice_labels(FlagSeverity)
_KIND_LABELS = choice_labels(FlagKind)


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


def site_info(site_id: int) -> SiteInfo:
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


def components_by_unit(site_id: int) -> dict[int, list[dict[str, Any]]]:
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
    newest = start_history.fitted_capacitor(parts, role, on)
    if newest is None:
        return None
    high = newest["rating_uf_max"]
    return CapacitorRating(
        choice_labels(choices.ComponentKind).get(newest["kind"], newest["kind"]),
        newest["rating_uf_min"],
        high if high is not None else newest["rating_uf_min"],
    )


def units_in_month(
    site_id: int, month: Month, components: dict[int, list[dict[str, Any]]]
) -> list[UnitInfo]:
    app = choice_labels(choices.Application)
    appliance = choice_labels(choices.ApplianceType)
    metering = choice_labels(choices.MeteringDevice)
    condenser = choice_labels(choices.CondenserType)
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


def readings_by_unit(
    site_id: int, start: datetime, end: datetime
) -> dict[int, list[dict[str, Any]]]:
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


def month_details(rows: list[dict[str, Any]]) -> dict[int, dict[str, Any]]:
    """The details (metrics, findings, cautions, glide choice) of the month's diagnoses, by
    reading set, read from their stored diagnoses in one pass."""
    expanded = Diagnosis.details_of([r["diagnosis__document"] for r in rows])
    return {row["id"]: details for row, details in zip(rows, expanded, strict=True)}


def visits_in(site_id: int, start: datetime, end: datetime, tz: ZoneInfo) -> list[VisitInfo]:
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
    kind = choice_labels(choices.VisitKind)
    status = choice_labels(choices.VisitStatus)
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


def additions_by_unit(site_id: int, first: date, last: date) -> dict[int, list[LeakRateRow]]:
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


def flags_open_at(
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
