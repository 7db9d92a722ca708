"""Making another run the basis (issue 21 item 6): one step, one transaction, and a message
that says what changed; after an upload, whether the indicators changed.

The expected indicator moves follow from the adiabatic rise ΔTad = Q·X/c_p (METHODS.md §1):
a basis run with 150 kJ/kg instead of 120 kJ/kg raises ΔTad, hence MTSR, and never lowers it.
"""

from __future__ import annotations

import pytest

from hazards.models import CalorimetryRun, DecompositionTest, IndicatorSnapshot
from hazards.web.diff import CHANGED, UNCHANGED
from tests.factories import CalorimetryRunFactory

pytestmark = pytest.mark.django_db


def run_data(run, **changes):
    data = {"instrument": run.instrument, "run_date": "", "lab_scale_kg": "",
            "specific_reaction_heat_j_per_kg": f"{run.specific_reaction_heat_j_per_kg} J/kg",
            "max_accumulation": str(run.max_accumulation),
            "max_heat_release_rate_w_per_kg": f"{run.max_heat_release_rate_w_per_kg} W/kg",
            "gas_release_mol_per_kg": "0 mol/kg", "notes": "", "version": run.version}
    data.update(changes)
    return {k: v for k, v in data.items() if v is not False}


def test_making_another_run_the_basis_switches_in_one_step_and_says_what_changed(
        people, step, client_as):
    first = CalorimetryRun.objects.get(step=step, is_basis=True)
    second = CalorimetryRunFactory(step=step, specific_reaction_heat_j_per_kg=150e3)
    snapshots = IndicatorSnapshot.objects.filter(step=step).count()
    mtsr_before = IndicatorSnapshot.objects.get(step=step, is_current=True).values["mtsr_k"]

    response = client_as(people["author"]).post(
        f"/calorimetry/{second.pk}/edit/", run_data(second, is_basis="on"), follow=True)

    assert response.status_code == 200, response.content.decode()[:2000]
    html = response.content.decode()
    assert "violate" not in html.lower() and "constraint" not in html.lower()
    first.refresh_from_db()
    second.refresh_from_db()
    assert (first.is_basis, second.is_basis) == (False, True)
    assert f"It is now the basis of the step; run {first.pk} no longer is." in html
    assert CHANGED.split(":")[0] in html and "MTSR" in html
    current = IndicatorSnapshot.objects.get(step=step, is_current=True)
    assert current.inputs["basis"]["calorimetry_run"] == second.pk
    assert current.values["mtsr_k"] > mtsr_before
    assert IndicatorSnapshot.objects.filter(step=step).count() == snapshots + 1  # recomputed once


def test_the_api_switches_the_basis_too(step):
    from hazards.api.concurrency import etag_for
    from hazards.review.models import ProcessRole
    from tests.conftest import make_user
    from tests.factories import DecompositionTestFactory
    from tests.review.conftest import AUTHOR_PERMS, client_for

    chemist = make_user("chemist", perms=AUTHOR_PERMS)
    ProcessRole.objects.create(process=step.process, user=chemist, role="author")
    first = DecompositionTest.objects.get(step=step, is_basis=True)
    second = DecompositionTestFactory(step=step)
    response = client_for(chemist).patch(
        f"/api/v1/decomposition-tests/{second.pk}/", {"is_basis": True}, format="json",
        HTTP_IF_MATCH=etag_for(second))
    assert response.status_code == 200, response.content
    first.refresh_from_db()
    assert first.is_basis is False


def test_saving_a_run_that_changes_nothing_says_the_indicators_did_not_change(people, step,
                                                                              client_as):
    run = CalorimetryRun.objects.get(step=step, is_basis=True)
    response = client_as(people["author"]).post(
        f"/calorimetry/{run.pk}/edit/", run_data(run, is_basis="on", notes="checked"),
        follow=True)
    assert UNCHANGED in response.content.decode()
