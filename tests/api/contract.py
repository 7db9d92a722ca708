"""Check real responses against the served OpenAPI document with a maintained validator.

`Contract(spec)` finds the operation of a request (method and path template), refuses a
status the operation does not declare, a media type it does not declare for that status,
a missing declared header, and a body that the declared schema refuses
(openapi-schema-validator's `OAS30Validator`, which reads `nullable`, `readOnly` and formats
as OpenAPI 3.0 means them). `ContractClient` is DRF's test client with every response so
checked and recorded, so a test can ask which (operation, status) pairs it has seen.
"""

from __future__ import annotations

import json
import re

from openapi_schema_validator import OAS30Validator
from referencing import Registry, Resource
from referencing.jsonschema import DRAFT4
from rest_framework.test import APIClient

SPEC_URI = "urn:exoledger-openapi"
METHODS = ("get", "put", "patch", "post", "delete")


class Contract:
    def __init__(self, spec: dict):
        self.spec = spec
        self.registry = Registry().with_resource(SPEC_URI, Resource(spec, specification=DRAFT4))
        routes = []
        for template in spec["paths"]:
            pattern = re.sub(r"\\\{[^}]+\\\}", "[^/]+", re.escape(template))
            routes.append((template.count("{"), template, re.compile(f"^{pattern}$")))
        self.routes = sorted(routes)  # literal segments win over parameters
        self.seen: dict[tuple[str, str], set[int]] = {}

    def operations(self):
        for template, item in self.spec["paths"].items():
            for method in METHODS:
                if method in item:
                    yield method, template, item[method]

    def template_of(self, path: str) -> str | None:
        for _, template, pattern in self.routes:
            if pattern.match(path):
                return template
        return None

    def problems(self, method: str, path: str, response) -> list[str]:
        """Every way the response departs from the document (empty: it conforms)."""
        method = method.lower()
        template = self.template_of(path)
        if template is None or method not in self.spec["paths"][template]:
            return [f"{method.upper()} {path}: no such operation in the schema"]
        op = self.spec["paths"][template][method]
        where = f"{method.upper()} {template} -> {response.status_code}"
        self.seen.setdefault((method, template), set()).add(response.status_code)
        declared = op["responses"].get(str(response.status_code), op["responses"].get("default"))
        if declared is None:
            return [
                f"{where}: status not declared (declared: {sorted(op['responses'])}); "
                f"body {response.content[:300]!r}"
            ]
        found = []
        for name, header in declared.get("headers", {}).items():
            if header.get("required") and not response.has_header(name):
                found.append(f"{where}: declared header {name} missing")
        content = declared.get("content")
        if not content:
            if response.content:
                found.append(f"{where}: a body where none is declared")
            return found
        media = response.get("Content-Type", "").split(";")[0].strip()
        if media not in content:
            return [*found, f"{where}: media type {media!r} not declared ({sorted(content)})"]
        schema = content[media].get("schema")
        if schema is None or not media.endswith("json"):
            return found
        body = json.loads(response.content)
        validator = OAS30Validator(
            self._resolved(schema),
            registry=self.registry,
            format_checker=OAS30Validator.FORMAT_CHECKER,
        )
        for error in sorted(validator.iter_errors(body), key=lambda e: list(e.path))[:5]:
            at = "/".join(str(p) for p in error.absolute_path)
            found.append(f"{where}: body at /{at}: {error.message[:300]}")
        return found

    def _resolved(self, schema: dict) -> dict:
        if "$ref" in schema:
            return {"$ref": SPEC_URI + schema["$ref"]}
        return json.loads(json.dumps(schema).replace('"$ref": "#', f'"$ref": "{SPEC_URI}#'))


class ContractClient(APIClient):
    """An APIClient whose every response is checked against the contract."""

    def __init__(self, contract: Contract, failures: list[str], **kwargs):
        super().__init__(**kwargs)
        self.contract = contract
        self.failures = failures

    def request(self, **request):
        response = super().request(**request)
        self.failures.extend(
            self.contract.problems(
                response.request["REQUEST_METHOD"], response.request["PATH_INFO"], response
            )
        )
        return response
