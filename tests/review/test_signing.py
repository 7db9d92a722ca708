"""Electronic sign-off: the password at every signature, what a signature records, the seal,
segregation of duties, and who can never sign."""

from __future__ import annotations

import datetime as dt

import pytest
from django.db import transaction
from django.db.utils import DatabaseError

from hazards.models import ReactionStep, ServiceAccount
from hazards.review import errors as E
from hazards.review.audit import verify_signatures
from hazards.review.content import content_sha256
from hazards.review.models import Signature
from hazards.review.services import revisions
from hazards.review.signing import MAX_FAILURES, seal_verifies
from tests.conftest import PASSWORD, make_user
from tests.review.conftest import client_for
from tests.review.factories import (
    FindingFactory,
    RoleFactory,
    assessed_process,
    revision_in,
    sign,
)

pytestmark = pytest.mark.django_db


def url(revision, action):
    return f"/api/v1/revisions/{revision.pk}/{action}/"


def test_a_wrong_or_missing_password_leaves_no_signature(process, author):
    draft = revision_in(process, "drafting", author=author)
    api = client_for(author)

    missing = api.post(url(draft, "submit"), {}, format="json")
    wrong = api.post(url(draft, "submit"), {"password": "not my password"}, format="json")

    assert missing.status_code == 400 and missing.json()["detail"] == E.PASSWORD_REQUIRED
    assert wrong.status_code == 403 and wrong.json()["detail"] == E.WRONG_PASSWORD
    assert not Signature.objects.exists()
    draft.refresh_from_db()
    assert draft.state == "drafting"


def test_the_right_password_signs_with_name_time_meaning_and_content_hash(process, author):
    draft = revision_in(process, "drafting", author=author)

    response = client_for(author).post(url(draft, "submit"), {"password": PASSWORD},
                                       format="json")

    assert response.status_code == 201, response.content
    body = response.json()
    draft.refresh_from_db()
    assert draft.state == "lodged"
    assert body["printed_name"] == "Author Persona"
    assert body["meaning"] == "authored"
    assert body["signed_at"].endswith("Z")
    assert body["content_sha256"] == draft.content_sha256 == content_sha256(draft.content)
    assert body["seal_verifies"] is True
    step = ReactionStep.objects.get(process=process)
    assert draft.content["steps"][0]["indicators"]["inputs_hash"] == (
        step.snapshots.get(is_current=True).inputs_hash)


def test_repeated_wrong_passwords_lock_signing_even_with_the_right_one(process, author):
    draft = revision_in(process, "drafting", author=author)
    api = client_for(author)
    for _ in range(MAX_FAILURES):
        assert api.post(url(draft, "submit"), {"password": "guess"}, format="json").status_code == 403

    locked = api.post(url(draft, "submit"), {"password": PASSWORD}, format="json")

    assert locked.status_code == 429 and locked.json()["detail"] == E.SIGNING_LOCKED
    assert not Signature.objects.exists()


def test_renaming_a_user_after_signing_leaves_the_printed_name(process, author):
    lodged = revision_in(process, "lodged", author=author)
    author.first_name, author.last_name = "Renamed", "Later"
    author.save()

    signature = lodged.signatures.get()
    assert signature.printed_name == "Author Persona"
    assert seal_verifies(signature)
    assert client_for(author).get(f"/api/v1/signatures/{signature.pk}/").json()[
        "printed_name"] == "Author Persona"


def test_signatures_come_in_order_from_three_different_people(process, author, reviewer,
                                                            approver):
    endorsed = revision_in(process, "endorsed", author=author, reviewer=reviewer,
                           approver=approver)

    sigs = list(endorsed.signatures.order_by("signed_at"))
    assert [s.meaning for s in sigs] == ["authored", "reviewed", "approved"]
    assert len({s.signer_id for s in sigs}) == 3
    assert sigs[0].signed_at < sigs[1].signed_at < sigs[2].signed_at
    assert sigs[0].signed_at.utcoffset() == dt.timedelta(0)
    assert verify_signatures() == []


def test_one_person_cannot_author_and_review_the_same_revision(author, approver):
    both = make_user("both")
    process = assessed_process(author=both, reviewer=both, approver=approver)
    lodged = revision_in(process, "lodged", author=both)

    with pytest.raises(E.NotPermitted) as refused:
        sign(lodged, both, "reviewed")

    assert refused.value.message == E.SAME_PERSON
    assert lodged.signatures.count() == 1


def test_the_database_refuses_signatures_out_of_order(process, author, reviewer):
    draft = revision_in(process, "drafting", author=author)
    with pytest.raises(DatabaseError), transaction.atomic():
        Signature.objects.create(revision=draft, signer=reviewer, printed_name="x",
                                 meaning="reviewed", signed_at=dt.datetime.now(dt.UTC),
                                 content_sha256=draft.content_sha256, seal="0" * 64)


