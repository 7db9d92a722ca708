"""The admin lists every record type and takes quantities with units."""

from __future__ import annotations

import pytest

from hazards import models as m
from tests.factories import ProcessFactory

pytestmark = pytest.mark.django_db

RECORD_TYPES = ["site", "process", "reactionstep", "solvent", "vessel", "calorimetryrun",
                "decompositiontest", "decompositionpeak", "calorimetryseries",
                "indicatorsnapshot", "apitoken", "measure", "measurepolicy"]


def test_the_admin_index_lists_every_record_type(client, admin_user):
    client.force_login(admin_user)
    html = client.get("/admin/").content.decode()
    for name in RECORD_TYPES:
        assert f"/admin/hazards/{name}/" in html, name
        assert client.get(f"/admin/hazards/{name}/").status_code == 200, name


def test_a_step_added_in_the_admin_takes_fahrenheit_and_gauge_pressure(client, admin_user):
    client.force_login(admin_user)
    process = ProcessFactory()
    resp = client.post("/admin/hazards/reactionstep/add/", {
        "process": process.pk, "sequence": 1, "name": "Admin step", "operation_mode": "batch",
        # NIST SP 811 B.8: (104 °F + 459.67)/1.8 = 313.15 K; 1 bar g = 1 bar + 1 atm (ISO 80000-4)
        "process_temperature_k": "104 °F", "reaction_mass_kg": "3 t",
        "specific_heat_capacity_j_per_kg_k": "1.9 kJ/(kg*K)", "system": "open",
        "operating_pressure_pa": "1 bar g", "mtt_override_reason": "",
    })
    assert resp.status_code == 302, resp.context["adminform"].form.errors
    step = m.ReactionStep.objects.get(name="Admin step")
    assert step.process_temperature_k == pytest.approx(313.15, abs=1e-9)
    assert step.operating_pressure_pa == pytest.approx(201325.0, rel=1e-12)
    assert step.reaction_mass_kg == pytest.approx(3000.0)


def test_a_temperature_below_absolute_zero_is_refused_beside_the_field(client, admin_user):
    client.force_login(admin_user)
    process = ProcessFactory()
    resp = client.post("/admin/hazards/reactionstep/add/", {
        "process": process.pk, "sequence": 1, "name": "Cold", "operation_mode": "batch",
        "process_temperature_k": "-500 degF", "reaction_mass_kg": "3 t",
        "specific_heat_capacity_j_per_kg_k": "1.9 kJ/(kg*K)", "system": "open",
        "operating_pressure_pa": "1 bar", "mtt_override_reason": "",
    })
    assert resp.status_code == 200
    errors = resp.context["adminform"].form.errors
    assert "absolute zero" in str(errors["process_temperature_k"])
    assert not m.ReactionStep.objects.filter(name="Cold").exists()
