"""The lighter review path (issue 10 item 2): with the site's policy on and every open change
of the process within its tolerances, the approver endorses a lodged revision without the
reviewer's step; otherwise three signatures as always. Tolerances and the 121e3 / 240e3 J/kg
heats are those of `test_changes.test_the_lighter_path_needs_the_site_to_allow_it...`
(+0.8 % heat moves ΔTad by about 0.5 K; twice the heat doubles it; common practice, no
source)."""

from __future__ import annotations

import pytest
from django.db import Error, transaction

from hazards.models import CalorimetryRun
from hazards.oversight.models import ChangePolicy, ChangeRecord
from hazards.review import errors as E
from hazards.review.models import ProcessRevision, Signature, Transition
from hazards.review.services.revisions import revisions_reconcile
from hazards.review.signing import compute_seal, db_clock, seal_payload, seal_verifies
from hazards.services import measures
from tests.review.factories import RoleFactory, sign

pytestmark = pytest.mark.django_db


def lodged_after_change(process, step, people, *, allowed=True, heat=121e3):
    """Change the approved step's heat, then lodge the next revision (author signs)."""
    ChangePolicy.objects.create(site=process.site, light_review_allowed=allowed,
                                relative_tolerance_percent=100.0)
    CalorimetryRun.objects.filter(step=step).update(specific_reaction_heat_j_per_kg=heat)
    revisions_reconcile(process=process)  # revision 1 stays in force; opens revision 2
    revision = ProcessRevision.objects.get(process=process, state="drafting")
    sign(revision, people["author"], "authored")
    revision.refresh_from_db()
    assert revision.state == "lodged"
    return revision


def test_all_changes_light_the_approver_endorses_from_lodged(endorsed, step, people, process):
    revision = lodged_after_change(process, step, people)
    record = ChangeRecord.objects.get(process=process)
    assert record.review_path == "light" and record.state == "open"

    signature = sign(revision, people["approver"], "approved")

    revision.refresh_from_db()
    assert revision.state == "endorsed"
    assert [s.meaning for s in revision.signatures.order_by("id")] == ["authored", "approved"]
    assert signature.content_sha256 == revision.content_sha256 and seal_verifies(signature)
    move = Transition.objects.get(revision=revision, to_state="endorsed")
    assert move.from_state == "lodged" and move.signature == signature
    assert move.actor == people["approver"]
    assert move.reason.startswith("Light review path: reviewer step not required")
    assert str(record.pk) in move.reason
    record.refresh_from_db()
    assert record.state == "closed" and record.closed_by_revision == revision
    assert record.closed_at == signature.signed_at
    endorsed.refresh_from_db()
    assert endorsed.state == "replaced"


def test_the_review_page_names_the_light_path(endorsed, step, people, process):
    from django.test import Client

    lodged_after_change(process, step, people)
    client = Client()
    client.force_login(people["approver"])
    page = client.get(f"/processes/{process.pk}/review/")
    assert page.status_code == 200
    assert b"Light review path: reviewer step not required" in page.content


def test_one_change_beyond_tolerance_needs_the_reviewer(endorsed, step, people, process):
    # Twice the heat makes this step class 4, which the default measure policy lets through
    # only with a proven barrier at MTT (issue 17); that rule has its own tests
    # (tests/measures/test_endorsement.py). Here the site asks for none, so what is tested is
    # the review path alone.
    measures.measure_policy_set(site=process.site,
                                data={"requirements": {str(c): [] for c in range(1, 6)}})
    revision = lodged_after_change(process, step, people, heat=240e3)
    assert ChangeRecord.objects.get(process=process).review_path == "full"
    with pytest.raises(E.TransitionRefused) as refused:
        sign(revision, people["approver"], "approved")
    assert refused.value.message == E.NOT_WITHIN_LIGHT_PATH
    revision.refresh_from_db()
    assert revision.state == "lodged" and revision.signatures.count() == 1
    # The full path still works: reviewer, then approver.
    sign(revision, people["reviewer"], "reviewed")
    sign(revision, people["approver"], "approved")
    revision.refresh_from_db()
    assert revision.state == "endorsed"
    assert ChangeRecord.objects.get(process=process).state == "closed"


def test_a_tolerance_tightened_after_the_change_is_applied_at_approval(
        endorsed, step, people, process):
    revision = lodged_after_change(process, step, people)
    ChangePolicy.objects.filter(site=process.site).update(relative_tolerance_percent=0.0,
                                                          temperature_tolerance_k=0.0)
    with pytest.raises(E.TransitionRefused) as refused:
        sign(revision, people["approver"], "approved")
    assert refused.value.message == E.NOT_WITHIN_LIGHT_PATH


