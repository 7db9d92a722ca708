"""Post-processing of the generated OpenAPI document, so that strict tools read it as meant.

OpenAPI 3.0.3 lets `nullable: true` add null only to the `type` of the same schema object;
beside `allOf`, `oneOf` or a `$ref` without a `type` it is ignored by strict validators
(openapi-schema-validator refuses a null there). Such schemas are rewritten as `oneOf` with
an explicit null alternative, which validators honour and client generators read as
`X | None` (checked with openapi-python-client and openapi-schema-validator in
tests/api/test_generated_client.py and tests/api/test_contract.py).
"""

from __future__ import annotations

NULL_SCHEMA = {"type": "object", "nullable": True, "enum": [None], "description": "null: no value."}


def _null_alternative(schema: dict) -> None:
    if not schema.get("nullable") or "type" in schema:
        return
    if "allOf" in schema and len(schema["allOf"]) == 1:
        schema["oneOf"] = [schema.pop("allOf")[0], dict(NULL_SCHEMA)]
    elif "oneOf" in schema or "anyOf" in schema:
        key = "oneOf" if "oneOf" in schema else "anyOf"
        if not any(
            alt.get("enum") == [None] or alt.get("$ref", "").endswith("/NullEnum")
            for alt in schema[key]
        ):
            schema[key] = [*schema[key], dict(NULL_SCHEMA)]
    else:
        return  # no type at all: any JSON value, null included
    schema.pop("nullable")


def _walk(node) -> None:
    if isinstance(node, dict):
        _null_alternative(node)
        for value in node.values():
            _walk(value)
    elif isinstance(node, list):
        for value in node:
            _walk(value)


def honour_nullable(result, generator, request, public):
    _walk(result)
    return result
