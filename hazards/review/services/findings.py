"""Findings of reviewers and approvers: raised, worked on, checked, never deleted.

Segregation of duties: the owner of a finding reports progress (notes) and marks it ready
for check; only a *checker* settles it (resolved or withdrawn), reopens it, or changes its
kind, owner or due date. A checker is the person who raised it, or a reviewer or approver
of the process who does not own it (so an owner who is also a reviewer cannot close what was
raised against their own work). The title and description are the raiser's words: only the
raiser corrects them, and the history keeps every version.
"""

from __future__ import annotations

import datetime as dt

from django.db import transaction

from hazards import trail
from hazards.review import errors as E
from hazards.review.access import roles_on
from hazards.review.models import (
    UNSETTLED_FINDING,
    Finding,
    FindingKind,
    FindingNote,
    FindingStatus,
    ProcessRevision,
    Role,
)

RAISING_ROLES = {Role.REVIEWER, Role.APPROVER}
CHANGEABLE = ("title", "description", "kind", "owner", "due_date", "status")
RAISERS_WORDS = ("title", "description")
SETTLED = (FindingStatus.RESOLVED, FindingStatus.WITHDRAWN)


def finding_raise(*, process, user, title: str, kind: str, owner, due_date: dt.date,
                  description: str = "", revision: ProcessRevision | None = None,
                  reason: str = "") -> Finding:
    """Record a finding on a process (optionally on one of its revisions)."""
    if not roles_on(user, process.pk) & RAISING_ROLES:
        raise E.NotPermitted(E.CANNOT_RAISE_FINDING)
    if not roles_on(owner, process.pk):
        raise E.Invalid(E.OWNER_HAS_NO_ROLE)
    if revision is not None and revision.process_id != process.pk:
        raise E.Invalid("The revision belongs to another process.")
    with transaction.atomic(), trail.scope(reason=reason or "finding raised",
                                                 review_action="finding_raise"):
        finding = Finding(process=process, revision=revision, title=title,
                          description=description, kind=kind, owner=owner, due_date=due_date,
                          status=FindingStatus.OPEN, raised_by=user)
        finding.full_clean(exclude=["created_at"])
        finding.save()
    return finding


def is_checker(user, finding: Finding, roles: set | None = None) -> bool:
    """Whether `user` may settle, reopen or reshape the finding (see the module's rule)."""
    if finding.raised_by_id == user.pk:
        return True
    roles = roles_on(user, finding.process_id) if roles is None else roles
    return bool(roles & RAISING_ROLES) and finding.owner_id != user.pk


def may_note(user, finding: Finding, roles: set | None = None) -> bool:
    roles = roles_on(user, finding.process_id) if roles is None else roles
    return (finding.owner_id == user.pk and bool(roles)) or is_checker(user, finding, roles)


def _add_note(finding: Finding, user, text: str) -> FindingNote:
    note = FindingNote(finding=finding, author=user, text=text)
    note.full_clean(exclude=["created_at"])
    note.save()
    return note


def finding_note(*, finding: Finding, user, text: str) -> FindingNote:
    """Add a progress note (the owner's report of what was done, or a checker's remark)."""
    text = (text or "").strip()
    if not text:
        raise E.Invalid(E.NOTE_REQUIRED)
    with transaction.atomic(), trail.scope(reason=text[:200],
                                                 review_action="finding_note"):
        finding = Finding.objects.select_for_update().get(pk=finding.pk)
        if not may_note(user, finding):
            raise E.NotPermitted(E.CANNOT_NOTE_FINDING)
        if finding.status in SETTLED:
            raise E.TransitionRefused(E.FINDING_FROZEN)
        return _add_note(finding, user, text)


def _check_allowed(finding: Finding, user, roles: set, changes: dict) -> None:
    """Raise unless `user` may make `changes` to `finding` (whose row is locked)."""
    checker = is_checker(user, finding, roles)
    if not (checker or (finding.owner_id == user.pk and roles)):
        raise E.NotPermitted(E.CANNOT_CHANGE_FINDING)
    if finding.status in SETTLED:
        raise E.TransitionRefused(E.FINDING_FROZEN)
    if set(changes) & set(RAISERS_WORDS) and finding.raised_by_id != user.pk:
        raise E.NotPermitted(E.RAISERS_TEXT)
    target = changes.get("status", finding.status)
    if not checker:
        # The owner's one move: open -> ready for check (with the reason as a note).
        if set(changes) != {"status"} or target != FindingStatus.READY_FOR_CHECK:
            raise E.NotPermitted(E.ONLY_CHECKER_SETTLES)
    if target != finding.status:
        if target == FindingStatus.READY_FOR_CHECK and finding.status != FindingStatus.OPEN:
            raise E.TransitionRefused(E.NOT_OPEN_FINDING)
        if target == FindingStatus.OPEN and finding.status != FindingStatus.READY_FOR_CHECK:
            raise E.TransitionRefused(E.NOT_READY_FINDING)


def _value(obj, name: str | None = None):
    value = getattr(obj, name) if name else obj
    return getattr(value, "pk", value)


def finding_update(*, finding: Finding, user, reason: str, **changes) -> Finding:
    """Change a finding (its status, owner, due date, ...); every change needs a reason.

    Marking it ready for check keeps the reason as a note of the owner's.
    """
    if not (reason or "").strip():
        raise E.Invalid(E.REASON_REQUIRED)
    for name in changes:
        if name not in CHANGEABLE:
            raise E.Invalid(f"{name} cannot be changed.")
    with transaction.atomic(), trail.scope(reason=reason, review_action="finding_update"):
        finding = Finding.objects.select_for_update().get(pk=finding.pk)
        roles = roles_on(user, finding.process_id)
        # A full PUT repeats what it does not change; only real changes are judged.
        changes = {k: v for k, v in changes.items() if _value(finding, k) != _value(v)}
        _check_allowed(finding, user, roles, changes)
        if "owner" in changes and not roles_on(changes["owner"], finding.process_id):
            raise E.Invalid(E.OWNER_HAS_NO_ROLE)
        becomes_ready = (changes.get("status") == FindingStatus.READY_FOR_CHECK
                         and finding.status == FindingStatus.OPEN)
        for name, value in changes.items():
            setattr(finding, name, value)
        finding.full_clean(exclude=["created_at"])
        finding.save()
        if becomes_ready:
            _add_note(finding, user, reason.strip())
    return finding


def blocking_findings(process):
    """The blocking findings not yet settled (open or ready for check): while one exists the
    approval is refused; the review page names them above the approver's signing form."""
    return Finding.objects.filter(process=process, kind=FindingKind.BLOCKING,
                                  status__in=UNSETTLED_FINDING).order_by("due_date", "pk")


def open_blocking(process) -> bool:
    return blocking_findings(process).exists()
