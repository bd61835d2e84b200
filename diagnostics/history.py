"""Gather every unit's history into the core's flag inputs, in a fixed number of queries.

Rows are fetched with values_list (no per-unit queries), so a refresh over thousands of units
costs the same handful of queries as over one. The reading rows, one per visit and by far the
most, become numpy columns once, sorted by unit, and each unit's series are slices of them;
only the start attempts stay one object per reading, the form the core takes them in.
"""

from __future__ import annotations

import contextlib
import datetime as dt
import gc
import logging
from collections import defaultdict
from collections.abc import Iterable, Iterator
from dataclasses import dataclass
from typing import NamedTuple
from zoneinfo import ZoneInfo

import numpy as np
from django.db.models import Max, Min, Q, QuerySet
from django.utils import timezone
from numpy.typing import NDArray

from diagnostics.core import (
    appliance_leaks,
    design,
    flags,
    leaks,
    maintenance,
    split_drift_types,
    start_history,
)
from diagnostics.core.types import APPLICATIONS, UnitDesign, choice
from fleet.choices import (
    STANDING_STAGES,
    ComponentKind,
    RefrigerantEventKind,
    Stage,
    VisitKind,
    VisitStatus,
)
from fleet.limits import SERVICE_ERA
from fleet.models import Component, ReadingSet, RefrigerantEvent, Unit, VisitUnit
from fleet.validation import stored_date_problem

logger = logging.getLogger(__name__)

_START_PARTS = {
    ComponentKind.RUN_CAPACITOR: start_history.StartComponent.RUN_CAPACITOR,
    ComponentKind.START_CAPACITOR: start_history.StartComponent.START_CAPACITOR,
    ComponentKind.START_RELAY: start_history.StartComponent.START_RELAY,
    ComponentKind.HARD_START_KIT: start_history.StartComponent.HARD_START_KIT,
}


#: Day number of 1970-01-01, numpy's datetime64 epoch, in Python's ordinal count.
_EPOCH_ORDINAL = dt.date(1970, 1, 1).toordinal()

_READING_FIELDS = (
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
    "call_for_cooling",
    "in_defrost",
)


@dataclass(frozen=True, eq=False)
class _Readings:
    """Every reading row as columns, sorted by unit (stably, so each unit's rows keep the
    query's date order); ``spans`` gives each unit's [start, end) rows."""

    days: NDArray[np.datetime64]
    split_k: NDArray[np.float64]
    entering_air_c: NDArray[np.float64]
    run_uf: NDArray[np.float64]
    start_uf: NDArray[np.float64]
    as_left: NDArray[np.bool_]
    spans: dict[int, tuple[int, int]]
    attempts: dict[int, list[start_history.StartAttempt]]

    @classmethod
    def of(cls, rows: list[tuple], zones: dict[int, str]) -> _Readings:
        """The columns of values_list rows in ``_READING_FIELDS`` order (None -> NaN), each
        dated on the calendar of its unit's site (``zones``: unit id -> time zone)."""
        ordinals = _local_ordinals(rows, zones)
        # Start attempts stay objects (the core takes them so), built in the one pass that
        # leaves them in date order per unit. Only a compressor found stopped can be one (the
        # core tells a failed start from off-cycle by the call for cooling and the amps); a
        # running compressor's supply voltage is not its voltage at start; nor is one stopped
        # for defrost a start attempt.
        attempts: dict[int, list[start_history.StartAttempt]] = defaultdict(list)
        found = Stage.AS_FOUND.value
        for r, ordinal in zip(rows, ordinals.tolist(), strict=True):
            if r[7] is False and r[2] == found and not r[11]:
                attempts[r[0]].append(
                    start_history.StartAttempt(
                        observed_on=dt.date.fromordinal(ordinal),
                        started=False,
                        peak_amps=r[8],
                        volts_at_start=r[9],
                        called=r[10],
                    )
                )
        if not rows:
            empty = np.empty(0)
            return cls(
                np.empty(0, dtype="datetime64[D]"),
                empty,
                empty,
                empty,
                empty,
                np.empty(0, dtype=bool),
                {},
                attempts,
            )
        unit, taken, stage, split, air, run_uf, start_uf = list(zip(*rows, strict=True))[:7]
        units = np.array(unit, dtype=np.int64)
        order = np.argsort(units, kind="stable")
        units = units[order]
        left = Stage.AS_LEFT.value
        firsts = np.flatnonzero(np.r_[True, units[1:] != units[:-1]])
        ends = np.r_[firsts[1:], len(rows)]
        return cls(
            days=(ordinals[order] - _EPOCH_ORDINAL).astype("datetime64[D]"),
            split_k=np.array(split, dtype=float)[order],
            entering_air_c=np.array(air, dtype=float)[order],
            run_uf=np.array(run_uf, dtype=float)[order],
            start_uf=np.array(start_uf, dtype=float)[order],
            as_left=np.array([s == left for s in stage], dtype=bool)[order],
            spans=dict(
                zip(
                    units[firsts].tolist(),
                    zip(firsts.tolist(), ends.tolist(), strict=True),
                    strict=True,
                )
            ),
            attempts=attempts,
        )


