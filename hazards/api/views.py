"""Thin viewsets: validate with the serializer, write through services, one output shape.

Every record answers GET with an `ETag`; PUT, PATCH and DELETE need `If-Match`
(`hazards.api.concurrency`); POST honours `Idempotency-Key` (`hazards.api.idempotency`);
every list filters (`hazards.api.filters`), orders (`?ordering=`) and paginates
(`?limit=&offset=`); errors are problem details (`hazards.api.errors`).
"""

from __future__ import annotations

from django.db.models import Prefetch
from drf_spectacular.utils import extend_schema
from rest_framework import permissions, viewsets
from rest_framework.decorators import action
from rest_framework.permissions import AllowAny
from rest_framework.response import Response
from rest_framework.views import APIView

from hazards.api import curves_api, exchange_api, filters, series_api
from hazards.api import serializers as s
from hazards.api.concurrency import ETagMixin, stale
from hazards.api.errors import PROBLEM_TYPES
from hazards.api.idempotency import IdempotentPostMixin
from hazards.api.pagination import SingleQueryValuesMixin, StrictLimitOffsetPagination
from hazards.api.parsers import LimitedJSONParser, LimitedMultiPartParser
from hazards.api.permissions import ProcessRolePermission
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
from hazards.review.access import visible
from hazards.services.records import StaleRecord, record_delete


class ModelPermissions(permissions.DjangoModelPermissions):
    """Reading needs a login; writing needs the model's add/change/delete permission."""

    allows_every_read = True

    perms_map = {
        **permissions.DjangoModelPermissions.perms_map,
        "GET": [],
        "HEAD": [],
        "OPTIONS": [],
    }

    def describe(self, view, method: str) -> str:
        model = view.queryset.model if view.queryset is not None else None
        if model is None:
            return ""
        perms = self.get_required_permissions(method, model)
        return "the permission " + ", ".join(f"`{p}`" for p in perms) if perms else ""


class RecordViewSet(SingleQueryValuesMixin, IdempotentPostMixin, ETagMixin,
                    viewsets.ModelViewSet):
    permission_classes = [permissions.IsAuthenticated, ModelPermissions, ProcessRolePermission]
    parser_classes = [LimitedJSONParser]
    pagination_class = StrictLimitOffsetPagination
    # Any id segment reaches the view, so a malformed id is a 404 problem, not an HTML page.
    lookup_value_regex = "[^/]+"

    def get_queryset(self):
        return visible(self.request.user, self.base_queryset())

    def base_queryset(self):
        return self.queryset.all()

    def perform_destroy(self, instance):
        try:
            record_delete(instance=instance, expected_version=getattr(self, "expected_version",
                                                                      None))
        except StaleRecord as exc:
            raise stale(instance, exc) from None


class SiteViewSet(RecordViewSet):
    """Sites (works) and how often their approvals must be revalidated."""

    queryset = Site.objects.all()
    serializer_class = s.SiteSerializer
    filterset_class = filters.SiteFilter
    ordering_fields = ["code", "name", "id"]


class ProcessViewSet(RecordViewSet):
    """Processes; `export/` and `import/` exchange a whole process as one JSON document."""

    queryset = Process.objects.select_related("site")
    serializer_class = s.ProcessSerializer
    filterset_class = filters.ProcessFilter
    ordering_fields = ["name", "id"]
    idempotent_inside = ("import_document",)
    extra_problems = {"import_document": {409: ["conflict"]}}

    @extend_schema(
        responses={200: exchange_api.ExchangeDocumentSerializer},
        description=exchange_api.EXPORT_DOC,
    )
    @action(detail=True, methods=["get"], url_path="export", filter_backends=[],
            pagination_class=None)
    def export(self, request, pk=None):
        return exchange_api.export_view(self, request)

    @extend_schema(
        request=exchange_api.ExchangeDocumentSerializer,
        responses={201: exchange_api.ImportResultSerializer},
        description=exchange_api.IMPORT_DOC,
    )
    @action(detail=False, methods=["post"], url_path="import", filter_backends=[],
            pagination_class=None, permission_classes=[permissions.IsAuthenticated,
                                                       exchange_api.ImportPermission])
    def import_document(self, request):
        return exchange_api.import_view(self, request)


class SolventViewSet(RecordViewSet):
    """Solvents and where their vapour pressure comes from."""

    queryset = Solvent.objects.all()
    serializer_class = s.SolventSerializer
    filterset_class = filters.SolventFilter
    ordering_fields = ["name", "cas_number", "id"]


