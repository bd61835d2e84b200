"""How fast the saturation tables are, side by side with CoolProp and numpy.interp.

For every refrigerant of the catalogue, in one run:

- first use: building its table into an empty cache directory (CoolProp, then the .npz
  write), and reading it back from disk in a fresh memo;
- dew temperature at N random absolute pressures spread over the table's range (uniform in
  ln p), four ways: our ``SaturationTable.dew_temp_c``; ``numpy.interp`` on the same table's
  nodes (the floor: one binary search and one linear step per value, nothing else);
  CoolProp's low-level ``AbstractState.update(PQ_INPUTS, p, 1)``; and ``PropsSI`` per value.
  Each way keeps its fastest run (the least disturbed by other work on the machine). The two
  CoolProp ways run on a sample and are extrapolated; plain calls on a HEOS mixture
  fail in bands (docs/references.md §1.4), and the failures are counted;
- the memory all tables take once loaded (tracemalloc), and the arrays they hold.

    .venv/bin/python bench/saturation.py [--values 1000000] [--sample 2000] [--only R-404A,...]

Goals (issue): >= 500x PropsSI, >= 50x AbstractState, within 3x of numpy.interp, first use
under 5 s per blend, all tables under 50 MB.
"""

from __future__ import annotations

import argparse
import math
import statistics
import sys
import tempfile
import time
import tracemalloc
from collections.abc import Callable
from pathlib import Path

import numpy as np

ROOT = Path(__file__).resolve().parent.parent
sys.path.insert(0, str(ROOT))

import CoolProp  # noqa: E402
import CoolProp.CoolProp as CP  # noqa: E402

from diagnostics.core import refrigerants, saturation  # noqa: E402


def best_of(repeats: int, fn: Callable[[], object]) -> float:
    """The fastest of a few runs, in seconds (the least disturbed by other work)."""
    times = []
    for _ in range(repeats):
        start = time.perf_counter()
        fn()
        times.append(time.perf_counter() - start)
    return min(times)


def per_value(
    call: Callable[[float], object], values: np.ndarray, repeats: int
) -> tuple[float, int]:
    """Seconds per value of a scalar CoolProp call over a sample (the fastest of ``repeats``
    passes), and how many values failed."""
    best, failures = math.inf, 0
    for _ in range(repeats):
        failures = 0
        start = time.perf_counter()
        for p in values:
            try:
                call(float(p))
            except ValueError:
                failures += 1
        best = min(best, (time.perf_counter() - start) / len(values))
    return best, failures


