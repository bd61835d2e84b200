"""How fast reading sets are diagnosed and stored: vectorised, one row at a time, and the floor.

Builds a throwaway SQLite database (``--rows`` reading sets, default 1,000,000, on 1,000
units of five refrigerants at sites from sea level to 1,600 m; bulk inserts), or with
``--postgres`` the same rows in the throwaway PostgreSQL that ``scripts/with-postgres.sh``
starts, then measures side by side in one run, on the same stored rows:

- per-row: ``services.diagnose_reading_set`` on a sample (``--sample``), each row fetched
  with its unit as the single POST does, extrapolated to rows per second;
- vectorised: ``services.rescore`` over every row (what ``manage.py rescore`` runs), with
  the shares spent in the core (``diagnose_batch`` and ``stored_columns``) and in writing
  (``services.store_diagnoses``: on PostgreSQL COPY into a staging table and one upsert);
- on PostgreSQL, the same rescore writing by one executemany of the upsert per batch (the
  way SQLite writes, and PostgreSQL's before COPY), for the gain COPY brings;
- floor: the same reads (ids, then ``values_list`` in batches) and the same number of
  Diagnosis rows written the same way (``services.store_diagnoses``), with no computation:
  the content is copied from real diagnoses (their documents as the same JSON text), so
  the rows written have the same size;
- one POST of a reading set with its diagnosis through the test client (median of
  ``--posts``).

    .venv/bin/python bench/rescore.py [--rows 1000000] [--sample 2000] [--posts 200]
    bash scripts/with-postgres.sh .venv/bin/python bench/rescore.py --postgres

Goals (issue 4): vectorised at least 20x the per-row path, within 3x of the floor,
1,000,000 reading sets in under 60 s on a 2-core machine, on SQLite and (issue 17) on
PostgreSQL; one POST under 20 ms. The floor
runs after the vectorised pass has been deleted, so it reuses the freed database pages;
that favours the floor. Wall-clock figures move with whatever else the machine runs.
"""

from __future__ import annotations

import argparse
import contextlib
import datetime as dt
import gc
import math
import resource
import statistics
import sys
import tempfile
import time
import uuid
from collections.abc import Callable, Iterator
from pathlib import Path
from unittest import mock

import numpy as np
import orjson

ROOT = Path(__file__).resolve().parent.parent
sys.path.insert(0, str(ROOT))

UNITS = 1000
SITES = 50
READINGS_PER_VISIT = 10
CHUNK = 20_000

#: Synthetic fleet: (refrigerant, application, metering device, share of the units).
KINDS = (
    ("R-404A", "medium_temp", "txv", 0.30),
    ("R-448A", "low_temp", "txv", 0.25),
    ("R-134a", "reach_in", "capillary", 0.20),
    ("R-290", "reach_in", "capillary", 0.15),
    ("R-744", "medium_temp", "eev", 0.10),
)


def _setup(tmp: Path, postgres: bool) -> None:
    from bench._db import setup_database

    # Production-like: DEBUG off (no query log), no HTTPS redirect for the test client, and
    # no write throttle in the way of the timed posts.
    setup_database(
        tmp,
        postgres=postgres,
        DEBUG="0",
        SECRET_KEY="bench-only-" + uuid.uuid4().hex,
        SECURE_SSL_REDIRECT="0",
        RIMEWATCH_WRITE_RATE="1000000/minute",
        LOG_LEVEL="WARNING",
    )


def _peak_mb() -> float:
    """Peak resident memory of this process so far (ru_maxrss is in KiB on Linux)."""
    return resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024


# --- the synthetic fleet ----------------------------------------------------------------------


