"""The OpenAPI document: valid, warning-free, complete; the docs page works offline."""

from __future__ import annotations

import re

import pytest
import yaml
from django.contrib.staticfiles import finders
from django.core.management import call_command
from openapi_spec_validator import validate

pytestmark = pytest.mark.django_db


@pytest.fixture(scope="module")
def schema(django_db_blocker):
    from drf_spectacular.generators import SchemaGenerator

    with django_db_blocker.unblock():
        return SchemaGenerator().get_schema(request=None, public=True)


def test_the_schema_generates_without_a_single_warning_and_validates(tmp_path):
    out = tmp_path / "schema.yml"
    # --fail-on-warn turns every drf-spectacular warning into an error (INTEGRITY.md §5.6).
    call_command("spectacular", "--validate", "--fail-on-warn", "--file", str(out))
    validate(yaml.safe_load(out.read_text()))


def test_the_schema_is_served_and_carries_the_caution(api):
    resp = api.get("/api/v1/schema/?format=json")
    assert resp.status_code == 200
    description = resp.json()["info"]["description"]
    assert "support and do not replace a qualified assessment" in " ".join(description.split())
    assert "Local codes" in description


def test_every_operation_documents_its_permission_and_problem_responses(schema):
    for path, item in schema["paths"].items():
        for method, op in item.items():
            assert "**Permission:**" in op.get("description", ""), (method, path)
            assert "401" in op["responses"] or op.get("security") == [{}], (method, path)
            for code, response in op["responses"].items():
                if code.startswith(("4", "5")):
                    assert list(response["content"]) == ["application/problem+json"], (code, path)
            if "{id}" in path:
                assert "404" in op["responses"], (method, path)


def test_writes_of_records_require_if_match_and_reads_return_an_etag(schema):
    step = schema["paths"]["/api/v1/steps/{id}/"]
    for method in ("put", "patch", "delete"):
        headers = {p["name"]: p for p in step[method]["parameters"] if p["in"] == "header"}
        assert headers["If-Match"]["required"] is True
        assert {"412", "428"} <= set(step[method]["responses"])
    assert "ETag" in step["get"]["responses"]["200"]["headers"]
    create = schema["paths"]["/api/v1/steps/"]["post"]
    assert "Idempotency-Key" in {p["name"] for p in create["parameters"]}
    assert {"409", "422"} <= set(create["responses"])


def test_quantity_fields_document_their_canonical_unit(schema):
    step = schema["components"]["schemas"]["Step"]["properties"]
    assert step["process_temperature"]["x-canonical-unit"] == "degC"
    assert step["process_temperature"]["properties"]["unit"]["enum"] == ["degC"]
    assert step["reaction_mass"]["x-canonical-unit"] == "kg"
    request = schema["components"]["schemas"]["StepRequest"]["properties"]
    assert len(request["process_temperature"]["oneOf"]) == 3
    assert "Canonical unit: degC" in request["process_temperature"]["description"]


def test_the_docs_page_loads_its_scripts_and_styles_from_our_own_static_files(api):
    resp = api.get("/api/v1/docs/")
    assert resp.status_code == 200
    html = resp.content.decode()
    assets = re.findall(r'(?:src|href)="([^"]+\.(?:js|css|png))"', html)
    assert any(a.endswith("swagger-ui-bundle.js") for a in assets), assets
    for asset in assets:
        assert asset.startswith("/static/"), asset  # nothing from a CDN
        assert finders.find(asset.removeprefix("/static/")), asset
    assert "https://" not in " ".join(assets)
