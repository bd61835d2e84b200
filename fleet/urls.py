"""The office pages, mounted at the site root."""

from django.urls import path

from .views import (
    attention,
    base,
    equipment,
    flags,
    maintenance,
    people,
    review,
    schedule,
    sites,
    units,
    visit_page,
    visits,
)

app_name = "fleet"

urlpatterns = [
    path("", base.home, name="home"),
    path("schedule/", schedule.schedule, name="schedule"),
    path("maintenance/", maintenance.maintenance_due, name="maintenance"),
    path("maintenance/propose/", maintenance.maintenance_propose, name="maintenance-propose"),
    path("visits/new/", visits.visit_create, name="visit-create"),
    path("visits/unit-choices/", visits.unit_choices, name="unit-choices"),
    path("visits/<id:pk>/", visit_page.visit_detail, name="visit"),
    path("readings/<id:pk>/", visit_page.reading_detail, name="reading"),
    path("visits/<id:pk>/edit/", visits.visit_edit, name="visit-edit"),
    path("visits/<id:pk>/cancel/", visits.visit_cancel, name="visit-cancel"),
    path("visits/<id:pk>/review/", review.visit_review, name="visit-review"),
    path("review/", review.review_queue, name="review-queue"),
    path("units/<id:pk>/", units.unit_detail, name="unit"),
    path("units/<id:pk>/documents/", units.document_add, name="document-add"),
    path("documents/<id:pk>/", units.document_file, name="document"),
    path("flags/<id:pk>/acknowledge/", flags.flag_acknowledge, name="flag-acknowledge"),
    path("sites/", sites.site_list, name="sites"),
    path("sites/<id:pk>/", sites.site_detail, name="site"),
    path("sites/<id:pk>/reports/<str:month>/", sites.site_report, name="site-report"),
    path("sites/<id:pk>/tags.pdf", equipment.site_tags, name="site-tags"),
    path("search/", equipment.plate_search, name="plate-search"),
    path("attention/", attention.attention, name="attention"),
    path("attention/acknowledge/", attention.attention_acknowledge, name="attention-acknowledge"),
    path("people/", people.people_list, name="people"),
    path("people/new/", people.person_create, name="person-create"),
    path("people/<id:pk>/", people.person_edit, name="person"),
    path("people/<id:pk>/revoke-token/", people.person_revoke_token, name="person-revoke-token"),
]
