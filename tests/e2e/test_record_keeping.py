"""What the record says, walked in Chromium (issue 21 items 1, 2 and 4): the reason typed for a
change is in the trail; an endorsed revision stays in force through an edit; the what-if page
shows the error and no verdict for input it could not read, and frees the temperature once an
activation energy is entered."""

from __future__ import annotations

import re

import pytest
from playwright.sync_api import expect

from tests.e2e.conftest import shoot, sign_in

pytestmark = pytest.mark.e2e


@pytest.fixture
def endorsed(world):
    from hazards.review.services import revisions
    from tests.web.conftest import sign

    people, process = world["people"], world["process"]
    revision = revisions.revision_open(process=process, user=people["author"])
    for who, meaning in (
        ("author", "authored"),
        ("reviewer", "reviewed"),
        ("approver", "approved"),
    ):
        sign(revision, people[who], meaning)
    return world


def test_the_reason_reaches_the_trail_and_the_approval_stays_in_force(
    endorsed, live_server, page, artifacts
):
    base, step, process = live_server.url, endorsed["step"], endorsed["process"]
    sign_in(page, base, "author")
    page.goto(f"{base}/steps/{step.pk}/edit/")
    page.fill("#id_process_temperature_k", "35 °C")
    page.fill("#id_reason", "Tp corrected to the batch record of lot 17")
    page.click("button[type=submit].button-primary")
    expect(page.locator(".message-success")).to_contain_text("saved")

    page.goto(f"{base}/processes/{process.pk}/")
    expect(page.locator("#approval-status")).to_contain_text(
        "In force: revision 1; changes pending in draft 2; these indicators differ from the "
        "approved ones"
    )
    shoot(page, artifacts, "process-in-force")

    page.goto(f"{base}/processes/{process.pk}/history/")
    expect(page.locator("table.history")).to_contain_text(
        "Tp corrected to the batch record of lot 17"
    )

    # With the draft open the data are still under an approval: a reason is asked again.
    page.goto(f"{base}/steps/{step.pk}/edit/")
    page.fill("#id_process_temperature_k", "36 °C")
    page.click("button[type=submit].button-primary")
    expect(page.locator("#id_reason")).to_have_attribute("aria-invalid", "true")


def test_the_what_if_never_judges_a_point_it_did_not_read(world, live_server, page, artifacts):
    from hazards.review.models import ProcessRole
    from tests.whatif.conftest import attach_series, c17_data

    step = world["step"]
    type(step).objects.filter(pk=step.pk).update(operation_mode="semi_batch", dosing_time_s=3600.0)
    run = step.calorimetry_runs.get()
    type(run).objects.filter(pk=run.pk).update(
        specific_reaction_heat_j_per_kg=120e3, max_accumulation=0.166254
    )
    attach_series(run, c17_data())
    assert ProcessRole.objects.filter(process=step.process, role="author").exists()
    base = live_server.url
    sign_in(page, base, "author")
    page.goto(f"{base}/steps/{step.pk}/what-if/")
    verdict = page.locator("#whatif-result h2").first
    expect(verdict).to_contain_text("acceptable")
    expect(page.locator("#wi-tp-slider")).to_be_disabled()

    for typed, rule in (
        ("1e309 min", "must be a finite number"),
        ("soon", "must be a number followed by a unit"),
    ):
        page.fill("#wi-td", typed)
        expect(page.locator("#wi-err-dosing_time")).to_contain_text(rule)
        expect(verdict).to_have_text("This point — not evaluated")
        expect(page.locator("#whatif-result")).not_to_contain_text("— acceptable")
    page.fill("#wi-td", "90 min")
    expect(page.locator("#wi-err-dosing_time")).to_be_empty()
    expect(verdict).to_contain_text("acceptable")

    page.fill("#wi-ea", "-70 kJ/mol")
    expect(page.locator("#wi-err-activation_energy")).to_contain_text("must be greater than zero")
    expect(verdict).to_have_text("This point — not evaluated")
    shoot(page, artifacts, "whatif-not-evaluated")

    page.fill("#wi-ea", "70 kJ/mol")
    expect(page.locator("#wi-err-activation_energy")).to_be_empty()
    expect(page.locator("#wi-tp-slider")).to_be_enabled()
    expect(page.locator("#wi-tp")).not_to_have_attribute("readonly", "")
    page.fill("#wi-tp", "40 degC")
    expect(page.locator("#whatif-result .whatif-numbers")).to_contain_text(
        re.compile(r"Process temperature\s*40 °C"))  # the pages' number rule: 40, not 40.00