_DAY_S = 86_400


def _utc_offset_s(moment: dt.datetime) -> float:
    """The UTC offset of an aware moment, in seconds (only a naive one has none)."""
    offset = moment.utcoffset()
    if offset is None:
        raise ValueError(f"{moment} has no time zone")
    return offset.total_seconds()


def _local_ordinals(rows: list[tuple], zones: dict[int, str]) -> NDArray[np.int64]:
    """The day number (``date.toordinal``) of each row's ``taken_at`` in its site's time
    zone, a reading after dark in Chicago belonging to that evening, not to the next UTC day.

    The offset is looked up once per zone and UTC day (at its first and last second); only
    rows of a day on which the offset changes are looked up one by one.
    """
    n = len(rows)
    seconds = np.fromiter((r[1].timestamp() for r in rows), dtype=np.float64, count=n)
    units, at = np.unique(
        np.fromiter((r[0] for r in rows), dtype=np.int64, count=n), return_inverse=True
    )
    names = sorted({zones.get(u, "UTC") for u in units.tolist()})
    zone_at = np.array([names.index(zones.get(u, "UTC")) for u in units.tolist()], dtype=np.intp)[
        at
    ]
    out = np.empty(n, dtype=np.int64)
    for k, name in enumerate(names):
        zone = ZoneInfo(name)
        sel = np.flatnonzero(zone_at == k)
        s = seconds[sel]
        days, index = np.unique(np.floor_divide(s, _DAY_S), return_inverse=True)

        def offsets(moments: NDArray[np.float64], zone: ZoneInfo = zone) -> NDArray[np.float64]:
            return np.array([_utc_offset_s(dt.datetime.fromtimestamp(t, zone)) for t in moments])

        first, last = offsets(days * _DAY_S), offsets(days * _DAY_S + _DAY_S - 1)
        offset = first[index]
        changing = np.flatnonzero((first != last)[index])
        offset[changing] = offsets(s[changing])
        out[sel] = np.floor_divide(s + offset, _DAY_S).astype(np.int64) + _EPOCH_ORDINAL
    return out


@contextlib.contextmanager
def collector_paused() -> Iterator[None]:
    """Pause the cyclic garbage collector while the rows and inputs are built.

    A fleet's history is some hundred thousand rows and small objects that form no cycles;
    the collector would trace all of them again and again as they are made (a third of the
    gathering time at 5,000 units), so it waits until they are built, as ``rescore`` does.
    """
    collecting = gc.isenabled()
    gc.disable()
    try:
        yield
    finally:
        if collecting:
            gc.enable()


class HistoryQueries(NamedTuple):
    """The reads behind ``unit_histories``, as querysets of plain rows (values/values_list)."""

    units: QuerySet
    readings: QuerySet
    parts: QuerySet
    events: QuerySet
    visits: QuerySet


def _in_service(today: dt.date, unit_ids: Iterable[int] | None = None) -> QuerySet:
    units = Unit.objects.filter(Q(retired_on__isnull=True) | Q(retired_on__gt=today))
    return units if unit_ids is None else units.filter(id__in=list(unit_ids))


def unit_ids_in_service(today: dt.date) -> list[int]:
    """The ids of every unit in service on ``today``, in id order: what a fleet-wide job
    works through a chunk at a time."""
    return list(_in_service(today).order_by("id").values_list("id", flat=True))


