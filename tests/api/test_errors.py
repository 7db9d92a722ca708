"""Errors are RFC 9457 problem details; nothing internal ever leaves the server."""

from __future__ import annotations

import pytest
from django.urls import path
from rest_framework.views import APIView

from hazards.api.errors import exception_handler
from tests.factories import SiteFactory

pytestmark = pytest.mark.django_db
PROBLEM = "application/problem+json"


def _is_problem(resp, status, code):
    assert resp.status_code == status, resp.content
    assert resp["Content-Type"] == PROBLEM
    body = resp.json()
    assert {"type", "title", "status", "detail", "code"} <= set(body), body
    assert body["status"] == status and body["code"] == code
    assert body["type"] == f"/api/v1/problems/#{code}"
    return body


def test_a_bad_quantity_lists_field_value_rule_and_code(api):
    site = SiteFactory(code="north")
    resp = api.post("/api/v1/processes/", {"name": "P", "site": site.code}, format="json")
    process = resp.json()["id"]
    resp = api.post("/api/v1/steps/", {
        "process": process, "sequence": 1, "name": "S", "operation_mode": "batch",
        "process_temperature": "-300 degC", "reaction_mass": "1 t",
        "specific_heat_capacity": "2 kJ/(kg*K)", "system": "open",
        "operating_pressure": "1 bar", "unexpected_but_ignored": 1,
    }, format="json")
    body = _is_problem(resp, 400, "validation_error")
    assert body["errors"] == [{"field": "process_temperature", "value": "-300 degC",
                               "rule": "must be above absolute zero (0 K)",
                               "code": "out_of_range"}]
    assert body["detail"].startswith("process_temperature: must be above absolute zero")


def test_missing_fields_are_listed_one_by_one(api):
    body = _is_problem(api.post("/api/v1/vessels/", {"name": "V"}, format="json"), 400,
                       "validation_error")
    fields = {e["field"] for e in body["errors"]}
    assert {"tag", "volume", "design_pressure"} <= fields
    assert {e["code"] for e in body["errors"]} == {"required"}


def test_a_database_rule_names_the_field_of_the_record(api):
    SiteFactory(code="north")
    resp = api.post("/api/v1/sites/", {"code": "north", "name": "Again"}, format="json")
    body = _is_problem(resp, 400, "validation_error")
    assert body["errors"][0]["field"] == "code"


def test_malformed_json_and_nan_literals_are_parse_errors(api):
    for raw in ('{"name": ', '{"name": NaN}'):
        resp = api.generic("POST", "/api/v1/sites/", raw, content_type="application/json")
        _is_problem(resp, 400, "parse_error")


def test_authentication_permission_not_found_method_and_media_type(anon_api, api, outsider):
    body = _is_problem(anon_api.get("/api/v1/steps/"), 401, "not_authenticated")
    assert anon_api.get("/api/v1/steps/")["WWW-Authenticate"] == "Token"
    assert "detail" in body
    anon_api.credentials(HTTP_AUTHORIZATION="Token nonsense")
    _is_problem(anon_api.get("/api/v1/steps/"), 401, "authentication_failed")
    anon_api.credentials()
    anon_api.force_authenticate(outsider)
    _is_problem(anon_api.post("/api/v1/sites/", {"code": "x", "name": "x"}, format="json"), 403,
                "permission_denied")
    _is_problem(api.get("/api/v1/steps/999999/"), 404, "not_found")
    _is_problem(api.put("/api/v1/steps/", {}, format="json"), 405, "method_not_allowed")
    _is_problem(api.post("/api/v1/sites/", "code=x", content_type="text/plain"), 415,
                "unsupported_media_type")


class Boom(APIView):
    permission_classes: list = []

    def get(self, request):
        raise RuntimeError("secret path /srv/app/settings.py password=hunter2")


urlpatterns = [path("boom/", Boom.as_view())]


@pytest.mark.urls("tests.api.test_errors")
def test_an_unexpected_error_is_a_generic_500_without_internals(client, caplog):
    resp = client.get("/boom/")
    body = _is_problem(resp, 500, "server_error")
    text = resp.content.decode()
    for leak in ("secret", "hunter2", "Traceback", "RuntimeError", "settings.py"):
        assert leak not in text
    assert body["detail"] == "Something failed on the server; it has been logged. Nothing was saved."
    assert "RuntimeError" in caplog.text  # logged on the server side


def test_the_handler_survives_an_exception_that_breaks_the_mapping():
    class Weird(Exception):
        def __str__(self):
            raise ValueError("no")

    resp = exception_handler(Weird(), {"request": None})
    assert resp.status_code == 500 and resp["Content-Type"] == PROBLEM


def test_the_problem_catalogue_is_public(anon_api):
    resp = anon_api.get("/api/v1/problems/")
    assert resp.status_code == 200
    codes = {p["code"]: p["status"] for p in resp.json()}
    assert codes["precondition_failed"] == 412 and codes["precondition_required"] == 428
    assert codes["idempotency_key_reused"] == 422


def test_a_lone_surrogate_in_json_is_a_parse_error_not_a_crash(api):
    # "\ud800" is half a UTF-16 pair: valid JSON escape, invalid Unicode for PostgreSQL.
    for body, field in (('{"code": "x", "name": "\\ud800"}', "name"),
                        ('{"\\udfff": 1}', "(a key)")):
        resp = api.generic("POST", "/api/v1/sites/", body, content_type="application/json")
        assert _is_problem(resp, 400, "parse_error")["errors"][0]["field"] == field


def test_a_nul_character_in_json_is_a_parse_error_and_nothing_is_saved(api):
    # "\u0000" is valid JSON; PostgreSQL stores no NUL in text or jsonb (the fuzzer's import
    # body reached the database with one and got a 503).
    from hazards.models import Process, Site

    before = (Site.objects.count(), Process.objects.count())
    for url, body, field in (
            ("/api/v1/sites/", '{"code": "x", "name": "a\\u0000b"}', "name"),
            ("/api/v1/processes/import/", '{"format": "exoledger-process", "version": 1, '
             '"process": {"name": "\\u0000"}, "steps": []}', "process.name")):
        resp = api.generic("POST", url, body, content_type="application/json")
        problem = _is_problem(resp, 400, "parse_error")
        assert "NUL" in problem["detail"] and f"'{field}'" in problem["detail"]
        assert problem["errors"][0]["field"] == field
    assert (Site.objects.count(), Process.objects.count()) == before


@pytest.mark.parametrize("unit", ["(", "1/(", "kg)", "**"])
def test_a_unit_pint_cannot_even_tokenise_is_a_400(api, unit):
    resp = api.post("/api/v1/vessels/", {"name": "V", "tag": "V-1",
                                         "volume": {"value": 1, "unit": unit}}, format="json")
    body = _is_problem(resp, 400, "validation_error")
    volume = next(e for e in body["errors"] if e["field"] == "volume")
    assert volume["code"] == "unknown_unit"
