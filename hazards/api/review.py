"""REST resources of the review: revisions and their transitions, signatures, findings,
roles, and the history and differences people read. Every queryset goes through
`hazards.review.access.visible`; every write goes through one service, which checks the role."""

from __future__ import annotations

from django.apps import apps
from django.db import transaction
from django.shortcuts import get_object_or_404
from drf_spectacular.utils import OpenApiParameter, extend_schema
from rest_framework import mixins, permissions, status, viewsets
from rest_framework.decorators import action
from rest_framework.exceptions import APIException, NotFound, ValidationError
from rest_framework.response import Response
from rest_framework.views import APIView

from hazards.api import review_serializers as s
from hazards.api.concurrency import content_etag, require_if_match
from hazards.api.idempotency import IdempotentPostMixin, idempotent
from hazards.api.pagination import KeyedHistoryPagination
from hazards.api.permissions import change_reason
from hazards.models import Process
from hazards.review import errors as E
from hazards.review import history, selectors
from hazards.review.access import PROCESS_PATHS, REFERENCE_MODELS, visible
from hazards.review.models import Finding, ProcessRevision, ProcessRole, Signature
from hazards.review.services import findings as finding_services
from hazards.review.services import revisions as rev
from hazards.review.services import roles as role_services
from hazards.review.signing import reauthenticate

CAUTION = (" The review records a qualified assessment; the software supports it and does "
           "not replace it. Local codes and company standards prevail.")


class ReviewErrors:
    """Map refused workflow steps onto API errors with the service's message."""

    permission_classes = [permissions.IsAuthenticated]

    def handle_exception(self, exc):
        if isinstance(exc, E.ReviewError):
            mapped = APIException(exc.message)
            mapped.status_code = exc.status
            exc = mapped
        return super().handle_exception(exc)


def _visible_process(user, pk) -> Process:
    return get_object_or_404(visible(user, Process.objects.all()), pk=pk)


