"""Issue 15: the new unknowns and warnings reach the step page, the API and the dossier in
words, the declaration and initial charge are recorded inputs, and recompute_indicators names
the stored steps whose class these fixes change."""

from __future__ import annotations

import io

import pytest
from django.core.exceptions import ValidationError
from django.core.management import call_command

import calcs
from hazards import models as m
from hazards.api.serializers import indicators_payload
from hazards.dossier.view import _step
from hazards.review.selectors import record_history
from hazards.web.indicators import indicator_rows
from tests.factories import (
    CalorimetryRunFactory,
    DecompositionTestFactory,
    StepFactory,
    VesselFactory,
)

pytestmark = pytest.mark.django_db

MISSING = "MTT unknown: the closed vessel has no solvent vapour-pressure data"


def closed_step(**kw):
    # relief 4 bar abs, pad 1 atm at 30 °C: pad gas alone puts MTT at 303.15·4e5/101325 =
    # 1197 K (Gay-Lussac), the defect of issue 15 item 1
    step = StepFactory(
        system="closed", solvent=None, vessel=VesselFactory(relief_set_pressure_pa=4e5), **kw
    )
    CalorimetryRunFactory(step=step, specific_reaction_heat_j_per_kg=100e3)
    # METHODS.md C3.2: q_ref 50 W/kg at 180 °C, Ea 100 kJ/mol -> TD24 104.45 °C
    DecompositionTestFactory(
        step=step,
        activation_energy_j_per_mol=100e3,
        reference_temperature_k=453.15,
        heat_release_rate_at_reference_w_per_kg=50.0,
    )
    return step


def current(step):
    return m.IndicatorSnapshot.objects.get(step=step, is_current=True)


def test_closed_vessel_without_vapour_data_shows_the_unknown_everywhere():
    step = closed_step()
    snap = current(step)
    assert snap.criticality_class is None and snap.values["mtt_k"] is None
    # step page: the MTT row carries the reason
    mtt_row = next(r for r in indicator_rows(snap) if r["key"] == "mtt_k")
    assert mtt_row["value"] == "—" and any(w.startswith(MISSING) for w in mtt_row["warnings"])
    # API
    payload = indicators_payload(snap)
    assert payload["mtt"] is None and payload["criticality_class"] is None
    assert any(w.startswith(MISSING) for w in payload["warnings"])
    # dossier
    view = _step(
        {
            "id": step.pk,
            "sequence": 1,
            "name": step.name,
            "snapshot": {
                "values": snap.values,
                "methods": snap.methods,
                "parameters": snap.parameters,
                "warnings": snap.warnings,
                "inputs": snap.inputs,
            },
        },
        {},
    )
    assert view["criticality_class"] is None
    assert any(w.startswith(MISSING) for w in view["warnings"])


def test_the_non_volatile_declaration_needs_a_basis_and_is_audited():
    step = closed_step()
    step.non_volatile_declared = True
    with pytest.raises(ValidationError, match="needs its basis"):
        step.full_clean()
    step.non_volatile_reason = "involatile ionic liquid, vapour pressure below 1 Pa at 250 °C"
    step.full_clean()
    step.save()
    snap = current(step)
    assert snap.values["mtt_k"] == pytest.approx(303.15 * 4e5 / 101325.0, rel=1e-9)
    assert snap.inputs["non_volatile_reason"].startswith("involatile ionic liquid")
    assert any("non_volatile_declared" in row["changes"] for row in record_history(step))


def test_an_unused_new_input_leaves_the_inputs_hash_alone():
    # an approval stays valid across the upgrade: the hash covers the new fields only when set
    step = StepFactory()
    assert "initial_mass_fraction" not in current(step).inputs
    assert "non_volatile_declared" not in current(step).inputs


def test_vacuum_class_at_one_atmosphere_is_on_page_api_and_dossier():
    # toluene at 0.12 bar boils at 49.4 °C (CoolProp 8.0.0), at 1 atm at 110.6 °C (C5.1)
    step = StepFactory(operating_pressure_pa=12e3)
    CalorimetryRunFactory(step=step, specific_reaction_heat_j_per_kg=100e3)  # MTSR 80 °C
    DecompositionTestFactory(
        step=step,
        activation_energy_j_per_mol=100e3,
        reference_temperature_k=453.15,
        heat_release_rate_at_reference_w_per_kg=50.0,
    )  # TD24 104.45 °C
    snap = current(step)
    # METHODS.md §4.1: MTT 49 °C < MTSR 80 °C < TD24 -> 3; at 1 atm MTSR < TD24 < MTT -> 2
    assert snap.criticality_class == 3 and snap.values["criticality_class_at_ambient_pressure"] == 2
    rows = {r["key"]: r for r in indicator_rows(snap)}
    assert rows["criticality_class_at_ambient_pressure"]["value"] == "2"
    assert any("vacuum" in w for w in rows["mtt_at_ambient_pressure_k"]["warnings"])
    payload = indicators_payload(snap)
    assert payload["criticality_class_at_ambient_pressure"] == 2
    assert payload["mtt_at_ambient_pressure"]["unit"] == "degC"
    view = _step(
        {
            "id": step.pk,
            "snapshot": {
                "values": snap.values,
                "methods": snap.methods,
                "parameters": {},
                "warnings": snap.warnings,
            },
        },
        {},
    )
    labels = [r["label"] for r in view["indicators"]]
    assert "Criticality class at 1 atm (if the vacuum is lost)" in labels
    plain = current(StepFactory())
    assert "criticality_class_at_ambient_pressure" not in {r["key"] for r in indicator_rows(plain)}


def test_recompute_reports_the_steps_whose_class_these_fixes_change():
    # a snapshot stored by the calcs before issue 15 gave the closed vessel a class from pad
    # gas alone; recomputing with this calcs version names the step and its move to none
    assert calcs.__version__ != "0.1.0"
    step = closed_step()
    m.IndicatorSnapshot.objects.filter(step=step).update(criticality_class=1, calcs_version="0.1.0")
    out = io.StringIO()
    call_command("recompute_indicators", stdout=out, stderr=io.StringIO())
    text = out.getvalue()
    assert f"step {step.pk} ({step.name}): class 1 -> none" in text
    assert f"    why: {MISSING}" in text


def test_the_new_parameters_and_methods_have_words_in_page_and_dossier():
    # common practice, no source: a reviewer reads a label and a unit, not a calcs key
    from hazards.dossier.view import method_label, parameter_row

    shown = parameter_row("td24_extrapolation_k", 108.2)
    assert shown["label"] == "TD24 below the lowest measured temperature"
    assert (shown["value"], shown["unit"]) == ("108.2", "K")
    for key in ("accumulation_mass_basis", "accumulation_on_mass_present", "initial_mass_fraction",
                "rate_constant_from_accumulation_per_s", "lowest_measured_temperature_k",
                "tmr_extrapolation_k", "ambient_pressure_pa"):
        assert parameter_row(key, 0.5)["label"] != key
    for key in ("adiabatic.endothermic_no_rise", "mtsr.semi_batch.max_accumulation_mass_basis"):
        assert method_label(key) != key
