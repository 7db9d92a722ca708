"""Small middleware of our own."""

from __future__ import annotations

import io
import random
import time

from django.conf import settings
from django.core.exceptions import RequestDataTooBig
from django.db import connection
from django.shortcuts import render

from hazards.api.errors import problem_body, problem_response
from hazards.api.transient import (  # noqa: F401  (tests and callers name them here)
    RETRY_ATTEMPTS,
    TRANSIENT_SQLSTATES,
    mark_transient,
    transient_database_error,
)
from hazards.quantities import size_text


class ApiNoStoreMiddleware:
    """API responses carry records that may be confidential: never store them in caches."""

    def __init__(self, get_response):
        self.get_response = get_response

    def __call__(self, request):
        response = self.get_response(request)
        if request.path.startswith("/api/"):
            response["Cache-Control"] = "no-store"
            response.setdefault("Pragma", "no-cache")
        return response


class RetryTransientDatabaseErrors:
    """Run a request again, up to RETRY_ATTEMPTS times in all, when its transaction was the
    victim of a deadlock or serialization failure: nothing of it was committed (no request
    runs inside an open transaction here), so the whole request is repeated on a fresh copy
    of its body. Only when every attempt fails does the client see the 503."""

    def __init__(self, get_response):
        self.get_response = get_response

    def __call__(self, request):
        if request.method in ("GET", "HEAD", "OPTIONS"):
            return self._run(request, None)
        try:
            body = request.body  # read once (bounded by the upload limit), replayed per attempt
        except RequestDataTooBig:
            return self.get_response(request)  # refused further in, as before; nothing read
        return self._run(request, body)

    def _run(self, request, body):
        for attempt in range(1, RETRY_ATTEMPTS + 1):
            if body is not None:
                request._stream = io.BytesIO(body)
                request._read_started = False
                for cached in ("_post", "_files", "_data"):
                    request.__dict__.pop(cached, None)
            request._exo_transient_db_error = False
            response = self.get_response(request)
            if (not request._exo_transient_db_error or attempt == RETRY_ATTEMPTS
                    or connection.in_atomic_block):
                return response
            time.sleep(random.uniform(0.005, 0.05) * attempt)  # let the winner commit
        return response

    def process_exception(self, request, exception):
        mark_transient(request, exception)


class RefuseOversizedBodies:
    """Refuse a request whose declared body is above the upload limit before a byte of it is
    read, with the limit stated: a problem (413) for the API, a page for the browser. Without
    this, a page upload over the limit met Django's bare 400 and the API a parser's message."""

    def __init__(self, get_response):
        self.get_response = get_response

    def __call__(self, request):
        length = request.META.get("CONTENT_LENGTH") or ""
        limit = settings.DATA_UPLOAD_MAX_MEMORY_SIZE
        if not (length.isdigit() and limit is not None and int(length) > limit):
            return self.get_response(request)
        size = size_text(int(length))
        detail = f"The request body ({size}) is larger than the limit of {size_text(limit)}."
        if request.path.startswith("/api/"):
            return problem_response(problem_body("payload_too_large", detail, errors=[{
                "field": "body", "value": int(length), "code": "too_large",
                "rule": f"must not be larger than {size_text(limit)}"}]))
        response = render(request, "413.html", {"detail": detail}, status=413)
        response["Connection"] = "close"  # the unread body must not be taken for a request
        return response
