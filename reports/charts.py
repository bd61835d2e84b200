"""Trend charts from plain series: dates and numbers in, an SVG (or PNG, JPEG) image out.

Nothing here knows about the database or the report: a chart is a list of ``Panel`` objects
(lines, an ok band, reference lines) over one date window, so the office's unit page can draw
the same charts from its own series. Values arrive already in display units; the caller
puts the unit in each panel's axis label.

Print and grey-scale: every line differs from the others by its dash pattern and its marker,
not only by its grey level, and carries its name as a direct label at its last point, so a
photocopy reads the same as the screen. Matplotlib's object API is used (no pyplot), with the
Agg/SVG backends only, so drawing holds no global state and is safe in worker processes.
"""

from __future__ import annotations

import base64
import io
import itertools
import math
import threading
from collections.abc import Sequence
from dataclasses import dataclass, field
from datetime import date
from typing import TypedDict, Unpack

import matplotlib
from PIL import Image

matplotlib.use("Agg")

from matplotlib.axes import Axes
from matplotlib.backends.backend_agg import FigureCanvasAgg
from matplotlib.figure import Figure
from matplotlib.ticker import MaxNLocator
from matplotlib.transforms import Bbox
from matplotlib.typing import RcKeyType

#: Line looks that survive a grey-scale printer: (colour, line style, marker, filled marker).
STYLES: dict[str, tuple[str, str, str, bool]] = {
    "measured": ("#000000", "-", "o", True),
    "second": ("#404040", "-.", "s", False),
    "target": ("#505050", "--", "", False),
    "ambient": ("#707070", ":", "^", False),
    "event": ("#000000", "", "X", True),
}

#: Matplotlib settings for every chart: text kept as text in the SVG (small files, searchable
#: PDFs), one font that the PDF renderer also has (DejaVu, installed system-wide), a fixed
#: hash salt and no date so the same data always gives the same bytes.
RC: dict[RcKeyType, object] = {
    "svg.fonttype": "none",
    "svg.hashsalt": "rimewatch",
    "font.family": "sans-serif",
    "font.sans-serif": ["DejaVu Sans"],
    "font.size": 7.5,
    "axes.titlesize": 8.5,
    "axes.titleweight": "bold",
    "axes.titlelocation": "left",
    # A fixed title height and label position spare matplotlib measuring the tick labels
    # of every panel to place them (a third of the drawing time).
    "axes.titley": 1.02,
    "axes.titlepad": 2.0,
    "axes.labelsize": 7.5,
    "axes.labelpad": 2.0,
    "axes.linewidth": 0.6,
    "axes.spines.top": False,
    "axes.spines.right": False,
    "xtick.labelsize": 7,
    "ytick.labelsize": 7,
    "xtick.major.size": 2.5,
    "ytick.major.size": 0,
    "lines.linewidth": 1.2,
    "lines.markersize": 4,
}


#: The report's charts in print: 150 dpi at their printed size is finer than the 6 pt chart
#: text needs on an office printer; 300 dpi gave four times the pixels to draw, encode and,
#: in WeasyPrint, decode and encode again (bench/report.py measures both).
PRINT_DPI = 150
#: JPEG quality of a printed chart: at 90 the grey lines and text show no ringing at print
#: size, and a chart is about 100 kB.
JPEG_QUALITY = 90
JPEG_MAGIC = b"\xff\xd8\xff"


@dataclass(frozen=True)
class Line:
    """One series on a panel; ``None`` values are skipped (the line joins the points it has)."""

    label: str
    dates: Sequence[date]
    values: Sequence[float | None]
    style: str = "measured"

    def points(self) -> list[tuple[float, float]]:
        return [
            (d.toordinal(), float(v))
            for d, v in zip(self.dates, self.values, strict=True)
            if v is not None and math.isfinite(v)
        ]


@dataclass(frozen=True)
class Band:
    """The ok range per date, drawn as a light grey area."""

    label: str
    dates: Sequence[date]
    low: Sequence[float | None]
    high: Sequence[float | None]


@dataclass(frozen=True)
class Reference:
    """A horizontal line at a fixed value (a nameplate rating, a legal threshold)."""

    label: str
    value: float


@dataclass(frozen=True)
class Panel:
    title: str
    #: The y axis label, with its unit: "Temperature (°F)".
    y_label: str
    lines: tuple[Line, ...]
    band: Band | None = None
    references: tuple[Reference, ...] = ()
    #: Draw the first line as bars (one per event) instead of a line.
    bars: bool = False
    alt: str = ""

    def point_count(self) -> int:
        """Points of the main (first) series: what decides whether there is a trend to draw."""
        return len(self.lines[0].points()) if self.lines else 0


@dataclass(frozen=True)
class Window:
    """The dates a chart covers: the first day of its first month to the last day shown."""

    first: date
    last: date
    tick_every_months: int = 2
    month_starts: tuple[date, ...] = field(default=())

    @classmethod
    def months(cls, first: date, last: date, tick_every_months: int = 2) -> Window:
        starts = []
        y, m = first.year, first.month
        while date(y, m, 1) <= last:
            starts.append(date(y, m, 1))
            y, m = (y + 1, 1) if m == 12 else (y, m + 1)
        return cls(first, last, tick_every_months, tuple(starts))


