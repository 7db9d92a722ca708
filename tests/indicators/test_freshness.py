"""No write path leaves a stale indicator snapshot behind.

For each way a record can change — API, forms, admin, ORM save, QuerySet.update(), bulk writes,
raw SQL, deletions and changes to shared vessels and solvents — the step's current snapshot
must equal what a fresh computation from the stored records gives.
"""

from __future__ import annotations

import pytest
from django.db import connection, transaction
from django.db.utils import IntegrityError, InternalError

from hazards import models as m
from hazards.services.indicators import flush_pending, inputs_hash, load_cases
from tests.factories import (
    CalorimetryRunFactory,
    DecompositionTestFactory,
    StepFactory,
    VesselFactory,
)

pytestmark = pytest.mark.django_db


def assert_fresh(step_or_id):
    """The current snapshot exists, is unique, and hashes the inputs as stored now."""
    pk = getattr(step_or_id, "pk", step_or_id)
    (case,) = load_cases([pk])
    expected = inputs_hash(case)
    current = m.IndicatorSnapshot.objects.filter(step_id=pk, is_current=True)
    assert current.count() == 1
    assert current.get().inputs_hash == expected
    assert not m.PendingRecompute.objects.exists()
    return current.get()


@pytest.fixture
def step():
    s = StepFactory()
    CalorimetryRunFactory(step=s)
    DecompositionTestFactory(step=s)
    return s


def test_creating_a_step_gives_it_a_snapshot(step):
    snap = assert_fresh(step)
    assert snap.values["mtsr_k"] is not None


def test_an_orm_save_renews_the_snapshot_and_keeps_the_old_one(step):
    old = assert_fresh(step)
    step.process_temperature_k += 10
    step.save()
    new = assert_fresh(step)
    assert new.pk != old.pk
    assert new.values["mtsr_k"] == pytest.approx(old.values["mtsr_k"] + 10)
    old.refresh_from_db()
    assert old.is_current is False


def test_saving_without_a_change_adds_no_snapshot(step):
    before = m.IndicatorSnapshot.objects.filter(step=step).count()
    step.save()
    assert m.IndicatorSnapshot.objects.filter(step=step).count() == before


def test_a_queryset_update_renews_the_snapshot(step):
    m.ReactionStep.objects.filter(pk=step.pk).update(process_temperature_k=350.0)
    assert assert_fresh(step).inputs["process_temperature_k"] == 350.0


def test_bulk_update_and_bulk_create_renew_the_snapshots(step):
    other = StepFactory()
    step.reaction_mass_kg, other.reaction_mass_kg = 1234.0, 4321.0
    m.ReactionStep.objects.bulk_update([step, other], ["reaction_mass_kg"])
    assert assert_fresh(step).inputs["reaction_mass_kg"] == 1234.0
    assert assert_fresh(other).inputs["reaction_mass_kg"] == 4321.0
    m.CalorimetryRun.objects.bulk_create(
        [m.CalorimetryRun(step=other, specific_reaction_heat_j_per_kg=2e5, is_basis=True)]
    )
    assert assert_fresh(other).inputs["specific_reaction_heat_j_per_kg"] == 2e5


def test_deleting_a_measurement_renews_the_snapshot(step):
    assert assert_fresh(step).inputs["onset_temperature_k"] is not None
    step.decomposition_tests.get().delete()
    snap = assert_fresh(step)
    assert snap.inputs["onset_temperature_k"] is None
    assert snap.values["criticality_class"] is None
    assert any("TD24 unknown" in w for w in snap.warnings)


def test_a_queryset_delete_of_measurements_renews_the_snapshot(step):
    m.CalorimetryRun.objects.filter(step=step).delete()
    assert assert_fresh(step).inputs["specific_reaction_heat_j_per_kg"] is None


def test_a_change_to_a_shared_vessel_renews_every_step_that_uses_it():
    vessel = VesselFactory()
    steps = [StepFactory(vessel=vessel) for _ in range(4)]
    for s in steps:
        CalorimetryRunFactory(step=s)
    vessel.heat_transfer_area_m2 = 2.0
    vessel.save()
    for s in steps:
        assert assert_fresh(s).inputs["vessel_heat_transfer_area_m2"] == 2.0


def test_a_change_to_a_shared_solvent_renews_every_step_that_uses_it(step):
    other = StepFactory(solvent=step.solvent)
    solvent = step.solvent
    solvent.vapour_pressure_source = "antoine"
    # Poling et al. (via chemicals) water set: log10(P/Pa) = 10.11564 - 1687.537/(T - 42.98)
    solvent.antoine_a, solvent.antoine_b, solvent.antoine_c = 10.11564, 1687.537, -42.98
    solvent.save()
    for s in (step, other):
        assert assert_fresh(s).inputs["solvent_antoine"]["a"] == 10.11564


def test_raw_sql_inside_a_transaction_is_caught_by_the_trigger_and_flushed(step):
    with transaction.atomic():
        with connection.cursor() as cursor:
            cursor.execute("UPDATE hazards_reactionstep SET reaction_mass_kg = 777 WHERE id = %s",
                           [step.pk])
        assert m.PendingRecompute.objects.filter(step_id=step.pk).exists()
        flush_pending()
    assert assert_fresh(step).inputs["reaction_mass_kg"] == 777


def test_an_api_change_renews_the_snapshot_returned_in_the_same_response(api, step):
    etag = api.get(f"/api/v1/steps/{step.pk}/").headers.get("ETag")
    headers = {"HTTP_IF_MATCH": etag} if etag else {}
    resp = api.patch(f"/api/v1/steps/{step.pk}/", {"process_temperature": "55 degC"},
                     format="json", **headers)
    assert resp.status_code == 200, resp.content
    snap = assert_fresh(step)
    assert resp.json()["indicators"]["inputs_hash"] == snap.inputs_hash


def test_an_admin_form_change_renews_the_snapshot(client, admin_user, step):
    client.force_login(admin_user)
    run = step.calorimetry_runs.get()
    page = client.get(f"/admin/hazards/calorimetryrun/{run.pk}/change/")
    assert page.status_code == 200
    form = page.context["adminform"].form
    data = {name: form[name].value() or "" for name in form.fields}
    data["specific_reaction_heat_j_per_kg"] = "50 kcal/kg"  # NIST SP 811: 1 kcal_th = 4184 J
    data["step"] = step.pk
    resp = client.post(f"/admin/hazards/calorimetryrun/{run.pk}/change/", data)
    assert resp.status_code == 302, resp.context["adminform"].form.errors
    assert assert_fresh(step).inputs["specific_reaction_heat_j_per_kg"] == pytest.approx(209200.0)


def test_an_approved_step_whose_inputs_change_needs_review_again(step):
    snap = assert_fresh(step)
    m.ReactionStep._base_manager.filter(pk=step.pk).update(approved_inputs_hash=snap.inputs_hash)
    step.refresh_from_db()
    assert step.needs_review is False
    step.reaction_mass_kg *= 2
    step.save()
    step.refresh_from_db()
    assert step.needs_review is True


@pytest.mark.django_db(transaction=True)
def test_raw_sql_that_skips_the_flush_cannot_commit_a_stale_snapshot():
    step = StepFactory()
    with pytest.raises((IntegrityError, InternalError), match="would be stale"):
        with transaction.atomic():
            with connection.cursor() as cursor:
                cursor.execute(
                    "UPDATE hazards_reactionstep SET reaction_mass_kg = 1 WHERE id = %s", [step.pk]
                )
    step.refresh_from_db()
    assert step.reaction_mass_kg == 5000.0
    assert_fresh(step)
