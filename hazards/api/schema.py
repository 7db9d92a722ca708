"""The OpenAPI side of the API: problem responses, precondition headers, quantity fields.

`ExoledgerAutoSchema` (settings `DEFAULT_SCHEMA_CLASS`) adds to every operation the problem
responses it can give (`application/problem+json`), the `ETag` / `If-Match` /
`Idempotency-Key` headers of the views that use them, and a line naming the permission the
operation needs. The quantity field documents its canonical unit per field
(`x-canonical-unit`) and the two shapes it has: any accepted input, one output object.
"""

from __future__ import annotations

from drf_spectacular.extensions import (
    OpenApiAuthenticationExtension,
    OpenApiSerializerFieldExtension,
)
from drf_spectacular.openapi import AutoSchema
from drf_spectacular.types import OpenApiTypes
from drf_spectacular.utils import OpenApiParameter
from rest_framework import permissions, serializers

from hazards.api.errors import PROBLEM_MEDIA_TYPE, PROBLEM_TYPES
from hazards.api.idempotency import REPLAYED
from hazards.api.pagination import SingleQueryValuesMixin
from hazards.quantities import SPECS, display_unit

# --- problem documents -------------------------------------------------------------


class ProblemItemSerializer(serializers.Serializer):
    field = serializers.CharField(allow_null=True, help_text="The refused field (dotted path), "
                                  "or null for the record as a whole.")
    value = serializers.JSONField(allow_null=True, help_text="The value as submitted (secrets "
                                  "and long values are not echoed).")
    rule = serializers.CharField(help_text="The rule the value breaks, in words.")
    code = serializers.CharField(help_text="Machine-readable code of the rule.")
    row = serializers.IntegerField(required=False, allow_null=True,
                                   help_text="Uploaded files: the record number, header = 1.")
    column = serializers.CharField(required=False, allow_null=True,
                                   help_text="Uploaded files: the column as named in the header.")


class ProblemSerializer(serializers.Serializer):
    """RFC 9457 problem details."""

    type = serializers.CharField(help_text="URI reference of the problem type "
                                 "(`/api/v1/problems/#<code>`).")
    title = serializers.CharField()
    status = serializers.IntegerField()
    detail = serializers.CharField()
    code = serializers.ChoiceField(choices=sorted(PROBLEM_TYPES))
    instance = serializers.CharField(required=False, help_text="The request path.")
    errors = ProblemItemSerializer(many=True, required=False)
    current_etag = serializers.CharField(required=False, help_text="412 only: the record's "
                                         "current ETag.")


# --- authentication ------------------------------------------------------------------


class HashedTokenScheme(OpenApiAuthenticationExtension):
    target_class = "hazards.api.auth.HashedTokenAuthentication"
    name = "tokenAuth"

    def get_security_definition(self, auto_schema):
        return {
            "type": "apiKey",
            "in": "header",
            "name": "Authorization",
            "description": "`Authorization: Token <token>`. Tokens come from "
                           "`POST /api/v1/auth/token/` or `manage.py service_account issue`; "
                           "the server keeps only their SHA-256, and they expire "
                           "(EXOLEDGER_API_TOKEN_TTL_HOURS) or are revoked.",
        }


# --- quantities ----------------------------------------------------------------------


def quantity_output_schema(kind: str, nullable: bool = False) -> dict:
    unit = display_unit(kind)
    schema = {
        "type": "object",
        "properties": {
            "value": {"type": "number"},
            "unit": {"type": "string", "enum": [unit]},
        },
        "required": ["value", "unit"],
        "x-canonical-unit": unit,
    }
    if nullable:
        schema["nullable"] = True
    return schema


def quantity_input_schema(kind: str, nullable: bool = False) -> dict:
    spec = SPECS[kind]
    unit = display_unit(kind)
    props = {
        "value": {"type": "number"},
        "unit": {"type": "string", "description": f"Any unit compatible with {unit or '1'}."},
    }
    if spec.accepts_molar:
        props["molar_mass"] = {
            "description": "For a molar heat (e.g. kJ/mol): the molar mass it refers to, "
                           "itself a quantity (`\"150 g/mol\"`).",
            "oneOf": [{"type": "string"}, {"type": "number"},
                      {"type": "object", "properties": {"value": {"type": "number"},
                                                        "unit": {"type": "string"}},
                       "required": ["value"], "additionalProperties": False}],
        }
    schema = {
        "oneOf": [
            {"type": "object", "properties": props, "required": ["value"],
             "additionalProperties": False},
            {"type": "string", "example": f"1 {unit}".strip(),
             "description": "A number followed by a unit."},
            {"type": "number", "description": f"In the canonical unit ({unit or '1'})."},
        ],
        "x-canonical-unit": unit,
    }
    if nullable:
        schema["nullable"] = True
    return schema


