"""Making, storing and sending monthly reports.

``generate_monthly_report`` runs the whole pipeline (gather -> charts -> HTML -> PDF) and
stores the result as a new version of the site-month; it never replaces an earlier version.
The slow part (drawing and rendering) runs outside the transaction; only picking the version
number and writing the row happen inside it, with the site row locked where the database
can (PostgreSQL), and the unique (site, month, version) constraint as the last guard.
"""

from __future__ import annotations

import hashlib
import time
from collections.abc import Sequence
from concurrent.futures import ProcessPoolExecutor
from dataclasses import dataclass, field
from datetime import datetime

from django.conf import settings
from django.core.files.base import ContentFile
from django.core.mail import EmailMessage, get_connection
from django.core.mail.backends.base import BaseEmailBackend
from django.db import IntegrityError, transaction
from django.db.models import Max
from django.utils import timezone

from fleet.display import Display, display_for
from fleet.models import Site
from fleet.replica import replica_reads

from . import charts
from .data import SiteMonth
from .figures import UnitFigure, unit_figure, window_of
from .gather import gather_site_month
from .models import MonthlyReport
from .months import Month
from .render import LAYOUT_VERSION, UnitChart, render_html, render_pdf, unit_chart_alt

#: How the report's charts are embedded, chosen with bench/report.py: a grey JPEG at the
#: printed size and ``charts.PRINT_DPI``, which WeasyPrint copies into the PDF as it is. A
#: PNG it decodes and encodes again (the 300-dpi PNGs of layout 2 spent a third of a
#: report's time encoding and re-encoding pixels), and an SVG it draws with its own Python
#: SVG renderer, element by element (slower still). The office pages draw their charts with
#: charts.chart_svg.
DEFAULT_CHART_FORMAT = "jpeg"
#: Processes drawing the charts (1: in the calling process) where the settings name none;
#: they name one per core, up to four. On the two-core development machine two workers
#: took a 50-unit report of 300-dpi PNGs from 12.8 s to 9.6 s (bench/report.py's
#: ``--variants png300-1,png300-2``). A worker's report job draws in its own process.
DEFAULT_CHART_WORKERS = 1


@dataclass
class BuiltReport:
    site_month: SiteMonth
    html: str
    pdf: bytes
    page_count: int
    #: Wall-clock seconds per stage: gather, charts, html, pdf.
    timings: dict[str, float] = field(default_factory=dict)
    #: CPU seconds of this process per stage (chart workers not included).
    cpu: dict[str, float] = field(default_factory=dict)


def _draw(job: tuple[UnitFigure, charts.Window, str, int]) -> tuple[int, str | bytes]:
    figure, window, fmt, dpi = job
    if fmt == "jpeg":
        return figure.unit_id, charts.chart_jpeg(figure.panels, window, dpi=dpi)
    if fmt == "png":
        return figure.unit_id, charts.chart_png(figure.panels, window, dpi=dpi)
    return figure.unit_id, charts.chart_svg(figure.panels, window)


