"""How long a fleet-wide flag refresh takes against simply reading the rows it rests on, and
how much memory it needs as the fleet grows.

Builds a throwaway SQLite database (or with ``--postgres`` uses the throwaway PostgreSQL of
``scripts/with-postgres.sh``): ``--units`` units over a few sites and refrigerants, default
5,000 (or several sizes, ``--units 2500,10000``: the fleet is built at the first and grown
to each next), ``--visits`` monthly visits each, default 24: one visit unit, one as-found
reading set and its stored diagnosis per visit; bulk inserts. Some units drift (condenser
split rising), some have capacitor readings, start parts and replacements, some locked-rotor
or low-voltage starts, some refrigerant additions with repairs, some overdue maintenance.
Then at each size it measures side by side in one run, best of ``--repeats`` (default 3),
interleaved:

- floor: the queries ``history.unit_histories`` makes for each chunk of units that
  ``services.refresh_flags`` works through (its own querysets, from
  ``history.history_queries``: the same ``values()`` / ``values_list()`` rows, materialised
  into lists, a chunk at a time), with no grouping or computation;
- ``history.unit_histories`` alone, chunk by chunk (gather the rows into the core's inputs);
- ``services.refresh_flags`` in full (gather, core decisions, write): on an empty flag table
  (every decision opens a flag) and again with those flags open (every one updated).

It counts the queries of one refresh over a few units and over all of them (six reads per
chunk of units, whatever the chunk holds), and measures the peak memory of a refresh on an
empty flag table in a fresh process (as ``manage.py refresh_flags`` runs), in chunks
(``services.FLAG_CHUNK_UNITS``) and in one pass over the whole fleet (how it ran before).

    .venv/bin/python bench/flags.py [--units 5000] [--visits 24] [--repeats 3]
    bash scripts/with-postgres.sh .venv/bin/python bench/flags.py --postgres --units 2500,10000

Goals (trends issue, issue 17): the refresh within 3x of the floor; its memory flat as the
fleet grows, under 300 MB at 1,000,000 reading sets. Wall-clock figures move with whatever
else the machine runs; the ratio, measured in the same rounds, is the steadier one.
"""

from __future__ import annotations

import argparse
import dataclasses
import datetime as dt
import math
import subprocess
import sys
import tempfile
import time
import uuid
from collections.abc import Callable
from pathlib import Path

import numpy as np

ROOT = Path(__file__).resolve().parent.parent
sys.path.insert(0, str(ROOT))

SITES = 40
CHUNK_UNITS = 250

#: Synthetic fleet: (refrigerant, application, share of the units).
KINDS = (
    ("R-404A", "medium_temp", 0.30),
    ("R-448A", "low_temp", 0.25),
    ("R-134a", "reach_in", 0.20),
    ("R-290", "reach_in", 0.10),
    ("R-449A", "medium_temp", 0.15),
)

#: Shares of the units with each story (synthetic; overlapping on purpose).
DRIFTING = 0.06
SINGLE_PHASE = 0.40
START_PARTS = 0.30  # of the single-phase units: a start capacitor and relay too
CAPACITOR_FADING = 0.10  # of the single-phase units
HARD_START = 0.05  # of the units with start parts
REPLACED = 0.08  # of the units with start parts: the start capacitor changed last year
LOCKED_ROTOR = 0.03
LOW_VOLTAGE = 0.03
LEAKING = 0.08
OVERDUE = 0.03  # the last six visits submitted but not reviewed


# --- the synthetic fleet ----------------------------------------------------------------------


