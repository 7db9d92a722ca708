"""The whole job in a real browser: a chemist enters a step with its calorimetry (from a file)
and decomposition data, sees the indicators and class; a reviewer returns it with a finding;
the chemist fixes it; the reviewer signs; the approver is told of the finding still to be
checked before any password is asked for; once it is resolved the approver signs; an auditor downloads the dossier and it
verifies."""

from __future__ import annotations

import re

import pytest
from playwright.sync_api import expect

from tests.e2e.conftest import shoot, sign_in
from tests.web.conftest import series_csv

pytestmark = pytest.mark.e2e


def _render_queued_dossiers() -> int:
    """Stand in for the background worker (`manage.py db_worker`) of a deployment."""
    from hazards.dossier.models import Dossier, DossierStatus
    from hazards.dossier.services import dossier_render

    ids = list(Dossier.objects.filter(status=DossierStatus.QUEUED).values_list("pk", flat=True))
    for pk in ids:
        dossier_render(dossier_id=pk, worker="e2e", sandbox=False)
    return len(ids)


def test_the_whole_job(world, live_server, browser, artifacts, tmp_path):
    from tests.conftest import PASSWORD

    base = live_server.url
    process = world["process"]

    def person(name):
        context = browser.new_context(viewport={"width": 1280, "height": 900})
        page = context.new_page()
        sign_in(page, base, name)
        return context, page

    # --- The chemist enters a new step; one value in °F, checked as she leaves the field.
    author_ctx, author = person("author")
    author.goto(f"{base}/processes/{process.pk}/")
    author.get_by_role("link", name="Add a step").click()
    author.locator("#id_name").fill("Sulfonation with oleum dosing")
    author.locator("#id_operation_mode").select_option("semi_batch")
    temperature = author.locator("#id_process_temperature_k")
    temperature.fill("-500 °F")
    temperature.press("Tab")
    expect(author.locator("#err-process_temperature_k")).to_contain_text(
        "must be above absolute zero")
    temperature.fill("113 °F")
    temperature.press("Tab")
    expect(author.locator("#err-process_temperature_k")).to_be_empty()
    author.locator("#id_reaction_mass_kg").fill("3600 kg")
    author.locator("#id_specific_heat_capacity_j_per_kg_k").fill("2.4 kJ/(kg·K)")
    author.locator("#id_system").select_option("open")
    author.locator("#id_operating_pressure_pa").fill("1.013 bar")
    author.locator("#id_solvent").select_option(label=str(world["solvent"]))
    author.locator("#id_vessel").select_option(label=str(world["vessel"]))
    author.locator("#id_dosing_time_s").fill("120 min")
    author.get_by_role("button", name="Save").click()
    expect(author.get_by_role("heading", level=1)).to_contain_text(
        "Sulfonation with oleum dosing")
    expect(author.locator('tr[data-field="process_temperature_k"] td.value')).to_have_text("45 °C")

    # --- Its calorimetry run from the calorimeter's file, with a unit corrected on the way.
    author.get_by_role("link", name="Add a run from a calorimeter file").click()
    csv_path = tmp_path / "rc-run-17.csv"
    csv_path.write_bytes(series_csv(reactor_c=45.0).replace(b"heat_release_rate [W]",
                                              b"heat_release_rate [K]"))
    author.get_by_label("Calorimeter file (CSV)").set_input_files(str(csv_path))
    author.get_by_label("Lab-scale mass before dosing").fill("400 g")
    author.get_by_label("Lab-scale mass dosed").fill("100 g")
    author.get_by_label("Instrument").fill("RC-2 heat-flow calorimeter")
    author.get_by_role("button", name="Read the file").click()
    expect(author.locator("#h-problems")).to_contain_text("1")
    expect(author.locator("table.problems")).to_contain_text("wrong dimension")
    expect(author.get_by_role("button", name="Confirm and store the file")).to_have_count(0)
    author.get_by_label("Unit of heat_release_rate").fill("W")
    author.get_by_role("button", name="Apply the units and read again").click()
    expect(author.get_by_text("No problems: 19 data rows read.")).to_be_visible()
    shoot(author, artifacts, "upload-preview")
    author.get_by_role("button", name="Confirm and store the file").click()
    expect(author.locator(".message-success")).to_contain_text("Calorimeter file rc-run-17.csv")

    # --- Its decomposition test with DSC peaks at three heating rates.
    author.get_by_role("link", name="Add a decomposition test").click()
    author.locator("#id_method").select_option("dsc")
    author.locator("#id_instrument").fill("DSC 3")
    author.locator("#id_sample_mass_kg").fill("5 mg")
    author.locator("#id_heating_rate_k_per_s").fill("4 K/min")
    author.locator("#id_onset_temperature_k").fill("180 °C")
    author.locator("#id_decomposition_energy_j_per_kg").fill("650 kJ/kg")
    for i, (rate, peak) in enumerate([("1 K/min", "201 °C"), ("2 K/min", "210 °C"),
                                      ("5 K/min", "222 °C")]):
        author.locator(f"#id_peak-{i}-heating_rate_k_per_s").fill(rate)
        author.locator(f"#id_peak-{i}-peak_temperature_k").fill(peak)
    author.get_by_role("button", name="Save").click()

    # --- The indicators and the class.
    expect(author.locator("#h-ind .klass")).to_contain_text(re.compile(r"Class [1-5]"))
    expect(author.locator('tr[data-indicator="mtsr_k"] td.value')).to_contain_text("°C")
    expect(author.locator('tr[data-indicator="td24_k"] td.value')).to_contain_text("°C")
    expect(author.locator(".chart img").first).to_be_visible()
    step_url = author.url
    shoot(author, artifacts, "step")

    # --- She opens a revision and submits it, signing with her password.
    author.goto(f"{base}/processes/{process.pk}/review/")
    author.get_by_role("button", name="Open a new draft revision").click()
    expect(author.locator("#sign-meaning")).to_contain_text(
        "Ada Chemist — Authored: I submit these data as correct and complete")
    author.get_by_label("Your password").fill(PASSWORD)
    author.get_by_role("button", name="Submit for review (sign as author)").click()
    expect(author.locator(".lead .state")).to_have_text(re.compile("Lodged for review"))

    # --- The reviewer finds it on his start page, records a finding and sends it back.
    reviewer_ctx, reviewer = person("reviewer")
    reviewer.get_by_role("link", name=f"{process.name}, revision 1").click()
    reviewer.get_by_text("Record a finding").click()
    reviewer.get_by_role("textbox", name="Finding (required)").fill("Dosing time too short for the cooling capacity")
    reviewer.get_by_label("Kind").select_option("blocking")
    reviewer.get_by_label("Action owner").select_option(label="Ada Chemist (author)")
    reviewer.get_by_role("button", name="Record the finding").click()
    expect(reviewer.locator(".message-success")).to_have_text("Finding recorded.")
    shoot(reviewer, artifacts, "review")
    reviewer.get_by_label("Why it goes back to the author").fill(
        "Extend the dosing to 180 min, see the finding.")
    reviewer.get_by_role("button", name="Send back").click()
    expect(reviewer.locator(".lead .state")).to_have_text(re.compile("Draft"))

    # --- The chemist fixes the step, resolves the finding and submits again.
    author.goto(f"{base}/")
    expect(author.locator("#h-findings")).to_contain_text("1")
    author.goto(step_url)
    author.get_by_role("link", name="Edit the step").click()
    author.locator("#id_dosing_time_s").fill("180 min")
    author.get_by_role("button", name="Save").click()
    expect(author.locator('tr[data-field="dosing_time_s"] td.value')).to_have_text("180 min")
    author.goto(f"{base}/")
    author.get_by_role("link", name="Dosing time too short for the cooling capacity").click()
    author.get_by_label("New status").select_option("ready_for_check")
    author.get_by_label("Reason (what was done)").fill("Dosing extended to 180 min.")
    author.get_by_role("button", name="Save the status").click()
    author.goto(f"{base}/processes/{process.pk}/review/")
    author.get_by_label("Your password").fill(PASSWORD)
    author.get_by_role("button", name="Submit for review (sign as author)").click()
    expect(author.locator(".lead .state")).to_have_text(re.compile("Lodged for review"))

    # --- The reviewer signs; the approver is told of the finding still waiting for its check,
    # by name, before any password is asked for.
    reviewer.goto(f"{base}/processes/{process.pk}/review/")
    expect(reviewer.locator("#sign-meaning")).to_contain_text("Reviewed:")
    reviewer.get_by_label("Your password").fill(PASSWORD)
    reviewer.get_by_role("button", name="Sign as reviewer").click()
    expect(reviewer.locator(".lead .state")).to_have_text(re.compile("Checked"))
    approver_ctx, approver = person("approver")
    approver.get_by_role("link", name=f"{process.name}, revision 2").click()
    expect(approver.locator("#approval-blocked")).to_contain_text("cannot be approved yet")
    expect(approver.locator("#approval-blocked").get_by_role(
        "link", name="Dosing time too short for the cooling capacity")).to_be_visible()
    expect(approver.get_by_label("Your password")).to_have_count(0)

    # --- The reviewer who raised the finding checks it and resolves it; the approver signs.
    reviewer.goto(f"{base}/processes/{process.pk}/review/")
    reviewer.get_by_role("link", name="Dosing time too short for the cooling capacity").click()
    expect(reviewer.locator(".notes")).to_contain_text("Dosing extended to 180 min.")
    reviewer.get_by_label("New status").select_option("resolved")
    reviewer.get_by_label("Reason (what was done)").fill("Checked: 180 min dosing.")
    reviewer.get_by_role("button", name="Save the status").click()
    expect(reviewer.locator(".message-success")).to_have_text("Finding updated.")
    approver.reload()
    expect(approver.locator("#approval-blocked")).to_have_count(0)
    approver.get_by_label("Your password").fill("a wrong password")
    approver.get_by_role("button", name="Approve (sign as approver)").click()
    expect(approver.locator("#err-sign-password")).to_contain_text("nothing was signed")
    approver.get_by_label("Your password").fill(PASSWORD)
    approver.get_by_role("button", name="Approve (sign as approver)").click()
    expect(approver.locator(".lead .state")).to_have_text(re.compile("Approved"))
    expect(approver.locator(".signatures li")).to_have_count(3)

    # --- The auditor issues and downloads the dossier, and it verifies.
    auditor_ctx, auditor = person("auditor")
    auditor.goto(f"{base}/processes/{process.pk}/")
    auditor.get_by_role("button", name="Issue a dossier of the latest revision").click()
    expect(auditor.locator(".message-success")).to_contain_text("Dossier version 1 requested")
    assert _render_queued_dossiers() == 1
    auditor.reload()
    with auditor.expect_download() as download_info:
        auditor.get_by_role("link", name="Download the PDF of version 1").click()
    pdf_path = artifacts / "dossier-e2e.pdf"
    download_info.value.save_as(str(pdf_path))
    assert pdf_path.read_bytes().startswith(b"%PDF")
    auditor.get_by_role("link", name="Integrity check").click()
    auditor.get_by_label("Dossier PDF to check").set_input_files(str(pdf_path))
    auditor.get_by_role("button", name="Check the PDF").click()
    expect(auditor.locator("#pdf-result")).to_contain_text(
        "This PDF is an unaltered dossier of this system.")
    auditor.get_by_role("button", name="Run the check now").click()
    expect(auditor.locator("#verify-result")).to_have_text(re.compile("No problems found."))
    shoot(auditor, artifacts, "verify")
    for context in (author_ctx, reviewer_ctx, approver_ctx, auditor_ctx):
        context.close()
