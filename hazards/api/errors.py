"""One error mapping for the API: a clear 400 naming the field, never a traceback."""

from __future__ import annotations

import logging

from django.core.exceptions import PermissionDenied
from django.core.exceptions import ValidationError as DjangoValidationError
from django.db import DatabaseError, IntegrityError
from django.http import Http404
from rest_framework import exceptions, status
from rest_framework.response import Response
from rest_framework.views import exception_handler as drf_exception_handler

log = logging.getLogger(__name__)


def exception_handler(exc, context):
    if isinstance(exc, DjangoValidationError):
        detail = exc.message_dict if hasattr(exc, "error_dict") else {"non_field_errors": exc.messages}
        exc = exceptions.ValidationError(detail)
    elif isinstance(exc, IntegrityError):
        # A database constraint caught what validation did not: report it, never the SQL.
        log.warning("integrity error: %s", exc)
        name = getattr(getattr(exc, "__cause__", None), "diag", None)
        constraint = getattr(name, "constraint_name", None) or "a database constraint"
        exc = exceptions.ValidationError(
            {"non_field_errors": [f"The record violates {constraint}."]}
        )
    elif isinstance(exc, Http404):
        exc = exceptions.NotFound()
    elif isinstance(exc, PermissionDenied):
        exc = exceptions.PermissionDenied()
    response = drf_exception_handler(exc, context)
    if response is None and isinstance(exc, DatabaseError):
        log.exception("database error")
        return Response(
            {"detail": "The database is unavailable; nothing was saved. Try again."},
            status=status.HTTP_503_SERVICE_UNAVAILABLE,
        )
    return response