class QuantityFieldExtension(OpenApiSerializerFieldExtension):
    target_class = "hazards.api.fields.QuantityField"
    match_subclasses = True

    def map_serializer_field(self, auto_schema, direction):
        field = self.target
        nullable = bool(getattr(field, "allow_null", False))
        if getattr(field, "form_only", False):
            return {"type": "string", "description": str(field.help_text or ""),
                    "example": f"1 {display_unit(field.kind)}".strip(),
                    "x-canonical-unit": display_unit(field.kind)}
        if direction == "response":
            schema = quantity_output_schema(field.kind, nullable)
        else:
            schema = quantity_input_schema(field.kind, nullable)
        if field.help_text:
            schema["description"] = str(field.help_text)
        return schema


# --- operations ----------------------------------------------------------------------

ETAG_HEADER = OpenApiParameter(
    "ETag", OpenApiTypes.STR, OpenApiParameter.HEADER, response=[200, 201], required=True,
    description="The record's version; send it back in `If-Match` to change or delete it.",
)
IF_MATCH = OpenApiParameter(
    "If-Match", OpenApiTypes.STR, OpenApiParameter.HEADER, required=True,
    description="The `ETag` of the representation being changed. Missing: 428; stale: 412.",
)
IF_MATCH_OPTIONAL = OpenApiParameter(
    "If-Match", OpenApiTypes.STR, OpenApiParameter.HEADER, required=False,
    description="Optional: the `ETag` of the parent record; when given, a stale one gets 412.",
)
IDEMPOTENCY_KEY = OpenApiParameter(
    "Idempotency-Key", OpenApiTypes.STR, OpenApiParameter.HEADER, required=False,
    description="Any 1-255 printable ASCII characters. Retrying with the same key and body "
                "returns the first response (status and body) without a second effect; "
                "the same key with another body gets 422. Keys are kept 24 h per user.",
)


RETRY_AFTER = {"schema": {"type": "integer", "minimum": 0},
               "description": "Seconds to wait before trying again."}


def describe_permissions(view, method: str) -> str:
    parts = []
    for perm in view.get_permissions():
        describe = getattr(perm, "describe", None)
        if describe is not None:
            text = describe(view, method)
        elif isinstance(perm, permissions.AllowAny):
            text = "none (public)"
        elif isinstance(perm, permissions.IsAdminUser):
            text = "a staff account"
        elif isinstance(perm, permissions.IsAuthenticated):
            text = "signed in (token or session)"
        else:
            text = perm.__class__.__name__
        if text:
            parts.append(text)
    return "; ".join(dict.fromkeys(parts)) or "none (public)"


