"""Optimistic locking over HTTP (RFC 9110 §13.1.1): `ETag` out, `If-Match` required in.

Every GET of a record answers with `ETag: "<type>-<id>-v<version>"`; PUT, PATCH and
DELETE must send it back in `If-Match` (428 without it, 412 when stale). The check that
counts runs in `hazards.services.records` under a row lock, inside the transaction of the
write, so two clients holding the same ETag cannot both succeed.
"""

from __future__ import annotations

import hashlib
import json
import re

from django.core.serializers.json import DjangoJSONEncoder
from django.db import transaction
from rest_framework.response import Response

from hazards.api.errors import ProblemError
from hazards.services.records import StaleRecord

_TAG = re.compile(r'\s*(W/)?"([^"]*)"\s*(?:,|$)')


def etag_for(instance) -> str:
    return f'"{instance._meta.model_name}-{instance.pk}-v{instance.version}"'


def parse_if_match(header: str | None) -> list[str]:
    """The strong entity tags of an If-Match header (weak ones never match, §13.1.1)."""
    if header is None:
        return []
    tags, pos = [], 0
    while pos < len(header):
        match = _TAG.match(header, pos)
        if not match or match.end() == pos:
            raise ProblemError("precondition_required",
                               "If-Match must be a list of quoted entity tags, e.g. "
                               '"reactionstep-12-v3".')
        if not match.group(1):
            tags.append(f'"{match.group(2)}"')
        pos = match.end()
    return tags


def _require_tag(request, current: str) -> bool:
    """428 without `If-Match` (or with `*`); False when it names no current tag."""
    header = request.headers.get("If-Match")
    if header is None or not header.strip():
        raise ProblemError("precondition_required",
                           f"Send If-Match: {current} (the ETag you read) to change "
                           "or delete this record.")
    if header.strip() == "*":
        raise ProblemError("precondition_required",
                           "If-Match: * does not say which version you edited; send its ETag.")
    return current in parse_if_match(header)


def expected_version(request, instance) -> int:
    """The version `If-Match` vouches for; 428 without one, 412 when it is not current."""
    if not _require_tag(request, etag_for(instance)):
        raise stale(instance)
    return instance.version


def content_etag(kind: str, key, representation) -> str:
    """A strong ETag from the representation itself, for records without a version column
    (findings, role grants, a person's notification preferences): any change to what a
    client reads changes it (RFC 9110 §8.8.3)."""
    text = json.dumps(representation, cls=DjangoJSONEncoder, sort_keys=True)
    return f'"{kind}-{key}-{hashlib.sha256(text.encode()).hexdigest()[:20]}"'


def require_if_match(request, current: str) -> None:
    """The same contract as records: 428 without `If-Match`, 412 when it is not `current`.
    Call it with the representation read under a row lock, in the write's transaction."""
    if not _require_tag(request, current):
        raise ProblemError(
            "precondition_failed",
            "The record was changed since you read it; GET it again and reapply your change.",
            current_etag=current, headers={"ETag": current})


def stale(instance, exc: StaleRecord | None = None) -> ProblemError:
    if exc is not None and exc.current is not None:
        instance.version = exc.current
    return ProblemError(
        "precondition_failed",
        "The record was changed since you read it; GET it again and reapply your change.",
        current_etag=etag_for(instance),
        headers={"ETag": etag_for(instance)},
    )


class ETagMixin:
    """For ModelViewSets whose model has a `version` column."""

    etag_enabled = True

    def retrieve(self, request, *args, **kwargs):
        instance = self.get_object()
        return Response(self.get_serializer(instance).data, headers={"ETag": etag_for(instance)})

    def create(self, request, *args, **kwargs):
        response = super().create(request, *args, **kwargs)
        instance = getattr(self, "_written", None)
        if instance is not None and response.status_code == 201:
            response["ETag"] = etag_for(instance)
        return response

    def update(self, request, *args, **kwargs):
        instance = self.get_object()
        self.expected_version = expected_version(request, instance)
        # The response is built inside the write's transaction: a database lost while the
        # answer is read back rolls the write back, so a 503 never hides a committed edit.
        with transaction.atomic():
            response = super().update(request, *args, **kwargs)
        written = getattr(self, "_written", None)
        if written is not None:
            response["ETag"] = etag_for(written)
        return response

    def destroy(self, request, *args, **kwargs):
        instance = self.get_object()
        self.expected_version = expected_version(request, instance)
        return super().destroy(request, *args, **kwargs)

    def get_serializer_context(self):
        context = super().get_serializer_context()
        context["expected_version"] = getattr(self, "expected_version", None)
        return context

    def perform_create(self, serializer):
        self._written = serializer.save()

    def perform_update(self, serializer):
        try:
            self._written = serializer.save()
        except StaleRecord as exc:
            raise stale(serializer.instance, exc) from None
