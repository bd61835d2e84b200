"""Records -> core -> stored rows. The only place the Django layer meets the diagnostics core.

Nothing here computes thermodynamics: it maps records to the core's frozen inputs, calls the
core, and stores what comes back with the algorithm version.
"""

from __future__ import annotations

import dataclasses
import datetime as dt
import gc
from collections.abc import Callable, Iterable
from typing import Any

import numpy as np
from django.conf import settings
from django.db import connection, transaction
from django.db.models import QuerySet
from django.utils import timezone

from diagnostics.core import appliance_leaks, flags, leaks, plausibility, scoring, start_history
from diagnostics.core import batch as core_batch
from diagnostics.core import design as core_design
from diagnostics.core import diagnose as core_diagnose
from diagnostics.core import targets as core_targets
from diagnostics.core.types import (
    APPLICATIONS,
    CONDENSER_TYPES,
    HEAD_PRESSURE_CONTROLS,
    METERING_DEVICES,
    SIGHT_GLASS_STATES,
    TEMPERATURE_BASES,
    Reading,
    UnitDesign,
    choice,
)
from fleet.choices import RefrigerantEventKind
from fleet.models import Component, ReadingSet, RefrigerantEvent, Unit

from .history import SkippedUnit, unit_histories, unit_ids_in_service
from .models import Diagnosis, Flag, LeakRate

#: What ``start_history.fitted_capacitor`` reads of a component.
_PART_FIELDS = ("id", "kind", "installed_on", "removed_on", "rating_uf_min", "rating_uf_max")


def _fitted_band(components: list[Component], role: str) -> tuple[float, float] | None:
    """The band (``Component.rating_band_uf``) of the capacitor of ``role`` fitted now."""
    parts = [{"component": c, **{f: getattr(c, f) for f in _PART_FIELDS}} for c in components]
    fitted = start_history.fitted_capacitor(parts, role)
    return None if fitted is None else fitted["component"].rating_band_uf()


def unit_design(unit: Unit, components: Iterable[Component] | None = None) -> UnitDesign:
    """The core's view of a unit: design data plus the ratings of the capacitors fitted now.

    ``components``: the unit's, where the caller has them (prefetched for many units; an
    empty tuple where no capacitor matters, as for the plausibility check); otherwise they
    are read here, in one query on the components' own table (unsorted: the fitted part is
    chosen by its dates). A run capacitor's band goes to the core as its centre plus or
    minus a percentage (a printed 45 uF +/- 6 % comes back as exactly that).
    """
    if components is None:
        components = unit.components.order_by()
    components = list(components)
    run, start = _fitted_band(components, "run"), _fitted_band(components, "start")
    run_nominal = run_tolerance = None
    if run is not None:
        run_nominal = (run[0] + run[1]) / 2
        run_tolerance = 100 * (run[1] - run[0]) / 2 / run_nominal
    return UnitDesign(
        refrigerant=unit.refrigerant.designation,
        application=choice(unit.application, APPLICATIONS, "other"),
        metering_device=choice(unit.metering_device, METERING_DEVICES),
        condenser_type=choice(unit.condenser_type, CONDENSER_TYPES, "air"),
        has_receiver=unit.has_receiver,
        design_box_temp_c=unit.design_box_temp_c,
        design_evap_td_k=unit.design_evap_td_k,
        design_condenser_split_k=unit.design_condenser_split_k,
        superheat_min_k=unit.superheat_min_k,
        superheat_max_k=unit.superheat_max_k,
        high_pressure_cutout_kpa_gauge=unit.high_pressure_cutout_kpa_gauge,
        nameplate_volts=unit.nameplate_volts,
        nameplate_volts_max=unit.nameplate_volts_max,
        phase=unit.phase,
        hertz=unit.hertz,
        rla_a=unit.rla_a,
        lra_a=unit.lra_a,
        run_capacitor_uf=run_nominal,
        run_capacitor_tolerance_pct=run_tolerance,
        start_capacitor_min_uf=start[0] if start else None,
        start_capacitor_max_uf=start[1] if start else None,
        head_pressure_control=choice(unit.head_pressure_control, HEAD_PRESSURE_CONTROLS),
        head_pressure_setpoint_c=unit.head_pressure_setpoint_c,
        temperature_basis=choice(unit.design_temperature_basis, TEMPERATURE_BASES, "dew"),
    )


