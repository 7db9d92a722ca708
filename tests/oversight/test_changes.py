"""Every path that changes an input of an approved step opens a change record (old and new
values, who and why, indicators that moved, class), and only an approval closes it."""

from __future__ import annotations

import pghistory
import pytest
from django.db import connection, transaction

from hazards.api.concurrency import etag_for
from hazards.models import CalorimetryRun, ReactionStep, Vessel
from hazards.oversight.models import ChangeEntry, ChangePolicy, ChangeRecord
from hazards.services.indicators import flush_pending
from tests.review.conftest import client_for
from tests.review.factories import revision_in

pytestmark = pytest.mark.django_db


def the_record(process):
    return ChangeRecord.objects.get(process=process)


def test_an_api_change_opens_a_record_naming_values_person_reason_and_indicators(
        endorsed, step, people, process):
    step.refresh_from_db()
    response = client_for(people["author"]).patch(
        f"/api/v1/steps/{step.pk}/",
        {"reaction_mass": {"value": 4500, "unit": "kg"}, "reason": "charge reduced"},
        format="json", HTTP_IF_MATCH=etag_for(step))
    assert response.status_code == 200, response.content

    record = the_record(process)
    assert record.state == "open"
    assert record.changes["reaction_mass_kg"] == {"old": 5000.0, "new": 4500.0}
    assert list(record.changes) == ["reaction_mass_kg"]
    assert record.opened_by == people["author"]
    assert record.reason == "charge reduced"
    assert record.approved_revision == endorsed
    # Less mass, same heat per kg: the adiabatic rise is unchanged but the plant heat
    # release falls (scenario arithmetic, common practice, no source).
    assert "plant_peak_heat_release_w" in record.indicators
    assert "adiabatic_temperature_rise_k" not in record.indicators
    assert record.class_changed is False
    entry = ChangeEntry.objects.get(record=record)
    assert entry.user == people["author"] and entry.url == f"/api/v1/steps/{step.pk}/"


def test_a_form_change_opens_a_record(endorsed, step, people, process):
    from django.test import Client

    from tests.web.test_forms import step_data

    client = Client()
    client.force_login(people["author"])
    step.refresh_from_db()
    response = client.post(f"/steps/{step.pk}/edit/", step_data(
        step, process_temperature_k="35 °C", reason="warmer feed"))
    assert response.status_code == 302, response.content[:3000]
    record = the_record(process)
    assert record.changes["process_temperature_k"]["new"] == pytest.approx(308.15)
    assert record.changes["process_temperature_k"]["old"] == pytest.approx(303.15)
    assert record.reason == "warmer feed"
    assert record.opened_by == people["author"]


def test_a_queryset_update_of_a_measurement_opens_a_record(endorsed, step, process):
    with pghistory.context(reason="bulk correction of the calorimetry"):
        CalorimetryRun.objects.filter(step=step).update(specific_reaction_heat_j_per_kg=240e3)
    record = the_record(process)
    assert record.changes["specific_reaction_heat_j_per_kg"] == {"old": 120e3, "new": 240e3}
    assert record.reason == "bulk correction of the calorimetry"
    # Twice the heat doubles the adiabatic rise (ΔTad = Q/cp; common practice, no source).
    moved = record.indicators["adiabatic_temperature_rise_k"]
    assert moved["new"] == pytest.approx(2 * moved["old"])
    assert moved["beyond_tolerance"] is True


def test_a_bulk_update_of_a_shared_vessel_opens_one_record_per_approved_step(
        endorsed, step, process):
    vessel = Vessel.objects.get(pk=step.vessel_id)
    vessel.heat_transfer_area_m2 = 6.0
    with pghistory.context(reason="jacket partly fouled"):
        Vessel.objects.bulk_update([vessel], ["heat_transfer_area_m2"])
    record = the_record(process)
    assert record.changes["vessel_heat_transfer_area_m2"] == {"old": 12.0, "new": 6.0}
    assert record.opened_by is None and record.reason == "jacket partly fouled"


def test_raw_sql_then_flush_opens_a_record_with_the_session_reason(endorsed, step, process):
    with transaction.atomic(), connection.cursor() as cursor:
        cursor.execute("SELECT set_config('pghistory.context_metadata', %s, true)",
                       ['{"reason": "script: recalibrated thermocouple"}'])
        cursor.execute("UPDATE hazards_reactionstep SET process_temperature_k = 310.15 "
                       "WHERE id = %s", [step.pk])
        flush_pending()
    record = the_record(process)
    assert record.changes["process_temperature_k"] == {"old": 303.15, "new": 310.15}
    assert record.reason == "script: recalibrated thermocouple"


def test_an_admin_change_opens_a_record(endorsed, step, process, people):
    from django.test import Client

    admin = people["author"]
    admin.is_staff = admin.is_superuser = True
    admin.save()
    client = Client()
    client.force_login(admin)
    page = client.get(f"/admin/hazards/reactionstep/{step.pk}/change/")
    assert page.status_code == 200
    form = page.context["adminform"].form
    data = {name: form[name].value() if form[name].value() is not None else ""
            for name in form.fields}
    data["reaction_mass_kg"] = "4800"
    response = client.post(f"/admin/hazards/reactionstep/{step.pk}/change/", data)
    assert response.status_code == 302, response.content[:2000]
    record = the_record(process)
    assert record.changes["reaction_mass_kg"] == {"old": 5000.0, "new": 4800.0}
    assert record.opened_by == admin


