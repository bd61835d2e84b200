"""Office pages for the stored reports (mounted at /reports/ by config/urls.py)."""

from django.urls import path

from . import views

app_name = "reports"

urlpatterns = [
    path("", views.report_index, name="index"),
    path("sites/<id:site_id>/", views.site_reports, name="site"),
    path("sites/<id:site_id>/make/", views.request_report, name="request"),
    path(
        "sites/<id:site_id>/<month:month>/",
        views.report_page,
        name="report-page",
    ),
    path(
        "sites/<id:site_id>/<month:month>.pdf",
        views.report_pdf,
        name="report-pdf",
    ),
]
