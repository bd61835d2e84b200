"""API version 1: one router for the resources, plus the few endpoints that are not
collections (saturation lookups, a unit's diagnosis, trends and flags, tokens) and the
reports app's own routes (reports/api/urls.py)."""

from django.urls import path
from rest_framework.routers import DefaultRouter

from diagnostics.api import views as diagnostics_views
from fleet.api import views
from reports.api import urls as report_urls

router = DefaultRouter()
router.register("customers", views.CustomerViewSet, basename="customer")
router.register("sites", views.SiteViewSet, basename="site")
router.register("refrigerants", views.RefrigerantViewSet, basename="refrigerant")
router.register("units", views.UnitViewSet, basename="unit")
router.register("components", views.ComponentViewSet, basename="component")
router.register("visits", views.VisitViewSet, basename="visit")
router.register(
    r"visits/(?P<visit_pk>[0-9]+)/reading-sets", views.ReadingSetViewSet, basename="reading-set"
)
router.register(
    r"visits/(?P<visit_pk>[0-9]+)/refrigerant-events",
    views.RefrigerantEventViewSet,
    basename="refrigerant-event",
)
router.register(
    r"visits/(?P<visit_pk>[0-9]+)/parts-fitted", views.PartFittedViewSet, basename="part-fitted"
)

urlpatterns = [
    path("auth/token/", views.TokenView.as_view(), name="auth-token"),
    path(
        "refrigerants/<str:designation>/saturation/",
        diagnostics_views.SaturationView.as_view(),
        name="refrigerant-saturation",
    ),
    path(
        "refrigerants/<str:designation>/saturation-table/",
        diagnostics_views.SaturationTableView.as_view(),
        name="refrigerant-saturation-table",
    ),
    path(
        "units/<id:unit_pk>/diagnosis/",
        diagnostics_views.UnitDiagnosisView.as_view(),
        name="unit-diagnosis",
    ),
    path(
        "units/<id:unit_pk>/targets/",
        diagnostics_views.UnitTargetsView.as_view(),
        name="unit-targets",
    ),
    path(
        "units/<id:unit_pk>/trends/",
        diagnostics_views.UnitTrendsView.as_view(),
        name="unit-trends",
    ),
    path("units/<id:unit_pk>/flags/", diagnostics_views.UnitFlagsView.as_view(), name="unit-flags"),
    *report_urls.urlpatterns,
    *router.urls,
]
