"""The technician's app: one shell page, its manifest and its service worker.

The app signs in with an API token and talks only to /api/v1/, as a native app would, so
these views need no sign-in and read no records. The service worker is served from /field/
so that its scope is the app's path; the list of files it keeps for offline use is written
into it here, with the static files' (hashed, in production) addresses.
"""

from __future__ import annotations

import hashlib
import json

from django.conf import settings
from django.http import HttpRequest, HttpResponse, JsonResponse
from django.shortcuts import render
from django.templatetags.static import static
from django.urls import reverse
from django.views.decorators.http import require_GET

#: The app's modules. The shell loads app.js by its static address (hashed in production);
#: app.js imports the others by their plain relative names, which WhiteNoise also serves.
MODULES = (
    "app.js",
    "api.js",
    "data.js",
    "dom.js",
    "live.js",
    "live_panel.js",
    "outbox.js",
    "part_form.js",
    "screens.js",
    "store.js",
    "unit_screen.js",
    "units.js",
    "visit_screens.js",
)
#: Other files the shell uses.
ASSETS = ("field.css", "icon.svg", "icon-192.png", "icon-512.png")

THEME = "#0b3954"
BACKGROUND = "#f4f7f9"


def _offline_files() -> list[str]:
    """Every address the service worker keeps, so the app opens with no signal."""
    plain = [f"{settings.STATIC_URL}field/{name}" for name in MODULES]
    hashed = [static(f"field/{name}") for name in (*ASSETS, "app.js")]
    shell = [reverse("field:shell"), reverse("field:manifest")]
    return sorted({*shell, *hashed, *plain})


@require_GET
def shell(request: HttpRequest) -> HttpResponse:
    """The page every screen of the app is drawn in (by app.js)."""
    return render(request, "field/shell.html", {"theme": THEME})


@require_GET
def manifest(request: HttpRequest) -> JsonResponse:
    """What a phone needs to install the app: its name, icons, colours and where it starts."""
    start = reverse("field:shell")
    body = {
        "name": "Rimewatch Field",
        "short_name": "Rimewatch",
        "description": "The day's visits, live targets while gauging up, readings kept offline.",
        "id": start,
        "start_url": start,
        "scope": start,
        "display": "standalone",
        "orientation": "any",
        "theme_color": THEME,
        "background_color": BACKGROUND,
        "icons": [
            {"src": static("field/icon.svg"), "sizes": "any", "type": "image/svg+xml"},
            {"src": static("field/icon-192.png"), "sizes": "192x192", "type": "image/png"},
            {
                "src": static("field/icon-512.png"),
                "sizes": "512x512",
                "type": "image/png",
                "purpose": "any maskable",
            },
        ],
    }
    return JsonResponse(body, content_type="application/manifest+json")


@require_GET
def service_worker(request: HttpRequest) -> HttpResponse:
    """The service worker, with the files to keep and a version that changes with them (a
    new deployment's hashed names make a new version, so phones drop the old files)."""
    files = _offline_files()
    version = hashlib.sha256(json.dumps(files).encode()).hexdigest()[:12]
    response = render(
        request,
        "field/sw.js",
        {"files": json.dumps(files), "version": json.dumps(version)},
        content_type="text/javascript; charset=utf-8",
    )
    response["Service-Worker-Allowed"] = reverse("field:shell")
    # A phone checks for a new worker on each visit; it must not keep an old one cached.
    response["Cache-Control"] = "no-cache"
    return response
