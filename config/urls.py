"""Top-level URLs: office pages, admin, the versioned API and its schema."""

from django.contrib import admin
from django.urls import include, path
from drf_spectacular.views import SpectacularAPIView, SpectacularRedocView

urlpatterns = [
    path("admin/", admin.site.urls),
    path("accounts/", include("django.contrib.auth.urls")),
    path("api/v1/", include("config.api_urls")),
    path("api/schema/", SpectacularAPIView.as_view(), name="schema"),
    path("api/docs/", SpectacularRedocView.as_view(url_name="schema"), name="api-docs"),
    path("reports/", include("reports.urls")),
    path("jobs/", include("jobs.urls")),
    path("alerts/", include("alerts.urls")),
    path("", include("fleet.urls")),
]