def propssi_fluid(r: refrigerants.Refrigerant) -> str:
    if r.coolprop_name is not None:
        return r.coolprop_name
    parts = (f"{refrigerants.COOLPROP_FLUID[c]}[{x:.10f}]" for (c, _), x in
             zip(r.composition, r.mole_fractions, strict=True))  # fmt: skip
    return "HEOS::" + "&".join(parts)


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--values", type=int, default=1_000_000, help="pressures per lookup")
    parser.add_argument("--sample", type=int, default=2000, help="CoolProp calls per fluid")
    parser.add_argument(
        "--repeats", type=int, default=15, help="runs of each lookup (fastest kept)"
    )
    parser.add_argument("--only", help="comma-separated designations (default: all)")
    args = parser.parse_args()
    designations = args.only.split(",") if args.only else list(refrigerants.CATALOGUE)
    rng = np.random.default_rng(2024)

    print(f"CoolProp {CoolProp.__version__}, numpy {np.__version__}; {args.values:,} pressures, "
          f"{args.sample:,} CoolProp calls per refrigerant, best of {args.repeats}")  # fmt: skip
    header = (
        f"{'refrigerant':12} {'build s':>7} {'load ms':>7} {'ours M/s':>9} {'interp M/s':>10} "
        f"{'AS k/s':>8} {'PropsSI k/s':>11} {'x PropsSI':>9} {'x AS':>7} {'x interp':>8} "
        f"{'failed AS/PropsSI':>17}"
    )
    print(header)
    rows = []
    with tempfile.TemporaryDirectory(prefix="rimewatch-bench-") as cache:
        for designation in designations:
            r = refrigerants.get(designation)
            saturation.clear_memo()
            start = time.perf_counter()
            table = saturation.table(designation, cache)
            build_s = time.perf_counter() - start
            saturation.clear_memo()
            start = time.perf_counter()
            table = saturation.table(designation, cache)
            load_s = time.perf_counter() - start

            p_lo, p_hi = table.pressure_range_kpa_abs("dew")
            p = np.exp(rng.uniform(np.log(p_lo), np.log(p_hi), args.values))
            ours_s = best_of(args.repeats, lambda: table.dew_temp_c(p))  # noqa: B023
            _, _, lnp_nodes, temp_nodes = table.nodes("dew")
            p_nodes = np.exp(lnp_nodes)
            interp_s = best_of(args.repeats, lambda: np.interp(p, p_nodes, temp_nodes))  # noqa: B023

            sample = p[: args.sample] * 1e3
            state = r.coolprop_state()

            def low_level(pa: float) -> float:
                state.update(CP.PQ_INPUTS, pa, 1)  # noqa: B023
                return state.T()  # noqa: B023

            fluid = propssi_fluid(r)
            as_s, as_failed = per_value(low_level, sample, 3)
            props_s, props_failed = per_value(
                lambda pa: CP.PropsSI("T", "P", pa, "Q", 1, fluid),  # noqa: B023
                sample[: max(1, args.sample // 2)],
                1,
            )
            ours_rate = args.values / ours_s
            row = {
                "designation": designation,
                "blend": r.is_blend,
                "build_s": build_s,
                "ours": ours_rate,
                "interp": args.values / interp_s,
                "vs_props": ours_rate * props_s,
                "vs_as": ours_rate * as_s,
                "interp_ratio": ours_s / interp_s,
            }
            rows.append(row)
            print(
                f"{designation:12} {build_s:7.2f} {load_s * 1e3:7.1f} {ours_rate / 1e6:9.1f} "
                f"{row['interp'] / 1e6:10.1f} {1e-3 / as_s:8.1f} {1e-3 / props_s:11.2f} "
                f"{row['vs_props']:9.0f} {row['vs_as']:7.0f} {1 / row['interp_ratio']:8.2f} "
                f"{as_failed:>8}/{props_failed:<8}"
            )

        saturation.clear_memo()
        tracemalloc.start()
        tables = [saturation.table(d, cache) for d in designations]
        held, _ = tracemalloc.get_traced_memory()
        tracemalloc.stop()
        arrays = sum(t.nbytes for t in tables)

    def summary(name: str, value: float, goal: str, met: bool) -> None:
        print(f"  {name:44} {value:10.2f}   goal {goal:10} {'met' if met else 'MISSED'}")

    print("\nSummary (worst refrigerant; ratios are ours against the other, side by side):")
    worst_props = min(rows, key=lambda x: x["vs_props"])
    worst_as = min(rows, key=lambda x: x["vs_as"])
    worst_interp = max(rows, key=lambda x: x["interp_ratio"])
    blends = [x for x in rows if x["blend"]] or rows
    slowest = max(blends, key=lambda x: x["build_s"])
    summary(f"x PropsSI ({worst_props['designation']})", worst_props["vs_props"], ">= 500",
            worst_props["vs_props"] >= 500)  # fmt: skip
    summary(f"x AbstractState ({worst_as['designation']})", worst_as["vs_as"], ">= 50",
            worst_as["vs_as"] >= 50)  # fmt: skip
    summary(f"time / numpy.interp's ({worst_interp['designation']})", worst_interp["interp_ratio"],
            "<= 3", worst_interp["interp_ratio"] <= 3)  # fmt: skip
    summary(f"first-use build, s ({slowest['designation']})", slowest["build_s"], "< 5",
            slowest["build_s"] < 5)  # fmt: skip
    summary("memory of all tables loaded, MB (tracemalloc)", held / 1e6, "< 50", held < 50e6)
    print(f"  {'  of which arrays, MB':44} {arrays / 1e6:10.2f}")
    print(f"  {'building every table at once, s':44} {sum(x['build_s'] for x in rows):10.2f}"
          "   (tables are built lazily, one refrigerant at a time)")  # fmt: skip
    print(f"  {'median lookup rate, M values/s':44} "
          f"{statistics.median(x['ours'] for x in rows) / 1e6:10.1f}")  # fmt: skip


if __name__ == "__main__":
    main()
