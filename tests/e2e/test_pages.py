"""Accessibility (axe-core, offline), keyboard use and screenshots of the main pages."""

from __future__ import annotations

import datetime as dt

import pytest
from playwright.sync_api import expect

from tests.e2e.conftest import axe_violations, shoot, sign_in

pytestmark = pytest.mark.e2e


@pytest.fixture
def under_review(world):
    """The world's process lodged for review, with one open finding on it."""
    from hazards.review.models import Finding
    from hazards.review.services import revisions
    from tests.web.conftest import sign

    people, process = world["people"], world["process"]
    revision = revisions.revision_open(process=process, user=people["author"])
    sign(revision, people["author"], "authored")
    Finding.objects.create(process=process, revision=revision, title="Confirm the onset",
                           kind="advisory", owner=people["author"],
                           due_date=dt.date.today() + dt.timedelta(days=14),
                           raised_by=people["reviewer"])
    return world


def test_main_pages_have_no_serious_accessibility_problem(under_review, live_server, page,
                                                          artifacts):
    base, process, step = live_server.url, under_review["process"], under_review["step"]
    problems = {}

    def check(name, path):
        page.goto(base + path)
        expect(page.locator("main h1")).to_be_visible()
        found = axe_violations(page)
        if found:
            problems[name] = found
        shoot(page, artifacts, name)
        page.set_viewport_size({"width": 390, "height": 900})
        width = page.evaluate("document.documentElement.scrollWidth")
        if width > 390:
            problems[f"{name} at 390 px"] = f"the page is {width} px wide"
        page.set_viewport_size({"width": 1280, "height": 900})

    check("signin", "/signin/")
    sign_in(page, base, "reviewer")
    check("start-reviewer", "/")
    check("review", f"/processes/{process.pk}/review/")
    page.context.clear_cookies()
    sign_in(page, base, "author")
    check("start", "/")
    check("process-list", "/processes/?sort=state")
    check("step-list", "/steps/?sort=-klass")
    check("process", f"/processes/{process.pk}/")
    check("step-page", f"/steps/{step.pk}/")
    check("step-form", f"/steps/{step.pk}/edit/")
    check("decomposition-form", f"/steps/{step.pk}/decomposition/new/")
    check("upload-choose", f"/steps/{step.pk}/calorimetry/upload/")
    check("history", f"/processes/{process.pk}/history/")
    page.context.clear_cookies()
    sign_in(page, base, "auditor")
    check("verify", "/audit/verify/")
    assert not problems, "serious or critical axe-core violations: " + repr(problems)


def test_every_form_field_has_a_label(under_review, live_server, page):
    base, step = live_server.url, under_review["step"]
    sign_in(page, base, "author")
    for path in (f"/steps/{step.pk}/edit/", f"/steps/{step.pk}/decomposition/new/",
                 f"/steps/{step.pk}/calorimetry/new/", f"/steps/{step.pk}/calorimetry/upload/",
                 "/processes/", "/steps/"):
        page.goto(base + path)
        unlabelled = page.evaluate("""() => [...document.querySelectorAll(
            'main input:not([type=hidden]), main select, main textarea')]
            .filter(el => !el.labels || el.labels.length === 0).map(el => el.name)""")
        assert unlabelled == [], f"{path}: fields without a label: {unlabelled}"


def test_signing_in_and_editing_a_step_work_by_keyboard_alone(under_review, live_server, page):
    from tests.conftest import PASSWORD

    base, step = live_server.url, under_review["step"]
    page.goto(f"{base}/signin/")

    def tab_to(element_id, limit=40):
        for _ in range(limit):
            page.keyboard.press("Tab")
            if page.evaluate("document.activeElement.id") == element_id:
                return
        raise AssertionError(f"Tab never reached #{element_id}")

    tab_to("id_username")
    page.keyboard.type("author")
    page.keyboard.press("Tab")
    assert page.evaluate("document.activeElement.id") == "id_password"
    page.keyboard.type(PASSWORD)
    page.keyboard.press("Enter")
    expect(page.get_by_role("heading", level=1)).to_have_text("Start: what waits for you")

    page.goto(f"{base}/steps/{step.pk}/edit/")
    fields = page.evaluate("""() => [...document.querySelectorAll(
        'form.record-form input:not([type=hidden]), form.record-form select, '
        + 'form.record-form textarea')].map(el => el.id)""")
    tab_to(fields[0])
    reached = [fields[0]]
    for _ in range(len(fields) * 3):
        page.keyboard.press("Tab")
        active = page.evaluate("document.activeElement.id || document.activeElement.textContent")
        if active in fields and active not in reached:
            reached.append(active)
        if active.strip() == "Save":
            break
    assert reached == fields, "Tab must visit every field, in the order they are shown"
    # Change the temperature, give the reason, and save with Enter on the button.
    page.focus("#id_process_temperature_k")
    page.keyboard.press("Control+a")
    page.keyboard.type("95 °F")
    page.keyboard.press("Tab")
    expect(page.locator("#err-process_temperature_k")).to_be_empty()
    # The data are lodged for review: the change needs its reason.
    page.focus("#id_reason")
    page.keyboard.type("Tp corrected to the batch record")
    page.focus("button[type=submit].button-primary")
    page.keyboard.press("Enter")
    expect(page.locator(".message-success")).to_contain_text("saved")
    expect(page.locator('tr[data-field="process_temperature_k"] td.value')).to_have_text("35 °C")
