"""Office pages for the stored reports (mounted at /reports/ by config/urls.py)."""

from django.urls import path, re_path

from . import views
from .months import MONTH_PATTERN

app_name = "reports"

urlpatterns = [
    path("", views.report_index, name="index"),
    path("sites/<int:site_id>/", views.site_reports, name="site"),
    path("sites/<int:site_id>/make/", views.request_report, name="request"),
    re_path(
        rf"^sites/(?P<site_id>\d+)/(?P<month>{MONTH_PATTERN})/$",
        views.report_page,
        name="report-page",
    ),
    re_path(
        rf"^sites/(?P<site_id>\d+)/(?P<month>{MONTH_PATTERN})\.pdf$",
        views.report_pdf,
        name="report-pdf",
    ),
]