class VesselViewSet(RecordViewSet):
    """Plant vessels: volume, cooling and pressure ratings."""

    queryset = Vessel.objects.all()
    serializer_class = s.VesselSerializer
    filterset_class = filters.VesselFilter
    ordering_fields = ["tag", "name", "id"]


class StepViewSet(RecordViewSet):
    """Reaction steps with their current indicators (recomputed on every input change)."""

    queryset = ReactionStep.objects.all()
    serializer_class = s.StepSerializer
    filterset_class = filters.StepFilter
    ordering_fields = ["process", "sequence", "name", "id", "updated_at"]

    def base_queryset(self):
        return ReactionStep.objects.prefetch_related(
            Prefetch(
                "snapshots",
                queryset=IndicatorSnapshot.objects.filter(is_current=True),
                to_attr="current_snapshots",
            )
        )

    @extend_schema(responses=s.IndicatorSnapshotSerializer(many=True), filters=False)
    @action(detail=True, methods=["get"], url_path="indicator-history", filter_backends=[])
    def indicator_history(self, request, pk=None):
        """Every indicator snapshot of the step, newest first."""
        step = self.get_object()
        snapshots = IndicatorSnapshot.objects.filter(step=step).order_by("-computed_at", "-id")
        page = self.paginate_queryset(snapshots)
        data = s.IndicatorSnapshotSerializer(page if page is not None else snapshots, many=True).data
        return self.get_paginated_response(data) if page is not None else Response(data)


class CalorimetryRunViewSet(RecordViewSet):
    """Reaction calorimetry runs; `series/` takes the calorimeter's time series (CSV)."""

    queryset = CalorimetryRun.objects.all()
    serializer_class = s.CalorimetryRunSerializer
    filterset_class = filters.CalorimetryRunFilter
    ordering_fields = ["run_date", "id"]
    idempotent_inside = ("series",)
    extra_problems = {"series:post": {400: ["series_rejected"], 409: ["conflict"],
                                      412: ["precondition_failed"]}}

    @extend_schema(methods=["GET"], responses={200: series_api.SeriesSerializer},
                   description=series_api.GET_DOC, filters=False)
    @extend_schema(methods=["POST"], request={"multipart/form-data": series_api.UploadSerializer},
                   responses={201: series_api.SeriesSerializer}, description=series_api.POST_DOC,
                   filters=False)
    @action(detail=True, methods=["get", "post"], url_path="series", filter_backends=[],
            pagination_class=None, parser_classes=[LimitedMultiPartParser],
            permission_classes=[permissions.IsAuthenticated,
                                                       series_api.SeriesPermission,
                                                       ProcessRolePermission])
    def series(self, request, pk=None):
        return series_api.series_view(self, request)


class DecompositionTestViewSet(RecordViewSet):
    """Decomposition screening and adiabatic tests."""

    queryset = DecompositionTest.objects.all()
    serializer_class = s.DecompositionTestSerializer
    filterset_class = filters.DecompositionTestFilter
    ordering_fields = ["test_date", "id"]
    idempotent_actions = ("create", "curves")
    idempotent_inside = ("curves",)
    extra_problems = {"curves:post": {400: ["series_rejected"]}}

    @extend_schema(methods=["GET"], responses={200: curves_api.DecompositionCurveSerializer(many=True)},
                   description=curves_api.GET_DOC, filters=False)
    @extend_schema(methods=["POST"],
                   request={"multipart/form-data": curves_api.DecompositionCurveUploadSerializer},
                   responses={201: curves_api.DecompositionCurveSerializer},
                   description=curves_api.POST_DOC, filters=False)
    @action(detail=True, methods=["get", "post"], url_path="curves", filter_backends=[],
            pagination_class=None, parser_classes=[LimitedMultiPartParser],
            permission_classes=[permissions.IsAuthenticated, curves_api.CurvePermission,
                                ProcessRolePermission])
    def curves(self, request, pk=None):
        return curves_api.curves_view(self, request)


class ProblemTypesView(APIView):
    """The problem types (`code`) that errors of this API can carry."""

    permission_classes = [AllowAny]
    authentication_classes: list = []

    @extend_schema(responses={200: s.ProblemTypeSerializer(many=True)})
    def get(self, request):
        return Response([
            {"code": code, "status": status, "title": title, "description": description}
            for code, (status, title, description) in PROBLEM_TYPES.items()
        ])
