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
    assert "Blocks the approval." in review and "Quench is in place" in review
    home = client.get("/").content.decode()
    assert "Protective measures overdue" in home and "quench tank T-12" in home


def test_the_approver_signs_a_risk_acceptance_on_the_review_page(client, process, author,
                                                                 reviewer, approver):
    from hazards.review.models import RiskAcceptance
    from hazards.review.requirements import unmet_requirements
    from tests.conftest import PASSWORD

    svc.measure_policy_set(site=process.site, data={"requirements": {
        str(c): [{"any_of": ["redesign"], "status": "proven"}] for c in range(1, 6)}})
    revision = revision_in(process, "checked", author=author, reviewer=reviewer)
    [unmet] = unmet_requirements(content=revision.content, site_id=process.site_id)
    client.force_login(approver)
    page = client.get(f"/processes/{process.pk}/review/").content.decode()
    assert "Sign the risk acceptance" in page
    form = {"accept-step": unmet["step"], "accept-requirement_key": unmet["key"],
            "accept-reason": "Trial batches under supervision.", "accept-password": "wrong"}
    bad = client.post(f"/revisions/{revision.pk}/risk-acceptances/", form)
    assert bad.status_code == 403 and not RiskAcceptance.objects.exists()
    ok = client.post(f"/revisions/{revision.pk}/risk-acceptances/",
                     {**form, "accept-password": PASSWORD})
    assert ok.status_code == 302
    page = client.get(f"/processes/{process.pk}/review/").content.decode()
    assert "Risk accepted (signed)." in page and "Trial batches under supervision." in page
    client.force_login(reviewer)
    assert "Sign the risk acceptance" not in client.get(
        f"/processes/{process.pk}/review/").content.decode()
