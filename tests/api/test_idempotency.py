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


# --- every POST (issue 18 item 7): the probe's six concurrent findings with one key made six.

def _review_world():
    from tests.review.factories import assessed_process, revision_in

    people = {n: make_user(n) for n in ("author", "reviewer", "approver")}
    people["admin"] = make_user("admin-2", superuser=True)
    process = assessed_process(author=people["author"], reviewer=people["reviewer"],
                               approver=people["approver"])
    return people, process, revision_in(process, "lodged", author=people["author"])


def _session(user):
    client = APIClient()
    client.force_login(user)
    return client


@pytest.mark.django_db
def test_every_post_of_the_schema_goes_through_the_idempotency_key(api):
    import re

    from django.urls import resolve

    from hazards.api.idempotency import IdempotentPostMixin

    exempt = {"/api/v1/auth/token/"}  # no user yet, and a token must never be kept
    schema = api.get("/api/v1/schema/?format=json").json()
    posts = [path for path, ops in schema["paths"].items() if "post" in ops]
    missing = []
    for path in posts:
        view = resolve(re.sub(r"\{[^}]+\}", "1", path)).func
        cls = getattr(view, "cls", None) or getattr(view, "view_class", None)
        if path not in exempt and not issubclass(cls, IdempotentPostMixin):
            missing.append(path)
        if path not in exempt:
            assert "Idempotency-Key" in {p["name"] for p in schema["paths"][path]["post"].get(
                "parameters", [])}, path
    assert len(posts) > 15 and not missing, missing


@pytest.mark.django_db
def test_findings_revisions_roles_send_back_and_dossiers_replay_and_refuse_another_body():
    from hazards.dossier.models import Dossier
    from hazards.review.models import Finding, ProcessRevision, ProcessRole
    from tests.review.factories import assessed_process

    people, process, lodged = _review_world()
    fresh = assessed_process(author=people["author"])
    finding = {"process": process.pk, "title": "Relief sizing", "kind": "blocking",
               "owner": "author", "due_date": "2027-01-31"}
    cases = [  # (who, url, body, a changed body, count of the records it makes)
        ("reviewer", "/api/v1/findings/", finding, {**finding, "title": "Other"},
         lambda: Finding.objects.count()),
        ("admin", "/api/v1/process-roles/", {"process": process.pk, "user": "approver",
                                             "role": "auditor", "reason": "second look"},
         {"process": process.pk, "user": "approver", "role": "auditor", "reason": "x"},
         lambda: ProcessRole.objects.count()),
        ("author", f"/api/v1/processes/{process.pk}/dossiers/", {"reissue": True},
         {"reissue": True, "reason": "again"}, lambda: Dossier.objects.count()),
        ("reviewer", f"/api/v1/revisions/{lodged.pk}/send-back/", {"reason": "dosing time"},
         {"reason": "other"}, lambda: ProcessRevision.objects.count()),
        ("author", "/api/v1/revisions/", {"process": fresh.pk, "reason": "first"},
         {"process": fresh.pk, "reason": "other"}, lambda: ProcessRevision.objects.count()),
    ]
    for who, url, body, other, count in cases:
        client = _session(people[who])
        first = client.post(url, body, format="json", HTTP_IDEMPOTENCY_KEY=f"k-{url}")
        assert 200 <= first.status_code < 300, (url, first.content)
        made = count()
        again = client.post(url, body, format="json", HTTP_IDEMPOTENCY_KEY=f"k-{url}")
        assert (again.status_code, again.json()) == (first.status_code, first.json()), url
        assert again["Idempotent-Replayed"] == "true" and count() == made, url
        changed = client.post(url, other, format="json", HTTP_IDEMPOTENCY_KEY=f"k-{url}")
        assert changed.status_code == 422, (url, changed.content)
        assert changed.json()["code"] == "idempotency_key_reused" and count() == made, url


@pytest.mark.django_db
def test_a_signature_replays_with_its_key_and_wrong_passwords_still_count():
    from hazards.review.models import Signature, SigningLockout
    from tests.conftest import PASSWORD

    people, process, lodged = _review_world()
    reviewer = _session(people["reviewer"])
    url = f"/api/v1/revisions/{lodged.pk}/review/"
    first = reviewer.post(url, {"password": PASSWORD}, format="json", HTTP_IDEMPOTENCY_KEY="s")
    assert first.status_code == 201, first.content
    again = reviewer.post(url, {"password": PASSWORD}, format="json", HTTP_IDEMPOTENCY_KEY="s")
    assert again.status_code == 201 and again["Idempotent-Replayed"] == "true"
    assert Signature.objects.filter(meaning="reviewed").count() == 1
    # The password is never part of what the key row keeps (not even hashed).
    assert PASSWORD not in str(list(IdempotencyKey.objects.values()))
    # A wrong password sent with a key is counted although the request rolls back.
    approver = _session(people["approver"])
    for i in range(6):
        approver.post(f"/api/v1/revisions/{lodged.pk}/approve/", {"password": "wrong"},
                      format="json", HTTP_IDEMPOTENCY_KEY=f"w-{i}")
    assert SigningLockout.objects.get(user=people["approver"]).locked_until is not None


@pytest.mark.django_db(transaction=True)
def test_six_concurrent_findings_with_one_key_make_one_finding():
    from hazards.review.models import Finding

    people, process, _ = _review_world()
    body = {"process": process.pk, "title": "Relief sizing", "kind": "blocking",
            "owner": "author", "due_date": "2027-01-31"}

    def post(i):
        return _session(people["reviewer"]).post("/api/v1/findings/", body, format="json",
                                                 HTTP_IDEMPOTENCY_KEY="six")

    responses = _run_threads(6, post)
    assert [r.status_code for r in responses] == [201] * 6, [r.content for r in responses]
    assert len({r.json()["id"] for r in responses}) == 1
    assert Finding.objects.count() == 1 and IdempotencyKey.objects.count() == 1


@pytest.mark.django_db
def test_upload_actions_run_the_key_once_and_answer_their_own_first_response(api):
    """A curve or series upload with a key answers 201 with its body the first time and replays
    it the second time, one record made. The upload actions call `idempotent` themselves; the
    view's wrapper must not open a second, nested key first (it did for the curve upload: the
    inner call found the outer's empty row and "replayed" a 200 with no body, nothing stored).
    Source: draft-ietf-httpapi-idempotency-key-header (first request processed normally)."""
    from django.core.files.uploadedfile import SimpleUploadedFile

    from tests.api.test_decomposition_curves import csv_scan
    from tests.factories import StepFactory

    step = StepFactory()
    test = api.post(
        "/api/v1/decomposition-tests/", {"step": step.pk, "method": "dsc"}, format="json"
    ).json()["id"]

    def upload():
        data = {"sample_mass": "2.0 mg",
                "file": SimpleUploadedFile("s.csv", csv_scan(5.0), content_type="text/csv")}
        return api.post(f"/api/v1/decomposition-tests/{test}/curves/", data,
                        format="multipart", HTTP_IDEMPOTENCY_KEY="curve-1")

    first, again = upload(), upload()
    assert first.status_code == 201 and "Idempotent-Replayed" not in first
    assert first.json()["onset_temperature"] is not None
    assert again.status_code == 201 and again["Idempotent-Replayed"] == "true"
    assert again.json() == first.json()
    assert m.DecompositionCurve.objects.filter(test_id=test).count() == 1
