"""Which charts a unit's page gets, built from its gathered history in display units.

The five trend panels (``trend_panels``) are also the office unit page's charts, so the page
and the report draw one figure from the same kind of history points.

A trend panel needs ``chart_min_points`` visits with a value; below that the report says so in
words instead of drawing a near-empty chart. The capacitor panel appears only where a
capacitor was measured; the leak-rate panel only where refrigerant was added in the window.
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass

from fleet.display import Display

from .charts import Band, Line, Panel, Reference, Window
from .data import HistoryPoint, SiteMonth, UnitMonth
from .summary import DEFAULT_RULES, ReportRules


@dataclass(frozen=True)
class UnitFigure:
    unit_id: int
    panels: tuple[Panel, ...]
    #: Sentences for the panels left out for want of history.
    notes: tuple[str, ...]


def window_of(site_month: SiteMonth) -> Window:
    return Window.months(site_month.window_start.first_day, site_month.month.last_day)


def trend_panels(
    h: Sequence[HistoryPoint], rla_a: float, display: Display, application: str = ""
) -> list[Panel]:
    """Condensing and evaporating temperatures against their targets, superheat and
    subcooling against their ok ranges, and the compressor current against its RLA.

    An ice machine's evaporating panel has no box-air line: it is not judged on a box.
    """
    dates = [p.taken_on for p in h]
    t, d = display.temperature, display.difference
    ice_machine = application == "ice_machine"
    evaporating_lines: tuple[Line, ...] = (
        Line("evaporating", dates, [t(p.evaporating_c) for p in h], "measured"),
        Line("target", dates, [t(p.evaporating_target_c) for p in h], "target"),
    )
    if not ice_machine:
        evaporating_lines += (Line("box air", dates, [t(p.box_temp_c) for p in h], "ambient"),)
    t_axis = f"Temperature ({display.temperature_symbol})"
    d_axis = f"Difference ({display.difference_symbol})"
    return [
        Panel(
            "Condensing temperature",
            t_axis,
            (
                Line("condensing", dates, [t(p.condensing_c) for p in h], "measured"),
                Line("target", dates, [t(p.condensing_target_c) for p in h], "target"),
                Line("entering air", dates, [t(p.entering_air_c) for p in h], "ambient"),
            ),
            alt="condensing saturation temperature against its target, with the air entering "
            "the condenser",
        ),
        Panel(
            "Evaporating temperature",
            t_axis,
            evaporating_lines,
            alt="evaporating saturation temperature against its target"
            + ("" if ice_machine else ", with the box air"),
        ),
        Panel(
            "Superheat",
            d_axis,
            (Line("superheat", dates, [d(p.superheat_k) for p in h], "measured"),),
            band=Band(
                "ok range",
                dates,
                [d(p.superheat_low_k) for p in h],
                [d(p.superheat_high_k) for p in h],
            ),
            alt="evaporator superheat against its ok range",
        ),
        Panel(
            "Subcooling",
            d_axis,
            (Line("subcooling", dates, [d(p.subcooling_k) for p in h], "measured"),),
            band=Band(
                "ok range",
                dates,
                [d(p.subcooling_low_k) for p in h],
                [d(p.subcooling_high_k) for p in h],
            ),
            alt="liquid subcooling against its ok range",
        ),
        Panel(
            "Compressor current",
            "Current (A)",
            (
                Line(
                    "running",
                    dates,
                    [p.amps_a if p.compressor_running is not False else None for p in h],
                    "measured",
                ),
                Line(
                    "not running",
                    dates,
                    [p.amps_a if p.compressor_running is False else None for p in h],
                    "event",
                ),
            ),
            references=(Reference(f"RLA {rla_a:g} A", rla_a),),
            alt="compressor current, highest leg, against the rated-load amps",
        ),
    ]


def unit_figure(u: UnitMonth, display: Display, rules: ReportRules = DEFAULT_RULES) -> UnitFigure:
    h = u.history
    dates = [p.taken_on for p in h]
    candidates = trend_panels(h, u.unit.rla_a, display, u.unit.application)
    for kind, rating, values in (
        ("Run capacitor", u.unit.run_capacitor, [p.run_capacitor_uf for p in h]),
        ("Start capacitor", u.unit.start_capacitor, [p.start_capacitor_uf for p in h]),
    ):
        if not any(v is not None for v in values):
            continue
        candidates.append(
            Panel(
                kind,
                "Capacitance (µF)",
                (Line("measured", dates, values, "measured"),),
                band=Band(
                    "rating",
                    dates,
                    [rating.low_uf if rating else None] * len(dates),
                    [rating.high_uf if rating else None] * len(dates),
                )
                if rating
                else None,
                alt=f"{kind.lower()} microfarads against the rating marked on it",
            )
        )

    panels: list[Panel] = []
    notes: list[str] = []
    for panel in candidates:
        n = panel.point_count()
        if n >= rules.chart_min_points:
            panels.append(panel)
        else:
            visits = "no visit" if n == 0 else f"only {n} visit{'s' if n > 1 else ''}"
            # The minimum itself is a rule value: it is quoted in the methods notes.
            notes.append(
                f"{panel.title}: {visits} with a value in these twelve months, too few to "
                "draw a trend."
            )

    rated = [a for a in u.leak_rates if a.computed and a.leak_rate_percent is not None]
    if rated:
        threshold = next(
            (a.threshold_percent for a in reversed(rated) if a.threshold_percent), None
        )
        panels.append(
            Panel(
                "Leak rate at each addition",
                "Leak rate (%)",
                (
                    Line(
                        "leak rate",
                        [a.occurred_on for a in rated],
                        [a.leak_rate_percent for a in rated],
                    ),
                ),
                references=(Reference(f"threshold {threshold:g} %", threshold),)
                if threshold
                else (),
                bars=True,
                alt="leak rate of each refrigerant addition against the threshold",
            )
        )
    return UnitFigure(u.unit.id, tuple(panels), tuple(notes))
