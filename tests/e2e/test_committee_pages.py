"""The committee's pages in Chromium: the portfolio (and later the revision comparison and
the data plots), checked by axe, kept inside the viewport at phone width, and photographed
at 1280 and 390 px into /tmp/shots/ for a person to look at."""

from __future__ import annotations

from pathlib import Path

import pytest
from playwright.sync_api import expect

from tests.e2e.conftest import axe_violations, sign_in

pytestmark = pytest.mark.e2e
SHOTS = Path("/tmp/shots")


def shoot_and_check(page, name: str) -> None:
    """Screenshots at 1280 and 390 px; at each width the document itself never scrolls
    sideways (wide tables scroll inside their frame)."""
    SHOTS.mkdir(exist_ok=True)
    for width in (1280, 390):
        page.set_viewport_size({"width": width, "height": 900})
        page.screenshot(path=str(SHOTS / f"{name}-{width}.png"), full_page=True)
        overflow = page.evaluate(
            "document.documentElement.scrollWidth - document.documentElement.clientWidth"
        )
        assert overflow <= 1, f"{name} at {width} px is {overflow} px too wide"
        if width == 1280:
            # At desktop width every table is a table: each cell of the first row starts
            # where its column's heading starts (a grid or card style leaking onto a table
            # moved the row beside its headings).
            misaligned = page.evaluate("""() => [...document.querySelectorAll('main table')]
              .filter(t => t.tHead && t.tBodies.length && t.tBodies[0].rows.length
                           && t.tBodies[0].rows[0].cells.length === t.tHead.rows[0].cells.length)
              .flatMap(t => [...t.tBodies[0].rows[0].cells].map((td, i) => {
                 const th = t.tHead.rows[0].cells[i];
                 return Math.abs(td.getBoundingClientRect().left
                                 - th.getBoundingClientRect().left) > 1
                        ? `${th.textContent.trim()}: ${td.textContent.trim().slice(0, 30)}` : null;
              }).filter(Boolean))""")
            assert misaligned == [], f"{name}: cells not under their headings: {misaligned}"
    page.set_viewport_size({"width": 1280, "height": 900})


def test_the_portfolio_filters_exports_and_fits_the_screen(world, live_server, page):
    sign_in(page, live_server.url, "reviewer")
    page.get_by_role("link", name="Portfolio").click()
    expect(page.locator("main h1")).to_have_text("Portfolio")
    expect(page.get_by_role("link", name="1. Charge and dissolve")).to_be_visible()
    assert axe_violations(page) == []
    page.get_by_label("Criticality class").select_option("5")
    page.get_by_role("button", name="Apply").click()
    expect(page.get_by_text("No step matches.").first).to_be_visible()
    page.get_by_role("link", name="Clear").click()
    with page.expect_download() as download:
        page.get_by_role("link", name="spreadsheet (.xlsx)").click()
    assert download.value.suggested_filename.endswith(".xlsx")
    shoot_and_check(page, "portfolio")


def test_two_revisions_are_compared_with_a_summary_first(world, live_server, page):
    from hazards.review.services import revisions
    from hazards.services.records import record_update
    from tests.web.conftest import sign

    people, process, step = world["people"], world["process"], world["step"]
    first = revisions.revision_open(process=process, user=people["author"])
    for who, meaning in (
        ("author", "authored"),
        ("reviewer", "reviewed"),
        ("approver", "approved"),
    ):
        sign(first, people[who], meaning)
        first.refresh_from_db()
    revisions.revision_open(process=process, user=people["author"], reason="revalidation")
    step.refresh_from_db()
    record_update(instance=step, data={"process_temperature_k": step.process_temperature_k + 10})
    sign_in(page, live_server.url, "reviewer")
    page.goto(f"{live_server.url}/processes/{process.pk}/")
    page.get_by_role("link", name="Every revision, and a comparison of any two").click()
    expect(page.locator("#h-summary")).to_contain_text("revision 1 → revision 2")
    expect(page.locator("main")).to_contain_text("Step 1. Charge and dissolve")
    assert axe_violations(page) == []
    shoot_and_check(page, "revision-compare")


def test_the_calorimeter_record_is_plotted_on_the_run_and_step_pages(world, live_server, page):
    from django.test import Client

    from tests.web.conftest import series_csv
    from tests.web.test_upload import choose

    step = world["step"]
    author = Client()
    author.force_login(world["people"]["author"])
    author.get(choose(author, step, series_csv())["Location"])
    assert author.post(f"/steps/{step.pk}/calorimetry/upload/confirm/", {}).status_code == 302
    sign_in(page, live_server.url, "reviewer")
    page.goto(f"{live_server.url}/steps/{step.pk}/")
    expect(page.locator("#h-record")).to_be_visible()
    page.get_by_role("link", name="Calorimetry RC-2 2026-06-01").click()
    expect(page.locator("main h1")).to_contain_text("Calorimetry RC-2")
    expect(page.locator("figure.record-chart img")).to_be_visible()
    assert axe_violations(page) == []
    shoot_and_check(page, "run-record")
    page.goto(f"{live_server.url}/steps/{step.pk}/")
    page.locator("#h-record").scroll_into_view_if_needed()
    for width in (1280, 390):
        page.set_viewport_size({"width": width, "height": 900})
        page.locator("section:has(#h-record)").screenshot(
            path=str(SHOTS / f"step-record-{width}.png")
        )
        page.locator("section:has(#h-charts)").screenshot(
            path=str(SHOTS / f"step-charts-{width}.png")
        )
