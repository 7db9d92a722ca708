"""The reason a person gives for a change reaches the audit trail (issue 21 item 1).

The edits commit for real (transactional tests) so that the review layer's after-commit
reconciliation runs inside the same request, as it does on the server: it must not put its
own sentence in place of the person's reason. "Every change to signed data carries the
person's reason" is the project's rule (README, access.REASON_REQUIRED); the expected texts
are the ones the tests type.
"""

from __future__ import annotations

import pytest

from hazards.api.concurrency import etag_for
from hazards.models import ReactionStep
from hazards.review.selectors import process_history
from hazards.review.services.revisions import REPLACED_BECAUSE_CHANGED
from tests.review.conftest import client_for
from tests.review.factories import revision_in

pytestmark = pytest.mark.django_db(transaction=True)


def patch_step(user, step, data):
    step.refresh_from_db()
    return client_for(user).patch(
        f"/api/v1/steps/{step.pk}/", data, format="json", HTTP_IF_MATCH=etag_for(step)
    )


def step_reasons(process, step):
    return [
        row["reason"]
        for row in process_history(process)
        if row["model"] == "hazards.ReactionStep"
        and row["object_id"] == step.pk
        and row["action"] == "update"
        and "reaction_mass_kg" in row["changes"]
    ]


def test_the_reason_typed_for_a_change_of_approved_data_is_in_the_trail(
    process, author, reviewer, approver
):
    revision_in(process, "endorsed", author=author, reviewer=reviewer, approver=approver)
    step = ReactionStep.objects.get(process=process)

    response = patch_step(
        author,
        step,
        {
            "reaction_mass": {"value": 4500, "unit": "kg"},
            "reason": "charge reduced after the pilot batch",
        },
    )
    assert response.status_code == 200, response.content

    assert step_reasons(process, step) == ["charge reduced after the pilot batch"]
    assert REPLACED_BECAUSE_CHANGED not in step_reasons(process, step)


def test_a_second_change_while_the_new_draft_is_open_also_needs_and_keeps_a_reason(
    process, author, reviewer, approver
):
    revision_in(process, "endorsed", author=author, reviewer=reviewer, approver=approver)
    step = ReactionStep.objects.get(process=process)
    first = patch_step(
        author,
        step,
        {
            "reaction_mass": {"value": 4500, "unit": "kg"},
            "reason": "charge reduced after the pilot batch",
        },
    )
    assert first.status_code == 200, first.content

    without = patch_step(author, step, {"reaction_mass": {"value": 4400, "unit": "kg"}})
    assert without.status_code == 400, without.content
    assert "reason" in str(without.json())

    second = patch_step(
        author,
        step,
        {
            "reaction_mass": {"value": 4400, "unit": "kg"},
            "reason": "second pilot batch confirmed the charge",
        },
    )
    assert second.status_code == 200, second.content
    assert step_reasons(process, step) == [
        "charge reduced after the pilot batch",
        "second pilot batch confirmed the charge",
    ]