def _build_units(rng: np.random.Generator, count: int, first_tag: int = 0) -> list:
    """Sites, units and their components in bulk; returns the units."""
    from fleet.models import Component, Customer, Refrigerant, Site, Unit

    customer = Customer.objects.create(name=f"Bench customer {first_tag}")
    sites = Site.objects.bulk_create(
        Site(
            customer=customer,
            name=f"Bench site {k}",
            elevation_m=round(float(rng.uniform(0.0, 1600.0))),
            design_ambient_c=round(float(rng.uniform(32.0, 43.0)), 1),
        )
        for k in range(SITES)
    )
    refrigerants = {r.designation: r for r in Refrigerant.objects.all()}
    shares = np.array([k[2] for k in KINDS])
    kind_of = rng.choice(len(KINDS), count, p=shares / shares.sum())
    single = rng.random(count) < SINGLE_PHASE
    units = []
    for u in range(count):
        designation, application, _ = KINDS[kind_of[u]]
        rla = float(rng.uniform(4.0, 25.0))
        units.append(
            Unit(
                site=sites[u % SITES],
                tag=f"F-{first_tag + u:05d}",
                application=application,
                refrigerant=refrigerants[designation],
                full_charge_kg=float(rng.uniform(2.0, 60.0)),
                metering_device="capillary" if application == "reach_in" else "txv",
                has_receiver=application != "reach_in",
                design_box_temp_c=-23.0 if application == "low_temp" else 2.0,
                design_condenser_split_k=None if rng.random() < 0.5 else 11.0,
                high_pressure_cutout_kpa_gauge=None if rng.random() < 0.1 else 2800.0,
                nameplate_volts=230.0 if single[u] else 460.0,
                phase=1 if single[u] else 3,
                rla_a=rla,
                lra_a=rla * 6.0,
                pm_interval_days=90 if rng.random() < 0.8 else 30,
                installed_on=dt.date(2015, 1, 1),
            )
        )
    units = Unit.objects.bulk_create(units)
    parts = []
    for unit in units:
        if unit.phase != 1:
            continue
        parts.append(
            Component(
                unit=unit,
                kind="run_capacitor",
                rating_uf_min=42.3,
                rating_uf_max=47.7,
                installed_on=dt.date(2019, 5, 1),
            )
        )
        unit.bench_start = rng.random() < START_PARTS
        if unit.bench_start:
            parts.append(Component(unit=unit, kind="start_relay", installed_on=dt.date(2019, 5, 1)))
            parts.append(
                Component(
                    unit=unit,
                    kind="start_capacitor",
                    rating_uf_min=88.0,
                    rating_uf_max=108.0,
                    installed_on=dt.date(2019, 5, 1),
                )
            )
    Component.objects.bulk_create(parts)
    return units


def _monthly(today: dt.date, visits: int) -> list[dt.datetime]:
    """Visit starts one month apart, the last a week before ``today``."""
    last = dt.datetime.combine(today, dt.time(14, 0), tzinfo=dt.UTC) - dt.timedelta(days=7)
    return [last - dt.timedelta(days=round(30.44 * (visits - 1 - m))) for m in range(visits)]


