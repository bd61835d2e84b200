"""Office pages: the sites' stored reports, each viewable (HTML) and downloadable (PDF).

Same reach as the API and the fleet pages (``MonthlyReport.objects.visible_to``, the rule of
``fleet.reach``): the office sees every site's reports, a manager those of the sites granted
to them; anything else is 404. A report page serves the HTML exactly as stored with the report.
"""

from __future__ import annotations

from csp.constants import UNSAFE_INLINE
from django.contrib import messages
from django.contrib.auth.decorators import login_required
from django.db.models import Count, Max
from django.http import FileResponse, Http404, HttpRequest, HttpResponse
from django.shortcuts import get_object_or_404, redirect, render
from django.utils import timezone
from django.views.decorators.http import require_GET, require_POST
from django_tasks import TaskResultStatus
from django_tasks_db.models import DBTaskResult

from fleet.models import Site
from fleet.reach import roles_of
from jobs.tasks import make_report_now

from .models import MonthlyReport
from .months import Month


def _version(request: HttpRequest) -> int | None:
    raw = request.GET.get("version")
    if not raw:
        return None
    if not raw.isdigit() or int(raw) < 1:
        raise Http404("no such version")
    return int(raw)


def stored_report(request: HttpRequest, site_id: int, month: str) -> MonthlyReport:
    """The stored report of a site-month within the user's reach (the latest version, or
    ``?version=``), its HTML column left out; 404 when there is none. The office pages'
    link on a site's page serves it too."""
    try:
        first_day = Month.parse(month).first_day
    except ValueError as exc:
        raise Http404("no such month") from exc
    reports = (
        MonthlyReport.objects.visible_to(request.user)
        .filter(site_id=site_id, month=first_day)
        .defer("html")
    )
    version = _version(request)
    if version is not None:
        reports = reports.filter(version=version)
    report = reports.order_by("-version").first()
    if report is None:
        raise Http404("no such report")
    return report


@require_GET
@login_required
def report_index(request: HttpRequest) -> HttpResponse:
    """Every site within reach, with how many reports it has and the latest month."""
    sites = (
        MonthlyReport.objects.sites_visible_to(request.user)
        .select_related("customer")
        .annotate(report_count=Count("monthly_reports"), latest_month=Max("monthly_reports__month"))
        .order_by("customer__name", "name")
    )
    return render(request, "reports/index.html", {"sites": sites})


@require_GET
@login_required
def site_reports(request: HttpRequest, site_id: int) -> HttpResponse:
    site = get_object_or_404(
        MonthlyReport.objects.sites_visible_to(request.user).select_related("customer"), pk=site_id
    )
    return _site_page(request, site)


def _site_page(
    request: HttpRequest, site: Site, *, month_error: str = "", status: int = 200
) -> HttpResponse:
    reports = MonthlyReport.objects.filter(site=site).defer("html").order_by("-month", "-version")
    context = {
        "site": site,
        "reports": reports,
        "can_request": roles_of(request.user).office,
        "last_month": Month.of(timezone.localdate()).shift(-1),
        "month_error": month_error,
    }
    return render(request, "reports/site_reports.html", context, status=status)


@require_POST
@login_required
def request_report(request: HttpRequest, site_id: int) -> HttpResponse:
    """The office asks for a site-month's report now: a job makes it in the background
    (a new version; earlier ones stay). Asked again while one waits, nothing more is queued."""
    site = get_object_or_404(
        MonthlyReport.objects.sites_visible_to(request.user).select_related("customer"), pk=site_id
    )
    if not roles_of(request.user).office:
        raise Http404("not within your reach")
    try:
        month = Month.parse(request.POST.get("month", ""))
    except ValueError as exc:
        return _site_page(request, site, month_error=f"month: {exc}", status=400)
    if month.first_day > timezone.localdate():
        return _site_page(request, site, month_error="month: that month has not begun", status=400)
    waiting = DBTaskResult.objects.filter(
        task_path=make_report_now.module_path,
        status__in=[TaskResultStatus.READY, TaskResultStatus.RUNNING],
        args_kwargs={"args": [site.pk, str(month)], "kwargs": {}},
    ).exists()
    if not waiting:
        make_report_now.enqueue(site.pk, str(month))
    messages.success(
        request,
        f"The report for {month.label} is being made; it appears here in a minute or two.",
    )
    return redirect("reports:site", site_id=site.pk)


@require_GET
@login_required
def report_page(request: HttpRequest, site_id: int, month: str) -> HttpResponse:
    return stored_html(stored_report(request, site_id, month))


def stored_html(report: MonthlyReport) -> HttpResponse:
    """A stored report's HTML exactly as stored (read on its own: lists leave it out).

    A report is one self-contained file (also the PDF's source and the e-mail's body) with
    its styles inline, so its page's Content-Security-Policy allows inline styles; scripts
    stay refused."""
    html = MonthlyReport.objects.values_list("html", flat=True).get(pk=report.pk)
    response = HttpResponse(html, content_type="text/html; charset=utf-8")
    # What django-csp's csp_update decorator sets (typed for views taking only a request).
    setattr(response, "_csp_update", {"style-src": [UNSAFE_INLINE]})  # noqa: B010
    return response


@require_GET
@login_required
def report_pdf(request: HttpRequest, site_id: int, month: str) -> FileResponse:
    report = stored_report(request, site_id, month)
    return FileResponse(
        report.pdf.open("rb"),
        as_attachment=True,
        filename=report.filename,
        content_type="application/pdf",
    )