class RevisionViewSet(ReviewErrors, IdempotentPostMixin, mixins.ListModelMixin,
                      mixins.RetrieveModelMixin, viewsets.GenericViewSet):
    """Revisions of processes under review. Signing actions take the signer's password."""

    serializer_class = s.RevisionSerializer
    filterset_fields = ["process", "state"]
    _signing = {409: ["conflict"], 429: ["throttled"]}
    session_only_actions = ("submit", "review", "approve", "sign")
    extra_problems = {"create": {404: ["not_found"], 409: ["conflict"]}, "submit": _signing, "review": _signing,
                      "approve": _signing, "sign": _signing, "send_back": {409: ["conflict"]}}
    ordering_fields = ["process", "number", "id"]
    idempotent_inside = ("submit", "review", "approve", "sign")

    def get_queryset(self):
        qs = ProcessRevision.objects.prefetch_related("signatures__signer",
                                                      "transitions__actor").order_by("id")
        return visible(self.request.user, qs)

    def get_serializer_class(self):
        return s.RevisionDetailSerializer if self.action == "retrieve" else s.RevisionSerializer

    def list(self, request, *args, **kwargs):
        pid = request.query_params.get("process")
        if pid and pid.isdigit() and visible(request.user, Process.objects.filter(pk=pid)).exists():
            rev.revisions_reconcile(process=Process(pk=int(pid)))
        return super().list(request, *args, **kwargs)

    def retrieve(self, request, *args, **kwargs):
        revision = self.get_object()
        rev.revisions_reconcile(process=Process(pk=revision.process_id))
        return Response(s.RevisionDetailSerializer(self.get_object()).data)

    @extend_schema(request=s.OpenRevisionSerializer, responses={201: s.RevisionSerializer},
                   summary="Open the next draft revision of a process (authors).")
    def create(self, request, *args, **kwargs):
        body = s.OpenRevisionSerializer(data=request.data)
        body.is_valid(raise_exception=True)
        process = _visible_process(request.user, body.validated_data["process"].pk)
        revision = rev.revision_open(process=process, user=request.user,
                                     reason=body.validated_data["reason"])
        return Response(s.RevisionSerializer(revision).data, status=status.HTTP_201_CREATED)

    def _sign(self, request, meaning):
        body_class = s.SignWithMeaningSerializer if meaning is None else s.SignSerializer
        body = body_class(data=request.data)
        body.is_valid(raise_exception=True)
        revision = self.get_object()
        meaning = meaning or body.validated_data["meaning"]
        # The password is checked (and a wrong one counted) before the key's transaction,
        # which a refusal rolls back; a replay with the same key needs the password too.
        rev.sign_precheck(revision=revision, user=request.user, meaning=meaning)
        proof = reauthenticate(user=request.user, password=body.validated_data.get("password"),
                               request=request)

        def sign():
            signature = rev.revision_sign(
                revision=revision, user=request.user, password=None, meaning=meaning,
                request=request, reason=body.validated_data["reason"], reauthenticated=proof,
            )
            return Response(s.SignatureSerializer(signature).data,
                            status=status.HTTP_201_CREATED)

        return idempotent(request, sign)

    @extend_schema(request=s.SignSerializer, responses={201: s.SignatureSerializer},
                   summary="The author signs the draft (authored) and lodges it." + CAUTION)
    @action(detail=True, methods=["post"])
    def submit(self, request, pk=None):
        return self._sign(request, "authored")

    @extend_schema(request=s.SignSerializer, responses={201: s.SignatureSerializer},
                   summary="A reviewer signs a lodged revision (reviewed).")
    @action(detail=True, methods=["post"])
    def review(self, request, pk=None):
        return self._sign(request, "reviewed")

    @extend_schema(request=s.SignSerializer, responses={201: s.SignatureSerializer},
                   summary="An approver approves a checked revision (signature meaning `approved`, state `endorsed`).")
    @action(detail=True, methods=["post"])
    def approve(self, request, pk=None):
        return self._sign(request, "approved")

    @extend_schema(request=s.SignWithMeaningSerializer, responses={201: s.SignatureSerializer},
                   summary="Sign with an explicit meaning (authored, reviewed or approved).")
    @action(detail=True, methods=["post"])
    def sign(self, request, pk=None):
        return self._sign(request, None)

    @extend_schema(request=s.SendBackSerializer, responses={200: s.RevisionSerializer},
                   summary="Send a lodged or checked revision back; returns the new draft.")
    @action(detail=True, methods=["post"], url_path="send-back")
    def send_back(self, request, pk=None):
        body = s.SendBackSerializer(data=request.data)
        body.is_valid(raise_exception=True)
        draft = rev.revision_send_back(revision=self.get_object(), user=request.user,
                                       reason=body.validated_data["reason"])
        return Response(s.RevisionSerializer(draft).data)

    @extend_schema(parameters=[s.DiffQuerySerializer], responses=s.RevisionDiffSerializer,
                   summary="What changed between this revision and another of its process.")
    @action(detail=True, methods=["get"])
    def diff(self, request, pk=None):
        query = s.DiffQuerySerializer(data=request.query_params)
        query.is_valid(raise_exception=True)
        revision = self.get_object()
        other = self.get_queryset().filter(pk=query.validated_data["against"],
                                           process_id=revision.process_id).first()
        if other is None:
            raise NotFound("No such revision of this process.")
        older, newer = sorted([other, revision], key=lambda r: r.number)
        return Response(selectors.revision_diff(older, newer))

    @extend_schema(parameters=KeyedHistoryPagination().schema_parameters(),
                   responses=s.HistoryPageSerializer, filters=False)
    @action(detail=True, methods=["get"], filter_backends=[], pagination_class=None)
    def history(self, request, pk=None):
        return history_response(request, history.record_sources(self.get_object()))


class SignatureViewSet(ReviewErrors, viewsets.ReadOnlyModelViewSet):
    """Signatures, as signed: printed name, UTC time from the database, meaning, hash, seal."""

    serializer_class = s.SignatureSerializer
    filterset_fields = ["revision", "meaning"]

    def get_queryset(self):
        return visible(self.request.user,
                       Signature.objects.select_related("revision", "signer").order_by("id"))


