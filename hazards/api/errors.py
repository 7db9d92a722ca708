"""One error mapping for the API: RFC 9457 problem details, never a traceback.

Every error leaves as `application/problem+json`:

    {"type": "/api/v1/problems/#validation_error", "title": "…", "status": 400,
     "detail": "…", "code": "validation_error", "instance": "/api/v1/steps/",
     "errors": [{"field": "process_temperature", "value": "-300 degC",
                 "rule": "must be above absolute zero (0 K)", "code": "out_of_range"}]}

`code` is machine-readable and stable; `PROBLEM_TYPES` lists every one (served at
`/api/v1/problems/`). Validation problems carry one `errors` item per refused value;
uploaded files add `row` and `column`. Anything unexpected is logged here and leaves as a
generic 500 problem that names nothing internal.
"""

from __future__ import annotations

import json
import logging

from django.core.exceptions import (
    ObjectDoesNotExist,
    PermissionDenied,
    RequestDataTooBig,
    SuspiciousOperation,
)
from django.core.exceptions import ValidationError as DjangoValidationError
from django.core.serializers.json import DjangoJSONEncoder
from django.db import DatabaseError, IntegrityError, connections
from django.http import Http404, HttpResponse
from rest_framework import exceptions

from calcs.errors import CalcInputError
from hazards.api.transient import mark_transient, transient_database_error

log = logging.getLogger(__name__)

PROBLEM_MEDIA_TYPE = "application/problem+json"
PROBLEM_BASE = "/api/v1/problems/"

# code -> (status, title, when it happens)
PROBLEM_TYPES: dict[str, tuple[int, str, str]] = {
    "validation_error": (400, "The request is not valid",
                         "One or more values were refused; `errors` lists field, value and rule."),
    "parse_error": (400, "The request body could not be parsed", "Malformed JSON or form data."),
    "bad_request": (400, "Bad request", "The request cannot be processed as sent."),
    "series_rejected": (400, "The series file was refused",
                        "The uploaded file was refused as a whole; `errors` gives the row and "
                        "column of every problem. Nothing was stored."),
    "not_authenticated": (401, "Authentication required",
                          "Send `Authorization: Token <token>` or use a signed-in session."),
    "authentication_failed": (401, "Authentication failed",
                              "The token is unknown, expired or revoked, or the credentials "
                              "are wrong."),
    "permission_denied": (403, "Permission denied",
                          "Signed in, but not allowed to do this (see the operation's "
                          "permission)."),
    "not_found": (404, "Not found", "No such record, or not visible to you."),
    "method_not_allowed": (405, "Method not allowed", "See the `Allow` header."),
    "not_acceptable": (406, "Not acceptable", "No representation matches the `Accept` header."),
    "conflict": (409, "Conflict", "The request conflicts with the current state of the record."),
    "idempotency_key_in_progress": (409, "A request with this Idempotency-Key is in progress",
                                    "Retry after the first request has finished."),
    "precondition_failed": (412, "The record has changed",
                            "`If-Match` does not match the record's current ETag: someone "
                            "else saved it since you read it. GET it again and reapply."),
    "payload_too_large": (413, "Request too large", "The body or file exceeds the limit."),
    "unsupported_media_type": (415, "Unsupported media type", "Send JSON (or the documented "
                               "multipart form)."),
    "idempotency_key_reused": (422, "Idempotency-Key reused with another request",
                               "The key was already used for a different method, path or body."),
    "precondition_required": (428, "If-Match required",
                              "Send `If-Match` with the ETag of the representation you edited."),
    "throttled": (429, "Too many requests", "Slow down; see `Retry-After`."),
    "server_error": (500, "Internal server error",
                     "Something failed on the server; it has been logged. Nothing was saved."),
    "database_unavailable": (503, "Service unavailable",
                             "The database is unavailable; nothing was saved. Try again."),
}

SENSITIVE = ("password", "token", "secret")
MAX_ECHO = 200


