"""Pages of the browser application."""

from __future__ import annotations

from django.contrib.auth.decorators import login_required
from django.db import connection
from django.db.models import Prefetch
from django.http import JsonResponse
from django.shortcuts import render

from hazards.access import visible
from hazards.models import IndicatorSnapshot, Process, ReactionStep


@login_required
def home(request):
    processes = Process.objects.select_related("site").prefetch_related(
        Prefetch(
            "steps",
            queryset=ReactionStep.objects.order_by("sequence").prefetch_related(
                Prefetch(
                    "snapshots",
                    queryset=IndicatorSnapshot.objects.filter(is_current=True),
                    to_attr="current_snapshots",
                )
            ),
        )
    )
    processes = visible(request.user, processes)
    return render(request, "hazards/home.html", {"processes": processes})


def healthz(request):
    with connection.cursor() as cursor:
        cursor.execute("SELECT 1")
    return JsonResponse({"status": "ok"})
