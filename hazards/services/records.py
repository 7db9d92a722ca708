"""Writes of records: validated with `full_clean()` and saved inside one transaction."""

from __future__ import annotations

from typing import Any

from django.db import models, transaction


def record_create(*, model: type[models.Model], data: dict[str, Any]) -> models.Model:
    """Create a record from validated field values; nothing is saved unless all is valid."""
    with transaction.atomic():
        instance = model(**data)
        instance.full_clean()
        instance.save()
    return instance


def record_update(*, instance: models.Model, data: dict[str, Any]) -> models.Model:
    """Apply field values to a record and save it after `full_clean()`."""
    with transaction.atomic():
        for name, value in data.items():
            setattr(instance, name, value)
        instance.full_clean()
        instance.save()
    return instance


def record_delete(*, instance: models.Model) -> None:
    with transaction.atomic():
        instance.delete()