class ProblemError(exceptions.APIException):
    """Raise from a view or service edge to answer with one problem document."""

    def __init__(self, code: str, detail: str = "", *, errors: list[dict] | None = None,
                 headers: dict | None = None, **extra):
        self.code = code
        self.status_code = PROBLEM_TYPES[code][0]
        self.detail = detail or PROBLEM_TYPES[code][1]
        self.errors = errors
        self.headers = headers or {}
        self.extra = extra
        Exception.__init__(self, self.detail)

    def __str__(self) -> str:
        return str(self.detail)


def problem_body(code: str, detail: str = "", *, instance: str | None = None,
                 errors: list[dict] | None = None, status: int | None = None, **extra) -> dict:
    default_status, title, description = PROBLEM_TYPES[code]
    body = {
        "type": f"{PROBLEM_BASE}#{code}",
        "title": title,
        "status": status or default_status,
        "detail": detail or description,
        "code": code,
    }
    if instance:
        body["instance"] = instance
    if errors is not None:
        body["errors"] = errors
    body.update(extra)
    return body


def problem_response(body: dict, headers: dict | None = None) -> HttpResponse:
    response = HttpResponse(
        json.dumps(body, cls=DjangoJSONEncoder, ensure_ascii=False, allow_nan=False),
        status=body["status"],
        content_type=PROBLEM_MEDIA_TYPE,
    )
    for name, value in (headers or {}).items():
        response[name] = value
    return response


# --- validation details -> errors list -------------------------------------------------

def _lookup(data, path: list):
    """The submitted value at `path` in the request data, or None."""
    current = data
    for part in path:
        try:
            if hasattr(current, "getlist") and isinstance(part, str):
                values = current.getlist(part)
                current = values[0] if len(values) == 1 else (values or None)
            else:
                current = current[part]
        except (KeyError, IndexError, TypeError, AttributeError):
            return None
    return current


def _echo(name: str | None, value):
    """The value as it may be shown back: never a secret, never megabytes."""
    if name and any(word in name.lower() for word in SENSITIVE):
        return None
    if hasattr(value, "read") and hasattr(value, "name"):  # an uploaded file
        return getattr(value, "name", None)
    if isinstance(value, str) and len(value) > MAX_ECHO:
        return value[:MAX_ECHO] + "…"
    try:
        text = json.dumps(value, allow_nan=False)
    except (TypeError, ValueError):
        return str(value)[:MAX_ECHO]
    return value if len(text) <= MAX_ECHO else text[:MAX_ECHO] + "…"


def flatten_errors(detail, data=None, path=None) -> list[dict]:
    """DRF's nested `{field: [ErrorDetail]}` as `[{field, value, rule, code}]`."""
    path = path or []
    out: list[dict] = []
    if isinstance(detail, dict):
        for key, value in detail.items():
            if key in ("non_field_errors", "__all__"):
                out.extend(flatten_errors(value, data, path))
            else:
                out.extend(flatten_errors(value, data, [*path, key]))
    elif isinstance(detail, list | tuple):
        if detail and all(isinstance(item, str) for item in detail):
            for item in detail:
                out.extend(flatten_errors(item, data, path))
        else:
            for index, item in enumerate(detail):
                if item:
                    out.extend(flatten_errors(item, data, [*path, index]))
    else:
        name = ".".join(str(p) for p in path) or None
        last = str(path[-1]) if path else None
        out.append({
            "field": name,
            "value": _echo(last, _lookup(data, path)) if path and data is not None else None,
            "rule": str(detail),
            "code": getattr(detail, "code", None) or "invalid",
        })
    return out


def summarise(errors: list[dict]) -> str:
    if not errors:
        return PROBLEM_TYPES["validation_error"][1]
    first = errors[0]
    text = f"{first['field']}: {first['rule']}" if first.get("field") else first["rule"]
    if first.get("row") is not None:
        text = f"row {first['row']}, {first.get('column') or 'file'}: {first['rule']}"
    return text + (f" (and {len(errors) - 1} more)" if len(errors) > 1 else "")


# --- the handler -------------------------------------------------------------------

_API_CODES = {
    exceptions.ParseError: "parse_error",
    exceptions.NotAuthenticated: "not_authenticated",
    exceptions.AuthenticationFailed: "authentication_failed",
    exceptions.PermissionDenied: "permission_denied",
    exceptions.NotFound: "not_found",
    exceptions.MethodNotAllowed: "method_not_allowed",
    exceptions.NotAcceptable: "not_acceptable",
    exceptions.UnsupportedMediaType: "unsupported_media_type",
    exceptions.Throttled: "throttled",
}
_BY_STATUS = {status: code for code, (status, _, _) in reversed(PROBLEM_TYPES.items())}