def reading_of(reading_set: ReadingSet) -> Reading:
    """The core's view of a reading set (already SI)."""
    return Reading(
        box_temp_c=reading_set.box_temp_c,
        entering_air_temp_c=reading_set.entering_air_temp_c,
        suction_kpa_gauge=reading_set.suction_kpa_gauge,
        suction_line_temp_c=reading_set.suction_line_temp_c,
        head_kpa_gauge=reading_set.head_kpa_gauge,
        liquid_line_temp_c=reading_set.liquid_line_temp_c,
        discharge_line_temp_c=reading_set.discharge_line_temp_c,
        compressor_amps=tuple(reading_set.compressor_amps),
        supply_volts=tuple(reading_set.supply_volts),
        run_capacitor_uf=reading_set.run_capacitor_uf,
        start_capacitor_uf=reading_set.start_capacitor_uf,
        call_for_cooling=reading_set.call_for_cooling,
        in_defrost=reading_set.in_defrost,
        compressor_running=reading_set.compressor_running,
        condenser_fan_running=reading_set.condenser_fan_running,
        evaporator_fans_running=reading_set.evaporator_fans_running,
        coil_iced=reading_set.coil_iced,
        sight_glass=choice(reading_set.sight_glass, SIGHT_GLASS_STATES),
    )


def implausible_fields(reading_set: ReadingSet) -> tuple[plausibility.Implausible, ...]:
    """What in ``reading_set`` (stored or not; its unit, site and refrigerant at hand) no
    working system can produce, each naming its model field (the core's name) and why, with
    its limit in SI to be written in the units the caller shows. Sends no query: the check
    needs no capacitor."""
    unit = reading_set.visit_unit.unit
    return plausibility.check(
        unit_design(unit, components=()), reading_of(reading_set), unit.site.elevation_m
    )


def reading_sets_for_diagnosis() -> QuerySet[ReadingSet]:
    """Reading sets with their unit, its site and refrigerant: what the one-row diagnosis
    reads, but for the unit's capacitors, which ``unit_design`` reads itself."""
    return ReadingSet.objects.select_related(
        "visit_unit__unit__refrigerant", "visit_unit__unit__site"
    )


#: Reading-set columns the batch path reads: the core's column names, which the model's
#: fields share, plus one column per leg for amps and volts.
_SCALAR_COLUMNS = core_diagnose.READING_SCALARS
_LEG_COLUMNS = {
    "compressor_amps": ("compressor_amps_1", "compressor_amps_2", "compressor_amps_3"),
    "supply_volts": ("supply_volts_1", "supply_volts_2", "supply_volts_3"),
}
_FLAG_COLUMNS = core_diagnose.READING_FLAGS
_FETCHED = (
    "id",
    "visit_unit__unit_id",
    *_SCALAR_COLUMNS,
    *_LEG_COLUMNS["compressor_amps"],
    *_LEG_COLUMNS["supply_volts"],
    *_FLAG_COLUMNS,
    "sight_glass",
)
#: The model columns ``core_diagnose.stored_columns`` fills.
_STORED_FIELDS_OF_CORE = (
    "score",
    "energy_penalty_pct",
    *core_diagnose.STORED_DERIVED,
    "document",
)


