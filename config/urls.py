"""Top-level URLs: office pages, admin, the versioned API and its schema."""

from csp.constants import SELF, UNSAFE_INLINE
from csp.decorators import csp_update
from django.contrib import admin
from django.contrib.auth.views import PasswordResetView
from django.urls import include, path
from drf_spectacular.views import SpectacularAPIView, SpectacularRedocView

from jobs.mail import QueuedPasswordResetForm

#: A path that names nothing: JSON under /api/, the usual page elsewhere.
handler404 = "config.errors.not_found"

urlpatterns = [
    path("admin/", admin.site.urls),
    # The reset e-mail is sent by the background worker, not in the request.
    path(
        "accounts/password_reset/",
        PasswordResetView.as_view(form_class=QueuedPasswordResetForm),
        name="password_reset",
    ),
    path("accounts/", include("django.contrib.auth.urls")),
    path("api/v1/", include("config.api_urls")),
    path("api/schema/", SpectacularAPIView.as_view(), name="schema"),
    # Redoc from drf-spectacular-sidecar's static files (REDOC_DIST), no CDN. The viewer
    # styles itself inline and parses the schema in a worker it starts from a blob: its
    # page's Content-Security-Policy allows those; scripts stay our own files.
    path(
        "api/docs/",
        csp_update({"style-src": [UNSAFE_INLINE], "worker-src": [SELF, "blob:"]})(
            SpectacularRedocView.as_view(url_name="schema", template_name="api_docs.html")
        ),
        name="api-docs",
    ),
    path("reports/", include("reports.urls")),
    path("jobs/", include("jobs.urls")),
    path("alerts/", include("alerts.urls")),
    path("field/", include("field.urls")),
    path("", include("fleet.urls")),
]
