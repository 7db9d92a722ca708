"""Writes of records: validated with `full_clean()` and saved inside one transaction.

`expected_version` is the optimistic lock shared by the API (`If-Match`) and the browser
forms: the row is locked (`SELECT … FOR UPDATE`) inside the transaction, its `version`
compared, and only then written, so two editors of one version cannot both win.
"""

from __future__ import annotations

from typing import Any

from django.db import models, transaction

from hazards.services.basis import release_previous_basis

STALE_RECORD = "The record was changed by someone else since you read it (version {expected}; now {current})."


class StaleRecord(Exception):
    """The record's version is no longer the one the change was based on."""

    def __init__(self, *, expected: int, current: int | None):
        self.expected, self.current = expected, current
        super().__init__(STALE_RECORD.format(expected=expected, current=current))


def lock_version(*, instance: models.Model, expected_version: int | None) -> None:
    """Lock the record's row for this transaction; raise `StaleRecord` unless it is at
    `expected_version`, and bring `instance` up to the locked row (call inside atomic)."""
    if expected_version is None:
        return
    model = type(instance)
    # FOR NO KEY UPDATE (what the UPDATE itself takes): a plain FOR UPDATE also blocks the
    # KEY SHARE that inserting a child row (a run of this step) takes for its foreign key,
    # which deadlocked against the audit chain's lock under load.
    current = (
        model._base_manager.select_for_update(no_key=True)
        .filter(pk=instance.pk)
        .values_list("version", flat=True)
        .first()
    )
    if current is None:
        raise model.DoesNotExist(f"{model._meta.verbose_name} {instance.pk} no longer exists.")
    if current != expected_version:
        raise StaleRecord(expected=expected_version, current=current)
    if getattr(instance, "version", None) != current:
        instance.refresh_from_db()


def record_create(*, model: type[models.Model], data: dict[str, Any]) -> models.Model:
    """Create a record from validated field values; nothing is saved unless all is valid."""
    with transaction.atomic():
        instance = model(**data)
        instance.released_basis = release_previous_basis(instance=instance)
        instance.full_clean()
        instance.save()
    return instance


def record_update(*, instance: models.Model, data: dict[str, Any],
                  expected_version: int | None = None) -> models.Model:
    """Apply field values to a record and save it after `full_clean()`.

    With `expected_version`, refuse with `StaleRecord` unless the stored row is still at
    that version (checked under a row lock, so the check and the write are one step).
    """
    with transaction.atomic():
        lock_version(instance=instance, expected_version=expected_version)
        for name, value in data.items():
            setattr(instance, name, value)
        instance.released_basis = release_previous_basis(instance=instance)
        instance.full_clean()
        instance.save()
    return instance


def record_delete(*, instance: models.Model, expected_version: int | None = None) -> None:
    with transaction.atomic():
        lock_version(instance=instance, expected_version=expected_version)
        instance.delete()