def draw_unit_charts(
    figures: Sequence[UnitFigure],
    window: charts.Window,
    *,
    workers: int = 1,
    fmt: str = "svg",
    dpi: int = charts.PRINT_DPI,
) -> dict[int, str | bytes]:
    """Each unit's chart image, drawn in ``workers`` processes (1: here)."""
    jobs = [(f, window, fmt, dpi) for f in figures if f.panels]
    if workers <= 1 or len(jobs) < 2 * workers:
        return dict(map(_draw, jobs))
    with ProcessPoolExecutor(max_workers=workers) as pool:
        return dict(pool.map(_draw, jobs, chunksize=max(1, len(jobs) // (workers * 4))))


def build_report(
    site_id: int,
    month: Month,
    *,
    now: datetime,
    display: Display,
    workers: int | None = None,
    chart_format: str = DEFAULT_CHART_FORMAT,
    chart_dpi: int = charts.PRINT_DPI,
    version: int | None = None,
) -> BuiltReport:
    """Gather, draw, lay out and print one site-month (nothing is stored)."""
    configured: int = getattr(settings, "RIMEWATCH_REPORT_CHART_WORKERS", DEFAULT_CHART_WORKERS)
    chart_workers = workers or configured
    marks = [(time.perf_counter(), time.process_time())]
    with replica_reads():  # report reads: a replica a moment behind the primary will do
        sm = gather_site_month(site_id, month, now=now)
    marks.append((time.perf_counter(), time.process_time()))
    figures = [unit_figure(u, display) for u in sm.units]
    images = draw_unit_charts(
        figures, window_of(sm), workers=chart_workers, fmt=chart_format, dpi=chart_dpi
    )
    unit_charts = {
        f.unit_id: UnitChart(
            charts.data_uri(images[f.unit_id]) if f.unit_id in images else "",
            unit_chart_alt(f, u.unit.tag),
            f.notes,
        )
        for f, u in zip(figures, sm.units, strict=True)
    }
    marks.append((time.perf_counter(), time.process_time()))
    html = render_html(sm, unit_charts, display, generated_at=now, version=version)
    marks.append((time.perf_counter(), time.process_time()))
    pdf, pages = render_pdf(html)
    marks.append((time.perf_counter(), time.process_time()))
    stages = ("gather", "charts", "html", "pdf")
    timings = {name: marks[i + 1][0] - marks[i][0] for i, name in enumerate(stages)}
    cpu = {name: marks[i + 1][1] - marks[i][1] for i, name in enumerate(stages)}
    return BuiltReport(sm, html, pdf, pages, timings, cpu)


def _next_version(site_id: int, month: Month) -> int:
    latest = MonthlyReport.objects.filter(site_id=site_id, month=month.first_day).aggregate(
        v=Max("version")
    )["v"]
    return (latest or 0) + 1


def generate_monthly_report(
    site: Site,
    month: Month,
    now: datetime | None = None,
    *,
    display: Display | None = None,
    workers: int | None = None,
) -> MonthlyReport:
    """Make the site-month's report and store it as its next version.

    The version printed on the report is the one it is stored under: it is reserved before
    rendering, and if another process takes it meanwhile the report is rendered again under
    the next number (a stored version is never overwritten).
    """
    now = now or timezone.now()
    display = display or display_for()
    for _attempt in range(3):
        version = _next_version(site.pk, month)
        built = build_report(
            site.pk, month, now=now, display=display, workers=workers, version=version
        )
        try:
            return _store(site, month, built, now=now, display=display, version=version)
        except IntegrityError:
            continue
    raise RuntimeError(f"could not store a new version of {site} {month}: too many writers")


@transaction.atomic
def _store(
    site: Site,
    month: Month,
    built: BuiltReport,
    *,
    now: datetime,
    display: Display,
    version: int,
) -> MonthlyReport:
    # Serialises writers of the same site on PostgreSQL (SQLite serialises all writes anyway).
    list(Site.objects.select_for_update().filter(pk=site.pk).values_list("pk", flat=True))
    if _next_version(site.pk, month) != version:
        raise IntegrityError("version taken while rendering")
    report = MonthlyReport(
        site=site,
        month=month.first_day,
        version=version,
        generated_at=now,
        algorithm_version=built.site_month.algorithm_version[:100],
        layout_version=LAYOUT_VERSION,
        display_units=display.system,
        checksum_sha256=hashlib.sha256(built.pdf).hexdigest(),
        html=built.html,
        page_count=built.page_count,
        unit_count=len(built.site_month.units),
    )
    report.pdf.save("report.pdf", ContentFile(built.pdf), save=False)
    try:
        report.save()
    except IntegrityError:
        # Another writer took this version first: leave no orphan file behind.
        report.pdf.delete(save=False)
        raise
    return report


def latest_report(site_id: int, month: Month) -> MonthlyReport | None:
    return (
        MonthlyReport.objects.filter(site_id=site_id, month=month.first_day)
        .order_by("-version")
        .first()
    )


def email_report(report: MonthlyReport, *, connection: BaseEmailBackend | None = None) -> int:
    """Send the PDF to each of the site's managers (one message each); returns how many."""
    recipients = list(
        report.site.managers.filter(is_active=True)
        .exclude(email="")
        .order_by("email")
        .values_list("email", flat=True)
    )
    if not recipients:
        return 0
    with report.pdf.open("rb") as fh:
        pdf = fh.read()
    month = Month.of(report.month)
    subject = f"{report.site.name}: refrigeration health report for {month.label}"
    body = (
        f"Attached is the monthly health report for {report.site.name} "
        f"({report.site.customer.name}) for {month.label}: version {report.version}, "
        f"generated {timezone.localtime(report.generated_at):%d %b %Y %H:%M}, "
        f"{report.page_count} pages.\n\n"
        "It shows each unit's condition this month, the trend over the last twelve months, "
        "open flags, refrigerant added and leak rates, and what to do next. Any work it "
        "suggests is for qualified, certified technicians following local codes.\n\n"
        f"SHA-256 of the attached file: {report.checksum_sha256}\n"
    )
    messages = []
    for address in recipients:
        message = EmailMessage(subject, body, to=[address])
        message.attach(report.filename, pdf, "application/pdf")
        messages.append(message)
    backend: BaseEmailBackend = connection or get_connection()
    return backend.send_messages(messages) or 0