class ContentETagMixin:
    """ETag on every read and create, If-Match on every change (428 without, 412 stale), as
    for records; the tag is computed from the representation (`content_etag`)."""

    etag_enabled = True
    etag_kind = ""

    def etag(self, instance) -> str:
        return content_etag(self.etag_kind, instance.pk, self.read_serializer(instance).data)

    def read_serializer(self, instance):
        return self.serializer_class(instance)

    def locked(self):
        """The object, re-read under a row lock (call inside the write's transaction)."""
        instance = self.get_object()
        return type(instance).objects.select_for_update().get(pk=instance.pk)

    def retrieve(self, request, *args, **kwargs):
        response = super().retrieve(request, *args, **kwargs)
        response["ETag"] = self.etag(self.get_object())
        return response

    def create(self, request, *args, **kwargs):
        response = super().create(request, *args, **kwargs)
        if response.status_code == 201:
            response["ETag"] = content_etag(self.etag_kind, response.data["id"],
                                            response.data)
        return response


class FindingViewSet(ReviewErrors, IdempotentPostMixin, ContentETagMixin,
                     mixins.ListModelMixin, mixins.RetrieveModelMixin, mixins.CreateModelMixin,
                     mixins.UpdateModelMixin, viewsets.GenericViewSet):
    """Findings with an owner, a due date, a status and a kind; changes need a reason.

    Segregation of duties: the owner adds notes and moves `status` to `ready_for_check`;
    only the raiser, or a reviewer or approver of the process who does not own the finding,
    resolves, withdraws or reopens it or changes its kind, owner or due date; only the raiser
    corrects the title and description (every version stays in the history). A blocking
    finding bars the approval until it is resolved or withdrawn. Changes need `If-Match` with
    the finding's ETag (428 without, 412 when stale)."""

    filterset_fields = ["process", "revision", "status", "kind", "owner"]
    extra_problems = {"update": {409: ["conflict"]}, "partial_update": {409: ["conflict"]},
                      "notes": {409: ["conflict"]}}
    serializer_class = s.FindingSerializer
    etag_kind = "finding"

    def get_queryset(self):
        return visible(self.request.user, Finding.objects.select_related(
            "owner", "raised_by").prefetch_related("notes__author"))

    def get_serializer_class(self):
        return s.FindingUpdateSerializer if self.action in ("update", "partial_update") \
            else s.FindingSerializer

    def update(self, request, *args, **kwargs):
        with transaction.atomic():
            require_if_match(request, self.etag(self.locked()))
            response = super().update(request, *args, **kwargs)
        response["ETag"] = self.etag(self.get_object())
        return response

    def perform_create(self, serializer):
        data = dict(serializer.validated_data)
        process = _visible_process(self.request.user, data.pop("process").pk)
        serializer.instance = finding_services.finding_raise(
            process=process, user=self.request.user, reason=data.pop("reason", ""), **data
        )

    def perform_update(self, serializer):
        data = dict(serializer.validated_data)
        serializer.instance = finding_services.finding_update(
            finding=serializer.instance, user=self.request.user, reason=data.pop("reason", ""),
            **data,
        )

    @extend_schema(request=s.FindingNoteSerializer, responses={201: s.FindingNoteSerializer},
                   summary="Add a progress note (the owner, the raiser, or a reviewer or "
                           "approver who does not own the finding).")
    @action(detail=True, methods=["post"])
    def notes(self, request, pk=None):
        body = s.FindingNoteSerializer(data=request.data)
        body.is_valid(raise_exception=True)
        note = finding_services.finding_note(finding=self.get_object(), user=request.user,
                                             text=body.validated_data["text"])
        return Response(s.FindingNoteSerializer(note).data, status=status.HTTP_201_CREATED)


