"""The alert choices page (mounted at /alerts/ by config/urls.py)."""

from django.urls import path

from . import views

app_name = "alerts"

urlpatterns = [path("", views.alert_settings, name="settings")]
