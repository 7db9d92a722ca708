"""What every record that feeds the indicators shares."""

from __future__ import annotations

import pghistory
from django.db import models, transaction
from django.dispatch import Signal

# Sent inside the writing transaction after indicator inputs were written (save, delete and
# the bulk queryset writes): the indicator recompute subscribes
# (`hazards.services.indicators.on_inputs_written`, connected in HazardsConfig.ready) and
# drains the queue of steps the triggers filled in the same transaction. A commit with
# queued steps left is refused by a deferred constraint trigger (hazards.models.triggers),
# so a missing subscriber fails loudly instead of leaving stale indicators.
inputs_written = Signal()


class InputQuerySet(models.QuerySet):
    """Bulk writes of indicator inputs recompute the steps they touch before they return.

    Triggers queue the affected steps in the same statement as the change (so raw SQL is
    caught too); these methods drain that queue inside the same transaction.
    """

    def update(self, **kwargs):
        with transaction.atomic(using=self.db):
            count = super().update(**kwargs)
            _flush(self.db)
        return count

    def delete(self):
        with transaction.atomic(using=self.db):
            result = super().delete()
            _flush(self.db)
        return result

    def bulk_create(self, objs, *args, **kwargs):
        with transaction.atomic(using=self.db):
            created = super().bulk_create(objs, *args, **kwargs)
            _flush(self.db)
        return created

    def bulk_update(self, objs, fields, *args, **kwargs):
        with transaction.atomic(using=self.db):
            count = super().bulk_update(objs, fields, *args, **kwargs)
            _flush(self.db)
        return count


def _flush(using: str) -> None:
    inputs_written.send(sender=InputModel, using=using)


class InputModel(models.Model):
    """A record whose changes make indicator snapshots stale."""

    created_at = models.DateTimeField(auto_now_add=True)
    updated_at = models.DateTimeField(auto_now=True)
    # Incremented on every save: the ETag of the API and the form version check.
    version = models.PositiveIntegerField(default=1)

    objects = InputQuerySet.as_manager()

    class Meta:
        abstract = True

    def save(self, *args, **kwargs):
        using = kwargs.get("using") or self._state.db or "default"
        with transaction.atomic(using=using):
            if self.pk is not None and not self._state.adding:
                self.version = (self.version or 0) + 1
                if kwargs.get("update_fields") is not None:
                    kwargs["update_fields"] = {*kwargs["update_fields"], "version", "updated_at"}
            super().save(*args, **kwargs)
            _flush(using)

    def delete(self, *args, **kwargs):
        using = kwargs.get("using") or self._state.db or "default"
        with transaction.atomic(using=using):
            result = super().delete(*args, **kwargs)
            _flush(using)
        return result


def tracked(*, scope: tuple[str, ...] = (), **kwargs):
    """Audit every insert, update and delete of a model in an append-only event table.

    The event table gets an index of (record, event id): a history page looks up the event
    before each row it shows (for "from -> to") through it, instead of reading every event of
    a record that has tens of thousands. And one of (record, time, event id) plus one per
    `scope` field (the process or step a process's history selects the table's events by) of
    (field, time, event id): a history page reads its newest (or next older) rows in the
    history's order (`hazards.review.history`) straight from them, not by sorting every
    event of the record or process."""
    meta = dict(kwargs.pop("meta", None) or {})
    meta.setdefault("indexes", [
        models.Index(fields=["pgh_obj", "pgh_id"]),
        models.Index(fields=["pgh_obj", "pgh_created_at", "pgh_id"]),
        *(models.Index(fields=[field, "pgh_created_at", "pgh_id"]) for field in scope),
    ])
    return pghistory.track(
        pghistory.InsertEvent(), pghistory.UpdateEvent(), pghistory.DeleteEvent(), meta=meta,
        **kwargs
    )
