"""Exchange of a user name and password for an API token."""

from __future__ import annotations

from django.contrib.auth import authenticate
from drf_spectacular.utils import extend_schema, inline_serializer
from rest_framework import exceptions, serializers, status
from rest_framework.permissions import AllowAny
from rest_framework.response import Response
from rest_framework.views import APIView

from hazards.api.auth import issue_token
from hazards.models import ApiToken
from hazards.models.tokens import hash_token


class CredentialsSerializer(serializers.Serializer):
    username = serializers.CharField()
    password = serializers.CharField(style={"input_type": "password"}, trim_whitespace=False)


class ObtainTokenView(APIView):
    """Exchange a user name and password for an API token."""

    authentication_classes: list = []
    permission_classes = [AllowAny]

    @extend_schema(
        request=CredentialsSerializer,
        responses={200: inline_serializer("TokenResponse", {"token": serializers.CharField(),
                                                            "expires_at": serializers.DateTimeField()})},
        auth=[],
    )
    def post(self, request):
        credentials = CredentialsSerializer(data=request.data)
        credentials.is_valid(raise_exception=True)
        user = authenticate(
            request=request._request,
            username=credentials.validated_data["username"],
            password=credentials.validated_data["password"],
        )
        if user is None or not user.is_active:
            raise exceptions.AuthenticationFailed("Unknown user name or wrong password.")
        raw = issue_token(user=user, name="password exchange")
        token = ApiToken.objects.get(key_hash=hash_token(raw))
        return Response({"token": raw, "expires_at": token.expires_at}, status=status.HTTP_200_OK)