def _build_history(
    rng: np.random.Generator, units: list, visits: int, today: dt.date, reviewer
) -> None:
    """Visits, visit units, reading sets, diagnoses, later components and refrigerant events,
    in bulk, a chunk of units at a time."""
    from diagnostics.core.diagnose import ALGORITHM_VERSION
    from diagnostics.models import Diagnosis
    from fleet.models import Component, ReadingSet, RefrigerantEvent, Visit, VisitUnit

    starts = _monthly(today, visits)
    years = np.array([(s - starts[-1]).days / 365.25 for s in starts])  # <= 0, now = 0
    season = 8.0 * np.sin(2 * math.pi * np.array([s.month for s in starts]) / 12.0 - 2.0)
    t0 = time.perf_counter()
    now = dt.datetime.now(dt.UTC)
    made = 0
    for first in range(0, len(units), CHUNK_UNITS):
        chunk = units[first : first + CHUNK_UNITS]
        visit_rows, later_parts = [], []
        for unit in chunk:
            overdue = rng.random() < OVERDUE
            for m, begins in enumerate(starts):
                reviewed = not (overdue and m >= visits - 6)
                visit_rows.append(
                    Visit(
                        reference=f"FB-{unit.pk:05d}-{m:03d}",
                        site_id=unit.site_id,
                        kind="planned",
                        status="reviewed" if reviewed else "submitted",
                        window_start=begins,
                        window_end=begins + dt.timedelta(hours=3),
                        reviewed_by=reviewer if reviewed else None,
                        reviewed_at=begins + dt.timedelta(days=2) if reviewed else None,
                        submitted_at=begins + dt.timedelta(hours=3),
                    )
                )
            if overdue and rng.random() < 0.5:  # half of them already booked
                booked = dt.datetime.combine(
                    today + dt.timedelta(days=10), dt.time(9), tzinfo=dt.UTC
                )
                visit_rows.append(
                    Visit(
                        reference=f"FB-{unit.pk:05d}-next",
                        site_id=unit.site_id,
                        kind="planned",
                        status="scheduled",
                        window_start=booked,
                        window_end=booked + dt.timedelta(hours=3),
                    )
                )
        created = Visit.objects.bulk_create(visit_rows)
        visit_units = VisitUnit.objects.bulk_create(
            VisitUnit(visit=v, unit_id=int(v.reference.split("-")[1])) for v in created
        )
        by_unit: dict[int, list] = {}
        for vu, v in zip(visit_units, created, strict=True):
            if v.status != "scheduled":
                by_unit.setdefault(vu.unit_id, []).append((vu, v.window_start))

        readings, splits, events = [], [], []
        for unit in chunk:
            rows = by_unit[unit.pk]
            n = len(rows)
            design = unit.design_condenser_split_k or 11.0
            split = design + rng.normal(0.0, 0.8, n)
            if rng.random() < DRIFTING:
                split += rng.uniform(1.5, 8.0) * (years - years[0])
            air = 24.0 + season + rng.normal(0.0, 2.0, n)
            amps = unit.rla_a * rng.uniform(0.7, 1.05, n)
            volts = unit.nameplate_volts * rng.uniform(0.96, 1.04, n)
            running = np.ones(n, dtype=bool)
            if rng.random() < LOCKED_ROTOR:
                hit = rng.choice(np.arange(n - 8, n), 2, replace=False)
                running[hit], amps[hit] = False, unit.lra_a * rng.uniform(0.85, 0.98)
            if rng.random() < LOW_VOLTAGE:
                hit = rng.choice(np.arange(n - 8, n), 3, replace=False)
                volts[hit] = unit.nameplate_volts * rng.uniform(0.80, 0.88)
            run_uf = start_uf = None
            if unit.phase == 1:
                loss = rng.uniform(1.5, 4.0) if rng.random() < CAPACITOR_FADING else 0.0
                run_uf = 45.0 + rng.normal(0.0, 0.3, n) + loss * (years - years[0]) * -1.0
                run_uf = np.maximum(run_uf, 1.0)
                run_uf[rng.random(n) < 0.2] = np.nan  # not measured that visit
                if unit.bench_start:
                    start_uf = rng.uniform(92.0, 104.0, n)
                    start_uf[rng.random(n) < 0.3] = np.nan
                    later_parts += _start_part_changes(rng, unit, rows[-12][1].date())
            for j, (vu, begins) in enumerate(rows):
                readings.append(
                    ReadingSet(
                        visit_unit=vu,
                        taken_at=begins + dt.timedelta(minutes=20),
                        stage="as_found",
                        box_temp_c=unit.design_box_temp_c + float(rng.normal(0.0, 1.0)),
                        entering_air_temp_c=float(air[j]),
                        compressor_amps_1=float(amps[j]),
                        supply_volts_1=float(volts[j]),
                        run_capacitor_uf=_value(run_uf, j),
                        start_capacitor_uf=_value(start_uf, j),
                        compressor_running=bool(running[j]),
                        condenser_fan_running=True,
                        evaporator_fans_running=True,
                        sight_glass="clear",
                    )
                )
                splits.append((float(split[j]), float(air[j] + split[j])))
            if rng.random() < LEAKING:
                events += _leak_events(rng, unit, rows)
        stored = ReadingSet.objects.bulk_create(readings)
        Diagnosis.objects.bulk_create(
            Diagnosis(
                reading_set=rs,
                algorithm_version=ALGORITHM_VERSION,
                score=float(rng.uniform(60.0, 100.0)),
                condenser_split_k=split_k,
                condensing_c=condensing_c,
                computed_at=now,
            )
            for rs, (split_k, condensing_c) in zip(stored, splits, strict=True)
        )
        Component.objects.bulk_create(later_parts)
        RefrigerantEvent.objects.bulk_create(events)
        made += len(chunk)
        rate = made / (time.perf_counter() - t0)
        print(f"\r  {made:>6,} of {len(units):,} units ({rate:,.0f}/s)", end="", flush=True)
    print()


def _value(column: np.ndarray | None, j: int) -> float | None:
    if column is None or math.isnan(column[j]):
        return None
    return float(column[j])


def _start_part_changes(rng: np.random.Generator, unit, year_ago: dt.date) -> list:
    """A hard-start kit, or a start capacitor replaced within the last year (synthetic)."""
    from fleet.models import Component

    out = []
    if rng.random() < HARD_START:
        out.append(Component(unit=unit, kind="hard_start_kit", installed_on=year_ago))
    if rng.random() < REPLACED:
        changed = year_ago + dt.timedelta(days=int(rng.integers(30, 300)))
        out.append(
            Component(
                unit=unit,
                kind="start_capacitor",
                rating_uf_min=88.0,
                rating_uf_max=108.0,
                installed_on=changed,
            )
        )
        out.append(Component(unit=unit, kind="start_relay", installed_on=changed))
    return out