def _columns(rows: list[tuple]) -> tuple[np.ndarray, core_diagnose.ReadingColumns]:
    """values_list rows -> (unit ids, ReadingColumns); numpy reads None as NaN."""
    table = np.array([row[:-1] for row in rows], dtype=np.float64).reshape(
        len(rows), len(_FETCHED) - 1
    )
    col = {name: table[:, i] for i, name in enumerate(_FETCHED[:-1])}
    states = {state: float(i) for i, state in enumerate(SIGHT_GLASS_STATES)}
    columns = {name: col[name] for name in _SCALAR_COLUMNS + _FLAG_COLUMNS}
    for name, legs in _LEG_COLUMNS.items():
        columns[name] = np.column_stack([col[leg] for leg in legs])
    columns["sight_glass"] = np.array([states.get(row[-1], np.nan) for row in rows])
    unit_ids = col["visit_unit__unit_id"].astype(np.int64)
    return unit_ids, core_diagnose.ReadingColumns.from_arrays(len(rows), **columns)


#: The columns a rescore writes, in the order its rows carry them.
_UPSERT_COLUMNS = ("reading_set_id", "algorithm_version", *_STORED_FIELDS_OF_CORE, "computed_at")

#: The session's staging table of the COPY path (PostgreSQL's temporary tables are private
#: to their connection, so one name serves every process).
_STAGE = "rimewatch_diagnosis_stage"


def _names(columns: Iterable[str]) -> str:
    return ", ".join(connection.ops.quote_name(c) for c in columns)


def _on_conflict() -> str:
    """The upsert's conflict clause: a stored diagnosis of the same reading set is replaced."""
    quote = connection.ops.quote_name
    updates = ", ".join(f"{quote(c)} = EXCLUDED.{quote(c)}" for c in _UPSERT_COLUMNS[1:])
    return f"ON CONFLICT ({quote('reading_set_id')}) DO UPDATE SET {updates}"


def _upsert_sql() -> str:
    """One INSERT ... ON CONFLICT DO UPDATE (SQLite and PostgreSQL spell it alike)."""
    table = connection.ops.quote_name(Diagnosis._meta.db_table)
    # The document comes as the JSON text the core wrote; PostgreSQL's jsonb takes it by a
    # cast, SQLite keeps the text as it is.
    document = "%s::jsonb" if connection.vendor == "postgresql" else "%s"
    marks = ", ".join(document if c == "document" else "%s" for c in _UPSERT_COLUMNS)
    return f"INSERT INTO {table} ({_names(_UPSERT_COLUMNS)}) VALUES ({marks}) {_on_conflict()}"


def _copies() -> bool:
    """Whether rows are written by COPY (PostgreSQL, through psycopg 3) rather than by one
    executemany of the upsert: the one place that chooses."""
    return connection.vendor == "postgresql"


def _copy_and_upsert(cursor: Any, rows: Iterable[tuple]) -> None:
    """COPY ``rows`` into the staging table, then move them into the diagnoses with one
    INSERT ... SELECT ... ON CONFLICT.

    An executemany sends and plans one statement per row (the upsert was 43 % of a
    million-row rescore); COPY streams the rows as text, jsonb parsing the document the
    core wrote as it arrives. The stage is made like the diagnoses' columns, dropped at
    commit, and emptied by the move itself, so a rescore inside a caller's transaction
    (whose commit comes later) never moves a row twice.
    """
    table = connection.ops.quote_name(Diagnosis._meta.db_table)
    names = _names(_UPSERT_COLUMNS)
    cursor.execute(
        f"CREATE TEMPORARY TABLE IF NOT EXISTS {_STAGE} ON COMMIT DROP "
        f"AS SELECT {names} FROM {table} WITH NO DATA"
    )
    # Django's cursor hands ``copy`` to psycopg's own cursor.
    with cursor.copy(f"COPY {_STAGE} ({names}) FROM STDIN") as copy:
        for row in rows:
            copy.write_row(row)
    cursor.execute(
        f"WITH staged AS (DELETE FROM {_STAGE} RETURNING {names}) "
        f"INSERT INTO {table} ({names}) SELECT {names} FROM staged {_on_conflict()}"
    )


