"""Routes of the review under /api/v1/ (included by hazards.api.urls)."""

from django.urls import include, path
from rest_framework.routers import SimpleRouter

from hazards.api import review as api

router = SimpleRouter()
router.register("revisions", api.RevisionViewSet, basename="revision")
router.register("signatures", api.SignatureViewSet, basename="signature")
router.register("findings", api.FindingViewSet, basename="finding")
router.register("process-roles", api.ProcessRoleViewSet, basename="processrole")

urlpatterns = [
    path("processes/<int:pk>/history/", api.ProcessHistoryView.as_view(),
         name="process-history"),
    path("processes/<int:pk>/approval/", api.ProcessApprovalView.as_view(),
         name="process-approval"),
    path("processes/<int:pk>/diff/", api.ProcessDiffView.as_view(), name="process-diff"),
    path("history/<str:label>/<int:pk>/", api.RecordHistoryView.as_view(),
         name="record-history"),
    path("", include(router.urls)),
]