def test_a_calorimeter_csv_upload_opens_a_record(endorsed, step, process, people):
    from django.core.files.uploadedfile import SimpleUploadedFile

    from tests.api.test_series import GOOD

    run = CalorimetryRun.objects.get(step=step)
    response = client_for(people["author"]).post(
        f"/api/v1/calorimetry-runs/{run.pk}/series/",
        {"initial_mass": "400 g", "feed_mass": "100 g", "reason": "calorimeter file added",
         "file": SimpleUploadedFile("run-7.csv", GOOD, content_type="text/csv")},
        format="multipart")
    assert response.status_code == 201, response.content
    record = the_record(process)
    # Q' = 12 kJ/kg from the file (worked in tests/api/test_series.py, METHODS.md §1.2).
    assert record.changes["specific_reaction_heat_j_per_kg"] == {"old": 120e3,
                                                                  "new": pytest.approx(12e3)}
    assert record.changes["series_sha256"]["old"] is None
    assert record.opened_by == people["author"]
    assert record.reason == "calorimeter file added"


def test_later_changes_extend_the_open_record_and_an_approval_closes_it(
        endorsed, step, process, people):
    ReactionStep.objects.filter(pk=step.pk).update(reaction_mass_kg=4000.0)
    ReactionStep.objects.filter(pk=step.pk).update(reaction_mass_kg=3000.0)
    record = the_record(process)
    assert record.entries.count() == 2
    assert record.changes["reaction_mass_kg"] == {"old": 5000.0, "new": 3000.0}
    assert [e.changes["reaction_mass_kg"]["new"] for e in record.entries.all()] == [4000, 3000]

    # Back to the approved value: recorded, but still open.
    ReactionStep.objects.filter(pk=step.pk).update(reaction_mass_kg=5000.0)
    record.refresh_from_db()
    assert record.state == "open" and record.changes == {}
    assert record.entries.last().back_to_approved is True

    ReactionStep.objects.filter(pk=step.pk).update(reaction_mass_kg=4200.0)
    second = revision_in(process, "endorsed", author=people["author"],
                         reviewer=people["reviewer"], approver=people["approver"])
    record.refresh_from_db()
    assert record.state == "closed"
    assert record.closed_by_revision == second
    # A change after the new approval opens a new record against revision 2's approval.
    ReactionStep.objects.filter(pk=step.pk).update(reaction_mass_kg=4100.0)
    newer = ChangeRecord.objects.get(process=process, state="open")
    assert newer.approved_revision == second
    assert newer.changes["reaction_mass_kg"] == {"old": 4200.0, "new": 4100.0}


def test_no_record_for_a_step_that_was_never_approved(process, step):
    ReactionStep.objects.filter(pk=step.pk).update(reaction_mass_kg=4000.0)
    assert not ChangeRecord.objects.exists()


def test_a_record_cannot_be_closed_without_an_approval(endorsed, step, process):
    from django.db import IntegrityError

    ReactionStep.objects.filter(pk=step.pk).update(reaction_mass_kg=4000.0)
    with pytest.raises(IntegrityError), transaction.atomic():
        ChangeRecord.objects.filter(process=process).update(state="closed")


@pytest.mark.parametrize("allowed, heat, path", [
    (False, 121e3, "full"),   # the light path is off by default
    (True, 121e3, "light"),   # +0.8 % heat: ΔTad moves by about 0.5 K, within 2 K
    (True, 240e3, "full"),    # twice the heat: far beyond the tolerance
])
def test_the_lighter_path_needs_the_site_to_allow_it_and_small_moves(
        endorsed, step, process, allowed, heat, path):
    ChangePolicy.objects.create(site=process.site, light_review_allowed=allowed,
                                relative_tolerance_percent=100.0)
    CalorimetryRun.objects.filter(step=step).update(specific_reaction_heat_j_per_kg=heat)
    record = the_record(process)
    assert record.review_path == path
    assert record.entries.count() == 1  # recorded all the same


def test_recording_costs_the_same_queries_for_one_or_many_steps(people):
    from django.test.utils import CaptureQueriesContext

    from tests.factories import StepFactory, VesselFactory

    def approved_steps(count):
        vessel = VesselFactory()
        process = revision_ready = None
        from tests.review.factories import assessed_process

        process = assessed_process(author=people["author"], reviewer=people["reviewer"],
                                   approver=people["approver"])
        ReactionStep.objects.filter(process=process).update(vessel=vessel)
        for n in range(count - 1):
            StepFactory(process=process, sequence=n + 2, vessel=vessel)
        revision_ready = revision_in(process, "endorsed", author=people["author"],
                                     reviewer=people["reviewer"], approver=people["approver"])
        return vessel, revision_ready

    counts = []
    for size in (1, 6):
        vessel, _ = approved_steps(size)
        with CaptureQueriesContext(connection) as queries:
            Vessel.objects.filter(pk=vessel.pk).update(heat_transfer_area_m2=5.0)
        counts.append(len(queries))
        assert ChangeRecord.objects.filter(step__vessel=vessel).count() == size
    assert counts[0] == counts[1], counts
