"""Access: every operation of the OpenAPI schema refuses anonymous callers; every detail route
refuses the author of another process; read-only fields cannot be mass-assigned."""

from __future__ import annotations

import io
import json
import re

import pytest
from rest_framework.test import APIClient

from tests.conftest import PASSWORD, make_user
from tests.hardening.conftest import AUTHOR_PERMS

# Operations that are public on purpose: getting a token, and the list of problem types.
PUBLIC = {("POST", "/api/v1/auth/token/"), ("GET", "/api/v1/problems/")}
METHODS = ("get", "post", "put", "patch", "delete")


@pytest.fixture(scope="module")
def schema(django_db_setup, django_db_blocker):
    with django_db_blocker.unblock():
        admin = make_user("schema-reader", superuser=True)
        client = APIClient()
        client.force_authenticate(admin)
        response = client.get("/api/v1/schema/?format=json")
        admin.delete()
    assert response.status_code == 200
    return response.json()


def operations(schema):
    for path, ops in schema["paths"].items():
        for method in METHODS:
            if method in ops:
                yield method.upper(), path


def test_the_schema_lists_the_routes_this_test_relies_on(schema):
    ops = set(operations(schema))
    assert len(ops) > 60
    assert ("PATCH", "/api/v1/steps/{id}/") in ops
    assert ("POST", "/api/v1/calorimetry-runs/{id}/series/") in ops


@pytest.mark.django_db
def test_every_operation_refuses_an_anonymous_request(schema, world_in_tx):
    anonymous = APIClient()
    refused, wrong = 0, []
    for method, path in operations(schema):
        if (method, path) in PUBLIC:
            continue
        url = re.sub(r"\{[^}]+\}", lambda m: "hazards.reactionstep"
                     if m.group(0) == "{label}" else str(world_in_tx["mine"]["step"].pk), path)
        response = anonymous.generic(method, url, data="{}", content_type="application/json")
        if response.status_code in (401, 403):
            refused += 1
        else:
            wrong.append((method, path, response.status_code))
    assert not wrong, wrong
    assert refused > 60


# A detail route and the object of "mine" it is asked about, as the author of "theirs".
def _detail_urls(schema, w):
    ids = {"processes": w["mine"]["process"].pk, "steps": w["mine"]["step"].pk,
           "calorimetry-runs": w["mine"]["run"].pk, "decomposition-tests": w["mine"]["test"].pk,
           "dossiers": w["dossier"].pk, "revisions": w["revision"].pk,
           "history": w["mine"]["step"].pk, "findings": w["finding"].pk}
    for method, path in operations(schema):
        match = re.match(r"^/api/v1/([^/]+)/(\{label\}/)?\{id\}/", path)
        if not match or match.group(1) not in ids:
            continue
        url = path.replace("{label}", "hazards.reactionstep").replace(
            "{id}", str(ids[match.group(1)]))
        yield method, path, url


@pytest.mark.django_db
def test_every_detail_route_refuses_the_author_of_another_process(schema, world_in_tx):
    other = APIClient()
    other.force_authenticate(world_in_tx["theirs"]["user"])
    checked, wrong = 0, []
    for method, path, url in _detail_urls(schema, world_in_tx):
        # Bodies that pass validation, so that the object lookup is what answers.
        if path.endswith("/series/") and method == "POST":
            response = other.post(url, {"file": io.BytesIO(b"time [s]\n0\n"),
                                        "initial_mass": "1 g", "feed_mass": "1 g"},
                                  format="multipart")
        else:
            body = {"password": PASSWORD, "reason": "hardening", "meaning": "reviewed",
                    "text": "a note", "status": "resolved"}
            if path.endswith("/diff/"):
                url += f"?against={world_in_tx['revision'].pk}"
            response = other.generic(method, url, data=json.dumps(body),
                                     content_type="application/json", HTTP_IF_MATCH='"x-1-v1"')
        checked += 1
        if response.status_code not in (403, 404):
            wrong.append((method, path, response.status_code))
    assert not wrong, wrong
    assert checked >= 25
    # ... while the same routes answer the process's own author.
    mine = APIClient()
    mine.force_authenticate(world_in_tx["mine"]["user"])
    step = world_in_tx["mine"]["step"].pk
    assert mine.get(f"/api/v1/steps/{step}/").status_code == 200


def _stored(model, pk, fields):
    return dict(model.objects.filter(pk=pk).values(*fields).get())


