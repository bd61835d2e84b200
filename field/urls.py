"""The technician's installable app (mounted at /field/ by config/urls.py)."""

from django.urls import path

from . import views

app_name = "field"

urlpatterns = [
    path("", views.shell, name="shell"),
    path("manifest.webmanifest", views.manifest, name="manifest"),
    path("sw.js", views.service_worker, name="service-worker"),
]
