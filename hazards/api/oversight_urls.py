"""API routes of oversight under /api/v1/ (included by hazards.api.urls)."""

from django.urls import include, path
from rest_framework.routers import SimpleRouter

from hazards.api import oversight as api

router = SimpleRouter()
router.register("changes", api.ChangeRecordViewSet, basename="changerecord")
router.register("notifications", api.NotificationViewSet, basename="notification")

urlpatterns = [
    path("revalidation/", api.RevalidationView.as_view(), name="revalidation"),
    path("notification-preferences/", api.PreferencesView.as_view(),
         name="notification-preferences"),
    path("", include(router.urls)),
]
