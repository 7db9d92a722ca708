"""The step resource carries its indicator snapshot in the published shape."""

from __future__ import annotations

import pytest

from tests.factories import CalorimetryRunFactory, DecompositionTestFactory, StepFactory

pytestmark = pytest.mark.django_db

CONTRACT_KEYS = {
    "adiabatic_temperature_rise", "mtsr", "mtt", "td24", "tmr_ad_at_mtsr", "criticality_class",
    "severity", "probability", "cooling_margin", "warnings", "methods", "inputs_hash",
    "computed_at",
}


@pytest.fixture
def step():
    # Batch, Tp 30 °C, Q' 100 kJ/kg, cp 2 kJ/(kg K): dTad = 50 K, MTSR = 80 °C (METHODS §1.1).
    s = StepFactory(process_temperature_k=303.15, specific_heat_capacity_j_per_kg_k=2000.0,
                    mtt_override_k=383.15, mtt_override_reason="condenser limit of the vessel")
    CalorimetryRunFactory(step=s, specific_reaction_heat_j_per_kg=100e3)
    # METHODS.md C3.2: q_ref 50 W/kg at 180 °C, Ea 100 kJ/mol, cp 1800 -> TD24 104.449 °C;
    # with cp 2000 the same kinetics give a slightly higher TD24.
    DecompositionTestFactory(step=s, activation_energy_j_per_mol=100e3,
                             reference_temperature_k=453.15,
                             heat_release_rate_at_reference_w_per_kg=50.0)
    return s


def test_the_step_resource_carries_every_indicator_of_the_contract(api, step):
    body = api.get(f"/api/v1/steps/{step.pk}/").json()
    indicators = body["indicators"]
    assert CONTRACT_KEYS <= set(indicators)
    assert indicators["adiabatic_temperature_rise"] == {"value": pytest.approx(50.0), "unit": "K"}
    assert indicators["mtsr"] == {"value": pytest.approx(80.0), "unit": "degC"}
    assert indicators["mtt"] == {"value": pytest.approx(110.0), "unit": "degC"}
    assert indicators["td24"]["unit"] == "degC"
    assert 104.4 < indicators["td24"]["value"] < 110.0
    assert indicators["tmr_ad_at_mtsr"]["unit"] == "h"
    # MTSR 80 < MTT 110 > TD24 ~105: MTSR < TD24 < MTT -> class 2 (METHODS §4.1).
    assert indicators["criticality_class"] == 2
    assert indicators["methods"]["mtt"] == "mtt.override"
    assert indicators["methods"]["td24"] == "td24.kinetic"
    assert len(indicators["inputs_hash"]) == 64


def test_indicator_history_lists_earlier_snapshots_newest_first(api, step):
    step.process_temperature_k = 313.15
    step.save()
    history = api.get(f"/api/v1/steps/{step.pk}/indicator-history/").json()
    rows = history["results"] if isinstance(history, dict) else history
    assert len(rows) >= 2
    assert rows[0]["is_current"] is True and rows[1]["is_current"] is False
    assert rows[0]["indicators"]["mtsr"]["value"] == pytest.approx(90.0)
    assert rows[1]["indicators"]["mtsr"]["value"] == pytest.approx(80.0)


def test_steps_can_be_listed_by_criticality_class(api, step):
    other = StepFactory()  # no measurements: no class
    found = api.get("/api/v1/steps/?criticality_class=2").json()
    ids = [row["id"] for row in (found["results"] if isinstance(found, dict) else found)]
    assert ids == [step.pk]
    assert other.pk not in ids