def _leak_events(rng: np.random.Generator, unit, rows: list) -> list:
    """One to three additions, and for some a repair and its passed verification."""
    from fleet.models import RefrigerantEvent

    out = []
    picks = sorted(rng.choice(len(rows), int(rng.integers(1, 4)), replace=False))
    for k in picks:
        vu, begins = rows[k]
        out.append(
            RefrigerantEvent(
                visit_unit=vu,
                kind="added",
                amount_kg=round(unit.full_charge_kg * float(rng.uniform(0.05, 0.4)), 2),
                occurred_on=begins.date(),
                leak_rate_exemption="seasonal_variance" if rng.random() < 0.1 else "",
            )
        )
    if rng.random() < 0.4:
        vu, begins = rows[picks[-1]]
        out.append(RefrigerantEvent(visit_unit=vu, kind="leak_repaired", occurred_on=begins.date()))
        out.append(
            RefrigerantEvent(
                visit_unit=vu,
                kind="follow_up_verification",
                occurred_on=begins.date(),
                passed=True,
            )
        )
    return out


# --- what is measured -------------------------------------------------------------------------


def _chunks(today: dt.date) -> list[list[int]]:
    """The chunks of unit ids ``services.refresh_flags`` works through, in its order."""
    from diagnostics import history, services

    ids = history.unit_ids_in_service(today)
    size = services.FLAG_CHUNK_UNITS
    return [ids[k : k + size] for k in range(0, len(ids), size)]


def _floor(today: dt.date) -> int:
    """The rows ``unit_histories`` reads for each chunk, by its own querysets, kept in lists
    (one chunk at a time, as the refresh holds them): nothing else.

    Read under the same paused collector as ``unit_histories``, so the two differ only by
    what is built on the rows.
    """
    from diagnostics import history

    rows = 0
    for chunk in _chunks(today):
        with history.collector_paused():
            read = [list(qs) for qs in history.history_queries(today, chunk)]
        rows += sum(len(r) for r in read)
        del read
    return rows


def _histories(today: dt.date) -> int:
    """``history.unit_histories`` chunk by chunk; how many units it gathered."""
    from diagnostics import history

    return sum(len(history.unit_histories(today, chunk)) for chunk in _chunks(today))


def _timed(fn: Callable[[], object]) -> tuple[float, object]:
    t = time.perf_counter()
    out = fn()
    return time.perf_counter() - t, out


def _queries(fn: Callable[[], object]) -> str:
    """The statements ``fn`` runs, as 'n (r reads, w writes)'; BEGIN and COMMIT not counted."""
    from django.db import connection
    from django.test.utils import CaptureQueriesContext

    with CaptureQueriesContext(connection) as captured:
        fn()
    verbs = [q["sql"].split(None, 1)[0].upper() for q in captured.captured_queries]
    reads = verbs.count("SELECT")
    writes = sum(v in {"INSERT", "UPDATE", "DELETE"} for v in verbs)
    return f"{reads + writes} ({reads} reads, {writes} writes)"


def _peak_mb() -> float:
    """Peak resident memory of this process so far, in MB: Linux's high-water mark of the
    program's memory (VmHWM), which, unlike ru_maxrss, does not carry the peak of the
    process that started this one across its fork and exec."""
    for line in Path("/proc/self/status").read_text().splitlines():
        if line.startswith("VmHWM:"):
            return int(line.split()[1]) / 1024  # kB
    raise SystemExit("no VmHWM in /proc/self/status: peak memory is measured on Linux")


def _peak_of_refresh(folder: Path, postgres: bool, chunk_units: int) -> tuple[float, float]:
    """(peak memory before, peak memory after) one refresh with ``chunk_units`` in a fresh
    process, in MB: what ``manage.py refresh_flags`` holds, imports and Django included."""
    command = [sys.executable, __file__, "--peak-of-refresh", str(chunk_units)]
    command += ["--keep", str(folder)] + (["--postgres"] if postgres else [])
    out = subprocess.run(command, check=True, capture_output=True, text=True).stdout.split()
    return float(out[-2]), float(out[-1])


@dataclasses.dataclass
class Size:
    """What was measured at one fleet size."""

    units: int
    reading_sets: int
    best: dict[str, float]
    rows: int
    opened: int
    updated: int
    kinds: str
    counts: dict[str, tuple[str, str]]
    memory: dict[str, tuple[float, float]]


