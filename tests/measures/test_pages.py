"""Where people see the measures: the step page (measures, states, each check with its
numbers), the review page (what blocks the endorsement and why) and the start page
(measures overdue)."""

from __future__ import annotations

import datetime as dt

import pytest

from hazards.services import measures as svc
from tests.review.factories import revision_in

pytestmark = pytest.mark.django_db


def test_step_review_and_start_pages_show_the_measures(client, process, author, reviewer, approver):
    svc.measure_policy_set(
        site=process.site,
        data={
            "requirements": {
                str(c): [{"any_of": ["quench"], "status": "proven"}] for c in range(1, 6)
            }
        },
    )
    step = process.steps.get()
    svc.measure_create(
        step=step,
        data={
            "kind": "quench",
            "acts_on": "quench tank T-12",
            "owner": author,
            "status": "in_place",
            "due_date": dt.date(2020, 1, 31),
            "response_time_s": 1e9,
        },
    )
    client.force_login(approver)
    page = client.get(f"/steps/{step.pk}/").content.decode()
    assert "quench tank T-12" in page and "In place" in page and "overdue" in page
    assert "Time for the emergency measure: fail" in page
    assert "response time: 10⁹ s" in page  # hazards.quantities.format_number
    assert "relief specialist" in page
    revision_in(process, "checked", author=author, reviewer=reviewer)
    review = client.get(f"/processes/{process.pk}/review/").content.decode()
    assert "Blocks endorsement." in review and "Quench is in place" in review
    home = client.get("/").content.decode()
    assert "Protective measures overdue" in home and "quench tank T-12" in home
