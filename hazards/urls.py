from django.contrib import admin
from django.urls import include, path

from hazards.web import views as web

urlpatterns = [
    path("", web.home, name="home"),
    path("healthz", web.healthz, name="healthz"),
    path("admin/", admin.site.urls),
    path("api/v1/", include("hazards.review.urls")),
    path("api/v1/", include("hazards.api.urls")),
]