def _measure(folder: Path, args: argparse.Namespace, today: dt.date) -> Size:
    from django.db import connections
    from django.db.models import Count

    from diagnostics import services
    from diagnostics.models import Flag
    from fleet.models import ReadingSet, Unit

    units = list(Unit.objects.order_by("pk").values_list("pk", flat=True))

    def refresh():
        return services.refresh_flags(today=today)

    best = {"floor": math.inf, "histories": math.inf, "empty": math.inf, "open": math.inf}
    rows = opened = updated = 0
    for round_ in range(args.repeats):
        Flag.objects.all().delete()  # untimed: the empty-table refresh starts from nothing
        seconds, rows = _timed(lambda: _floor(today))
        best["floor"] = min(best["floor"], seconds)
        seconds, _ = _timed(lambda: _histories(today))
        best["histories"] = min(best["histories"], seconds)
        seconds, result = _timed(refresh)
        best["empty"] = min(best["empty"], seconds)
        opened = result.opened
        seconds, result = _timed(refresh)
        best["open"] = min(best["open"], seconds)
        updated = result.updated
        print(
            f"  round {round_ + 1}: floor {best['floor']:.2f} s, histories "
            f"{best['histories']:.2f} s, refresh {best['empty']:.2f} / {best['open']:.2f} s"
            " (best so far)"
        )

    by_kind = dict(
        Flag.objects.filter(cleared_at__isnull=True).values_list("kind").annotate(n=Count("id"))
    )
    counts = {}
    for label, ids in (("50 units", units[:50]), (f"{len(units):,} units", None)):
        Flag.objects.all().delete()
        empty = _queries(lambda ids=ids: services.refresh_flags(today=today, unit_ids=ids))
        reopen = _queries(lambda ids=ids: services.refresh_flags(today=today, unit_ids=ids))
        counts[label] = (empty, reopen)

    memory = {}
    for label, chunk in (
        (f"chunks of {services.FLAG_CHUNK_UNITS:,}", services.FLAG_CHUNK_UNITS),
        ("one pass", len(units)),
    ):
        Flag.objects.all().delete()
        connections.close_all()  # the child process writes; SQLite wants no reader holding on
        memory[label] = _peak_of_refresh(folder, args.postgres, chunk)
        print(f"  peak memory of a refresh in {label}: {memory[label][1]:.0f} MB")
    return Size(
        units=len(units),
        reading_sets=ReadingSet.objects.count(),
        best=best,
        rows=rows,
        opened=opened,
        updated=updated,
        kinds=", ".join(f"{k} {n}" for k, n in sorted(by_kind.items())),
        counts=counts,
        memory=memory,
    )


def _report(size: Size) -> None:
    floor = size.best["floor"]
    print(f"\n{size.units:,} units, {size.reading_sets:,} reading sets")
    print(f"rows read by the floor: {size.rows:,}")
    for label, key in (
        ("floor (the same reads)", "floor"),
        ("unit_histories", "histories"),
        ("refresh_flags, no flags open", "empty"),
        ("refresh_flags, flags open", "open"),
    ):
        print(f"{label:<30}{size.best[key]:7.2f} s   {size.best[key] / floor:5.2f}x floor")
    print(f"flags opened: {size.opened:,} ({size.kinds}); updated on the re-run: {size.updated:,}")
    print("queries per refresh (no flags open / flags open):")
    for label, (empty, reopen) in size.counts.items():
        print(f"  {label:<12} {empty} / {reopen}")


