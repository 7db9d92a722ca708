"""Routes: the API (included by hazards.api.urls under /api/v1/) and the page."""

from django.urls import path

from hazards.whatif import api, views

api_urlpatterns = [
    path("steps/<int:id>/what-if/", api.WhatIfView.as_view(), name="step-what-if"),
    path("steps/<int:id>/operating-window/", api.OperatingWindowView.as_view(),
         name="step-operating-window"),
]

urlpatterns = [
    path("steps/<int:pk>/what-if/", views.page, name="whatif-page"),
    path("steps/<int:pk>/what-if/fragment/", views.fragment, name="whatif-fragment"),
    path("steps/<int:pk>/what-if/apply/", views.apply, name="whatif-apply"),
]
