"""API routes of the what-if evaluation under /api/v1/ (included by hazards.api.urls)."""

from django.urls import path

from hazards.api import whatif as api

urlpatterns = [
    path("steps/<int:id>/what-if/", api.WhatIfView.as_view(), name="step-what-if"),
    path("steps/<int:id>/operating-window/", api.OperatingWindowView.as_view(),
         name="step-operating-window"),
]
