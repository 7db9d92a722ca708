"""A notification that asks for an act is settled by that act, in its own transaction and under
its own trail context: signing, sending back, handing a finding over for check, proving a
measure. Notifications about anything else stay unread."""

from __future__ import annotations

import datetime as dt

import pytest
from django.db import transaction

from hazards.oversight.models import Notification
from hazards.review.services import findings, revisions
from tests.review.factories import revision_in, sign

pytestmark = pytest.mark.django_db


def unread(kind, username):
    return Notification.objects.filter(kind=kind, recipient__username=username,
                                       read_at__isnull=True).count()


def test_signing_as_reviewer_settles_the_review_request_and_nothing_else(
        process, people, django_capture_on_commit_callbacks):
    with django_capture_on_commit_callbacks(execute=True):
        lodged = revision_in(process, "lodged", author=people["author"])
        findings.finding_raise(process=process, user=people["approver"], title="Jacket record",
                               kind="advisory", owner=people["reviewer"],
                               due_date=dt.date(2030, 1, 1))
    assert unread("submission_waiting", "reviewer") == 1
    assert unread("finding_assigned", "reviewer") == 1

    with django_capture_on_commit_callbacks(execute=True):
        sign(lodged, people["reviewer"], "reviewed")

    request = Notification.objects.get(kind="submission_waiting",
                                       recipient__username="reviewer")
    assert request.read_at is not None
    # The second reviewer was asked for the same review: nothing waits for it any more.
    assert unread("submission_waiting", "reviewer2") == 0
    # Unrelated: the finding the reviewer owns, and the approver's new request.
    assert unread("finding_assigned", "reviewer") == 1
    assert unread("approval_waiting", "approver") == 1
    # The trail records the settling under the signature's own context.
    event = request.events.filter(pgh_label="update").get()
    assert event.read_at == request.read_at
    assert event.pgh_context.metadata["review_action"] == "sign:reviewed"


def test_a_rolled_back_signature_leaves_the_request_unread(process, people,
                                                           django_capture_on_commit_callbacks):
    with django_capture_on_commit_callbacks(execute=True):
        lodged = revision_in(process, "lodged", author=people["author"])
    with pytest.raises(RuntimeError), transaction.atomic():
        sign(lodged, people["reviewer"], "reviewed")
        assert unread("submission_waiting", "reviewer") == 0
        raise RuntimeError("the request failed after signing")
    assert unread("submission_waiting", "reviewer") == 1


def test_approving_settles_the_approval_request(process, people,
                                                django_capture_on_commit_callbacks):
    with django_capture_on_commit_callbacks(execute=True):
        checked = revision_in(process, "checked", author=people["author"],
                              reviewer=people["reviewer"])
    assert unread("approval_waiting", "approver") == 1
    with django_capture_on_commit_callbacks(execute=True):
        sign(checked, people["approver"], "approved")
    assert unread("approval_waiting", "approver") == 0


def test_sending_back_settles_the_review_request(process, people,
                                                 django_capture_on_commit_callbacks):
    with django_capture_on_commit_callbacks(execute=True):
        lodged = revision_in(process, "lodged", author=people["author"])
    revisions.revision_send_back(revision=lodged, user=people["reviewer2"],
                                 reason="The jacket data are missing.")
    assert unread("submission_waiting", "reviewer") == 0
    assert unread("submission_waiting", "reviewer2") == 0


def test_a_finding_handed_over_for_check_settles_its_owners_notices(
        process, people, django_capture_on_commit_callbacks):
    with django_capture_on_commit_callbacks(execute=True):
        finding = findings.finding_raise(
            process=process, user=people["reviewer"], title="Interlock record",
            kind="blocking", owner=people["author"], due_date=dt.date(2030, 1, 31))
        other = findings.finding_raise(
            process=process, user=people["reviewer"], title="Condenser area",
            kind="advisory", owner=people["author"], due_date=dt.date(2030, 1, 31))
    assert unread("finding_assigned", "author") == 2
    findings.finding_update(finding=finding, user=people["author"], status="ready_for_check",
                            reason="Interlock test record attached.")
    assert unread("finding_assigned", "author") == 1
    assert Notification.objects.get(object_key=f"review.finding:{other.pk}").read_at is None

