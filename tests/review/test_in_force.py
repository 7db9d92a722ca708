"""An approval stays in force until a later revision is endorsed (issue 21 item 2).

The rule is the project's own reading of management of change: the plant keeps running on
the assessment the committee approved while changes are prepared, and only the approval of a
new assessment takes its place (common practice, no source). The expected sentences are the
module constants of `hazards.review.selectors`.
"""

from __future__ import annotations

import pytest
from django.db import connection, transaction

from hazards.api.concurrency import etag_for
from hazards.models import ReactionStep
from hazards.review import errors as E
from hazards.review.models import ProcessRevision, Transition
from hazards.review.services import revisions
from hazards.review.services.revisions import REPLACED_BY_LATER
from tests.review.conftest import client_for
from tests.review.factories import revision_in, sign

pytestmark = pytest.mark.django_db


def warm_the_step(author, process):
    """The author raises the process temperature by 5 K (MTSR moves with it), with a reason."""
    step = ReactionStep.objects.get(process=process)
    response = client_for(author).patch(
        f"/api/v1/steps/{step.pk}/",
        {
            "process_temperature": {"value": step.process_temperature_k + 5.0, "unit": "K"},
            "reason": "Tp raised to shorten the batch",
        },
        format="json",
        HTTP_IF_MATCH=etag_for(step),
    )
    assert response.status_code == 200, response.content
    return step


def approval(user, process):
    response = client_for(user).get(f"/api/v1/processes/{process.pk}/approval/")
    assert response.status_code == 200, response.content
    return response.json()


def test_an_endorsed_revision_stays_in_force_while_changes_collect_in_a_draft(
    process, author, reviewer, approver, auditor
):
    endorsed = revision_in(process, "endorsed", author=author, reviewer=reviewer, approver=approver)
    warm_the_step(author, process)

    status = approval(auditor, process)

    endorsed.refresh_from_db()
    assert endorsed.state == "endorsed"
    assert not Transition.objects.filter(revision=endorsed, to_state="replaced").exists()
    assert status["in_force"] == {"id": endorsed.pk, "number": 1}
    assert status["pending"]["number"] == 2 and status["pending"]["state"] == "drafting"
    assert status["indicators_differ"] is True
    assert "mtsr_k" in status["steps"][0]["indicators"]
    assert status["statement"].startswith(
        "In force: revision 1; changes pending in draft 2; these indicators differ from the "
        "approved ones: step 1. "
    )
    assert "MTSR" in status["statement"]
    listed = client_for(auditor).get(f"/api/v1/revisions/?process={process.pk}").json()
    assert [(r["number"], r["state"]) for r in listed["results"]] == [
        (1, "endorsed"),
        (2, "drafting"),
    ]


def test_endorsing_the_next_revision_replaces_the_one_in_force(
    process, author, reviewer, approver, auditor
):
    first = revision_in(process, "endorsed", author=author, reviewer=reviewer, approver=approver)
    warm_the_step(author, process)
    revisions.revisions_reconcile(process=process)
    draft = ProcessRevision.objects.get(process=process, number=2)
    for user, meaning in ((author, "authored"), (reviewer, "reviewed"), (approver, "approved")):
        sign(draft, user, meaning)

    first.refresh_from_db()
    assert first.state == "replaced"
    assert Transition.objects.get(revision=first, to_state="replaced").reason == (
        REPLACED_BY_LATER.format(number=2)
    )
    assert approval(auditor, process)["statement"] == "In force: revision 2; no changes pending."


def test_a_lodged_revision_that_changes_is_still_replaced_and_the_approval_stays(
    process, author, reviewer, approver
):
    revision_in(process, "endorsed", author=author, reviewer=reviewer, approver=approver)
    warm_the_step(author, process)
    revisions.revisions_reconcile(process=process)
    lodged = ProcessRevision.objects.get(process=process, number=2)
    sign(lodged, author, "authored")
    ReactionStep.objects.filter(process=process).update(reaction_mass_kg=4100.0)

    revisions.revisions_reconcile(process=process)

    lodged.refresh_from_db()
    assert lodged.state == "replaced"
    states = dict(ProcessRevision.objects.filter(process=process).values_list("number", "state"))
    assert states == {1: "endorsed", 2: "replaced", 3: "drafting"}


def test_nothing_replaces_an_endorsed_revision_but_a_later_approval(
    process, author, reviewer, approver
):
    endorsed = revision_in(process, "endorsed", author=author, reviewer=reviewer, approver=approver)
    with pytest.raises(E.TransitionRefused) as refused:
        revisions._move(endorsed, "replaced", actor=None, reason="tidying up")
    assert refused.value.message == E.IN_FORCE_UNTIL_REPLACED
    with pytest.raises(Exception, match="stays in force until a later one is endorsed"):
        with transaction.atomic():
            ProcessRevision.objects.filter(pk=endorsed.pk).update(state="replaced")
    endorsed.refresh_from_db()
    assert endorsed.state == "endorsed"


def test_the_revalidation_of_the_approval_in_force_continues_through_changes(
    process, author, reviewer, approver
):
    from hazards.oversight.revalidation import active_schedules

    endorsed = revision_in(process, "endorsed", author=author, reviewer=reviewer, approver=approver)
    warm_the_step(author, process)
    revisions.revisions_reconcile(process=process)
    assert list(
        active_schedules().filter(process=process).values_list("revision_id", flat=True)
    ) == [endorsed.pk]


def test_pages_and_dossier_say_which_revision_is_in_force(
    process, author, reviewer, approver, auditor
):
    from hazards.dossier import review_bridge
    from hazards.dossier.content import dossier_content

    revision_in(process, "endorsed", author=author, reviewer=reviewer, approver=approver)
    warm_the_step(author, process)
    client = client_for(auditor)
    expected = (
        "In force: revision 1; changes pending in draft 2; these indicators differ "
        "from the approved ones"
    )
    for url in (f"/processes/{process.pk}/", f"/processes/{process.pk}/review/"):
        page = client.get(url)
        assert page.status_code == 200
        assert expected in page.content.decode(), url

    latest = review_bridge.latest_revision(process, reconcile=True)
    content = dossier_content(process, latest)
    assert latest.number == 1
    assert content["context"]["approval"]["statement"].startswith(expected)


def test_the_migration_puts_an_approval_replaced_by_an_edit_back_in_force(
    process, author, reviewer, approver
):
    import importlib

    import pgtrigger
    from django.apps import apps

    migration = importlib.import_module("hazards.review.migrations.0008_restore_in_force")
    endorsed = revision_in(process, "endorsed", author=author, reviewer=reviewer, approver=approver)
    # What the application did before: an edit marked the approval replaced.
    with pgtrigger.ignore("review.ProcessRevision:revision_guard_update"):
        ProcessRevision.objects.filter(pk=endorsed.pk).update(state="replaced")

    with connection.schema_editor(atomic=False) as editor:
        migration.restore_in_force(apps, editor)

    endorsed.refresh_from_db()
    assert endorsed.state == "endorsed"
    back = Transition.objects.get(revision=endorsed, from_state="replaced")
    assert back.to_state == "endorsed" and back.reason == migration.RESTORED
