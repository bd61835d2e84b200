"""Charts from plain series: units on the axes, direct labels, print-ready images."""

from __future__ import annotations

import datetime as dt
import io
import re

from PIL import Image

from reports.charts import (
    Band,
    Line,
    Panel,
    Reference,
    Window,
    chart_jpeg,
    chart_png,
    chart_svg,
    data_uri,
)

WINDOW = Window.months(dt.date(2025, 4, 1), dt.date(2026, 3, 31))
DATES = [dt.date(2025, m, 5) for m in range(4, 13)] + [dt.date(2026, m, 5) for m in (1, 2, 3)]


def panels() -> list[Panel]:
    """Synthetic series (not reference data): a drifting condensing temperature, a target,
    the ambient with one missing reading, and a current against its RLA."""
    cond = [95.0 + 0.8 * i for i in range(12)]
    air = [70.0 + i for i in range(12)]
    air[4] = None
    return [
        Panel(
            "Condensing temperature",
            "Temperature (°F)",
            (
                Line("condensing", DATES, cond, "measured"),
                Line("target", DATES, [95.0] * 12, "target"),
                Line("entering air", DATES, air, "ambient"),
            ),
        ),
        Panel(
            "Superheat",
            "Difference (°F)",
            (Line("superheat", DATES, [8.0] * 12),),
            band=Band("ok range", DATES, [6.0] * 12, [10.0] * 12),
        ),
        Panel(
            "Compressor current",
            "Current (A)",
            (Line("running", DATES, [7.0 + 0.1 * i for i in range(12)]),),
            references=(Reference("RLA 10 A", 10.0),),
        ),
    ]


def svg_text(svg: str) -> list[str]:
    return re.findall(r"<text[^>]*>([^<]*)</text>", svg)


def test_every_axis_carries_its_unit_and_every_line_its_name():
    """The SVG keeps text as text: each panel's y axis names its unit, the month ticks are
    written out, and each line, band and reference line is labelled directly (so the chart
    reads without colour)."""
    svg = chart_svg(panels(), WINDOW)
    texts = svg_text(svg)
    assert svg.startswith("<svg")
    for label in ("Temperature (°F)", "Difference (°F)", "Current (A)"):
        assert label in texts
    for label in (
        "condensing",
        "target",
        "entering air",
        "superheat",
        "ok range",
        "running",
        "RLA 10 A",
    ):
        assert label in texts
    assert "Apr 25" in texts
    assert "Feb 26" in texts


def test_lines_differ_by_dash_and_marker_not_only_by_grey():
    """Measured, target and ambient lines are drawn solid, dashed and dotted, and the
    measured and ambient points carry different markers."""
    svg = chart_svg(panels()[:1], WINDOW)
    dashes = set(re.findall(r"stroke-dasharray: ([0-9.,]+)", svg))
    assert len(dashes) >= 2  # dashed target, dotted ambient; the measured line is solid
    marker_defs = re.findall(r'<path id="m[0-9a-f]+" d="([^"]+)"', svg)
    assert len(set(marker_defs)) >= 2  # circle and triangle


def test_the_same_series_always_give_the_same_bytes():
    """A chart is reproducible (no date, fixed ids), so a report's checksum depends on its
    data only."""
    assert chart_svg(panels(), WINDOW) == chart_svg(panels(), WINDOW)


def test_the_print_image_is_grey_at_300_dpi():
    """The PNG for print is 8-bit grey at 300 dpi (7.2 inches wide is 2160 pixels) on a
    white ground."""
    image = Image.open(io.BytesIO(chart_png(panels(), WINDOW)))
    assert image.mode == "L"
    assert image.size[0] == 2160
    assert round(image.info["dpi"][0]) == 300
    assert image.getpixel((0, 0)) == 255  # paper white, not a faint grey


def test_images_embed_as_data_uris():
    """Charts travel inside the HTML, so the PDF renderer fetches nothing."""
    assert data_uri("<svg/>").startswith("data:image/svg+xml;base64,")
    assert data_uri(b"\x89PNG").startswith("data:image/png;base64,")


def test_worker_processes_draw_the_same_charts():
    """Charts drawn in two worker processes are byte for byte those drawn in-process, keyed
    by unit; a unit with no panel gets no chart."""
    from reports.figures import UnitFigure
    from reports.services import draw_unit_charts

    figures = [UnitFigure(i, tuple(panels()[: 1 + i % 3]), ()) for i in range(4)]
    figures.append(UnitFigure(99, (), ("too little history",)))
    here = draw_unit_charts(figures, WINDOW, workers=1, fmt="svg")
    pooled = draw_unit_charts(figures, WINDOW, workers=2, fmt="svg")
    assert sorted(here) == [0, 1, 2, 3]
    assert pooled == here


def test_the_print_chart_is_a_grey_jpeg_at_its_printed_size_and_150_dpi():
    """The report's chart is drawn for the page (7.2 inches at 150 dpi is 1080 pixels),
    grey on paper white, and embeds as a JPEG data URI."""
    data = chart_jpeg(panels(), WINDOW)
    image = Image.open(io.BytesIO(data))
    assert (image.format, image.mode) == ("JPEG", "L")
    assert image.size[0] == 1080
    assert round(image.info["dpi"][0]) == 150
    assert image.getpixel((0, 0)) >= 250  # paper white, within the JPEG's rounding
    assert data_uri(data).startswith("data:image/jpeg;base64,")