def store_diagnoses(
    ids: list[int], version: str, columns: dict[str, list[Any]], now: dt.datetime
) -> None:
    """Upsert diagnoses of ``ids`` (``columns``: ``core_diagnose.stored_columns``' lists):
    on PostgreSQL by COPY into a staging table and one upsert from it, elsewhere by one
    executemany of plain tuples.

    ``bulk_create`` prepares every value of every row through its field (three quarters of
    a million-row rescore went there); these values are already what the columns hold:
    floats or None, the document's JSON text, and one datetime adapted once.
    """
    stamp = Diagnosis._meta.get_field("computed_at").get_db_prep_value(now, connection)
    rows = zip(
        ids,
        [version] * len(ids),
        *(columns[name] for name in _STORED_FIELDS_OF_CORE),
        [stamp] * len(ids),
        strict=True,
    )
    # One transaction; inside a caller's, no savepoint of its own: a failed batch fails the
    # caller's transaction, which a half-written rescore would leave in no useful state.
    with transaction.atomic(savepoint=False), connection.cursor() as cursor:
        if _copies():
            _copy_and_upsert(cursor, rows)
        else:
            cursor.executemany(_upsert_sql(), list(rows))


def stale_reading_sets(
    *, rescore_all: bool = False, unit_id: int | None = None, since: dt.date | None = None
) -> QuerySet[ReadingSet]:
    """Reading sets whose diagnosis is missing or was made by another algorithm version."""
    qs = ReadingSet.objects.all()
    if not rescore_all:
        qs = qs.exclude(diagnosis__algorithm_version=core_diagnose.ALGORITHM_VERSION)
    if unit_id is not None:
        qs = qs.filter(visit_unit__unit_id=unit_id)
    if since is not None:
        # On the stored time itself: a per-row date cast fails on a time written straight
        # into the database in year 1 (SQLite), and cannot use the index.
        start = dt.datetime.combine(since, dt.time.min, timezone.get_current_timezone())
        qs = qs.filter(taken_at__gte=start)
    return qs


def rescore(
    reading_sets: QuerySet[ReadingSet] | None = None,
    *,
    batch_size: int = 5000,
    progress: Callable[[int], None] | None = None,
    now: dt.datetime | None = None,
) -> int:
    """Diagnose many reading sets through the core's vectorised path; returns how many.

    Rows are read with values_list in batches, units once each, the core runs on numpy
    columns, and the results are upserted by ``store_diagnoses`` (COPY and one upsert on
    PostgreSQL): a fixed number of queries per batch.
    """
    now = now or timezone.now()
    ids = list(
        (reading_sets if reading_sets is not None else stale_reading_sets())
        .order_by("id")
        .values_list("id", flat=True)
    )
    designs: dict[int, UnitDesign] = {}
    elevations: dict[int, float] = {}
    done = 0
    collecting = gc.isenabled()
    for start in range(0, len(ids), batch_size):
        chunk = ids[start : start + batch_size]
        # A batch is some hundred thousand small dicts that live until they are written and
        # form no cycles; the cyclic collector would trace them over and over (a fifth of
        # the time), so it pauses for each batch and catches up between them.
        gc.disable()
        try:
            rows = list(
                ReadingSet.objects.filter(id__in=chunk).order_by("id").values_list(*_FETCHED)
            )
            unit_ids, readings = _columns(rows)
            missing = set(unit_ids.tolist()) - designs.keys()
            if missing:
                for unit in (
                    Unit.objects.filter(id__in=missing)
                    .select_related("refrigerant", "site")
                    .prefetch_related("components")
                ):
                    designs[unit.id] = unit_design(unit, unit.components.all())
                    elevations[unit.id] = unit.site.elevation_m
            order = sorted(set(unit_ids.tolist()))
            position = {uid: i for i, uid in enumerate(order)}
            result = core_diagnose.diagnose_batch(
                [designs[uid] for uid in order],
                readings,
                np.array([elevations[uid] for uid in unit_ids.tolist()]),
                unit_index=np.array([position[uid] for uid in unit_ids.tolist()], dtype=np.intp),
            )
            store_diagnoses(
                [row[0] for row in rows],
                result.algorithm_version,
                core_diagnose.stored_columns(result),
                now,
            )
        finally:
            if collecting:
                gc.enable()
        done += len(rows)
        if progress:
            progress(len(rows))
    return done


