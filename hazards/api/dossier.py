"""REST endpoints of dossiers: list, detail, PDF download, request, retry, verify."""

from __future__ import annotations

from django.conf import settings
from django.http import HttpResponse
from django.shortcuts import get_object_or_404, render
from django.urls import path
from drf_spectacular.utils import extend_schema
from rest_framework import permissions, serializers, status, viewsets
from rest_framework.decorators import action
from rest_framework.generics import GenericAPIView
from rest_framework.response import Response
from rest_framework.routers import SimpleRouter
from rest_framework.views import APIView

from hazards.api.errors import ProblemError
from hazards.api.idempotency import IdempotentPostMixin
from hazards.api.pagination import StrictLimitOffsetPagination
from hazards.api.parsers import LimitedFormParser, LimitedMultiPartParser
from hazards.dossier.models import Dossier, DossierStatus
from hazards.dossier.seal import verify_pdf
from hazards.dossier.services import (
    NOT_RETRYABLE,
    ReissueLimited,
    dossier_request,
    dossier_retry,
)
from hazards.models import Process
from hazards.review.access import visible


class DossierSerializer(serializers.ModelSerializer):
    revision = serializers.SerializerMethodField()
    pdf_url = serializers.SerializerMethodField()

    class Meta:
        model = Dossier
        fields = ["id", "process", "revision", "version", "status", "content_sha256",
                  "context_sha256", "sha256", "size_bytes", "created_at", "started_at",
                  "finished_at", "attempts", "error", "reason", "pdf_url"]
        read_only_fields = fields

    def get_revision(self, obj) -> dict | None:
        return obj.content.get("context", {}).get("revision")

    def get_pdf_url(self, obj) -> str | None:
        if obj.status != DossierStatus.DONE:
            return None
        return f"/api/v1/dossiers/{obj.pk}/pdf/"


class DossierRequestSerializer(serializers.Serializer):
    reissue = serializers.BooleanField(default=False)
    reason = serializers.CharField(max_length=200, required=False, allow_blank=True, default="")


class VerifyUploadSerializer(serializers.Serializer):
    file = serializers.FileField()


class VerifyResultSerializer(serializers.Serializer):
    """What `hazards.dossier.seal.Verification` reports; `valid` only when every check holds."""

    valid = serializers.BooleanField()
    is_dossier = serializers.BooleanField()
    seal_valid = serializers.BooleanField()
    attachments_match_seal = serializers.BooleanField()
    file_unaltered = serializers.BooleanField()
    data_match_database = serializers.BooleanField()
    revision_current = serializers.BooleanField(allow_null=True)
    dossier_id = serializers.IntegerField(allow_null=True)
    process_id = serializers.IntegerField(allow_null=True)
    process = serializers.CharField(allow_blank=True)
    version = serializers.IntegerField(allow_null=True)
    revision = serializers.CharField(allow_blank=True)
    status = serializers.CharField(allow_blank=True)
    sha256 = serializers.CharField(allow_blank=True)
    problems = serializers.ListField(child=serializers.CharField())


def _visible_dossiers(user):
    processes = visible(user, Process.objects.all())
    return Dossier.objects.filter(process__in=processes).defer("pdf", "content")


class DossierViewSet(IdempotentPostMixin, viewsets.ReadOnlyModelViewSet):
    serializer_class = DossierSerializer
    permission_classes = [permissions.IsAuthenticated]
    lookup_value_regex = r"\d+"  # an id that is no number is no route (404), never a 500
    filterset_fields = ["process", "status"]
    ordering_fields = ["created_at", "version", "id"]
    extra_problems = {"pdf": {409: ["conflict"]}, "retry": {409: ["conflict"]}}

    def get_queryset(self):
        return _visible_dossiers(self.request.user).order_by("-created_at", "-id")

    @extend_schema(responses={(200, "application/pdf"): bytes},
                   description="The PDF/A file of a finished dossier (409 while it is queued, "
                               "rendering or failed).")
    @action(detail=True, methods=["get"], filter_backends=[])
    def pdf(self, request, pk=None):
        dossier = get_object_or_404(
            Dossier.objects.filter(pk__in=self.get_queryset().values("pk")), pk=pk
        )
        if dossier.status != DossierStatus.DONE:
            raise ProblemError("conflict", f"The dossier is {dossier.status}; only a done "
                               "dossier has a PDF.", dossier_status=dossier.status)
        response = HttpResponse(bytes(dossier.pdf), content_type="application/pdf")
        response["Content-Disposition"] = f'attachment; filename="{dossier.file_name}"'
        response["ETag"] = f'"{dossier.sha256}"'
        response["Cache-Control"] = "private, max-age=31536000, immutable"
        return response

    @extend_schema(request=None, responses={202: DossierSerializer},
                   description="Queue a failed dossier again (409 for any other status).")
    @action(detail=True, methods=["post"])
    def retry(self, request, pk=None):
        dossier = self.get_object()
        try:
            dossier = dossier_retry(dossier=dossier)
        except ValueError:
            raise ProblemError("conflict", NOT_RETRYABLE) from None
        return Response(DossierSerializer(dossier).data, status=status.HTTP_202_ACCEPTED)


