"""A person's display units on every page, and one search across what the person may see
(issue 21: preferences and search)."""

from __future__ import annotations

import datetime as dt
import re

import pytest
from pghistory.models import Events

from hazards.models import DisplayPreference, IndicatorSnapshot
from hazards.review.models import Finding, ProcessRole
from hazards.web import search
from tests.factories import ProcessFactory, SiteFactory, StepFactory, VesselFactory

pytestmark = pytest.mark.django_db

FAHRENHEIT = {"temperature_unit": "degF", "power_unit": "kilowatt", "pressure_unit": "psi"}


def _set(step, **values):
    snap = IndicatorSnapshot.objects.get(step=step, is_current=True)
    IndicatorSnapshot.objects.filter(pk=snap.pk).update(values={**snap.values, **values})


def test_the_step_page_follows_the_persons_units_once_set(people, step, client_as):
    # The factory's step runs at 303.15 K = 30 °C = 86 °F, at 101325 Pa = 1.013 bar =
    # 14.7 psi (NIST SP 811 B.8). ΔTad 50 K is a difference: 90 °F, never -369.7 °F.
    _set(step, adiabatic_temperature_rise_k=50.0, mtsr_k=373.15)
    reviewer = client_as(people["reviewer"])
    before = reviewer.get(f"/steps/{step.pk}/").content.decode()
    assert "30 °C" in before and "86 °F" not in before and "1.013 bar" in before

    saved = reviewer.post("/preferences/", FAHRENHEIT)
    assert saved.status_code == 200 and "Saved." in saved.content.decode()

    html = reviewer.get(f"/steps/{step.pk}/").content.decode()
    assert "86 °F" in html and "30 °C" not in html
    assert "212 °F" in html  # MTSR 100 °C
    assert "90 °F" in html  # ΔTad 50 K as a difference
    assert "14.7 psi" in html and "1.013 bar" not in html
    # Another person still reads the site's standard.
    assert "30 °C" in client_as(people["author"]).get(f"/steps/{step.pk}/").content.decode()


def test_the_api_keeps_its_canonical_units_whatever_the_preference(people, step, client_as):
    reviewer = client_as(people["reviewer"])
    reviewer.post("/preferences/", FAHRENHEIT)
    body = reviewer.get(f"/api/v1/steps/{step.pk}/").json()
    assert body["process_temperature"] == {"value": 30.0, "unit": "degC"}


def test_the_choice_is_saved_in_the_audit_trail_and_a_bad_unit_is_named(people, client_as):
    reviewer = client_as(people["reviewer"])
    refused = reviewer.post("/preferences/", {**FAHRENHEIT, "temperature_unit": "rankine"})
    html = refused.content.decode()
    assert refused.status_code == 400
    assert "Temperature unit" in html and "“rankine” is not one of the units offered" in html
    assert not DisplayPreference.objects.exists()  # nothing saved in part

    reviewer.post("/preferences/", FAHRENHEIT)
    pref = DisplayPreference.objects.get(user=people["reviewer"])
    assert pref.temperature_unit == "degF" and pref.pressure_unit == "psi"
    events = Events.objects.tracks(pref)
    assert [e.pgh_label for e in events] == ["insert"]
    page = reviewer.get("/preferences/").content.decode()
    assert "212 °F" in page and "API keeps its" in page and "standard units" in page


def test_an_input_shows_the_stored_value_in_the_persons_unit_and_saves_unchanged(
    people, step, client_as
):
    author = client_as(people["author"])
    author.post("/preferences/", FAHRENHEIT)
    form = author.get(f"/steps/{step.pk}/edit/").content.decode()
    assert 'value="86 °F"' in form
    # 101325 Pa (1 atm) = 14.6959487755 psi (NIST SP 811 B.8), written so that it reads back
    # exactly: saving the untouched form changes nothing.
    assert 'value="14.6959487755 psi"' in form
    saved = author.post(f"/steps/{step.pk}/edit/", {
        **{k: v for k, v in _form_values(form).items()}})
    assert saved.status_code == 302
    step.refresh_from_db()
    assert step.process_temperature_k == 303.15 and step.operating_pressure_pa == 101325.0


