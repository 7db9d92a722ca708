"""Idempotency keys of API POSTs (draft-ietf-httpapi-idempotency-key-header).

One row per (user, key). It is inserted in the same transaction as the effect of the
request, so the unique constraint is the lock: a second request with the same key waits
for the first to commit and then replays its stored response, or gets the row's error.
A request that fails rolls its key back with everything else, so it can be retried.
"""

from __future__ import annotations

from datetime import timedelta

from django.conf import settings
from django.core.serializers.json import DjangoJSONEncoder
from django.db import models

# How long a stored response is replayed; an older key may be reused for a new request.
KEY_TTL = timedelta(hours=24)
KEY_MAX_LENGTH = 255


class IdempotencyKey(models.Model):
    user = models.ForeignKey(
        settings.AUTH_USER_MODEL, on_delete=models.CASCADE, related_name="idempotency_keys"
    )
    key = models.CharField(max_length=KEY_MAX_LENGTH)
    method = models.CharField(max_length=10)
    path = models.CharField(max_length=2000)
    # SHA-256 of method, path and the canonical form of the body (files by their SHA-256).
    request_hash = models.CharField(max_length=64)
    response_status = models.PositiveSmallIntegerField(null=True, blank=True)
    response_body = models.JSONField(null=True, blank=True, encoder=DjangoJSONEncoder)
    response_headers = models.JSONField(default=dict, blank=True)
    created_at = models.DateTimeField(auto_now_add=True, db_index=True)

    class Meta:
        constraints = [
            models.UniqueConstraint(fields=["user", "key"], name="idempotency_key_unique_per_user"),
        ]

    def __str__(self) -> str:
        return f"{self.method} {self.path} key {self.key!r} of user {self.user_id}"
