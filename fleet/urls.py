"""The office pages, mounted at the site root."""

from django.urls import path

from . import views

app_name = "fleet"

urlpatterns = [
    path("", views.home, name="home"),
    path("schedule/", views.schedule, name="schedule"),
    path("maintenance/", views.maintenance_due, name="maintenance"),
    path("maintenance/propose/", views.maintenance_propose, name="maintenance-propose"),
    path("visits/new/", views.visit_create, name="visit-create"),
    path("visits/unit-choices/", views.unit_choices, name="unit-choices"),
    path("visits/<int:pk>/", views.visit_detail, name="visit"),
    path("visits/<int:pk>/edit/", views.visit_edit, name="visit-edit"),
    path("visits/<int:pk>/cancel/", views.visit_cancel, name="visit-cancel"),
    path("visits/<int:pk>/review/", views.visit_review, name="visit-review"),
    path("review/", views.review_queue, name="review-queue"),
    path("units/<int:pk>/", views.unit_detail, name="unit"),
    path("flags/<int:pk>/acknowledge/", views.flag_acknowledge, name="flag-acknowledge"),
    path("sites/", views.site_list, name="sites"),
    path("sites/<int:pk>/", views.site_detail, name="site"),
    path("sites/<int:pk>/reports/<str:month>/", views.site_report, name="site-report"),
    path("attention/", views.attention, name="attention"),
]
