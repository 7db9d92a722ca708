"""Idempotency-Key: one effect per key and user; the first response replayed."""

from __future__ import annotations

import pytest
from rest_framework.test import APIClient

from hazards import models as m
from hazards.integration.models import IdempotencyKey
from tests.conftest import make_user

from .test_concurrency import _run_threads

BODY = {"code": "north", "name": "North works"}


@pytest.mark.django_db
def test_the_same_key_and_body_replays_the_first_response(api):
    first = api.post("/api/v1/sites/", BODY, format="json", HTTP_IDEMPOTENCY_KEY="k-1")
    assert first.status_code == 201
    again = api.post("/api/v1/sites/", BODY, format="json", HTTP_IDEMPOTENCY_KEY="k-1")
    assert again.status_code == 201 and again.json() == first.json()
    assert again["Idempotent-Replayed"] == "true" and again["ETag"] == first["ETag"]
    assert m.Site.objects.count() == 1
    row = IdempotencyKey.objects.get()
    assert (row.key, row.method, row.response_status) == ("k-1", "POST", 201)


@pytest.mark.django_db
def test_the_same_key_with_another_body_or_path_is_a_422(api):
    api.post("/api/v1/sites/", BODY, format="json", HTTP_IDEMPOTENCY_KEY="k-1")
    other = api.post("/api/v1/sites/", {**BODY, "name": "Else"}, format="json",
                     HTTP_IDEMPOTENCY_KEY="k-1")
    assert other.status_code == 422 and other.json()["code"] == "idempotency_key_reused"
    elsewhere = api.post("/api/v1/solvents/", {"name": "Water", "cas_number": "7732-18-5"},
                         format="json", HTTP_IDEMPOTENCY_KEY="k-1")
    assert elsewhere.status_code == 422
    assert m.Site.objects.get().name == "North works" and not m.Solvent.objects.exists()


@pytest.mark.django_db
def test_keys_are_per_user_and_failed_requests_keep_no_key(api):
    bad = api.post("/api/v1/sites/", {"code": "north"}, format="json", HTTP_IDEMPOTENCY_KEY="k")
    assert bad.status_code == 400 and not IdempotencyKey.objects.exists()
    assert api.post("/api/v1/sites/", BODY, format="json",
                    HTTP_IDEMPOTENCY_KEY="k").status_code == 201
    other = APIClient()
    other.force_authenticate(make_user("second", superuser=True))
    resp = other.post("/api/v1/sites/", {"code": "south", "name": "South"}, format="json",
                      HTTP_IDEMPOTENCY_KEY="k")
    assert resp.status_code == 201 and m.Site.objects.count() == 2
    too_long = api.post("/api/v1/sites/", BODY, format="json", HTTP_IDEMPOTENCY_KEY="x" * 256)
    assert too_long.status_code == 400


@pytest.mark.django_db(transaction=True)
def test_two_concurrent_requests_with_one_key_have_one_effect():
    admin = make_user("admin", superuser=True)

    def post(i):
        client = APIClient()
        client.force_authenticate(admin)
        return client.post("/api/v1/sites/", BODY, format="json", HTTP_IDEMPOTENCY_KEY="race")

    responses = _run_threads(4, post)
    assert [r.status_code for r in responses] == [201] * 4, [r.content for r in responses]
    assert all(r.json() == responses[0].json() for r in responses)
    assert sum(r.has_header("Idempotent-Replayed") for r in responses) == 3
    assert m.Site.objects.count() == 1 and IdempotencyKey.objects.count() == 1
