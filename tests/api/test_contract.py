"""Every operation's real responses, success and declared errors, conform to the served schema.

One scenario drives the whole API as its users would (an administrator, the four review
roles, an outsider, anonymous callers): records created, read, edited with If-Match and
Idempotency-Key, a revision taken through its signatures, findings, roles, dossiers,
oversight, what-if. Each response is checked by `tests.api.contract` with
openapi-schema-validator (a maintained OpenAPI 3.0 validator). A sweep then sends every
operation the requests that produce its generic errors (anonymous, unknown id, unparsable
body, wrong media type, too large). The test fails on any non-conforming response and on
any operation, or declared status of an operation, that the run never produced, except the
few listed in NOT_PRODUCED with the reason. Source of the rules: OpenAPI 3.0.3 and RFC 9457
(problem details); the expected statuses are this API's own documentation.
"""

from __future__ import annotations

import json
from unittest import mock

import pytest
from django.core.files.uploadedfile import SimpleUploadedFile
from django.db import OperationalError
from rest_framework.test import APIClient

from hazards.dossier.models import Dossier
from hazards.oversight.models import Kind, Notification
from tests.api.contract import Contract, ContractClient
from tests.api.test_decomposition_curves import csv_scan
from tests.api.test_series import GOOD
from tests.conftest import PASSWORD, make_user
from tests.factories import CalorimetryRunFactory, DecompositionTestFactory, StepFactory
from tests.review.conftest import AUTHOR_PERMS
from tests.review.factories import assessed_process
from tests.whatif.conftest import TD, attach_series, c17_data

pytestmark = pytest.mark.django_db


def _not_produced_here(template: str, status: str, description: str) -> bool:
    """The declared answers this test does not produce for every operation, and why."""
    # A database outage: tests/hardening/test_faults.py stops a real server; here one
    # simulated outage checks the shape (the same Problem for every operation).
    if status == "503":
        return True
    # Two requests with one key at the same moment: tests/api/test_idempotency.py (threads).
    if status == "409" and description.endswith("`idempotency_key_in_progress`"):
        return True
    # Five wrong signing passwords lock signing: tests/review/test_signing.py.
    return status == "429" and template.startswith("/api/v1/revisions/")


UNIQUE = {
    "code": "east",
    "name": "Contract copy",
    "tag": "R-99",
    "cas_number": "64-17-5",
    "sequence": 9,
}


def _copy_for_create(contract, resource, got: dict) -> dict:
    """The writable fields of a record as read, with its unique fields changed."""
    body = contract.spec["paths"][f"/api/v1/{resource}/"]["post"]["requestBody"]
    ref = body["content"]["application/json"]["schema"]["$ref"].rsplit("/", 1)[1]
    names = contract.spec["components"]["schemas"][ref]["properties"]
    return {k: UNIQUE.get(k, v) for k, v in got.items() if k in names}


@pytest.fixture
def contract(api):
    spec = APIClient()
    spec.force_authenticate(make_user("schema-reader"))
    return Contract(spec.get("/api/v1/schema/?format=json").json())


@pytest.fixture
def failures():
    return []


@pytest.fixture
def as_(contract, failures):
    def client(user=None, token=None):
        c = ContractClient(contract, failures)
        if token is not None:
            c.credentials(HTTP_AUTHORIZATION=f"Token {token}")
        elif user is not None:
            c.force_login(user)
        return c

    return client


