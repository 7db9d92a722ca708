"""Record forms: values with units, messages beside fields, live validation, the version check,
and the reason asked for when signed data change."""

from __future__ import annotations

import re

import pytest
from django.utils.html import escape
from pghistory.models import Context

from hazards.models import DecompositionTest, ReactionStep
from hazards.services.records import record_update
from hazards.web import edit

pytestmark = pytest.mark.django_db


def step_data(step, **changes):
    data = {
        "sequence": step.sequence, "name": step.name, "operation_mode": step.operation_mode,
        "process_temperature_k": "30 °C", "reaction_mass_kg": "5000 kg",
        "specific_heat_capacity_j_per_kg_k": "2 kJ/(kg·K)", "system": "open",
        "operating_pressure_pa": "1.01325 bar", "solvent": step.solvent_id or "",
        "vessel": step.vessel_id or "", "dosing_time_s": "", "mtt_override_k": "",
        "mtt_override_reason": "", "version": step.version,
    }
    data.update(changes)
    return data


def error_slot(html: str, name: str) -> str:
    match = re.search(rf'<div class="field-error-slot" id="err-{name}"[^>]*>(.*?)</div>', html,
                      re.S)
    assert match, f"no error slot for {name}"
    return match.group(1)


def test_a_temperature_in_fahrenheit_is_stored_in_kelvin(people, step, client_as):
    response = client_as(people["author"]).post(
        f"/steps/{step.pk}/edit/", step_data(step, process_temperature_k="113 °F"))
    assert response.status_code == 302
    step.refresh_from_db()
    # (113 - 32) * 5/9 + 273.15 = 318.15 K (NIST SP 811, exact conversion)
    assert step.process_temperature_k == pytest.approx(318.15)
    assert step.snapshots.filter(is_current=True).get().inputs["process_temperature_k"] == \
        pytest.approx(318.15)


def test_bad_values_are_explained_beside_their_field_and_nothing_is_saved(people, step,
                                                                          client_as):
    response = client_as(people["author"]).post(f"/steps/{step.pk}/edit/", step_data(
        step, process_temperature_k="-300 °C", reaction_mass_kg="five tonnes"))
    assert response.status_code == 400
    html = response.content.decode()
    assert "must be above absolute zero" in error_slot(html, "process_temperature_k")
    assert "must be a number followed by a unit" in error_slot(html, "reaction_mass_kg")
    assert error_slot(html, "name").strip() == ""
    assert 'aria-invalid="true"' in html
    step.refresh_from_db()
    assert step.process_temperature_k == pytest.approx(303.15)


def test_a_rule_across_fields_comes_back_from_the_model(people, step, client_as):
    response = client_as(people["author"]).post(f"/steps/{step.pk}/edit/", step_data(
        step, operation_mode="semi_batch", dosing_time_s=""))
    assert response.status_code == 400
    assert escape("A semi-batch step needs a dosing time.") in response.content.decode()


def test_leaving_a_field_asks_the_server_and_gets_the_message_for_that_field(people, client_as):
    client = client_as(people["author"])
    bad = client.post("/validate/step/", {"process_temperature_k": "-10 K"},
                      HTTP_HX_REQUEST="true", HTTP_HX_TRIGGER_NAME="process_temperature_k")
    assert bad.status_code == 200
    assert 'id="err-process_temperature_k"' in bad.content.decode()
    assert "must be above absolute zero" in bad.content.decode()
    good = client.post("/validate/step/", {"process_temperature_k": "86 degF"},
                       HTTP_HX_REQUEST="true", HTTP_HX_TRIGGER_NAME="process_temperature_k")
    assert "field-error\"" not in good.content.decode()
    wrong_unit = client.post("/validate/calorimetry/", {"specific_reaction_heat_j_per_kg": "5 K"},
                             HTTP_HX_TRIGGER_NAME="specific_reaction_heat_j_per_kg")
    assert "wrong dimension" in wrong_unit.content.decode()


def test_every_input_is_wired_for_validation_as_the_person_leaves_it(people, step, client_as):
    html = client_as(people["author"]).get(f"/steps/{step.pk}/edit/").content.decode()
    assert 'hx-post="/validate/step/"' in html
    for name in ("process_temperature_k", "reaction_mass_kg", "name"):
        assert f'hx-target="#err-{name}"' in html
        assert re.search(rf'<label for="id_{name}">', html), f"{name} has no label"


