"""Token authentication with hashed, expiring, revocable tokens."""

from __future__ import annotations

from datetime import timedelta

from django.conf import settings
from django.utils import timezone
from rest_framework import exceptions
from rest_framework.authentication import BaseAuthentication, get_authorization_header

from hazards.models import ApiToken
from hazards.models.tokens import TOKEN_PREFIX_LENGTH, hash_token

KEYWORD = "Token"
# The name of tokens got by exchanging a password: a password change or deactivation revokes
# them (a trigger on auth_user, hazards migration 0004).
PASSWORD_EXCHANGE = "password exchange"


class HashedTokenAuthentication(BaseAuthentication):
    """`Authorization: Token <token>`; the server keeps only the token's SHA-256."""

    def authenticate(self, request):
        parts = get_authorization_header(request).split()
        if not parts or parts[0].lower() != KEYWORD.lower().encode():
            return None
        if len(parts) != 2:
            raise exceptions.AuthenticationFailed("Invalid token header: expected 'Token <token>'.")
        try:
            raw = parts[1].decode("ascii")
        except UnicodeDecodeError:
            raise exceptions.AuthenticationFailed("Invalid token header.") from None
        token = (
            ApiToken.objects.select_related("user")
            .filter(key_hash=hash_token(raw), revoked_at__isnull=True)
            .first()
        )
        if token is None or token.expires_at <= timezone.now() or not token.user.is_active:
            raise exceptions.AuthenticationFailed("Invalid, expired or revoked token.")
        ApiToken.objects.filter(pk=token.pk).update(last_used_at=timezone.now())
        return token.user, token

    def authenticate_header(self, request):
        return KEYWORD


def issue_token(*, user, name: str = "", ttl: timedelta | None = None) -> str:
    raw = ApiToken.generate()
    ApiToken.objects.create(
        user=user,
        name=name,
        prefix=raw[:TOKEN_PREFIX_LENGTH],
        key_hash=hash_token(raw),
        expires_at=timezone.now() + (ttl or timedelta(hours=settings.API_TOKEN_TTL_HOURS)),
    )
    return raw