def test_a_reviewer_cannot_approve_and_an_approver_cannot_review(process, author, reviewer,
                                                               approver):
    lodged = revision_in(process, "lodged", author=author)
    with pytest.raises(E.NotPermitted) as as_approver:
        sign(lodged, approver, "reviewed")
    sign(lodged, reviewer, "reviewed")
    with pytest.raises(E.NotPermitted) as as_reviewer:
        sign(lodged, reviewer, "approved")

    assert as_approver.value.message == E.NOT_A_REVIEWER
    assert as_reviewer.value.message == E.NOT_AN_APPROVER


def test_an_open_blocking_finding_refuses_approval_until_resolved(process, author, reviewer,
                                                                 approver):
    checked = revision_in(process, "checked", author=author, reviewer=reviewer)
    finding = FindingFactory(process=process, owner=author, raised_by=reviewer, kind="blocking")
    FindingFactory(process=process, owner=author, raised_by=reviewer, kind="advisory")

    refused = client_for(approver).post(url(checked, "approve"), {"password": PASSWORD},
                                        format="json")
    assert refused.status_code == 409 and refused.json()["detail"] == E.OPEN_BLOCKING_FINDINGS

    # The owner cannot close it (issue 18 item 1); reporting it done keeps it blocking.
    furl = f"/api/v1/findings/{finding.pk}/"
    etag = lambda: client_for(author).get(furl)["ETag"]  # noqa: E731 - changes need If-Match
    closed = client_for(author).patch(f"/api/v1/findings/{finding.pk}/",
                                      {"status": "resolved", "reason": "interlock tested"},
                                      format="json", HTTP_IF_MATCH=etag())
    assert closed.status_code == 403, closed.content
    ready = client_for(author).patch(f"/api/v1/findings/{finding.pk}/",
                                     {"status": "ready_for_check", "reason": "interlock tested"},
                                     format="json", HTTP_IF_MATCH=etag())
    assert ready.status_code == 200, ready.content
    still = client_for(approver).post(url(checked, "approve"), {"password": PASSWORD},
                                      format="json")
    assert still.status_code == 409 and still.json()["detail"] == E.OPEN_BLOCKING_FINDINGS
    checked_by_raiser = client_for(reviewer).patch(f"/api/v1/findings/{finding.pk}/", {
        "status": "resolved", "reason": "interlock test record seen"}, format="json",
        HTTP_IF_MATCH=etag())
    assert checked_by_raiser.status_code == 200, checked_by_raiser.content
    approved = client_for(approver).post(url(checked, "approve"), {"password": PASSWORD},
                                         format="json")
    assert approved.status_code == 201, approved.content


def test_approval_marks_each_step_approved_with_its_current_inputs_hash(process, author,
                                                                       reviewer, approver):
    step = ReactionStep.objects.get(process=process)
    ReactionStep._base_manager.filter(pk=step.pk).update(needs_review=True)

    revision_in(process, "endorsed", author=author, reviewer=reviewer, approver=approver)

    step.refresh_from_db()
    assert step.approved_inputs_hash == step.snapshots.get(is_current=True).inputs_hash
    assert step.needs_review is False


def test_service_accounts_and_api_tokens_can_never_sign(process, author):
    from hazards.api.auth import issue_token

    draft = revision_in(process, "drafting", author=author)
    robot = make_user("robot")
    ServiceAccount.objects.create(user=robot)
    RoleFactory(process=process, user=robot, role="author")
    token = issue_token(user=author)

    with pytest.raises(E.NotPermitted) as robot_refused:
        sign(draft, robot, "authored")
    from rest_framework.test import APIClient

    via_token = APIClient()
    via_token.credentials(HTTP_AUTHORIZATION=f"Token {token}")
    response = via_token.post(url(draft, "submit"), {"password": PASSWORD}, format="json")

    assert robot_refused.value.message == E.SERVICE_ACCOUNT_CANNOT_SIGN
    assert response.status_code == 403 and response.json()["detail"] == E.TOKEN_CANNOT_SIGN
    assert not Signature.objects.exists()


def test_administrators_sign_nothing_without_a_role_of_their_own(process, author, admin_user):
    draft = revision_in(process, "drafting", author=author)

    response = client_for(admin_user).post(url(draft, "submit"), {"password": PASSWORD},
                                           format="json")

    assert response.status_code == 403 and response.json()["detail"] == E.NOT_AN_AUTHOR
    assert not Signature.objects.exists()


def test_a_signature_row_cannot_be_changed_or_deleted(process, author):
    signature = revision_in(process, "lodged", author=author).signatures.get()
    with pytest.raises(DatabaseError), transaction.atomic():
        Signature.objects.filter(pk=signature.pk).update(printed_name="Someone Else")
    with pytest.raises(DatabaseError), transaction.atomic():
        Signature.objects.filter(pk=signature.pk).delete()


def test_signed_content_is_frozen_in_the_database(process, author):
    from hazards.review.models import ProcessRevision

    lodged = revision_in(process, "lodged", author=author)
    with pytest.raises(DatabaseError), transaction.atomic():
        ProcessRevision.objects.filter(pk=lodged.pk).update(content={"tampered": True})
    with pytest.raises(DatabaseError), transaction.atomic():
        ProcessRevision.objects.filter(pk=lodged.pk).update(state="endorsed")
    assert revisions.revision_content(process) == lodged.content