def _visit_dates(today: dt.date) -> dict:
    """Per unit: the last visit done (reviewed, or handed in and waiting for review: the
    work is done, only the office's reading of it is not), and the first planned visit
    still to come or under way (its window not yet over), for the maintenance plan."""
    start_of_today = dt.datetime.combine(today, dt.time.min, timezone.get_current_timezone())
    return {
        "last_done": Max(
            "visit__window_start",
            filter=Q(visit__status__in=[VisitStatus.SUBMITTED, VisitStatus.REVIEWED]),
        ),
        "next_booked": Min(
            "visit__window_start",
            filter=Q(
                visit__kind=VisitKind.PLANNED,
                visit__status__in=[VisitStatus.SCHEDULED, VisitStatus.IN_PROGRESS],
                visit__window_end__gte=start_of_today,
            ),
        ),
    }


def _local_date(moment: dt.datetime, time_zone: str) -> dt.date:
    """The calendar day at the site: a visit at 20:00 in Denver is that day, not tomorrow UTC."""
    return moment.astimezone(ZoneInfo(time_zone)).date()


@dataclass(frozen=True)
class SkippedUnit:
    """A unit a fleet-wide job left out, because a stored value of it cannot be worked with
    (a date no arithmetic can use): one bad row must not stop the job for the fleet."""

    unit_id: int
    tag: str
    problems: tuple[str, ...]

    def __str__(self) -> str:
        return f"skipped unit {self.tag} (id {self.unit_id}): {'; '.join(self.problems)}"


def _unworkable(
    u: dict,
    visits: dict | None,
    skipped: list[SkippedUnit] | None,
    reading_taken: dt.datetime | None = None,
) -> bool:
    """Whether the unit's stored dates cannot be worked with (its own, its visits', and
    the first reading time found out of ``SERVICE_ERA``); if so it is logged, and kept in
    ``skipped`` for the caller to report."""
    problems = [stored_date_problem("installed_on", u["installed_on"])]
    if visits:
        problems += [
            stored_date_problem("last visit", visits["last_done"]),
            stored_date_problem("next planned visit", visits["next_booked"]),
        ]
    problems.append(stored_date_problem("reading taken", reading_taken, SERVICE_ERA))
    found = tuple(p for p in problems if p)
    if not found:
        return False
    unit = SkippedUnit(u["id"], u["tag"], found)
    logger.warning("%s", unit)
    if skipped is not None:
        skipped.append(unit)
    return True


#: ``SERVICE_ERA`` in POSIX seconds, [first, end): reading times outside it are set aside
#: before any is put on a site's calendar (year 9999 in Tokyo is past the last date).
_ERA_SECONDS = tuple(moment.timestamp() for moment in SERVICE_ERA.instants())


def _set_aside_out_of_era(rows: list[tuple]) -> tuple[list[tuple], dict[int, dt.datetime]]:
    """The reading rows within ``SERVICE_ERA``, and per unit the first time out of it."""
    seconds = np.fromiter((r[1].timestamp() for r in rows), dtype=np.float64, count=len(rows))
    within = (seconds >= _ERA_SECONDS[0]) & (seconds < _ERA_SECONDS[1])
    if within.all():
        return rows, {}
    outside: dict[int, dt.datetime] = {}
    for i in np.flatnonzero(~within).tolist():
        outside.setdefault(rows[i][0], rows[i][1])
    return [r for r, keep in zip(rows, within.tolist(), strict=True) if keep], outside


def _maintenance_plan(
    unit: dict, visits: dict | None, today: dt.date
) -> maintenance.MaintenancePlan:
    done = visits["last_done"] if visits else None
    booked = visits["next_booked"] if visits else None
    return maintenance.MaintenancePlan(
        unit_id=unit["id"],
        site_id=unit["site_id"],
        interval_days=unit["pm_interval_days"],
        last_completed_on=_local_date(done, unit["site__time_zone"]) if done else None,
        in_service_since=unit["installed_on"],
        next_scheduled_on=max(_local_date(booked, unit["site__time_zone"]), today)
        if booked
        else None,
    )


