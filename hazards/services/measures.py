"""Writes of protective measures and of a site's measure policy (issue 17).

Each write validates the whole record with `full_clean()` inside one transaction (so a
refused write saves nothing), audited by pghistory; a measure's write recomputes its step's
indicators through the input triggers before the transaction ends.
"""

from __future__ import annotations

import datetime as dt
from typing import Any

from django.core.exceptions import ValidationError
from django.db import transaction
from django.utils import timezone

from hazards.models import Measure, MeasurePolicy, ReactionStep, Site
from hazards.services.records import StaleRecord, lock_version

TEST_DATE_IN_FUTURE = "{value} is after today: a test date records a test that took place."


def _check_dates(measure: Measure, today: dt.date) -> None:
    if measure.test_date is not None and measure.test_date > today:
        raise ValidationError({"test_date": TEST_DATE_IN_FUTURE.format(value=measure.test_date)})


def measure_create(*, step: ReactionStep, data: dict[str, Any]) -> Measure:
    """Record a measure on a step; nothing is saved unless every field is valid."""
    with transaction.atomic():
        measure = Measure(step=step, **data)
        measure.full_clean()
        _check_dates(measure, timezone.localdate())
        measure.save()
    return measure


def measure_update(
    *, measure: Measure, data: dict[str, Any], expected_version: int | None = None
) -> Measure:
    """Change a measure's fields (under its row lock when `expected_version` is given)."""
    with transaction.atomic():
        lock_version(instance=measure, expected_version=expected_version)
        for name, value in data.items():
            setattr(measure, name, value)
        measure.full_clean()
        _check_dates(measure, timezone.localdate())
        measure.save()
    return measure


def measure_delete(*, measure: Measure, expected_version: int | None = None) -> None:
    with transaction.atomic():
        lock_version(instance=measure, expected_version=expected_version)
        measure.delete()


def policy_for(site_id: int) -> MeasurePolicy:
    """The site's policy, or an unsaved one with the defaults."""
    return MeasurePolicy.objects.filter(site_id=site_id).first() or MeasurePolicy(site_id=site_id)


def measure_policy_set(
    *, site: Site, data: dict[str, Any], expected_version: int | None = None
) -> MeasurePolicy:
    """Create or change a site's measure policy."""
    with transaction.atomic():
        policy = MeasurePolicy.objects.select_for_update().filter(site=site).first()
        if policy is None:
            policy = MeasurePolicy(site=site)
        elif expected_version is not None and policy.version != expected_version:
            raise StaleRecord(expected=expected_version, current=policy.version)
        for name, value in data.items():
            setattr(policy, name, value)
        policy.full_clean()
        policy.save()
    return policy
