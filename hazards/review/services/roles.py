"""Roles on processes, granted and revoked by administrators, with a reason."""

from __future__ import annotations

from django.db import transaction

from hazards import trail
from hazards.review import errors as E
from hazards.review.access import is_administrator
from hazards.review.models import ProcessRole, Role


def role_grant(*, process, user, role: str, granted_by, reason: str) -> ProcessRole:
    """Give `user` a role on `process`. Administrators grant; never to themselves."""
    if granted_by is not None:
        if not is_administrator(granted_by):
            raise E.NotPermitted(E.ONLY_ADMINISTRATORS)
        if granted_by.pk == user.pk:
            raise E.NotPermitted(E.NO_SELF_GRANT)
    if not (reason or "").strip():
        raise E.Invalid(E.REASON_REQUIRED)
    if role not in Role.values:
        raise E.Invalid(f"Unknown role {role!r}.")
    with transaction.atomic(), trail.scope(reason=reason, review_action="role_grant"):
        grant, _ = ProcessRole.objects.get_or_create(
            process=process, user=user, role=role, defaults={"granted_by": granted_by}
        )
    return grant


def role_revoke(*, grant: ProcessRole, revoked_by, reason: str) -> None:
    if not is_administrator(revoked_by):
        raise E.NotPermitted(E.ONLY_ADMINISTRATORS)
    if not (reason or "").strip():
        raise E.Invalid(E.REASON_REQUIRED)
    with transaction.atomic(), trail.scope(reason=reason, review_action="role_revoke"):
        ProcessRole.objects.filter(pk=grant.pk).delete()
