"""Gather every unit's history into the core's flag inputs, in a fixed number of queries.

Rows are fetched with values_list and grouped in plain loops (no per-unit queries), so a
refresh over thousands of units costs the same handful of queries as over one.
"""

from __future__ import annotations

import datetime as dt
from collections import defaultdict
from collections.abc import Iterable

import numpy as np
from django.db.models import Max, Min, Q

from diagnostics.core import flags, leaks, maintenance, start_risk, targets, trends
from diagnostics.core.types import APPLICATIONS
from fleet.choices import ComponentKind, RefrigerantEventKind, Stage, VisitStatus
from fleet.models import Component, ReadingSet, RefrigerantEvent, Unit, VisitUnit

_START_PARTS = {
    ComponentKind.RUN_CAPACITOR: start_risk.StartComponent.RUN_CAPACITOR,
    ComponentKind.START_CAPACITOR: start_risk.StartComponent.START_CAPACITOR,
    ComponentKind.START_RELAY: start_risk.StartComponent.START_RELAY,
    ComponentKind.HARD_START_KIT: start_risk.StartComponent.HARD_START_KIT,
}


def _design_split_k(application: str, design: float | None) -> float:
    if design is not None:
        return design
    code = np.array([APPLICATIONS.index(application) if application in APPLICATIONS else 4])
    return float(targets.default_condenser_split_k(code)[0])


def unit_histories(
    today: dt.date,
    unit_ids: Iterable[int] | None = None,
    method: leaks.LeakRateMethod | None = None,
) -> list[flags.UnitHistory]:
    """The flag inputs of every unit in service (or of ``unit_ids``)."""
    units_qs = Unit.objects.filter(Q(retired_on__isnull=True) | Q(retired_on__gt=today))
    if unit_ids is not None:
        units_qs = units_qs.filter(id__in=list(unit_ids))
    units = list(
        units_qs.values(
            "id",
            "site_id",
            "application",
            "refrigerant__designation",
            "full_charge_kg",
            "appliance_type",
            "design_condenser_split_k",
            "high_pressure_cutout_kpa_gauge",
            "site__elevation_m",
            "site__design_ambient_c",
            "pm_interval_days",
            "installed_on",
            "lra_a",
            "nameplate_volts",
        )
    )
    ids = [u["id"] for u in units]

    readings: dict[int, list[tuple]] = defaultdict(list)
    for row in (
        ReadingSet.objects.filter(visit_unit__unit_id__in=ids)
        .order_by("taken_at")
        .values_list(
            "visit_unit__unit_id",
            "taken_at",
            "stage",
            "diagnosis__condenser_split_k",
            "entering_air_temp_c",
            "run_capacitor_uf",
            "start_capacitor_uf",
            "compressor_running",
            "compressor_amps_1",
            "supply_volts_1",
        )
    ):
        readings[row[0]].append(row)

    parts: dict[int, list[dict]] = defaultdict(list)
    for part in Component.objects.filter(unit_id__in=ids).values(
        "unit_id", "kind", "rating_uf_min", "rating_uf_max", "installed_on", "removed_on"
    ):
        parts[part["unit_id"]].append(part)

    events: dict[int, list[dict]] = defaultdict(list)
    for event in (
        RefrigerantEvent.objects.filter(visit_unit__unit_id__in=ids)
        .order_by("occurred_on", "id")
        .values(
            "visit_unit__unit_id",
            "kind",
            "amount_kg",
            "occurred_on",
            "leak_rate_exemption",
            "passed",
        )
    ):
        events[event["visit_unit__unit_id"]].append(event)

    visits = {
        row["unit_id"]: row
        for row in VisitUnit.objects.filter(unit_id__in=ids)
        .values("unit_id")
        .annotate(
            last_done=Max("visit__window_start", filter=Q(visit__status=VisitStatus.REVIEWED)),
            next_booked=Min(
                "visit__window_start",
                filter=Q(visit__status=VisitStatus.SCHEDULED, visit__window_start__date__gte=today),
            ),
        )
    }

    method = method or leaks.LeakRateMethod.ROLLING_AVERAGE
    return [
        _history(u, readings[u["id"]], parts[u["id"]], events[u["id"]], visits.get(u["id"]), method)
        for u in units
    ]


