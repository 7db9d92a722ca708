"""Routes of oversight: the API under /api/v1/ (api_urlpatterns) and the pages."""

from django.urls import include, path
from rest_framework.routers import SimpleRouter

from hazards.oversight import api, views

router = SimpleRouter()
router.register("changes", api.ChangeRecordViewSet, basename="changerecord")
router.register("notifications", api.NotificationViewSet, basename="notification")

api_urlpatterns = [
    path("revalidation/", api.RevalidationView.as_view(), name="revalidation"),
    path("notification-preferences/", api.PreferencesView.as_view(),
         name="notification-preferences"),
    path("", include(router.urls)),
]

urlpatterns = [
    path("revalidation/", views.revalidation_page, name="web-revalidation"),
    path("changes/", views.change_list, name="web-changes"),
    path("changes/<int:pk>/", views.change_detail, name="web-change"),
    path("notifications/", views.inbox, name="web-inbox"),
    path("notifications/preferences/", views.preferences_page, name="web-preferences"),
]
