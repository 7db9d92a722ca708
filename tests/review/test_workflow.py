"""The workflow around the signatures: changes after an endorsement collect in a new draft
while the endorsed revision stays in force; changes to signed data need a reason; send-back; findings;
history and differences people can read; the demo."""

from __future__ import annotations

import pytest

from hazards.api.concurrency import etag_for
from hazards.models import ReactionStep
from hazards.review import access
from hazards.review import errors as E
from hazards.review.models import ProcessRevision, Transition
from hazards.review.services import revisions
from hazards.review.services.revisions import OPENED_FOR_CHANGES
from tests.conftest import PASSWORD
from tests.review.conftest import client_for
from tests.review.factories import revision_in

pytestmark = pytest.mark.django_db


def patch_step(user, step, data):
    step.refresh_from_db()
    return client_for(user).patch(f"/api/v1/steps/{step.pk}/", data, format="json",
                                  HTTP_IF_MATCH=etag_for(step))


def test_a_change_after_approval_keeps_it_in_force_and_opens_a_new_draft(process, author,
                                                                        reviewer, approver):
    endorsed = revision_in(process, "endorsed", author=author, reviewer=reviewer,
                           approver=approver)
    step = ReactionStep.objects.get(process=process)

    response = patch_step(author, step, {"reaction_mass": {"value": 4500, "unit": "kg"},
                                         "reason": "charge reduced after the pilot batch"})
    assert response.status_code == 200, response.content
    step.refresh_from_db()
    assert step.needs_review is True  # set by the live indicators

    listed = client_for(auditor_of(process)).get(f"/api/v1/revisions/?process={process.pk}")

    endorsed.refresh_from_db()
    assert endorsed.state == "endorsed"  # in force until a later revision is endorsed
    assert not Transition.objects.filter(revision=endorsed, to_state="replaced").exists()
    states = [(r["number"], r["state"]) for r in listed.json()["results"]]
    assert states == [(1, "endorsed"), (2, "drafting")]
    new = ProcessRevision.objects.get(process=process, number=2)
    assert Transition.objects.get(revision=new).reason == OPENED_FOR_CHANGES.format(number=1)
    assert new.content["steps"][0]["reaction_mass_kg"] == 4500.0
    assert endorsed.content["steps"][0]["reaction_mass_kg"] == 5000.0
    assert endorsed.signatures.count() == 3  # the approval still says what it approved


def auditor_of(process):
    return process.roles.get(role="auditor").user


def test_a_lodged_revision_that_went_stale_cannot_be_signed(process, author, reviewer):
    lodged = revision_in(process, "lodged", author=author)
    ReactionStep.objects.filter(process=process).update(reaction_mass_kg=4200.0)

    response = client_for(reviewer).post(f"/api/v1/revisions/{lodged.pk}/review/",
                                         {"password": PASSWORD}, format="json")

    assert response.status_code == 409 and response.json()["detail"] == E.STALE
    lodged.refresh_from_db()
    assert lodged.state == "replaced" and lodged.signatures.count() == 1
    assert ProcessRevision.objects.get(process=process, number=2).state == "drafting"


def test_changing_signed_data_needs_a_reason_that_goes_into_the_trail(process, author):
    revision_in(process, "lodged", author=author)
    step = ReactionStep.objects.get(process=process)
    old_name = step.name

    without = patch_step(author, step, {"name": "Quiet rename"})
    with_reason = patch_step(author, step, {"name": "Rename", "reason": "typo in the name"})

    assert without.status_code == 400 and access.REASON_REQUIRED in without.content.decode()
    assert with_reason.status_code == 200, with_reason.content
    history = client_for(author).get(f"/api/v1/history/hazards.reactionstep/{step.pk}/").json()
    last = history["results"][0]  # newest first
    assert last["changes"]["name"] == {"from": old_name, "to": "Rename"}
    assert last["reason"] == "typo in the name"
    assert last["user"] == "author"
    assert last["url"] == f"/api/v1/steps/{step.pk}/"


def test_a_reviewer_sends_a_revision_back_with_a_reason_and_a_new_draft_opens(process, author,
                                                                             reviewer):
    lodged = revision_in(process, "lodged", author=author)
    api = client_for(reviewer)

    no_reason = api.post(f"/api/v1/revisions/{lodged.pk}/send-back/", {}, format="json")
    sent = api.post(f"/api/v1/revisions/{lodged.pk}/send-back/",
                    {"reason": "accumulation not justified"}, format="json")

    assert no_reason.status_code == 400
    assert sent.status_code == 200, sent.content
    assert sent.json()["number"] == 2 and sent.json()["state"] == "drafting"
    lodged.refresh_from_db()
    assert lodged.state == "sent_back"
    assert lodged.transitions.get(to_state="sent_back").reason == "accumulation not justified"


