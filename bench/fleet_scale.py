"""How the office pages, the API lists and the commands grow from the demo fleet to a large one.

Builds two fleets, each in a database of its own on a throwaway PostgreSQL server (the
script starts one with ``scripts/with-postgres.sh`` unless ``DATABASE_URL`` already names
one): the demo (``load_demo_fleet``: six sites, about 40 units, 18 months) and a large fleet
made from the demo's plan (``fixtures/large.py``: ``--sites`` sites, 20 units a site on
average and one of 60, three years of monthly visits, the demo's stories in every copy of a
site), written in bulk with progress shown. On each, signed in as the office user through
Django's test client, it measures every office page and every API list: the median time of
``--runs`` requests (after one to warm up), the response's size and its number of queries.
Then each command in a process of its own: its time and peak memory (``rescore --all``,
``refresh_flags``, one month's report for a typical site and for the biggest site, and the
start-up every command pays). The table sets the two sizes side by side with the ratio
large / demo, and marks each row against the goals of issue 17: pages and API lists under
300 ms and 200 KB at the large size with query counts that do not grow; ``rescore`` of
1,000,000 reading sets under 60 s; ``refresh_flags`` under 300 MB at 1,000,000 (a straight
line through the two sizes); a 60-unit site's report under 8 s and the whole month on two
workers under 10 minutes (estimated from the typical site).

    .venv/bin/python bench/fleet_scale.py [--sites 300] [--quick] [--runs 5]

Pages and lists are looked up by their URL names, so they follow changes of path. Sizes are
as sent before compression. Wall-clock figures move with whatever else the machine runs; the
ratios and the query counts are the steadier figures.
"""

from __future__ import annotations

import argparse
import datetime as dt
import json
import os
import re
import resource
import statistics
import subprocess
import sys
import tempfile
import time
from dataclasses import asdict, dataclass
from pathlib import Path
from typing import Any

ROOT = Path(__file__).resolve().parent.parent
sys.path.insert(0, str(ROOT))

from bench._db import (  # noqa: E402
    bench_environment,
    database_url,
    drop_database,
    postgres_server,
    rerun_with_postgres,
    setup_postgres,
)

SIZES = ("demo", "large")
PAGE_MS, PAGE_KB = 300.0, 200.0
RESCORE_GOAL_S, RESCORE_GOAL_SETS = 60.0, 1_000_000
FLAGS_GOAL_MB = 300.0
BIG_REPORT_GOAL_S = 8.0
MONTH_GOAL_S, WORKERS = 600.0, 2
#: The environment of the measured processes: the pages as in production (no DEBUG), over
#: plain HTTP in the test client.
ENV = {"DEBUG": "0", "SECURE_SSL_REDIRECT": "0", "SECURE_HSTS_SECONDS": "0", "LOG_LEVEL": "WARNING"}


@dataclass
class Row:
    """One request measured: median ms of the runs, bytes of the answer, queries made."""

    key: str
    url: str = ""
    status: int = 0
    ms: float = 0.0
    size: int = 0
    queries: int = 0
    note: str = ""


@dataclass
class Run:
    """One command measured in a process of its own: seconds and peak memory (MB)."""

    key: str
    seconds: float = 0.0
    peak_mb: float = 0.0
    status: int = 0
    note: str = ""


# --- measuring one size, in a process of its own -----------------------------------------------


@dataclass
class Targets:
    """The records the pages are asked about."""

    big_site: Any
    typical_site: Any
    visit: Any
    unit: Any
    big_units: int
    typical_units: int
    visit_units: int


