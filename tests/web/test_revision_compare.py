"""Comparing any two revisions of a process: every revision is a link, the summary names each
step as the pages do (never by its database id) with the class and indicators that moved,
then the field changes grouped by record; a wrong revision number is refused by name."""

from __future__ import annotations

import re

import pytest

from tests.web.conftest import sign

pytestmark = pytest.mark.django_db


@pytest.fixture
def edited(people, process, step, lodged, client_as):
    """Revision 1 endorsed at Tp 30 °C; revision 2 a draft at Tp 40 °C."""
    sign(lodged, people["reviewer"], "reviewed")
    sign(lodged, people["approver"], "approved")
    client = client_as(people["author"])
    client.post(f"/processes/{process.pk}/revisions/open/", {"reason": "revalidation"})
    form = {
        "sequence": 1,
        "name": step.name,
        "operation_mode": "batch",
        "process_temperature_k": "40 °C",
        "reaction_mass_kg": "5000 kg",
        "specific_heat_capacity_j_per_kg_k": "2 kJ/(kg·K)",
        "system": "open",
        "operating_pressure_pa": "1.01325 bar",
        "solvent": step.solvent_id,
        "vessel": step.vessel_id,
        "version": step.version,
        "reason": "process temperature raised by 10 K",
    }
    assert client.post(f"/steps/{step.pk}/edit/", form).status_code == 302
    return client


def _text(html: str) -> str:
    return re.sub(r"\s+", " ", re.sub(r"<[^>]+>", " ", html))


def test_the_comparison_summarises_each_step_by_name_then_groups_field_changes(
    people, process, step, edited, client_as
):
    html = (
        client_as(people["reviewer"])
        .get(f"/processes/{process.pk}/revisions/?from=1&to=2")
        .content.decode()
    )
    text = _text(html)
    assert "Summary: revision 1 → revision 2" in text
    # The MTSR follows Tp (MTSR = Tp + X·ΔTad, METHODS.md §1): 10 K higher, so it moved.
    assert "Step 1. Sulfonation in water" in text and "MTSR:" in text
    assert "30 °C" in text and "40 °C" in text
    assert "Field changes by record" in text
    assert f"step {step.pk}" not in text.lower().replace("step 1. sulfonation", "")
    assert html.index("h-summary") < html.index("h-changes")
    assert "support and do not replace a qualified" in text


def test_every_revision_links_to_a_comparison_and_the_review_page_links_here(
    people, process, edited, client_as
):
    client = client_as(people["reviewer"])
    html = client.get(f"/processes/{process.pk}/revisions/").content.decode()
    assert "?from=1&amp;to=2" in html and "Every revision" in html
    assert (
        f"/processes/{process.pk}/revisions/?from=1&amp;to=2"
        in client.get(f"/processes/{process.pk}/review/").content.decode()
    )
    assert (
        f"/processes/{process.pk}/revisions/"
        in client.get(f"/processes/{process.pk}/").content.decode()
    )


def test_a_revision_the_process_does_not_have_is_refused_by_name(
    people, process, edited, client_as
):
    response = client_as(people["reviewer"]).get(f"/processes/{process.pk}/revisions/?from=7&to=2")
    assert response.status_code == 400
    assert "Revision 7 is not a revision of this process (it has 1, 2)." in (
        response.content.decode()
    )
    same = client_as(people["reviewer"]).get(f"/processes/{process.pk}/revisions/?from=2&to=2")
    assert same.status_code == 400 and "Choose two different revisions" in same.content.decode()


def test_an_outsider_cannot_compare_the_revisions(people, process, edited, client_as):
    assert (
        client_as(people["outsider"]).get(f"/processes/{process.pk}/revisions/").status_code == 404
    )


def test_the_process_history_is_in_words_not_python_dicts(people, process, edited, client_as):
    html = client_as(people["reviewer"]).get(f"/processes/{process.pk}/history/").content.decode()
    text = _text(html)
    assert "{&#x27;steps&#x27;" not in html and "{'steps'" not in text
    assert "the frozen content: step 1. Sulfonation in water (1 calorimetry run, " in text
    assert "Revision 2" in text and "Step 1. Sulfonation in water" in text
    assert "actor : — → Approver Persona" in text  # a person by name, not a user id
    assert "Approved by the safety committee" in text  # a state by its words
    assert "+00:00" not in text
