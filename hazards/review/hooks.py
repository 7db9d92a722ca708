"""After a change to a process's inputs commits, replace the signed revisions it made stale.

Signals do not fire for `QuerySet.update()` or raw SQL; for those the same reconciliation
runs when a revision is read or signed (`services.revisions.revisions_reconcile`), so a
stale revision can never be signed, only be shown as replaced a little later.
"""

from __future__ import annotations

import logging

from django.db import transaction
from django.db.models.signals import post_delete, post_save

from hazards import models as m
from hazards.models import Process, ReactionStep, Solvent, Vessel
from hazards.review.access import process_id_of
from hazards.review.models import SIGNED_STATES, ProcessRevision
from hazards.review.services.revisions import revisions_reconcile

log = logging.getLogger(__name__)


def _process_ids(instance) -> set[int]:
    if isinstance(instance, Vessel | Solvent):
        field = "vessel" if isinstance(instance, Vessel) else "solvent"
        return set(ReactionStep._base_manager.filter(**{field: instance.pk})
                   .values_list("process_id", flat=True))
    try:
        pid = process_id_of(instance)
    except Exception:  # a parent deleted in the same cascade
        return set()
    return {pid} if pid else set()


def _reconcile(process_ids: set[int]) -> None:
    signed = ProcessRevision.objects.filter(
        process_id__in=process_ids, state__in=[s.value for s in SIGNED_STATES]
    ).values_list("process_id", flat=True).distinct()
    for pid in signed:
        revisions_reconcile(process=Process(pk=pid))


def _changed(sender, instance, **kwargs) -> None:
    ids = _process_ids(instance)
    if ids:
        transaction.on_commit(lambda: _reconcile(ids), robust=True)


def connect() -> None:
    for model in (m.Process, m.ReactionStep, m.CalorimetryRun, m.DecompositionTest,
                  m.DecompositionPeak, m.CalorimetrySeries, m.Vessel, m.Solvent):
        post_save.connect(_changed, sender=model, dispatch_uid=f"review-{model.__name__}-save")
        post_delete.connect(_changed, sender=model, dispatch_uid=f"review-{model.__name__}-del")
