"""What a site is and what was measured on it: the site, its units and their parts, and the
readings with their stored diagnoses. Each returns plain data (``data.py``) or plain rows.

A site-month (``gather.gather_site_month``) runs a fixed number of queries whatever the
number of units, visits or readings: four here and five in ``events`` (the visits, the
refrigerant additions and the flags), nine in all. Each asks for rows with ``values()`` over
the whole site, and ``gather`` groups the rows per unit in plain loops.

What is read, and why:
- the site, its units in service in the month, and their components (the capacitors fitted
  on the month's last day; the components fitted or removed in the window);
- readings and their stored diagnoses over the twelve months ending with the report month
  (the trend charts read their targets and bands from the stored diagnoses through
  ``Diagnosis.numbers_of``; the month's checks have their details, metrics, findings and
  cautions, written out by ``Diagnosis.details_of``);
- a unit's trend history for the office unit page, read as the report reads its own.
"""

from __future__ import annotations

import math
from collections import defaultdict
from collections.abc import Mapping
from datetime import date, datetime, time, tzinfo
from typing import Any

from django.db.models import Q
from django.utils import timezone

from diagnostics.core import start_history
from diagnostics.models import Diagnosis
from fleet import choices
from fleet.limits import SERVICE_ERA
from fleet.models import Component, ReadingSet, Site, Unit

from .data import CapacitorRating, HistoryPoint, SiteInfo, UnitInfo
from .months import Month

# --- small conversions --------------------------------------------------------------------------


def choice_labels(choice_class: Any) -> dict[str, str]:
    """A choice class's values and labels as plain strings: rows read with ``values()``
    hold the value, the report says the label."""
    return {value: str(label) for value, label in choice_class.choices}


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


def components_by_unit(site_id: int) -> dict[int, list[Mapping[str, Any]]]:
    by_unit: dict[int, list[Mapping[str, Any]]] = defaultdict(list)
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


def _fitted_rating(parts: list[Mapping[str, Any]], role: str, on: date) -> CapacitorRating | None:
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
    site_id: int, month: Month, components: dict[int, list[Mapping[str, Any]]]
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
            visit_unit__unit__site_id=site_id,
            taken_at__gte=start,
            taken_at__lt=end,
            stage__in=choices.STANDING_STAGES,
        )
        .exclude(visit_unit__visit__status=choices.VisitStatus.CANCELLED)
        .order_by("taken_at", "id")
        .values(*_READING_COLUMNS)
    )
    for row in _with_trend_targets(list(rows)):
        by_unit[row["visit_unit__unit_id"]].append(row)
    return by_unit


def month_details(rows: list[dict[str, Any]]) -> dict[int, Mapping[str, Any]]:
    """The details (metrics, findings, cautions, glide choice) of the month's diagnoses, by
    reading set, read from their stored diagnoses in one pass."""
    expanded = Diagnosis.details_of([r["diagnosis__document"] for r in rows])
    return {row["id"]: details for row, details in zip(rows, expanded, strict=True)}


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
    # Bounds on the stored time itself (no per-row date cast), kept within SERVICE_ERA: a
    # time written straight into the database in year 1 or 9999 is left off the chart.
    era_start, era_end = SERVICE_ERA.instants()
    start = datetime.combine(since, time.min, timezone.get_current_timezone())
    rows = (
        ReadingSet.objects.filter(
            visit_unit__unit_id=unit_id,
            stage=choices.Stage.AS_FOUND,
            diagnosis__isnull=False,
            taken_at__gte=max(start, era_start),
            taken_at__lt=era_end,
        )
        .order_by("taken_at", "id")
        .values(*_READING_COLUMNS)
    )
    return tuple(history_point(r, tz) for r in _with_trend_targets(list(rows)))
