"""Routes of the API under /api/v1/ (included by hazards.urls): every REST resource."""

from django.urls import include, path
from drf_spectacular.views import SpectacularAPIView, SpectacularSwaggerSplitView
from rest_framework.routers import DefaultRouter

from hazards.api import dossier, measures_api, oversight_urls, review_urls, views, whatif_urls
from hazards.api.token_views import ApiTokenViewSet, ObtainTokenView

router = DefaultRouter()
router.register("sites", views.SiteViewSet, basename="site")
router.register("processes", views.ProcessViewSet, basename="process")
router.register("steps", views.StepViewSet, basename="step")
router.register("calorimetry-runs", views.CalorimetryRunViewSet, basename="calorimetryrun")
router.register("decomposition-tests", views.DecompositionTestViewSet, basename="decompositiontest")
router.register("vessels", views.VesselViewSet, basename="vessel")
router.register("solvents", views.SolventViewSet, basename="solvent")
router.register("tokens", ApiTokenViewSet, basename="apitoken")
router.register("measures", measures_api.MeasureViewSet, basename="measure")
router.register("measure-policies", measures_api.MeasurePolicyViewSet,
                basename="measurepolicy")

urlpatterns = [
    path("", include(review_urls)),
    path("auth/token/", ObtainTokenView.as_view(), name="api-token"),
    path("schema/", SpectacularAPIView.as_view(), name="api-schema"),
    path("docs/", SpectacularSwaggerSplitView.as_view(url_name="api-schema"), name="api-docs"),
    path("problems/", views.ProblemTypesView.as_view(), name="api-problems"),
    path("", include(dossier)),
    path("", include(whatif_urls)),
    path("", include(oversight_urls)),
    path("", include(router.urls)),
]