def _form_values(html: str) -> dict:
    """The values a browser would send for the form's inputs and selects, as shown."""
    values = dict(re.findall(r'<input[^>]*name="([^"]+)"[^>]*value="([^"]*)"', html))
    for name, body in re.findall(r'<select[^>]*name="([^"]+)"[^>]*>(.*?)</select>', html, re.S):
        chosen = re.search(r'<option value="([^"]*)"[^>]*selected', body)
        values[name] = chosen.group(1) if chosen else ""
    return {k: v for k, v in values.items() if k != "q"}


def _finding(process, people, title, description=""):
    return Finding.objects.create(process=process, title=title, description=description,
                                  kind="finding", owner=people["author"],
                                  due_date=dt.date(2027, 1, 1), raised_by=people["reviewer"])


@pytest.fixture
def hidden(people):
    """A process nobody of the personas holds a role on (only administrators see it)."""
    site = SiteFactory(code="brenholm", name="Brenholm plant")
    process = ProcessFactory(name="Sulfonation of hidden PZ-7", site=site)
    StepFactory(process=process, name="Sulfonation kept apart")
    ProcessRole.objects.create(process=process, user=people["approver"], role="approver")
    _finding(process, people, "Sulfonation vent undersized")
    return process


def test_one_search_finds_each_kind_and_hides_what_the_person_may_not_see(
    people, process, step, hidden, client_as
):
    _finding(process, people, "Cooling check", "Sulfonation heat exceeds the jacket")
    VesselFactory(name="Sulfonator", tag="R-SULF-1")
    html = client_as(people["reviewer"]).get("/search/", {"q": "SULFONAT"}).content.decode()
    assert "Sulfonation of QX-4" in html and f'href="/processes/{process.pk}/"' in html
    assert "Sulfonation in water" in html and f'href="/steps/{step.pk}/"' in html
    assert "Cooling check" in html  # matched by its text, case-insensitively
    assert "R-SULF-1" in html  # vessels are reference data: every signed-in person sees them
    assert "hidden PZ-7" not in html and "kept apart" not in html and "vent undersized" not in html

    outsider = client_as(people["outsider"]).get("/search/", {"q": "sulfonation"}).content
    assert b"Sulfonation of QX-4" not in outsider and b"Cooling check" not in outsider
    assert b"hidden PZ-7" not in outsider
    # The approver of the other process sees that one.
    assert b"Sulfonation of hidden PZ-7" in client_as(people["approver"]).get(
        "/search/", {"q": "sulfonation"}).content


def test_empty_and_too_short_queries_say_so(people, client_as):
    reviewer = client_as(people["reviewer"])
    assert search.EMPTY_QUERY in reviewer.get("/search/").content.decode()
    assert search.TOO_SHORT in reviewer.get("/search/", {"q": " s "}).content.decode()
    assert "Nothing found for “zzqq”" in reviewer.get("/search/", {"q": "zzqq"}).content.decode()


def test_each_group_is_bounded_and_says_how_many_more(
    people, process, client_as, django_assert_max_num_queries
):
    for i in range(search.PER_GROUP + 3):
        StepFactory(process=process, sequence=10 + i, name=f"Wash {i}")
        VesselFactory(name=f"Wash tank {i}")
    reviewer = client_as(people["reviewer"])
    reviewer.get("/search/", {"q": "wash"})  # session and preference read once
    # 4 groups, each a LIMIT read and (with more rows) a count, plus the session, the user,
    # the inbox badge: the same number however many records match.
    with django_assert_max_num_queries(14):
        html = reviewer.get("/search/", {"q": "wash"}).content.decode()
    assert len(re.findall(r'href="/steps/\d', html)) == search.PER_GROUP
    assert "3 more not shown" in html
    assert "Steps <span class=\"small\">(13)</span>" in html


def test_the_units_come_with_the_sign_in_so_no_page_reads_them(people, step, client_as):
    from django.db import connection
    from django.test.utils import CaptureQueriesContext

    DisplayPreference.objects.create(user=people["reviewer"], temperature_unit="kelvin")
    reviewer = client_as(people["reviewer"])  # signs in (user_logged_in)
    with CaptureQueriesContext(connection) as ctx:
        html = reviewer.get(f"/steps/{step.pk}/").content.decode()
    assert not [q for q in ctx.captured_queries if "hazards_displaypreference" in q["sql"]]
    assert "303.1 K" in html  # 30 °C in kelvin, at the pages' 4 significant digits
