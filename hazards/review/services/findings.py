"""Findings of reviewers and approvers: raised, changed with a reason, never deleted."""

from __future__ import annotations

import datetime as dt

import pghistory
from django.db import transaction

from hazards.access import roles_on
from hazards.review import errors as E
from hazards.review.models import Finding, FindingKind, FindingStatus, ProcessRevision, Role

RAISING_ROLES = {Role.REVIEWER, Role.APPROVER}
CHANGEABLE = ("title", "description", "kind", "owner", "due_date", "status")


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
    with transaction.atomic(), pghistory.context(reason=reason or "finding raised",
                                                 review_action="finding_raise"):
        finding = Finding(process=process, revision=revision, title=title,
                          description=description, kind=kind, owner=owner, due_date=due_date,
                          status=FindingStatus.OPEN, raised_by=user)
        finding.full_clean(exclude=["created_at"])
        finding.save()
    return finding


def finding_update(*, finding: Finding, user, reason: str, **changes) -> Finding:
    """Change a finding (its status, owner, due date, ...); every change needs a reason."""
    if not (reason or "").strip():
        raise E.Invalid(E.REASON_REQUIRED)
    with transaction.atomic(), pghistory.context(reason=reason, review_action="finding_update"):
        finding = Finding.objects.select_for_update().get(pk=finding.pk)
        roles = roles_on(user, finding.process_id)
        if not (roles & RAISING_ROLES or (finding.owner_id == user.pk and roles)):
            raise E.NotPermitted(E.CANNOT_CHANGE_FINDING)
        if finding.status != FindingStatus.OPEN:
            raise E.TransitionRefused(E.FINDING_FROZEN)
        # The owner may report progress; only reviewers and approvers reshape a finding.
        if not roles & RAISING_ROLES and set(changes) - {"status", "description"}:
            raise E.NotPermitted(E.CANNOT_CHANGE_FINDING)
        if "owner" in changes and not roles_on(changes["owner"], finding.process_id):
            raise E.Invalid(E.OWNER_HAS_NO_ROLE)
        for name, value in changes.items():
            if name not in CHANGEABLE:
                raise E.Invalid(f"{name} cannot be changed.")
            setattr(finding, name, value)
        finding.full_clean(exclude=["created_at"])
        finding.save()
    return finding


def open_blocking(process) -> bool:
    return Finding.objects.filter(process=process, kind=FindingKind.BLOCKING,
                                  status=FindingStatus.OPEN).exists()