def test_the_difference_between_two_revisions_names_each_changed_value(process, author,
                                                                      reviewer):
    first = revision_in(process, "lodged", author=author)
    revisions.revision_send_back(revision=first, user=reviewer, reason="mass to be confirmed")
    step = ReactionStep.objects.get(process=process)
    step.reaction_mass_kg = 4800.0
    step.save()
    second = ProcessRevision.objects.get(process=process, number=2)
    from tests.review.factories import sign

    sign(second, author, "authored")

    by_number = client_for(reviewer).get(f"/api/v1/processes/{process.pk}/diff/?from=1&to=2")
    by_id = client_for(reviewer).get(f"/api/v1/revisions/{second.pk}/diff/?against={first.pk}")

    assert by_number.status_code == 200 and by_number.json() == by_id.json()
    changes = {c["path"]: c for c in by_number.json()["changes"]}
    mass = changes[f"steps[id={step.pk}].reaction_mass_kg"]
    assert (mass["from"], mass["to"], mass["change"]) == (5000.0, 4800.0, "changed")
    assert f"steps[id={step.pk}].indicators.inputs_hash" in changes
    assert not any(path.startswith("process.") for path in changes)


def test_process_history_says_who_changed_what_when_and_why(process, author, reviewer):
    lodged = revision_in(process, "lodged", author=author)
    revisions.revision_send_back(revision=lodged, user=reviewer, reason="needs a second DSC")

    page = client_for(auditor_of(process)).get(f"/api/v1/processes/{process.pk}/history/").json()
    assert page["next"] is None and page["count"] == len(page["results"])
    rows = page["results"][::-1]  # pages are newest first

    models = {r["model"] for r in rows}
    assert {"hazards.Process", "hazards.ReactionStep", "hazards.CalorimetryRun",
            "hazards.DecompositionTest", "review.ProcessRevision", "review.Signature",
            "review.Transition", "review.ProcessRole"} <= models
    moves = [r for r in rows if r["model"] == "review.ProcessRevision"
             and "state" in r["changes"] and r["action"] == "update"]
    assert [(m["changes"]["state"]["from"], m["changes"]["state"]["to"]) for m in moves] == [
        ("drafting", "lodged"), ("lodged", "sent_back")]
    assert moves[-1]["reason"] == "needs a second DSC"
    assert [r["at"] for r in rows] == sorted(r["at"] for r in rows)


def test_findings_need_a_reviewer_or_approver_and_changes_need_a_reason(process, author,
                                                                       reviewer):
    body = {"process": process.pk, "title": "Relief sizing not shown", "kind": "blocking",
            "owner": "author", "due_date": "2027-01-31"}

    by_author = client_for(author).post("/api/v1/findings/", body, format="json")
    by_reviewer = client_for(reviewer).post("/api/v1/findings/", body, format="json")

    assert by_author.status_code == 403 and by_author.json()["detail"] == E.CANNOT_RAISE_FINDING
    assert by_reviewer.status_code == 201, by_reviewer.content
    finding = by_reviewer.json()
    assert (finding["owner"], finding["status"], finding["kind"], finding["raised_by"]) == (
        "author", "open", "blocking", "reviewer")
    url = f"/api/v1/findings/{finding['id']}/"
    etag = by_reviewer["ETag"]
    assert client_for(reviewer).patch(url, {"status": "resolved"}, format="json",
                                      HTTP_IF_MATCH=etag).status_code == 400
    assert client_for(author).patch(url, {"kind": "advisory", "reason": "minor"},
                                    format="json", HTTP_IF_MATCH=etag).status_code == 403
    assert client_for(author).delete(url).status_code == 405


def test_the_demo_holds_every_state_and_loading_it_twice_adds_nothing(settings, monkeypatch):
    from hazards.demo import load_demo
    from hazards.review.audit import verify_all
    from hazards.review.models import ProcessRole, Signature

    monkeypatch.setenv("EXOLEDGER_DEMO_PASSWORD", "demo password for the tests 1")
    load_demo()
    counts = (ProcessRevision.objects.count(), Signature.objects.count(),
              ProcessRole.objects.count(), Transition.objects.count())
    load_demo()

    assert (ProcessRevision.objects.count(), Signature.objects.count(),
            ProcessRole.objects.count(), Transition.objects.count()) == counts
    assert set(ProcessRevision.objects.values_list("state", flat=True)) == {
        "drafting", "lodged", "checked", "endorsed", "sent_back", "replaced"}
    endorsed = ProcessRevision.objects.get(state="endorsed")
    assert [(s.signer.username, s.meaning) for s in endorsed.signatures.order_by("signed_at")] == [
        ("author", "authored"), ("reviewer", "reviewed"), ("approver", "approved")]
    assert verify_all() == []
