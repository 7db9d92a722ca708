"""The queue side of notifications: the hooks and the change records ask for a notification,
which the `deliver` task writes and e-mails once the transaction commits
(this module -> `tasks` -> `notify`, the delivery side)."""

from __future__ import annotations

from django.db import transaction

from hazards.oversight.models import Kind
from hazards.oversight.tasks import deliver


def later(kind: str, object_key: str, period: str = "", *, using: str = "default") -> None:
    """Deliver a notification in the background once this transaction commits."""
    def enqueue():
        deliver.enqueue(kind, object_key, period)

    transaction.on_commit(enqueue, using=using, robust=True)


def approval_lapsed_later(revision_ids, *, using: str = "default") -> None:
    for revision_id in sorted(revision_ids):
        later(Kind.APPROVAL_LAPSED, f"review.processrevision:{revision_id}", using=using)
