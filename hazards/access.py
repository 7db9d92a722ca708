"""Who may see and change what: the one place every page and endpoint asks.

Until roles per process exist, every signed-in user sees every process; writing needs
the model's Django permission. The review workflow narrows both by role.
"""

from __future__ import annotations

from django.db.models import QuerySet


def visible(user, queryset: QuerySet) -> QuerySet:
    """The part of `queryset` that `user` may see."""
    if not getattr(user, "is_authenticated", False):
        return queryset.none()
    return queryset


def is_service_account(user) -> bool:
    """Accounts of other systems read and write data but can never sign."""
    from hazards.models import ServiceAccount

    return bool(getattr(user, "pk", None)) and ServiceAccount.objects.filter(user=user).exists()
