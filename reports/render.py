"""HTML from the Django templates, and the PDF from that same HTML with WeasyPrint.

This is the only module that imports WeasyPrint. The HTML is self-contained: the style sheet
is inlined and the charts are embedded as data URIs, so a stored report renders the same
years later and WeasyPrint needs no fetch at all. Its URL fetcher still guards the door: it
serves ``data:`` URIs and files under our own static folders, and refuses everything else
(no network, no other file on the machine).
"""

from __future__ import annotations

import logging
from dataclasses import dataclass
from datetime import datetime
from pathlib import Path
from urllib.parse import unquote, urlparse

from django.contrib.staticfiles import finders
from django.template.loader import render_to_string

from fleet.display import Display

from .data import SiteMonth
from .figures import UnitFigure
from .notes import method_notes, safety_cautions
from .words import ICE_MACHINE_BASIS

logger = logging.getLogger(__name__)

STYLE_SHEET = "reports/report.css"
#: Changes when the layout of the report changes; stored with each report. 3: charts as
#: 150-dpi grey JPEGs copied into the PDF (2: 300-dpi PNGs).
LAYOUT_VERSION = "3"


class RefusedFetch(ValueError):
    """A resource the report may not load (anything but our static files and data URIs)."""


@dataclass(frozen=True)
class UnitChart:
    """A unit's chart image (a data URI, or "" when nothing could be drawn) and its notes."""

    src: str
    alt: str
    notes: tuple[str, ...]


def style_sheet() -> str:
    path = finders.find(STYLE_SHEET)
    if not path:  # pragma: no cover - the file ships with the app
        raise FileNotFoundError(STYLE_SHEET)
    return Path(path).read_text(encoding="utf-8")


def _static_roots() -> list[Path]:
    roots = []
    for finder in finders.get_finders():
        for _, storage in finder.list([]):
            location = getattr(storage, "location", None)
            if location:
                roots.append(Path(location).resolve())
    return sorted(set(roots))


def url_fetcher(url: str, timeout: int = 10, **kwargs: object) -> dict[str, object]:
    """WeasyPrint's fetcher, limited to data URIs and files inside our static folders."""
    import weasyprint

    # WeasyPrint's fetchers answer a dict of the resource (its bytes or file, its type).
    fetched: dict[str, object]
    parsed = urlparse(url)
    if parsed.scheme == "data":
        fetched = weasyprint.default_url_fetcher(url, timeout=timeout)
        return fetched
    if parsed.scheme == "file":
        path = Path(unquote(parsed.path)).resolve()
        if any(path.is_relative_to(root) for root in _static_roots()) and path.is_file():
            fetched = weasyprint.default_url_fetcher(url, timeout=timeout)
            return fetched
    logger.warning("report rendering refused to fetch %s", url)
    raise RefusedFetch(f"reports load only their own static files, not {url}")


def unit_chart_alt(figure: UnitFigure, tag: str) -> str:
    return f"Trend charts of {tag} over twelve months: " + "; ".join(
        p.alt or p.title for p in figure.panels
    )


def render_html(
    sm: SiteMonth,
    charts: dict[int, UnitChart],
    display: Display,
    *,
    generated_at: datetime,
    version: int | None = None,
) -> str:
    """The whole report as one HTML document (zero queries: it reads plain data only)."""
    context = {
        "sm": sm,
        "site": sm.site,
        "month": sm.month,
        "units": [(u, charts.get(u.unit.id)) for u in sm.units],
        "display": display,
        "generated_at": generated_at.astimezone(sm.as_of.tzinfo),
        "version": version,
        "notes": method_notes(sm),
        "cautions": safety_cautions(sm),
        "ice_machine_basis": ICE_MACHINE_BASIS,
        "css": style_sheet(),
        "page_size": "Letter" if display.system == "us" else "A4",
        "layout_version": LAYOUT_VERSION,
    }
    return render_to_string("reports/monthly_report.html", context)


def render_pdf(html: str) -> tuple[bytes, int]:
    """The PDF of a report's HTML and its page count (page numbers and the running header
    come from the report's CSS)."""
    import weasyprint

    static = _static_roots()
    base_url = static[0].as_uri() + "/" if static else None
    document = weasyprint.HTML(string=html, base_url=base_url, url_fetcher=url_fetcher).render()
    return document.write_pdf(), len(document.pages)