def test_every_operation_answers_as_the_schema_says(contract, failures, as_, admin_user, settings):
    author = make_user("author", perms=(*AUTHOR_PERMS, "add_decompositioncurve"))
    reviewer, approver, auditor = (make_user(n) for n in ("reviewer", "approver", "auditor"))
    outsider = make_user("outsider")
    process = assessed_process(author=author, reviewer=reviewer, approver=approver, auditor=auditor)
    step = process.steps.get()
    run = step.calorimetry_runs.get()
    test = step.decomposition_tests.get()
    dosed = StepFactory(
        process=process,
        sequence=5,
        operation_mode="semi_batch",
        dosing_time_s=TD,
        vessel=step.vessel,
        solvent=step.solvent,
    )
    attach_series(CalorimetryRunFactory(step=dosed, max_accumulation=0.166254), c17_data())
    DecompositionTestFactory(
        step=dosed,
        activation_energy_j_per_mol=100e3,
        reference_temperature_k=453.15,
        heat_release_rate_at_reference_w_per_kg=50.0,
    )
    admin, anon = as_(admin_user), as_()

    # Tokens.
    tok = anon.post(
        "/api/v1/auth/token/", {"username": "admin", "password": PASSWORD}, format="json"
    )
    assert tok.status_code == 200
    anon.post("/api/v1/auth/token/", {"username": "admin", "password": "wrong"}, format="json")
    anon.post("/api/v1/auth/token/", {"username": "admin"}, format="json")
    by_token = as_(token=tok.json()["token"])
    tokens = by_token.get("/api/v1/tokens/").json()["results"]
    by_token.get(f"/api/v1/tokens/{tokens[0]['id']}/")

    # Records: list, read, create (with a replay and a reused key), edit, delete.
    for resource in (
        "sites",
        "solvents",
        "vessels",
        "processes",
        "steps",
        "calorimetry-runs",
        "decomposition-tests",
    ):
        listed = admin.get(f"/api/v1/{resource}/", {"limit": 2})
        assert listed.status_code == 200, (resource, listed.content)
        admin.get(f"/api/v1/{resource}/", {"limit": 0})
        first = listed.json()["results"][0]
        read = admin.get(f"/api/v1/{resource}/{first['id']}/")
        admin.get(f"/api/v1/{resource}/no-such-id/")
        body = _copy_for_create(contract, resource, read.json())
        if resource not in ("steps", "calorimetry-runs", "decomposition-tests"):
            made = admin.post(
                f"/api/v1/{resource}/",
                body,
                format="json",
                HTTP_IDEMPOTENCY_KEY=f"contract-{resource}",
            )
            assert made.status_code == 201, (resource, made.content)
            admin.post(
                f"/api/v1/{resource}/",
                body,
                format="json",
                HTTP_IDEMPOTENCY_KEY=f"contract-{resource}",
            )
            admin.post(
                f"/api/v1/{resource}/",
                {**body, "name": "Else"},
                format="json",
                HTTP_IDEMPOTENCY_KEY=f"contract-{resource}",
            )
            admin.post(f"/api/v1/{resource}/", {}, format="json")
            url, etag = f"/api/v1/{resource}/{made.json()['id']}/", made["ETag"]
            name = {"name": made.json()["name"] + " 2"}
            admin.patch(url, name, format="json")
            edited = admin.patch(url, name, format="json", HTTP_IF_MATCH=etag)
            assert edited.status_code == 200, edited.content
            admin.patch(url, name, format="json", HTTP_IF_MATCH=etag)
            whole = {k: v for k, v in admin.get(url).json().items()}
            admin.put(url, whole, format="json", HTTP_IF_MATCH=edited["ETag"])
            admin.put(url, whole, format="json")
            admin.put(url, whole, format="json", HTTP_IF_MATCH=etag)
            admin.delete(url)
            admin.delete(url, HTTP_IF_MATCH=etag)
            assert admin.delete(url, HTTP_IF_MATCH=admin.get(url)["ETag"]).status_code == 204
        else:
            url = f"/api/v1/{resource}/{first['id']}/"
            as_(author).patch(url, {}, format="json", HTTP_IF_MATCH=read["ETag"])
            as_(outsider).patch(url, {}, format="json", HTTP_IF_MATCH=read["ETag"])
            as_(auditor).put(url, {}, format="json", HTTP_IF_MATCH=read["ETag"])
            as_(auditor).delete(url, HTTP_IF_MATCH=read["ETag"])
            as_(auditor).post(f"/api/v1/{resource}/", {}, format="json")
            as_(author).post(f"/api/v1/{resource}/", {}, format="json")

    for name in ("sites", "solvents", "vessels", "processes"):
        as_(outsider).post(f"/api/v1/{name}/", {}, format="json")

    # A second step, run and test, created by the author and edited.
    author_c = as_(author)
    new_step = author_c.post(
        "/api/v1/steps/",
        _copy_for_create(contract, "steps", author_c.get(f"/api/v1/steps/{step.pk}/").json()),
        format="json",
        HTTP_IDEMPOTENCY_KEY="contract-step",
    )
    assert new_step.status_code == 201, new_step.content
    sid = new_step.json()["id"]
    author_c.get(f"/api/v1/steps/{sid}/")
    new_run = author_c.post(
        "/api/v1/calorimetry-runs/",
        {
            **_copy_for_create(
                contract,
                "calorimetry-runs",
                author_c.get(f"/api/v1/calorimetry-runs/{run.pk}/").json(),
            ),
            "step": sid,
        },
        format="json",
    )
    new_test = author_c.post(
        "/api/v1/decomposition-tests/",
        {
            **_copy_for_create(
                contract,
                "decomposition-tests",
                author_c.get(f"/api/v1/decomposition-tests/{test.pk}/").json(),
            ),
            "step": sid,
        },
        format="json",
    )
    for made, res in (
        (new_run, "calorimetry-runs"),
        (new_test, "decomposition-tests"),
        (new_step, "steps"),
    ):
        assert made.status_code == 201, made.content
        url = f"/api/v1/{res}/{made.json()['id']}/"
        patched = author_c.patch(
            url,
            {"notes": "checked"} if res != "steps" else {"name": "Quench"},
            format="json",
            HTTP_IF_MATCH=made["ETag"],
        )
        assert patched.status_code == 200, patched.content
        whole = _copy_for_create(contract, res, patched.json())
        stale = made["ETag"]
        author_c.patch(url, {"notes": "x"}, format="json")  # no If-Match: 428
        author_c.patch(url, {"notes": "x"}, format="json", HTTP_IF_MATCH=stale)  # 412
        author_c.put(url, whole, format="json")  # 428
        author_c.put(url, whole, format="json", HTTP_IF_MATCH=stale)  # 412
        put = author_c.put(url, whole, format="json", HTTP_IF_MATCH=patched["ETag"])
        assert put.status_code == 200, put.content
        admin.delete(url)  # 428
        admin.delete(url, HTTP_IF_MATCH=stale)  # 412
        assert admin.delete(url, HTTP_IF_MATCH=put["ETag"]).status_code == 204

    admin.get(f"/api/v1/steps/{step.pk}/indicator-history/")
    admin.get(f"/api/v1/steps/{step.pk}/indicator-history/", {"limit": "x"})
    what_if = f"/api/v1/steps/{dosed.pk}/what-if/"
    assert admin.post(what_if, {"dosing_time": "90 min"}, format="json").status_code == 200
    admin.post(what_if, {"dosing_time": "-9 min"}, format="json")
    window = f"/api/v1/steps/{dosed.pk}/operating-window/"
    assert admin.get(window, {"dosing_time_steps": 5, "temperature_steps": 1}).status_code == 200
    admin.get(window, {"dosing_time_steps": 9999})

    # Calorimeter series.
    series = f"/api/v1/calorimetry-runs/{run.pk}/series/"
    admin.get(series)
    admin.post(
        series,
        {
            "initial_mass": "400 g",
            "feed_mass": "100 g",
            "file": SimpleUploadedFile("r.csv", b"nonsense\n1,2\n"),
        },
        format="multipart",
    )
    up = admin.post(
        series,
        {"initial_mass": "400 g", "feed_mass": "100 g", "file": SimpleUploadedFile("r.csv", GOOD)},
        format="multipart",
        HTTP_IDEMPOTENCY_KEY="contract-series",
    )
    assert up.status_code == 201, up.content
    admin.get(series)
    admin.post(
        series,
        {"initial_mass": "400 g", "feed_mass": "100 g", "file": SimpleUploadedFile("r.csv", GOOD)},
        format="multipart",
        HTTP_IF_MATCH='"calorimetryrun-0-v0"',
    )
    admin.post(
        series,
        {"initial_mass": "400 g", "feed_mass": "100 g", "file": SimpleUploadedFile("r.csv", GOOD)},
        format="multipart",
        HTTP_IDEMPOTENCY_KEY="contract-sites",
    )  # a key used elsewhere: 422
    admin.post(
        "/api/v1/calorimetry-runs/999999/series/",
        {"initial_mass": "400 g", "feed_mass": "100 g", "file": SimpleUploadedFile("r.csv", GOOD)},
        format="multipart",
    )

    # Decomposition curves: a DSC test created without typed values, a scan uploaded to it.
    dsc = author_c.post(
        "/api/v1/decomposition-tests/", {"step": dosed.pk, "method": "dsc"}, format="json"
    )
    assert dsc.status_code == 201, dsc.content
    curves = f"/api/v1/decomposition-tests/{dsc.json()['id']}/curves/"

    def scan(raw=None):
        return {
            "sample_mass": "2.0 mg",
            "file": SimpleUploadedFile("scan.csv", raw or csv_scan(5.0), content_type="text/csv"),
        }

    first = author_c.post(curves, scan(), format="multipart", HTTP_IDEMPOTENCY_KEY="contract-c")
    assert first.status_code == 201, first.content
    replay = author_c.post(curves, scan(), format="multipart", HTTP_IDEMPOTENCY_KEY="contract-c")
    assert replay.status_code == 201 and replay["Idempotent-Replayed"] == "true"
    author_c.post(curves, scan(b"time [min],temperature [degC]\n1,x\n"), format="multipart")
    author_c.post(  # the key again with another file: 422
        curves, scan(csv_scan(10.0)), format="multipart", HTTP_IDEMPOTENCY_KEY="contract-c"
    )
    as_(auditor).post(curves, scan(), format="multipart")  # may read, may not write: 403
    assert author_c.get(curves).status_code == 200
    author_c.get(curves, {"limit": "x"})
    as_(outsider).get(curves)  # not theirs: 404
    author_c.post("/api/v1/decomposition-tests/999999/curves/", scan(), format="multipart")

    # Protective measures and the site's measure policy (issue 17).
    measure_body = {
        "step": step.pk, "kind": "quench", "acts_on": "quench tank", "owner": "author",
        "due_date": "2027-03-31", "response_time": "5 min",
    }
    m_made = author_c.post("/api/v1/measures/", measure_body, format="json",
                           HTTP_IDEMPOTENCY_KEY="contract-measure")
    assert m_made.status_code == 201, m_made.content
    author_c.post("/api/v1/measures/", measure_body, format="json",
                  HTTP_IDEMPOTENCY_KEY="contract-measure")  # replay
    author_c.post("/api/v1/measures/", {**measure_body, "acts_on": "x"}, format="json",
                  HTTP_IDEMPOTENCY_KEY="contract-measure")  # same key, other body: 422
    author_c.post("/api/v1/measures/", {**measure_body, "response_time": "-1 s"}, format="json")
    as_(auditor).post("/api/v1/measures/", measure_body, format="json")  # 403
    murl = f"/api/v1/measures/{m_made.json()['id']}/"
    author_c.get("/api/v1/measures/", {"step": step.pk})
    author_c.get(murl)
    m_patched = author_c.patch(murl, {"status": "in_place"}, format="json",
                               HTTP_IF_MATCH=m_made["ETag"])
    assert m_patched.status_code == 200, m_patched.content
    author_c.patch(murl, {"status": "proposed"}, format="json")  # 428
    author_c.patch(murl, {"status": "proposed"}, format="json", HTTP_IF_MATCH=m_made["ETag"])
    author_c.patch(murl, {"vent_area": "-1 m**2"}, format="json",
                   HTTP_IF_MATCH=m_patched["ETag"])  # 400
    m_whole = _copy_for_create(contract, "measures", m_patched.json())
    m_put = author_c.put(murl, m_whole, format="json", HTTP_IF_MATCH=m_patched["ETag"])
    assert m_put.status_code == 200, m_put.content
    author_c.put(murl, m_whole, format="json")  # 428
    author_c.put(murl, m_whole, format="json", HTTP_IF_MATCH=m_made["ETag"])  # 412
    author_c.delete(murl)  # 428
    author_c.delete(murl, HTTP_IF_MATCH=m_made["ETag"])  # 412
    second = author_c.post("/api/v1/measures/", measure_body, format="json")
    assert admin.delete(f"/api/v1/measures/{second.json()['id']}/",
                        HTTP_IF_MATCH=second["ETag"]).status_code == 204
    p_made = admin.post("/api/v1/measure-policies/", {
        "site": process.site.code,
        "requirements": {"3": [{"any_of": ["quench"], "status": "proven"}]},
    }, format="json", HTTP_IDEMPOTENCY_KEY="contract-policy")
    assert p_made.status_code == 201, p_made.content
    purl = f"/api/v1/measure-policies/{p_made.json()['id']}/"
    admin.get("/api/v1/measure-policies/")
    admin.get(purl)
    p_patched = admin.patch(purl, {"reminder_days": 21}, format="json",
                            HTTP_IF_MATCH=p_made["ETag"])
    assert p_patched.status_code == 200, p_patched.content
    admin.patch(purl, {"requirements": {"9": []}}, format="json",
                HTTP_IF_MATCH=p_patched["ETag"])  # 400
    p_put = admin.put(purl, _copy_for_create(contract, "measure-policies", p_patched.json()),
                      format="json", HTTP_IF_MATCH=p_patched["ETag"])
    assert p_put.status_code == 200, p_put.content
    as_(author).patch(purl, {"reminder_days": 1}, format="json", HTTP_IF_MATCH=p_put["ETag"])

    # Exchange.
    doc = admin.get(f"/api/v1/processes/{process.pk}/export/")
    assert doc.status_code == 200
    copy = {**doc.json(), "process": {**doc.json()["process"], "name": "Imported copy"}}
    imported = admin.post("/api/v1/processes/import/", copy, format="json")
    assert imported.status_code == 201, imported.content
    admin.post("/api/v1/processes/import/", doc.json(), format="json")
    admin.post("/api/v1/processes/import/", {"format": "other"}, format="json")

    # Review: a revision opened, signed three times, compared, sent back.
    rev_list = author_c.get("/api/v1/revisions/", {"process": process.pk})
    assert rev_list.status_code == 200
    opened = author_c.post(
        "/api/v1/revisions/", {"process": process.pk, "reason": "first"}, format="json"
    )
    assert opened.status_code == 201, opened.content
    rid = opened.json()["id"]
    author_c.post("/api/v1/revisions/", {"process": process.pk}, format="json")
    author_c.post("/api/v1/revisions/", {"process": 999999}, format="json")
    as_(outsider).post("/api/v1/revisions/", {"process": process.pk}, format="json")
    author_c.get(f"/api/v1/revisions/{rid}/")
    author_c.get(f"/api/v1/revisions/{rid}/history/")
    as_(reviewer).post(
        f"/api/v1/revisions/{rid}/review/", {"password": PASSWORD}, format="json"
    )  # not lodged yet: 409
    by_token.post(f"/api/v1/revisions/{rid}/submit/", {"password": PASSWORD}, format="json")
    author_c.post(f"/api/v1/revisions/{rid}/submit/", {"password": "wrong"}, format="json")
    assert (
        author_c.post(
            f"/api/v1/revisions/{rid}/submit/", {"password": PASSWORD}, format="json"
        ).status_code
        == 201
    )
    assert (
        as_(reviewer)
        .post(
            f"/api/v1/revisions/{rid}/review/",
            {"password": PASSWORD},
            format="json",
            HTTP_IDEMPOTENCY_KEY="reviewer-key",
        )
        .status_code
        == 201
    )
    assert (
        as_(approver)
        .post(
            f"/api/v1/revisions/{rid}/approve/",
            {"password": PASSWORD},
            format="json",
            HTTP_IDEMPOTENCY_KEY="approver-key",
        )
        .status_code
        == 201
    )
    as_(approver).post(f"/api/v1/revisions/{rid}/approve/", {"password": PASSWORD}, format="json")
    as_(approver).post(
        f"/api/v1/revisions/{rid}/sign/",
        {"password": PASSWORD, "meaning": "approved"},
        format="json",
    )
    author_c.post(f"/api/v1/revisions/{rid}/send-back/", {}, format="json")
    author_c.post(f"/api/v1/revisions/{rid}/send-back/", {"reason": "no"}, format="json")
    author_c.post(
        f"/api/v1/revisions/{rid}/submit/", {"password": PASSWORD}, format="json"
    )  # endorsed: 409
    as_(reviewer).post("/api/v1/revisions/999999/send-back/", {"reason": "x"}, format="json")
    author_c.post(
        "/api/v1/revisions/999999/sign/",
        {"password": PASSWORD, "meaning": "authored"},
        format="json",
    )
    # A change to the approved step opens a change record; a second revision goes round.
    got = admin.get(f"/api/v1/steps/{step.pk}/")
    assert (
        admin.patch(
            f"/api/v1/steps/{step.pk}/",
            {"reaction_mass": "4000 kg", "reason": "pilot"},
            format="json",
            HTTP_IF_MATCH=got["ETag"],
        ).status_code
        == 200
    )
    second = author_c.post("/api/v1/revisions/", {"process": process.pk}, format="json")
    assert second.status_code == 201, second.content
    rid2 = second.json()["id"]
    assert (
        author_c.post(
            f"/api/v1/revisions/{rid2}/sign/",
            {"password": PASSWORD, "meaning": "authored"},
            format="json",
        ).status_code
        == 201
    )
    assert (
        as_(reviewer)
        .post(f"/api/v1/revisions/{rid2}/send-back/", {"reason": "again"}, format="json")
        .status_code
        == 200
    )
    as_(reviewer).post(
        f"/api/v1/revisions/{rid2}/send-back/", {"reason": "again"}, format="json"
    )  # sent back already: 409
    for act, who, key in (
        ("submit", author, "contract-step"),
        ("sign", author, "contract-step"),
        ("review", reviewer, "reviewer-key"),
        ("approve", approver, "approver-key"),
    ):  # another request's key: 422
        as_(who).post(
            f"/api/v1/revisions/{rid2}/{act}/",
            {"password": PASSWORD, "meaning": "authored"},
            format="json",
            HTTP_IDEMPOTENCY_KEY=key,
        )
    author_c.get(f"/api/v1/revisions/{rid}/diff/", {"against": rid})
    author_c.get(f"/api/v1/revisions/{rid}/diff/", {"against": 999999})
    author_c.get(f"/api/v1/revisions/{rid}/diff/")
    author_c.get(f"/api/v1/processes/{process.pk}/diff/", {"from": 1, "to": 1})
    author_c.get(f"/api/v1/processes/{process.pk}/diff/", {"from": 1, "to": 7})
    author_c.get(f"/api/v1/processes/{process.pk}/diff/")
    author_c.get(f"/api/v1/processes/{process.pk}/history/")
    author_c.get(f"/api/v1/history/hazards.reactionstep/{step.pk}/")
    author_c.get(f"/api/v1/history/hazards.nothing/{step.pk}/")
    sigs = author_c.get("/api/v1/signatures/").json()["results"]
    author_c.get(f"/api/v1/signatures/{sigs[0]['id']}/")
    # Findings and roles.
    finding = as_(reviewer).post(
        "/api/v1/findings/",
        {
            "process": process.pk,
            "title": "Check the coolant",
            "kind": "advisory",
            "owner": "author",
            "due_date": "2027-01-31",
        },
        format="json",
    )
    assert finding.status_code == 201, finding.content
    furl = f"/api/v1/findings/{finding.json()['id']}/"
    as_(reviewer).get("/api/v1/findings/")
    noted = as_(author).post(furl + "notes/", {"text": "Coolant checked."}, format="json")
    assert noted.status_code == 201, noted.content
    as_(author).post(furl + "notes/", {}, format="json")  # 400
    as_(author).post("/api/v1/findings/999999/notes/", {"text": "x"}, format="json")  # 404
    fread = as_(reviewer).get(furl)
    whole = {
        "title": "Coolant",
        "kind": "advisory",
        "owner": "author",
        "due_date": "2027-02-28",
        "status": "open",
        "reason": "again",
        "description": "",
    }
    as_(reviewer).put(furl, whole, format="json")  # no If-Match: 428
    put = as_(reviewer).put(furl, whole, format="json", HTTP_IF_MATCH=fread["ETag"])
    assert put.status_code == 200, put.content
    as_(reviewer).put(furl, whole, format="json", HTTP_IF_MATCH=fread["ETag"])  # stale: 412
    as_(reviewer).patch(
        furl, {"status": "resolved"}, format="json", HTTP_IF_MATCH=put["ETag"]
    )  # no reason: 400
    done = as_(reviewer).patch(
        furl, {"status": "resolved", "reason": "done"}, format="json", HTTP_IF_MATCH=put["ETag"]
    )
    assert done.status_code == 200, done.content
    as_(reviewer).patch(
        furl, {"status": "withdrawn", "reason": "x"}, format="json", HTTP_IF_MATCH=done["ETag"]
    )  # closed: 409
    as_(reviewer).patch(furl, {"status": "withdrawn", "reason": "x"}, format="json")
    as_(reviewer).put(furl, whole, format="json", HTTP_IF_MATCH=done["ETag"])  # closed: 409
    as_(reviewer).put(furl, {}, format="json", HTTP_IF_MATCH=done["ETag"])  # 400
    as_(author).post(furl + "notes/", {"text": "Late."}, format="json")  # closed: 409
    as_(reviewer).patch(
        furl, {"status": "withdrawn", "reason": "x"}, format="json", HTTP_IF_MATCH=put["ETag"]
    )
    as_(reviewer).post("/api/v1/findings/", {}, format="json")
    role = admin.post(
        "/api/v1/process-roles/",
        {"process": process.pk, "user": "outsider", "role": "auditor", "reason": "audit"},
        format="json",
    )
    assert role.status_code == 201, role.content
    admin.get("/api/v1/process-roles/")
    rurl = f"/api/v1/process-roles/{role.json()['id']}/"
    rread = admin.get(rurl)
    admin.delete(rurl)  # 428
    admin.delete(rurl, HTTP_X_CHANGE_REASON="done", HTTP_IF_MATCH='"processrole-0-x"')  # 412
    admin.delete(rurl, HTTP_IF_MATCH=rread["ETag"])  # no reason: 400
    assert (
        admin.delete(rurl, HTTP_X_CHANGE_REASON="done", HTTP_IF_MATCH=rread["ETag"]).status_code
        == 204
    )
    as_(author).post(
        "/api/v1/process-roles/",
        {"process": process.pk, "user": "outsider", "role": "auditor", "reason": "x"},
        format="json",
    )

    # Dossiers.
    dossiers = f"/api/v1/processes/{process.pk}/dossiers/"
    req = admin.post(dossiers, {"reason": "contract"}, format="json")
    assert req.status_code == 202, req.content
    assert admin.post(dossiers, {}, format="json").status_code == 200  # has one already
    admin.post(dossiers, {"reissue": "maybe"}, format="json")
    admin.get(dossiers)
    admin.get("/api/v1/dossiers/")
    if req.status_code in (200, 202):
        did = req.json()["id"]
        admin.get(f"/api/v1/dossiers/{did}/")
        admin.get(f"/api/v1/dossiers/{did}/pdf/")  # queued: 409
        admin.post(f"/api/v1/dossiers/{did}/retry/")  # not failed: 409
        Dossier.objects.filter(pk=did).update(status="failed", error="test")
        assert admin.post(f"/api/v1/dossiers/{did}/retry/").status_code == 202
        Dossier.objects.filter(pk=did).update(status="done", pdf=b"%PDF-1.7 test", sha256="0")
        assert admin.get(f"/api/v1/dossiers/{did}/pdf/").status_code == 200
    admin.post(
        "/api/v1/dossiers/verify/",
        {"file": SimpleUploadedFile("x.pdf", b"%PDF-1.7")},
        format="multipart",
    )
    admin.post("/api/v1/dossiers/verify/", {}, format="multipart")
    admin.post(
        "/api/v1/dossiers/verify/",
        {"file": SimpleUploadedFile("x.pdf", b"%PDF-1.7")},
        format="multipart",
        HTTP_IDEMPOTENCY_KEY="contract-sites",
    )  # 422
    settings.DOSSIER_REISSUES_PER_DAY = 1
    admin.post(dossiers, {"reissue": True, "reason": "again"}, format="json")  # 429

    # Oversight.
    admin.get("/api/v1/revalidation/")
    admin.get("/api/v1/revalidation/", {"within_days": "soon"})
    changes = admin.get("/api/v1/changes/").json()["results"]
    assert changes, "the edit of the approved step opened a change record"
    admin.get(f"/api/v1/changes/{changes[0]['id']}/")
    prefs = author_c.get("/api/v1/notification-preferences/")
    row = {"kind": Kind.values[0], "email": False, "inbox": True}
    author_c.put(
        "/api/v1/notification-preferences/",
        [row],
        format="json",
        HTTP_IF_MATCH=prefs.get("ETag", ""),
    )
    author_c.patch(
        "/api/v1/notification-preferences/",
        [row],
        format="json",
        HTTP_IF_MATCH=author_c.get("/api/v1/notification-preferences/").get("ETag", ""),
    )
    author_c.put("/api/v1/notification-preferences/", [{"kind": "nonsense"}], format="json")
    for method in ("put", "patch"):
        getattr(author_c, method)("/api/v1/notification-preferences/", [row], format="json")
        getattr(author_c, method)(
            "/api/v1/notification-preferences/", [row], format="json", HTTP_IF_MATCH=prefs["ETag"]
        )  # changed since: 412
    Notification.objects.create(
        recipient=reviewer,
        kind=Kind.values[0],
        subject="Due",
        object_key=f"hazards.process:{process.pk}",
        body="A revalidation is due.",
        process=process,
    )
    nid = as_(reviewer).get("/api/v1/notifications/").json()["results"][0]["id"]
    as_(reviewer).get(f"/api/v1/notifications/{nid}/")
    as_(reviewer).post(f"/api/v1/notifications/{nid}/read/")
    as_(reviewer).post("/api/v1/notifications/read-all/")
    anon.get("/api/v1/problems/")

    # Generic errors of every operation, on real ids.
    ids = {
        "sites": process.site_id,
        "processes": process.pk,
        "steps": step.pk,
        "calorimetry-runs": run.pk,
        "decomposition-tests": test.pk,
        "vessels": step.vessel_id,
        "solvents": step.solvent_id,
        "revisions": rid,
        "findings": finding.json()["id"],
        "signatures": sigs[0]["id"],
        "tokens": tokens[0]["id"],
        "process-roles": process.roles.first().pk,
        "changes": changes[0]["id"],
        "notifications": nid,
        "dossiers": did,
        "measures": m_made.json()["id"],
        "measure-policies": p_made.json()["id"],
    }
    csrf = ContractClient(contract, failures, enforce_csrf_checks=True)
    csrf.force_login(admin_user)
    lone = as_(outsider)
    for method, template, _op in contract.operations():
        path = template.replace("{id}", "999999").replace("{label}", "hazards.process")
        real = template.replace("{label}", "hazards.process").replace(
            "{id}", str(ids.get(template.split("/")[3], process.pk))
        )
        anon.generic(method.upper(), path)
        lone.generic(method.upper(), real, "{}", content_type="application/json")
        admin.generic(
            method.upper(),
            real + "?limit=0&offset=-1&against=x&from=x&within_days=x"
            "&dosing_time_steps=0&process=x&revision=x&kind=nonsense&x=1&x=2",
            "{}",
            content_type="application/json",
        )
        if "{" in template:
            admin.generic(method.upper(), path, "{}", content_type="application/json")
        if method != "get":
            csrf.generic(method.upper(), real, "{}", content_type="application/json")
        if method in ("put", "patch", "delete"):
            admin.generic(method.upper(), real, "{}", content_type="application/json")
            admin.generic(
                method.upper(),
                real,
                "{}",
                content_type="application/json",
                HTTP_IF_MATCH='"stale-0-v0"',
            )
        if method in ("post", "put", "patch"):
            tag = admin.get(real)["ETag"] if method != "post" else ""
            admin.generic(
                method.upper(),
                real,
                "{not json",
                content_type="application/json",
                HTTP_IF_MATCH=tag,
            )
            admin.generic(method.upper(), real, "x", content_type="text/plain", HTTP_IF_MATCH=tag)
            admin.generic(
                method.upper(),
                real,
                "{}",
                content_type="application/json",
                HTTP_IDEMPOTENCY_KEY="contract-sites",
            )  # the key of another call
    settings.DATA_UPLOAD_MAX_MEMORY_SIZE = 4096
    for method, template, _op in contract.operations():
        if method in ("post", "put", "patch"):
            real = template.replace("{id}", str(ids.get(template.split("/")[3], process.pk)))
            big = json.dumps({"name": "x" * 5000})
            tag = admin.get(real)["ETag"] if method != "post" else ""
            admin.generic(
                method.upper(),
                real,
                big,
                content_type="application/json",
                HTTP_IDEMPOTENCY_KEY="big",
                HTTP_IF_MATCH=tag,
            )
            if method == "post":
                with mock.patch("hazards.services.series.MAX_BYTES", 4096):
                    admin.post(
                        real,
                        {"file": SimpleUploadedFile("b.csv", b"1" * 5000), "initial_mass": "1 kg"},
                        format="multipart",
                    )

    # A database outage, simulated once (the real one: tests/hardening/test_faults.py).
    with mock.patch("hazards.api.views.SiteViewSet.list", side_effect=OperationalError("down")):
        outage = admin.get("/api/v1/sites/")
    assert outage.status_code == 503 and outage["Retry-After"]

    assert not failures, "\n".join(failures)
    missing = [
        f"{m.upper()} {t}"
        for m, t, _ in contract.operations()
        if not any(200 <= s < 300 for s in contract.seen.get((m, t), ()))
    ]
    assert not missing, "operations never answered with success:\n" + "\n".join(missing)
    unseen = [
        f"{m.upper()} {t} {s}: {op['responses'][s]['description']}"
        for m, t, op in contract.operations()
        for s in op["responses"]
        if s.isdigit()
        and int(s) not in contract.seen.get((m, t), ())
        and not _not_produced_here(t, s, op["responses"][s]["description"])
    ]
    assert not unseen, "declared but never produced:\n" + "\n".join(unseen)
