"""Thin viewsets: validate with the serializer, write through services, one output shape."""

from __future__ import annotations

from django.db.models import Prefetch
from drf_spectacular.utils import extend_schema
from rest_framework import permissions, viewsets
from rest_framework.decorators import action
from rest_framework.response import Response

from hazards.access import visible
from hazards.api import serializers as s
from hazards.models import (
    CalorimetryRun,
    DecompositionTest,
    IndicatorSnapshot,
    Process,
    ReactionStep,
    Site,
    Solvent,
    Vessel,
)
from hazards.services.records import record_delete


class ModelPermissions(permissions.DjangoModelPermissions):
    """Reading needs a login; writing needs the model's add/change/delete permission."""

    perms_map = {
        **permissions.DjangoModelPermissions.perms_map,
        "GET": [],
        "HEAD": [],
        "OPTIONS": [],
    }


class RecordViewSet(viewsets.ModelViewSet):
    permission_classes = [permissions.IsAuthenticated, ModelPermissions]

    def get_queryset(self):
        return visible(self.request.user, self.base_queryset())

    def base_queryset(self):
        return self.queryset.all()

    def perform_destroy(self, instance):
        record_delete(instance=instance)


class SiteViewSet(RecordViewSet):
    queryset = Site.objects.all()
    serializer_class = s.SiteSerializer
    ordering_fields = ["code", "name"]


class ProcessViewSet(RecordViewSet):
    queryset = Process.objects.select_related("site")
    serializer_class = s.ProcessSerializer
    filterset_fields = ["site"]
    ordering_fields = ["name", "id"]


class SolventViewSet(RecordViewSet):
    queryset = Solvent.objects.all()
    serializer_class = s.SolventSerializer
    filterset_fields = ["cas_number"]
    ordering_fields = ["name", "id"]


class VesselViewSet(RecordViewSet):
    queryset = Vessel.objects.all()
    serializer_class = s.VesselSerializer
    filterset_fields = ["tag"]
    ordering_fields = ["tag", "name", "id"]


class StepViewSet(RecordViewSet):
    serializer_class = s.StepSerializer
    filterset_fields = {
        "process": ["exact"],
        "needs_review": ["exact"],
        "operation_mode": ["exact"],
        "vessel": ["exact"],
        "solvent": ["exact"],
    }
    ordering_fields = ["process", "sequence", "name", "id"]

    def base_queryset(self):
        qs = ReactionStep.objects.prefetch_related(
            Prefetch(
                "snapshots",
                queryset=IndicatorSnapshot.objects.filter(is_current=True),
                to_attr="current_snapshots",
            )
        )
        cls = self.request.query_params.get("criticality_class")
        if cls:
            qs = qs.filter(snapshots__is_current=True, snapshots__criticality_class=cls)
        return qs

    @extend_schema(responses=s.IndicatorSnapshotSerializer(many=True))
    @action(detail=True, methods=["get"], url_path="indicator-history")
    def indicator_history(self, request, pk=None):
        step = self.get_object()
        snapshots = IndicatorSnapshot.objects.filter(step=step).order_by("-computed_at", "-id")
        page = self.paginate_queryset(snapshots)
        data = s.IndicatorSnapshotSerializer(page if page is not None else snapshots, many=True).data
        return self.get_paginated_response(data) if page is not None else Response(data)


class CalorimetryRunViewSet(RecordViewSet):
    queryset = CalorimetryRun.objects.all()
    serializer_class = s.CalorimetryRunSerializer
    filterset_fields = ["step", "is_basis"]
    ordering_fields = ["run_date", "id"]


class DecompositionTestViewSet(RecordViewSet):
    queryset = DecompositionTest.objects.all()
    serializer_class = s.DecompositionTestSerializer
    filterset_fields = ["step", "method", "is_basis"]
    ordering_fields = ["test_date", "id"]