def maintenance_plans(
    today: dt.date,
    unit_ids: Iterable[int] | None = None,
    skipped: list[SkippedUnit] | None = None,
) -> list[maintenance.MaintenancePlan]:
    """Every unit in service as the maintenance core sees it, in two queries: the same plans
    the flag refresh decides on, for the office's maintenance page. A unit whose dates
    cannot be worked with is left out (and added to ``skipped``)."""
    units = _in_service(today, unit_ids)
    visits = {
        row["unit_id"]: row
        for row in VisitUnit.objects.filter(unit_id__in=units.values("id"))
        .values("unit_id")
        .annotate(**_visit_dates(today))
    }
    return [
        _maintenance_plan(u, visits.get(u["id"]), today)
        for u in units.values(
            "id", "tag", "site_id", "pm_interval_days", "installed_on", "site__time_zone"
        )
        if not _unworkable(u, visits.get(u["id"]), skipped)
    ]


def history_queries(today: dt.date, unit_ids: Iterable[int] | None = None) -> HistoryQueries:
    """Every query ``unit_histories`` makes, unevaluated: five, whatever the fleet's size.

    Public so that a benchmark can time exactly these reads with nothing built on them.
    """
    units = _in_service(today, unit_ids)
    # The other queries select the same units by subquery: no id list to build and bind
    # (SQLite refuses more than 32,766 bound values, a fleet of that many units).
    ids = units.values("id")
    return HistoryQueries(
        units=units.values(
            "id",
            "tag",
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
            "site__time_zone",
            "lra_a",
            "nameplate_volts",
            "nameplate_volts_max",
            "design_temperature_basis",
        ),
        readings=ReadingSet.objects.filter(visit_unit__unit_id__in=ids, stage__in=STANDING_STAGES)
        .order_by("taken_at")
        .values_list(*_READING_FIELDS),
        parts=Component.objects.filter(unit_id__in=ids).values(
            "id", "unit_id", "kind", "rating_uf_min", "rating_uf_max", "installed_on", "removed_on"
        ),
        events=RefrigerantEvent.objects.filter(visit_unit__unit_id__in=ids)
        .order_by("occurred_on", "id")
        .values(
            "visit_unit__unit_id",
            "kind",
            "amount_kg",
            "occurred_on",
            "leak_rate_exemption",
            "passed",
        ),
        visits=VisitUnit.objects.filter(unit_id__in=ids)
        .values("unit_id")
        .annotate(**_visit_dates(today)),
    )


def unit_histories(
    today: dt.date,
    unit_ids: Iterable[int] | None = None,
    method: leaks.LeakRateMethod | None = None,
    skipped: list[SkippedUnit] | None = None,
) -> list[flags.UnitHistory]:
    """The flag inputs of every unit in service (or of ``unit_ids``), but for those whose
    dates cannot be worked with (added to ``skipped``)."""
    with collector_paused():
        return _gather(
            history_queries(today, unit_ids),
            method or leaks.LeakRateMethod.ROLLING_AVERAGE,
            today,
            skipped,
        )


def _gather(
    queries: HistoryQueries,
    method: leaks.LeakRateMethod,
    today: dt.date,
    skipped: list[SkippedUnit] | None = None,
) -> list[flags.UnitHistory]:
    units = list(queries.units)
    rows, out_of_era = _set_aside_out_of_era(list(queries.readings))
    readings = _Readings.of(rows, {u["id"]: u["site__time_zone"] for u in units})
    parts: dict[int, list[dict]] = defaultdict(list)
    for part in queries.parts:
        parts[part["unit_id"]].append(part)
    events: dict[int, list[dict]] = defaultdict(list)
    for event in queries.events:
        events[event["visit_unit__unit_id"]].append(event)
    visits = {row["unit_id"]: row for row in queries.visits}
    splits = _design_splits_k(units)
    return [
        _history(
            u, split, readings, parts[u["id"]], events[u["id"]], visits.get(u["id"]), method, today
        )
        for u, split in zip(units, splits, strict=True)
        if not _unworkable(u, visits.get(u["id"]), skipped, out_of_era.get(u["id"]))
    ]


def _design_splits_k(units: list[dict]) -> list[float]:
    """Each unit's design condenser split as the diagnosis resolves it (``design.resolve``:
    its design data, else its application's default): the split its drift is judged from."""
    resolved = design.resolve(
        [
            UnitDesign(
                refrigerant=u["refrigerant__designation"],
                application=choice(u["application"], APPLICATIONS, "other"),
                design_condenser_split_k=u["design_condenser_split_k"],
            )
            for u in units
        ]
    )
    splits: list[float] = resolved.condenser_split_k.value.tolist()
    return splits


