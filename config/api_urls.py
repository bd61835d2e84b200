"""One router for API version 1."""

from rest_framework.routers import DefaultRouter

router = DefaultRouter()

urlpatterns = router.urls
