"""REST resources of oversight: revalidation due and overdue, change records, the inbox and
notification preferences. Everything is limited to the processes the person has a role on."""

from __future__ import annotations

from django.contrib.auth import get_user_model
from django.db import transaction
from drf_spectacular.utils import OpenApiParameter, extend_schema
from rest_framework import mixins, status, viewsets
from rest_framework.decorators import action
from rest_framework.exceptions import ValidationError
from rest_framework.response import Response
from rest_framework.views import APIView

from hazards.api import oversight_serializers as s
from hazards.api.concurrency import content_etag, require_if_match
from hazards.api.idempotency import IdempotentPostMixin
from hazards.oversight import revalidation, services
from hazards.oversight.dates import RETENTION_NOTE
from hazards.oversight.models import ChangeRecord, Notification
from hazards.review.access import is_administrator, processes_of

MAX_WINDOW_DAYS = 3660


def window_days(request) -> int:
    raw = request.query_params.get("within_days", revalidation.DEFAULT_WINDOW_DAYS)
    try:
        days = int(raw)
    except (TypeError, ValueError):
        raise ValidationError({"within_days": [f"{raw!r} is not a whole number of days."]}
                              ) from None
    if not 0 <= days <= MAX_WINDOW_DAYS:
        raise ValidationError({"within_days": [f"must be between 0 and {MAX_WINDOW_DAYS}."]})
    return days


class RevalidationView(APIView):
    """Approved revisions (state `endorsed`) whose revalidation falls due within the window, and those overdue.

    The default interval follows OSHA 29 CFR 1910.119(e)(6); each site sets its own
    (`revalidation_interval_months`), and local rules may differ.
    """

    @extend_schema(
        parameters=[OpenApiParameter("within_days", int, description="window in days (90)")],
        responses={200: s.RevalidationSerializer})
    def get(self, request):
        data = revalidation.due_and_overdue(request.user, within_days=window_days(request))
        return Response({
            "today": data["today"], "within_days": data["within_days"],
            "overdue": s.ScheduleSerializer(data["overdue"], many=True).data,
            "due": s.ScheduleSerializer(data["due"], many=True).data,
            "default_interval_source": data["source"], "retention": RETENTION_NOTE,
        })


class ChangeRecordViewSet(viewsets.ReadOnlyModelViewSet):
    """Changes to the inputs of approved steps, open until a new revision is approved."""

    serializer_class = s.ChangeRecordSerializer
    filterset_fields = ["process", "state", "review_path"]
    ordering_fields = ["opened_at", "id"]

    def get_queryset(self):
        qs = ChangeRecord.objects.prefetch_related("entries").order_by("-opened_at", "-id")
        user = self.request.user
        return qs if is_administrator(user) else qs.filter(process__in=processes_of(user))


class NotificationViewSet(IdempotentPostMixin, mixins.ListModelMixin,
                          mixins.RetrieveModelMixin, viewsets.GenericViewSet):
    """Your inbox. `?unread=true` lists the unread ones only."""

    serializer_class = s.NotificationSerializer
    filterset_fields = ["kind"]

    def get_queryset(self):
        if getattr(self, "swagger_fake_view", False):
            return Notification.objects.none()
        qs = services.inbox_of(self.request.user).order_by("-created_at", "-id")
        if self.request.query_params.get("unread") in ("1", "true"):
            qs = qs.filter(read_at__isnull=True)
        return qs

    @extend_schema(request=None, responses={200: s.NotificationSerializer})
    @action(detail=True, methods=["post"])
    def read(self, request, pk=None):
        notification = self.get_object()
        services.notifications_mark_read(user=request.user, ids=[notification.pk])
        notification.refresh_from_db()
        return Response(self.get_serializer(notification).data)

    @extend_schema(request=None, responses={200: s.MarkedSerializer})
    @action(detail=False, methods=["post"], url_path="read-all", filter_backends=[])
    def read_all(self, request):
        return Response({"marked": services.notifications_mark_read(user=request.user)})


class PreferencesView(APIView):
    """Which kinds of notification you receive, by e-mail and in the inbox (one row per kind,
    a short fixed list, not paginated). GET answers with an `ETag` of the whole set; PUT and
    PATCH change the rows given and need it in `If-Match` (428 without, 412 when stale)."""

    etag_enabled = True

    @staticmethod
    def _current(user):
        rows = s.PreferenceSerializer(services.preferences_of(user), many=True).data
        return rows, content_etag("notification-preferences", user.pk, rows)

    @extend_schema(responses={200: s.PreferenceSerializer(many=True)})
    def get(self, request):
        rows, etag = self._current(request.user)
        return Response(rows, headers={"ETag": etag})

    @extend_schema(request=s.PreferenceSerializer(many=True),
                   responses={200: s.PreferenceSerializer(many=True)})
    def put(self, request):
        given = s.PreferenceSerializer(data=request.data, many=True)
        given.is_valid(raise_exception=True)
        with transaction.atomic():
            # One person's preferences change one request at a time: lock the person.
            get_user_model().objects.select_for_update().filter(pk=request.user.pk).first()
            require_if_match(request, self._current(request.user)[1])
            for row in given.validated_data:
                services.preference_set(user=request.user, **row)
        rows, etag = self._current(request.user)
        return Response(rows, status=status.HTTP_200_OK, headers={"ETag": etag})

    patch = put