class ProcessDossiersView(IdempotentPostMixin, GenericAPIView):
    """GET: the dossiers of a process; POST: request one of its latest revision.

    A re-issue while one of the same content waits in the queue returns that one (200);
    beyond EXOLEDGER_DOSSIER_REISSUES_PER_DAY dossiers of the process in 24 hours a
    re-issue is refused (429 with Retry-After)."""

    permission_classes = [permissions.IsAuthenticated]
    extra_problems = {"post": {429: ["throttled"]}}
    pagination_class = StrictLimitOffsetPagination
    serializer_class = DossierSerializer
    filter_backends: list = []

    def _process(self, request, pk):
        return get_object_or_404(visible(request.user, Process.objects.all()), pk=pk)

    @extend_schema(responses=DossierSerializer(many=True),
                   description="Newest first, paginated (`?limit=&offset=`).")
    def get(self, request, pk):
        process = self._process(request, pk)
        rows = _visible_dossiers(request.user).filter(process=process).order_by("-version", "-id")
        page = self.paginate_queryset(rows)
        return self.get_paginated_response(DossierSerializer(page, many=True).data)

    @extend_schema(request=DossierRequestSerializer,
                   responses={200: DossierSerializer, 202: DossierSerializer},
                   description="202: a dossier was queued; 200: the latest revision already "
                               "has one (not reissued), which is returned.")
    def post(self, request, pk):
        process = self._process(request, pk)
        body = DossierRequestSerializer(data=request.data)
        body.is_valid(raise_exception=True)
        try:
            dossier, created = dossier_request(
                process=process, requested_by=request.user, reason=body.validated_data["reason"],
                reissue=body.validated_data["reissue"],
                max_reissues=settings.DOSSIER_REISSUES_PER_DAY)
        except ReissueLimited as exc:
            raise ProblemError("throttled", exc.message, headers={
                "Retry-After": str(exc.retry_after_seconds)}) from None
        response = Response(DossierSerializer(dossier).data,
                            status=status.HTTP_202_ACCEPTED if created else status.HTTP_200_OK)
        response["Location"] = f"/api/v1/dossiers/{dossier.pk}/"
        return response


class VerifyDossierView(IdempotentPostMixin, APIView):
    """Upload a PDF: is it an unaltered dossier of this system, and of which revision?"""

    permission_classes = [permissions.IsAuthenticated]
    parser_classes = [LimitedMultiPartParser, LimitedFormParser]

    extra_problems = {"post": {413: ["payload_too_large"]}}

    @extend_schema(request={"multipart/form-data": VerifyUploadSerializer},
                   responses={200: VerifyResultSerializer})
    def post(self, request):
        body = VerifyUploadSerializer(data=request.data)
        body.is_valid(raise_exception=True)
        upload = body.validated_data["file"]
        if upload.size > settings.DATA_UPLOAD_MAX_MEMORY_SIZE:  # EXOLEDGER_MAX_UPLOAD_BYTES
            raise ProblemError("payload_too_large", f"The file is larger than the limit of "
                               f"{settings.DATA_UPLOAD_MAX_MEMORY_SIZE} bytes.")
        result = verify_pdf(upload.read(), dossiers=_visible_dossiers(request.user))
        return Response(result.to_dict())


def status_fragment(request, pk):
    """A small HTML fragment with a dossier's status (for htmx polling on the pages)."""
    if not request.user.is_authenticated:
        return HttpResponse(status=403)
    dossier = get_object_or_404(_visible_dossiers(request.user), pk=pk)
    return render(request, "dossier/status_fragment.html", {"dossier": dossier})


urlpatterns = [
    path("processes/<int:pk>/dossiers/", ProcessDossiersView.as_view(), name="process-dossiers"),
    path("dossiers/verify/", VerifyDossierView.as_view(), name="dossier-verify"),
    path("dossiers/<int:pk>/status.html", status_fragment, name="dossier-status-fragment"),
]

router = SimpleRouter()
router.register("dossiers", DossierViewSet, basename="dossier")
urlpatterns += router.urls
