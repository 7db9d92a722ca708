"""Display units and the one search in Chromium (issue 21): a person picks °F and psi on the
preferences page and the step page follows; the header's search box finds the step; both
pages pass axe and stay inside a 390 px screen (screenshots in /tmp/shots/)."""

from __future__ import annotations

import pytest
from playwright.sync_api import expect

from tests.e2e.conftest import axe_violations, sign_in
from tests.e2e.test_committee_pages import shoot_and_check

pytestmark = pytest.mark.e2e


def test_a_person_reads_fahrenheit_after_choosing_it_and_finds_a_step(world, live_server, page):
    sign_in(page, live_server.url, "reviewer")
    page.get_by_role("link", name="Preferences").click()
    expect(page.locator("main h1")).to_have_text("Your preferences")
    page.get_by_label("Temperature unit").select_option("degF")
    page.get_by_label("Pressure unit").select_option("psi")
    page.get_by_role("button", name="Save").click()
    expect(page.get_by_text("Saved.")).to_be_visible()
    assert axe_violations(page) == []
    shoot_and_check(page, "preferences")

    page.set_viewport_size({"width": 390, "height": 900})
    search = page.get_by_role("searchbox", name="Search processes, steps, findings and vessels")
    search.first.fill("dissolve")
    search.first.press("Enter")
    expect(page.locator("main h1")).to_have_text("Search")
    assert axe_violations(page) == []
    shoot_and_check(page, "search")
    page.get_by_role("link", name="Charge and dissolve").click()
    # The step runs at 303.15 K = 86 °F (exact scale definitions, NIST SP 811 B.8).
    expect(page.get_by_text("86 °F").first).to_be_visible()
    shoot_and_check(page, "step-fahrenheit")