def _targets() -> Targets:
    from django.db.models import Count

    from diagnostics.models import Flag
    from fleet.models import Site, Visit

    sites = list(Site.objects.annotate(n=Count("units")).order_by("-n", "pk"))
    big, typical = sites[0], sites[len(sites) // 2]
    visit = (
        Visit.objects.filter(site=big, visit_units__reading_sets__isnull=False)
        .order_by("-window_start")
        .distinct()
        .first()
    )
    flag = Flag.objects.filter(cleared_at__isnull=True).order_by("unit_id").first()
    if visit is None or flag is None:
        raise SystemExit("the fleet has no visit with readings or no open flag")
    return Targets(
        big,
        typical,
        visit,
        flag.unit,
        big.n,
        typical.n,
        visit.visit_units.count(),
    )


def _pages(t: Targets) -> list[tuple[str, str, dict[str, int]]]:
    """The office pages: (row, URL name, arguments)."""
    return [
        ("schedule", "fleet:schedule", {}),
        ("maintenance due", "fleet:maintenance", {}),
        ("review queue", "fleet:review-queue", {}),
        ("attention list", "fleet:attention", {}),
        ("site list", "fleet:sites", {}),
        ("site page, biggest site", "fleet:site", {"pk": t.big_site.pk}),
        ("visit page, biggest site", "fleet:visit", {"pk": t.visit.pk}),
        ("unit page, a flagged unit", "fleet:unit", {"pk": t.unit.pk}),
        ("report list", "reports:index", {}),
        ("a site's reports, biggest site", "reports:site", {"site_id": t.big_site.pk}),
    ]


def _api_lists(t: Targets) -> list[tuple[str, str, dict[str, int]]]:
    """Every list of the API's router, and the lists of one unit or site."""
    from config.api_urls import router

    ids = {"visit_pk": t.visit.pk, "unit_pk": t.unit.pk, "site_pk": t.big_site.pk}
    lists = []
    for prefix, _, basename in router.registry:
        kwargs = {name: ids[name] for name in re.findall(r"\(\?P<(\w+)>", prefix)}
        shown = re.sub(r"\(\?P<(\w+)>[^)]*\)", lambda m: "{" + m.group(1) + "}", prefix)
        lists.append((f"/api/v1/{shown}/", f"{basename}-list", kwargs))
    lists += [
        ("/api/v1/units/{id}/flags/", "unit-flags", {"unit_pk": t.unit.pk}),
        ("/api/v1/units/{id}/trends/", "unit-trends", {"unit_pk": t.unit.pk}),
        ("/api/v1/sites/{id}/reports/", "site-reports", {"site_id": t.big_site.pk}),
    ]
    return lists


def _request(client: Any, key: str, name: str, kwargs: dict[str, int], runs: int) -> Row:
    """Warm up once, count the queries of one request, then time ``runs`` more."""
    from django.db import connection
    from django.test.utils import CaptureQueriesContext
    from django.urls import NoReverseMatch, reverse

    try:
        url = reverse(name, kwargs=kwargs)
    except NoReverseMatch:
        return Row(key, note=f"no URL named {name}")

    def get() -> tuple[int, int]:
        response = client.get(url)
        body = b"".join(response.streaming_content) if response.streaming else response.content
        return response.status_code, len(body)

    status, size = get()
    if status != 200:
        return Row(key, url, status, note=f"answered {status}")
    with CaptureQueriesContext(connection) as queries:
        get()
    count = len(queries)  # now: the next request clears the log the context reads
    times = []
    for _ in range(runs):
        started = time.perf_counter()
        get()
        times.append(time.perf_counter() - started)
    return Row(key, url, status, 1e3 * statistics.median(times), size, count)


def _command(key: str, args: list[str], env: dict[str, str], log: Path) -> Run:
    """Run ``manage.py args`` in a process of its own: its wall time and peak memory.

    Started from the small parent process, not the one that built the fleet: a child's peak
    memory counts from what its parent held when it started it.
    """
    with log.open("wb") as out:
        started = time.perf_counter()
        process = subprocess.Popen(
            [sys.executable, "manage.py", *args],
            cwd=ROOT,
            env=env,
            stdout=out,
            stderr=subprocess.STDOUT,
        )
        _, status, usage = os.wait4(process.pid, 0)
        seconds = time.perf_counter() - started
        process.returncode = os.waitstatus_to_exitcode(status)
    note = ""
    if process.returncode:
        note = (log.read_text(errors="replace").strip().splitlines() or ["no output"])[-1][:100]
    return Run(key, seconds, usage.ru_maxrss / 1024, process.returncode, note)


def _progress(line: str) -> None:
    """A line of progress: rewritten in place on a terminal, one line each otherwise."""
    if sys.stdout.isatty():
        print(f"\r  {line[:76]:<76}", end="", flush=True)
    else:
        print(f"  {line}", flush=True)


def _end_progress() -> None:
    if sys.stdout.isatty():
        print("\r" + " " * 78 + "\r", end="", flush=True)


def measure(size: str, sites: int, runs: int, tmp: Path, out: Path) -> None:
    """Build the fleet of ``size`` in this process's database, measure it, write JSON."""
    setup_postgres(tmp, os.environ["DATABASE_URL"], **ENV)
    from django.contrib.auth.models import User
    from django.test import Client
    from django.utils import timezone

    from fixtures.large import build_large_fleet
    from fixtures.load import load_demo_fleet
    from fleet.models import ReadingSet, Site, Unit, Visit
    from reports.months import Month

    today = timezone.localdate()
    started = time.perf_counter()
    print(f"{size}: building")
    if size == "demo":

        def visits(done: int, total: int) -> None:
            if done % 20 == 0 or done == total:
                _progress(f"visit {done} of {total}")

        load_demo_fleet(today, progress=visits)
    else:
        build_large_fleet(today, sites, progress=_progress)
    built = time.perf_counter() - started
    counts = {
        "sites": Site.objects.count(),
        "units": Unit.objects.count(),
        "visits": Visit.objects.count(),
        "reading sets": ReadingSet.objects.count(),
    }
    _end_progress()
    print(
        f"  built in {built:.0f} s: "
        + ", ".join(f"{n:,} {what}" for what, n in counts.items())
        + f"; peak memory {resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024:.0f} MB"
    )
    t = _targets()
    client = Client()
    client.force_login(User.objects.get(username="office"))
    rows: dict[str, list[Row]] = {"pages": [], "api": []}
    for kind, asked in (("pages", _pages(t)), ("api", _api_lists(t))):
        for key, name, kwargs in asked:
            row = _request(client, key, name, kwargs, runs)
            rows[kind].append(row)
            _progress(f"{key}: {row.ms:.0f} ms, {row.size / 1024:.0f} KB, {row.queries} queries")
    _end_progress()
    month = str(Month.of(today.replace(day=1) - dt.timedelta(days=1)))
    commands = [
        ("start-up (manage.py check)", ["check"]),
        ("rescore --all", ["rescore", "--all", "--verbosity", "0"]),
        ("refresh_flags", ["refresh_flags"]),
        (
            "report, typical site",
            ["monthly_reports", "--month", month, "--site", str(t.typical_site.pk), "-v", "0"],
        ),
        (
            "report, biggest site",
            ["monthly_reports", "--month", month, "--site", str(t.big_site.pk), "-v", "0"],
        ),
    ]
    out.write_text(
        json.dumps(
            {
                "size": size,
                "built_s": built,
                "counts": counts,
                "units": {
                    "biggest site": t.big_units,
                    "typical site": t.typical_units,
                    "visit": t.visit_units,
                },
                "month": month,
                "pages": [asdict(r) for r in rows["pages"]],
                "api": [asdict(r) for r in rows["api"]],
                "commands": commands,
            }
        )
    )


# --- the table ------------------------------------------------------------------------------

KEY = 46  # width of the first column


def _ratio(large: float, demo: float) -> str:
    return f"{large / demo:6.1f}x" if demo else "      -"


def _over(value: float, goal: float, unit: str) -> str:
    return f"{value - goal:+,.0f} {unit} over ({value / goal:.1f}x the goal)"


def _request_verdict(demo: Row, large: Row) -> str:
    """Met, or missed and by how much: time and size at the large size, queries against
    the demo's."""
    if large.note or demo.note:
        return f"not measured: {large.note or demo.note}"
    missed = []
    if large.ms >= PAGE_MS:
        missed.append(_over(large.ms, PAGE_MS, "ms"))
    if large.size >= PAGE_KB * 1024:
        missed.append(_over(large.size / 1024, PAGE_KB, "KB"))
    if large.queries > demo.queries:
        missed.append(f"{large.queries - demo.queries:+d} queries")
    return "met" if not missed else "MISSED: " + "; ".join(missed)


def _header(title: str, left: str, right: str, goal: str) -> None:
    print(f"\n{title:<{KEY}}{left:>24}{right:>24}{'queries':>12}   {goal}")
    print(f"{'':<{KEY}}" + f"{'demo':>8}{'large':>9}{'':>7}" * 2 + f"{'demo':>6}{'large':>6}")


def _print_requests(
    title: str, demo: list[Row], large: list[Row], labels: dict[str, str]
) -> tuple[int, int]:
    """The rows of one table; returns how many met their goals, of how many."""
    _header(
        title, "p50 ms", "size KB", f"goal: < {PAGE_MS:.0f} ms, < {PAGE_KB:.0f} KB, fixed queries"
    )
    met = 0
    for d, g in zip(demo, large, strict=True):
        verdict = _request_verdict(d, g)
        met += verdict == "met"
        print(
            f"{labels.get(d.key, d.key):<{KEY}}{d.ms:>8.0f}{g.ms:>9.0f}{_ratio(g.ms, d.ms)}"
            f"{d.size / 1024:>8.0f}{g.size / 1024:>9.0f}{_ratio(g.size, d.size)}"
            f"{d.queries:>6}{g.queries:>6}   {verdict}"
        )
    return met, len(demo)


@dataclass(frozen=True)
class Sizes:
    """What the goals of the commands are reckoned from."""

    start_demo: Run
    start_large: Run
    sets_demo: int
    sets_large: int
    biggest_units: int
    sites: int


def _command_goal(key: str, d: Run, g: Run, s: Sizes) -> str:
    """The goal of issue 17 a command is held to, met or missed by how much."""
    if d.status or g.status:
        return f"FAILED: {g.note or d.note}"
    if key == "rescore --all":
        rate = s.sets_large / max(g.seconds - s.start_large.seconds, 1e-3)
        at_goal = RESCORE_GOAL_SETS / rate
        verdict = (
            "met" if at_goal < RESCORE_GOAL_S else f"MISSED by {at_goal - RESCORE_GOAL_S:.0f} s"
        )
        return (
            f"{verdict}: {rate:,.0f} sets/s after start-up, 1,000,000 in {at_goal:.0f} s "
            f"(goal < {RESCORE_GOAL_S:.0f} s)"
        )
    if key == "refresh_flags":
        slope = (g.peak_mb - d.peak_mb) / max(s.sets_large - s.sets_demo, 1)
        at_goal = g.peak_mb + slope * (RESCORE_GOAL_SETS - s.sets_large)
        verdict = (
            "met" if at_goal < FLAGS_GOAL_MB else f"MISSED by {at_goal - FLAGS_GOAL_MB:,.0f} MB"
        )
        return (
            f"{verdict}: about {at_goal:,.0f} MB at 1,000,000 sets on the line through both "
            f"sizes (goal < {FLAGS_GOAL_MB:.0f} MB)"
        )
    if key == "report, biggest site":
        took = g.seconds - s.start_large.seconds
        verdict = (
            "met" if took < BIG_REPORT_GOAL_S else f"MISSED by {took - BIG_REPORT_GOAL_S:.1f} s"
        )
        return (
            f"{verdict}: {took:.1f} s after start-up for {s.biggest_units} units "
            f"(goal < {BIG_REPORT_GOAL_S:.0f} s for 60)"
        )
    if key == "report, typical site":
        month = (g.seconds - s.start_large.seconds) * s.sites / WORKERS
        verdict = (
            "met" if month < MONTH_GOAL_S else f"MISSED by {(month - MONTH_GOAL_S) / 60:.0f} min"
        )
        return (
            f"{verdict}: {s.sites} sites on {WORKERS} workers about {month / 60:.0f} min "
            f"after start-up (goal < {MONTH_GOAL_S / 60:.0f} min; from this one site)"
        )
    return "paid by each command below"


def _print_commands(demo: dict[str, Any], large: dict[str, Any], sites: int) -> None:
    d_runs = {r["key"]: Run(**r) for r in demo["commands"]}
    g_runs = {r["key"]: Run(**r) for r in large["commands"]}
    start = "start-up (manage.py check)"
    s = Sizes(
        d_runs[start],
        g_runs[start],
        demo["counts"]["reading sets"],
        large["counts"]["reading sets"],
        large["units"]["biggest site"],
        sites,
    )
    print(f"\n{'command':<{KEY}}{'seconds':>24}{'peak MB':>24}   goal")
    print(f"{'':<{KEY}}" + f"{'demo':>8}{'large':>9}{'':>7}" * 2)
    for key, d in d_runs.items():
        g = g_runs[key]
        label = key
        if key.startswith("report"):
            which = key.split(", ")[1]
            label += f" ({demo['units'][which]} / {large['units'][which]} units)"
        print(
            f"{label:<{KEY}}{d.seconds:>8.1f}{g.seconds:>9.1f}{_ratio(g.seconds, d.seconds)}"
            f"{d.peak_mb:>8.0f}{g.peak_mb:>9.0f}{_ratio(g.peak_mb, d.peak_mb)}   "
            f"{_command_goal(key, d, g, s)}"
        )


def report(demo: dict[str, Any], large: dict[str, Any], sites: int) -> None:
    """The whole table: the fleets, the pages, the API lists, the commands."""
    print(f"\n{'fleet':<{KEY}}" + "".join(f"{what:>14}" for what in demo["counts"]))
    for name, result in (("demo", demo), ("large", large)):
        print(
            f"{name:<{KEY}}"
            + "".join(f"{n:>14,}" for n in result["counts"].values())
            + f"   built in {result['built_s']:.0f} s"
        )

    def units(which: str) -> str:
        return f"({demo['units'][which]} / {large['units'][which]} units)"

    labels = {
        "site page, biggest site": f"site page, biggest site {units('biggest site')}",
        "visit page, biggest site": f"visit page, biggest site {units('visit')}",
    }
    met, of = 0, 0
    for title, kind in (("office page", "pages"), ("API list", "api")):
        done, rows = _print_requests(
            title, [Row(**r) for r in demo[kind]], [Row(**r) for r in large[kind]], labels
        )
        met, of = met + done, of + rows
    _print_commands(demo, large, sites)
    print(
        f"\n{met} of {of} pages and lists meet their goals at {large['counts']['units']:,} "
        f"units. Reports of {large['month']}; ratios are large / demo."
    )


# --- the run --------------------------------------------------------------------------------


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--sites", type=int, default=300, help="sites of the large fleet")
    parser.add_argument("--quick", action="store_true", help="30 sites and 3 runs: a fast check")
    parser.add_argument("--runs", type=int, default=5, help="timed requests of each page")
    parser.add_argument("--measure", choices=SIZES, help=argparse.SUPPRESS)
    parser.add_argument("--out", type=Path, help=argparse.SUPPRESS)
    args = parser.parse_args()
    if args.quick:
        args.sites, args.runs = 30, 3
    server = postgres_server()
    if server is None:
        rerun_with_postgres()
        return
    if args.measure:
        measure(args.measure, args.sites, args.runs, args.out.parent, args.out)
        return

    results = {}
    with tempfile.TemporaryDirectory(prefix="rimewatch-bench-scale-") as tmp:
        for size in SIZES:
            name = f"scale_{size}"
            url = database_url(server, name)
            env = {**os.environ, "DATABASE_URL": url, "TMPDIR": tmp}
            out = Path(tmp) / f"{size}.json"
            command = [sys.executable, __file__, "--measure", size]
            command += ["--sites", str(args.sites), "--runs", str(args.runs), "--out", str(out)]
            try:
                subprocess.run(command, env=env, check=True)
                results[size] = json.loads(out.read_text())
                env.update(bench_environment(Path(tmp), url, ENV))
                ran = []
                for key, manage in results[size]["commands"]:
                    _progress(f"{size}: {key} ...")
                    ran.append(asdict(_command(key, manage, env, Path(tmp) / "command.log")))
                _end_progress()
                results[size]["commands"] = ran
            finally:
                drop_database(server, name)
    report(results["demo"], results["large"], args.sites)


if __name__ == "__main__":
    main()