def _request_data(request):
    try:
        return request.data
    except Exception:  # the body itself was the problem
        return None


def _problem_for(exc, request) -> tuple[dict, dict]:
    """(body, headers) for an exception."""
    instance = getattr(request, "path", None)
    headers: dict = {}
    if isinstance(exc, ProblemError):
        return problem_body(exc.code, exc.detail, instance=instance, errors=exc.errors,
                            **exc.extra), dict(exc.headers)
    if isinstance(exc, DjangoValidationError):
        detail = exc.message_dict if hasattr(exc, "error_dict") else {"__all__": exc.messages}
        exc = exceptions.ValidationError(detail)
    elif isinstance(exc, IntegrityError):
        # A database constraint caught what validation did not: report it, never the SQL.
        log.warning("integrity error: %s", exc)
        diag = getattr(getattr(exc, "__cause__", None), "diag", None)
        constraint = getattr(diag, "constraint_name", None) or "a database constraint"
        errors = [{"field": None, "value": None, "rule": f"The record violates {constraint}.",
                   "code": "constraint"}]
        return problem_body("validation_error", summarise(errors), instance=instance,
                            errors=errors), headers
    elif isinstance(exc, Http404 | ObjectDoesNotExist):
        exc = exceptions.NotFound()
    elif isinstance(exc, PermissionDenied):
        exc = exceptions.PermissionDenied()
    elif isinstance(exc, RequestDataTooBig):
        return problem_body("payload_too_large", instance=instance), headers
    elif isinstance(exc, SuspiciousOperation):
        return problem_body("bad_request", instance=instance), headers

    if isinstance(exc, CalcInputError):
        # Inputs the records accept but a method refuses (found while recomputing).
        errors = [{"field": exc.argument, "value": None, "rule": exc.rule,
                   "code": "calculation"}]
        return problem_body("validation_error", summarise(errors), instance=instance,
                            errors=errors), headers
    if isinstance(exc, exceptions.ValidationError):
        errors = flatten_errors(exc.detail, _request_data(request))
        return problem_body("validation_error", summarise(errors), instance=instance,
                            errors=errors), headers
    if isinstance(exc, exceptions.APIException):
        code = next((c for cls, c in _API_CODES.items() if isinstance(exc, cls)), None)
        code = code or _BY_STATUS.get(exc.status_code, "bad_request")
        if getattr(exc, "auth_header", None):
            headers["WWW-Authenticate"] = exc.auth_header
        if getattr(exc, "wait", None):
            headers["Retry-After"] = str(int(exc.wait))
        status = exc.status_code if exc.status_code != PROBLEM_TYPES[code][0] else None
        detail = exc.detail if isinstance(exc.detail, str) else ""
        return problem_body(code, str(detail), instance=instance, status=status), headers
    if isinstance(exc, DatabaseError):
        # A marked request is run again by the middleware.
        if (mark_transient(request, exc) if request is not None
                else transient_database_error(exc)):
            log.warning("transaction aborted by the database (%s); retried", exc.__cause__)
        else:
            log.exception("database error")
        return problem_body("database_unavailable", instance=instance), {"Retry-After": "5"}
    log.error("unhandled error in %s", instance, exc_info=exc)
    return problem_body("server_error", instance=instance), headers


def set_rollback() -> None:
    """As DRF's `views.set_rollback`, which is not imported: DRF's views module reads the
    parser setting as it loads, and that names hazards.api.parsers, which imports this one."""
    for db in connections.all(initialized_only=True):
        if db.settings_dict["ATOMIC_REQUESTS"] and db.in_atomic_block:
            db.set_rollback(True)


def exception_handler(exc, context):
    request = context.get("request")
    try:
        body, headers = _problem_for(exc, request)
    except Exception:  # the mapping itself must never leak anything either
        log.exception("error while mapping an error")
        body, headers = problem_body("server_error"), {}
    set_rollback()
    return problem_response(body, headers)
