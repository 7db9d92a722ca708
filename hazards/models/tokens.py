"""API tokens, stored only as their SHA-256, with an expiry and revocation."""

from __future__ import annotations

import hashlib
import secrets

from django.conf import settings
from django.db import models

from hazards.models.base import tracked

TOKEN_PREFIX_LENGTH = 8


def hash_token(raw: str) -> str:
    return hashlib.sha256(raw.encode("utf-8")).hexdigest()


# Issued and revoked tokens reach the trail; their use (`last_used_at`) does not.
@tracked(exclude=["last_used_at"])
class ApiToken(models.Model):
    user = models.ForeignKey(
        settings.AUTH_USER_MODEL, on_delete=models.CASCADE, related_name="api_tokens"
    )
    name = models.CharField(max_length=120, blank=True)
    prefix = models.CharField(max_length=TOKEN_PREFIX_LENGTH, db_index=True)
    key_hash = models.CharField(max_length=64, unique=True)
    created_at = models.DateTimeField(auto_now_add=True)
    expires_at = models.DateTimeField()
    revoked_at = models.DateTimeField(null=True, blank=True)
    last_used_at = models.DateTimeField(null=True, blank=True)

    class Meta:
        ordering = ["-created_at"]

    def __str__(self) -> str:
        return f"{self.prefix}… ({self.user})"

    @staticmethod
    def generate() -> str:
        return secrets.token_urlsafe(32)


@tracked()
class ServiceAccount(models.Model):
    """A named account of another system: it reads and writes data but can never sign."""

    user = models.OneToOneField(
        settings.AUTH_USER_MODEL, on_delete=models.CASCADE, related_name="service_account"
    )
    description = models.TextField(blank=True)
    created_at = models.DateTimeField(auto_now_add=True)

    def __str__(self) -> str:
        return f"service account {self.user}"