def _diagnosis_values(reading_set: ReadingSet, now: dt.datetime | None = None) -> dict[str, Any]:
    """The stored fields of ``reading_set``'s diagnosis with the current algorithm."""
    unit = reading_set.visit_unit.unit
    values = core_diagnose.diagnose_row(
        unit_design(unit), reading_of(reading_set), elevation_m=unit.site.elevation_m
    )
    values["computed_at"] = now or timezone.now()
    return values


def diagnosis_of(reading_set: ReadingSet, now: dt.datetime | None = None) -> Diagnosis:
    """The diagnosis of ``reading_set`` with the current algorithm, not yet stored. Reads
    nothing but the unit's components (none when they are prefetched), so it can run
    before the reading set itself is stored."""
    return Diagnosis(reading_set=reading_set, **_diagnosis_values(reading_set, now))


def diagnose_reading_set(reading_set: ReadingSet, now: dt.datetime | None = None) -> Diagnosis:
    """Diagnose one stored reading set with the current algorithm and store (or replace)
    the result: one write, whose ``update_or_create`` brings its own savepoint."""
    diagnosis, _ = Diagnosis.objects.update_or_create(
        reading_set=reading_set, defaults=_diagnosis_values(reading_set, now)
    )
    return diagnosis


def configured_leak_rules() -> leaks.LeakRuleSet:
    """The jurisdiction's rule set the deployment names (``RIMEWATCH_LEAK_RULE_SET``)."""
    return leaks.RULE_SETS[settings.RIMEWATCH_LEAK_RULE_SET]


def _leak_rules() -> tuple[leaks.LeakRuleSet, leaks.LeakRateMethod]:
    """The configured rule set and the facility-wide method (settings, so other
    jurisdictions can plug in their own rules)."""
    return configured_leak_rules(), leaks.LeakRateMethod(settings.RIMEWATCH_LEAK_RATE_METHOD)


@transaction.atomic
def record_leak_rates(unit: Unit, now: dt.datetime | None = None) -> dict[int, LeakRate]:
    """Recompute and store the leak rate of every addition to ``unit``; keyed by event id.

    The rates of earlier additions feed later ones (rolling window, annualizing clock), so
    the whole history of the unit is recomputed together; a handful of rows per unit.
    """
    rules, method = _leak_rules()
    events = list(
        RefrigerantEvent.objects.filter(visit_unit__unit=unit).order_by("occurred_on", "id")
    )
    additions: list[tuple[RefrigerantEvent, appliance_leaks.RefrigerantAddition]] = []
    repairs: list[appliance_leaks.LeakRepair] = []
    for e in events:
        # An addition always has its amount: a check constraint holds it.
        if e.kind == RefrigerantEventKind.ADDED and e.amount_kg is not None:
            reason = leaks.ExcludedReason(e.leak_rate_exemption) if e.leak_rate_exemption else None
            additions.append(
                (e, appliance_leaks.RefrigerantAddition(e.occurred_on, e.amount_kg, reason))
            )
        elif e.kind == RefrigerantEventKind.LEAK_REPAIRED:
            repairs.append(appliance_leaks.LeakRepair(repaired_on=e.occurred_on))
        elif e.kind == RefrigerantEventKind.FOLLOW_UP_VERIFICATION and e.passed and repairs:
            repairs[-1] = appliance_leaks.LeakRepair(
                repairs[-1].repaired_on, verified_on=e.occurred_on
            )
    appliance = appliance_leaks.Appliance(
        refrigerant=unit.refrigerant.designation,
        full_charge_kg=unit.full_charge_kg,
        appliance_type=leaks.ApplianceType(unit.appliance_type),
    )
    results = appliance_leaks.leak_rates(
        appliance,
        [addition for _, addition in additions],
        method=method,
        repairs=repairs,
        rules=rules,
    )
    # Same-day additions come back combined (one result per day and exclusion reason).
    by_key = {(r.occurred_on, r.excluded_reason): r for r in results}
    stored: dict[int, LeakRate] = {}
    for event, addition in additions:
        result = by_key[(addition.occurred_on, addition.excluded_reason)]
        stored[event.id], _ = LeakRate.objects.update_or_create(
            event=event,
            defaults={
                "rule_set": rules.name[:60],
                "method": method.value,
                "annualizing_percent": result.annualizing_percent,
                "rolling_average_percent": result.rolling_average_percent,
                "threshold_percent": result.threshold_percent,
                "over_threshold": result.over_threshold,
                "in_scope": result.in_scope,
                "repair_due_on": result.repair_due_on,
                "verification_due_on": result.verification_due_on,
                "note": "" if result.calculated else f"not calculated: {result.excluded_reason}",
                "computed_at": now or timezone.now(),
            },
        )
    return stored


