"""Owners are reminded of protective measures not yet proven as their due date nears and
once overdue, through the existing notifications, once per stage (issue 17 item 4)."""

from __future__ import annotations

import datetime as dt

import pytest

from hazards.oversight import notify
from hazards.oversight.models import Notification
from hazards.services import measures as svc

pytestmark = pytest.mark.django_db


def test_a_measure_falling_due_reminds_its_owner_once_per_stage(process, author):
    step = process.steps.get()
    m = svc.measure_create(
        step=step,
        data={
            "kind": "dump",
            "acts_on": "dump valve XV-9",
            "owner": author,
            "due_date": dt.date(2027, 3, 10),
            "response_time_s": 300.0,
        },
    )
    # the default reminder starts 14 days before (MeasurePolicy.reminder_days)
    assert notify.remind(on=dt.date(2027, 2, 1))["measure_due"] == 0
    assert notify.remind(on=dt.date(2027, 3, 1))["measure_due"] == 1
    assert notify.remind(on=dt.date(2027, 3, 2))["measure_due"] == 0
    assert notify.remind(on=dt.date(2027, 3, 11))["measure_due"] == 1  # overdue
    subjects = list(
        Notification.objects.filter(recipient=author, kind="measure_due")
        .order_by("pk")
        .values_list("subject", flat=True)
    )
    assert subjects[0].startswith("Protective measure due 2027-03-10: Dump to a catch vessel")
    assert subjects[1].startswith("Protective measure overdue since 2027-03-10")
    svc.measure_update(
        measure=m,
        data={"status": "proven", "evidence_reference": "T-1", "test_date": dt.date(2026, 12, 1)},
    )
    # Proving the measure settles its reminders (issue 21 item 5): nothing left to do.
    assert not Notification.objects.filter(recipient=author, kind="measure_due",
                                           read_at__isnull=True).exists()
    assert notify.remind(on=dt.date(2027, 4, 30))["measure_due"] == 0
