"""How long a monthly report takes, before and after, and the month's reports on workers.

Builds sites with twelve months of monthly visits (bulk inserts, in a throwaway SQLite
database, or the PostgreSQL of ``DATABASE_URL`` as under scripts/with-postgres.sh), then:

1. times each stage of one report (gathering, charts, HTML, WeasyPrint; the quickest of
   ``--repeats``) for each chart variant side by side in one run: the 300-dpi PNGs of
   layout 2 (the baseline, which WeasyPrint decodes and encodes again) against the
   150-dpi JPEGs it copies as drawn, and 150-dpi PNGs to tell the resolution's share
   from the format's;
2. enqueues the month's reports as one job per site (``monthly_reports --enqueue``) for a
   handful of average sites (6,000 units over 300 sites is 20 a site) and runs them with
   one, then two real worker processes (``manage.py db_worker``), timing each until the
   queue is empty; the per-site time times 300 is an extrapolation, printed as such.

    .venv/bin/python bench/report.py [--sizes 20,60] [--variants png300-1,jpeg150-1,png150-1]
        [--repeats 2] [--sites 8] [--site-units 20] [--workers 1,2] [--keep DIR]

Goals (issue 17): a 60-unit site under 8 s, 300 sites under 10 minutes with two workers on
this two-core machine. Wall-clock times move with whatever else the machine runs; the cpu
column (this process and its chart processes) is the steadier figure to compare by.
"""

from __future__ import annotations

import argparse
import datetime as dt
import io
import os
import subprocess
import sys
import tempfile
import time
from pathlib import Path

sys.path.insert(0, str(Path(__file__).resolve().parent))
sys.path.insert(0, str(Path(__file__).resolve().parent.parent))

from _db import ROOT, setup_database

#: The large fleet of issue 17: 300 sites.
FLEET_SITES = 300


def _setup(tmp: Path) -> None:
    if os.environ.get("DATABASE_URL", "").startswith("postgres"):
        os.environ["RIMEWATCH_VAR_DIR"] = str(tmp)
        os.environ["DJANGO_SETTINGS_MODULE"] = "config.settings_test"
        import django

        django.setup()
        from django.core.management import call_command

        call_command("migrate", verbosity=0, interactive=False)
    else:
        setup_database(tmp)


def _children_cpu() -> float:
    """CPU seconds of finished child processes (chart processes, workers)."""
    t = os.times()
    return t.children_user + t.children_system


def _variant(text: str) -> tuple[str, int, int]:
    """ "jpeg150-1" -> ("jpeg", 150, 1): chart format, dots per inch, chart processes."""
    name, _, workers = text.partition("-")
    fmt = name.rstrip("0123456789")
    return fmt, int(name[len(fmt) :] or 150), int(workers or 1)


