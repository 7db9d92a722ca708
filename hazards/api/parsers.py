"""The one bounded parser set of the API (the default of every view, `REST_FRAMEWORK`).

JSON bodies are limited to the upload limit (DRF does not apply Django's to its own
parsing), refused when nested too deeply for the decoder (a 400, not a RecursionError's
500), and refused when they carry text PostgreSQL cannot store (a lone UTF-16 surrogate,
a NUL), naming the field. Form and multipart bodies get the same text check.
"""

from __future__ import annotations

import io
import re

from django.conf import settings
from rest_framework import parsers
from rest_framework.parsers import get_encoding

from hazards.api.errors import ProblemError
from hazards.quantities import size_text

# Deeper than any document of this API; json's C decoder recurses per level.
MAX_DEPTH = 64


_STRING = re.compile(r'"(?:[^"\\]|\\.)*"')
_BRACKET = re.compile(r"[\[\]{}]")


def _depth_ok(text: str) -> bool:
    """Whether no array or object nests deeper than MAX_DEPTH (brackets in strings aside)."""
    if text.count("[") + text.count("{") <= MAX_DEPTH:
        return True
    depth = 0
    for match in _BRACKET.finditer(_STRING.sub("", text)):
        depth += 1 if match.group() in "[{" else -1
        if depth > MAX_DEPTH:
            return False
    return True


def refuse_unstorable_text(data, field: str = "") -> None:
    """JSON may escape half a UTF-16 pair (`"\\ud800"`) or a NUL (`"\\u0000"`); PostgreSQL
    stores neither in text or jsonb, so such a body is refused whole, naming the field (the
    fuzzer sent NULs through the process import, which reached the database as a 503)."""
    if isinstance(data, str):
        rule = (
            "no lone UTF-16 surrogate (invalid Unicode)"
            if any("\ud800" <= c <= "\udfff" for c in data)
            else "no NUL character (U+0000), which no text field can store"
            if "\x00" in data
            else None
        )
        if rule is not None:
            where = f"field '{field}'" if field else "body"
            raise ProblemError(
                "parse_error",
                f"The {where} breaks a rule of stored text: {rule}.",
                errors=[
                    {"field": field or None, "value": None, "rule": rule, "code": "invalid_text"}
                ],
            )
    elif hasattr(data, "lists"):  # QueryDict of a form
        for key, values in data.lists():
            refuse_unstorable_text(key, "(a key)")
            for value in values:
                refuse_unstorable_text(value, str(key))
    elif isinstance(data, dict):
        for key, value in data.items():
            refuse_unstorable_text(key, f"{field} (a key)" if field else "(a key)")
            refuse_unstorable_text(value, f"{field}.{key}" if field else str(key))
    elif isinstance(data, list):
        for index, value in enumerate(data):
            refuse_unstorable_text(value, f"{field}[{index}]")


def _refuse_oversized(parser_context) -> None:
    request = (parser_context or {}).get("request")
    length = request.META.get("CONTENT_LENGTH") if request is not None else None
    if length and length.isdigit() and int(length) > settings.DATA_UPLOAD_MAX_MEMORY_SIZE:
        raise ProblemError(
            "payload_too_large",
            f"The body is larger than the limit of {size_text(settings.DATA_UPLOAD_MAX_MEMORY_SIZE)}.",
        )


class LimitedJSONParser(parsers.JSONParser):
    """JSON up to the upload limit, MAX_DEPTH levels deep, with storable text only."""

    def parse(self, stream, media_type=None, parser_context=None):
        _refuse_oversized(parser_context)
        raw = stream.read(settings.DATA_UPLOAD_MAX_MEMORY_SIZE + 1) if stream else b""
        if len(raw) > settings.DATA_UPLOAD_MAX_MEMORY_SIZE:
            raise ProblemError(
                "payload_too_large",
                f"The body is larger than the limit of {size_text(settings.DATA_UPLOAD_MAX_MEMORY_SIZE)}.",
            )
        encoding = get_encoding(parser_context or {})
        try:
            text = raw.decode(encoding)
        except UnicodeDecodeError:
            raise ProblemError("parse_error", f"The body is not valid {encoding} text.") from None
        if not _depth_ok(text):
            raise ProblemError(
                "parse_error", f"The JSON is nested more than {MAX_DEPTH} levels deep."
            )
        try:
            data = super().parse(io.BytesIO(raw), media_type, parser_context)
        except RecursionError:  # a second guard: never a 500
            raise ProblemError("parse_error", "The JSON is nested too deeply.") from None
        refuse_unstorable_text(data)
        return data


class LimitedFormParser(parsers.FormParser):
    def parse(self, stream, media_type=None, parser_context=None):
        data = super().parse(stream, media_type, parser_context)
        refuse_unstorable_text(data)
        return data


class LimitedMultiPartParser(parsers.MultiPartParser):
    def parse(self, stream, media_type=None, parser_context=None):
        result = super().parse(stream, media_type, parser_context)
        refuse_unstorable_text(result.data)
        return result
