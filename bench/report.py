"""How long a monthly report takes, and how it grows with the size of the site.

Builds sites of 10, 50 and 200 units with twelve months of monthly visits (bulk inserts, in a
throwaway SQLite database), then times each stage of the report side by side in one run:
gathering, charts, HTML and WeasyPrint. Prints the growth ratio 200 vs 10 units, and the
alternatives the report's defaults were chosen by: SVG against PNG charts, and chart drawing
in one process against two.

    .venv/bin/python bench/report.py [--sizes 10,50,200] [--keep DIR]

Goal (issue 7): a 50-unit site under 10 s, growth close to linear. Wall-clock times move
with whatever else the machine runs; the cpu column (this process and the chart workers) is
the steadier figure to compare variants by.
"""

from __future__ import annotations

import argparse
import datetime as dt
import os
import sys
import tempfile
import time
from pathlib import Path

ROOT = Path(__file__).resolve().parent.parent
sys.path.insert(0, str(ROOT))


def _setup(tmp: Path) -> None:
    os.environ["DATABASE_URL"] = f"sqlite:///{tmp / 'bench.sqlite3'}"
    os.environ["RIMEWATCH_VAR_DIR"] = str(tmp)
    os.environ.setdefault("RIMEWATCH_CACHE_DIR", str(ROOT / "var" / "cache"))
    os.environ["DJANGO_SETTINGS_MODULE"] = "config.settings_test"
    import django

    django.setup()
    from django.core.management import call_command

    call_command("migrate", verbosity=0, interactive=False)


def _children_cpu() -> float:
    """CPU seconds of finished child processes (the chart workers)."""
    t = os.times()
    return t.children_user + t.children_system


def _variant(text: str) -> tuple[str, int, int]:
    """ "jpeg150-1" -> ("jpeg", 150, 1): chart format, dots per inch, chart processes."""
    name, _, workers = text.partition("-")
    fmt = name.rstrip("0123456789")
    return fmt, int(name[len(fmt) :] or 150), int(workers or 1)


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--sizes", default="10,50,200")
    parser.add_argument("--keep", type=Path, help="write the PDFs into this folder")
    parser.add_argument(
        "--variants",
        default="png-2,png-1,svg-2",
        help="chart format and worker count to compare (the first is the baseline)",
    )
    args = parser.parse_args()
    sizes = [int(s) for s in args.sizes.split(",")]
    variants = [_variant(v) for v in args.variants.split(",")]

    with tempfile.TemporaryDirectory(prefix="rimewatch-bench-") as tmp:
        _setup(Path(tmp))
        from fleet.display import display_for
        from reports.months import Month
        from reports.services import build_report
        from tests.reports.factories import bulk_site_history

        month = Month(2026, 3)
        now = dt.datetime(2026, 4, 2, 6, 0, tzinfo=dt.UTC)
        display = display_for("us")
        sites = {}
        for n in sizes:
            t = time.perf_counter()
            sites[n] = bulk_site_history(n, month).site
            print(
                f"built a {n}-unit site with 12 months of visits in {time.perf_counter() - t:.1f} s"
            )

        print()
        header = (
            f"{'variant':<8} {'units':>5} {'pages':>5} {'gather':>7} {'charts':>7} "
            f"{'html':>6} {'pdf':>7} {'total':>7} {'cpu':>7} {'MB':>6}"
        )
        print(header)
        print("-" * len(header))
        totals: dict[tuple[str, int], dict[int, float]] = {}
        for fmt, dpi, workers in variants:
            key = (fmt, dpi, workers)
            totals[key] = {}
            for n in sizes:
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
                cpu = time.process_time() + _children_cpu() - cpu0
                tm = built.timings
                total = sum(tm.values())
                totals[key][n] = total
                print(
                    f"{fmt}{dpi}-{workers:<2} {n:>5} {built.page_count:>5} {tm['gather']:>6.2f}s "
                    f"{tm['charts']:>6.2f}s {tm['html']:>5.2f}s {tm['pdf']:>6.2f}s "
                    f"{total:>6.2f}s {cpu:>6.2f}s {len(built.pdf) / 1e6:>6.2f}"
                )
                if args.keep:
                    args.keep.mkdir(parents=True, exist_ok=True)
                    (args.keep / f"report-{n}-{fmt}{dpi}-{workers}.pdf").write_bytes(built.pdf)

        print()
        small, large = min(sizes), max(sizes)
        for key, by_size in totals.items():
            ratio = by_size[large] / by_size[small]
            print(
                f"{key[0]}{key[1]}-{key[2]}: {large} vs {small} units took {ratio:.1f}x the time "
                f"for {large / small:.0f}x the units"
                + (f"; 50 units: {by_size[50]:.1f} s (goal < 10 s)" if 50 in by_size else "")
            )
        base = variants[0]
        for key in variants[1:]:
            side = ", ".join(f"{n} units {totals[key][n] / totals[base][n]:.2f}x" for n in sizes)
            print(f"{key[0]}{key[1]}-{key[2]} against {base[0]}{base[1]}-{base[2]}: {side}")


if __name__ == "__main__":
    main()
