"""API routes of the reports (mounted under /api/v1/ by config/api_urls.py)."""

from django.urls import path, re_path

from reports.months import MONTH_PATTERN

from . import views

urlpatterns = [
    path("sites/<int:site_id>/reports/", views.SiteReportList.as_view(), name="site-reports"),
    re_path(
        rf"^sites/(?P<site_id>\d+)/reports/(?P<month>{MONTH_PATTERN})\.pdf$",
        views.SiteReportPdf.as_view(),
        name="site-report-pdf",
    ),
]