def _spread(ys: list[float], gap: float) -> list[float]:
    """Nudge label heights apart so direct labels do not overprint each other."""
    order = sorted(range(len(ys)), key=lambda i: ys[i])
    out = list(ys)
    for prev, cur in itertools.pairwise(order):
        if out[cur] - out[prev] < gap:
            out[cur] = out[prev] + gap
    return out


def _draw_panel(ax: Axes, panel: Panel, window: Window) -> None:
    x0, x1 = window.first.toordinal(), window.last.toordinal()
    span = x1 - x0
    labels: list[tuple[float, float, str, str]] = []
    if panel.band is not None:
        spans = [
            (d.toordinal(), lo, hi)
            for d, lo, hi in zip(panel.band.dates, panel.band.low, panel.band.high, strict=True)
            if lo is not None and hi is not None
        ]
        if spans:
            band_xs = [s[0] for s in spans]
            if len(band_xs) == 1:
                band_xs = [band_xs[0] - 5, band_xs[0] + 5]
                spans = spans * 2
            ax.fill_between(
                band_xs,
                [s[1] for s in spans],
                [s[2] for s in spans],
                color="#e3e3e3",
                linewidth=0,
                step=None,
            )
            labels.append((band_xs[-1], spans[-1][2], panel.band.label, "#6a6a6a"))
    for ref in panel.references:
        # Stops at the window's end, so the direct label to its right stays clear of it.
        ax.hlines(
            ref.value, x0 - span * 0.02, x1, color="#000000", linestyle=(0, (4, 2)), linewidth=0.8
        )
        labels.append((x1, ref.value, ref.label, "#000000"))
    for i, line in enumerate(panel.lines):
        pts = line.points()
        if not pts:
            continue
        colour, dash, marker, filled = STYLES.get(line.style, STYLES["measured"])
        xs, ys = [p[0] for p in pts], [p[1] for p in pts]
        if panel.bars and i == 0:
            ax.bar(
                xs,
                ys,
                width=max(6.0, span / 40),
                color="#8c8c8c",
                edgecolor="#000000",
                linewidth=0.5,
            )
            for x, y in pts:
                ax.annotate(
                    f"{y:.0f}",
                    (x, y),
                    xytext=(0, 2),
                    textcoords="offset points",
                    ha="center",
                    va="bottom",
                    fontsize=6.5,
                    # A white ground keeps the figure legible where a reference line crosses.
                    bbox={"facecolor": "white", "edgecolor": "none", "pad": 0.4},
                )
            continue
        ax.plot(
            xs,
            ys,
            color=colour,
            linestyle=dash or "none",
            marker=marker or None,
            markerfacecolor=colour if filled else "white",
            markeredgecolor=colour,
            markeredgewidth=0.8,
        )
        labels.append((xs[-1], ys[-1], line.label, colour))

    ax.set_xlim(x0 - span * 0.02, x1 + span * 0.26)
    ax.set_title(panel.title)
    ax.set_ylabel(panel.y_label)
    if panel.bars:
        ax.set_ylim(bottom=0)

    if labels:
        low, high = ax.get_ylim()
        gap = (high - low) * 0.12
        ys = _spread([lbl[1] for lbl in labels], gap)
        for (x, _, text, colour), y in zip(labels, ys, strict=True):
            ax.annotate(
                text,
                (max(x, x1 - span * 0.02), y),
                xytext=(4, 0),
                textcoords="offset points",
                va="center",
                ha="left",
                fontsize=6.3,
                color=colour,
                annotation_clip=False,
            )


#: Figures kept per layout and reused chart after chart: creating axes and their ticks is
#: most of matplotlib's cost, and a report draws the same layout for every unit.
_FIGURES: dict[tuple[int, int, float, float], tuple[Figure, list[Axes]]] = {}
_LOCK = threading.Lock()


def _figure(
    rows: int, columns: int, width_in: float, panel_height_in: float
) -> tuple[Figure, list[Axes]]:
    key = (rows, columns, width_in, panel_height_in)
    if key not in _FIGURES:
        fig = Figure(figsize=(width_in, panel_height_in * rows + 0.15), layout=None)
        axes = list(fig.subplots(rows, columns, squeeze=False, sharex=True).flat)
        for ax in axes:
            ax.yaxis.set_label_coords(-0.13 if columns > 1 else -0.07, 0.5)
            ax.xaxis.set_label_coords(0.5, -0.3)
            ax.yaxis.set_major_locator(MaxNLocator(4))
            ax.grid(True, axis="y", color="#d0d0d0", linewidth=0.5)
            ax.set_axisbelow(True)
        fig.subplots_adjust(
            left=0.09 if columns > 1 else 0.07,
            right=0.98,
            top=1 - 0.25 / (panel_height_in * rows),
            bottom=0.5 / (panel_height_in * rows),
            hspace=0.62,
            wspace=0.28,
        )
        _FIGURES[key] = (fig, axes)
    return _FIGURES[key]


