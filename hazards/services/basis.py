"""One basis per step, switched in one step (issue 21 item 6).

A step rests on one calorimetry run and one decomposition test marked as its basis (a
partial unique constraint per step). Marking another record as the basis releases the
previous one in the same transaction, under its row lock, before the new one is validated:
the person never meets the constraint, the indicators are recomputed once, and the audit
trail shows both changes under the same reason.
"""

from __future__ import annotations

from django.db import models
from django.db.models import F
from django.db.models.functions import Now

from hazards.models import CalorimetryRun, DecompositionTest

BASIS_MODELS = (CalorimetryRun, DecompositionTest)


def release_previous_basis(*, instance: models.Model) -> list[int]:
    """When `instance` is marked as the basis of its step, unmark the step's other basis
    record of the same kind and return its id (call inside the write's transaction, before
    `full_clean`). The step is recomputed by the write that follows, once."""
    if not isinstance(instance, BASIS_MODELS) or not instance.is_basis or not instance.step_id:
        return []
    model = type(instance)
    others = list(
        model._base_manager.select_for_update(no_key=True)
        .filter(step_id=instance.step_id, is_basis=True)
        .exclude(pk=instance.pk)
        .order_by("pk")
        .values_list("pk", flat=True)
    )
    if others:
        # The plain QuerySet.update: the trigger queues the step, and the save of `instance`
        # that follows drains the queue (one recompute for the whole switch).
        models.QuerySet.update(
            model._base_manager.filter(pk__in=others),
            is_basis=False, version=F("version") + 1, updated_at=Now(),
        )
    return others