def stages(args: argparse.Namespace) -> None:
    """One report per size and chart variant, stage by stage, side by side."""
    from fleet.display import display_for
    from reports.months import Month
    from reports.services import build_report
    from tests.reports.factories import bulk_site_history

    sizes = [int(s) for s in args.sizes.split(",")]
    variants = [_variant(v) for v in args.variants.split(",")]
    month = Month(2026, 3)
    now = dt.datetime(2026, 4, 2, 6, 0, tzinfo=dt.UTC)
    display = display_for("us")
    sites = {}
    for n in sizes:
        t = time.perf_counter()
        sites[n] = bulk_site_history(n, month).site
        print(f"built a {n}-unit site with 12 months of visits in {time.perf_counter() - t:.1f} s")

    print()
    header = (
        f"{'variant':<10} {'units':>5} {'pages':>5} {'gather':>7} {'charts':>7} "
        f"{'html':>6} {'pdf':>7} {'total':>7} {'cpu':>7} {'MB':>6}"
    )
    print(header)
    print("-" * len(header))
    totals: dict[str, dict[int, tuple[float, float]]] = {}
    for fmt, dpi, workers in variants:
        name = f"{fmt}{dpi}-{workers}"
        totals[name] = {}
        for n in sizes:
            runs = []
            for _ in range(args.repeats):
                cpu0 = time.process_time() + _children_cpu()
                built = build_report(
                    sites[n].pk,
                    month,
                    now=now,
                    display=display,
                    workers=workers,
                    chart_format=fmt,
                    chart_dpi=dpi,
                )
                runs.append(
                    (
                        sum(built.timings.values()),
                        built,
                        time.process_time() + _children_cpu() - cpu0,
                    )
                )
            # The quickest of the repeats: the least disturbed by the machine's other work.
            total, built, cpu = min(runs, key=lambda run: run[0])
            tm = built.timings
            totals[name][n] = (total, cpu)
            print(
                f"{name:<10} {n:>5} {built.page_count:>5} {tm['gather']:>6.2f}s "
                f"{tm['charts']:>6.2f}s {tm['html']:>5.2f}s {tm['pdf']:>6.2f}s "
                f"{total:>6.2f}s {cpu:>6.2f}s {len(built.pdf) / 1e6:>6.2f}"
            )
            if args.keep:
                args.keep.mkdir(parents=True, exist_ok=True)
                (args.keep / f"report-{n}-{name}.pdf").write_bytes(built.pdf)

    print()
    names = list(totals)
    base = names[0]
    for name in names[1:]:
        side = ", ".join(
            f"{n} units {totals[name][n][0] / totals[base][n][0]:.2f}x wall "
            f"{totals[name][n][1] / totals[base][n][1]:.2f}x cpu"
            for n in sizes
        )
        print(f"{name} against {base}: {side}")
    if 60 in sizes:
        for name in names:
            wall, cpu = totals[name][60]
            print(f"{name}: a 60-unit site {wall:.1f} s wall, {cpu:.1f} s cpu (goal < 8 s)")


def _peak_mb(pid: int) -> float:
    """A running process's peak resident memory so far (VmHWM), in MB."""
    try:
        for line in Path(f"/proc/{pid}/status").read_text().splitlines():
            if line.startswith("VmHWM:"):
                return int(line.split()[1]) / 1024
    except OSError:
        pass
    return 0.0


def _waited_s(pid: int) -> float:
    """Seconds a running process has spent ready to run but waiting for a core (the
    scheduler's run-queue wait): the share of the time other work held the cores."""
    try:
        return int(Path(f"/proc/{pid}/schedstat").read_text().split()[1]) / 1e9
    except (OSError, IndexError, ValueError):
        return 0.0


def _worker(name: str, log: Path) -> subprocess.Popen[bytes]:
    return subprocess.Popen(
        [
            sys.executable,
            "manage.py",
            "db_worker",
            "--batch",
            "--interval",
            "0.1",
            "--no-startup-delay",
            "--worker-id",
            name,
        ],
        cwd=ROOT,
        env=dict(os.environ),
        stdout=subprocess.DEVNULL,
        stderr=log.open("wb"),
    )