@pytest.mark.parametrize("policy", ["off", "none"])
def test_policy_off_refuses_approval_from_lodged(endorsed, step, people, process, policy):
    revision = lodged_after_change(process, step, people, allowed=False)
    if policy == "none":
        ChangePolicy.objects.filter(site=process.site).delete()
    # The record says "full" (policy off); even a record marked light would not do.
    ChangeRecord.objects.filter(process=process).update(review_path="light")
    with pytest.raises(E.TransitionRefused) as refused:
        sign(revision, people["approver"], "approved")
    assert refused.value.message == E.NOT_CHECKED
    revision.refresh_from_db()
    assert revision.state == "lodged"


def test_a_first_revision_never_takes_the_light_path(people, process):
    from tests.review.factories import revision_in

    ChangePolicy.objects.create(site=process.site, light_review_allowed=True)
    revision = revision_in(process, "lodged", author=people["author"])
    with pytest.raises(E.TransitionRefused) as refused:
        sign(revision, people["approver"], "approved")
    assert refused.value.message == E.NOT_WITHIN_LIGHT_PATH


def test_the_author_cannot_approve_their_own_revision_on_the_light_path(
        endorsed, step, people, process):
    RoleFactory(process=process, user=people["author"], role="approver")
    revision = lodged_after_change(process, step, people)
    with pytest.raises(E.NotPermitted) as refused:
        sign(revision, people["author"], "approved")
    assert refused.value.message == E.SAME_PERSON
    revision.refresh_from_db()
    assert revision.state == "lodged"
    assert ChangeRecord.objects.get(process=process).state == "open"


def _raw_approval(revision, user):
    signed_at = db_clock()
    fields = dict(revision=revision, signer=user, printed_name=user.username,
                  meaning="approved", signed_at=signed_at,
                  content_sha256=revision.content_sha256)
    return Signature.objects.create(**fields, seal=compute_seal(seal_payload(**fields)))


def test_the_database_refuses_a_skipped_review_off_the_light_path(
        endorsed, step, people, process):
    revision = lodged_after_change(process, step, people, heat=240e3)
    with pytest.raises(Error), transaction.atomic():
        _raw_approval(revision, people["approver"])
    with pytest.raises(Error), transaction.atomic():
        ProcessRevision.objects.filter(pk=revision.pk).update(state="endorsed")
    revision.refresh_from_db()
    assert revision.state == "lodged" and revision.signatures.count() == 1


def test_the_database_admits_nothing_after_a_light_approval(endorsed, step, people, process):
    revision = lodged_after_change(process, step, people)
    sign(revision, people["approver"], "approved")
    with pytest.raises(Error), transaction.atomic():
        revision.refresh_from_db()
        fields = dict(revision=revision, signer=people["reviewer"],
                      printed_name="reviewer", meaning="reviewed", signed_at=db_clock(),
                      content_sha256=revision.content_sha256)
        Signature.objects.create(**fields, seal=compute_seal(seal_payload(**fields)))


@pytest.mark.parametrize("heat, status", [(121e3, 201), (240e3, 409)])
def test_the_api_approve_action_follows_the_light_path(endorsed, step, people, process,
                                                        heat, status):
    from tests.conftest import PASSWORD
    from tests.review.conftest import client_for

    revision = lodged_after_change(process, step, people, heat=heat)
    response = client_for(people["approver"]).post(
        f"/api/v1/revisions/{revision.pk}/approve/", {"password": PASSWORD}, format="json")
    assert response.status_code == status, response.content
    revision.refresh_from_db()
    assert revision.state == ("endorsed" if status == 201 else "lodged")
    if status == 409:
        assert E.NOT_WITHIN_LIGHT_PATH.encode() in response.content


def test_the_approver_signs_on_the_lighter_path_in_the_browser(endorsed, step, people, process):
    from django.test import Client

    from tests.conftest import PASSWORD

    revision = lodged_after_change(process, step, people)
    approver, reviewer = Client(), Client()
    approver.force_login(people["approver"])
    reviewer.force_login(people["reviewer"])
    page = approver.get(f"/processes/{process.pk}/review/").content.decode()
    assert "Approve on the lighter review path (sign as approver)" in page
    assert 'name="sign-meaning" value="approved"' in page
    # The reviewer still gets the ordinary reviewer's signature, not the lighter one.
    other = reviewer.get(f"/processes/{process.pk}/review/").content.decode()
    assert "Sign as reviewer" in other and "Approve on the lighter review path" not in other

    done = approver.post(f"/revisions/{revision.pk}/sign/", {
        "sign-meaning": "approved", "sign-password": PASSWORD, "sign-reason": ""})
    assert done.status_code == 302, done.content.decode()[:2000]
    revision.refresh_from_db()
    assert revision.state == "endorsed"
    assert Transition.objects.get(revision=revision, to_state="endorsed").from_state == "lodged"


def test_off_the_lighter_path_the_approver_is_offered_no_signature_on_a_lodged_revision(
        endorsed, step, people, process):
    from django.test import Client

    lodged_after_change(process, step, people, heat=240e3)  # beyond the tolerance
    approver = Client()
    approver.force_login(people["approver"])
    page = approver.get(f"/processes/{process.pk}/review/").content.decode()
    assert "Sign as approver" not in page