def _side_by_side(sizes: list[Size]) -> None:
    """The sizes in columns: time against the floor, and peak memory chunked and in one pass,
    extrapolated (linearly, from the first and last size) to 1,000,000 reading sets when no
    size reached it."""
    labels = list(sizes[0].memory)
    print("\n" + f"{'reading sets':<34}" + "".join(f"{s.reading_sets:>14,}" for s in sizes))
    print(f"{'units':<34}" + "".join(f"{s.units:>14,}" for s in sizes))
    for label, key in (
        ("refresh, no flags open (s)", "empty"),
        ("refresh, flags open (s)", "open"),
    ):
        print(f"{label:<34}" + "".join(f"{s.best[key]:>14.2f}" for s in sizes))
    worst = [max(s.best["empty"], s.best["open"]) / s.best["floor"] for s in sizes]
    print(f"{'refresh / floor (goal: within 3x)':<34}" + "".join(f"{w:>13.2f}x" for w in worst))
    first, last = sizes[0], sizes[-1]
    for label in labels:
        peaks = [s.memory[label][1] for s in sizes]
        print(f"{'peak MB, ' + label:<34}" + "".join(f"{p:>14.0f}" for p in peaks))
    print(
        f"{'  (a fresh process before it, MB)':<34}"
        + "".join(f"{s.memory[labels[0]][0]:>14.0f}" for s in sizes)
    )
    if last.reading_sets >= 1_000_000:
        print("\n(1,000,000 reading sets measured above: goal under 300 MB chunked)")
    elif last.reading_sets > first.reading_sets:
        print(
            "\nat 1,000,000 reading sets, extrapolated linearly from the first and last size"
            f" (the chunked figure means something when both hold over {labels[0][10:]} units):"
        )
        for label in labels:
            low, high = first.memory[label][1], last.memory[label][1]
            slope = (high - low) / (last.reading_sets - first.reading_sets)
            at_million = high + slope * (1_000_000 - last.reading_sets)
            print(f"  peak memory, {label}: {at_million:,.0f} MB (goal: under 300 MB)")


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument(
        "--units", default="5000", help="fleet size, or sizes to grow through: 2500,10000"
    )
    parser.add_argument("--visits", type=int, default=24, help="monthly visits per unit")
    parser.add_argument("--repeats", type=int, default=3)
    parser.add_argument("--seed", type=int, default=7)
    parser.add_argument(
        "--keep",
        type=Path,
        help="build the database in this folder and keep it; a later run reuses it as it is",
    )
    parser.add_argument(
        "--postgres",
        action="store_true",
        help="use the PostgreSQL of DATABASE_URL (run under scripts/with-postgres.sh)",
    )
    parser.add_argument("--peak-of-refresh", type=int, help=argparse.SUPPRESS)
    args = parser.parse_args()
    if args.visits < 12:
        parser.error("--visits must be at least 12 (the stories use the last year)")
    try:
        args.sizes = sorted(int(n) for n in args.units.split(","))
    except ValueError:
        parser.error(f"--units: {args.units!r} is not a number or a list like 2500,10000")
    if args.peak_of_refresh is not None:
        _refresh_alone(args)
    elif args.keep is not None:
        args.keep.mkdir(parents=True, exist_ok=True)
        _run(args.keep.resolve(), args)
    else:
        with tempfile.TemporaryDirectory(prefix="rimewatch-bench-flags-") as tmp:
            _run(Path(tmp), args)


def _setup(folder: Path, postgres: bool, migrate: bool = True) -> None:
    from bench._db import setup_database

    # DEBUG off: no query log in the timed runs (CaptureQueriesContext turns it on itself).
    setup_database(
        folder,
        postgres=postgres,
        migrate=migrate,
        DEBUG="0",
        SECRET_KEY="bench-only-" + uuid.uuid4().hex,
        LOG_LEVEL="WARNING",
    )


def _refresh_alone(args: argparse.Namespace) -> None:
    """The child of ``_peak_of_refresh``: one refresh, then the peak memory before and after."""
    _setup(args.keep, args.postgres, migrate=False)
    from django.utils import timezone

    from diagnostics import services

    before = _peak_mb()
    services.refresh_flags(today=timezone.localdate(), chunk_units=args.peak_of_refresh)
    print(f"{before:.1f} {_peak_mb():.1f}")


def _run(folder: Path, args: argparse.Namespace) -> None:
    _setup(folder, args.postgres)
    from django.contrib.auth.models import User
    from django.utils import timezone

    from fleet.models import Unit

    today = timezone.localdate()
    rng = np.random.default_rng(args.seed)
    present = Unit.objects.count()
    sizes = []
    if present:
        print(f"reusing {present:,} units in {folder} (--units and --visits ignored)\n")
        targets = [present]
    else:
        targets = args.sizes
        User.objects.create_user("bench-office")
    for target in targets:
        if target > present:
            print(f"building {target - present:,} units x {args.visits} visits ({target:,} in all)")
            t = time.perf_counter()
            units = _build_units(rng, target - present, first_tag=present)
            _build_history(rng, units, args.visits, today, User.objects.get())
            print(f"built in {time.perf_counter() - t:.0f} s")
            present = target
        sizes.append(_measure(folder, args, today))
        _report(sizes[-1])
    if len(sizes) > 1:
        _side_by_side(sizes)
    worst = max(max(s.best["empty"], s.best["open"]) / s.best["floor"] for s in sizes)
    print(f"\nrefresh / floor {worst:.2f}x at worst (goal: within 3x)")


if __name__ == "__main__":
    main()