class ProcessRoleViewSet(ReviewErrors, IdempotentPostMixin, ContentETagMixin,
                         mixins.ListModelMixin, mixins.RetrieveModelMixin,
                         mixins.CreateModelMixin, mixins.DestroyModelMixin,
                         viewsets.GenericViewSet):
    """Who holds which role on which process. Administrators grant and revoke, with a reason
    (body or `X-Change-Reason`); a revocation needs `If-Match` with the grant's ETag."""

    serializer_class = s.ProcessRoleSerializer
    filterset_fields = ["process", "user", "role"]
    etag_kind = "processrole"

    def destroy(self, request, *args, **kwargs):
        with transaction.atomic():
            require_if_match(request, self.etag(self.locked()))
            return super().destroy(request, *args, **kwargs)

    def get_queryset(self):
        return visible(self.request.user, ProcessRole.objects.select_related("user"))

    def perform_create(self, serializer):
        data = serializer.validated_data
        serializer.instance = role_services.role_grant(
            process=data["process"], user=data["user"], role=data["role"],
            granted_by=self.request.user, reason=data["reason"],
        )

    def perform_destroy(self, instance):
        reason = change_reason(self.request)
        if not reason:
            raise ValidationError({"reason": [E.REASON_REQUIRED]})
        role_services.role_revoke(grant=instance, revoked_by=self.request.user, reason=reason)


def history_response(request, sources):
    """One page of a history, read in SQL, newest first."""
    return KeyedHistoryPagination().respond(
        request, lambda **kw: history.history_page(sources, **kw),
        lambda rows: s.HistoryRowSerializer(rows, many=True).data, history.BadHistoryKey)


class ProcessHistoryView(ReviewErrors, APIView):
    """Every change to a process and its records, newest first: who, when, which field,
    from, to, why; a page at a time (`next` leads to older events)."""

    @extend_schema(parameters=KeyedHistoryPagination().schema_parameters(),
                   responses=s.HistoryPageSerializer)
    def get(self, request, pk):
        return history_response(request,
                                history.process_sources(_visible_process(request.user, pk)))


class ProcessApprovalView(ReviewErrors, APIView):
    """Which revision of the process is in force, which collects changes, and which
    indicators differ from the approved ones. An approved revision (state `endorsed`) stays in
    force until a later one is approved."""

    @extend_schema(responses=s.ApprovalStatusSerializer,
                   summary="The approval in force and the changes pending." + CAUTION)
    def get(self, request, pk):
        process = _visible_process(request.user, pk)
        rev.revisions_reconcile(process=process)
        return Response(selectors.approval_status(process))


class ProcessDiffView(ReviewErrors, APIView):
    """The difference between two revisions (by number) of a process."""

    @extend_schema(
        parameters=[OpenApiParameter("from", int, required=True),
                    OpenApiParameter("to", int, required=True)],
        responses=s.RevisionDiffSerializer,
    )
    def get(self, request, pk):
        process = _visible_process(request.user, pk)
        try:
            a, b = int(request.query_params["from"]), int(request.query_params["to"])
        except (KeyError, ValueError):
            raise ValidationError({"from": ["Give two revision numbers: ?from=1&to=2."]}) from None
        revisions = {r.number: r for r in ProcessRevision.objects.filter(process=process,
                                                                        number__in=[a, b])}
        if a not in revisions or b not in revisions:
            raise NotFound("No such revision of this process.")
        return Response(selectors.revision_diff(revisions[a], revisions[b]))


class RecordHistoryView(ReviewErrors, APIView):
    """The audit history of one record, e.g. /history/hazards.reactionstep/12/, newest
    first, a page at a time."""

    @extend_schema(parameters=KeyedHistoryPagination().schema_parameters(),
                   responses=s.HistoryPageSerializer)
    def get(self, request, label, pk):
        if label not in PROCESS_PATHS and label not in REFERENCE_MODELS:
            raise NotFound("No history is kept for this kind of record.")
        model = apps.get_model(label)
        obj = get_object_or_404(visible(request.user, model._base_manager.all()), pk=pk)
        return history_response(request, history.record_sources(obj))