@pytest.mark.django_db
def test_read_only_fields_of_a_step_cannot_be_mass_assigned(world_in_tx):
    from hazards.models import ReactionStep

    me = world_in_tx["mine"]
    client = APIClient()
    client.force_authenticate(me["user"])
    fields = ["version", "needs_review", "approved_inputs_hash", "created_at", "updated_at",
              "process_id", "id"]
    before = _stored(ReactionStep, me["step"].pk, fields)
    etag = client.get(f"/api/v1/steps/{me['step'].pk}/")["ETag"]
    response = client.patch(f"/api/v1/steps/{me['step'].pk}/", {
        "version": 999, "needs_review": True, "approved_inputs_hash": "f" * 64,
        "created_at": "2000-01-01T00:00:00Z", "updated_at": "2000-01-01T00:00:00Z",
        "id": 424242, "indicators": {"mtsr": {"value": 1, "unit": "K"}},
    }, format="json", HTTP_IF_MATCH=etag)
    assert response.status_code in (200, 400), response.content
    after = _stored(ReactionStep, me["step"].pk, fields)
    if response.status_code == 200:  # ignored: only the version moves, by one
        assert after["version"] in (before["version"], before["version"] + 1)
        after["version"] = before["version"]
        after["updated_at"] = before["updated_at"]
    assert after == before


@pytest.mark.django_db
def test_read_only_fields_of_a_run_a_dossier_and_a_revision_cannot_be_mass_assigned(
        world_in_tx):
    from hazards.dossier.models import Dossier
    from hazards.models import CalorimetryRun
    from hazards.review.models import ProcessRevision

    w = world_in_tx
    client = APIClient()
    client.force_authenticate(w["mine"]["user"])
    run_fields = ["raw_file_sha256", "version", "created_at"]
    before = _stored(CalorimetryRun, w["mine"]["run"].pk, run_fields)
    etag = client.get(f"/api/v1/calorimetry-runs/{w['mine']['run'].pk}/")["ETag"]
    client.patch(f"/api/v1/calorimetry-runs/{w['mine']['run'].pk}/",
                 {"raw_file_sha256": "0" * 64, "created_at": "2000-01-01T00:00:00Z"},
                 format="json", HTTP_IF_MATCH=etag)
    after = _stored(CalorimetryRun, w["mine"]["run"].pk, run_fields)
    assert after["raw_file_sha256"] == before["raw_file_sha256"]
    assert after["created_at"] == before["created_at"]

    dossier_fields = ["status", "sha256", "content_sha256", "seal", "version", "attempts"]
    before = _stored(Dossier, w["dossier"].pk, dossier_fields)
    for method in ("put", "patch"):
        response = getattr(client, method)(f"/api/v1/dossiers/{w['dossier'].pk}/", {
            "status": "done", "sha256": "0" * 64, "content_sha256": "0" * 64, "seal": "x",
            "version": 9, "attempts": 0}, format="json")
        assert response.status_code == 405
    assert _stored(Dossier, w["dossier"].pk, dossier_fields) == before

    revision_fields = ["state", "content_sha256", "number"]
    before = _stored(ProcessRevision, w["revision"].pk, revision_fields)
    for method in ("put", "patch"):
        response = getattr(client, method)(f"/api/v1/revisions/{w['revision'].pk}/", {
            "state": "endorsed", "content_sha256": "0" * 64, "number": 7}, format="json")
        assert response.status_code == 405
    created = client.post("/api/v1/revisions/", {
        "process": w["mine"]["process"].pk, "state": "endorsed",
        "content_sha256": "0" * 64, "signatures": [{"meaning": "approved"}]}, format="json")
    if created.status_code in (200, 201):
        row = ProcessRevision.objects.get(pk=created.json()["id"])
        assert row.state != "endorsed" and row.content_sha256 != "0" * 64
    else:
        assert 400 <= created.status_code < 500
    assert _stored(ProcessRevision, w["revision"].pk, revision_fields) == before


@pytest.fixture
def world_in_tx(db):
    """Two processes with their authors (inside the test's transaction), a dossier and a
    draft revision of the first."""
    from hazards.dossier.services import dossier_request
    from hazards.review.services import revisions as rv
    from hazards.review.services.roles import role_grant
    from tests.factories import (
        CalorimetryRunFactory,
        DecompositionTestFactory,
        ProcessFactory,
        StepFactory,
    )

    out = {}
    for key in ("mine", "theirs"):
        process = ProcessFactory(name=f"Access route ({key})")
        step = StepFactory(process=process, sequence=1)
        user = make_user(f"access-{key}", perms=AUTHOR_PERMS)
        role_grant(process=process, user=user, role="author", granted_by=None, reason="set-up")
        out[key] = {"process": process, "step": step, "user": user,
                    "run": CalorimetryRunFactory(step=step, is_basis=True),
                    "test": DecompositionTestFactory(step=step, is_basis=True)}
    out["dossier"], _ = dossier_request(process=out["mine"]["process"], enqueue=False)
    out["revision"] = rv.revision_open(process=out["mine"]["process"],
                                       user=out["mine"]["user"], reason="first issue")
    from hazards.review.models import Finding

    out["finding"] = Finding.objects.create(
        process=out["mine"]["process"], title="Relief basis", kind="blocking",
        owner=out["mine"]["user"], raised_by=out["mine"]["user"], due_date="2027-01-01")
    return out