def record_leak_rate(event: RefrigerantEvent, now: dt.datetime | None = None) -> LeakRate | None:
    """The stored leak rate of one addition (recomputing the unit's history); None otherwise."""
    if event.kind != RefrigerantEventKind.ADDED:
        return None
    return record_leak_rates(event.visit_unit.unit, now=now).get(event.id)


@dataclasses.dataclass(frozen=True)
class FlagRefresh:
    opened: int
    updated: int
    cleared: int
    #: Units left out because a stored value of theirs cannot be worked with (their flags
    #: are left as they were).
    skipped: tuple[SkippedUnit, ...] = ()


def _forecast_json(decision: flags.FlagDecision) -> dict[str, Any]:
    return {
        "quantities": [list(q) for q in decision.forecast],
        "dates": {name: day.isoformat() for name, day in decision.forecast_dates},
    }


def _evidence_json(decision: flags.FlagDecision) -> list[dict[str, Any]]:
    return [
        {
            "text": e.text,
            "quantities": [list(q) for q in e.quantities],
            "observed_on": e.observed_on.isoformat() if e.observed_on else None,
        }
        for e in decision.evidence
    ]


#: Units whose histories a flag refresh holds at once: some 36 reading rows each over three
#: years of monthly visits, so a chunk stays near a hundred megabytes whatever the fleet.
FLAG_CHUNK_UNITS = 1000


def refresh_flags(
    today: dt.date | None = None,
    unit_ids: Iterable[int] | None = None,
    now: dt.datetime | None = None,
    *,
    chunk_units: int = FLAG_CHUNK_UNITS,
) -> FlagRefresh:
    """Open, update and clear flags so they match the core's decisions for each unit now.

    One open flag per unit and kind: the partial unique constraint guarantees it, and
    ``flags.reconcile`` decides which rows to open, update or clear. A unit whose stored
    dates cannot be worked with is skipped (and reported in the result), not the refresh.

    The fleet (or ``unit_ids``) is worked through ``chunk_units`` units at a time, each
    chunk gathered, decided and written in its own transaction: every decision rests on one
    unit's history alone, so the chunks decide what one pass would, and memory stays that
    of one chunk however large the fleet grows. A refresh interrupted between chunks leaves
    the rest as it was, for the next run to finish.
    """
    now = now or timezone.now()
    today = today or timezone.localdate(now)
    rules, method = _leak_rules()
    skipped: list[SkippedUnit] = []
    ids = list(unit_ids) if unit_ids is not None else unit_ids_in_service(today)
    totals = [0, 0, 0]
    for start in range(0, len(ids), chunk_units):
        histories = unit_histories(today, ids[start : start + chunk_units], method, skipped)
        decided = flags.decide_flags_many(histories, today, flags.FlagRules(leak=rules))
        for i, n in enumerate(_reconcile_flags(histories, decided, now)):
            totals[i] += n
        # Let go of this chunk before the next is read: two are never held at once.
        del histories, decided
    return FlagRefresh(
        opened=totals[0], updated=totals[1], cleared=totals[2], skipped=tuple(skipped)
    )