class ExoledgerAutoSchema(AutoSchema):
    def map_parsers(self):
        """One request body per operation: JSON, or multipart where a file is uploaded.

        DRF's default parsers would also declare form and multipart bodies for every write;
        client generators then emit one model per media type (or always send multipart)."""
        types = super().map_parsers()
        if "application/json" in types:
            return ["application/json"]
        return [t for t in types if t == "multipart/form-data"] or types

    def _is_detail(self) -> bool:
        return "{" in self.path

    def _uses_etag(self) -> bool:
        return bool(getattr(self.view, "etag_enabled", False))

    def _write(self) -> bool:
        return self.method in ("PUT", "PATCH", "DELETE")

    def get_override_parameters(self):
        params = list(super().get_override_parameters())
        if self._uses_etag():
            # A plain APIView (no action) that keeps the contract reads one representation.
            action = getattr(self.view, "action", None) or (
                "retrieve" if self.method == "GET" else None)
            if self.method == "GET" and action == "retrieve":
                params.append(ETAG_HEADER)
            elif self.method in ("PUT", "PATCH"):
                params += [IF_MATCH, ETAG_HEADER]
            elif self.method == "DELETE":
                params.append(IF_MATCH)
            elif self.method == "POST" and action == "create":
                params.append(ETAG_HEADER)
        if self.method == "POST" and getattr(self.view, "idempotent_actions", None) and (
            self.view.idempotent_actions == "*"
            or getattr(self.view, "action", None) in self.view.idempotent_actions
        ):
            params.append(IDEMPOTENCY_KEY)
        extra = getattr(self.view, "extra_header_parameters", {})
        params += extra.get(getattr(self.view, "action", None) or self.method.lower(), [])
        return params

    def _session_only(self) -> bool:
        return getattr(self.view, "action", None) in getattr(self.view, "session_only_actions",
                                                                 ())

    def get_auth(self):
        if not getattr(self.view, "authentication_classes", None):
            return [{}]  # open to anyone, e.g. the token exchange itself
        auth = super().get_auth()
        if self._session_only():  # signing: a person signed in, never a token
            auth = [a for a in auth if "tokenAuth" not in a]
        return auth

    def get_operation(self, *args, **kwargs):
        operation = super().get_operation(*args, **kwargs)
        if operation is not None:
            text = operation.get("description", "")
            perm = describe_permissions(self.view, self.method)
            if self._session_only():
                perm = ("a person signed in with a session (the signing page or a session "
                        "cookie) who re-enters the password; requests authenticated by an API "
                        "token are refused (403), service accounts never sign")
            operation["description"] = f"{text}\n\n**Permission:** {perm}.".strip()
            queries = [p for p in operation.get("parameters", []) if p["in"] == "query"]
            if (self.method == "GET" or (self.method == "POST" and not self._takes_body())) \
                    and not queries and not isinstance(self.view, SingleQueryValuesMixin) \
                    and not self._filters_every_read():
                operation["responses"].pop("400", None)  # nothing the request could get wrong
        return operation

    def _takes_body(self) -> bool:
        return self.method in ("POST", "PUT", "PATCH") and (
            self.get_request_serializer() is not None)

    def _filters_every_read(self) -> bool:
        """django-filter also runs on detail routes (DRF's get_object filters the queryset),
        so a malformed filter value is a 400 there too."""
        return bool(getattr(self.view, "filterset_fields", None)
                    or getattr(self.view, "filterset_class", None)) and bool(
            getattr(self.view, "filter_backends", None))

    def _reads_can_be_refused(self) -> bool:
        """A signed-in person is refused a read only by a permission that says so; the
        others hide what is not theirs (404) instead."""
        return any(not isinstance(p, (permissions.IsAuthenticated, permissions.AllowAny))
                   and not getattr(p, "allows_every_read", False)
                   for p in self.view.get_permissions())

    def _error_codes(self) -> dict[int, list[str]]:
        """The problems an operation can answer with (and only those: each is produced by
        tests/api/test_contract.py)."""
        perms = self.view.get_permissions()
        public = any(isinstance(p, permissions.AllowAny) for p in perms)
        authenticates = bool(getattr(self.view, "authentication_classes", None))
        codes: dict[int, list[str]] = {400: ["validation_error", "parse_error", "bad_request"]}
        if authenticates:
            codes[401] = ["not_authenticated", "authentication_failed"]
        if public and not authenticates and self.method == "POST":
            codes[403] = ["permission_denied", "authentication_failed"]
        elif not public and (self.method != "GET" or self._reads_can_be_refused()):
            codes[403] = ["permission_denied"]
        if self._is_detail():
            codes[404] = ["not_found"]
        idempotent = self.method == "POST" and IDEMPOTENCY_KEY in self.get_override_parameters()
        if self._takes_body() or idempotent:
            codes[413] = ["payload_too_large"]
        if self._takes_body():
            codes[415] = ["unsupported_media_type"]
        if self._uses_etag() and self._write():
            codes[412] = ["precondition_failed"]
            codes[428] = ["precondition_required"]
        action = getattr(self.view, "action", None) or self.method.lower()
        extra_problems = getattr(self.view, "extra_problems", {})
        for status, extra in extra_problems.get(
            f"{action}:{self.method.lower()}", extra_problems.get(action, {})
        ).items():
            codes.setdefault(status, []).extend(extra)
        if idempotent:
            codes.setdefault(409, []).append("idempotency_key_in_progress")
            codes.setdefault(422, []).append("idempotency_key_reused")
        codes[503] = ["database_unavailable"]
        return codes

    def _get_response_headers_for_code(self, status_code, direction="response"):
        headers = super()._get_response_headers_for_code(status_code, direction)
        code = str(status_code)
        idempotent = self.method == "POST" and IDEMPOTENCY_KEY in self.get_override_parameters()
        if code == "503":
            headers["Retry-After"] = {**RETRY_AFTER, "required": True}
        elif code == "429" or (code == "409" and idempotent):
            headers["Retry-After"] = dict(RETRY_AFTER)
        elif code == "412" and self._uses_etag():
            headers["ETag"] = {"schema": {"type": "string"}, "required": True,
                               "description": "The record's current ETag."}
        elif code.startswith("2") and idempotent:
            headers[REPLAYED] = {
                "schema": {"type": "string", "enum": ["true"]},
                "description": "`true` when this is the stored response of an earlier request "
                               "with the same Idempotency-Key (nothing was done again); absent "
                               "otherwise."}
        return headers

    def _get_response_bodies(self, direction="response"):
        responses = super()._get_response_bodies(direction)
        for status, codes in sorted(self._error_codes().items()):
            key = str(status)
            if key in responses:
                continue
            response = self._get_response_for_code(
                ProblemSerializer, key, media_types=[PROBLEM_MEDIA_TYPE], direction=direction
            )
            response["description"] = "Problem details, `code` one of " + ", ".join(
                f"`{c}`" for c in dict.fromkeys(codes)
            )
            responses[key] = response
        return responses