def on_workers(args: argparse.Namespace, tmp: str) -> None:
    """The month's reports of a handful of sites as one job per site, on 1 and 2 workers."""
    from django.core.management import call_command
    from django_tasks import TaskResultStatus
    from django_tasks_db.models import DBTaskResult

    from fleet.models import Site
    from jobs.models import ReportRun
    from reports.models import MonthlyReport
    from reports.months import Month
    from tests.reports.factories import bulk_site_history

    month = Month(2026, 2)
    t = time.perf_counter()
    sites = [bulk_site_history(args.site_units, month).site for _ in range(args.sites)]
    print(
        f"\nbuilt {args.sites} sites of {args.site_units} units in "
        f"{time.perf_counter() - t:.1f} s; each run: `monthly_reports --enqueue`, then workers"
    )
    wanted = Site.objects.filter(pk__in=[s.pk for s in sites])
    per_site: dict[int, float] = {}
    cpu_per_site: dict[int, float] = {}
    for count in [int(w) for w in args.workers.split(",")]:
        MonthlyReport.objects.filter(site__in=wanted).delete()
        ReportRun.objects.all().delete()
        DBTaskResult.objects.all().delete()
        for site in sites:
            call_command(
                "monthly_reports",
                "--month",
                str(month),
                "--site",
                str(site.pk),
                "--enqueue",
                stdout=io.StringIO(),
            )
        cpu0 = _children_cpu()
        started = time.perf_counter()
        logs = [Path(tmp) / f"worker-{count}-{i + 1}.log" for i in range(count)]
        procs = [_worker(f"bench-{i + 1}", log) for i, log in enumerate(logs)]
        peak = 0.0
        waited = dict.fromkeys((p.pid for p in procs), 0.0)
        while any(p.poll() is None for p in procs):
            peak = max([peak, *(_peak_mb(p.pid) for p in procs)])
            for p in procs:
                waited[p.pid] = max(waited[p.pid], _waited_s(p.pid))
            time.sleep(0.2)
        wall = time.perf_counter() - started
        errors = [log.read_text() for log in logs]
        cpu = _children_cpu() - cpu0
        made = MonthlyReport.objects.filter(site__in=wanted).count()
        jobs = DBTaskResult.objects.filter(task_path="jobs.tasks.make_scheduled_report")
        failed = jobs.exclude(status=TaskResultStatus.SUCCESSFUL).count()
        if made != len(sites) or failed or any(p.returncode for p in procs):
            raise SystemExit(
                f"{made} reports for {len(sites)} sites, {failed} jobs failed:\n"
                + "\n".join(errors)
            )
        times = list(jobs.values_list("started_at", "finished_at"))
        span = (max(f for _, f in times) - min(s for s, _ in times)).total_seconds()
        busy = sum((f - s).total_seconds() for s, f in times)
        per_site[count] = span / len(sites)
        cpu_per_site[count] = cpu / len(sites)
        print(
            f"{count} worker(s): {len(sites)} sites, first job start to last job end "
            f"{span:.1f} s ({per_site[count]:.2f} s a site; each job {busy / len(times):.2f} s "
            f"on average); {wall:.1f} s with the workers' start-up; workers' cpu "
            f"{cpu / len(sites):.2f} s a site; waiting for a core "
            f"{sum(waited.values()) / len(sites):.2f} s a site; {made} reports, one per site; "
            f"a worker's peak resident memory {peak:.0f} MB"
        )
    first = min(per_site)
    for count, seconds in per_site.items():
        minutes = seconds * FLEET_SITES / 60
        print(
            f"{count} worker(s): {FLEET_SITES} sites of {args.site_units} units: about "
            f"{minutes:.1f} min, extrapolated from {len(sites)} sites (not measured; goal with "
            f"2 workers < 10 min)"
            + (f"; {per_site[first] / seconds:.2f}x the pace of {first}" if count != first else "")
        )
        # Where other work held the cores, the workers' own processor time says what the
        # same workers would take with a core each to themselves.
        free = cpu_per_site[count] * FLEET_SITES / min(count, os.cpu_count() or 1) / 60
        print(
            f"{count} worker(s) with a core each to themselves: about {free:.1f} min for "
            f"{FLEET_SITES} sites, worked out from their processor time (not measured)"
        )


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--sizes", default="20,60", help='site sizes to time ("": none)')
    parser.add_argument(
        "--variants",
        default="png300-1,jpeg150-1,png150-1",
        help="chart format, dpi and chart processes to compare (the first is the baseline)",
    )
    parser.add_argument("--repeats", type=int, default=2, help="reports per variant and size")
    parser.add_argument("--sites", type=int, default=8, help="sites run on the workers (0: none)")
    parser.add_argument("--site-units", type=int, default=20, help="units of each such site")
    parser.add_argument("--workers", default="1,2", help="worker counts to run them on")
    parser.add_argument("--keep", type=Path, help="write the PDFs into this folder")
    args = parser.parse_args()

    with tempfile.TemporaryDirectory(prefix="rimewatch-bench-") as tmp:
        _setup(Path(tmp))
        from django.db import connection

        load = ", ".join(f"{x:.1f}" for x in os.getloadavg())
        print(f"database: {connection.vendor}; {os.cpu_count()} cores, load average {load}")
        if args.sizes:
            stages(args)
        if args.sites:
            on_workers(args, tmp)


if __name__ == "__main__":
    main()
