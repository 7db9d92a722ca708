"""Idempotent POSTs: the `Idempotency-Key` header (draft-ietf-httpapi-idempotency-key-header).

Same key (per user) and same request: the first response is returned again, status and
body, with `Idempotent-Replayed: true`, and nothing happens twice. Same key with another
method, path or body: 422. The key row is inserted in the transaction of the effect, so
the unique constraint serialises two concurrent requests with one key: the second waits
for the first to commit and replays it (or, after `LOCK_TIMEOUT`, gets 409).
Only successful (2xx) responses are kept; a failed request rolls its key back with
everything else and may be retried with the same key.
"""

from __future__ import annotations

import hashlib
import json

from django.core.files.uploadedfile import UploadedFile
from django.core.serializers.json import DjangoJSONEncoder
from django.db import IntegrityError, OperationalError, connection, transaction
from django.utils import timezone
from rest_framework.response import Response

from hazards.api.errors import ProblemError
from hazards.integration.models import KEY_MAX_LENGTH, KEY_TTL, IdempotencyKey

HEADER = "Idempotency-Key"
REPLAYED = "Idempotent-Replayed"
LOCK_TIMEOUT = "10s"
KEPT_HEADERS = ("ETag", "Location", "Content-Location")


def _normalise(data):
    if isinstance(data, UploadedFile):
        digest = hashlib.sha256()
        for chunk in data.chunks():
            digest.update(chunk)
        data.seek(0)
        return {"file": data.name, "sha256": digest.hexdigest()}
    if hasattr(data, "lists"):  # QueryDict / MultiValueDict
        return {k: ["(not kept)"] if k in UNHASHED_FIELDS else [_normalise(v) for v in vs]
                for k, vs in sorted(data.lists())}
    if isinstance(data, dict):
        return {str(k): "(not kept)" if k in UNHASHED_FIELDS else _normalise(v)
                for k, v in data.items()}
    if isinstance(data, list | tuple):
        return [_normalise(v) for v in data]
    return data


def fingerprint(request) -> str:
    """SHA-256 of method, path with query, and the parsed body (files by their SHA-256)."""
    body = dict(_normalise(request.data)) if hasattr(request.data, "items") else _normalise(
        request.data
    )
    if getattr(request, "FILES", None):
        body = {"data": body, "files": _normalise(request.FILES)}
    text = json.dumps([request.method, request.get_full_path(), body], sort_keys=True,
                      cls=DjangoJSONEncoder, separators=(",", ":"))
    return hashlib.sha256(text.encode("utf-8")).hexdigest()


def _key(request) -> str | None:
    raw = request.headers.get(HEADER)
    if raw is None:
        return None
    key = raw.strip()
    if key.startswith('"') and key.endswith('"') and len(key) >= 2:  # sf-string form
        key = key[1:-1]
    if not key or len(key) > KEY_MAX_LENGTH or not all(32 <= ord(c) < 127 for c in key):
        raise ProblemError("bad_request", f"{HEADER} must be 1-{KEY_MAX_LENGTH} printable ASCII "
                           "characters.", errors=[{"field": HEADER, "value": None,
                                                   "rule": "1-255 printable ASCII characters",
                                                   "code": "invalid"}])
    return key


def _replay(row: IdempotencyKey, request_hash: str) -> Response:
    if row.request_hash != request_hash:
        raise ProblemError("idempotency_key_reused",
                           f"This {HEADER} was used for another request ({row.method} "
                           f"{row.path}); use a new key for a new request.")
    headers = {**row.response_headers, REPLAYED: "true"}
    return Response(row.response_body, status=row.response_status, headers=headers)


def idempotent(request, handler):
    """Run `handler()` (which returns a DRF Response) at most once per Idempotency-Key."""
    key = _key(request)
    if key is None or not request.user.is_authenticated:
        return handler()
    if getattr(request, "_idempotency_key_taken", False):
        # Already inside `idempotent` for this request (a view wrapper around an action that
        # calls it itself): the outer call owns the key; a second one would find the outer's
        # unfinished row and "replay" it.
        return handler()
    request._idempotency_key_taken = True
    request_hash = fingerprint(request)
    cutoff = timezone.now() - KEY_TTL
    with transaction.atomic():
        mine = IdempotencyKey.objects.filter(user=request.user, key=key)
        existing = mine.filter(created_at__gte=cutoff).first()
        if existing is not None:
            return _replay(existing, request_hash)
        mine.filter(created_at__lt=cutoff).delete()
        try:
            with transaction.atomic():
                with connection.cursor() as cursor:
                    cursor.execute(f"SET LOCAL lock_timeout = '{LOCK_TIMEOUT}'")
                row = IdempotencyKey.objects.create(
                    user=request.user, key=key, method=request.method,
                    path=request.get_full_path()[:2000], request_hash=request_hash,
                )
                with connection.cursor() as cursor:
                    cursor.execute("SET LOCAL lock_timeout TO DEFAULT")
        except IntegrityError:
            # Another request with this key committed while we waited on its row.
            return _replay(IdempotencyKey.objects.get(user=request.user, key=key), request_hash)
        except OperationalError:
            raise ProblemError("idempotency_key_in_progress",
                               f"A request with this {HEADER} is still being processed.",
                               headers={"Retry-After": "1"}) from None
        response = handler()
        if not 200 <= response.status_code < 300:
            transaction.set_rollback(True)
            return response
        row.response_status = response.status_code
        row.response_body = response.data
        row.response_headers = {h: response[h] for h in KEPT_HEADERS if response.has_header(h)}
        row.save(update_fields=["response_status", "response_body", "response_headers"])
    return response


# Body fields never kept, not even as part of a hash: a password typed to sign must not
# leave an unsalted digest behind in the key table.
UNHASHED_FIELDS = frozenset({"password"})


class IdempotentPostMixin:
    """Every POST of the view honours Idempotency-Key (the whole action runs inside
    `idempotent`). Actions that call `idempotent` themselves, at the point where their effect
    begins, are listed in `idempotent_inside` (e.g. the signing actions, which check the
    password first so that a wrong one is counted even though the request rolls back)."""

    idempotent_actions = "*"
    idempotent_inside: tuple[str, ...] = ()

    def dispatch(self, request, *args, **kwargs):
        if request.method == "POST" and hasattr(self, "post"):
            handler = self.post

            def post(drf_request, *a, **kw):
                if getattr(self, "action", None) in self.idempotent_inside:
                    return handler(drf_request, *a, **kw)
                return idempotent(drf_request, lambda: handler(drf_request, *a, **kw))

            self.post = post
        return super().dispatch(request, *args, **kwargs)


# The name the record views used when only `create` honoured the key.
IdempotentCreateMixin = IdempotentPostMixin
