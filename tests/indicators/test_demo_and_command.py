"""The demo scenario's indicators, and the command that recomputes everything."""

from __future__ import annotations

import io

import pytest
from django.core.management import call_command

from hazards import models as m
from hazards.demo import load_demo
from tests.factories import CalorimetryRunFactory, DecompositionTestFactory, StepFactory

pytestmark = pytest.mark.django_db


def test_the_demo_spans_all_five_criticality_classes_and_one_unassigned_step():
    load_demo()
    classes = list(
        m.IndicatorSnapshot.objects.filter(is_current=True).values_list("criticality_class",
                                                                         flat=True)
    )
    assert set(classes) == {1, 2, 3, 4, 5, None}
    assert m.Process.objects.count() >= 3
    assert m.ReactionStep.objects.count() >= 8
    unassigned = m.IndicatorSnapshot.objects.get(is_current=True, criticality_class=None)
    assert "no decomposition data: TD24 unknown, no class can be assigned" in unassigned.warnings


def test_every_demo_step_has_every_indicator_it_has_data_for():
    load_demo()
    for snap in m.IndicatorSnapshot.objects.filter(is_current=True).select_related("step"):
        values = snap.values
        for key in ("adiabatic_temperature_rise_k", "mtsr_k", "mtt_k", "cooling_margin"):
            assert values[key] is not None, (snap.step.name, key)
        if snap.step.decomposition_tests.exists():
            assert values["td24_k"] is not None and values["tmr_ad_at_mtsr_s"] is not None
            assert snap.methods["td24"].startswith("td24.")


def test_loading_the_demo_twice_duplicates_nothing():
    load_demo()
    counts = {model: model.objects.count() for model in (
        m.Process, m.ReactionStep, m.CalorimetryRun, m.DecompositionTest, m.Vessel, m.Solvent,
        m.IndicatorSnapshot, m.DecompositionPeak)}
    load_demo()
    assert {model: model.objects.count() for model in counts} == counts


def test_the_demo_has_a_user_for_each_role_named_after_it():
    load_demo()
    from django.contrib.auth import get_user_model

    names = set(get_user_model().objects.values_list("username", flat=True))
    assert {"author", "reviewer", "approver", "auditor", "admin"} <= names


def test_the_demo_author_may_do_what_the_author_pages_and_api_offer():
    """Every write an author is offered (records, calorimeter series, decomposition curves, the
    process import) is allowed by the demo author's group: a missing permission would answer
    403 where the pages show the button (found with the decomposition-curve upload)."""
    from hazards.api.curves_api import CurvePermission
    from hazards.api.exchange_api import ImportPermission

    load_demo()
    from django.contrib.auth import get_user_model

    author = get_user_model().objects.get(username="author")
    needed = set(CurvePermission.perms) | set(ImportPermission.perms)
    assert {p for p in needed if not author.has_perm(p)} == set()


def test_recomputing_everything_reports_the_steps_whose_class_changed():
    step = StepFactory(process_temperature_k=303.15)
    CalorimetryRunFactory(step=step, specific_reaction_heat_j_per_kg=100e3)
    # TD24 from kinetics: q_ref 50 W/kg at 180 °C, Ea 100 kJ/mol -> 104.45 °C (METHODS C3.2)
    DecompositionTestFactory(step=step, activation_energy_j_per_mol=100e3,
                             reference_temperature_k=453.15,
                             heat_release_rate_at_reference_w_per_kg=50.0)
    before = m.IndicatorSnapshot.objects.get(step=step, is_current=True).criticality_class
    # Tamper with the stored class so that a recompute must move it back.
    m.IndicatorSnapshot.objects.filter(step=step).update(criticality_class=None, calcs_version="0")
    out = io.StringIO()
    call_command("recompute_indicators", stdout=out, stderr=io.StringIO())
    text = out.getvalue()
    assert "1 steps checked, 1 new snapshots." in text
    assert f"none -> class {before}" in text
    assert m.IndicatorSnapshot.objects.get(step=step, is_current=True).criticality_class == before


def test_recomputing_twice_adds_nothing_the_second_time():
    StepFactory()
    out = io.StringIO()
    call_command("recompute_indicators", stdout=out, stderr=io.StringIO())
    call_command("recompute_indicators", stdout=out, stderr=io.StringIO())
    assert out.getvalue().count("0 new snapshots") == 2
