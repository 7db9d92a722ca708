"""The approver's signed risk acceptance of a required measure a revision does not meet.

Signed like a signature: the approver's password re-entered, the database clock, and a
seal over what it binds (the revision's content hash, the step, the requirement and the
reason). The endorsement rule (`revisions.refuse_unmet_measures`) then lets that one
requirement pass on that revision only; a later revision needs its own acceptance.
"""

from __future__ import annotations

from django.db import transaction

from hazards import trail
from hazards.models import Process
from hazards.review import errors as E
from hazards.review.access import roles_on
from hazards.review.models import ProcessRevision, ReviewState, RiskAcceptance, Role
from hazards.review.requirements import unmet_requirements
from hazards.review.signing import (
    Reauthentication,
    acceptance_payload,
    compute_seal,
    db_clock,
    printed_name,
    reauthenticate,
)


def risk_accept(*, revision: ProcessRevision, step_id: int, requirement_key: str, reason: str,
                user, password: str | None, request,
                reauthenticated: Reauthentication | None = None) -> RiskAcceptance:
    """Record the approver's signed acceptance that `requirement_key` of a step stays unmet."""
    if Role.APPROVER not in roles_on(user, revision.process_id):
        raise E.NotPermitted(E.NOT_AN_APPROVER)
    if not (reason or "").strip():
        raise E.Invalid(E.REASON_REQUIRED)
    if not (isinstance(reauthenticated, Reauthentication)
            and reauthenticated.user_pk == user.pk):
        reauthenticate(user=user, password=password, request=request)
    with transaction.atomic(), trail.scope(reason=reason, review_action="risk_acceptance"):
        revision = ProcessRevision.objects.select_for_update().get(pk=revision.pk)
        if Role.APPROVER not in roles_on(user, revision.process_id):
            raise E.NotPermitted(E.NOT_AN_APPROVER)
        if revision.state not in (ReviewState.LODGED, ReviewState.CHECKED):
            raise E.TransitionRefused(E.NOT_BEFORE_ENDORSEMENT)
        site_id = Process._base_manager.filter(pk=revision.process_id).values_list(
            "site_id", flat=True).get()
        unmet = {(u["step"], u["key"]): u for u in unmet_requirements(
            content=revision.content, site_id=site_id, revision_id=revision.pk)}
        item = unmet.get((step_id, requirement_key))
        if item is None:
            raise E.Invalid(E.NOT_AN_UNMET_REQUIREMENT)
        if item["accepted"] is not None:
            raise E.TransitionRefused(E.ALREADY_ACCEPTED)
        acceptance = RiskAcceptance(
            revision=revision, step_id=step_id, requirement_key=requirement_key,
            requirement=f"{item['text']} ({item['reason']})"[:600], reason=reason.strip(),
            signer=user, printed_name=printed_name(user), signed_at=db_clock(),
            content_sha256=revision.content_sha256,
        )
        acceptance.seal = compute_seal(acceptance_payload(acceptance))
        acceptance.full_clean()
        acceptance.save()
    return acceptance
