"""Top-level URLs: office pages, admin, the versioned API and its schema."""

from django.contrib import admin
from django.urls import include, path
from drf_spectacular.views import SpectacularAPIView, SpectacularRedocView

#: A path that names nothing: JSON under /api/, the usual page elsewhere.
handler404 = "config.errors.not_found"

urlpatterns = [
    path("admin/", admin.site.urls),
    path("accounts/", include("django.contrib.auth.urls")),
    path("api/v1/", include("config.api_urls")),
    path("api/schema/", SpectacularAPIView.as_view(), name="schema"),
    # Redoc from drf-spectacular-sidecar's static files (REDOC_DIST), no CDN.
    path(
        "api/docs/",
        SpectacularRedocView.as_view(url_name="schema", template_name="api_docs.html"),
        name="api-docs",
    ),
    path("reports/", include("reports.urls")),
    path("", include("fleet.urls")),
]
