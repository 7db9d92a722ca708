"""The what-if page and its fragment (computed, never saved), and the apply form that turns a
chosen point into an ordinary, reviewable change of the step."""

from __future__ import annotations

import re
from html import unescape

import pytest
from django.db import connection
from django.test import Client
from django.test.utils import CaptureQueriesContext

from hazards.models import IndicatorSnapshot, ReactionStep
from tests.review.factories import RoleFactory

pytestmark = pytest.mark.django_db

# Writes other than the session bookkeeping of a signed-in browser (last activity).
WRITE = re.compile(r"^\s*(INSERT|UPDATE|DELETE)\b(?!.*django_session)", re.I | re.S)


def browser(user):
    client = Client()
    client.force_login(user)
    return client


def test_the_page_shows_numbers_charts_inputs_and_the_caution(step, admin_user):
    r = browser(admin_user).get(f"/steps/{step.pk}/what-if/")
    assert r.status_code == 200
    html = r.content.decode()
    assert "supports, and does not replace, a qualified assessment" in " ".join(html.split())
    assert 'type="range" name="dosing_time_slider"' in html
    assert 'name="dosing_time" value="60 min"' in html
    assert html.count('src="data:image/svg+xml;base64,') == 2
    assert "pseudo_first_order.series_fit" in html
    assert "Criticality class" in html and "Cooling margin" in html
    assert re.search(r"<script(?![^>]*\bsrc=)[^>]*>", html) is None  # CSP: no inline scripts
    assert "whatif/whatif.js" in html
    # at the lab run's own point the numbers are the series as measured, as on the step page
    assert ("MTSR and peak from: lab series as measured (lab and plant agree) (the same rule "
            "as the step's indicators") in unescape(" ".join(html.split()))


def test_the_fragment_follows_the_inputs_and_saves_nothing(step, admin_user):
    client = browser(admin_user)
    with CaptureQueriesContext(connection) as ctx:
        r = client.get(f"/steps/{step.pk}/what-if/fragment/",
                       {"dosing_time": "2.5 h", "dosing_time_shown": "60 min",
                        "dosing_time_slider": "60"})
    assert r.status_code == 200
    html = r.content.decode()
    assert 'data-dosing-time="150"' in html and "150 min" in html
    assert [q["sql"] for q in ctx.captured_queries if WRITE.match(q["sql"])] == []
    # without JavaScript a moved slider wins over a text left as shown
    r = client.get(f"/steps/{step.pk}/what-if/fragment/",
                   {"dosing_time": "60 min", "dosing_time_shown": "60 min",
                    "dosing_time_slider": "90"})
    assert 'data-dosing-time="90"' in r.content.decode()


def test_a_refused_request_says_why(plain_step, admin_user):
    r = browser(admin_user).get(f"/steps/{plain_step.pk}/what-if/",
                                {"process_temperature": "60 degC"})
    assert r.status_code == 200
    assert "activation energy" in r.content.decode()


def test_outsiders_do_not_see_the_page(step, outsider):
    assert browser(outsider).get(f"/steps/{step.pk}/what-if/").status_code == 404


def test_apply_changes_the_step_through_the_record_service_and_asks_for_review(step, author_of):
    # as if the committee had approved the step's inputs: any change must send it to review
    ReactionStep.objects.filter(pk=step.pk).update(approved_inputs_hash="x" * 64)
    before = IndicatorSnapshot.objects.get(step=step, is_current=True)
    version = ReactionStep.objects.get(pk=step.pk).version
    r = browser(author_of).post(f"/steps/{step.pk}/what-if/apply/", {
        "dosing_time": "160 min", "process_temperature": "30 degC", "version": version,
        "reason": "longer feed to meet the cooling margin"})
    assert r.status_code == 302
    step.refresh_from_db()
    assert step.dosing_time_s == pytest.approx(9600.0)
    assert step.version == version + 1
    assert step.needs_review is True
    now = IndicatorSnapshot.objects.get(step=step, is_current=True)
    assert now.pk != before.pk and now.inputs["dosing_time_s"] == pytest.approx(9600.0)
    event = step.events.order_by("-pgh_id").first()
    assert "what-if: longer feed" in str(event.pgh_context.metadata.get("reason"))