def _build_units(rng: np.random.Generator) -> list[int]:
    """Sites and units in bulk; returns the unit ids."""
    from fleet.models import Component, Customer, Refrigerant, Site, Unit

    customer = Customer.objects.create(name="Bench customer")
    sites = Site.objects.bulk_create(
        Site(customer=customer, name=f"Bench site {k}", elevation_m=float(e))
        for k, e in enumerate(rng.uniform(0.0, 1600.0, SITES).round())
    )
    refrigerants = {r.designation: r for r in Refrigerant.objects.all()}
    shares = np.array([k[3] for k in KINDS])
    kind_of = rng.choice(len(KINDS), UNITS, p=shares / shares.sum())
    units = []
    for u in range(UNITS):
        designation, application, metering, _ = KINDS[kind_of[u]]
        low_temp = application == "low_temp"
        three_phase = rng.random() < 0.5
        rla = float(rng.uniform(4.0, 25.0))
        units.append(
            Unit(
                site=sites[u % SITES],
                tag=f"B-{u:04d}",
                application=application,
                refrigerant=refrigerants[designation],
                full_charge_kg=float(rng.uniform(2.0, 40.0)),
                metering_device=metering,
                condenser_type="water" if rng.random() < 0.05 else "air",
                has_receiver=application != "reach_in",
                design_box_temp_c=-23.0 if low_temp else 2.0,
                design_evap_td_k=None if rng.random() < 0.5 else 5.5,
                design_condenser_split_k=None if rng.random() < 0.5 else 11.0,
                high_pressure_cutout_kpa_gauge=12000.0 if designation == "R-744" else 2800.0,
                nameplate_volts=460.0 if three_phase else 230.0,
                phase=3 if three_phase else 1,
                rla_a=rla,
                lra_a=rla * 6.0,
            )
        )
    units = Unit.objects.bulk_create(units)
    Component.objects.bulk_create(
        Component(unit=unit, kind="run_capacitor", rating_uf_min=42.3, rating_uf_max=47.7)
        for unit in units
        if unit.phase == 1
    )
    return [unit.pk for unit in units]


def _readings(rng: np.random.Generator, n: int, unit_rows: list) -> dict[str, np.ndarray]:
    """Plausible readings for ``n`` rows (one unit record per row): operating points from
    the saturation tables, some faults, some fields not measured. Synthetic."""
    from diagnostics.core import atmosphere, saturation

    box_design = np.array([u.design_box_temp_c for u in unit_rows])
    rla = np.array([u.rla_a for u in unit_rows])
    volts = np.array([u.nameplate_volts for u in unit_rows])
    three = np.array([u.phase == 3 for u in unit_rows])
    atm = atmosphere.standard_pressure_kpa(np.array([u.site.elevation_m for u in unit_rows]))
    box = box_design + rng.normal(0.0, 1.5, n)
    air = rng.uniform(5.0, 40.0, n)
    t_evap = box - rng.uniform(4.0, 9.0, n)
    t_cond = air + rng.uniform(8.0, 16.0, n) + 12.0 * (rng.random(n) < 0.08)  # dirty coils
    superheat = rng.uniform(2.0, 9.0, n) + 8.0 * (rng.random(n) < 0.06)  # starved coils
    subcooling = rng.uniform(0.5, 6.0, n)
    suction, head, liquid = np.empty(n), np.empty(n), t_cond - subcooling
    designations = np.array([u.refrigerant.designation for u in unit_rows])
    for designation in np.unique(designations):
        sel = designations == designation
        table = saturation.table(str(designation))
        suction[sel] = table.dew_pressure_kpa_abs(t_evap[sel], strict=False)
        hot = sel & (t_cond >= table.critical_temp_c - 1.0)
        cool = sel & ~hot
        head[cool] = table.bubble_pressure_kpa_abs(t_cond[cool], strict=False)
        head[hot] = rng.uniform(8000.0, 10000.0, hot.sum())  # R-744 above its critical point
        liquid[hot] = air[hot] + rng.uniform(1.0, 5.0, hot.sum())
    evap_temp = t_evap + superheat
    amps = (rla * rng.uniform(0.5, 1.2, n))[:, None] * rng.uniform(0.97, 1.03, (n, 3))
    supply = (volts * rng.uniform(0.92, 1.06, n))[:, None] * rng.uniform(0.99, 1.01, (n, 3))
    amps[~three, 1:] = np.nan
    supply[~three, 1:] = np.nan
    running = rng.random(n) < 0.97
    cols = {
        "box_temp_c": box,
        "entering_air_temp_c": air,
        "suction_kpa_gauge": suction - atm,
        "suction_line_temp_c": evap_temp,
        "head_kpa_gauge": head - atm,
        "liquid_line_temp_c": liquid,
        "discharge_line_temp_c": t_cond + rng.uniform(25.0, 55.0, n),
        "compressor_amps_1": amps[:, 0],
        "compressor_amps_2": amps[:, 1],
        "compressor_amps_3": amps[:, 2],
        "supply_volts_1": supply[:, 0],
        "supply_volts_2": supply[:, 1],
        "supply_volts_3": supply[:, 2],
    }
    for values in cols.values():
        values[rng.random(n) < 0.05] = np.nan  # not measured on this visit
    cols["compressor_running"] = running
    cols["coil_iced"] = rng.random(n) < 0.03
    cols["sight_glass"] = rng.choice(np.array(["clear", "bubbles", ""]), n, p=[0.8, 0.1, 0.1])
    return cols


