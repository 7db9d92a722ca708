"""`/api/v1/measures/` and `/api/v1/measure-policies/` (issue 17 item 4): units as
{"value", "unit"}, If-Match/ETag, Idempotency-Key, problem details naming field and value."""

from __future__ import annotations

import pytest

from hazards.models import Measure, MeasurePolicy
from tests.conftest import make_user
from tests.review.conftest import AUTHOR_PERMS, client_for

pytestmark = pytest.mark.django_db

MEASURE_PERMS = (*AUTHOR_PERMS, "add_measure", "change_measure", "delete_measure")


@pytest.fixture
def writer(process):
    user = make_user("writer", perms=MEASURE_PERMS)
    from tests.review.factories import RoleFactory

    RoleFactory(process=process, user=user, role="author")
    return client_for(user)


def body(step, **extra):
    return {
        "step": step.pk,
        "kind": "feed_interlock",
        "acts_on": "feed valve XV-101",
        "owner": "author",
        "due_date": "2027-03-31",
        "trip_temperature": {"value": 45, "unit": "degC"},
        "response_time": "0.5 min",
        **extra,
    }


def test_a_measure_is_created_in_any_unit_and_read_back_in_canonical_ones(process, writer):
    step = process.steps.get()
    made = writer.post("/api/v1/measures/", body(step), format="json", HTTP_IDEMPOTENCY_KEY="m-1")
    assert made.status_code == 201, made.content
    data = made.json()
    assert data["trip_temperature"] == {"value": 45.0, "unit": "degC"}
    assert data["response_time"] == {"value": 30.0, "unit": "s"}
    assert Measure.objects.get().trip_temperature_k == pytest.approx(318.15)
    again = writer.post("/api/v1/measures/", body(step), format="json", HTTP_IDEMPOTENCY_KEY="m-1")
    assert again.status_code == 201 and again["Idempotent-Replayed"] == "true"
    assert Measure.objects.count() == 1
    listed = writer.get("/api/v1/measures/", {"step": step.pk}).json()
    assert [m["id"] for m in listed["results"]] == [data["id"]]
    assert writer.get("/api/v1/measures/", {"step": 999999}).status_code == 400
    # the step's indicators carry the barrier check of the measure (unknown: the step is
    # a batch step, a feed interlock acts on a semi-batch feed)
    ind = writer.get(f"/api/v1/steps/{step.pk}/").json()["indicators"]
    checks = ind["barrier_checks"]
    assert checks[0]["measure"] == data["id"] and checks[0]["result"] == "unknown"


def test_edits_need_if_match_and_stale_ones_are_refused(process, writer):
    step = process.steps.get()
    made = writer.post("/api/v1/measures/", body(step), format="json")
    url, etag = f"/api/v1/measures/{made.json()['id']}/", made["ETag"]
    assert writer.patch(url, {"status": "in_place"}, format="json").status_code == 428
    ok = writer.patch(url, {"status": "in_place"}, format="json", HTTP_IF_MATCH=etag)
    assert ok.status_code == 200
    stale = writer.patch(url, {"status": "proposed"}, format="json", HTTP_IF_MATCH=etag)
    assert stale.status_code == 412
    assert writer.delete(url, HTTP_IF_MATCH=ok["ETag"]).status_code == 204


@pytest.mark.parametrize(
    ("change", "field", "words"),
    [
        ({"vent_area": {"value": -2, "unit": "cm**2"}}, "vent_area", "greater than zero"),
        ({"response_time": "-5 s"}, "response_time", "greater than zero"),
        ({"trip_temperature": "20 degC"}, "trip_temperature", "not above the process temperature"),
        ({"status": "proven"}, "evidence_reference", "document reference and the test date"),
    ],
)
def test_bad_input_is_a_problem_naming_the_field(process, writer, change, field, words):
    step = process.steps.get()
    r = writer.post("/api/v1/measures/", body(step, **change), format="json")
    assert r.status_code == 400, r.content
    assert r["Content-Type"].startswith("application/problem+json")
    problem = r.json()
    assert words in str(problem)
    assert field in str(problem)
    assert not Measure.objects.exists()


def test_outsiders_and_readers_cannot_write(process, auditor, outsider):
    step = process.steps.get()
    assert (
        client_for(auditor).post("/api/v1/measures/", body(step), format="json").status_code == 403
    )
    assert client_for(outsider).get("/api/v1/measures/").json()["results"] == []


def test_a_site_policy_through_the_api(process, admin_user, author):
    admin = client_for(admin_user)
    site = process.site
    made = admin.post(
        "/api/v1/measure-policies/",
        {"site": site.code, "requirements": {"3": [{"any_of": ["quench"], "status": "proven"}]}},
        format="json",
    )
    assert made.status_code == 201, made.content
    eff = made.json()["effective_requirements"]
    assert eff["3"] == [{"any_of": ["quench"], "status": "proven"}]
    assert eff["4"][0]["status"] == "proven"  # the default stands for classes left out
    url = f"/api/v1/measure-policies/{made.json()['id']}/"
    bad = admin.patch(url, {"requirements": {"7": []}}, format="json", HTTP_IF_MATCH=made["ETag"])
    assert bad.status_code == 400 and "'7'" in str(bad.json())
    ok = admin.patch(url, {"reminder_days": 30}, format="json", HTTP_IF_MATCH=made["ETag"])
    assert ok.status_code == 200 and MeasurePolicy.objects.get().reminder_days == 30
    assert (
        client_for(author)
        .patch(url, {"reminder_days": 1}, format="json", HTTP_IF_MATCH=ok["ETag"])
        .status_code
        == 403
    )
