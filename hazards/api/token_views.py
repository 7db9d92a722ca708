"""Exchange of a user name and password for an API token."""

from __future__ import annotations

from django.conf import settings
from django.contrib.auth import authenticate
from django.utils import timezone
from drf_spectacular.utils import extend_schema, extend_schema_field, inline_serializer
from rest_framework import exceptions, permissions, serializers, status, viewsets
from rest_framework.decorators import action
from rest_framework.permissions import AllowAny
from rest_framework.response import Response
from rest_framework.throttling import SimpleRateThrottle
from rest_framework.views import APIView

from hazards.api.auth import PASSWORD_EXCHANGE, issue_token
from hazards.api.filters import TokenFilter
from hazards.api.idempotency import IdempotentPostMixin
from hazards.api.pagination import SingleQueryValuesMixin, StrictLimitOffsetPagination
from hazards.lockout import client_ip, refusal_seconds
from hazards.models import ApiToken
from hazards.models.tokens import hash_token


class CredentialsSerializer(serializers.Serializer):
    username = serializers.CharField()
    password = serializers.CharField(style={"input_type": "password"}, trim_whitespace=False)


LOCKED_OUT = ("Too many failed sign-ins for this user name or from this address: try again "
              "after Retry-After seconds. An administrator can lift the lock earlier.")


class TokenExchangeThrottle(SimpleRateThrottle):
    """Requests to the token endpoint per client address (`EXOLEDGER_TOKEN_RATE`)."""

    scope = "token-exchange"

    def get_rate(self):
        return settings.EXOLEDGER_TOKEN_RATE

    def get_cache_key(self, request, view):
        return self.cache_format % {"scope": self.scope, "ident": client_ip(request._request)}


class ObtainTokenView(APIView):
    """Exchange a user name and password for an API token.

    The sign-in page's lockout holds here too (five failures of one name from one address,
    or too many failures from one address across names: 429 with `Retry-After`), and the
    endpoint is rate-limited per address. A token got this way is revoked when the person's
    password changes or the account is deactivated."""

    authentication_classes: list = []
    permission_classes = [AllowAny]
    throttle_classes = [TokenExchangeThrottle]

    @extend_schema(
        request=CredentialsSerializer,
        responses={200: inline_serializer("TokenResponse", {"token": serializers.CharField(),
                                                            "expires_at": serializers.DateTimeField()})},
    )
    def post(self, request):
        credentials = CredentialsSerializer(data=request.data)
        credentials.is_valid(raise_exception=True)
        username = credentials.validated_data["username"]
        wait = refusal_seconds(request._request, username)
        if wait is not None:
            raise exceptions.Throttled(wait=wait, detail=LOCKED_OUT)
        user = authenticate(
            request=request._request,
            username=username,
            password=credentials.validated_data["password"],
        )
        if user is None or not user.is_active:
            wait = refusal_seconds(request._request, username)
            if wait is not None:
                raise exceptions.Throttled(wait=wait, detail=LOCKED_OUT)
            raise exceptions.AuthenticationFailed("Unknown user name or wrong password.")
        raw = issue_token(user=user, name=PASSWORD_EXCHANGE)
        token = ApiToken.objects.get(key_hash=hash_token(raw))
        return Response({"token": raw, "expires_at": token.expires_at}, status=status.HTTP_200_OK)


# --- administration of tokens ----------------------------------------------------------


class TokenAdminPermission(permissions.BasePermission):
    """Staff with `hazards.view_apitoken` list tokens; revoking needs `change_apitoken`."""

    def has_permission(self, request, view):
        user = request.user
        if not (user and user.is_authenticated and user.is_staff):
            return False
        needed = "hazards.view_apitoken" if request.method in permissions.SAFE_METHODS \
            else "hazards.change_apitoken"
        return user.has_perm(needed)

    def describe(self, view, method):
        needed = "view" if method in permissions.SAFE_METHODS else "change"
        return f"a staff account with `hazards.{needed}_apitoken`"


TOKEN_STATES = [("active", "active"), ("expired", "expired"), ("revoked", "revoked")]


class ApiTokenSerializer(serializers.ModelSerializer):
    user = serializers.CharField(source="user.username", read_only=True)
    service_account = serializers.SerializerMethodField()
    state = serializers.SerializerMethodField()

    class Meta:
        model = ApiToken
        fields = ["id", "user", "service_account", "name", "prefix", "state", "created_at",
                  "expires_at", "revoked_at", "last_used_at"]
        read_only_fields = fields

    def get_service_account(self, token) -> bool:
        return hasattr(token.user, "service_account")

    @extend_schema_field(serializers.ChoiceField(choices=TOKEN_STATES))
    def get_state(self, token) -> str:
        if token.revoked_at is not None:
            return "revoked"
        return "expired" if token.expires_at <= timezone.now() else "active"


class ApiTokenViewSet(SingleQueryValuesMixin, IdempotentPostMixin,
                      viewsets.ReadOnlyModelViewSet):
    """API tokens of all users and service accounts (never the token or its hash)."""

    permission_classes = [permissions.IsAuthenticated, TokenAdminPermission]
    serializer_class = ApiTokenSerializer
    queryset = ApiToken.objects.select_related("user", "user__service_account")
    filterset_class = TokenFilter
    pagination_class = StrictLimitOffsetPagination
    lookup_value_regex = "[^/]+"
    ordering_fields = ["created_at", "expires_at", "last_used_at", "id"]

    @extend_schema(request=None, responses={200: ApiTokenSerializer})
    @action(detail=True, methods=["post"], url_path="revoke")
    def revoke(self, request, pk=None):
        """Revoke the token at once; revoking a revoked token changes nothing."""
        token = revoke_token(token=self.get_object())
        return Response(self.get_serializer(token).data)


def revoke_token(*, token: ApiToken) -> ApiToken:
    if token.revoked_at is None:
        ApiToken.objects.filter(pk=token.pk, revoked_at__isnull=True).update(
            revoked_at=timezone.now())
        token.refresh_from_db()
    return token