def test_apply_needs_a_reason_an_editing_role_and_the_current_version(step, author_of, db):
    from tests.conftest import make_user

    version = ReactionStep.objects.get(pk=step.pk).version
    body = {"dosing_time": "160 min", "process_temperature": "30 degC", "version": version}
    browser(author_of).post(f"/steps/{step.pk}/what-if/apply/", {**body, "reason": " "})
    assert ReactionStep.objects.get(pk=step.pk).dosing_time_s == 3600.0
    reviewer = make_user("reviewer")
    RoleFactory(process=step.process, user=reviewer, role="reviewer")
    r = browser(reviewer).post(f"/steps/{step.pk}/what-if/apply/", {**body, "reason": "x"})
    assert r.status_code == 403
    browser(author_of).post(f"/steps/{step.pk}/what-if/apply/",
                            {**body, "version": version - 1, "reason": "stale"})
    assert ReactionStep.objects.get(pk=step.pk).dosing_time_s == 3600.0


@pytest.mark.parametrize(("name", "typed", "rule"), [
    ("dosing_time", "1e309 min", "must be a finite number"),
    ("dosing_time", "soon", "must be a number followed by a unit"),
    ("activation_energy", "-70 kJ/mol", "must be greater than zero"),
])
def test_a_point_that_was_not_read_gets_no_verdict_and_the_error_beside_its_field(
        step, admin_user, name, typed, rule):
    # The rules are those of hazards.quantities.parse_quantity (common practice, no source).
    client = browser(admin_user)
    fragment = client.get(f"/steps/{step.pk}/what-if/fragment/", {name: typed}).content.decode()
    page = client.get(f"/steps/{step.pk}/what-if/", {name: typed}).content.decode()

    for html in (fragment, page):
        assert "— acceptable" not in html and "— not acceptable" not in html
        assert "This point — not evaluated" in html
        assert rule in html
    assert f'data-field-error="{name}"' in fragment
    assert re.search(rf'id="wi-err-{name}" role="alert">[^<]*{re.escape(rule)}', page)
    assert f'value="{typed}"' in page  # what was typed stays to be corrected


def test_with_an_activation_energy_the_temperature_is_free(step, admin_user):
    client = browser(admin_user)
    locked = client.get(f"/steps/{step.pk}/what-if/fragment/").content.decode()
    free = client.get(f"/steps/{step.pk}/what-if/fragment/",
                      {"activation_energy": "70 kJ/mol"}).content.decode()
    assert 'data-tp-fixed="true"' in locked
    assert 'data-tp-fixed="false"' in free


def test_the_what_if_figures_are_written_by_the_pages_rule(step, admin_user):
    """hazards.quantities.format_number (tests/hazards/test_number_format.py): no fixed
    decimals such as '30.00 °C' or '0.200', no e-notation."""
    html = browser(admin_user).get(f"/steps/{step.pk}/what-if/fragment/",
                                   {"dosing_time": "2.5 h"}).content.decode()
    numbers = re.findall(r"<td>([^<]*)</td>", html) + re.findall(r"<dd>([^<]*)</dd>", html)
    assert any("150 min" in n for n in numbers), numbers
    assert not [n for n in numbers if re.search(r"\.\d*0 |\.\d*0$|\de[+-]\d", n)], numbers


def test_the_results_follow_the_persons_display_units(step, admin_user):
    client = browser(admin_user)
    standard = client.get(f"/steps/{step.pk}/what-if/").content.decode()
    client.post("/preferences/", {"temperature_unit": "degF", "power_unit": "watt",
                                  "pressure_unit": "bar"})
    html = client.get(f"/steps/{step.pk}/what-if/").content.decode()
    # Tp 303.15 K = 30 °C = 86 °F (exact scale definitions, NIST SP 811 B.8).
    tp = ReactionStep.objects.get(pk=step.pk).process_temperature_k
    assert tp == pytest.approx(303.15)
    assert "<dt>Process temperature</dt><dd>30 °C</dd>" in standard
    assert "<dt>Process temperature</dt><dd>86 °F</dd>" in html
    assert re.search(r"<dt>Cooling capacity</dt><dd>[\d.]+ kW</dd>", standard)
    assert re.search(r"<dt>Cooling capacity</dt><dd>[\d.]+ W</dd>", html)