def _capacitor_series(rows: list[tuple], fitted: list[dict]) -> tuple:
    """Capacitor readings as columns, judged against the rating of the part fitted then."""
    series = []
    for column, kind in ((5, ComponentKind.RUN_CAPACITOR), (6, ComponentKind.START_CAPACITOR)):
        rating = [p for p in fitted if p["kind"] == kind and p["rating_uf_min"] is not None]
        measured = [
            (r[1].date(), r[column], r[2] == Stage.AS_LEFT) for r in rows if r[column] is not None
        ]
        if not rating or not measured:
            continue
        current = max(rating, key=lambda p: p["installed_on"] or dt.date.min)
        series.append(
            start_risk.CapacitorColumns.of(
                _START_PARTS[kind],
                [m[0] for m in measured],
                [m[1] for m in measured],
                current["rating_uf_min"],
                current["rating_uf_max"] or current["rating_uf_min"],
                [m[2] for m in measured],
            )
        )
    return tuple(series)


def _history(
    u: dict,
    rows: list[tuple],
    parts: list[dict],
    events: list[dict],
    visits: dict | None,
    method: leaks.LeakRateMethod,
) -> flags.UnitHistory:
    found = [r for r in rows if r[3] is not None]
    split = trends.SplitDriftInput(
        points=trends.SplitColumns.of(
            [r[1].date() for r in found],
            [r[3] for r in found],
            [np.nan if r[4] is None else r[4] for r in found],
            [r[2] == Stage.AS_LEFT for r in found],
        ),
        design_split_k=_design_split_k(u["application"], u["design_condenser_split_k"]),
        head=(
            trends.HeadPressureLimit(
                refrigerant=u["refrigerant__designation"],
                design_day_ambient_c=u["site__design_ambient_c"],
                high_pressure_cutout_kpa_gauge=u["high_pressure_cutout_kpa_gauge"],
                elevation_m=u["site__elevation_m"],
            )
            if u["high_pressure_cutout_kpa_gauge"]
            else None
        ),
    )
    attempts = tuple(
        start_risk.StartAttempt(
            observed_on=r[1].date(), started=bool(r[7]), peak_amps=r[8], volts_at_start=r[9]
        )
        for r in rows
        if r[7] is not None and r[2] == Stage.AS_FOUND
    )
    replacements = tuple(
        start_risk.ComponentReplacement(p["installed_on"], _START_PARTS[p["kind"]])
        for p in parts
        if p["kind"] in _START_PARTS and p["installed_on"] is not None
    )
    in_service = [p for p in parts if p["removed_on"] is None]
    start = start_risk.StartHistory(
        capacitor_readings=_capacitor_series(rows, in_service),
        start_attempts=attempts,
        replacements=replacements,
        lra_a=u["lra_a"],
        nameplate_volts=u["nameplate_volts"],
    )
    additions, repairs = [], []
    for e in events:
        if e["kind"] == RefrigerantEventKind.ADDED and e["amount_kg"]:
            reason = (
                leaks.ExcludedReason(e["leak_rate_exemption"]) if e["leak_rate_exemption"] else None
            )
            additions.append(leaks.RefrigerantAddition(e["occurred_on"], e["amount_kg"], reason))
        elif e["kind"] == RefrigerantEventKind.LEAK_REPAIRED:
            repairs.append(leaks.LeakRepair(e["occurred_on"]))
        elif e["kind"] == RefrigerantEventKind.FOLLOW_UP_VERIFICATION and e["passed"] and repairs:
            repairs[-1] = leaks.LeakRepair(repairs[-1].repaired_on, verified_on=e["occurred_on"])
    leak = flags.LeakHistory(
        appliance=leaks.Appliance(
            refrigerant=u["refrigerant__designation"],
            full_charge_kg=u["full_charge_kg"],
            appliance_type=leaks.ApplianceType(u["appliance_type"]),
        ),
        additions=tuple(additions),
        repairs=tuple(repairs),
        method=method,
    )
    plan = maintenance.MaintenancePlan(
        unit_id=u["id"],
        site_id=u["site_id"],
        interval_days=u["pm_interval_days"],
        last_completed_on=visits["last_done"].date() if visits and visits["last_done"] else None,
        in_service_since=u["installed_on"],
        next_scheduled_on=visits["next_booked"].date()
        if visits and visits["next_booked"]
        else None,
    )
    return flags.UnitHistory(unit_id=u["id"], split=split, start=start, leak=leak, maintenance=plan)
