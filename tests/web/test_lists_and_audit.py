"""Lists keep their filters, sorting and page in the URL; history shows who, when, what, why;
the integrity check and a dossier PDF check answer an auditor."""

from __future__ import annotations

import re

import pytest

from tests.factories import StepFactory

pytestmark = pytest.mark.django_db


def test_step_filters_sorting_and_pages_live_in_the_url(people, process, client_as):
    for i in range(2, 25):
        StepFactory(process=process, sequence=i, name=f"Wash {i:02d}")
    client = client_as(people["author"])
    page1 = client.get("/steps/?q=Wash&sort=name").content.decode()
    assert "23 in all" in page1 and "Wash 02" in page1 and "Wash 24" not in page1
    # Next is a keyset link ("after" the last row's key) that keeps the filters.
    after = re.search(r'href="\?after=([^&"]+)&amp;q=Wash&amp;sort=name" rel="next"', page1)
    assert after, page1
    page2 = client.get(f"/steps/?q=Wash&sort=name&after={after[1]}").content.decode()
    assert "Wash 24" in page2 and "Wash 02" not in page2
    assert 'value="Wash"' in page2 and '<option value="name" selected>' in page2
    before = re.search(r'href="\?before=([^&"]+)&amp;q=Wash&amp;sort=name" rel="prev"', page2)
    back = client.get(f"/steps/?q=Wash&sort=name&before={before[1]}").content.decode()
    assert "Wash 02" in back and "Wash 24" not in back and 'rel="prev"' not in back
    # A kept ?page= link still works (bounded), and a foreign cursor is the first page.
    assert "Wash 24" in client.get("/steps/?q=Wash&sort=name&page=2").content.decode()
    assert "Wash 02" in client.get("/steps/?q=Wash&sort=name&after=garbage").content.decode()
    none = client.get("/steps/?klass=none").content.decode()
    assert "Wash 05" in none and "Sulfonation in water" not in none
    assert "Sulfonation in water" in client.get("/steps/?klass=1&q=Sulf").content.decode() or \
        "Sulfonation in water" in client.get("/steps/?q=Sulf").content.decode()


def test_process_list_filters_by_review_state(people, process, lodged, client_as):
    client = client_as(people["author"])
    assert process.name in client.get("/processes/?state=lodged").content.decode()
    assert process.name not in client.get("/processes/?state=endorsed").content.decode()


def test_history_shows_who_when_what_and_why(people, step, lodged, client_as):
    client = client_as(people["author"])
    form = {"sequence": 1, "name": "Sulfonation, cooled", "operation_mode": "batch",
            "process_temperature_k": "30 °C", "reaction_mass_kg": "5000 kg",
            "specific_heat_capacity_j_per_kg_k": "2 kJ/(kg·K)", "system": "open",
            "operating_pressure_pa": "1.01325 bar", "solvent": step.solvent_id,
            "vessel": step.vessel_id, "version": step.version, "reason": "name per site SOP"}
    assert client.post(f"/steps/{step.pk}/edit/", form).status_code == 302
    html = client.get(f"/history/hazards.reactionstep/{step.pk}/").content.decode()
    assert "author" in html and "name per site SOP" in html
    assert "Sulfonation in water → Sulfonation, cooled" in html
    process_html = client.get(f"/processes/{step.process_id}/history/").content.decode()
    assert "name per site SOP" in process_html


def test_the_integrity_check_reports_no_problem_on_untouched_data(people, lodged, client_as):
    response = client_as(people["auditor"]).post("/audit/verify/", {"action": "verify"})
    html = response.content.decode()
    assert "No problems found." in html
    assert "Head of the chain" in html


def test_a_pdf_that_is_no_dossier_does_not_verify(people, lodged, client_as):
    from django.core.files.uploadedfile import SimpleUploadedFile

    response = client_as(people["auditor"]).post("/audit/verify/", {
        "file": SimpleUploadedFile("x.pdf", b"%PDF-1.7\n%%EOF\n", "application/pdf")})
    assert "This PDF does not verify." in response.content.decode()


def test_the_start_page_counts_steps_and_processes_by_class(people, process, step, client_as):
    from hazards.web.selectors import class_counts

    klass = step.snapshots.get(is_current=True).criticality_class
    rows = {row["klass"]: row for row in class_counts(people["author"])}
    assert rows[klass]["count"] == 1 and rows[klass]["processes"] == 1
    assert sum(row["count"] for row in rows.values()) == 1
    assert sum(row["count"] for row in class_counts(people["outsider"])) == 0
    html = client_as(people["author"]).get("/").content.decode()
    assert f'href="/steps/?klass={klass}"' in html


def test_the_step_page_names_each_assumed_parameter_with_its_unit(people, step, client_as):
    # The factory's DSC test has an onset and no Ea: the screening TD24 assumed Ea, whose
    # number the page gives in kJ/mol under the dossier's label, the calcs key beside it.
    from hazards.quantities import format_number

    snapshot = step.snapshots.get(is_current=True)
    ea = snapshot.parameters["screening_activation_energy_j_per_mol"]
    page = client_as(people["reviewer"]).get(f"/steps/{step.pk}/").content.decode()
    assert "<dt>Activation energy Ea assumed for the screen</dt>" in page
    # written by the one rule (hazards.quantities.format_number): 50 kJ/mol, not 50.00
    assert f"<dd>{format_number(ea / 1000)} kJ/mol" in page
    assert "[screening_activation_energy_j_per_mol]" in page


def test_the_dossier_list_says_who_asked_when_and_why_with_a_fixed_number_of_queries(
        people, process, client_as):
    from django.db import connection
    from django.test.utils import CaptureQueriesContext

    from hazards.dossier.models import Dossier
    from hazards.dossier.services import dossier_request

    dossier_request(process=process, requested_by=people["auditor"], reason="annual audit",
                    enqueue=False)
    client = client_as(people["auditor"])
    with CaptureQueriesContext(connection) as one:
        page = client.get(f"/processes/{process.pk}/").content.decode()
    assert "Dossier version 1" in page
    assert f"by {people['auditor'].get_full_name() or people['auditor'].get_username()}" in page
    assert ": annual audit" in page
    for n in range(3):
        # (a re-issue while one still waits in the queue is coalesced with it)
        Dossier.objects.filter(process=process, status="queued").update(status="failed")
        dossier_request(process=process, requested_by=people["reviewer"], reissue=True,
                        reason=f"re-issue {n}", enqueue=False)
    with CaptureQueriesContext(connection) as four:
        page = client.get(f"/processes/{process.pk}/").content.decode()
    assert "re-issue 2" in page and "Dossier version 4" in page
    # Reads only: opening the page may also record a reconciliation in the trail.
    def reads(ctx):
        return [q for q in ctx.captured_queries
                if q["sql"].startswith("SELECT") and "set_config" not in q["sql"]]

    assert len(reads(four)) == len(reads(one))