def _build_readings(rng: np.random.Generator, unit_ids: list[int], total: int) -> None:
    """Visits, their units and ``total`` reading sets, in chunks of bulk inserts."""
    from django.utils import timezone

    from fleet.models import ReadingSet, Unit, Visit, VisitUnit

    units = {u.pk: u for u in Unit.objects.select_related("refrigerant", "site")}
    visits_per_unit = max(1, -(-total // (len(unit_ids) * READINGS_PER_VISIT)))
    start = timezone.now() - dt.timedelta(days=3 * 365)
    visit_units: list[VisitUnit] = []
    for first in range(0, visits_per_unit * len(unit_ids), CHUNK):
        batch = []
        for k in range(first, min(first + CHUNK, visits_per_unit * len(unit_ids))):
            unit = units[unit_ids[k % len(unit_ids)]]
            begins = start + dt.timedelta(hours=k % 20_000)
            batch.append(
                Visit(
                    reference=f"BENCH-{k:08d}",
                    site_id=unit.site_id,
                    kind="planned",
                    status="submitted",
                    window_start=begins,
                    window_end=begins + dt.timedelta(hours=4),
                )
            )
        visits = Visit.objects.bulk_create(batch)
        visit_units += VisitUnit.objects.bulk_create(
            VisitUnit(visit=v, unit_id=unit_ids[(first + j) % len(unit_ids)])
            for j, v in enumerate(visits)
        )
    print(f"  {len(visit_units)} visits, one unit each")
    made = 0
    t0 = time.perf_counter()
    while made < total:
        n = min(CHUNK, total - made)
        owners = [visit_units[(made + j) // READINGS_PER_VISIT] for j in range(n)]
        cols = _readings(rng, n, [units[vu.unit_id] for vu in owners])
        floats = {k: v.tolist() for k, v in cols.items() if v.dtype.kind == "f"}
        nan_free = {k: [None if math.isnan(x) else x for x in v] for k, v in floats.items()}
        running, iced, glass = (
            cols["compressor_running"].tolist(),
            cols["coil_iced"].tolist(),
            cols["sight_glass"].tolist(),
        )
        ReadingSet.objects.bulk_create(
            ReadingSet(
                visit_unit=owners[j],
                taken_at=owners[j].visit.window_start + dt.timedelta(minutes=j % 60),
                stage="as_found" if j % 2 == 0 else "as_left",
                compressor_running=running[j],
                condenser_fan_running=True,
                evaporator_fans_running=True,
                coil_iced=iced[j],
                sight_glass=glass[j],
                **{k: v[j] for k, v in nan_free.items()},
            )
            for j in range(n)
        )
        made += n
        rate = made / (time.perf_counter() - t0)
        print(f"\r  {made:>9,} reading sets ({rate:,.0f}/s)", end="", flush=True)
    print()


# --- the three paths and the post -----------------------------------------------------------


@contextlib.contextmanager
def _time_in(module: object, names: tuple[str, ...], spent: list[float]) -> Iterator[None]:
    """Adds the seconds spent in ``module``'s functions ``names`` to ``spent[0]``."""
    originals = {name: getattr(module, name) for name in names}

    def timed(fn: Callable) -> Callable:
        def wrapper(*args, **kwargs):
            t = time.perf_counter()
            try:
                return fn(*args, **kwargs)
            finally:
                spent[0] += time.perf_counter() - t

        return wrapper

    for name, fn in originals.items():
        setattr(module, name, timed(fn))
    try:
        yield
    finally:
        for name, fn in originals.items():
            setattr(module, name, fn)


def _per_row(sample: int) -> tuple[float, list[tuple]]:
    """Seconds for ``sample`` rows through the one-row service, and their stored values."""
    from diagnostics import services
    from diagnostics.models import Diagnosis
    from fleet.models import ReadingSet

    ids = list(ReadingSet.objects.order_by("id").values_list("id", flat=True))
    chosen = ids[:: max(1, len(ids) // sample)][:sample]
    t = time.perf_counter()
    for pk in chosen:
        services.diagnose_reading_set(services.reading_sets_for_diagnosis().get(pk=pk))
    seconds = time.perf_counter() - t
    # The rows as the vectorised path writes them: the document as its JSON text.
    stored = [
        (*row[:-1], orjson.dumps(row[-1]).decode())
        for row in Diagnosis.objects.values_list(
            "algorithm_version", *services._STORED_FIELDS_OF_CORE
        )
    ]
    Diagnosis.objects.all().delete()
    return seconds, stored


def _floor(template: list[tuple], batch_size: int) -> int:
    """The reads and writes of ``services.rescore`` with the computation left out."""
    from django.utils import timezone

    from diagnostics import services
    from fleet.models import ReadingSet, Unit

    now = timezone.now()
    ids = list(ReadingSet.objects.all().order_by("id").values_list("id", flat=True))
    seen: set[int] = set()
    for start in range(0, len(ids), batch_size):
        chunk = ids[start : start + batch_size]
        gc.disable()  # as rescore does for each batch
        try:
            rows = list(
                ReadingSet.objects.filter(id__in=chunk)
                .order_by("id")
                .values_list(*services._FETCHED)
            )
            fresh = {row[1] for row in rows} - seen
            if fresh:
                for unit in (
                    Unit.objects.filter(id__in=fresh)
                    .select_related("refrigerant", "site")
                    .prefetch_related("components")
                ):
                    seen.add(unit.id)
            copies = [template[j % len(template)] for j in range(len(rows))]
            services.store_diagnoses(
                [row[0] for row in rows],
                copies[0][0],
                dict(
                    zip(
                        services._STORED_FIELDS_OF_CORE,
                        list(zip(*copies, strict=False))[1:],
                        strict=True,
                    )
                ),
                now,
            )
        finally:
            gc.enable()
    return len(ids)


def _post_median(posts: int) -> tuple[float, int]:
    """Median seconds of one POST of a reading set (stored and diagnosed) by a technician."""
    from django.contrib.auth.models import Group, User
    from django.utils import timezone
    from rest_framework.authtoken.models import Token
    from rest_framework.test import APIClient

    from fleet.choices import Role
    from fleet.models import Unit, Visit, VisitUnit

    user = User.objects.create_user("bench-technician")
    user.groups.add(Group.objects.get(name=Role.TECHNICIAN.value))
    token = Token.objects.create(user=user)
    unit = Unit.objects.filter(refrigerant__designation="R-404A").select_related("site").first()
    assert unit is not None
    visit = Visit.objects.create(
        reference="BENCH-POST",
        site=unit.site,
        kind="call",
        status="in_progress",
        window_start=timezone.now() - dt.timedelta(hours=1),
        window_end=timezone.now() + dt.timedelta(hours=3),
    )
    visit.technicians.add(user)
    VisitUnit.objects.create(visit=visit, unit=unit)
    client = APIClient()
    client.credentials(HTTP_AUTHORIZATION=f"Token {token.key}")
    url = f"/api/v1/visits/{visit.pk}/reading-sets/"
    times = []
    for k in range(posts + 5):
        body = {
            "unit": unit.pk,
            "client_id": str(uuid.uuid4()),
            "units": {"temperature": "F", "pressure": "psig"},
            "box_temp": 36.0,
            "entering_air_temp": 85.0,
            "suction_pressure": 62.0 + k % 7,
            "suction_line_temp": 35.0,
            "head_pressure": 235.0,
            "liquid_line_temp": 95.0,
            "compressor_amps": [8.1],
            "supply_volts": [231.0],
            "compressor_running": True,
            "sight_glass": "clear",
        }
        t = time.perf_counter()
        response = client.post(url, body, format="json")
        elapsed = time.perf_counter() - t
        if response.status_code != 201 or response.json().get("diagnosis") is None:
            raise SystemExit(f"POST failed: {response.status_code} {response.content[:300]!r}")
        if k >= 5:  # the first few warm caches (saturation tables, URL resolvers)
            times.append(elapsed)
    return statistics.median(times), len(times)


def _vectorised(rows: int, batch_size: int) -> tuple[int, float, float, float]:
    """``services.rescore`` over every stale row: (rows, seconds, seconds in the core, seconds
    writing)."""
    from diagnostics import services
    from diagnostics.core import diagnose as core

    core_spent, write_spent = [0.0], [0.0]
    done = 0
    t = time.perf_counter()

    def progress(n: int) -> None:
        nonlocal done
        done += n
        rate = done / (time.perf_counter() - t)
        print(f"\r  rescore {done:>9,} of {rows:,} ({rate:,.0f}/s)", end="", flush=True)

    with (
        _time_in(core, ("diagnose_batch", "stored_columns"), core_spent),
        _time_in(services, ("store_diagnoses",), write_spent),
    ):
        t = time.perf_counter()
        stored = services.rescore(
            services.stale_reading_sets(), batch_size=batch_size, progress=progress
        )
        seconds = time.perf_counter() - t
    print("\r" + " " * 60 + "\r", end="")
    return stored, seconds, core_spent[0], write_spent[0]


def _report_vectorised(label: str, stored: int, seconds: float, core: float, write: float) -> None:
    print(
        f"{label:<11} {stored / seconds:>10,.0f} sets/s  ({stored:,} rows in {seconds:.1f} s, "
        f"{100 * core / seconds:.0f} % of it in the core, {100 * write / seconds:.0f} % "
        f"writing; peak memory {_peak_mb():.0f} MB)"
    )


def _database_gb(tmp: str) -> float:
    from django.db import connection

    if connection.vendor == "postgresql":
        with connection.cursor() as cursor:
            cursor.execute("SELECT pg_database_size(current_database())")
            return cursor.fetchone()[0] / 1e9
    return Path(tmp, "bench.sqlite3").stat().st_size / 1e9


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--rows", type=int, default=1_000_000)
    parser.add_argument("--sample", type=int, default=2000, help="rows for the per-row path")
    parser.add_argument("--posts", type=int, default=200)
    parser.add_argument("--batch-size", type=int, default=5000)
    parser.add_argument("--seed", type=int, default=4)
    parser.add_argument(
        "--postgres",
        action="store_true",
        help="use the PostgreSQL of DATABASE_URL (run under scripts/with-postgres.sh)",
    )
    args = parser.parse_args()

    with tempfile.TemporaryDirectory(prefix="rimewatch-bench-rescore-") as tmp:
        _setup(Path(tmp), args.postgres)
        from django.db import connection

        from diagnostics import services
        from diagnostics.models import Diagnosis

        database = "PostgreSQL" if connection.vendor == "postgresql" else "SQLite"
        rng = np.random.default_rng(args.seed)
        print(f"building {args.rows:,} reading sets on {UNITS} units in {database}")
        t = time.perf_counter()
        unit_ids = _build_units(rng)
        _build_readings(rng, unit_ids, args.rows)
        print(f"built in {time.perf_counter() - t:.0f} s; peak memory {_peak_mb():.0f} MB\n")

        seconds, template = _per_row(args.sample)
        per_row = args.sample / seconds
        print(f"per-row     {per_row:>10,.0f} sets/s  ({args.sample} rows in {seconds:.1f} s)")

        stored, vector_seconds, core, write = _vectorised(args.rows, args.batch_size)
        vectorised = stored / vector_seconds
        _report_vectorised("vectorised", stored, vector_seconds, core, write)
        Diagnosis.objects.all().delete()

        statement = None
        if services._copies():
            # The same rescore writing as SQLite does: one executemany of the upsert per batch.
            with mock.patch.object(services, "_copies", return_value=False):
                by_statement = _vectorised(args.rows, args.batch_size)
            _report_vectorised("executemany", *by_statement)
            statement = by_statement[0] / by_statement[1]
            Diagnosis.objects.all().delete()

        t = time.perf_counter()
        written = _floor(template, args.batch_size)
        floor_seconds = time.perf_counter() - t
        floor = written / floor_seconds
        print(f"floor       {floor:>10,.0f} sets/s  ({written:,} rows in {floor_seconds:.1f} s)")
        size = _database_gb(tmp)
        Diagnosis.objects.all().delete()

        median, posted = _post_median(args.posts)

        print()
        print(f"{database}, rescore writing by {'COPY' if statement else 'executemany'}:")
        print(f"vectorised / per-row  {vectorised / per_row:6.1f}x   (goal >= 20x)")
        print(f"vectorised / floor    {vectorised / floor:6.2f}x   (goal: within 3x, >= 0.33x)")
        if statement:
            print(f"COPY / executemany    {vectorised / statement:6.2f}x   (the same rescore)")
        print(
            f"vectorised, {stored:,} rows: {vector_seconds:.1f} s"
            + (
                f"; 1,000,000 at this rate: {1e6 / vectorised:.0f} s (goal < 60 s)"
                if stored != 1_000_000
                else " (goal < 60 s)"
            )
        )
        print(f"one POST with diagnosis, median of {posted}: {1e3 * median:.1f} ms (goal < 20 ms)")
        print(f"peak memory {_peak_mb():.0f} MB; database {size:.1f} GB with the floor's rows")


if __name__ == "__main__":
    main()