def _clear(ax: Axes) -> None:
    """Empty an axes for the next chart, keeping its ticks (cheaper than ``cla``)."""
    for artist in [*ax.lines, *ax.collections, *ax.patches, *ax.texts]:
        artist.remove()
    ax.dataLim = Bbox.null()
    ax.ignore_existing_data_limits = True
    ax.set_autoscaley_on(True)
    ax.set_title("")
    ax.set_ylabel("")
    ax.set_xlabel("")


def _draw(
    panels: Sequence[Panel],
    window: Window,
    *,
    columns: int = 2,
    width_in: float = 7.2,
    panel_height_in: float = 1.3,
) -> Figure:
    """The panels in a grid (row by row), sharing one date axis: only the lowest panel of
    each column carries the month labels (less text to draw and print). Call under _LOCK."""
    columns = max(1, min(columns, len(panels)))
    rows = max(1, math.ceil(len(panels) / columns))
    fig, axes = _figure(rows, columns, width_in, panel_height_in)
    ticks = list(window.month_starts[:: window.tick_every_months])
    # Shared axes share one locator and formatter: setting them once sets every panel.
    axes[0].set_xticks([t.toordinal() for t in ticks], [f"{t:%b %y}" for t in ticks])
    for i, ax in enumerate(axes):
        _clear(ax)
        ax.set_visible(i < len(panels))
        if i < len(panels):
            _draw_panel(ax, panels[i], window)
            lowest = i + columns >= len(panels)
            ax.xaxis.set_tick_params(labelbottom=lowest)
            # The date axis's unit: one point per visit, ticks at the start of each month.
            ax.set_xlabel("month of visit" if lowest else "")
    return fig


class Layout(TypedDict, total=False):
    """How ``_draw`` lays the panels out; a caller gives what it changes."""

    columns: int
    width_in: float
    panel_height_in: float


def _render(
    panels: Sequence[Panel], window: Window, fmt: str, dpi: int, **layout: Unpack[Layout]
) -> bytes:
    buf = io.BytesIO()
    with _LOCK, matplotlib.rc_context(RC):
        fig = _draw(panels, window, **layout)
        if fmt == "svg":
            fig.savefig(buf, format="svg", metadata={"Date": None})
        else:
            # Straight from the Agg buffer to an 8-bit grey PNG: the charts are grey by
            # design, and a grey image is a third of the bytes for the PDF to carry.
            fig.set_dpi(dpi)
            canvas = FigureCanvasAgg(fig)
            canvas.draw()
            width, height = canvas.get_width_height()
            image = Image.frombuffer(
                "RGBA", (width, height), canvas.buffer_rgba(), "raw", "RGBA", 0, 1
            )
            # Every colour here is a grey (R = G = B), so the red channel is the grey image,
            # exactly: white stays 255 (a luminance conversion rounds it to 254).
            grey = image.getchannel("R")
            if fmt == "jpeg":
                grey.save(buf, format="JPEG", quality=JPEG_QUALITY, dpi=(dpi, dpi))
            else:
                grey.save(buf, format="PNG", compress_level=6, dpi=(dpi, dpi))
    return buf.getvalue()


def chart_svg(panels: Sequence[Panel], window: Window, **layout: Unpack[Layout]) -> str:
    """The panels as an SVG document (text as text, reproducible bytes)."""
    data = _render(panels, window, "svg", 72, **layout).decode("utf-8")
    # The XML prologue and matplotlib's RDF block are no use inside a page.
    start = data.find("<svg")
    svg = data[start:] if start >= 0 else data
    meta_start, meta_end = svg.find("<metadata>"), svg.find("</metadata>")
    if 0 <= meta_start < meta_end:
        svg = svg[:meta_start] + svg[meta_end + len("</metadata>") :]
    return svg


def chart_png(
    panels: Sequence[Panel], window: Window, *, dpi: int = 300, **layout: Unpack[Layout]
) -> bytes:
    """The same chart as an 8-bit grey PNG at print resolution (300 dpi by default)."""
    return _render(panels, window, "png", dpi, **layout)


def chart_jpeg(
    panels: Sequence[Panel], window: Window, *, dpi: int = PRINT_DPI, **layout: Unpack[Layout]
) -> bytes:
    """The same chart as an 8-bit grey JPEG for the PDF: drawn at the size it is printed
    (7.2 inches, the report's text width) and ``PRINT_DPI``, and written into the PDF as
    these very bytes (WeasyPrint decodes and encodes a PNG again, a JPEG it copies)."""
    return _render(panels, window, "jpeg", dpi, **layout)


def data_uri(chart: str | bytes) -> str:
    """An ``<img src>`` for a chart: SVG text, PNG or JPEG bytes, embedded (no file, no
    fetch)."""
    if isinstance(chart, str):
        return "data:image/svg+xml;base64," + base64.b64encode(chart.encode("utf-8")).decode()
    kind = "jpeg" if chart.startswith(JPEG_MAGIC) else "png"
    return f"data:image/{kind};base64," + base64.b64encode(chart).decode()
