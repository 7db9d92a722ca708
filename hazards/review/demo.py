"""The review part of the demo: roles for the demo users and processes in every review state.

Idempotent: roles are get-or-create, and the workflow of each demo process is only driven
while the process has no revision yet, so running it twice adds nothing.
"""

from __future__ import annotations

import datetime as dt

from django.contrib.auth import get_user_model
from django.test import RequestFactory

from hazards.models import Process
from hazards.review.models import ProcessRevision, ReviewState, Role
from hazards.review.services import findings, revisions
from hazards.review.services.roles import role_grant

DUE = dt.date(2027, 3, 31)
DEMO_ROLES = {"author": Role.AUTHOR, "reviewer": Role.REVIEWER, "approver": Role.APPROVER,
              "auditor": Role.AUDITOR}
# Demo process name -> the review state it is brought to.
TARGETS = {
    "QX-17 amide intermediate": ReviewState.ENDORSED,
    "Varnholt nitro-aromatic reduction": ReviewState.CHECKED,
    "Peroxide-cured binder PB-9": ReviewState.LODGED,
}


def _request(user):
    request = RequestFactory().post("/demo/")
    request.user = user
    return request


def load_review_demo(password: str) -> dict:
    User = get_user_model()
    users = {name: User.objects.get(username=name) for name in [*DEMO_ROLES, "admin"]}
    processes = list(Process.objects.filter(site__code="varnholt").order_by("name"))
    for process in processes:
        for name, role in DEMO_ROLES.items():
            role_grant(process=process, user=users[name], role=role, granted_by=users["admin"],
                       reason="demo scenario: roles of the demo users")
    states = {}
    for process in processes:
        target = TARGETS.get(process.name)
        if target is None or ProcessRevision.objects.filter(process=process).exists():
            continue
        states[process.name] = _drive(process, target, users, password)
    return states


def _sign(revision, user, meaning, password):
    revisions.revision_sign(revision=revision, user=user, password=password, meaning=meaning,
                            request=_request(user), reason="demo scenario")


def _drive(process, target, users, password) -> str:
    author, reviewer, approver = users["author"], users["reviewer"], users["approver"]
    first = revisions.revision_open(process=process, user=author, reason="demo scenario")
    if target == ReviewState.ENDORSED:
        # 1 sent back; 2 endorsed, then replaced by 3 (endorsed at revalidation); 4 drafting.
        _sign(first, author, "authored", password)
        draft = revisions.revision_send_back(
            revision=first, user=reviewer,
            reason="demo: the basis calorimetry run of step 2 needs its accumulation checked")
        for number in (2, 3):
            _sign(draft, author, "authored", password)
            _sign(draft, reviewer, "reviewed", password)
            if number == 3:
                findings.finding_raise(
                    process=process, revision=draft, user=approver, kind="advisory",
                    owner=author, due_date=DUE,
                    title="Repeat the DSC of step 1 with a second crucible type",
                    description="Advisory: confirms the onset; no effect on the class.")
            _sign(draft, approver, "approved", password)
            draft = revisions.revision_open(process=process, user=author,
                                            reason="demo: revalidation of the assessment")
        return ReviewState.ENDORSED
    _sign(first, author, "authored", password)
    if target == ReviewState.CHECKED:
        _sign(first, reviewer, "reviewed", password)
        findings.finding_raise(
            process=process, revision=first, user=reviewer, kind="blocking", owner=author,
            title="Dosing interlock of step 1 not yet documented",
            description="Blocking: the approval waits for the interlock test record.",
            due_date=DUE)
    return target
