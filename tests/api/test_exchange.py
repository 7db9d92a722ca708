"""Exchange documents: export a whole process, import it back, same indicators."""

from __future__ import annotations

import copy

import pytest
from django.core.files.uploadedfile import SimpleUploadedFile

from hazards import models as m
from hazards.api.exchange import portable_inputs_hash
from tests.factories import (
    CalorimetryRunFactory,
    DecompositionTestFactory,
    ProcessFactory,
    StepFactory,
)

from .test_series import GOOD

pytestmark = pytest.mark.django_db


@pytest.fixture
def process(api):
    process = ProcessFactory(name="Nitration", site__code="north")
    first = StepFactory(process=process, sequence=1, operation_mode="semi_batch",
                        dosing_time_s=3600.0)
    run = CalorimetryRunFactory(step=first, is_basis=True)
    test = DecompositionTestFactory(step=first)
    m.DecompositionPeak.objects.create(test=test, heating_rate_k_per_s=0.05,
                                       peak_temperature_k=560.0)
    StepFactory(process=process, sequence=2, vessel=first.vessel, solvent=first.solvent)
    resp = api.post(f"/api/v1/calorimetry-runs/{run.pk}/series/", {
        "initial_mass": "400 g", "feed_mass": "100 g",
        "file": SimpleUploadedFile("run.csv", GOOD)}, format="multipart")
    assert resp.status_code == 201, resp.json()
    return process


def _current(step_id):
    return m.IndicatorSnapshot.objects.get(step_id=step_id, is_current=True)


def test_export_is_one_documented_document_with_si_units(api, process):
    resp = api.get(f"/api/v1/processes/{process.pk}/export/")
    assert resp.status_code == 200
    doc = resp.json()
    assert (doc["format"], doc["version"]) == ("exoledger-process", 1)
    assert "qualified assessment" in doc["caution"]
    assert len(doc["vessels"]) == len(doc["solvents"]) == 1 and len(doc["steps"]) == 2
    step = doc["steps"][0]
    assert step["process_temperature"] == {"value": 303.15, "unit": "kelvin"}
    assert step["vessel"] == doc["vessels"][0]["tag"]
    run = step["calorimetry_runs"][0]
    assert run["series"]["sha256"] == m.CalorimetrySeries.objects.get().sha256
    assert step["decomposition_tests"][0]["peaks"][0]["peak_temperature"]["value"] == 560.0
    snap = _current(process.steps.get(sequence=1).pk)
    assert step["indicators"]["inputs_hash"] == snap.inputs_hash
    assert step["indicators"]["portable_inputs_hash"] == portable_inputs_hash(snap.inputs)


def test_a_round_trip_reproduces_the_indicators(api, process):
    doc = api.get(f"/api/v1/processes/{process.pk}/export/").json()
    doc["process"]["name"] = "Nitration (copy)"
    vessels, solvents = m.Vessel.objects.count(), m.Solvent.objects.count()
    resp = api.post("/api/v1/processes/import/", doc, format="json")
    assert resp.status_code == 201, resp.json()
    body = resp.json()
    assert body["created_vessels"] == [] and body["created_solvents"] == []
    assert (m.Vessel.objects.count(), m.Solvent.objects.count()) == (vessels, solvents)
    for original, copied in zip(process.steps.order_by("sequence"), body["steps"], strict=True):
        a, b = _current(original.pk), _current(copied)
        assert a.values == b.values and a.criticality_class == b.criticality_class
        assert portable_inputs_hash(a.inputs) == portable_inputs_hash(b.inputs)
        same_ids = a.inputs["basis"]["calorimetry_run"] is None
        assert (a.inputs_hash == b.inputs_hash) == same_ids  # only the record ids differ
    new = m.Process.objects.get(pk=body["process"])
    assert bytes(m.CalorimetrySeries.objects.get(run__step__process=new).original) == GOOD
    again = api.get(f"/api/v1/processes/{new.pk}/export/").json()
    for x, y in zip(doc["steps"], again["steps"], strict=True):
        assert x["indicators"]["portable_inputs_hash"] == y["indicators"]["portable_inputs_hash"]


def test_an_import_is_all_or_nothing_and_names_every_problem(api, process):
    doc = api.get(f"/api/v1/processes/{process.pk}/export/").json()
    counts = (m.Process.objects.count(), m.ReactionStep.objects.count(),
              m.CalorimetryRun.objects.count())
    same_name = api.post("/api/v1/processes/import/", doc, format="json")
    assert same_name.status_code == 400  # the process name is taken at that site
    assert any(e["field"].startswith("process") for e in same_name.json()["errors"])

    bad = copy.deepcopy(doc)
    bad["process"]["name"] = "Another"
    bad["steps"][1]["reaction_mass"] = {"value": -1, "unit": "kilogram"}
    bad["steps"][0]["calorimetry_runs"][0]["max_accumulation"] = {"value": 2, "unit": ""}
    resp = api.post("/api/v1/processes/import/", bad, format="json")
    assert resp.status_code == 400
    fields = [e["field"] for e in resp.json()["errors"]]
    assert "steps.0.calorimetry_runs.0.max_accumulation" in fields
    assert (m.Process.objects.count(), m.ReactionStep.objects.count(),
            m.CalorimetryRun.objects.count()) == counts

    changed = copy.deepcopy(doc)
    changed["process"]["name"] = "Third"
    changed["vessels"][0]["volume"] = {"value": 99.0, "unit": "m**3"}
    resp = api.post("/api/v1/processes/import/", changed, format="json")
    assert resp.status_code == 400
    assert resp.json()["errors"][0] == {
        "field": "vessels.0.volume", "value": None, "code": "conflict",
        "rule": f"vessel {doc['vessels'][0]['tag']} exists with a different value; import "
                "refuses to change it"}
    wrong = api.post("/api/v1/processes/import/", {**doc, "version": 2}, format="json")
    assert wrong.status_code == 400 and wrong.json()["errors"][0]["field"] == "format"
    assert m.Process.objects.count() == counts[0]


def test_import_creates_missing_reference_records(api, process):
    doc = api.get(f"/api/v1/processes/{process.pk}/export/").json()
    doc["process"]["name"] = "Elsewhere"
    doc["vessels"][0]["tag"] = "NEW-1"
    for step in doc["steps"]:
        step["vessel"] = "NEW-1"
    resp = api.post("/api/v1/processes/import/", doc, format="json")
    assert resp.status_code == 201, resp.json()
    assert resp.json()["created_vessels"] == ["NEW-1"]
