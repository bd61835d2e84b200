"""The office's background-work page (mounted at /jobs/ by config/urls.py)."""

from django.urls import path

from . import views

app_name = "jobs"

urlpatterns = [path("failed/", views.failed_jobs, name="failed")]