def _reconcile_flags(
    histories: list[flags.UnitHistory],
    decided: dict[int, tuple[flags.FlagDecision, ...]],
    now: dt.datetime,
) -> tuple[int, int, int]:
    """Write the flags of ``histories``' units to match ``decided``; returns how many were
    opened, updated and cleared."""
    open_rows: dict[int, dict[str, Flag]] = {}
    for flag in Flag.objects.filter(
        cleared_at__isnull=True, unit_id__in=[h.unit_id for h in histories]
    ):
        open_rows.setdefault(flag.unit_id, {})[flag.kind] = flag
    to_create: list[Flag] = []
    to_update: list[Flag] = []
    to_clear: list[int] = []
    for history in histories:
        current = open_rows.get(history.unit_id, {})
        changes = flags.reconcile(current.keys(), decided.get(history.unit_id, ()))
        for decision in changes.to_open:
            to_create.append(
                Flag(
                    unit_id=history.unit_id,
                    kind=decision.kind.value,
                    severity=decision.severity.value,
                    summary=decision.summary[:300],
                    evidence=_evidence_json(decision),
                    projected_on=decision.projected_date,
                    forecast=_forecast_json(decision),
                    opened_at=now,
                    updated_at=now,
                )
            )
        for decision in changes.to_update:
            flag = current[decision.kind.value]
            fresh = (
                decision.severity.value,
                decision.summary[:300],
                _evidence_json(decision),
                decision.projected_date,
                _forecast_json(decision),
            )
            # An open flag whose judgement has not changed is left alone (no write).
            held = (flag.severity, flag.summary, flag.evidence, flag.projected_on, flag.forecast)
            if fresh != held:
                (
                    flag.severity,
                    flag.summary,
                    flag.evidence,
                    flag.projected_on,
                    flag.forecast,
                ) = fresh
                flag.updated_at = now
                to_update.append(flag)
        to_clear.extend(current[kind.value].pk for kind in changes.to_close)
    if not (to_create or to_update or to_clear):
        return 0, 0, 0  # nothing changed: no transaction to open
    with transaction.atomic():
        Flag.objects.bulk_create(to_create)
        Flag.objects.bulk_update(
            to_update,
            ["severity", "summary", "evidence", "projected_on", "forecast", "updated_at"],
        )
        Flag.objects.filter(pk__in=to_clear).update(cleared_at=now, updated_at=now)
    return len(to_create), len(to_update), len(to_clear)


# --- what the core resolved for one unit, for a client judging readings itself ----------


def _number(x: float) -> float | None:
    """A finite value as a float; NaN (missing) as None."""
    return float(x) if np.isfinite(x) else None


def _edge(offset: float | None) -> float | str | None:
    """A scoring rule's edge on the wire: a number, ``"range"`` where the target brings
    the edge itself, or None for a side that is never judged (an infinite one)."""
    if offset is None:
        return "range"
    return None if np.isinf(offset) else float(offset)


def _judgement() -> dict[str, Any]:
    """How a metric's status is judged (``scoring.SCORING_TABLE`` and the instruments'
    margin), as data."""
    rules = {
        name: {
            "ok_low": _edge(rule.ok_low),
            "ok_high": _edge(rule.ok_high),
            "fault_low": None if np.isinf(rule.fault_low) else rule.fault_low,
            "fault_high": None if np.isinf(rule.fault_high) else rule.fault_high,
            "relative": rule.relative,
            "margin_from": rule.margin_from,
            "watch_points": rule.watch_points,
            "fault_points": rule.fault_points,
            "source": rule.source,
        }
        for name, rule in scoring.SCORING_TABLE.items()
    }
    return {
        "instruments": {
            "thermometer_k": scoring.THERMOMETER_K,
            "gauge_kpa": scoring.GAUGE_KPA,
            "slope_step_kpa": core_batch.SLOPE_STEP_KPA,
        },
        "metrics": rules,
    }


