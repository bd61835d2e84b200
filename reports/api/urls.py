"""API routes of the reports (mounted under /api/v1/ by config/api_urls.py)."""

from django.urls import path

from . import views

urlpatterns = [
    path("sites/<id:site_id>/reports/", views.SiteReportList.as_view(), name="site-reports"),
    path(
        "sites/<id:site_id>/reports/<month:month>.pdf",
        views.SiteReportPdf.as_view(),
        name="site-report-pdf",
    ),
]