def _capacitor_series(readings: _Readings, rows: slice, parts: list[dict]) -> tuple:
    """Capacitor readings as columns, judged against the rating of the part fitted now."""
    series = []
    for values, role, component in (
        (readings.run_uf, "run", start_history.StartComponent.RUN_CAPACITOR),
        (readings.start_uf, "start", start_history.StartComponent.START_CAPACITOR),
    ):
        current = start_history.fitted_capacitor(parts, role)
        if current is None:
            continue
        measured = values[rows]
        taken = ~np.isnan(measured)
        if not taken.any():
            continue
        series.append(
            start_history.CapacitorColumns.of(
                component,
                readings.days[rows][taken],
                measured[taken],
                current["rating_uf_min"],
                current["rating_uf_max"] or current["rating_uf_min"],
                readings.as_left[rows][taken],
            )
        )
    return tuple(series)


def _history(
    u: dict,
    design_split_k: float,
    readings: _Readings,
    parts: list[dict],
    events: list[dict],
    visits: dict | None,
    method: leaks.LeakRateMethod,
    today: dt.date,
) -> flags.UnitHistory:
    rows = slice(*readings.spans.get(u["id"], (0, 0)))
    split_k = readings.split_k[rows]
    found = ~np.isnan(split_k)
    split = split_drift_types.SplitDriftInput(
        points=split_drift_types.SplitColumns.of(
            readings.days[rows][found],
            split_k[found],
            readings.entering_air_c[rows][found],
            readings.as_left[rows][found],
        ),
        design_split_k=design_split_k,
        head=(
            split_drift_types.HeadPressureLimit(
                refrigerant=u["refrigerant__designation"],
                design_day_ambient_c=u["site__design_ambient_c"],
                high_pressure_cutout_kpa_gauge=u["high_pressure_cutout_kpa_gauge"],
                elevation_m=u["site__elevation_m"],
                # the stored split is on the unit's basis: the projection inverts the same
                condensing_point=u["design_temperature_basis"],
            )
            if u["high_pressure_cutout_kpa_gauge"]
            else None
        ),
    )
    replacements = tuple(
        start_history.ComponentReplacement(p["installed_on"], _START_PARTS[p["kind"]])
        for p in parts
        if p["kind"] in _START_PARTS and p["installed_on"] is not None
    )
    start = start_history.StartHistory(
        capacitor_readings=_capacitor_series(readings, rows, parts),
        start_attempts=tuple(readings.attempts.get(u["id"], ())),
        replacements=replacements,
        lra_a=u["lra_a"],
        nameplate_volts=u["nameplate_volts"],
        nameplate_volts_max=u["nameplate_volts_max"],
    )
    additions, repairs = [], []
    for e in events:
        if e["kind"] == RefrigerantEventKind.ADDED and e["amount_kg"]:
            reason = (
                leaks.ExcludedReason(e["leak_rate_exemption"]) if e["leak_rate_exemption"] else None
            )
            additions.append(
                appliance_leaks.RefrigerantAddition(e["occurred_on"], e["amount_kg"], reason)
            )
        elif e["kind"] == RefrigerantEventKind.LEAK_REPAIRED:
            repairs.append(appliance_leaks.LeakRepair(e["occurred_on"]))
        elif e["kind"] == RefrigerantEventKind.FOLLOW_UP_VERIFICATION and e["passed"] and repairs:
            repairs[-1] = appliance_leaks.LeakRepair(
                repairs[-1].repaired_on, verified_on=e["occurred_on"]
            )
    leak = flags.LeakHistory(
        appliance=appliance_leaks.Appliance(
            refrigerant=u["refrigerant__designation"],
            full_charge_kg=u["full_charge_kg"],
            appliance_type=leaks.ApplianceType(u["appliance_type"]),
        ),
        additions=tuple(additions),
        repairs=tuple(repairs),
        method=method,
    )
    plan = _maintenance_plan(u, visits, today)
    return flags.UnitHistory(unit_id=u["id"], split=split, start=start, leak=leak, maintenance=plan)