def unit_targets(unit: Unit) -> dict[str, Any]:
    """What the core resolved for ``unit`` (its site and refrigerant at hand), in SI: every
    design quantity with its ok range and origin, the limits and nameplate it is judged
    against, and how a metric's status is judged. Enough for a client to work out the
    targets and statuses of a reading as the stored diagnosis will. Reads the unit's
    components (one query) for the capacitors fitted now."""
    design_ = unit_design(unit)
    columns, resolved = core_design.columns_and_targets((design_,))
    by_name = resolved.unit(0)
    targets = {name: dataclasses.asdict(target) for name, target in by_name.items()}
    control = HEAD_PRESSURE_CONTROLS[int(columns.control_code[0])]
    metering = METERING_DEVICES[int(columns.metering_code[0])]
    receiver = _number(resolved.has_receiver[0])
    refrigerant = unit.refrigerant
    site = unit.site

    def rating(rated: float, low: float, high: float) -> dict[str, float | None] | None:
        if not np.isfinite(low):
            return None
        return {"rated_uf": _number(rated), "low_uf": _number(low), "high_uf": _number(high)}

    return {
        "unit": unit.pk,
        "tag": unit.tag,
        "application": design_.application,
        "algorithm_version": core_diagnose.ALGORITHM_VERSION,
        "refrigerant": {
            "designation": refrigerant.designation,
            "kind": refrigerant.kind,
            "safety_class": refrigerant.safety_class,
            "flammable": refrigerant.flammable,
        },
        "site": {
            "id": site.pk,
            "name": site.name,
            "elevation_m": site.elevation_m,
            "time_zone": site.time_zone,
        },
        "design_temperature_basis": design_.temperature_basis,
        "metering_device": {
            "value": metering,
            "origin": "design" if design_.metering_device is not None else "application_default",
        },
        "condenser_type": design_.condenser_type,
        "has_receiver": {
            "value": None if receiver is None else bool(receiver),
            "origin": by_name["subcooling_k"].origin,
        },
        "head_pressure_control": {
            "value": control,
            "origin": "design"
            if design_.head_pressure_control is not None
            else "application_default",
            "held_low_c": by_name["head_setpoint_c"].low,
            "held_high_c": by_name["head_setpoint_c"].high,
        },
        "targets": targets,
        "limits": {
            "high_pressure_cutout_kpa_gauge": _number(resolved.cutout_kpa_gauge[0]),
            "compression_ratio_max": _number(resolved.cr_limit[0]),
            "compression_ratio_typical_low": _number(resolved.cr_typical_low[0]),
            "discharge_line_max_c": core_targets.DISCHARGE_LINE_MAX_C.value,
            "gas_cooler_approach_k": core_targets.GAS_COOLER_APPROACH_K.value,
        },
        "electrical": {
            "nameplate_volts": unit.nameplate_volts,
            "nameplate_volts_max": unit.nameplate_volts_max,
            "volts_low": _number(resolved.volts_low[0]),
            "volts_high": _number(resolved.volts_high[0]),
            "volts_nominal": _number(resolved.volts_nominal[0]),
            "phase": unit.phase,
            "hertz": unit.hertz,
            "rla_a": unit.rla_a,
            "lra_a": unit.lra_a,
            "run_capacitor": rating(
                resolved.run_cap_uf[0], resolved.run_cap_low[0], resolved.run_cap_high[0]
            ),
            "start_capacitor": rating(
                resolved.start_cap_uf[0], resolved.start_cap_low[0], resolved.start_cap_high[0]
            ),
        },
        "judgement": _judgement(),
    }