def test_a_change_made_meanwhile_by_someone_else_is_not_overwritten(people, step, client_as):
    read_version = step.version
    record_update(instance=ReactionStep.objects.get(pk=step.pk),
                  data={"name": "Renamed by a colleague"})
    response = client_as(people["author"]).post(f"/steps/{step.pk}/edit/", step_data(
        step, name="My name", version=read_version))
    assert response.status_code == 409
    html = response.content.decode()
    assert escape(edit.STALE_MESSAGE.split(" (")[0]) in html
    assert "Now stored: <strong>Renamed by a colleague</strong>" in html
    step.refresh_from_db()
    assert step.name == "Renamed by a colleague"
    # The form now carries the current version: sending it again saves deliberately.
    again = client_as(people["author"]).post(f"/steps/{step.pk}/edit/", step_data(
        step, name="My name", version=step.version))
    assert again.status_code == 302
    step.refresh_from_db()
    assert step.name == "My name"


def test_signed_data_change_only_with_a_reason_which_goes_into_the_trail(people, step, lodged,
                                                                         client_as):
    client = client_as(people["author"])
    page = client.get(f"/steps/{step.pk}/edit/").content.decode()
    assert "Reason for the change" in page
    refused = client.post(f"/steps/{step.pk}/edit/", step_data(step, name="Changed"))
    assert refused.status_code == 400
    assert "This field is required" in error_slot(refused.content.decode(), "reason")
    step.refresh_from_db()
    saved = client.post(f"/steps/{step.pk}/edit/", step_data(
        step, name="Changed", reason="corrected the step name after the site visit"))
    assert saved.status_code == 302
    assert Context.objects.filter(
        metadata__reason="corrected the step name after the site visit").exists()


def test_a_decomposition_test_is_entered_with_its_dsc_peaks(people, step, client_as):
    data = {
        "method": "dsc", "test_date": "2026-05-04", "instrument": "DSC 3", "sample_mass_kg": "4 mg",
        "heating_rate_k_per_s": "4 K/min", "crucible": "gold", "onset_temperature_k": "250 °C",
        "decomposition_energy_j_per_kg": "400 kJ/kg", "activation_energy_j_per_mol": "",
        "reference_temperature_k": "", "heat_release_rate_at_reference_w_per_kg": "",
        "phi_factor": "", "notes": "",
        "peak-TOTAL_FORMS": "4", "peak-INITIAL_FORMS": "0",
        "peak-0-heating_rate_k_per_s": "1 K/min", "peak-0-peak_temperature_k": "301.2 °C",
        "peak-1-heating_rate_k_per_s": "2 K/min", "peak-1-peak_temperature_k": "309.8 °C",
        "peak-2-heating_rate_k_per_s": "5 K/min", "peak-2-peak_temperature_k": "321.5 °C",
        "peak-3-heating_rate_k_per_s": "", "peak-3-peak_temperature_k": "",
    }
    response = client_as(people["author"]).post(f"/steps/{step.pk}/decomposition/new/", data)
    assert response.status_code == 302, response.content.decode()[:2000]
    test = DecompositionTest.objects.filter(step=step, instrument="DSC 3").get()
    assert test.sample_mass_kg == pytest.approx(4e-6)
    assert sorted(p.heating_rate_k_per_s for p in test.peaks.all()) == pytest.approx(
        [1 / 60, 2 / 60, 5 / 60])


def test_half_a_peak_row_is_refused_beside_the_missing_value(people, step, client_as):
    data = {"method": "dsc", "onset_temperature_k": "250 °C",
            "decomposition_energy_j_per_kg": "400 kJ/kg",
            "peak-TOTAL_FORMS": "1", "peak-INITIAL_FORMS": "0",
            "peak-0-heating_rate_k_per_s": "1 K/min", "peak-0-peak_temperature_k": ""}
    before = DecompositionTest.objects.filter(step=step).count()
    response = client_as(people["author"]).post(f"/steps/{step.pk}/decomposition/new/", data)
    assert response.status_code == 400
    assert "needs both its heating rate" in error_slot(response.content.decode(),
                                                       "peak-0-peak_temperature_k")
    assert DecompositionTest.objects.filter(step=step).count() == before


def test_the_non_volatile_declaration_and_initial_charge_are_entered_on_the_step_form(
        people, step, client_as):
    # issue 15 items 1 and 2: the declaration needs its basis (a database rule, shown beside
    # the form); the initial charge is a fraction, "80 %" = 0.8 (ISO 80000-1)
    client = client_as(people["author"])
    response = client.post(f"/steps/{step.pk}/edit/", step_data(
        step, non_volatile_declared="on", non_volatile_reason=""))
    assert response.status_code == 400
    assert "needs its basis" in response.content.decode()
    response = client.post(f"/steps/{step.pk}/edit/", step_data(
        step, non_volatile_declared="on", non_volatile_reason="polymer melt, no solvent",
        initial_mass_fraction="80 %"))
    assert response.status_code == 302
    step.refresh_from_db()
    assert step.non_volatile_declared and step.initial_mass_fraction == pytest.approx(0.8)
